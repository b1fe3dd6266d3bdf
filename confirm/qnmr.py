"""NMR yield and content with an internal standard (quantitative 1H NMR).

The amount of each product follows from the ratio of its signal to the
signal of a weighed internal standard (Pauli, Chen, Simmler, Lankin, Lu,
Jaki, Friesen, McAlpine, Napolitano, J. Med. Chem. 2014, 57, 9220):

    P_x = (I_x / I_std) (N_std / N_x) (M_x / M_std) (m_std / m_x) P_std

with I the integrals, N the number of protons in each integrated signal,
M the molar masses, m the weighed masses and P the purities (mass
fractions). Written for amounts, ``n_x = (I_x / I_std) (N_std / N_x) n_std``
with ``n_std = m_std P_std / M_std``; the yield is ``n_x`` over the
theoretical amount and the content (``P_x``) is ``n_x M_x`` over the sample
mass. Standard uncertainties of the inputs are combined in quadrature
(first-order propagation, inputs taken as independent).

With a mixture fit the integrals come from the fit: the fitted mole
fractions are already per molecule, so ``n_x = (x_x / x_std) n_std`` when the
standard was fitted as one of the components (:func:`yield_from_result`).
"""

from __future__ import annotations

import argparse
import math
from collections.abc import Sequence
from dataclasses import dataclass

from predictors.core import canonical_smiles
from predictors.errors import InputError

__all__ = [
    "InternalStandard",
    "SignalIntegral",
    "ProductYield",
    "molar_mass_g_mol",
    "nmr_yield",
    "yield_from_result",
    "analyze_with_standard",
    "yields_to_json",
    "format_yield_rows",
    "add_yield_arguments",
    "standard_from_args",
    "yield_from_args",
]


def molar_mass_g_mol(smiles: str) -> float:
    """Average molar mass in g/mol from RDKit (IUPAC standard atomic weights).

    Raises
    ------
    InputError
        When RDKit cannot parse ``smiles``.
    """
    from rdkit import Chem
    from rdkit.Chem import Descriptors

    mol = Chem.MolFromSmiles(canonical_smiles(smiles))
    return float(Descriptors.MolWt(mol))


def _check_positive(value, *, name: str, allow_zero: bool = False) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected a number, got {value!r}") from None
    if not math.isfinite(number) or number < 0 or (number == 0 and not allow_zero):
        allowed = ">= 0" if allow_zero else "> 0"
        raise InputError(f"{name}: must be a finite number {allowed}, got {value!r}")
    return number


def _check_n_h(value, *, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or value != int(value) or value < 1:
        raise InputError(f"{name}: expected a whole number of protons >= 1, got {value!r}")
    return int(value)


@dataclass(frozen=True)
class InternalStandard:
    """A weighed internal standard and the signal of it that is integrated.

    Attributes
    ----------
    smiles : str
        Structure of the standard (canonicalised on construction).
    n_h : int
        Number of protons in the integrated signal (e.g. 3 for the aromatic
        singlet of 1,3,5-trimethoxybenzene).
    mass_mg : float
        Weighed mass in the sample, mg.
    purity : float
        Mass fraction of the standard in what was weighed, in (0, 1].
    mass_sd_mg : float
        Standard uncertainty of the weighing, mg.
    purity_sd : float
        Standard uncertainty of ``purity`` (mass fraction).
    """

    smiles: str
    n_h: int
    mass_mg: float
    purity: float = 1.0
    mass_sd_mg: float = 0.0
    purity_sd: float = 0.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "smiles", canonical_smiles(self.smiles))
        object.__setattr__(self, "n_h", _check_n_h(self.n_h, name="standard n_h"))
        object.__setattr__(self, "mass_mg", _check_positive(self.mass_mg, name="standard mass_mg"))
        purity = _check_positive(self.purity, name="standard purity")
        if purity > 1.0:
            raise InputError(f"standard purity: a mass fraction in (0, 1] is expected, got {self.purity!r}")
        object.__setattr__(self, "purity", purity)
        object.__setattr__(self, "mass_sd_mg",
                           _check_positive(self.mass_sd_mg, name="standard mass_sd_mg", allow_zero=True))
        object.__setattr__(self, "purity_sd",
                           _check_positive(self.purity_sd, name="standard purity_sd", allow_zero=True))

    @property
    def molar_mass_g_mol(self) -> float:
        """Molar mass of the standard, g/mol."""
        return molar_mass_g_mol(self.smiles)

    @property
    def amount_mmol(self) -> float:
        """Amount of pure standard in the sample, mmol (``m P / M``)."""
        return self.mass_mg * self.purity / self.molar_mass_g_mol

    @property
    def amount_rel_sd(self) -> float:
        """Relative standard uncertainty of :attr:`amount_mmol`."""
        return math.hypot(self.mass_sd_mg / self.mass_mg, self.purity_sd / self.purity)


