"""Hand-built AnalysisResult objects for testing reports, QC and batch runs.

The shifts below are illustrative values for hand-built results (they feed the
report and the QC logic, they are not checks of any model): the objects are
made directly from the core dataclasses, without the fitting code, so these
tests exercise the reporting layer alone.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from rdkit import Chem

from confirm.results import AnalysisResult, InputRecord
from predictors.core import (
    Candidate,
    ComponentFit,
    MixtureFit,
    ProtonSite,
    RatioEstimate,
    Spectrum,
    SpinSystem,
    Verdict,
    canonical_smiles,
)
from predictors.spin import model_spectrum

E_PENTENE = canonical_smiles("C/C=C/CC")
Z_PENTENE = canonical_smiles("C/C=C\\CC")
PENT_1_ENE = canonical_smiles("C=CCCC")
SUBSTRATE = canonical_smiles("CC(Br)CCC")
STANDARD = canonical_smiles("COc1cc(OC)cc(OC)c1")


@dataclass
class Part:
    """One component of a hand-built result."""

    smiles: str
    fraction: float
    sd: float = 0.003
    detection_limit: float = 0.005
    detected: bool | None = None
    label: str = ""
    pathways: tuple[str, ...] = ("E2",)
    geometry: str | None = None


#: Sites (shift_ppm, n_h) and first-order couplings (site a, site b, J in Hz).
SITES = {
    E_PENTENE: ([(1.64, 3), (5.42, 1), (5.47, 1), (1.98, 2), (0.96, 3)],
                [(0, 1, 6.0), (1, 2, 15.3), (2, 3, 6.3), (3, 4, 7.4)]),
    Z_PENTENE: ([(1.60, 3), (5.36, 1), (5.33, 1), (2.04, 2), (0.95, 3)],
                [(0, 1, 6.8), (1, 2, 10.9), (2, 3, 7.0), (3, 4, 7.5)]),
    PENT_1_ENE: ([(4.97, 2), (5.81, 1), (2.03, 2), (1.42, 2), (0.91, 3)],
                 [(0, 1, 13.0), (1, 2, 6.7), (2, 3, 7.4), (3, 4, 7.4)]),
    SUBSTRATE: ([(1.71, 3), (4.14, 1), (1.80, 2), (1.45, 2), (0.93, 3)],
                [(0, 1, 6.7), (1, 2, 6.8), (2, 3, 7.3), (3, 4, 7.3)]),
    STANDARD: ([(3.77, 9), (6.09, 3)], []),
}

LABELS = {E_PENTENE: "(E)-pent-2-ene", Z_PENTENE: "(Z)-pent-2-ene", PENT_1_ENE: "pent-1-ene",
          SUBSTRATE: "2-bromopentane (starting material)", STANDARD: "1,3,5-trimethoxybenzene (standard)"}


def spin_system_of(smiles: str) -> SpinSystem:
    """A spin system with real H atom indices and the illustrative sites above."""
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    h_atoms = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    sites, couplings = SITES[smiles]
    made, start = [], 0
    for shift, n_h in sites:
        made.append(ProtonSite(atoms=tuple(h_atoms[start:start + n_h]), shift_ppm=shift, shift_sd_ppm=0.1))
        start += n_h
    j = np.zeros((len(sites), len(sites)))
    for a, b, value in couplings:
        j[a, b] = j[b, a] = value
    return SpinSystem(smiles=smiles, sites=tuple(made), j_hz=j)


def _axis() -> np.ndarray:
    return np.linspace(8.5, -0.5, 4096)


@functools.lru_cache(maxsize=32)
def _unit_curve(smiles: str, field_mhz: float) -> np.ndarray:
    """One molecule's model spectrum on the test axis (pure, so cached)."""
    curve = model_spectrum(spin_system_of(smiles), _axis(), field_mhz=field_mhz, line_width_hz=2.0)
    curve.setflags(write=False)
    return curve


