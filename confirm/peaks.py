"""Peak picking, integration and first-order multiplet analysis of a 1D spectrum.

``pick_peaks`` finds local maxima above a multiple of the noise, places them by
parabolic interpolation, measures their full width at half height and
integrates each over the stretch it owns (bounded by the valleys to its
neighbours and by +-32 line widths, which holds 99 % of a Lorentzian's area:
references.md section 5). ``group_multiplets`` joins lines closer than the
largest expected coupling and takes the multiplet apart as a first-order
pattern: line heights are turned into whole numbers of "units" (the outer
lines carry one each), the 2**k unit positions are split pair by pair, the
smallest remaining spacing being the next coupling (the procedure of Hoye,
Hanson and Vyvyan, J. Org. Chem. 1994, 59, 4096). Patterns that do not come
apart this way are reported as ``"m"`` without couplings.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from predictors.core import Spectrum
from predictors.errors import InputError

__all__ = ["Peak", "Multiplet", "pick_peaks", "group_multiplets", "integrate_region", "find_peak_indices",
           "half_height_widths"]

#: 13C satellites sit 1J(CH)/2 (about 60-85 Hz) from their parent at 0.55 % of its height
#: (references.md section 5): lines that small that close join no multiplet.
_SATELLITE_REACH_HZ = 90.0
_SATELLITE_RATIO = 100.0
_MULTIPLICITY_NAMES = {1: "d", 2: "t", 3: "q", 4: "quint", 5: "sext", 6: "sept"}


@dataclass(frozen=True)
class Peak:
    """One line of a spectrum.

    Attributes
    ----------
    ppm : float
        Interpolated position of the maximum.
    height : float
        Interpolated maximum intensity.
    integral : float
        Area (intensity x Hz) over the stretch the line owns.
    width_hz : float
        Full width at half height.
    index : int
        Index of the maximum in the spectrum arrays.
    start_ppm, stop_ppm : float
        Integration limits (start > stop).
    """

    ppm: float
    height: float
    integral: float
    width_hz: float
    index: int
    start_ppm: float
    stop_ppm: float


@dataclass(frozen=True)
class Multiplet:
    """A group of lines from one proton environment.

    Attributes
    ----------
    ppm : float
        Centre (first-order centre when analysed, else area-weighted).
    integral : float
        Sum of the lines' integrals (intensity x Hz).
    j_hz : tuple of float
        Distinct couplings, largest first, one per letter of ``multiplicity``
        (a triplet has one J); empty for singlets and unresolved ``"m"``.
    n_lines : int
        Number of resolved lines.
    peak_indices : tuple of int
        Positions of the lines in the peak tuple given to :func:`group_multiplets`.
    multiplicity : str
        ``"s"``, ``"d"``, ``"t"``, ``"dd"``, ``"ddt"``... or ``"m"``.
    start_ppm, stop_ppm : float
        Integration limits of the whole multiplet.
    """

    ppm: float
    integral: float
    j_hz: tuple[float, ...]
    n_lines: int
    peak_indices: tuple[int, ...]
    multiplicity: str
    start_ppm: float
    stop_ppm: float


def integrate_region(spectrum: Spectrum, start_ppm: float, stop_ppm: float) -> float:
    """Area (intensity x Hz) of ``spectrum`` between two shifts (trapezoid rule)."""
    lo, hi = sorted((start_ppm, stop_ppm))
    mask = (spectrum.ppm >= lo) & (spectrum.ppm <= hi)
    if mask.sum() < 2:
        return 0.0
    return float(np.sum(spectrum.intensity[mask]) * spectrum.hz_per_point)


def pick_peaks(spectrum: Spectrum, *, noise_sd: float, threshold_snr: float = 8.0,
               tail_widths: float = 32.0, ppm_range: tuple[float, float] | None = None) -> tuple[Peak, ...]:
    """Find lines higher than ``threshold_snr`` x ``noise_sd``.

    Parameters
    ----------
    spectrum : Spectrum
        Phased, baseline-corrected spectrum (ppm decreasing).
    noise_sd : float
        Standard deviation of the noise, > 0.
    threshold_snr : float, optional
        Minimum height and prominence in units of ``noise_sd``.
    tail_widths : float, optional
        Integration reaches at most this many line widths beyond a line.
    ppm_range : (float, float), optional
        Only report lines inside this range.

    Returns
    -------
    tuple of Peak
        Sorted by decreasing ppm.
    """
    if not (isinstance(noise_sd, (int, float, np.floating)) and math.isfinite(noise_sd) and noise_sd > 0):
        raise InputError(f"noise_sd: expected a finite number > 0, got {noise_sd!r}")
    if not threshold_snr > 0:
        raise InputError(f"threshold_snr: expected > 0, got {threshold_snr!r}")
    y = spectrum.intensity
    threshold = threshold_snr * noise_sd
    indices = find_peak_indices(y, height=threshold, prominence=threshold)
    if ppm_range is not None:
        lo, hi = sorted(ppm_range)
        indices = indices[(spectrum.ppm[indices] >= lo) & (spectrum.ppm[indices] <= hi)]
    hz_per_point = spectrum.hz_per_point
    widths = half_height_widths(y, indices)
    peaks = []
    for k, i in enumerate(indices):
        ppm, height = _interpolate_max(spectrum, int(i))
        width_hz = float(widths[k]) * hz_per_point
        reach = max(3, int(round(tail_widths * width_hz / hz_per_point)))
        left = _valley(y, indices[k - 1], i) if k > 0 else 0
        right = _valley(y, i, indices[k + 1]) if k + 1 < len(indices) else y.size - 1
        left, right = max(left, int(i) - reach), min(right, int(i) + reach)
        area = float(np.sum(y[left:right + 1]) * hz_per_point)
        peaks.append(Peak(ppm=ppm, height=height, integral=area, width_hz=width_hz, index=int(i),
                          start_ppm=float(spectrum.ppm[left]), stop_ppm=float(spectrum.ppm[right])))
    return tuple(peaks)


def _interpolate_max(spectrum: Spectrum, i: int) -> tuple[float, float]:
    y, ppm = spectrum.intensity, spectrum.ppm
    if i == 0 or i == y.size - 1:
        return float(ppm[i]), float(y[i])
    a, b, c = y[i - 1], y[i], y[i + 1]
    denom = a - 2 * b + c
    shift = 0.5 * (a - c) / denom if denom < 0 else 0.0
    step = ppm[i + 1] - ppm[i]
    return float(ppm[i] + shift * step), float(b - 0.25 * (a - c) * shift)


def half_height_widths(y: np.ndarray, indices: np.ndarray) -> np.ndarray:
    """Full widths (points) at half of each line's own height above zero."""
    if indices.size == 0:
        return np.zeros(0)
    widths = np.empty(indices.size)
    for k, peak in enumerate(np.asarray(indices, dtype=int)):
        half = 0.5 * y[peak]
        below = np.flatnonzero(y[1 : peak + 1] <= half)  # scanning left, stop at the first point <= half
        i = below[-1] + 1 if below.size else 0
        left = i + (half - y[i]) / (y[i + 1] - y[i]) if y[i] < half else float(i)
        below = np.flatnonzero(y[peak : y.size - 1] <= half)
        i = peak + below[0] if below.size else y.size - 1
        right = i - (half - y[i]) / (y[i - 1] - y[i]) if y[i] < half else float(i)
        widths[k] = right - left
    return np.maximum(widths, 1.0)


