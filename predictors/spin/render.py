"""Line shapes: drawing line lists on a ppm grid."""

from __future__ import annotations

import math

import numpy as np
from scipy.special import erf

from predictors.core import LineList, SpinSystem
from predictors.errors import InputError
from predictors.spin._checks import positive_number
from predictors.spin.simulate import simulate_lines

#: Allowed values of ``shape`` in the rendering functions.
LINE_SHAPES = ("lorentzian", "gaussian", "voigt")

_POOL_STEP = 0.01  # lines closer than this many line widths are drawn as one
_DIRECT_LIMIT = 2_000_000  # lines x points above which uniform grids are drawn by FFT



def _check_grid(ppm) -> np.ndarray:
    grid = np.asarray(ppm, dtype=float)
    if grid.ndim != 1 or grid.size < 2:
        raise InputError(f"ppm: expected a 1-D grid of at least two points, got shape {grid.shape}")
    if not np.all(np.isfinite(grid)):
        raise InputError("ppm: grid contains NaN or infinite values")
    step = np.diff(grid)
    if not (np.all(step > 0) or np.all(step < 0)):
        raise InputError("ppm: grid must be strictly increasing or strictly decreasing")
    return grid


def _gaussian_share(shape: str, gaussian_fraction) -> float:
    if shape not in LINE_SHAPES:
        raise InputError(f"shape: unknown line shape {shape!r}; allowed: {', '.join(LINE_SHAPES)}")
    try:
        eta = float(gaussian_fraction)
    except (TypeError, ValueError):
        raise InputError(f"gaussian_fraction: expected a number, got {gaussian_fraction!r}") from None
    if not math.isfinite(eta) or not 0.0 <= eta <= 1.0:
        raise InputError(f"gaussian_fraction: expected a number from 0 to 1, got {gaussian_fraction!r}")
    if shape != "voigt" and eta != 0.0:
        raise InputError(f"gaussian_fraction: {eta!r} needs shape='voigt' (got shape={shape!r})")
    return {"lorentzian": 0.0, "gaussian": 1.0}.get(shape, eta)


def _bin_edges(grid: np.ndarray) -> np.ndarray:
    mid = 0.5 * (grid[1:] + grid[:-1])
    return np.concatenate(([grid[0] - (mid[0] - grid[0])], mid, [grid[-1] + (grid[-1] - mid[-1])]))


def _profile_matrix(centres, edges, width_ppm, eta):
    """Mean of each unit-area line over each bin, shape (n_lines, n_points)."""
    x = edges[None, :] - centres[:, None]
    cdf = np.zeros_like(x)
    if eta < 1.0:
        cdf += (1.0 - eta) * np.arctan(x / (0.5 * width_ppm)) / np.pi
    if eta > 0.0:
        sigma = width_ppm / (2.0 * math.sqrt(2.0 * math.log(2.0)))
        cdf += eta * 0.5 * erf(x / (sigma * math.sqrt(2.0)))
    return np.abs(np.diff(cdf, axis=1)) / np.abs(np.diff(edges))[None, :]


def render_sites(lines: LineList, ppm, *, n_sites: int, line_width_hz: float, shape: str = "lorentzian",
                 gaussian_fraction: float = 0.0) -> np.ndarray:
    """Draw the lines of each site on a ppm grid.

    Each point holds the mean of the line shape over the point's bin (half
    way to its neighbours), so ``sum(row) * |d ppm|`` equals the area of the
    lines inside the grid exactly, also on grids coarse compared with the
    line width.

    Parameters
    ----------
    lines : LineList
    ppm : array_like, shape (n_points,)
        Strictly increasing or decreasing grid.
    n_sites : int
        Number of sites; every ``lines.site_index`` must be below it.
    line_width_hz : float
        Full width at half height, > 0.
    shape : {"lorentzian", "gaussian", "voigt"}
        ``"voigt"`` is the pseudo-Voigt sum ``(1-f) L + f G`` with the same
        width, ``f = gaussian_fraction``.
    gaussian_fraction : float
        Only with ``shape="voigt"``; 0-1.

    Returns
    -------
    ndarray, shape (n_sites, n_points)
    """
    if not isinstance(lines, LineList):
        raise InputError(f"lines: expected a LineList, got {type(lines).__name__}")
    grid = _check_grid(ppm)
    eta = _gaussian_share(shape, gaussian_fraction)
    width = positive_number(line_width_hz, "line_width_hz")
    if isinstance(n_sites, bool) or not isinstance(n_sites, (int, np.integer)) or n_sites < 1:
        raise InputError(f"n_sites: expected a whole number >= 1, got {n_sites!r}")
    if lines.site_index.size and (lines.site_index.min() < 0 or lines.site_index.max() >= n_sites):
        raise InputError(f"n_sites: {n_sites} is too small for site_index up to {lines.site_index.max()}")
    width_ppm = width / lines.field_mhz
    centres, inten, site = _pool_lines(lines, _POOL_STEP * width_ppm)
    n_rows = int(n_sites)
    if centres.size * grid.size > _DIRECT_LIMIT and _is_uniform(grid):
        span = grid.max() - grid.min()
        inside = (centres >= grid.min() - span) & (centres <= grid.max() + span)
        out = _draw_by_fft(centres[inside], inten[inside], site[inside], grid, n_rows, width_ppm, eta)
        far = ~inside
        return out + _draw_direct(centres[far], inten[far], site[far], grid, n_rows, width_ppm, eta)
    return _draw_direct(centres, inten, site, grid, n_rows, width_ppm, eta)


