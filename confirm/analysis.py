"""The whole job for one measurement: candidates, predictions, fit, verdict.

:func:`analyze_path` reads a raw FID, a stored spectrum or a peak list, works out the
candidate products (from a substrate and reagent, or a list of SMILES), predicts each
candidate's spin system, fits the mixture and decides the verdict. The result is an
:class:`~confirm.results.AnalysisResult`, which reports, QC and batch runs read.
"""

from __future__ import annotations

import functools
import inspect
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from confirm.budget import Budget, check_budget
from confirm.results import AnalysisResult, InputRecord
from confirm.verdict import alkene_facts, decide
from predictors.core import Candidate, Spectrum, SpinSystem
from predictors.errors import ChemistryError, InputError

if TYPE_CHECKING:
    from confirm.fitting import FitOptions

__all__ = ["analyze_path", "analyze_spectrum", "analyze_peak_list", "build_candidates", "predict_systems"]

#: Shown with every verdict, in every output format.
CAUTION = "This result supports, it does not replace, the analyst's judgement and the site's QA procedures."
_DEFAULT_NMR_SOLVENT = "CDCl3"


def build_candidates(
    *,
    substrate: str | None = None,
    reagent: str | None = None,
    candidates: Sequence[str] | None = None,
    solvent: str | None = None,
    temp_c: float = 25.0,
    also: Sequence[str] | None = None,
) -> tuple[tuple[Candidate, ...], tuple[str, ...]]:
    """Candidates from a substrate and reagent, or from a list of SMILES (exactly one of the two).

    Each SMILES (or molfile path) in ``candidates`` or ``also`` may carry the user's name of the
    compound as ``name=SMILES``. ``also`` adds compounds the user knows may be there (an impurity,
    a product the rules do not give) to the enumerated candidates; naming an enumerated product
    names it.

    Returns
    -------
    candidates : tuple of Candidate
    notes : tuple of str
        What the enumeration assumed.
    """
    if candidates and (substrate or reagent):
        raise InputError("candidates: give either --candidates or --substrate with --reagent, not both")
    if candidates:
        if also:
            raise InputError("--also: adds to the products of --substrate; with --candidates list them there")
        return _user_candidates(candidates), ()
    if not substrate or not reagent:
        raise InputError(
            "candidates: no candidate given; pass --candidates SMILES [SMILES ...] or "
            "--substrate SMILES with --reagent NAME"
        )
    from confirm.structures import load_structure
    from predictors.products import enumerate_products

    # checked here (one molecule, no text after a space), then enumerated from the checked molecule
    products = enumerate_products(load_structure(substrate), reagent=reagent, solvent=solvent, temp_c=temp_c)
    if not products.candidates:
        raise ChemistryError(f"substrate: no product could be enumerated for {substrate!r} with {reagent!r}")
    found = list(products.candidates)
    notes = list(products.notes)
    if also:
        from dataclasses import replace

        index = {c.smiles: i for i, c in enumerate(found)}
        for extra in _user_candidates(also):
            if extra.smiles in index:  # already a product: the user's name names it
                if extra.name:
                    found[index[extra.smiles]] = replace(found[index[extra.smiles]], name=extra.name,
                                                         label=extra.name)
                continue
            found.append(replace(extra, rationale="added by the user (--also)"))
            notes.append(f"added by the user: {extra.label}")
    return tuple(found), tuple(notes)


def _user_candidates(smiles_list: Sequence[str]) -> tuple[Candidate, ...]:
    from rdkit import Chem

    from confirm.structures import load_structure, split_name

    out, seen, names = [], set(), set()
    for text in smiles_list:
        name, structure = split_name(str(text))
        mol = load_structure(structure)
        smiles = Chem.MolToSmiles(mol, isomericSmiles=True)
        if smiles in seen:
            continue
        if name is not None and name in names:
            raise InputError(f"candidates: the name {name!r} is given to two different structures")
        seen.add(smiles)
        names.add(name)
        facts = alkene_facts(smiles)
        out.append(
            Candidate(
                smiles=smiles,
                pathways=("user",),
                label=name or smiles,
                geometry=facts.geometry,
                rationale="given by the user",
                name=name,
            )
        )
    if not out:
        raise InputError("candidates: the list of candidate SMILES is empty")
    return tuple(out)