def build_result(parts: list[Part], *, major: str | None, confidence: str = "high", snr: float = 400.0,
                 field_mhz: float = 400.0, summary: str | None = None, seed: int = 7,
                 source: str = "synthetic.jdx", warnings: tuple[str, ...] = (),
                 covariance=None, unexplained_ppm: tuple[float, ...] = ()) -> AnalysisResult:
    """A complete AnalysisResult made by hand from the parts."""
    ppm = _axis()
    model = np.zeros_like(ppm)
    components, candidates, systems = [], [], []
    for part in parts:
        smiles = canonical_smiles(part.smiles)
        label = part.label or LABELS.get(smiles, "")
        candidate = Candidate(smiles=smiles, pathways=part.pathways, label=label, geometry=part.geometry)
        detected = part.fraction > 3 * part.detection_limit if part.detected is None else part.detected
        system = spin_system_of(smiles)
        # an undetected component has no mole fraction, only its 95 % upper bound (fraction + 1.96 sd)
        components.append(ComponentFit(
            candidate=candidate, mole_fraction=part.fraction if detected else None,
            mole_fraction_sd=part.sd if detected else 0.0, detection_limit=part.detection_limit,
            detected=detected, upper_limit=None if detected else min(1.0, part.fraction + 1.959964 * part.sd),
            refined_shifts_ppm=tuple(s.shift_ppm for s in system.sites),
            evidence=(f"{candidate.label}: multiplet at {system.sites[1].shift_ppm:.2f} ppm observed",)
            if detected else ()))
        candidates.append(candidate)
        systems.append(system)
        model += part.fraction * _unit_curve(smiles, field_mhz)
    noise_sd = model.max() / snr if model.max() > 0 else 1e-3
    rng = np.random.default_rng(seed)
    measured = model + rng.normal(0.0, noise_sd, ppm.size)
    fit = MixtureFit(components=tuple(components), ppm=ppm, model=model, residual=measured - model,
                     line_width_hz=2.0, quality={"snr": snr, "r_squared": 0.995, "noise_sd": noise_sd},
                     fraction_covariance=covariance, unexplained_ppm=unexplained_ppm)
    spectrum = Spectrum(ppm=ppm, intensity=measured, field_mhz=field_mhz, solvent="CDCl3",
                        metadata={"source": source,
                                  "processing": {"options": {"lb_hz": 0.3, "phasing": "entropy"}},
                                  "acquisition": {"field_mhz": field_mhz, "n_scans": 16}})
    ratios = ()
    by = {c.candidate.smiles: c for c in components}
    if E_PENTENE in by and Z_PENTENE in by:
        e, z = by[E_PENTENE].share, by[Z_PENTENE].share
        if e + z > 0:
            ratios = (RatioEstimate(name="E:Z pent-2-ene", numerator=E_PENTENE, denominator=Z_PENTENE,
                                    share=e / (e + z), share_sd=0.01),)
    label = LABELS.get(major, major) if major else None
    verdict = Verdict(
        summary=summary or (f"The major product is {label}." if major else "The spectrum cannot decide."),
        confidence=confidence, major=major,
        identified=tuple(c.candidate.smiles for c in components if c.detected), ratios=ratios,
        evidence=("vinyl 3J = 15.3 Hz observed at 5.45 ppm (trans)",),
        unresolved=() if major else ("which alkene formed",),
        next_steps=() if major else ("record a 13C spectrum",))
    return AnalysisResult(spectrum=spectrum, candidates=tuple(candidates), spin_systems=tuple(systems),
                          fit=fit, verdict=verdict,
                          inputs=(InputRecord(path=source, sha256="ab" * 32),), warnings=warnings,
                          parameters={"lb_hz": 0.3, "baseline": "asymmetric least squares"})


def pentene_mixture(e: float, z: float, terminal: float, substrate: float, **kwargs) -> AnalysisResult:
    """The usual four candidates of 2-bromopentane elimination with the given fractions."""
    parts = [Part(E_PENTENE, e, geometry="E"), Part(Z_PENTENE, z, geometry="Z"), Part(PENT_1_ENE, terminal),
             Part(SUBSTRATE, substrate, pathways=("starting material",))]
    sds = kwargs.pop("sds", None)
    if sds:
        for part, sd in zip(parts, sds, strict=True):
            part.sd = sd
    kwargs.setdefault("major", E_PENTENE)
    return build_result(parts, **kwargs)
