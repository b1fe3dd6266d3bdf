"""Noise level, noise correlation and line width of a processed spectrum."""

from __future__ import annotations

import numpy as np

from predictors.core import Spectrum

__all__ = ["estimate_noise_sd", "estimate_line_width_hz", "noise_correlation_factor"]


def estimate_noise_sd(intensity: np.ndarray, *, n_blocks: int = 32) -> float:
    """Noise standard deviation of a spectrum from its quietest stretches.

    The spectrum is cut into ``n_blocks`` blocks; in each, the sd of the first difference
    divided by sqrt(2) estimates the noise (insensitive to a smooth baseline). The median of the
    quietest quarter of blocks is returned, so signals do not inflate it.

    Parameters
    ----------
    intensity : ndarray, shape (n,)
    n_blocks : int

    Returns
    -------
    float
        Noise sd in the units of ``intensity`` (> 0).
    """
    y = np.asarray(intensity, dtype=float)
    if y.size < 4 * n_blocks:
        n_blocks = max(1, y.size // 16)
    blocks = np.array_split(np.diff(y), n_blocks)
    sds = np.sort([np.std(b) / np.sqrt(2.0) for b in blocks if b.size > 3])
    quiet = sds[: max(1, len(sds) // 4)]
    sd = float(np.median(quiet)) if quiet.size else 0.0
    if not np.isfinite(sd) or sd <= 0:
        sd = float(np.std(y)) * 1e-3 or 1e-12
    return sd


def noise_correlation_factor(intensity: np.ndarray, *, max_lag: int = 6) -> float:
    """Variance inflation of sums over correlated noise, sqrt(1 + 2 sum rho_k), from quiet data.

    Apodization and zero filling correlate neighbouring points; a sum over n points then varies
    more than n independent ones would.
    """
    y = np.asarray(intensity, dtype=float)
    n_blocks = 32
    blocks = np.array_split(y, n_blocks)
    scores = [np.std(np.diff(b)) for b in blocks]
    quiet = [blocks[i] for i in np.argsort(scores, kind="stable")[: max(2, n_blocks // 4)]]
    rhos = np.zeros(max_lag)
    for block in quiet:
        z = block - np.convolve(block, np.ones(15) / 15, mode="same")  # remove slow baseline
        z = z[8:-8]
        if z.size <= max_lag * 4:
            continue
        var = float(np.dot(z, z))
        if var <= 0:
            continue
        rhos += [float(np.dot(z[:-k], z[k:])) / var for k in range(1, max_lag + 1)]
    rhos /= max(1, len(quiet))
    return float(np.sqrt(max(1.0, 1.0 + 2.0 * np.sum(np.clip(rhos, 0.0, None)))))


def estimate_line_width_hz(spectrum: Spectrum, *, noise_sd: float | None = None) -> float:
    """Full width at half height (Hz) typical of the tallest isolated peaks of a spectrum.

    The 30th percentile of up to 12 peak widths is returned (unresolved small couplings widen
    the others), at least 2.5 points and at most 6 Hz; 1 Hz when no peak stands 30 sd tall.
    """
    y = np.asarray(spectrum.intensity, dtype=float)
    sd = noise_sd or estimate_noise_sd(y)
    hz = abs(spectrum.hz_per_point)
    order = np.argsort(-y, kind="stable")
    widths, used = [], np.zeros(y.size, bool)
    for i in order[:2000]:
        if y[i] < 30 * sd or len(widths) >= 12:
            break
        if used[i] or not (0 < i < y.size - 1) or y[i] < y[i - 1] or y[i] < y[i + 1]:
            continue
        half = y[i] / 2
        lo, hi = i, i
        while lo > 0 and y[lo] > half:
            lo -= 1
        while hi < y.size - 1 and y[hi] > half:
            hi += 1
        used[max(0, lo - (hi - lo)) : hi + (hi - lo)] = True
        left = lo + (half - y[lo]) / (y[lo + 1] - y[lo])
        right = hi - (half - y[hi]) / (y[hi - 1] - y[hi])
        widths.append((right - left) * hz)
    if not widths:
        return 1.0
    return float(np.clip(np.percentile(widths, 30), 2.5 * hz, 6.0))