def predict_systems(
    candidates: Sequence[Candidate], *, n_conformers: int = 6, n_workers: int = 2, solvent: str | None = None
) -> tuple[SpinSystem, ...]:
    """Predicted spin system of every candidate (same order), on up to ``n_workers`` forked
    processes (the result does not depend on it); ``solvent`` is the NMR solvent (shifts of
    exchangeable H)."""
    import predictors.prediction  # noqa: F401  (imported once here, before the workers fork)
    from confirm._parallel import TaskPool

    with TaskPool(max_workers=n_workers) as pool:
        return tuple(pool.map(_predict_task, [(c.smiles, n_conformers, solvent) for c in candidates]))


def _predict_task(_shared, task) -> SpinSystem:
    """One candidate's spin system (a task for ``TaskPool.map``)."""
    from predictors.prediction import predict_spin_system

    smiles, n_conformers, solvent = task
    return predict_spin_system(smiles, n_conformers=n_conformers, solvent=solvent)


def analyze_spectrum(
    processed,
    candidates: Sequence[Candidate],
    *,
    systems: Sequence[SpinSystem] | None = None,
    inputs: Sequence[InputRecord] = (),
    notes: Sequence[str] = (),
    options: FitOptions | None = None,
    parameters: dict | None = None,
    budget: Budget | None = None,
    decoupled: Sequence[str] = (),
) -> AnalysisResult:
    """Analyse an already processed spectrum (a ``ProcessedSpectrum`` or a bare ``Spectrum``).

    Parameters
    ----------
    processed : confirm.processing.ProcessedSpectrum or Spectrum
    candidates : sequence of Candidate
    systems : sequence of SpinSystem, optional
        Spin systems to use (predicted when None).
    inputs : sequence of InputRecord
        Files behind the spectrum, for the audit record.
    notes : sequence of str
        Extra warnings to carry into the result.
    options : FitOptions, optional
    parameters : dict, optional
        Extra parameters to record.
    budget : confirm.budget.Budget, optional
        Time allowed; checked before the predictions, the fit and the verdict (and inside the fit
        when it takes a budget). None: no limit.
    decoupled : sequence of str
        Heteronuclei (``"19F"``, ``"31P"``) decoupled during acquisition, besides those the
        spectrum's acquisition record names: their splittings of the 1H lines are left out.
    """
    from predictors.hetero_couplings import check_nuclei

    asked = check_nuclei(decoupled)
    candidates = tuple(candidates)
    if not candidates:
        raise InputError("candidates: at least one candidate is needed")
    spectrum, noise_sd, warnings = _unpack(processed)
    _check_nucleus(spectrum.nucleus)
    if spectrum.solvent is None:
        warnings.append(f"NMR solvent not recorded: residual signals of {_DEFAULT_NMR_SOLVENT} are masked")
        spectrum = Spectrum(
            ppm=spectrum.ppm,
            intensity=spectrum.intensity,
            field_mhz=spectrum.field_mhz,
            nucleus=spectrum.nucleus,
            solvent=_DEFAULT_NMR_SOLVENT,
            metadata=spectrum.metadata,
        )
    from confirm.fitting import fit_mixture

    if systems is None:
        check_budget(budget, "predictions")
        systems = predict_systems(candidates, solvent=spectrum.solvent)
    systems, decoupling = _decouple(tuple(systems), asked, spectrum)
    check_budget(budget, "fit")
    fit = fit_mixture(spectrum, systems, candidates, noise_sd=noise_sd, options=options,
                      **_budget_keyword(fit_mixture, budget))
    check_budget(budget, "verdict")
    context = {"input": "peak list"} if (parameters or {}).get("input") == "peak list" else None
    verdict = decide(fit, systems, candidates, context=context)
    params = {
        "field_mhz": spectrum.field_mhz,
        "nmr_solvent": spectrum.solvent,
        "line_width_hz": fit.line_width_hz,
        "caution": CAUTION,
    }
    params.update(parameters or {})
    params.update(decoupling)
    return AnalysisResult(
        spectrum=spectrum,
        candidates=candidates,
        spin_systems=systems,
        fit=fit,
        verdict=verdict,
        inputs=tuple(inputs),
        warnings=tuple(dict.fromkeys(list(notes) + warnings + list(fit.warnings))),
        parameters=params,
    )