def _is_uniform(grid: np.ndarray) -> bool:
    step = np.diff(grid)
    return bool(np.all(np.abs(step - step[0]) <= 1e-6 * abs(step[0])))


def _draw_direct(centres, inten, site, grid, n_rows, width_ppm, eta):
    edges = _bin_edges(grid)
    out = np.zeros((n_rows, grid.size))
    chunk = max(1, 2_000_000 // grid.size)
    for start in range(0, centres.size, chunk):
        sl = slice(start, start + chunk)
        prof = _profile_matrix(centres[sl], edges, width_ppm, eta)
        weights = np.zeros((n_rows, prof.shape[0]))
        weights[site[sl], np.arange(prof.shape[0])] = inten[sl]
        out += weights @ prof
    return out


def _draw_by_fft(centres, inten, site, grid, n_rows, width_ppm, eta):
    """Bin means on a uniform grid: sticks on a fine sub-grid convolved with the shape.

    Each line is shared linearly between the two nearest cells of a sub-grid
    at most 1/50 of a line width apart (relative error below ~4e-4 at the
    peak), convolved by FFT with the cell-mean line shape, then averaged back
    onto the grid's bins. Lines up to one grid span beyond either end come
    here (the sub-grid is padded by that much).
    """
    ascending = grid[1] > grid[0]
    core = grid if ascending else grid[::-1]
    h = core[1] - core[0]
    x = core[0] + h * np.arange(-core.size, 2 * core.size)
    over = int(min(64, max(1, math.ceil(50.0 * h / width_ppm))))
    fine_h = h / over
    n_fine = x.size * over
    u = (centres - (x[0] - h / 2)) / fine_h - 0.5
    low = np.clip(np.floor(u).astype(int), 0, n_fine - 1)
    frac = np.clip(u - low, 0.0, 1.0)
    high = np.minimum(low + 1, n_fine - 1)
    sticks = np.zeros((n_rows, n_fine))
    np.add.at(sticks, (site, low), inten * (1.0 - frac))
    np.add.at(sticks, (site, high), inten * frac)
    offsets = np.arange(-(n_fine - 1), n_fine) * fine_h
    edges = np.concatenate((offsets - fine_h / 2, [offsets[-1] + fine_h / 2]))
    kernel = _profile_matrix(np.zeros(1), edges, width_ppm, eta)[0]
    size = 1 << int(math.ceil(math.log2(3 * n_fine)))
    spec = np.fft.irfft(np.fft.rfft(sticks, size, axis=1) * np.fft.rfft(kernel, size)[None, :], size, axis=1)
    fine = spec[:, n_fine - 1:2 * n_fine - 1]
    out = fine.reshape(n_rows, x.size, over).mean(axis=2)[:, core.size:2 * core.size]
    return out if ascending else out[:, ::-1]


def _pool_lines(lines: LineList, step_ppm: float):
    """Replace the lines of a site that fall within ``step_ppm`` of each other by their centroid.

    With the step a small fraction of the line width the drawn shape changes
    only in second order (relative error ~ step^2 / width^2), while spectra of
    large strongly coupled clusters (1e4-1e5 lines) draw many times faster.
    """
    if lines.ppm.size < 2:
        return lines.ppm, lines.intensity, lines.site_index
    cell = np.floor((lines.ppm - lines.ppm.min()) / step_ppm).astype(np.int64)
    key = lines.site_index.astype(np.int64) * (int(cell.max()) + 1) + cell
    uniq, inverse = np.unique(key, return_inverse=True)
    total = np.bincount(inverse, weights=lines.intensity)
    moment = np.bincount(inverse, weights=lines.intensity * lines.ppm)
    first = np.zeros(len(uniq), dtype=int)
    first[inverse[::-1]] = np.arange(len(inverse))[::-1]
    centre = np.where(total > 0, moment / np.where(total > 0, total, 1.0), lines.ppm[first])
    return centre, total, lines.site_index[first]


def render_lines(lines: LineList, ppm, *, line_width_hz: float, shape: str = "lorentzian",
                 gaussian_fraction: float = 0.0) -> np.ndarray:
    """Draw lines on a ppm grid; see :func:`render_sites` for the parameters.

    Returns
    -------
    ndarray, shape (n_points,)
        Sum over all sites; ``sum * |d ppm|`` equals the sum of the line
        intensities for lines well inside the grid.
    """
    if not isinstance(lines, LineList):
        raise InputError(f"lines: expected a LineList, got {type(lines).__name__}")
    n_sites = int(lines.site_index.max()) + 1 if lines.site_index.size else 1
    return render_sites(lines, ppm, n_sites=max(n_sites, 1), line_width_hz=line_width_hz, shape=shape,
                        gaussian_fraction=gaussian_fraction).sum(axis=0)


def model_spectrum(system: SpinSystem, ppm, *, field_mhz: float, line_width_hz: float,
                   shape: str = "lorentzian") -> np.ndarray:
    """Simulate a spin system and draw it on a ppm grid.

    Returns
    -------
    ndarray, shape (n_points,)
        Integrates (``sum * |d ppm|``) to the number of protons when every
        line lies well inside the grid.
    """
    lines = simulate_lines(system, field_mhz=field_mhz)
    return render_lines(lines, ppm, line_width_hz=line_width_hz, shape=shape)