@dataclass(frozen=True)
class SignalIntegral:
    """The integral of one product signal.

    Attributes
    ----------
    smiles : str
        Structure of the product the signal belongs to.
    integral : float
        Integral on the same scale as the standard's integral, >= 0.
    n_h : int
        Number of protons in the integrated signal.
    integral_sd : float
        Standard uncertainty of ``integral``.
    label : str
        Short name for tables.
    """

    smiles: str
    integral: float
    n_h: int
    integral_sd: float = 0.0
    label: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "smiles", canonical_smiles(self.smiles))
        object.__setattr__(self, "integral",
                           _check_positive(self.integral, name="integral", allow_zero=True))
        object.__setattr__(self, "n_h", _check_n_h(self.n_h, name="n_h"))
        object.__setattr__(self, "integral_sd",
                           _check_positive(self.integral_sd, name="integral_sd", allow_zero=True))


@dataclass(frozen=True)
class ProductYield:
    """Amount, yield and content of one product.

    Attributes
    ----------
    smiles, label : str
    molar_mass_g_mol : float
    amount_mmol, amount_sd_mmol : float
        Amount in the sample and its standard uncertainty.
    mass_mg, mass_sd_mg : float
        The same as a mass.
    yield_percent, yield_sd_percent : float or None
        ``100 n_x / n_theoretical`` (None without a theoretical amount).
    content_percent, content_sd_percent : float or None
        Mass fraction of the product in the sample, ``P_x`` in percent
        (None without a sample mass).
    """

    smiles: str
    label: str
    molar_mass_g_mol: float
    amount_mmol: float
    amount_sd_mmol: float
    mass_mg: float
    mass_sd_mg: float
    yield_percent: float | None = None
    yield_sd_percent: float | None = None
    content_percent: float | None = None
    content_sd_percent: float | None = None


def _optional_basis(value, sd, *, name: str) -> tuple[float | None, float]:
    if value is None:
        return None, 0.0
    return _check_positive(value, name=name), _check_positive(sd, name=f"{name} sd", allow_zero=True)