def _decouple(systems, asked: tuple[str, ...], spectrum: Spectrum) -> tuple[tuple[SpinSystem, ...], dict]:
    """Spin systems without the couplings to decoupled heteronuclei, and what to record of it.

    The nuclei are those the user named (``asked``) and those the file's acquisition record names.
    The record (``decoupled_nuclei``, ``decoupled_source``) is empty when no nucleus is decoupled.
    """
    from predictors.core import X_NUCLEI
    from predictors.hetero_couplings import check_nuclei, without_x_couplings

    acquisition = spectrum.metadata.get("acquisition") or {}
    from_file = check_nuclei(tuple(acquisition.get("decoupled_nuclei") or ()))
    nuclei = tuple(n for n in X_NUCLEI if n in asked or n in from_file)
    if not nuclei:
        return tuple(systems), {}
    source = {n: ("the file and the user" if n in asked and n in from_file
                  else "the user" if n in asked else "the file") for n in nuclei}
    return (tuple(without_x_couplings(s, nuclei) for s in systems),
            {"decoupled_nuclei": list(nuclei), "decoupled_source": source})


def decoupling_note(parameters) -> str | None:
    """One line for the analyst on the heteronuclear decoupling the analysis assumed (None: none)."""
    nuclei = list(parameters.get("decoupled_nuclei") or ())
    if not nuclei:
        return None
    source = parameters.get("decoupled_source") or {}
    parts = [f"{n} (from {source.get(n, 'the user')})" for n in nuclei]
    return ("heteronuclear decoupling: " + ", ".join(parts)
            + "; the predicted 1H spectra leave out the couplings to "
            + " and ".join(nuclei))


def _budget_keyword(func, budget: Budget | None) -> dict:
    """``{"budget": budget}`` when ``func`` takes a ``budget`` keyword and there is one, else ``{}``."""
    if budget is None or "budget" not in inspect.signature(func).parameters:
        return {}
    return {"budget": budget}


def _unpack(processed):
    if isinstance(processed, Spectrum):
        return processed, None, []
    spectrum = getattr(processed, "spectrum", None)
    if not isinstance(spectrum, Spectrum):
        raise InputError(
            f"processed: expected a ProcessedSpectrum or Spectrum, got {type(processed).__name__}"
        )
    return spectrum, float(processed.noise_sd), list(processed.warnings)


def _check_nucleus(nucleus) -> None:
    text = str(nucleus or "1H").strip().upper().replace(" ", "")
    if text not in ("1H", "H1", "H", "PROTON"):
        raise InputError(f"spectrum: nucleus is {nucleus!r}; confirm analyses 1H spectra only")


