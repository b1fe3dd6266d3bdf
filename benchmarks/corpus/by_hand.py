"""The by-hand baseline: what a chemist does with an integration tool.

For each compound of the truth, integrate ONE resolved diagnostic multiplet, divide by its
number of protons and normalise to mole fractions. The windows come from the TRUE line
positions in the rendered spectrum (the multiplet's line span plus a few line widths): the chemist
knows the compounds' spectra and has referenced the spectrum. Of each compound's multiplets
(sites of equal shift and label taken together), the one whose window holds the least of every
other line (other compounds, the compound's own other multiplets, solvent, water, TMS,
impurities, unknowns, satellites) relative to its own area is chosen. The integral is a sum over
the window less a straight baseline through the mean levels just outside it (an integration
tool's bias-and-slope correction); no deconvolution and no phase correction.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from benchmarks.corpus.cases import Case
from benchmarks.corpus.compounds import COMPOUND_BY_KEY
from benchmarks.corpus.synthesis import CaseLines, case_lines
from predictors.core import Spectrum

#: Window padding on each side of a multiplet's line span, in line widths (FWHM), at least 1 Hz.
PAD_WIDTHS = 4.0
_MIN_PAD_HZ = 1.0
#: Lines weaker than this share of the multiplet's strongest line do not stretch its span.
_SPAN_SHARE = 0.02


@dataclass(frozen=True)
class HandIntegral:
    """The multiplet a chemist integrated for one compound, and what it gave."""

    key: str
    shift_ppm: float
    n_h: int
    window_ppm: tuple[float, float]
    contamination: float
    integral: float


def integrate_by_hand(spectrum: Spectrum, case: Case) -> tuple[dict[str, float], tuple[HandIntegral, ...]]:
    """Mole fractions from one diagnostic multiplet per compound of the case's truth.

    Returns
    -------
    fractions : dict
        Compound key -> mole fraction (sums to 1; zero integrals give 0).
    integrals : tuple of HandIntegral
    """
    lines = case_lines(case)
    width_hz = case.faults.line_width_hz + case.faults.gauss_fwhm_hz + abs(case.faults.shoulder_offset_hz)
    pad_ppm = max(PAD_WIDTHS * width_hz, _MIN_PAD_HZ) / case.field_mhz
    dx_hz = abs(spectrum.ppm[1] - spectrum.ppm[0]) * case.field_mhz
    chosen = []
    for key, _ in case.truth:
        best = None
        for group, n_h, shift in _multiplets(key):
            lo, hi = _span(lines, key, group, pad_ppm)
            own, other = _areas_in(lines, key, group, lo, hi, case.field_mhz)
            score = other / own if own > 0 else np.inf
            if best is None or score < best[0]:
                best = (score, shift, n_h, lo, hi)
        score, shift, n_h, lo, hi = best
        integral = _integral(spectrum, lo, hi, flank_ppm=pad_ppm) * dx_hz
        chosen.append(HandIntegral(key, shift, n_h, (lo, hi), float(score), integral))
    per_molecule = {h.key: max(h.integral, 0.0) / h.n_h for h in chosen}
    total = sum(per_molecule.values())
    fractions = {k: (v / total if total > 0 else 0.0) for k, v in per_molecule.items()}
    return fractions, tuple(chosen)


def _integral(spectrum: Spectrum, lo: float, hi: float, *, flank_ppm: float) -> float:
    """Sum of the points in [lo, hi] less a straight line through the mean levels of the two
    flanks [lo - flank, lo) and (hi, hi + flank] (in intensity x points)."""
    ppm, y = spectrum.ppm, spectrum.intensity
    inside = (ppm >= lo) & (ppm <= hi)
    left = (ppm > hi) & (ppm <= hi + flank_ppm)
    right = (ppm < lo) & (ppm >= lo - flank_ppm)
    if not inside.any():
        return 0.0
    if left.any() and right.any():
        x_l, y_l = ppm[left].mean(), y[left].mean()
        x_r, y_r = ppm[right].mean(), y[right].mean()
        base = y_r + (ppm[inside] - x_r) * (y_l - y_r) / (x_l - x_r)
    else:
        base = np.zeros(int(inside.sum()))
    return float((y[inside] - base).sum())


def _multiplets(key: str):
    """Sites of a compound grouped by (shift, label): what a chemist integrates as one multiplet."""
    comp = COMPOUND_BY_KEY[key]
    groups: dict[tuple[float, str], list[int]] = {}
    for i, ((shift, _, label), ex) in enumerate(zip(comp.sites, comp.exchangeable, strict=True)):
        if not ex:
            groups.setdefault((shift, label), []).append(i)
    for (shift, _), sites in groups.items():
        yield tuple(sites), sum(comp.sites[i][1] for i in sites), shift


def _span(lines: CaseLines, key: str, group, pad_ppm: float) -> tuple[float, float]:
    own = (lines.owner == key) & np.isin(lines.site, group) & ~lines.satellite & ~lines.exchangeable
    strong = own & (lines.area >= _SPAN_SHARE * lines.area[own].max())
    return float(lines.ppm[strong].min() - pad_ppm), float(lines.ppm[strong].max() + pad_ppm)


def _areas_in(
    lines: CaseLines, key: str, group, lo: float, hi: float, field_mhz: float
) -> tuple[float, float]:
    """Area of the multiplet's own lines, and the area of every other line that falls inside
    [lo, hi] ppm (each line a Lorentzian of its own width)."""
    own = (lines.owner == key) & np.isin(lines.site, group) & ~lines.satellite & ~lines.exchangeable
    hwhm_ppm = lines.width_hz / 2 / field_mhz
    share = (np.arctan((hi - lines.ppm) / hwhm_ppm) - np.arctan((lo - lines.ppm) / hwhm_ppm)) / np.pi
    return float(lines.area[own].sum()), float((lines.area * share)[~own].sum())