def nmr_yield(signals: Sequence[SignalIntegral], standard: InternalStandard, *,
              standard_integral: float, standard_integral_sd: float = 0.0,
              sample_mass_mg: float | None = None, sample_mass_sd_mg: float = 0.0,
              theoretical_mmol: float | None = None, theoretical_sd_mmol: float = 0.0,
              method_rel_sd: float = 0.0) -> tuple[ProductYield, ...]:
    """Amount, yield and content of each product from integrals against an internal standard.

    Parameters
    ----------
    signals : sequence of SignalIntegral
        One integrated signal per product.
    standard : InternalStandard
    standard_integral : float, keyword-only
        Integral of the standard's signal (``standard.n_h`` protons), > 0.
    standard_integral_sd : float, keyword-only
        Its standard uncertainty.
    sample_mass_mg, sample_mass_sd_mg : float, keyword-only
        Weighed sample (crude) mass and its uncertainty; gives the content
        ``P_x`` in percent.
    theoretical_mmol, theoretical_sd_mmol : float, keyword-only
        Theoretical amount of product (limiting reagent times stoichiometry);
        gives the yield in percent.
    method_rel_sd : float, keyword-only
        Extra relative standard uncertainty of the method itself (relaxation,
        integration limits, phasing), added in quadrature. Malz & Jancke
        (J. Pharm. Biomed. Anal. 2005, 38, 813) report 1.5 % (95 %) for a
        validated protocol, i.e. about 0.0075.

    Returns
    -------
    tuple of ProductYield
        In the order of ``signals``.
    """
    i_std = _check_positive(standard_integral, name="standard_integral")
    rel_std = math.hypot(_check_positive(standard_integral_sd, name="standard_integral_sd",
                                         allow_zero=True) / i_std, standard.amount_rel_sd)
    method = _check_positive(method_rel_sd, name="method_rel_sd", allow_zero=True)
    sample, sample_sd = _optional_basis(sample_mass_mg, sample_mass_sd_mg, name="sample_mass_mg")
    theory, theory_sd = _optional_basis(theoretical_mmol, theoretical_sd_mmol, name="theoretical_mmol")
    n_std = standard.amount_mmol
    results = []
    for signal in signals:
        scale = standard.n_h / signal.n_h * n_std / i_std
        amount = signal.integral * scale
        amount_sd = math.hypot(signal.integral_sd * scale, amount * math.hypot(rel_std, method))
        results.append(_product_yield(signal, amount, amount_sd, sample=(sample, sample_sd),
                                      theory=(theory, theory_sd)))
    return tuple(results)


def _share_percent(value: float, sd: float, basis: tuple[float | None, float]) -> tuple:
    total, total_sd = basis
    if total is None:
        return None, None
    share = 100.0 * value / total
    return share, 100.0 * math.hypot(sd, value * total_sd / total) / total


def _product_yield(signal: SignalIntegral, amount: float, amount_sd: float, *,
                   sample: tuple, theory: tuple) -> ProductYield:
    molar_mass = molar_mass_g_mol(signal.smiles)
    mass, mass_sd = amount * molar_mass, amount_sd * molar_mass
    yield_pct, yield_sd = _share_percent(amount, amount_sd, theory)
    content, content_sd = _share_percent(mass, mass_sd, sample)
    return ProductYield(smiles=signal.smiles, label=signal.label, molar_mass_g_mol=molar_mass,
                        amount_mmol=amount, amount_sd_mmol=amount_sd, mass_mg=mass, mass_sd_mg=mass_sd,
                        yield_percent=yield_pct, yield_sd_percent=yield_sd,
                        content_percent=content, content_sd_percent=content_sd)


def yield_from_result(result, standard: InternalStandard, *, sample_mass_mg: float | None = None,
                      theoretical_mmol: float | None = None, method_rel_sd: float = 0.0,
                      detected_only: bool = True) -> tuple[ProductYield, ...]:
    """Yields of the fitted components of an analysis, against a fitted internal standard.

    The standard must be one of the fitted components (add its SMILES to the
    candidates). The fitted mole fractions are per molecule, so each
    component's amount is ``x / x_std`` times the amount of standard.

    Parameters
    ----------
    result : confirm.results.AnalysisResult
    standard : InternalStandard
    sample_mass_mg, theoretical_mmol, method_rel_sd : keyword-only
        As in :func:`nmr_yield`.
    detected_only : bool, keyword-only
        Report only components flagged ``detected``.

    Raises
    ------
    InputError
        When the standard is not among the fitted components or was not detected.
    """
    components = {comp.candidate.smiles: comp for comp in result.fit.components}
    std_fit = components.get(standard.smiles)
    if std_fit is None:
        raise InputError(f"standard smiles: {standard.smiles!r} is not among the fitted components; "
                         "add it to the candidates so the fit can measure it")
    if not std_fit.detected or std_fit.share <= 0:
        raise InputError(f"standard smiles: {standard.smiles!r} was not detected in the spectrum; "
                         "check the standard and its amount")
    signals = [
        SignalIntegral(smiles=comp.candidate.smiles, integral=max(comp.share, 0.0), n_h=1,
                       integral_sd=comp.mole_fraction_sd, label=comp.candidate.label)
        for comp in result.fit.components
        if comp.candidate.smiles != standard.smiles and (comp.detected or not detected_only)
    ]
    return nmr_yield(signals, standard, standard_integral=std_fit.share * standard.n_h,
                     standard_integral_sd=std_fit.mole_fraction_sd * standard.n_h,
                     sample_mass_mg=sample_mass_mg, theoretical_mmol=theoretical_mmol,
                     method_rel_sd=method_rel_sd)


