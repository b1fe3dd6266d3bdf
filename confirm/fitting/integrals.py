"""Amounts from integrals over each component's own multiplets, placed by the fit.

A least-squares amount follows the model's line heights: where a multiplet's couplings or line
shape are still a little off (a CH whose five couplings are refined from a noisy spectrum, a
shimmed line with a shoulder) the model lines sit lower or higher than the measured ones and the
amount follows them, although the multiplet's area is what it is. A chemist integrates instead.
Here the fit tells where each multiplet is and what else lies under it; the data are integrated
over a window around each multiplet of a component (its fitted lines down to 0.5 % of their peak;
its own multiplets that overlap each other taken together, the two protons of an AB pattern), the
other components' fitted lines and a local baseline are subtracted, and the integral is divided by
what one unit of the component gives in the same window (so the line tails outside the window
need no correction). The local baseline is a straight line through the fit's residual just beside
the window. A window gives a reading only when the others' fitted area in it is below a tenth of
the component's and its flanks hold no structure: a residual scattering beyond the noise there
means measured lines the fitted multiplet does not reach (a diastereotopic CH2 whose two shifts
collapsed), and the window would cut the multiplet. Near either threshold a window counts in part
(:func:`_ramp`), so that rounding cannot switch a whole reading on or off. The readings of one
component are combined by inverse variance (times their weights), the Birge ratio widening the sd
when they disagree.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["IntegralReading", "integral_amounts"]

#: A window holds the points where a multiplet's own column exceeds this share of its peak.
_WINDOW_LEVEL = 0.005
#: A window counts as the component's own when the others' fitted area in it is below this share.
_CLEAN_SHARE = 0.1
#: Runs of a window holding less than this share of the multiplet's area are dropped.
_RUN_SHARE = 0.02
#: Fewest points on each side for the local baseline level.
_FLANK_MIN = 8
#: A flank whose residual scatters by more than this many noise sd holds lines, not an offset.
_FLANK_SCATTER = 2.0
#: ... and by more than this share of the multiplet's fitted peak (line-tail shape errors stay below).
_FLANK_SHARE = 0.02
#: Relative error assumed for the others' subtracted area (their line shapes are models).
_OTHERS_ERROR = 0.05


@dataclass(frozen=True)
class IntegralReading:
    """One window's reading of a component: its sites, amount, sd and the others' share there."""

    sites: tuple
    amount: float
    sd: float
    others_share: float
    weight: float = 1.0  # how fully the window passes the clean and flank tests (see _ramp)


def _ramp(ratio: float) -> float:
    """Weight of a window from a test statistic over its threshold: 1 up to 0.75, 0 from 1.25,
    linear between. A window near a threshold then counts a little, and a rounding difference that
    moves the statistic across the threshold moves the amount a little, not by the whole reading."""
    return float(np.clip((1.25 - ratio) / 0.5, 0.0, 1.0))


def _runs(mask: np.ndarray) -> tuple:
    """Starts and stops (exclusive) of the runs of True in ``mask``."""
    edges = np.flatnonzero(np.diff(np.concatenate([[0], mask.astype(np.int8), [0]])))
    return edges[::2], edges[1::2]


def _main_runs(col: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """``mask`` without its runs that hold less than :data:`_RUN_SHARE` of the column's area (the
    13C satellites, 0.55 % each, sit 60-90 Hz out and would stretch the window across other lines)."""
    total = float(col.sum())
    out = np.zeros_like(mask)
    for a, b in zip(*_runs(mask), strict=True):
        if col[a:b].sum() >= _RUN_SHARE * total:
            out[a:b] = True
    return out


def _windows(per_site: np.ndarray, weight: np.ndarray) -> list:
    """Clusters of a molecule's sites whose windows overlap: [(sites, mask)]."""
    masks = []
    for s, col in enumerate(per_site):
        peak = float(np.max(col)) if col.size else 0.0
        if peak <= 0:
            continue
        masks.append(([s], _main_runs(col, col > _WINDOW_LEVEL * peak)))
    merged = True
    while merged:
        merged = False
        for a in range(len(masks)):
            for b in range(a + 1, len(masks)):
                if np.any(masks[a][1] & masks[b][1]):
                    masks[a] = (masks[a][0] + masks[b][0], masks[a][1] | masks[b][1])
                    del masks[b]
                    merged = True
                    break
            if merged:
                break
    return [(tuple(sorted(sites)), mask) for sites, mask in masks if np.all(weight[mask] > 0)]