def find_peak_indices(y: np.ndarray, *, height: float, prominence: float) -> np.ndarray:
    """Indices of the local maxima of ``y`` at least ``height`` tall and ``prominence`` prominent.

    A maximum is a point above its left neighbour and not below its right one (the middle of a
    flat top counts once); its prominence is its height above the higher of the two lowest points
    reached, left and right, before the data rise above it again (or the ends). The same
    definitions as ``scipy.signal.find_peaks`` (tested against it), without loading that module.
    """
    y = np.asarray(y, dtype=float)
    n = y.size
    if n < 3:
        return np.zeros(0, dtype=np.intp)
    inner = np.arange(1, n - 1)
    rising = y[inner - 1] < y[inner]
    peaks = list(inner[rising & (y[inner] > y[inner + 1])])
    for i in inner[rising & (y[inner] == y[inner + 1])]:  # flat tops: take the middle
        j = i + 1
        while j < n - 1 and y[j] == y[i]:
            j += 1
        if y[j] < y[i]:
            peaks.append((i + j - 1) // 2)
    peaks = np.array(sorted(peaks), dtype=np.intp)
    peaks = peaks[y[peaks] >= height]
    keep = []
    for p in peaks:
        if y[p] - max(_side_minimum(y, p, -1), _side_minimum(y, p, 1)) >= prominence:
            keep.append(p)
    return np.array(keep, dtype=np.intp)


def _side_minimum(y: np.ndarray, p: int, direction: int) -> float:
    """Lowest point between peak ``p`` and the first point higher than it on one side (or the end).

    The nearest higher point is looked for in windows growing fourfold from 64 points, so a
    line among others costs a few hundred operations instead of a pass over the spectrum.
    """
    n, width = y.size, 64
    while True:
        if direction < 0:
            start = max(0, p - width)
            higher = np.flatnonzero(y[start:p] > y[p])
            if higher.size or start == 0:
                return float(np.min(y[start + higher[-1] + 1 if higher.size else 0 : p + 1]))
        else:
            stop = min(n, p + 1 + width)
            higher = np.flatnonzero(y[p + 1:stop] > y[p])
            if higher.size or stop == n:
                return float(np.min(y[p : p + 1 + higher[0] if higher.size else n]))
        width *= 4


def _valley(y: np.ndarray, i: int, j: int) -> int:
    i, j = int(i), int(j)
    return i + int(np.argmin(y[i:j + 1]))


def group_multiplets(peaks: tuple[Peak, ...], *, field_mhz: float, max_j_hz: float = 20.0,
                     tolerance_hz: float = 0.6, minor_ratio: float = 25.0) -> tuple[Multiplet, ...]:
    """Group lines into multiplets and extract first-order couplings.

    Parameters
    ----------
    peaks : tuple of Peak
        Lines sorted by decreasing ppm (as :func:`pick_peaks` returns them).
    field_mhz : float
        Spectrometer frequency, to turn ppm spacings into Hz.
    max_j_hz : float, optional
        Adjacent lines closer than this belong to the same multiplet.
    tolerance_hz : float, optional
        How closely line spacings must agree to count as one coupling.
    minor_ratio : float, optional
        A line with a line this many times taller within 3 x ``max_j_hz``
        (a shoulder or trace impurity) joins no multiplet; nor does a line
        100 times smaller than one within 90 Hz (a 13C satellite).

    Returns
    -------
    tuple of Multiplet
        Sorted by decreasing ppm.
    """
    if not (field_mhz and math.isfinite(field_mhz) and field_mhz > 0):
        raise InputError(f"field_mhz: expected a finite number > 0, got {field_mhz!r}")
    if not max_j_hz > 0 or not tolerance_hz > 0:
        raise InputError(f"max_j_hz / tolerance_hz: expected > 0, got {max_j_hz!r} / {tolerance_hz!r}")
    order = sorted(range(len(peaks)), key=lambda k: -peaks[k].ppm)
    major = [k for k in order if not _is_minor(peaks, k, field_mhz, 3.0 * max_j_hz, minor_ratio)
             and not _is_minor(peaks, k, field_mhz, _SATELLITE_REACH_HZ, _SATELLITE_RATIO)]
    groups: list[list[int]] = []
    for k in major:
        if groups and _joins(peaks[groups[-1][-1]], peaks[k], field_mhz, max_j_hz):
            groups[-1].append(k)
        else:
            groups.append([k])
    return tuple(_describe_group([peaks[k] for k in g], tuple(g), field_mhz, tolerance_hz) for g in groups)


def _joins(previous: Peak, line: Peak, field_mhz: float, max_j_hz: float) -> bool:
    """Adjacent lines share a multiplet when closer than ``max_j_hz``; beyond half of it only when
    of similar height (large couplings split lines of similar intensity)."""
    gap_hz = (previous.ppm - line.ppm) * field_mhz
    if gap_hz > max_j_hz:
        return False
    ratio = max(previous.height, line.height) / max(min(previous.height, line.height), 1e-300)
    return gap_hz <= 0.5 * max_j_hz or ratio <= 2.5


def _is_minor(peaks, k: int, field_mhz: float, reach_hz: float, ratio: float) -> bool:
    """True when a line ``ratio`` times taller lies within ``reach_hz`` (a shoulder, satellite or trace)."""
    return any(abs(p.ppm - peaks[k].ppm) * field_mhz <= reach_hz and p.height > ratio * peaks[k].height
               for p in peaks)


def _describe_group(lines: list[Peak], indices: tuple[int, ...], field_mhz: float,
                    tolerance_hz: float) -> Multiplet:
    integral = float(sum(p.integral for p in lines))
    start, stop = max(p.start_ppm for p in lines), min(p.stop_ppm for p in lines)
    weights = np.array([max(p.integral, 0.0) for p in lines]) + 1e-300
    centroid = float(np.average([p.ppm for p in lines], weights=weights))
    if len(lines) == 1:
        return Multiplet(lines[0].ppm, integral, (), 1, indices, "s", start, stop)
    freqs = np.array([p.ppm * field_mhz for p in lines])[::-1]  # ascending Hz
    heights = np.array([p.height for p in lines])[::-1]
    analysis = _first_order(freqs, heights, tolerance_hz)
    if analysis is None:
        return Multiplet(centroid, integral, (), len(lines), indices, "m", start, stop)
    centre_hz, couplings = analysis
    j_sorted = tuple(sorted(couplings, reverse=True))
    return Multiplet(centre_hz / field_mhz, integral, _distinct_couplings(j_sorted, tolerance_hz),
                     len(lines), indices, _multiplicity_label(j_sorted, tolerance_hz), start, stop)


def _distinct_couplings(j_sorted: tuple[float, ...], tol: float) -> tuple[float, ...]:
    """One value per coupling constant (a triplet has one J), each the mean of its equal spacings."""
    runs: list[list[float]] = []
    for j in j_sorted:
        if runs and abs(runs[-1][0] - j) <= tol:
            runs[-1].append(j)
        else:
            runs.append([j])
    return tuple(round(float(np.mean(r)), 2) for r in runs)


def _first_order(freqs: np.ndarray, heights: np.ndarray, tol: float) -> tuple[float, list[float]] | None:
    """Split a line pattern into couplings; None when it is not first order.

    The heights are tried as measured, then with a roof taken out: a multiplet strongly coupled to
    a neighbour leans towards it (a dq 100 Hz from its partner at J 15.8 Hz has one quartet about
    1.4 times the other), which a chemist still reads as its first-order pattern. The lean is taken
    as linear in frequency and measured on the two outer lines, which in a first-order pattern
    are of equal height."""
    result = _first_order_heights(freqs, heights, tol)
    if result is None and len(freqs) >= 4 and heights[0] > 0 and heights[-1] > 0:
        ratio = heights[-1] / heights[0]
        half = 0.5 * (freqs[-1] - freqs[0])
        if half > 0 and 1.0 / _MAX_ROOF <= ratio <= _MAX_ROOF:
            slope = (ratio - 1.0) / (ratio + 1.0) / half  # h ~ 1 + slope * (f - centre)
            centre = 0.5 * (freqs[0] + freqs[-1])
            result = _first_order_heights(freqs, heights / (1.0 + slope * (freqs - centre)), tol)
    return result


#: Largest ratio of a multiplet's outer lines taken as a roof (beyond it, no first-order reading).
_MAX_ROOF = 2.0


def _first_order_heights(freqs: np.ndarray, heights: np.ndarray,
                         tol: float) -> tuple[float, list[float]] | None:
    outer = min(heights[0], heights[-1])
    for unit in (outer, 0.5 * (heights[0] + heights[-1]), max(heights[0], heights[-1])):
        if unit <= 0:
            continue
        ratios = heights / unit
        units = np.maximum(1, np.round(ratios)).astype(int)
        total = int(units.sum())
        if total & (total - 1) or total > 256 or np.any(np.abs(ratios - units) > 0.35 * units + 0.15):
            continue
        positions = sorted(np.repeat(freqs, units).tolist())
        result = _split_positions(positions, tol)
        if result is not None:
            return result
    return None


def _split_positions(positions: list[float], tol: float) -> tuple[float, list[float]] | None:
    couplings: list[float] = []
    while len(positions) > 1:
        spacing = positions[1] - positions[0]
        if spacing < tol:
            return None
        lower, gaps, rest = [], [], list(positions)
        while rest:
            x = rest.pop(0)
            target = x + spacing
            best = min(range(len(rest)), key=lambda k: abs(rest[k] - target), default=None)
            if best is None or abs(rest[best] - target) > tol:
                return None
            gaps.append(rest.pop(best) - x)
            lower.append(x)
        couplings.append(float(np.mean(gaps)))
        positions = lower
    return positions[0] + 0.5 * sum(couplings), couplings


def _multiplicity_label(j_sorted: tuple[float, ...], tol: float) -> str:
    label, k = [], 0
    while k < len(j_sorted):
        run = 1
        while k + run < len(j_sorted) and abs(j_sorted[k + run] - j_sorted[k]) <= tol:
            run += 1
        label.append(_MULTIPLICITY_NAMES.get(run, "m"))
        k += run
    return "".join(label) if all(part != "m" for part in label) else "m"