def analyze_with_standard(path, standard: InternalStandard, *, substrate: str | None = None,
                          reagent: str | None = None, candidates=None, solvent: str | None = None,
                          temp_c: float = 25.0, field_mhz: float | None = None, force_field: bool = False,
                          budget=None, also=None, nmr_solvent: str | None = None, reference: str = "auto",
                          decoupled=()):
    """Analyse a spectrum with the internal standard fitted as one more component.

    Same arguments as ``confirm.analysis.analyze_path``; the standard is added to the
    candidates (enumerated or given) with the pathway tag ``"user"`` and the label
    ``"internal standard"``, so :func:`yield_from_result` can use its fitted amount.

    Raises
    ------
    InputError
        When the standard is one of the candidates: its signal would be counted twice.
    """
    from confirm.analysis import analyze_peak_list, analyze_spectrum, build_candidates
    from confirm.budget import check_budget
    from confirm.processing import ProcessingOptions, process_measurement
    from confirm.reading import PeakList, read_measurement
    from confirm.results import InputRecord
    from confirm.verdict import STANDARD_LABEL
    from predictors.core import Candidate

    check_budget(budget, "candidates")
    cands, notes = build_candidates(substrate=substrate, reagent=reagent, candidates=candidates,
                                    solvent=solvent, temp_c=temp_c, also=also)
    if standard.smiles in {c.smiles for c in cands}:
        raise InputError(f"--std-smiles: the internal standard {standard.smiles!r} is also one of the "
                         "candidates; a standard must be a compound the reaction cannot give")
    cands = (*cands, Candidate(smiles=standard.smiles, pathways=("user",), label=STANDARD_LABEL,
                               rationale="weighed internal standard for the NMR yield"))
    check_budget(budget, "reading")
    raw = read_measurement(path)
    record = InputRecord(path=str(path), sha256=raw.sha256)
    params = {"substrate": substrate, "reagent": reagent, "reaction_solvent": solvent, "temp_c": temp_c,
              "internal_standard": standard.smiles, "standard_mass_mg": standard.mass_mg,
              "standard_purity": standard.purity, "standard_n_h": standard.n_h, "nmr_solvent": nmr_solvent,
              "reference": reference}
    if isinstance(raw, PeakList):
        from confirm.processing import resolve_field

        field = resolve_field(raw.parameters.field_mhz, field_mhz, force=force_field, source=str(path))
        return analyze_peak_list(raw, cands, field_mhz=field, inputs=(record,), notes=notes,
                                 parameters=params, budget=budget, decoupled=decoupled)
    options = ProcessingOptions(field_mhz=field_mhz, force_field=force_field if field_mhz else False,
                                solvent=nmr_solvent, reference=reference)
    check_budget(budget, "processing")
    processed = process_measurement(raw, options=options)
    return analyze_spectrum(processed, cands, inputs=(record,), notes=notes, parameters=params, budget=budget,
                            decoupled=decoupled)


def yields_to_json(yields: Sequence[ProductYield], standard: InternalStandard | None = None) -> dict:
    """Plain-JSON form: ``{"standard": {...}, "products": [...]}``."""
    products = [{
        "smiles": y.smiles, "label": y.label, "molar_mass_g_mol": y.molar_mass_g_mol,
        "amount_mmol": y.amount_mmol, "amount_sd_mmol": y.amount_sd_mmol,
        "mass_mg": y.mass_mg, "mass_sd_mg": y.mass_sd_mg,
        "yield_percent": y.yield_percent, "yield_sd_percent": y.yield_sd_percent,
        "content_percent": y.content_percent, "content_sd_percent": y.content_sd_percent,
    } for y in yields]
    out: dict = {"products": products}
    if standard is not None:
        out["standard"] = {"smiles": standard.smiles, "n_h": standard.n_h, "mass_mg": standard.mass_mg,
                           "purity": standard.purity, "molar_mass_g_mol": standard.molar_mass_g_mol,
                           "amount_mmol": standard.amount_mmol}
    return out


