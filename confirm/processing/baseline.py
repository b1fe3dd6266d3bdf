"""Baseline correction (arPLS on a block-averaged copy) and the noise estimate."""

from __future__ import annotations

import numpy as np

from confirm.processing.options import ProcessingOptions
from predictors.errors import InputError

__all__ = ["correct_baseline", "arpls_baseline", "estimate_noise_sd"]


def correct_baseline(intensity: np.ndarray, options: ProcessingOptions) -> np.ndarray:
    """``intensity`` minus a smooth baseline fitted with ``options.baseline`` (unchanged for "none")."""
    if options.baseline == "none":
        return intensity

    block = max(1, intensity.size // 4096)
    n_blocks = intensity.size // block
    coarse = intensity[: n_blocks * block].reshape(n_blocks, block).mean(axis=1)
    pad = n_blocks // 8
    # point-symmetric extension continues the edge slopes, so the smoother sees no artificial edge
    head, tail = 2 * coarse[0] - coarse[pad:0:-1], 2 * coarse[-1] - coarse[-2:-pad - 2:-1]
    padded = np.concatenate([head, coarse, tail])
    if options.baseline == "arpls":
        fitted = arpls_baseline(padded, lam=options.baseline_lam)
    else:
        from pybaselines import Baseline

        fitter = Baseline(x_data=np.arange(padded.size, dtype=float))
        if options.baseline == "asls":
            fitted, _ = fitter.asls(padded, lam=options.baseline_lam, p=options.baseline_p)
        else:
            fitted, _ = fitter.iarpls(padded, lam=options.baseline_lam)
    x = np.arange(n_blocks) * block + 0.5 * (block - 1)
    return intensity - np.interp(np.arange(intensity.size), x, fitted[pad:pad + n_blocks])


def arpls_baseline(y: np.ndarray, *, lam: float, tol: float = 1e-3, max_iter: int = 50) -> np.ndarray:
    """Asymmetrically reweighted penalized least squares baseline (Baek, Park, Ahn, Choo,
    Analyst 2015, 140, 250), second-order difference penalty.

    Each round solves ``(W + lam D'D) z = W y`` (a pentadiagonal system) and reweights every
    point by ``1 / (1 + exp(2 (r - (2 s - m)) / s))``, with ``r = y - z`` and ``m``, ``s`` the mean
    and sd of the negative residuals; it stops when the weights change by less than ``tol``
    (relative norm). The same steps and defaults as the arPLS of the pybaselines package, whose
    result it reproduces (tested), without loading that package's dependencies.
    """
    from scipy.linalg import solveh_banded

    y = np.asarray(y, dtype=float)
    n = y.size
    if n < 5:
        return np.full(n, float(np.mean(y)))
    main = np.full(n, 6.0)
    main[[0, -1]], main[[1, -2]] = 1.0, 5.0
    off1 = np.full(n, -4.0)
    off1[[1, -1]] = -2.0
    bands = np.zeros((3, n))  # upper form: row 2 main diagonal, row 1 first, row 0 second
    bands[0, 2:] = lam
    bands[1, 1:] = lam * off1[1:]
    weights = np.ones(n)
    baseline = y
    for _ in range(max_iter + 1):
        bands[2] = lam * main + weights
        baseline = solveh_banded(bands, weights * y, check_finite=False)
        residual = y - baseline
        negative = residual[residual < 0]
        if negative.size < 2:
            break
        sd = max(float(np.std(negative, ddof=1)), 1e-300)
        with np.errstate(over="ignore"):
            new = 1.0 / (1.0 + np.exp(2.0 * (residual - (2.0 * sd - float(np.mean(negative)))) / sd))
        change = np.linalg.norm(new - weights) / max(float(np.linalg.norm(weights)), 1e-300)
        if change < tol:
            break
        weights = new
    return baseline


def estimate_noise_sd(intensity: np.ndarray, *, n_blocks: int = 64) -> float:
    """Noise standard deviation: lower quartile of detrended block SDs (see module docstring)."""
    y = np.asarray(intensity, dtype=float)
    size = y.size // n_blocks
    if size < 8:
        raise InputError(f"intensity: need at least {8 * n_blocks} points to estimate noise, got {y.size}")
    blocks = y[: size * n_blocks].reshape(n_blocks, size)
    t = np.arange(size) - 0.5 * (size - 1)
    slopes = blocks @ t / (t @ t)
    residual = blocks - blocks.mean(axis=1, keepdims=True) - slopes[:, None] * t
    sds = residual.std(axis=1, ddof=2)
    return float(max(np.percentile(sds, 25), 1e-300))
