"""Broad OH and NH lines: found in the data where a candidate expects one, then modelled as nuisances.

An alcohol's OH (an amine's NH, an acid's COOH) exchanges with the sample's water and with other
labile protons: its line is a broad singlet whose position moves with concentration, temperature
and water content by tenths of a ppm, and whose area is not reliably one proton. The candidates'
models therefore leave these sites out. But the line is in the data, and a broad unexplained line
is where the other candidates' sites go to sit: a minor isomer's methyl doublet placed on an OH at
1.7 ppm is a minor isomer found that is not there.

:func:`broad_lines` looks for such a line within the predicted range of every exchangeable site of
the candidates: a local maximum of the data smoothed to the trial width, fitted by one Lorentzian
on a straight local baseline. It counts as broad only when that single line explains the data
around it to the noise (a cluster of sharp lines, a multiplet, leaves structure in the residual)
and when it is several times wider than the spectrum's lines. Each line found is masked in the
assignment search and modelled in the refinement like the water line (free amount, a position free
within a few of its widths, a width of its own) and never counts in any amount.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.ndimage import gaussian_filter1d
from scipy.optimize import least_squares

from confirm.fitting.grid import merge_intervals
from confirm.fitting.models import CandidateModel, fitted_sites
from confirm.fitting.nuisance import line_model

__all__ = ["BROAD_LABEL", "BroadLine", "broad_line_models", "broad_lines", "broad_masks"]

BROAD_LABEL = "broad OH/NH line"

#: Trial widths (FWHM, Hz): exchange-broadened OH and NH lines are a few to tens of Hz wide.
# common practice (typical widths of exchanging OH/NH lines in CDCl3)
_TRIAL_WIDTHS_HZ = (4.0, 6.0, 9.0, 13.0, 20.0, 30.0, 45.0)
#: A broad line is at least this many times as wide as the spectrum's lines ...
_MIN_WIDTH_RATIO = 4.0
#: ... and its peak stands this many noise sd above the local baseline.
_MIN_HEIGHT_SD = 20.0
#: The residual of the single-line fit may scatter by at most this many noise sd, or this share of
#: the line's height (a smooth line's model error): more means sharp lines lie on it.
_STRUCTURE_SD = 3.0
_STRUCTURE_SHARE = 0.03
#: Predicted range searched: this many predicted sd either side, clipped (ppm).
_RANGE_SD = 2.5
_RANGE_MIN_PPM, _RANGE_MAX_PPM = 0.3, 2.0
#: The fitted span reaches this many widths either side of the centre.
_SPAN_WIDTHS = 3.0


@dataclass(frozen=True)
class BroadLine:
    """A broad line found in the data: centre (ppm), FWHM (Hz) and peak height."""

    ppm: float
    fwhm_hz: float
    height: float


def _lorentz(x: np.ndarray, centre: float, fwhm: float) -> np.ndarray:
    return 1.0 / (1.0 + (2.0 * (x - centre) / fwhm) ** 2)


def _fit_one(x: np.ndarray, y: np.ndarray, centre: float, fwhm_ppm: float, noise_sd: float):
    """One Lorentzian on a straight baseline fitted to ``y`` around ``centre``: (centre, fwhm,
    height, structure), structure above 1 meaning the residual holds more than a smooth line's."""
    span = np.abs(x - centre) <= _SPAN_WIDTHS * fwhm_ppm
    if np.count_nonzero(span) < 12:
        return None
    xs, ys = x[span], y[span]
    step = max(1, xs.size // 600)
    xs, ys = xs[::step], ys[::step]

    def resid(p):
        return p[2] * _lorentz(xs, p[0], p[1]) + p[3] + p[4] * (xs - centre) - ys

    def jac(p):
        u = 2.0 * (xs - p[0]) / p[1]
        lor = _lorentz(xs, p[0], p[1])
        l2 = lor * lor
        return np.column_stack([p[2] * 4.0 * u * l2 / p[1], p[2] * 2.0 * u * u * l2 / p[1], lor,
                                np.ones_like(xs), xs - centre])

    start = np.array([centre, fwhm_ppm, max(float(np.max(ys) - np.median(ys)), noise_sd), 0.0, 0.0])
    lo = np.array([centre - fwhm_ppm, 0.5 * fwhm_ppm, 0.0, -np.inf, -np.inf])
    hi = np.array([centre + fwhm_ppm, 2.0 * fwhm_ppm, np.inf, np.inf, np.inf])
    fit = least_squares(resid, np.clip(start, lo, hi), jac=jac, bounds=(lo, hi), x_scale="jac", max_nfev=200)
    c, w, a = (float(v) for v in fit.x[:3])
    rms = float(np.sqrt(np.mean(fit.fun**2)))
    return c, w, a, rms / max(_STRUCTURE_SD * noise_sd, _STRUCTURE_SHARE * a)


def _ranges(systems, intervals) -> list:
    """Predicted ranges (ppm) of the candidates' exchangeable sites that overlap the fitted intervals
    (those that couple, in slow exchange, are sites of their molecule's model instead)."""
    out = []
    for system in systems:
        modelled = set(fitted_sites(system))
        for k, site in enumerate(system.sites):
            if not site.exchangeable or k in modelled:
                continue
            half = float(np.clip(_RANGE_SD * site.shift_sd_ppm, _RANGE_MIN_PPM, _RANGE_MAX_PPM))
            lo, hi = site.shift_ppm - half, site.shift_ppm + half
            if any(a <= hi and lo <= b for a, b in intervals):
                out.append((lo, hi))
    return merge_intervals(out)


def broad_lines(spectrum, systems, intervals, *, noise_sd: float, line_width_hz: float,
                avoid=()) -> list[BroadLine]:
    """Broad lines in ``spectrum`` within the predicted ranges of the candidates' exchangeable sites.

    Parameters
    ----------
    spectrum : Spectrum
        Processed spectrum.
    systems : sequence of SpinSystem
        The candidates' spin systems (their exchangeable sites set where to look).
    intervals : sequence of (lo, hi)
        Fitted intervals (ppm); a line outside them does not matter to the fit.
    noise_sd : float
        Noise sd of one point.
    line_width_hz : float
        Width of the spectrum's lines.
    avoid : sequence of float
        Positions (ppm) of lines already modelled (water): a broad line within one of its widths
        of one is left to that model.

    Returns
    -------
    list of BroadLine
        In order of position; empty when nothing broad is there.
    """
    field = float(spectrum.field_mhz)
    ranges = _ranges(systems, intervals)
    widths = [w for w in _TRIAL_WIDTHS_HZ if w >= _MIN_WIDTH_RATIO * line_width_hz]
    if not ranges or not widths:
        return []
    x = np.asarray(spectrum.ppm, dtype=float)
    y = np.asarray(spectrum.intensity, dtype=float)
    hz = abs(float(spectrum.hz_per_point))
    found: list[tuple] = []
    for w_hz in widths:
        smooth = gaussian_filter1d(y, sigma=max(1.0, 0.25 * w_hz / hz), mode="nearest")
        peak = np.flatnonzero((smooth[1:-1] > smooth[:-2]) & (smooth[1:-1] >= smooth[2:])) + 1
        # a broad line keeps most of its height in the smoothed data; noise maxima do not
        peak = peak[smooth[peak] > 0.5 * _MIN_HEIGHT_SD * noise_sd]
        for lo, hi in ranges:
            for i in peak[(x[peak] >= lo) & (x[peak] <= hi)]:
                got = _fit_one(x, y, float(x[i]), w_hz / field, noise_sd)
                if got is None:
                    continue
                c, w_ppm, a, structure = got
                if (a < _MIN_HEIGHT_SD * noise_sd or structure >= 1.0 or not lo <= c <= hi
                        or w_ppm * field < _MIN_WIDTH_RATIO * line_width_hz):
                    continue
                found.append((structure, -a, c, w_ppm * field, a))
    kept: list[BroadLine] = []
    for _, _, c, w, a in sorted(found):  # the cleanest fits first; a line is found once
        if any(abs(c - k.ppm) * field < 0.5 * max(w, k.fwhm_hz) for k in kept):
            continue
        if any(abs(c - p) * field < w for p in avoid):
            continue
        kept.append(BroadLine(ppm=c, fwhm_hz=w, height=a))
    return sorted(kept, key=lambda b: b.ppm)


def broad_line_models(lines, field_mhz: float) -> list[CandidateModel]:
    """Nuisance models of the broad lines: a singlet each, free within one width of where it was
    found, its width free within a factor of two."""
    return [line_model(BROAD_LABEL, line.ppm, ((0.0,), (1.0,)), 0.0, reach_ppm=line.fwhm_hz / field_mhz,
                       width_hz=(0.5 * line.fwhm_hz, 2.0 * line.fwhm_hz, line.fwhm_hz))
            for line in lines]


def broad_masks(lines, field_mhz: float) -> list:
    """Windows (lo, hi, label) that hide the broad lines from the assignment search."""
    return [(b.ppm - 2.5 * b.fwhm_hz / field_mhz, b.ppm + 2.5 * b.fwhm_hz / field_mhz, BROAD_LABEL)
            for b in lines]