def _pm(value: float | None, sd: float | None, fmt: str) -> str:
    if value is None:
        return "-"
    return f"{value:{fmt}} ± {sd:{fmt}}"


def format_yield_rows(yields: Sequence[ProductYield]) -> tuple[tuple[str, ...], list[tuple[str, ...]]]:
    """Headers and text rows for a table of yields (terminal or HTML)."""
    headers = ("product", "SMILES", "amount / mmol", "mass / mg", "yield / %", "content / wt%")
    rows = [(y.label or "-", y.smiles, _pm(y.amount_mmol, y.amount_sd_mmol, ".4f"),
             _pm(y.mass_mg, y.mass_sd_mg, ".2f"), _pm(y.yield_percent, y.yield_sd_percent, ".1f"),
             _pm(y.content_percent, y.content_sd_percent, ".1f")) for y in yields]
    return headers, rows


def add_yield_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the NMR-yield options (an argument group) to a subcommand parser."""
    group = parser.add_argument_group(
        "NMR yield with an internal standard",
        "the standard must also be fitted: it is added to the candidates")
    group.add_argument("--std-smiles", metavar="SMILES", help="SMILES of the internal standard")
    group.add_argument("--std-protons", type=int, metavar="N",
                       help="number of protons in the standard's quantified signal")
    group.add_argument("--std-mass-mg", type=float, metavar="MG", help="weighed mass of the standard, mg")
    group.add_argument("--std-purity-percent", type=float, default=None, metavar="P",
                       help="purity of the standard, mass %% (default 100)")
    group.add_argument("--sample-mass-mg", type=float, metavar="MG",
                       help="weighed sample mass, mg (gives content in wt%%)")
    group.add_argument("--theoretical-mmol", type=float, metavar="MMOL",
                       help="theoretical amount of product, mmol (gives yield in %%)")


#: Options that mean nothing without ``--std-smiles``.
_COMPANION_OPTIONS = ("std_protons", "std_mass_mg", "std_purity_percent", "sample_mass_mg",
                      "theoretical_mmol")


def standard_from_args(args: argparse.Namespace) -> InternalStandard | None:
    """The internal standard named by the options, or None when ``--std-smiles`` is absent.

    Raises
    ------
    InputError
        When a required companion option is missing or out of range.
    """
    smiles = getattr(args, "std_smiles", None)
    if not smiles:
        given = [option for option in _COMPANION_OPTIONS if getattr(args, option, None) is not None]
        if given:
            raise InputError(f"--{given[0].replace('_', '-')}: needs an internal standard; give "
                             "--std-smiles, --std-protons and --std-mass-mg too")
        return None
    from confirm.structures import check_smiles_text

    smiles = check_smiles_text(smiles, name="--std-smiles")
    for option in ("std_protons", "std_mass_mg"):
        if getattr(args, option, None) is None:
            raise InputError(f"--{option.replace('_', '-')}: required with --std-smiles")
    purity = getattr(args, "std_purity_percent", None)
    purity = _check_positive(100.0 if purity is None else purity, name="--std-purity-percent")
    if purity > 100.0:
        raise InputError(f"--std-purity-percent: must be in (0, 100], got {purity!r}")
    return InternalStandard(smiles=smiles, n_h=args.std_protons, mass_mg=args.std_mass_mg,
                            purity=purity / 100.0)


def yield_from_args(args: argparse.Namespace, result) -> tuple[ProductYield, ...] | None:
    """Yields for the analyze command, or None when no standard was given.

    Call after the analysis; the analysis must have fitted the standard (append
    ``standard_from_args(args).smiles`` to the candidates before analysing).
    """
    standard = standard_from_args(args)
    if standard is None:
        return None
    return yield_from_result(result, standard, sample_mass_mg=getattr(args, "sample_mass_mg", None),
                             theoretical_mmol=getattr(args, "theoretical_mmol", None))