def _flank_line(residual: np.ndarray, mask: np.ndarray, weight: np.ndarray, box: int,
                noise_sd: float, peak: float = 0.0) -> tuple:
    """A straight line through the mean levels of the fit's ``residual`` just outside the window
    (``box`` points on each side, where unmasked), as an integration tool's bias-and-slope
    correction: the fitted baseline is a smooth curve over the whole region and leaves a local
    offset (a broad line's wing, a roll) that an integral over a wide window would sum. Returns the
    line on every point, the variance of its level in units of the point noise variance, and how
    much structure rather than offset a flank holds: its residual scatter over the larger of
    :data:`_FLANK_SCATTER` noise sd and :data:`_FLANK_SHARE` of the multiplet's fitted ``peak``
    (beyond what the line tails' shape errors leave). Above 1 the flank holds measured lines the
    fitted multiplet does not reach, so the window cuts the multiplet (see :func:`_ramp`).
    """
    idx = np.flatnonzero(mask)
    lo, hi = int(idx[0]), int(idx[-1])
    n = residual.size
    sides = []
    for a, b in ((max(0, lo - box), lo), (hi + 1, min(n, hi + 1 + box))):
        pts = np.arange(a, b)
        pts = pts[weight[pts] > 0] if pts.size else pts
        if pts.size:
            sides.append((float(np.mean(pts)), float(np.mean(residual[pts])), pts.size,
                          float(np.std(residual[pts]))))
    line = np.zeros(n)
    if not sides:
        return line, 0.0, 0.0
    limit = max(_FLANK_SCATTER * noise_sd, _FLANK_SHARE * peak, 1e-300)
    structure = max(side[3] for side in sides) / limit
    if len(sides) == 1:
        return line + sides[0][1], 1.0 / sides[0][2], structure
    (x0, y0, n0, _), (x1, y1, n1, _) = sides
    t = (np.arange(n) - x0) / max(x1 - x0, 1.0)
    return y0 + (y1 - y0) * t, 0.5 * (1.0 / n0 + 1.0 / n1), structure


def integral_amounts(grid, per_site: np.ndarray, cols: np.ndarray, offsets, n_sites, amounts: np.ndarray,
                     baseline: np.ndarray, detected: np.ndarray, noise_sd: float, *,
                     width_ppm: float) -> dict:
    """Integral readings and combined amount of each detected component.

    Parameters
    ----------
    grid : Grid
        Full-resolution fitting grid.
    per_site : ndarray
        Unit-amount column of every site of every model (in model order).
    cols : ndarray
        Unit-amount column of every model (the sum of its sites' columns).
    offsets, n_sites : sequence of int
        First row and number of rows of each model in ``per_site``.
    amounts : ndarray
        Fitted amounts of every model (candidates and nuisance lines).
    baseline : ndarray
        Fitted baseline (and phase) contribution on the grid.
    detected : ndarray of bool
        Candidates to read.
    noise_sd : float
        Noise sd of one grid point.
    width_ppm : float, keyword-only
        Fitted line width: the local baseline is read over 4 widths (at least 8 points) on each side.

    Returns
    -------
    dict
        Candidate index -> (amount, sd, readings, weight) for those with at least one window that
        counts, whatever the sign of the amount (an integral at or below zero says the component is
        not there); ``weight`` (0-1] is the largest of the readings' weights (how fully the best
        window passes the clean and flank tests).
    """
    fitted = amounts[:, None] * cols
    total = fitted.sum(0)
    data = grid.y - baseline
    flank = max(_FLANK_MIN, 4 * int(round(width_ppm / grid.dx_ppm)))
    out = {}
    for k in np.flatnonzero(detected):
        own_rows = per_site[offsets[k]:offsets[k] + n_sites[k]]
        others = total - fitted[k]
        readings = []
        for sites, mask in _windows(own_rows, grid.weight):
            unit = float(own_rows[list(sites)][:, mask].sum())
            if unit <= 0:
                continue
            other_area = float(others[mask].sum())
            expected = amounts[k] * unit
            if expected <= 0:
                continue
            level, level_var, structure = _flank_line(data - total, mask, grid.weight, flank, noise_sd,
                                                      float(np.max(fitted[k][mask])))
            weight = _ramp(abs(other_area) / (_CLEAN_SHARE * expected)) * _ramp(structure)
            if weight <= 0:
                continue
            n_in = int(mask.sum())
            value = (float(data[mask].sum()) - other_area - float(level[mask].sum())) / unit
            var = (noise_sd**2 * n_in + n_in**2 * level_var * noise_sd**2
                   + (_OTHERS_ERROR * other_area) ** 2) / unit**2
            readings.append(IntegralReading(sites, value, float(np.sqrt(var)), other_area / expected, weight))
        if readings:
            mean, sd, weight = _combine_readings(readings)
            out[int(k)] = (mean, sd, tuple(readings), weight)
    return out


def _combine_readings(readings) -> tuple[float, float, float]:
    """Inverse-variance mean of integral readings (each weighted by its ``weight``), its sd (widened
    by the Birge ratio when they disagree) and the largest weight."""
    a = np.array([r.amount for r in readings])
    f = np.array([r.weight for r in readings])
    w = f / np.array([r.sd for r in readings]) ** 2
    mean = float(np.sum(w * a) / np.sum(w))
    sd = float(1.0 / np.sqrt(np.sum(w)))
    if len(readings) > 1:
        birge = float(np.sum(w * (a - mean) ** 2) / (len(readings) - 1))
        sd *= float(np.sqrt(max(1.0, birge)))
    return mean, sd, float(np.max(f))
