"""The fitting axis: regions around the candidates' signals, masked windows, binning, baseline.

The fit works on the parts of the spectrum where some candidate could have a signal (each site's
window plus its multiplet's spread), binned so that a line still spans several points, with
residual solvent, water, TMS and common impurity windows given zero weight. Each region has its
own smooth baseline and its own line width.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from confirm.fitting.models import x_half_width_hz
from predictors.core import Spectrum
from predictors.errors import FitError

__all__ = ["Grid", "fit_intervals", "merge_intervals", "mask_intervals", "build_grid", "baseline_basis",
           "blur_spectrum", "bin_factor", "rephase"]

#: 1J(C,H) (Hz) of the widest-spaced satellites considered when a region is laid out.
_SATELLITE_REACH_HZ = 160.0
#: 1J(C,H) of CHCl3 (~209 Hz): the residual solvent's satellites are solvent too.
_CHCL3_J_CH_HZ = 209.0


@dataclass(frozen=True, eq=False)
class Grid:
    """Binned fitting axis.

    Attributes
    ----------
    x : ndarray
        Bin centres (ppm), increasing.
    y : ndarray
        Bin means of the intensity.
    weight : ndarray
        0 in masked windows, 1 elsewhere.
    region : ndarray of int
        Region of each bin.
    n_regions : int
    dx_ppm : float
        Bin width.
    curvature_ppm2 : float
        A bin holds the mean of ``factor`` samples spaced h apart: mean = f(centre) +
        curvature * f''(centre) with curvature = h**2 (factor**2 - 1) / 24 (exact to fourth order).
    dispersion : ndarray or None
        The data's own dispersion spectrum (Hilbert transform), binned like ``y``.
    spans : ndarray, shape (n_regions, 2)
        (lo, hi) ppm of each region of the full grid (kept when rows are left out).
    """

    x: np.ndarray
    y: np.ndarray
    weight: np.ndarray
    region: np.ndarray
    n_regions: int
    dx_ppm: float
    curvature_ppm2: float
    dispersion: np.ndarray | None = None
    spans: np.ndarray | None = None

    def region_spans(self) -> np.ndarray:
        """(lo, hi) ppm of each region, shape (n_regions, 2)."""
        if self.spans is not None:
            return self.spans
        return np.array([[self.x[self.region == r].min(), self.x[self.region == r].max()]
                         for r in range(self.n_regions)])

    def rows(self, keep: np.ndarray) -> Grid:
        """The grid restricted to some rows (regions, their spans and baselines keep their meaning)."""
        return Grid(x=self.x[keep], y=self.y[keep], weight=self.weight[keep], region=self.region[keep],
                    n_regions=self.n_regions, dx_ppm=self.dx_ppm, curvature_ppm2=self.curvature_ppm2,
                    dispersion=None if self.dispersion is None else self.dispersion[keep],
                    spans=self.region_spans())


def merge_intervals(intervals) -> list:
    """Overlapping (lo, hi) intervals joined, in order: a list of [lo, hi]."""
    merged: list[list[float]] = []
    for lo, hi in sorted(intervals):
        if merged and lo <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], hi)
        else:
            merged.append([lo, hi])
    return merged


def fit_intervals(models, field_mhz: float, lw_hz: float) -> list:
    """Merged ppm intervals where some candidate site could have a signal (with its satellites
    at low field, where they stay close to their parent)."""
    intervals = []
    for m in models:
        spread = ((np.abs(m.j0).sum(axis=1) / 2 + x_half_width_hz(m)) / field_mhz + 20 * lw_hz / field_mhz
                  + 0.03)
        sat = _SATELLITE_REACH_HZ / 2 / field_mhz
        for s, w, half in zip(m.shift0, m.window, spread, strict=True):
            intervals.append((s - w - half, s + w + half))
            if field_mhz < 150:  # at high field the satellites are far and tiny against the noise
                intervals.append((s - w - half - sat, s + w + half + sat))
    return merge_intervals(intervals)


def mask_intervals(solvent: str | None, field_mhz: float, lw_hz: float, models) -> tuple[list, list]:
    """Windows never fitted (residual solvent, water, TMS, impurities) and notes on them.

    An impurity line from the table is masked only outside about 2 predicted sd of every candidate
    site: a candidate's own multiplet must never vanish under a mask.
    """
    from confirm.solvents import impurity_signals, solvent_signals

    half = max(0.02, 6 * lw_hz / field_mhz)
    spots = [(0.0, half, "TMS")]
    notes = []
    info = None
    if solvent:
        try:
            info = solvent_signals(solvent)
        except Exception:  # unknown solvent name: mask nothing solvent-specific, say so
            notes.append(f"solvent {solvent!r} not in the residual-signal table: its signals are not masked")
    else:
        notes.append("solvent unknown: residual solvent and water signals are not masked")
    if info is not None:
        for ppm in np.atleast_1d(info.residual_ppm):
            spots.append((float(ppm), half, "residual solvent"))
        for ppm in np.atleast_1d(info.water_ppm if info.water_ppm is not None else []):
            spots.append((float(ppm), max(0.06, 10 * lw_hz / field_mhz), "water"))
        predicted = np.concatenate([m.shift0 for m in models])
        reach = np.concatenate([np.maximum(0.05, m.window / 1.5) for m in models]) + half
        for imp in impurity_signals(solvent):
            for ppm in np.atleast_1d(imp.ppm):
                if np.all(np.abs(predicted - ppm) > reach):
                    spots.append((float(ppm), half, imp.name))
    sat = _CHCL3_J_CH_HZ / 2 / field_mhz
    extra = [
        (p + d, h, f"{name} 13C satellite")
        for p, h, name in spots
        if name == "residual solvent"
        for d in (sat, -sat)
    ]
    return [(p - h, p + h, name) for p, h, name in spots + extra], notes


def blur_spectrum(spectrum: Spectrum, blur_hz: float) -> np.ndarray:
    """Intensity convolved with a unit-area Lorentzian of FWHM ``blur_hz`` (widths add)."""
    y = np.asarray(spectrum.intensity, dtype=float)
    if blur_hz <= 0:
        return y.copy()
    hz = abs(spectrum.hz_per_point)
    freq = np.fft.rfftfreq(y.size, d=hz)
    return np.fft.irfft(np.fft.rfft(y) * np.exp(-np.pi * blur_hz * freq), n=y.size)


def bin_factor(spectrum: Spectrum, lw_hz: float, points_per_width: float) -> int:
    """Samples per bin so that a line of width ``lw_hz`` keeps ``points_per_width`` bins."""
    return max(1, int(np.floor(lw_hz / points_per_width / abs(spectrum.hz_per_point))))


def build_grid(spectrum: Spectrum, intervals, masks, *, factor: int, blur_hz: float = 0.0,
               with_dispersion: bool = False) -> Grid:
    """Binned fitting axis over ``intervals``; weight 0 in masked windows.

    Raises
    ------
    FitError
        When no interval falls inside the spectral window.
    """
    ppm = np.asarray(spectrum.ppm)[::-1]
    y = blur_spectrum(spectrum, blur_hz)[::-1]
    step = abs(float(ppm[1] - ppm[0]))
    disp = _hilbert_transform(y) if with_dispersion else None
    xs, ys, regs, hs = [], [], [], []
    for lo, hi in intervals:
        i0, i1 = np.searchsorted(ppm, [lo, hi])
        n = (i1 - i0) // factor * factor
        if n < 8 * factor:
            continue
        xs.append(ppm[i0 : i0 + n].reshape(-1, factor).mean(1))
        ys.append(y[i0 : i0 + n].reshape(-1, factor).mean(1))
        if disp is not None:
            hs.append(disp[i0 : i0 + n].reshape(-1, factor).mean(1))
        regs.append(np.full(n // factor, len(regs)))
    if not xs:
        raise FitError(
            "spectrum: no candidate signal falls inside the spectral window "
            f"({spectrum.ppm[-1]:.2f}-{spectrum.ppm[0]:.2f} ppm)"
        )
    x = np.concatenate(xs)
    weight = np.ones(x.size)
    for lo, hi, _ in masks:
        weight[(x >= lo) & (x <= hi)] = 0.0
    return Grid(
        x=x,
        y=np.concatenate(ys),
        weight=weight,
        region=np.concatenate(regs),
        n_regions=len(xs),
        dx_ppm=step * factor,
        curvature_ppm2=step**2 * (factor**2 - 1) / 24.0,
        dispersion=np.concatenate(hs) if hs else None,
        spans=np.array([[xx.min(), xx.max()] for xx in xs]),
    )


def _hilbert_transform(y: np.ndarray) -> np.ndarray:
    """Imaginary part of the analytic signal of ``y`` (one-sided spectrum doubled), by FFT; the
    same result as ``scipy.signal.hilbert(y).imag`` without loading that module."""
    n = y.size
    gain = np.zeros(n)
    gain[0] = 1.0
    if n % 2 == 0:
        gain[n // 2] = 1.0
        gain[1 : n // 2] = 2.0
    else:
        gain[1 : (n + 1) // 2] = 2.0
    return np.fft.ifft(np.fft.fft(y) * gain).imag


def baseline_basis(grid: Grid, degree: int, *, phase: bool) -> np.ndarray:
    """Columns of the free linear part: a Legendre polynomial per region (degree 1 in regions
    narrower than 0.15 ppm) and, with ``phase``, the two phase columns.

    A residual phase error (phi0 + phi1 * t) adds -(phi0 + phi1 * t) * dispersion to the data
    (small-angle expansion): two free columns absorb it, so a big singlet's dispersive skirt is
    never taken for a minor component's multiplet.
    """
    cols = []
    for r in range(grid.n_regions):
        sel = grid.region == r
        x = grid.x[sel]
        t = 2 * (x - x.min()) / max(x.max() - x.min(), 1e-9) - 1
        deg = degree if (x.max() - x.min()) > 0.15 else min(degree, 1)
        for d in range(deg + 1):
            col = np.zeros(grid.x.size)
            col[sel] = np.polynomial.legendre.legval(t, [0] * d + [1])
            cols.append(col)
    if phase and grid.dispersion is not None:
        t = phase_axis(grid, grid.x)
        cols += [grid.dispersion, grid.dispersion * t]
    return np.array(cols).T


def phase_axis(grid: Grid, ppm: np.ndarray) -> np.ndarray:
    """The position variable t of the phase columns (-1 at the grid's low end, +1 at its high end)."""
    return 2 * (np.asarray(ppm) - grid.x.min()) / max(float(np.ptp(grid.x)), 1e-9) - 1


def rephase(spectrum: Spectrum, grid: Grid, c0: float, c1: float) -> tuple[Spectrum, float]:
    """The spectrum with the phase error that the phase columns measured taken out.

    A line with a phase error phi shows ``A cos(phi) - D sin(phi)``; fitted with the phase
    columns its coefficient is ``c = -tan(phi)`` (``c0 + c1 t`` across the grid). The absorption
    ``A = y cos(phi) + H[y] sin(phi)`` (H: the Hilbert transform) is restored exactly, so no
    amount keeps the factor 1/cos(phi) that the columns alone leave, which differs across the
    spectrum when the error has a first-order part. Returns the spectrum and the largest phase
    corrected (degrees).
    """
    ppm = np.asarray(spectrum.ppm)[::-1]
    y = np.asarray(spectrum.intensity, dtype=float)[::-1]
    phi = -np.arctan(c0 + c1 * np.clip(phase_axis(grid, ppm), -1.0, 1.0))
    corrected = y * np.cos(phi) + _hilbert_transform(y) * np.sin(phi)
    out = Spectrum(ppm=spectrum.ppm, intensity=corrected[::-1], field_mhz=spectrum.field_mhz,
                   nucleus=spectrum.nucleus, solvent=spectrum.solvent, metadata=spectrum.metadata)
    return out, float(np.degrees(np.max(np.abs(phi))))