def analyze_path(
    path,
    *,
    substrate: str | None = None,
    reagent: str | None = None,
    candidates: Sequence[str] | None = None,
    solvent=None,
    temp_c: float = 25.0,
    field_mhz: float | None = None,
    force_field: bool = False,
    budget: Budget | None = None,
    also: Sequence[str] | None = None,
    nmr_solvent: str | None = None,
    reference: str = "auto",
    decoupled: Sequence[str] = (),
) -> AnalysisResult:
    """Read, process and analyse one measurement (raw FID, stored spectrum or peak list).

    Parameters
    ----------
    path : str or Path
        A raw FID folder, a JCAMP-DX file or a peak-list table.
    substrate, reagent : str, optional
        Enumerate the candidates from a substrate SMILES and a reagent name ...
    candidates : sequence of str, optional
        ... or give the candidate SMILES (or molfile paths) directly, each as ``name=SMILES``
        where the user has a name for it.
    solvent : str, optional
        Reaction solvent (for the enumeration), not the NMR solvent.
    temp_c : float
        Reaction temperature.
    also : sequence of str, optional
        With ``substrate``: further compounds (``name=SMILES``) that may be in the sample.
    nmr_solvent : str, optional
        The sample's (deuterated) solvent, overriding the one the file records (referencing,
        solvent lines).
    reference : str
        How the axis is referenced: ``"auto"`` (TMS, else the solvent line, else as acquired),
        ``"tms"``, ``"solvent"`` or ``"none"``.
    field_mhz : float, optional
        Spectrometer frequency when the file does not record it (peak lists). A value that
        contradicts the file's recorded field is an error unless ``force_field`` is set.
    force_field : bool
        Use ``field_mhz`` even where the file records another field.
    budget : confirm.budget.Budget, optional
        Time allowed, checked between the stages (candidates, reading, processing, predictions,
        fit, verdict). None: no limit.
    decoupled : sequence of str
        Heteronuclei (``"19F"``, ``"31P"``) decoupled during acquisition (added to those the file
        records): their splittings are left out of the predicted spectra.

    Raises
    ------
    InputError, ChemistryError, FileFormatError, FitError
        Bad arguments, unparsable candidates, unreadable files, wrong nucleus, nothing to fit.
    confirm.budget.BudgetExceeded
        When the budget runs out.
    """
    from confirm.reading import PeakList, read_measurement
    from predictors.hetero_couplings import check_nuclei

    decoupled = check_nuclei(decoupled)
    if field_mhz is not None and not (np.isfinite(field_mhz) and 40 <= field_mhz <= 1200):
        raise InputError(f"field_mhz: expected 40-1200 MHz (1H), got {field_mhz!r}")
    check_budget(budget, "candidates")
    cands, notes = build_candidates(
        substrate=substrate, reagent=reagent, candidates=candidates, solvent=solvent, temp_c=temp_c, also=also
    )
    check_budget(budget, "reading")
    raw = read_measurement(path)
    _check_nucleus(raw.parameters.nucleus)
    record = InputRecord(path=str(path), sha256=raw.sha256)
    params = {"substrate": substrate, "reagent": reagent, "reaction_solvent": solvent, "temp_c": temp_c,
              "nmr_solvent": nmr_solvent, "reference": reference}
    if isinstance(raw, PeakList):
        from confirm.processing import resolve_field

        return analyze_peak_list(
            raw,
            cands,
            field_mhz=resolve_field(raw.parameters.field_mhz, field_mhz, force=force_field,
                                    source=str(path)),
            inputs=(record,),
            notes=notes,
            parameters=params,
            budget=budget,
            decoupled=decoupled,
        )
    from confirm._parallel import Beside

    # the predictions run in a forked process while this one processes the spectrum and loads the
    # fit's modules (SciPy's optimizers: about a second of start-up between them)
    sample_solvent = nmr_solvent or getattr(raw.parameters, "solvent", None)
    with Beside(functools.partial(predict_systems, solvent=sample_solvent), cands) as predictions:
        from confirm.processing import ProcessingOptions, process_measurement

        check_budget(budget, "processing")
        processed = process_measurement(
            raw, options=ProcessingOptions(field_mhz=field_mhz, force_field=bool(field_mhz) and force_field,
                                           solvent=nmr_solvent, reference=reference),
        )
        import confirm.fitting  # noqa: F401
        import predictors.couplings  # noqa: F401  (the fit's 13C satellite positions)

        check_budget(budget, "predictions")
        systems = predictions.result()
    systems = _for_sample_solvent(systems, cands, sample_solvent, processed.spectrum.solvent)
    return analyze_spectrum(
        processed, cands, systems=systems, inputs=(record,), notes=notes, parameters=params, budget=budget,
        decoupled=decoupled,
    )


def _for_sample_solvent(systems, candidates, predicted_for, found):
    """``systems`` predicted again when processing found the sample in another NMR solvent than
    the one they were predicted for (a header that says CDCl3 over a DMSO-d6 sample) and some
    candidate has OH or NH, whose shifts and couplings depend on it."""
    from predictors.shifts.exchangeable import nmr_solvent_key

    if not found or nmr_solvent_key(found)[0] == nmr_solvent_key(predicted_for)[0]:
        return systems
    if not any(site.exchangeable for system in systems for site in system.sites):
        return systems
    return predict_systems(candidates, solvent=found)


def analyze_peak_list(
    peaks,
    candidates: Sequence[Candidate],
    *,
    field_mhz: float | None,
    inputs: Sequence[InputRecord] = (),
    notes: Sequence[str] = (),
    parameters: dict | None = None,
    budget: Budget | None = None,
    decoupled: Sequence[str] = (),
) -> AnalysisResult:
    """Analyse a peak list by assignment and per-site integration.

    Each listed peak becomes a Lorentzian line of its listed width (1 Hz when absent) and its
    integral (or its height converted to an area); the candidates' multiplets are then
    assigned to these lines and their areas shared out by the same fit as for spectra. A peak
    list carries no noise: the fit assumes a noise floor of 0.5 % of the tallest line and
    reports twice the fitted uncertainty.
    """
    if not field_mhz:
        raise InputError(
            "field_mhz: a peak list does not record the spectrometer frequency; pass --field-mhz"
        )
    entries = tuple(peaks.entries)
    if not entries:
        raise InputError(f"peaks: {peaks.source_path} lists no peaks")
    spectrum = _render_peak_list(entries, field_mhz, peaks.parameters.solvent)
    noise = 0.005 * float(np.max(spectrum.intensity))
    params = dict(parameters or {})
    params["input"] = "peak list"
    from confirm.fitting import FitOptions

    options = FitOptions(uncertainty_scale=2.0, mask_solvent=True, line_width_hz=None)
    rendered = _PeakListSpectrum(
        spectrum=spectrum,
        noise_sd=noise,
        warnings=[
            "peak-list input: amounts from assignment and per-site integration, with wider uncertainty"
        ],
    )
    return analyze_spectrum(
        rendered, candidates, inputs=inputs, notes=notes, options=options, parameters=params, budget=budget,
        decoupled=decoupled,
    )


class _PeakListSpectrum:
    """Minimal stand-in for a ProcessedSpectrum built from a peak list."""

    def __init__(self, *, spectrum: Spectrum, noise_sd: float, warnings: list):
        self.spectrum, self.noise_sd, self.warnings = spectrum, noise_sd, tuple(warnings)


def _render_peak_list(entries, field_mhz: float, solvent: str | None) -> Spectrum:
    shifts = np.array([e.ppm for e in entries], dtype=float)
    widths = np.array([e.width_hz if e.width_hz else 1.0 for e in entries], dtype=float)
    gamma_ppm = widths / 2 / field_mhz
    areas = []
    for e, g in zip(entries, gamma_ppm, strict=True):
        if e.integral is not None:
            areas.append(float(e.integral))
        elif e.intensity is not None:
            areas.append(float(e.intensity) * np.pi * g)  # Lorentzian: area = height * pi * half-width
        else:
            areas.append(1.0)
    areas = np.clip(np.array(areas), 0.0, None)
    hi, lo = max(12.0, shifts.max() + 1.0), min(-1.0, shifts.min() - 1.0)
    n = int(min(2**17, max(4096, (hi - lo) * field_mhz / 0.2)))
    ppm = np.linspace(hi, lo, n)
    y = np.zeros(n)
    for x0, g, a in zip(shifts, gamma_ppm, areas, strict=True):
        y += a * g / np.pi / ((ppm - x0) ** 2 + g * g)
    return Spectrum(
        ppm=ppm,
        intensity=y,
        field_mhz=float(field_mhz),
        nucleus="1H",
        solvent=solvent,
        metadata={"source": "peak list"},
    )
