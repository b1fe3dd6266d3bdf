"""Explain a processed 1H spectrum as a mixture of candidate molecules.

The measured spectrum is modelled as a non-negative sum of the candidates' simulated
spectra (one molecule each, so amounts are proportional to moles) plus a smooth baseline
in each fitted region. The site shifts of each candidate may move within a few predicted
standard deviations, the larger couplings within about 1 Hz, and all lines share one
Lorentzian width. The fit runs in three stages:

1. *start*: on a blurred copy of the data (so couplings off by ~1 Hz still match), a matching
   pursuit over molecules places the candidate that explains most of the still unexplained
   signal first (each site where its multiplet shape matches best, one amount per molecule),
   subtracts it and goes on; then coordinate sweeps move each site, with its molecule's
   amount, to its least-squares best position, and pairwise swaps undo sites taken by the
   wrong molecule;
2. *refine*: a bounded nonlinear least-squares fit (scipy ``least_squares``) of amounts,
   baseline, site shifts (lines translate with their site), couplings and width, with an
   analytic Jacobian; the spin system is re-simulated at the refined shifts between rounds
   so strongly coupled patterns stay exact;
3. *uncertainty*: the covariance of the amounts from the Jacobian, inflated by the reduced
   chi-square and by the measured correlation of neighbouring noise points, checked against a
   block bootstrap of the residual (the larger of the two is reported).

Residual solvent, water, TMS and common impurity signals are masked; 13C satellites of every
candidate line are part of the model, so none of them can be taken for a product.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from confirm._parallel import TaskPool
from predictors.core import Candidate, ComponentFit, MixtureFit, Spectrum, SpinSystem
from predictors.errors import FitError, InputError

__all__ = ["FitOptions", "fit_mixture", "estimate_noise_sd", "estimate_line_width_hz"]

#: 13C natural abundance: each satellite is 0.55 % of its parent (references.md section 5).
SATELLITE_SHARE = 0.0055
#: One-bond C-H couplings (Hz) for satellite positions: sp2 ~158, sp3 ~128.
# common practice (textbook ranges of 1J(C,H))
_J_CH_SP2_HZ = 158.0
_J_CH_SP3_HZ = 128.0
_SP2_LABELS = ("vinyl", "aryl", "aromatic", "alkene", "aldehyde", "CHO", "olefinic")


@dataclass(frozen=True)
class FitOptions:
    """Settings of :func:`fit_mixture` (defaults suit crude reaction spectra).

    Attributes
    ----------
    shift_window_sd : float
        Site shifts may move this many predicted standard deviations.
    min_shift_window_ppm, max_shift_window_ppm : float
        Bounds on that window whatever the predicted sd.
    j_window_hz : float
        Couplings of at least ``min_refined_j_hz`` may change by this much.
    min_refined_j_hz : float
    refine_couplings : bool
    line_width_hz : float or None
        Starting line width (FWHM); estimated from the spectrum when None.
    max_line_width_hz : float
    points_per_width : float
        Target grid points per line width after binning.
    baseline_degree : int
        Degree of the polynomial baseline in each fitted region.
    mask_solvent : bool
        Mask residual solvent, water, TMS and common impurity signals.
    detection_sigma : float
        Amount must exceed this many standard deviations to count as detected.
    n_bootstrap : int
        Block-bootstrap draws used to check the covariance standard deviations.
    rounds : int
        Re-simulation rounds of the refinement.
    uncertainty_scale : float
        Extra factor on every standard deviation (peak-list input uses > 1).
    fit_phase : bool
        Absorb a residual zero- and first-order phase error of the processed spectrum with two
        free columns (the data's own dispersion spectrum, from its Hilbert transform, and that
        times position). Automatic phasing of a crowded spectrum is often a few degrees off, and
        the dispersive skirts of the large singlets then look like small multiplets.
    seed : int
        Seed of the bootstrap (results repeat exactly).
    coarse_blur_hz : float
        Extra Lorentzian width (Hz) of the copy on which starting positions are searched.
    fine_sweeps : bool
        Also run the coordinate sweeps at the fitting resolution before each refinement.
    n_random_starts : int
        Starting points drawn from the shift prior, besides the predicted shifts and a matching
        pursuit (the best after sweeping is kept).
    n_refined_starts : int
        The best starts (by penalised cost on the blurred copy) refined in full; the fit with
        the lowest final cost is kept.
    n_workers : int
        Most processes that sweep and refine the starts side by side (forked, POSIX only; never
        more than the usable cores). The result does not depend on it.
    fit_blur_hz : float or None
        Extra Lorentzian width (Hz) given to data and model alike for the fit itself. Predicted
        couplings can be several Hz off; at full resolution such a multiplet is matched line by
        line and its amount follows its peak heights, while a few Hz of blur make the fit follow
        its area (which the couplings do not change). 0 fits at the measured resolution; None
        uses 3 Hz at 200 MHz and above and 0 below (at low field the multiplets overlap so much
        that the fit needs every bit of resolution).
    """

    shift_window_sd: float = 3.0
    min_shift_window_ppm: float = 0.02
    max_shift_window_ppm: float = 0.6
    j_window_hz: float = 1.0
    min_refined_j_hz: float = 4.0
    refine_couplings: bool = True
    line_width_hz: float | None = None
    max_line_width_hz: float = 8.0
    points_per_width: float = 3.0
    baseline_degree: int = 1
    mask_solvent: bool = True
    detection_sigma: float = 3.0
    n_bootstrap: int = 40
    rounds: int = 2
    coarse_blur_hz: float = 2.5
    fine_sweeps: bool = False
    fit_blur_hz: float | None = None
    n_random_starts: int = 8
    n_refined_starts: int = 4
    n_workers: int = 2
    uncertainty_scale: float = 1.0
    seed: int = 7
    fit_phase: bool = True

    def __post_init__(self) -> None:
        for name in (
            "shift_window_sd",
            "min_shift_window_ppm",
            "max_shift_window_ppm",
            "points_per_width",
            "detection_sigma",
            "uncertainty_scale",
            "max_line_width_hz",
        ):
            value = getattr(self, name)
            if not np.isfinite(value) or value <= 0:
                raise InputError(f"{name}: must be a positive number, got {value!r}")
        if self.line_width_hz is not None and not 0.05 <= self.line_width_hz <= self.max_line_width_hz:
            raise InputError(
                f"line_width_hz: must be in 0.05-{self.max_line_width_hz} Hz, got {self.line_width_hz!r}"
            )
        if self.baseline_degree not in (0, 1, 2, 3):
            raise InputError(f"baseline_degree: must be 0-3, got {self.baseline_degree!r}")
        if isinstance(self.n_workers, bool) or not isinstance(self.n_workers, int) or self.n_workers < 1:
            raise InputError(f"n_workers: must be a whole number >= 1, got {self.n_workers!r}")
        if self.rounds < 1 or self.n_bootstrap < 0:
            raise InputError("rounds must be >= 1 and n_bootstrap >= 0")


# --------------------------------------------------------------------------------------------
# Spectrum statistics
# --------------------------------------------------------------------------------------------


def estimate_noise_sd(intensity: np.ndarray, *, n_blocks: int = 32) -> float:
    """Noise standard deviation of a spectrum from its quietest stretches.

    The spectrum is cut into ``n_blocks`` blocks; in each, the sd of the first difference
    divided by sqrt(2) estimates the noise (insensitive to smooth baseline). The median of the
    quietest quarter of blocks is returned, so signals do not inflate it.
    """
    y = np.asarray(intensity, dtype=float)
    if y.size < 4 * n_blocks:
        n_blocks = max(1, y.size // 16)
    blocks = np.array_split(np.diff(y), n_blocks)
    sds = np.sort([np.std(b) / np.sqrt(2.0) for b in blocks if b.size > 3])
    quiet = sds[: max(1, len(sds) // 4)]
    sd = float(np.median(quiet))
    if not np.isfinite(sd) or sd <= 0:
        sd = float(np.std(y)) * 1e-3 or 1e-12
    return sd


def _noise_correlation_factor(intensity: np.ndarray, noise_sd: float, *, max_lag: int = 6) -> float:
    """Variance inflation of sums over correlated noise, sqrt(1 + 2 sum rho_k), from quiet data."""
    y = np.asarray(intensity, dtype=float)
    n_blocks = 32
    blocks = np.array_split(y, n_blocks)
    scores = [np.std(np.diff(b)) for b in blocks]
    quiet = [blocks[i] for i in np.argsort(scores)[: max(2, n_blocks // 4)]]
    rhos = np.zeros(max_lag)
    for block in quiet:
        z = block - np.convolve(block, np.ones(15) / 15, mode="same")  # remove slow baseline
        z = z[8:-8]
        if z.size <= max_lag * 4:
            continue
        var = np.dot(z, z)
        rhos += [np.dot(z[:-k], z[k:]) / var for k in range(1, max_lag + 1)]
    rhos /= max(1, len(quiet))
    return float(np.sqrt(max(1.0, 1.0 + 2.0 * np.sum(np.clip(rhos, 0.0, None)))))


def estimate_line_width_hz(spectrum: Spectrum, *, noise_sd: float | None = None) -> float:
    """Median full width at half height (Hz) of the tallest isolated peaks of a spectrum."""
    y = np.asarray(spectrum.intensity, dtype=float)
    sd = noise_sd or estimate_noise_sd(y)
    hz = abs(spectrum.hz_per_point)
    order = np.argsort(-y)
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


# --------------------------------------------------------------------------------------------
# Candidate models
# --------------------------------------------------------------------------------------------


@dataclass
class _Model:
    """Working copy of one candidate's spin system (only non-exchangeable sites)."""

    sites: np.ndarray  # indices into the SpinSystem's sites
    shift0: np.ndarray  # predicted shifts (ppm)
    window: np.ndarray  # allowed half-window of each shift (ppm)
    n_h: np.ndarray
    j0: np.ndarray  # predicted couplings, shape (n, n)
    j_pairs: list  # (a, b) couplings refined
    jch: np.ndarray  # one-bond 13C-1H coupling per site (Hz): where its satellites sit
    labels: tuple
    memo: dict = dataclasses.field(default_factory=dict)  # clusters already simulated (see _model_lines)


def _build_model(system: SpinSystem, options: FitOptions) -> _Model:
    keep = np.array([i for i, s in enumerate(system.sites) if not s.exchangeable], dtype=int)
    if keep.size == 0:
        raise FitError(f"systems: candidate {system.smiles} has no non-exchangeable protons to fit")
    sites = [system.sites[i] for i in keep]
    sd = np.array([s.shift_sd_ppm for s in sites])
    window = np.clip(options.shift_window_sd * sd, options.min_shift_window_ppm, options.max_shift_window_ppm)
    j0 = np.asarray(system.j_hz, dtype=float)[np.ix_(keep, keep)].copy()
    _fold_aa_xx(j0, sites)
    pairs = (
        [
            (a, b)
            for a in range(len(keep))
            for b in range(a + 1, len(keep))
            if abs(j0[a, b]) >= options.min_refined_j_hz
        ]
        if options.refine_couplings
        else []
    )
    labels = tuple(s.label for s in sites)
    jch = _one_bond_couplings(system, sites)
    return _Model(
        sites=keep,
        shift0=np.array([s.shift_ppm for s in sites]),
        window=window,
        n_h=np.array([s.n_h for s in sites]),
        j0=j0,
        j_pairs=pairs,
        jch=jch,
        labels=labels,
    )


def _one_bond_couplings(system: SpinSystem, sites) -> np.ndarray:
    """1J(C,H) of each site from its carbon's environment (the 13C satellite positions).

    The satellites of a large singlet (a methoxy group, 0.55 % each) are as tall as the lines of a
    minor component's multiplet, so they must sit where the data has them: an O-CH3 couples with
    about 143 Hz, an alkyl CH3 with 125 Hz.
    """
    from rdkit import Chem

    from predictors.couplings import predict_one_bond_ch

    mol = Chem.MolFromSmiles(system.smiles)
    mol_h = Chem.AddHs(mol) if mol is not None else None
    out = []
    for site in sites:
        if mol_h is not None and site.atoms and all(
            a < mol_h.GetNumAtoms()
            and mol_h.GetAtomWithIdx(a).GetAtomicNum() == 1
            and mol_h.GetAtomWithIdx(a).GetNeighbors()[0].GetSymbol() == "C"
            for a in site.atoms
        ):
            out.append(float(np.mean([predict_one_bond_ch(mol_h, a) for a in site.atoms])))
        else:  # a system built by hand (atom indices are not H atoms): class value by label
            sp2 = any(k.lower() in site.label.lower() for k in _SP2_LABELS)
            out.append(_J_CH_SP2_HZ if sp2 else _J_CH_SP3_HZ)
    return np.array(out)


def _fold_aa_xx(j: np.ndarray, sites) -> None:
    """Two 2H sites that are not magnetically equivalent (AA'XX', e.g. a para-disubstituted
    ring) are simulated as A2X2 with the splitting N = J_AX + J_AX' that the AA'XX' doublets show;
    the spin system's mean site coupling is (J_AX + J_AX') / 2, so it is doubled here."""
    for a, sa in enumerate(sites):
        for b, sb in enumerate(sites):
            if (
                a != b
                and sa.n_h == 2
                and sb.n_h == 2
                and not sa.magnetically_equivalent
                and not sb.magnetically_equivalent
            ):
                j[a, b] = 2.0 * j[a, b]


def _model_lines(model: _Model, shifts: np.ndarray, j: np.ndarray, field_mhz: float):
    """Lines of one molecule with 13C satellites: (ppm, intensity, site, is satellite) arrays.

    Clusters of the spin system already simulated with the same inputs (the coupling
    derivatives change one coupling at a time) are reused from ``model.memo``."""
    from predictors.spin import simulate_arrays_reusing

    try:
        lines = simulate_arrays_reusing(shifts, j, model.n_h, field_mhz=field_mhz, memo=model.memo)
    except np.linalg.LinAlgError:
        # exactly degenerate sites can stall the eigensolver: nudge them apart by < 0.01 Hz/MHz and retry
        nudged = np.asarray(shifts) + 1e-5 * np.arange(len(shifts))
        lines = simulate_arrays_reusing(nudged, j, model.n_h, field_mhz=field_mhz, memo=model.memo)
    ppm, inten, site = np.asarray(lines.ppm), np.asarray(lines.intensity), np.asarray(lines.site_index)
    half = model.jch[site] / 2.0 / field_mhz
    ppm = np.concatenate([ppm, ppm + half, ppm - half])
    inten = np.concatenate(
        [inten * (1 - 2 * SATELLITE_SHARE), inten * SATELLITE_SHARE, inten * SATELLITE_SHARE]
    )
    satellite = np.arange(ppm.size) >= site.size
    return ppm, inten, np.concatenate([site, site, site]), satellite


def _j_matrix(model: _Model, dj: np.ndarray) -> np.ndarray:
    j = model.j0.copy()
    for (a, b), d in zip(model.j_pairs, dj, strict=True):
        j[a, b] = j[b, a] = j[a, b] + np.sign(j[a, b]) * d
    return j


# --------------------------------------------------------------------------------------------
# Regions, masks and the working grid
# --------------------------------------------------------------------------------------------


def _merge_intervals(intervals):
    merged = []
    for lo, hi in sorted(intervals):
        if merged and lo <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], hi)
        else:
            merged.append([lo, hi])
    return merged


def _fit_intervals(models, field_mhz: float, lw_hz: float):
    intervals = []
    for m in models:
        spread = np.abs(m.j0).sum(axis=1) / field_mhz / 2 + 20 * lw_hz / field_mhz + 0.03
        sat = _J_CH_SP2_HZ / 2 / field_mhz
        for s, w, half in zip(m.shift0, m.window, spread, strict=True):
            intervals.append((s - w - half, s + w + half))
            if field_mhz < 150:  # at low field the satellites stay close; at high field they are tiny
                continue
            intervals.append((s - w - half - sat, s - w - half))
    return _merge_intervals(intervals)


def _mask_intervals(solvent: str | None, field_mhz: float, lw_hz: float, models) -> tuple[list, list]:
    """Windows never fitted (residual solvent, water, TMS, impurities) and notes on them."""
    from confirm.solvents import impurity_signals, solvent_signals

    half = max(0.02, 6 * lw_hz / field_mhz)
    spots = [(0.0, half, "TMS")]
    notes = []
    if solvent:
        try:
            info = solvent_signals(solvent)
        except Exception:  # unknown solvent name: mask nothing solvent-specific, say so
            info = None
            notes.append(f"solvent {solvent!r} not in the residual-signal table: its signals are not masked")
        if info is not None:
            for ppm in np.atleast_1d(info.residual_ppm):
                spots.append((float(ppm), half, "residual solvent"))
            for ppm in np.atleast_1d(info.water_ppm if info.water_ppm is not None else []):
                spots.append((float(ppm), max(0.06, 10 * lw_hz / field_mhz), "water"))
            predicted = np.concatenate([m.shift0 for m in models])
            # a candidate's signal may lie anywhere in about +-2 predicted sd (window / 1.5): an
            # impurity line there is not masked, or the candidate's own multiplet could vanish
            reach = np.concatenate([np.maximum(0.05, m.window / 1.5) for m in models]) + half
            for imp in impurity_signals(solvent):
                for ppm in np.atleast_1d(imp.ppm):
                    if np.all(np.abs(predicted - ppm) > reach):
                        spots.append((float(ppm), half, imp.name))
    else:
        notes.append("solvent unknown: residual solvent and water signals are not masked")
    sat = 209.0 / 2 / field_mhz  # 1J(C,H) of CHCl3 ~209 Hz: its satellites are solvent too
    extra = [
        (p + d, h, f"{name} 13C satellite")
        for p, h, name in spots
        if name == "residual solvent"
        for d in (sat, -sat)
    ]
    return [(p - h, p + h, name) for p, h, name in spots + extra], notes


@dataclass
class _Grid:
    x: np.ndarray  # ppm, increasing
    y: np.ndarray  # binned intensity
    weight: np.ndarray  # 0 in masked windows, 1 elsewhere
    region: np.ndarray  # region index of each point
    n_regions: int
    dx_ppm: float
    dispersion: np.ndarray | None = None  # Hilbert transform of the data, binned like y


def _build_grid(
    spectrum: Spectrum,
    intervals,
    masks,
    lw_hz: float,
    options: FitOptions,
    *,
    blur_hz: float = 0.0,
) -> _Grid:
    """Binned fitting axis over ``intervals``; weight 0 in masked windows."""
    ppm = np.asarray(spectrum.ppm)[::-1]
    y = np.asarray(spectrum.intensity, dtype=float)[::-1]
    hz = abs(spectrum.hz_per_point)
    if blur_hz > 0:  # convolve with a unit-area Lorentzian of FWHM blur_hz (widths add)
        freq = np.fft.rfftfreq(y.size, d=hz)
        y = np.fft.irfft(np.fft.rfft(y) * np.exp(-np.pi * blur_hz * freq), n=y.size)
    factor = max(1, int(round(lw_hz / options.points_per_width / hz)))
    # the dispersion-mode spectrum that belongs to the data (Kramers-Kronig pair of the absorption)
    disp = _hilbert_transform(y) if options.fit_phase else None
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
    x, yb, region = np.concatenate(xs), np.concatenate(ys), np.concatenate(regs)
    weight = np.ones(x.size)
    for lo, hi, _ in masks:
        weight[(x >= lo) & (x <= hi)] = 0.0
    return _Grid(
        x=x,
        y=yb,
        weight=weight,
        region=region,
        n_regions=len(xs),
        dx_ppm=hz * factor / spectrum.field_mhz,
        dispersion=np.concatenate(hs) if hs else None,
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


def _baseline_basis(grid: _Grid, degree: int) -> np.ndarray:
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
    if grid.dispersion is not None:
        # a residual phase error (phi0 + phi1 * t) adds -(phi0 + phi1 * t) * dispersion to the data
        # (small-angle expansion): two free columns absorb it, so a big singlet's dispersive
        # skirt is never taken for a minor component's multiplet
        t = 2 * (grid.x - grid.x.min()) / max(float(np.ptp(grid.x)), 1e-9) - 1
        cols += [grid.dispersion, grid.dispersion * t]
    return np.array(cols).T


# --------------------------------------------------------------------------------------------
# Rendering (Lorentzian lines on the working grid, with derivatives)
# --------------------------------------------------------------------------------------------


#: Half-widths either side of a line over which it is drawn; 13C satellites (0.55 % each) are drawn
#: over the nearer span (their tails beyond hold under 0.04 % of the parent's area).
_FAR_HALF_WIDTHS = 40
_NEAR_HALF_WIDTHS = 10


def _render(grid: _Grid, ppm, inten, group, n_groups: int, lw_ppm: float, *, derivs: bool, near=None):
    """Sum of Lorentzians per group; optionally d/d(position) and d/d(width) per group.

    Each line is evaluated only within +-40 half-widths (the tails beyond carry ~1.6 % of the area
    for every line alike, so ratios between candidates are unaffected); lines flagged in ``near``
    (13C satellites) within +-10. The axis is padded by the span on both sides, so no window
    needs clipping; the padding is dropped at the end.
    """
    n = grid.x.size
    gamma = lw_ppm / 2
    span = int(np.ceil(_FAR_HALF_WIDTHS * gamma / grid.dx_ppm)) + 1
    width = n + 2 * span + 1
    pad = grid.dx_ppm * np.arange(1, span + 2)
    x = np.concatenate([grid.x[0] - pad[:span][::-1], grid.x, grid.x[-1] + pad])
    centre = np.searchsorted(grid.x, ppm) + span
    near = np.zeros(ppm.size, bool) if near is None else np.asarray(near, bool)
    short = int(np.ceil(_NEAR_HALF_WIDTHS * gamma / grid.dx_ppm)) + 1
    parts = [
        _line_values(x, centre[sel], ppm[sel], inten[sel], group[sel], gamma, reach, width, derivs)
        for sel, reach in ((~near, span), (near, short))
        if sel.any()
    ]
    if not parts:
        zero = np.zeros((n_groups, n))
        return zero, (zero.copy() if derivs else None), (zero.copy() if derivs else None)
    flat = np.concatenate([p[0] for p in parts])

    def _sum(i):
        weights = np.concatenate([p[i] for p in parts])
        table = np.bincount(flat, weights=weights, minlength=width * n_groups)
        return np.ascontiguousarray(table.reshape(n_groups, width)[:, span : span + n])

    if not derivs:
        return _sum(1), None, None
    return _sum(1), _sum(2), _sum(3)


def _line_values(x, centre, ppm, inten, group, gamma: float, span: int, width: int, derivs: bool):
    """Flat table positions and Lorentzian values (and derivatives) of lines within +-span points."""
    idx = centre[:, None] + np.arange(-span, span + 1)[None, :]
    d = x[idx] - ppm[:, None]
    den = d * d + gamma * gamma
    amp = inten[:, None]
    val = amp * gamma / np.pi / den
    flat = (idx + width * group[:, None]).ravel()
    if not derivs:
        return flat, val.ravel()
    dgam = amp / np.pi * (den - 2 * gamma * gamma) / (den * den)
    return flat, val.ravel(), (val * 2 * d / den).ravel(), (dgam / 2).ravel()


# --------------------------------------------------------------------------------------------
# The fit
# --------------------------------------------------------------------------------------------


@dataclass
class _State:
    """Lines of every candidate at the shifts of the last simulation."""

    base_shift: list  # per candidate: shifts the lines were simulated at
    lines: list  # per candidate: (ppm, inten, site)
    dj: list  # per candidate: coupling offsets used


def _simulate_all(models, shifts, djs, field_mhz: float) -> _State:
    lines = [
        _model_lines(m, s, _j_matrix(m, d), field_mhz) for m, s, d in zip(models, shifts, djs, strict=True)
    ]
    return _State(base_shift=[s.copy() for s in shifts], lines=lines, dj=[d.copy() for d in djs])


def _translated(state: _State, k: int, shifts: np.ndarray):
    ppm, inten, site, satellite = state.lines[k]
    return ppm + (shifts - state.base_shift[k])[site], inten, site, satellite


#: Two-sided 95 % normal quantile.
Z_95 = 1.959963984540054


def _site_offsets(models):
    offsets, total = [], 0
    for m in models:
        offsets.append(total)
        total += m.shift0.size
    return offsets, total


def _components(grid, models, state, shifts, lw_ppm, *, derivs: bool):
    """Per-candidate columns (and per-site position derivatives, width derivatives)."""
    offsets, n_sites = _site_offsets(models)
    ppm, inten, group, satellite = [], [], [], []
    for k in range(len(models)):
        p, i, s, sat = _translated(state, k, shifts[k])
        ppm.append(p)
        inten.append(i)
        group.append(s + offsets[k])
        satellite.append(sat)
    ppm, inten, group = np.concatenate(ppm), np.concatenate(inten), np.concatenate(group)
    per_site, dpos, dwidth = _render(
        grid, ppm, inten, group, n_sites, lw_ppm, derivs=derivs, near=np.concatenate(satellite)
    )
    cols = np.array([per_site[o : o + m.shift0.size].sum(0) for o, m in zip(offsets, models, strict=True)])
    if not derivs:
        return cols, per_site, None, None
    dw = np.array([dwidth[o : o + m.shift0.size].sum(0) for o, m in zip(offsets, models, strict=True)])
    return cols, per_site, dpos, dw


def _solve_linear(cols: np.ndarray, basis: np.ndarray, grid: _Grid):
    """Non-negative amounts and free baseline coefficients for fixed columns.

    The baseline is eliminated by projection; the amounts then solve a small non-negative
    least-squares problem in Gram (normal-equation) form, so the cost does not grow with the
    number of grid points beyond forming the Gram matrices.
    """
    from scipy.optimize import nnls

    w = grid.weight
    a_mat, b_mat, y = cols.T * w[:, None], basis * w[:, None], grid.y * w
    bb = b_mat.T @ b_mat
    bb_inv = np.linalg.pinv(bb, hermitian=True)
    ab = a_mat.T @ b_mat
    gram = a_mat.T @ a_mat - ab @ bb_inv @ ab.T
    rhs = a_mat.T @ y - ab @ bb_inv @ (b_mat.T @ y)
    scale = np.sqrt(np.clip(np.diag(gram), 0, None))
    scale[scale == 0] = 1.0
    g = gram / np.outer(scale, scale) + 1e-12 * np.eye(gram.shape[0])
    chol = np.linalg.cholesky(g)
    amounts, _ = nnls(chol.T, np.linalg.solve(chol, rhs / scale))
    amounts = amounts / scale
    base = bb_inv @ (b_mat.T @ y - ab.T @ amounts)
    return amounts, base


def _coarse_start(spectrum, models, masks, lw_hz, noise_sd, field_mhz, options, pool: TaskPool):
    """Starting shifts found on a blurred copy of the data (model blurred alike), where
    couplings that are off by a few Hz still match and every site sees a wider basin.

    Several starts are swept to a local optimum: the predicted shifts, a matching pursuit
    (:func:`_pursue`) and ``options.n_random_starts`` draws from the shift prior. The one with
    the lowest penalised cost wins: squared residual over a common variance plus the Gaussian
    prior sum(((shift - predicted) / sd)**2). With predicted shifts a few tenths of a ppm off,
    a greedy start alone often hands one molecule's multiplets to its neighbour.
    """
    blur_hz = options.coarse_blur_hz
    grid = _build_grid(
        spectrum,
        _fit_intervals(models, field_mhz, lw_hz),
        masks,
        lw_hz + blur_hz,
        options,
        blur_hz=blur_hz,
    )
    basis = _baseline_basis(grid, options.baseline_degree)
    lw_ppm = (lw_hz + blur_hz) / field_mhz
    state = _simulate_all(
        models, [m.shift0 for m in models], [np.zeros(len(m.j_pairs)) for m in models], field_mhz
    )
    shifts, amounts = _pursue(grid, models, state, lw_ppm, noise_sd)
    rng = np.random.default_rng(options.seed)
    starts = [shifts, [m.shift0.copy() for m in models]]
    for _ in range(options.n_random_starts):
        starts.append([m.shift0 + rng.standard_normal(m.shift0.size) * m.window / 3.0 for m in models])
    found = pool.map(_sweep_task, [(grid, state, s, lw_ppm, basis) for s in starts])
    costs = np.array(
        [
            _linear_cost(grid, _components(grid, models, state, s, lw_ppm, derivs=False)[0], basis)
            for s in found
        ]
    )
    var = max(float(costs.min()) / max(1.0, float(np.sum(grid.weight > 0))), 1e-300)
    prior = np.array(
        [
            sum(
                float(np.sum(((sh - m.shift0) / (m.window / 3.0)) ** 2))
                for sh, m in zip(s, models, strict=True)
            )
            for s in found
        ]
    )
    kept = []
    for i in np.argsort(costs / var + prior):  # best first, skipping starts that met the same optimum
        flat = np.concatenate(found[i])
        if all(np.max(np.abs(flat - np.concatenate(found[j]))) > 2 * grid.dx_ppm for j in kept):
            kept.append(i)
    kept = kept[: max(1, options.n_refined_starts)]
    # the best swept starts also get whole molecules re-placed (the step is too slow for all)
    n_replace = min(len(kept), _N_REPLACED_STARTS)
    replaced = pool.map(
        _replace_task, [(grid, state, found[i], lw_ppm, basis, noise_sd) for i in kept[:n_replace]]
    )
    return list(replaced) + [found[i] for i in kept[n_replace:]]


#: Swept starts (best first) on which :func:`_replace_molecules` runs.
_N_REPLACED_STARTS = 2


def _sweep_task(models, task):
    """One start of :func:`_coarse_start` swept to its local optimum (a task for ``TaskPool.map``)."""
    grid, state, shifts, lw_ppm, basis = task
    return _sweep_sites(grid, models, state, shifts, lw_ppm, basis, n_sweeps=8)


def _replace_task(models, task):
    """:func:`_replace_molecules` on one swept start (a task for ``TaskPool.map``)."""
    grid, state, shifts, lw_ppm, basis, noise_sd = task
    return _replace_molecules(grid, models, state, shifts, lw_ppm, basis, noise_sd)


def _replace_molecules(grid, models, state, shifts, lw_ppm, basis, noise_sd, *, passes: int = 2):
    """Take each molecule out in turn and place it again on what the others leave unexplained.

    Site sweeps move one site at a time, so a molecule whose sites sit on another molecule's
    multiplets (the two share the amount budget of those peaks) stays there: moving any single
    site away costs more than it gains. Removing the whole molecule and re-placing it against
    the residual of the rest (:func:`_place`, nearest matching multiplets first), then sweeping,
    escapes such traps; the move is kept only when the least-squares cost drops.
    """
    offsets, _ = _site_offsets(models)
    shifts = [s.copy() for s in shifts]
    cost = _linear_cost(grid, _components(grid, models, state, shifts, lw_ppm, derivs=False)[0], basis)
    # every site's pattern at its predicted shift (columns are per site, so one render serves all)
    _, units, _, _ = _components(grid, models, state, [m.shift0 for m in models], lw_ppm, derivs=False)
    for _ in range(passes):
        improved = False
        for k, m in enumerate(models):
            cols, _, _, _ = _components(grid, models, state, shifts, lw_ppm, derivs=False)
            amounts, base = _solve_linear(cols, basis, grid)
            others = amounts @ cols - amounts[k] * cols[k] + basis @ base
            resid = (grid.y - others) * grid.weight
            new_k, _, _, _ = _place(grid, m, units[offsets[k] : offsets[k] + m.shift0.size], resid, noise_sd)
            trial = [s.copy() for s in shifts]
            trial[k] = new_k
            trial = _sweep_sites(grid, models, state, trial, lw_ppm, basis, n_sweeps=3, swaps=False)
            new_cost = _linear_cost(
                grid, _components(grid, models, state, trial, lw_ppm, derivs=False)[0], basis
            )
            if new_cost < cost * (1 - 1e-4):
                shifts, cost, improved = trial, new_cost, True
        if not improved:
            break
    return shifts


def _pursue(grid, models, state, lw_ppm, noise_sd):
    """Greedy start: the candidate that explains most of the still-unexplained signal is placed
    first (each site where its multiplet matches best, one amount for the molecule), its model
    is subtracted, and so on (a matching pursuit over molecules)."""
    offsets, _ = _site_offsets(models)
    shifts0 = [m.shift0.copy() for m in models]
    _, per_site, _, _ = _components(grid, models, state, shifts0, lw_ppm, derivs=False)
    resid = (grid.y - np.median(grid.y)) * grid.weight
    shifts, amounts = [s.copy() for s in shifts0], np.zeros(len(models))
    remaining = list(range(len(models)))
    while remaining:
        trials = {
            k: _place(
                grid, models[k], per_site[offsets[k] : offsets[k] + models[k].shift0.size], resid, noise_sd
            )
            for k in remaining
        }
        best = max(remaining, key=lambda k: trials[k][2])
        shifts[best], amounts[best], _, col = trials[best]
        resid = resid - amounts[best] * col * grid.weight
        remaining.remove(best)
    return shifts, amounts


def _place(grid, model: _Model, units, resid, noise_sd):
    """Best positions and one amount for a molecule against a residual: (shifts, amount, gain, column).

    Each site first goes where its multiplet shape matches best (normalised cross-correlation),
    which gives one amplitude per site; the molecule's amount is a low quantile of those
    (overlaps only inflate them); then each site is re-placed by least squares at that amount,
    so a multiplet cannot sit on a peak much larger or smaller than the molecule allows.
    """
    w = grid.weight
    shifts, alphas = model.shift0.copy(), []
    for s in range(model.shift0.size):
        unit = units[s]
        nz = np.flatnonzero(unit > 1e-3 * unit.max()) if unit.max() > 0 else []
        if len(nz) < 2:
            continue
        lines_ppm = grid.x[nz[np.argsort(-unit[nz])[:1]]]
        offset = _best_offset_column(grid, resid, unit, model.window[s], noise_sd)
        shifts[s] = model.shift0[s] + offset
        u = _translate_column(grid, unit, offset) * w
        if np.dot(u, u) > 0.5 * np.dot(unit, unit) and lines_ppm.size:
            alphas.append(max(0.0, float(np.dot(u, resid) / np.dot(u, u))))
    amount = float(np.percentile(alphas, 25)) if alphas else 0.0
    moved = []
    for s in range(model.shift0.size):
        unit = units[s]
        if amount > 0:
            shifts[s] = _best_fixed_amount(
                grid, resid, unit, amount, model.shift0[s], model.window[s], model.window[s] / 3.0, noise_sd
            )
        moved.append(_translate_column(grid, unit, shifts[s] - model.shift0[s]))
    col = np.sum(moved, axis=0)
    r = resid - amount * col * w
    gain = float(np.dot(resid, resid) - np.dot(r, r))
    return shifts, amount, gain, col


def _best_offset_column(grid, target, unit, window, noise_sd) -> float:
    """Offset (ppm) where a unit column's shape best matches ``target`` (see :func:`_best_offset`)."""
    nz = np.flatnonzero(unit > 0.02 * unit.max())
    j0, j1 = nz[0], nz[-1] + 1
    steps = int(np.ceil(window / grid.dx_ppm))
    i0, i1 = max(0, j0 - steps), min(grid.x.size, j1 + steps)
    if i1 - i0 <= j1 - j0:
        return 0.0
    if np.dot(unit[j0:j1], grid.weight[j0:j1] > 0) < 0.5 * unit[j0:j1].sum():
        return 0.0  # the site sits mostly under a masked window: no evidence to move it
    p = unit[j0:j1] * (unit[j0:j1] > 0.02 * unit.max())
    t = target[i0:i1]
    num = np.correlate(t, p, mode="valid")
    energy = np.correlate(t * t, (p > 0).astype(float), mode="valid")
    offsets = grid.x[i0 : i0 + num.size] - grid.x[j0]
    norm_p = np.linalg.norm(p)
    ncc = num / (norm_p * np.sqrt(energy) + 1e-300)
    score = ncc - 0.15 * (offsets / max(window, 1e-9)) ** 2
    score[(num / (norm_p * noise_sd) < 5) | (np.abs(offsets) > window)] = -np.inf
    if not np.isfinite(score).any():
        return 0.0
    return float(offsets[int(np.argmax(score))])


def _best_fixed_amount(grid, resid, unit, amount, centre, window, prior_sd, noise_sd) -> float:
    """Least-squares best position of a site whose amount is fixed."""
    nz = np.flatnonzero(unit > 1e-3 * unit.max())
    j0, j1 = nz[0], nz[-1] + 1
    steps = int(np.ceil(window / grid.dx_ppm))
    i0, i1 = max(0, j0 - steps), min(grid.x.size, j1 + steps)
    if i1 - i0 <= j1 - j0:
        return centre
    u = unit[j0:j1] * amount
    w = grid.weight
    gain = 2 * np.correlate(resid[i0:i1] * w[i0:i1], u, mode="valid") - np.correlate(
        w[i0:i1] ** 2, u * u, mode="valid"
    )
    moves = grid.x[i0 : i0 + gain.size] - grid.x[j0]
    var = max(noise_sd**2, float(np.mean(resid[w > 0] ** 2)))
    score = gain / var - (moves / prior_sd) ** 2
    score[np.abs(moves) > window] = -np.inf
    if not np.isfinite(score).any():
        return centre
    return float(centre + moves[int(np.argmax(score))])


def _sweep_sites(
    grid,
    models,
    state,
    shifts,
    lw_ppm,
    basis,
    *,
    n_sweeps: int = 3,
    amounts=None,
    swaps: bool = True,
    detect_cycles: bool = True,
):
    """Coordinate descent on site shifts: each site, together with its candidate's amount,
    jumps to its least-squares best position within the site's window.

    With everything else fixed, placing site s at offset d and re-solving the amount a of its
    candidate explains ``A(d)^2 / B(d)`` of the squared residual, with
    ``A = <r_k, rest + u(d)>``, ``B = ||rest + u(d)||^2`` (u: the site's unit pattern, rest: the
    candidate's other sites, r_k: the residual plus the candidate's own contribution); both
    follow from cross-correlations. A Gaussian prior (predicted sd) breaks ties, weighted by
    the current misfit per point.

    A sweep and the swaps after it can undo each other's moves (a swap that gains on the squared
    residual, undone by the next sweep's prior): the shifts then cycle until ``n_sweeps`` run out.
    Such a cycle is recognised when the shifts of an earlier sweep come back, and the shifts the
    last sweep would leave are returned at once (the same result; ``detect_cycles=False`` runs
    every sweep).
    """
    shifts = [s.copy() for s in shifts]
    offsets, _ = _site_offsets(models)
    w = grid.weight
    seen: dict[bytes, int] = {}  # shifts at the start of each sweep after the first
    history: list = []
    for sweep in range(n_sweeps):
        if sweep > 0 and detect_cycles:
            # from the second sweep on, a sweep's outcome depends on the shifts alone; shifts met
            # before mean a cycle (a swap the next sweep undoes), whose state at the last sweep
            # is known: return it without running the rest
            key = np.concatenate(shifts).tobytes()
            if key in seen:  # the shifts of sweep `first` again: a cycle of sweep - first sweeps
                first = seen[key]
                return history[first + (n_sweeps - first) % (sweep - first) - 1]
            seen[key] = sweep
            history.append([s.copy() for s in shifts])  # history[i]: shifts before sweep i + 1
        cols, per_site, _, _ = _components(grid, models, state, shifts, lw_ppm, derivs=False)
        solved, base = _solve_linear(cols, basis, grid)
        if amounts is None or sweep > 0:
            amounts = solved
        amounts = np.array(amounts, dtype=float)
        resid = (grid.y - amounts @ cols - basis @ base) * w
        var = max(float(np.mean(resid[w > 0] ** 2)), 1e-300)
        moved = 0.0
        for k, m in enumerate(models):
            for s in range(m.shift0.size):
                unit = per_site[offsets[k] + s]
                col = per_site[offsets[k] : offsets[k] + m.shift0.size].sum(0)
                rest = col - unit
                r_k = resid + amounts[k] * col * w
                best = _best_joint_move(
                    grid, r_k, rest, unit, shifts[k][s], m.shift0[s], m.window[s], var, m.window[s] / 3.0
                )
                if best is None:
                    continue
                new_shift, new_amount = best
                shifted = _translate_column(grid, unit, new_shift - shifts[k][s])
                moved = max(moved, abs(new_shift - shifts[k][s]))
                resid = r_k - new_amount * (rest + shifted) * w
                per_site[offsets[k] + s] = shifted
                shifts[k][s], amounts[k] = new_shift, new_amount
        swapped = swaps and _swap_sites(grid, models, state, shifts, lw_ppm, basis)
        if moved < 0.5 * grid.dx_ppm and sweep > 0 and not swapped:
            break
    return shifts


def _linear_cost(grid, cols, basis) -> float:
    amounts, base = _solve_linear(cols, basis, grid)
    r = (grid.y - amounts @ cols - basis @ base) * grid.weight
    return float(np.dot(r, r))


class _Projected:
    """Least-squares cost of non-negative amounts plus a free baseline, for many trial column
    sets on one grid: the (weighted) baseline is projected out once, so a trial that changes
    two columns costs two projections and a tiny non-negative solve."""

    def __init__(self, grid: _Grid, basis: np.ndarray):
        self.w = grid.weight
        self.q, _ = np.linalg.qr(basis * self.w[:, None])
        self.y = self.project(grid.y)
        self.yy = float(np.dot(self.y, self.y))

    def project(self, columns: np.ndarray) -> np.ndarray:
        """Weighted columns (one, or one per row) minus their baseline part."""
        c = columns * self.w
        return c - (c @ self.q) @ self.q.T

    def cost(self, projected: np.ndarray) -> float:
        return self.cost_of(projected @ projected.T, projected @ self.y)

    def cost_of(self, gram: np.ndarray, rhs: np.ndarray) -> float:
        """Cost of one trial from the Gram matrix and right-hand side of its projected columns.

        The unconstrained solution is the non-negative one whenever it has no negative amount;
        only other trials go through the active-set solver."""
        return float(self.cost_many(gram[None], rhs[None])[0][0])

    def cost_many(self, grams: np.ndarray, rhs: np.ndarray, zero=None) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`cost_of` for a batch of trials: Gram matrices (T, K, K), right-hand sides (T, K).

        Returns the costs and the amounts. ``zero`` (bool, K) guesses which amounts are 0 at the
        optimum; a trial whose reduced solution is non-negative and meets the optimality
        conditions on those amounts skips the active-set solver too (the solution is unique)."""
        n_trials, k = rhs.shape
        scale = np.sqrt(np.clip(np.einsum("tii->ti", grams), 0, None))
        scale[scale == 0] = 1.0
        g = grams / (scale[:, :, None] * scale[:, None, :])
        g[:, np.arange(k), np.arange(k)] += 1e-12
        b = rhs / scale
        a = _solve_batch(g, b)
        todo = np.flatnonzero(~(a.min(axis=1) >= 0))
        if todo.size and zero is not None and zero.any() and not zero.all():
            keep = ~zero
            reduced = np.zeros((todo.size, k))
            reduced[:, keep] = _solve_batch(g[np.ix_(todo, keep, keep)], b[todo][:, keep])
            grad = np.einsum("tij,tj->ti", g[todo], reduced) - b[todo]
            fine = (reduced.min(axis=1) >= 0) & (grad[:, zero].min(axis=1) >= 0)
            a[todo[fine]] = reduced[fine]
            todo = todo[~fine]
        for t in todo:
            a[t] = _nnls_gram(g[t], b[t])
        a = a / scale
        costs = self.yy - 2 * np.einsum("ti,ti->t", a, rhs) + np.einsum("ti,tij,tj->t", a, grams, a)
        return costs, a


def _solve_batch(g: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Solutions of the systems g[t] a = b[t] (-b where the batch cannot be solved)."""
    try:
        return np.linalg.solve(g, b[..., None])[..., 0]
    except np.linalg.LinAlgError:
        return -b


def _nnls_gram(g: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Non-negative solution of ``g a = rhs`` in the least-squares sense (g positive definite)."""
    from scipy.optimize import nnls

    chol = np.linalg.cholesky(g)
    a, _ = nnls(chol.T, np.linalg.solve(chol, rhs))
    return a


def _swap_sites(grid, models, state, shifts, lw_ppm, basis) -> bool:
    """Exchange the positions of two sites of different candidates when that lowers the cost.

    Coordinate moves cannot undo a swap (two similar multiplets each taken by the wrong
    molecule): moving either site alone makes the fit worse. Shifts are updated in place.
    Pairs are tried in a fixed order and each one that lowers the cost is taken at once (see
    :class:`_SwapPass`, which costs the trials in batches).
    """
    cols, per_site, _, _ = _components(grid, models, state, shifts, lw_ppm, derivs=False)
    return _SwapPass(grid, models, per_site, shifts, _Projected(grid, basis), cols).run()


class _SwapPass:
    """One pass of pairwise swaps over every pair of sites (same molecule or two molecules).

    The sequential rule (walk the pairs in a fixed order, take each swap that lowers the cost by
    more than 1e-6 of it, and after the pairs of two molecules their block swap, see
    :func:`_swap_groups`) is kept, but the trials are costed in small batches against the current
    state: the first one that improves is taken and the walk goes on after it. Projections are
    linear, so a trial's projected column is the current one plus the projected moved site minus
    the projected old site; moved sites are kept until their site changes.
    """

    def __init__(self, grid, models, per_site, shifts, proj: _Projected, cols):
        self.grid, self.models, self.per_site, self.shifts, self.proj = grid, models, per_site, shifts, proj
        self.offsets, _ = _site_offsets(models)
        self.blocks = [(k, k2) for k in range(len(models)) for k2 in range(k, len(models))]
        self.pairs = _pair_table(models, self.blocks, self.offsets)
        self.shift0 = np.concatenate([m.shift0 for m in models])
        self.window = np.concatenate([m.window for m in models])
        self.flat = np.concatenate(shifts)
        self.cols = cols
        self._set_columns(proj.project(cols))
        self.p_site = proj.project(per_site)
        self.version = np.zeros(len(per_site), dtype=int)
        self.moved = {}

    def _set_columns(self, projected) -> None:
        self.projected = projected
        self.gram, self.rhs = projected @ projected.T, projected @ self.proj.y
        costs, amounts = self.proj.cost_many(self.gram[None], self.rhs[None])
        self.cost, self.zero = float(costs[0]), amounts[0] == 0

    def _open(self, start: int) -> np.ndarray:
        """Rows of the pair table from ``start`` on whose two sites may swap now."""
        block, _, _, i, i2 = self.pairs[start:].T
        a, c = self.flat[i], self.flat[i2]
        ok = (
            (np.abs(a - c) >= 2 * self.grid.dx_ppm)
            & (np.abs(c - self.shift0[i]) <= self.window[i])
            & (np.abs(a - self.shift0[i2]) <= self.window[i2])
        )
        return start + np.flatnonzero(ok)

    def run(self) -> bool:
        any_swap, row, block, size = False, 0, 0, 8
        while True:
            open_rows = self._open(row)
            if open_rows.size == 0:
                grouped = self._swap_blocks(block, len(self.blocks))
                if grouped is None:
                    return any_swap
                any_swap, block = True, grouped + 1
                row, size = int(np.searchsorted(self.pairs[:, 0], block)), 8
                continue
            chunk = open_rows[:size]
            costs, parts = self._evaluate(chunk)
            better = np.flatnonzero(costs < self.cost * (1 - 1e-6))
            last = int(better[0]) if better.size else len(chunk) - 1
            grouped = self._swap_blocks(block, int(self.pairs[chunk[last], 0]))
            if grouped is not None:  # a block swap came first: go on after that block
                any_swap, block = True, grouped + 1
                row, size = int(np.searchsorted(self.pairs[:, 0], block)), 8
                continue
            block, row = int(self.pairs[chunk[last], 0]), int(chunk[last]) + 1
            if better.size:
                self._accept(chunk[last], [part[last] for part in parts], costs[last])
                any_swap, size = True, 8
            else:
                size = min(2 * size, 64)

    def _swap_blocks(self, start: int, stop: int):
        """Block swaps of blocks start..stop-1 in order; the first one taken, or None."""
        return next((b for b in range(start, stop) if self._swap_block(b)), None)

    def _moved(self, rows):
        """Moved site columns and their projections for each pair, (u, u2, pu, pu2)."""
        keys, missing = [], []
        for i, i2 in self.pairs[rows, 3:]:
            key = (i, i2, self.flat[i], self.flat[i2], self.version[i], self.version[i2])
            if key not in self.moved:
                missing.append(key)
            keys.append(key)
        if missing:
            cols = [
                _translate_column(self.grid, self.per_site[j], d)
                for i, i2, a, c, _, _ in missing
                for j, d in ((i, c - a), (i2, a - c))
            ]
            projected = self.proj.project(np.array(cols))
            for j, key in enumerate(missing):
                self.moved[key] = (cols[2 * j], cols[2 * j + 1], projected[2 * j], projected[2 * j + 1])
        return [self.moved[key] for key in keys]

    def _evaluate(self, rows):
        moved = self._moved(rows)
        _, k, k2, i, i2 = self.pairs[rows].T
        pu, pu2 = np.array([m[2] for m in moved]), np.array([m[3] for m in moved])
        same = (k == k2)[:, None]
        p_new = self.projected[k] + pu - self.p_site[i]
        p_new = np.where(same, p_new + pu2 - self.p_site[i2], p_new)
        p_new2 = np.where(same, p_new, self.projected[k2] + pu2 - self.p_site[i2])
        t = np.arange(len(rows))
        grams = np.repeat(self.gram[None], len(rows), axis=0)
        rhs = np.repeat(self.rhs[None], len(rows), axis=0)
        for kk, pk in ((k, p_new), (k2, p_new2)):
            cross = pk @ self.projected.T
            grams[t, kk, :] = cross
            grams[t, :, kk] = cross
            rhs[t, kk] = pk @ self.proj.y
        grams[t, k, k] = np.einsum("ti,ti->t", p_new, p_new)
        grams[t, k2, k2] = np.einsum("ti,ti->t", p_new2, p_new2)
        grams[t, k, k2] = grams[t, k2, k] = np.einsum("ti,ti->t", p_new, p_new2)
        costs, amounts = self.proj.cost_many(grams, rhs, self.zero)
        return costs, (p_new, p_new2, grams, rhs, moved, amounts)

    def _accept(self, row: int, part, cost: float) -> None:
        _, k, k2, i, i2 = (int(v) for v in self.pairs[row])
        u, u2, pu, pu2 = part[4]
        new = self.cols[k] + u - self.per_site[i]
        if k2 == k:
            new = new + u2 - self.per_site[i2]
        new2 = new if k2 == k else self.cols[k2] + u2 - self.per_site[i2]
        self.cols[k], self.cols[k2] = new, new2
        self.projected[k], self.projected[k2] = part[0], part[1]
        self.gram, self.rhs, self.cost, self.zero = part[2], part[3], float(cost), part[5] == 0
        self.per_site[i], self.per_site[i2] = u, u2
        self.p_site[i], self.p_site[i2] = pu, pu2
        self.version[[i, i2]] += 1
        s, s2 = i - self.offsets[k], i2 - self.offsets[k2]
        self.shifts[k][s], self.shifts[k2][s2] = self.shifts[k2][s2], self.shifts[k][s]
        self.flat[i], self.flat[i2] = self.flat[i2], self.flat[i]

    def _swap_block(self, block: int) -> bool:
        k, k2 = self.blocks[block]
        if k == k2:
            return False
        current = (self.cols, self.projected, self.cost)
        swapped, _, cols, projected = _swap_groups(
            self.grid, self.models, self.per_site, self.shifts, (k, k2), current, self.proj
        )
        if swapped:
            self.cols = cols
            self._set_columns(projected)
            self.p_site = self.proj.project(self.per_site)
            self.version += 1
            self.flat = np.concatenate(self.shifts)
        return swapped


def _pair_table(models, blocks, offsets) -> np.ndarray:
    """Every site pair in swap order: rows (block, k, k2, site index, other site index)."""
    rows = []
    for b, (k, k2) in enumerate(blocks):
        for s in range(models[k].shift0.size):
            for s2 in range(s + 1 if k2 == k else 0, models[k2].shift0.size):
                rows.append((b, k, k2, offsets[k] + s, offsets[k2] + s2))
    return np.array(rows, dtype=int).reshape(-1, 5)


def _swap_groups(grid, models, per_site, shifts, pair, current, proj):
    """Exchange the positions of every like site (same label and proton count) of two molecules
    at once: two molecules with the same skeleton (a substitution product and its starting
    material) can take each other's multiplets as a block, which no exchange of one site pair
    can undo. Returns (swapped, cost, cols, projected); ``per_site`` and ``shifts`` change in place."""
    (k, k2), (cols, projected, cost) = pair, current
    offsets, _ = _site_offsets(models)
    m, m2 = models[k], models[k2]
    pairs, used = [], set()
    for s in range(m.shift0.size):
        for s2 in range(m2.shift0.size):
            if (
                s2 not in used
                and m.labels[s] == m2.labels[s2]
                and m.n_h[s] == m2.n_h[s2]
                and abs(shifts[k][s] - shifts[k2][s2]) >= 2 * grid.dx_ppm
                and abs(shifts[k2][s2] - m.shift0[s]) <= m.window[s]
                and abs(shifts[k][s] - m2.shift0[s2]) <= m2.window[s2]
            ):
                pairs.append((s, s2))
                used.add(s2)
                break
    if len(pairs) < 2:
        return False, cost, cols, projected
    trial, moved = cols.copy(), {}
    for s, s2 in pairs:
        a, b = shifts[k][s], shifts[k2][s2]
        moved[(k, s)] = _translate_column(grid, per_site[offsets[k] + s], b - a)
        moved[(k2, s2)] = _translate_column(grid, per_site[offsets[k2] + s2], a - b)
        trial[k] += moved[(k, s)] - per_site[offsets[k] + s]
        trial[k2] += moved[(k2, s2)] - per_site[offsets[k2] + s2]
    trial_p = projected.copy()
    trial_p[k], trial_p[k2] = proj.project(trial[k]), proj.project(trial[k2])
    new_cost = proj.cost(trial_p)
    if new_cost >= cost * (1 - 1e-6):
        return False, cost, cols, projected
    for (kk, s), column in moved.items():
        per_site[offsets[kk] + s] = column
    for s, s2 in pairs:
        shifts[k][s], shifts[k2][s2] = shifts[k2][s2], shifts[k][s]
    return True, new_cost, trial, trial_p


def _translate_column(grid, column, delta_ppm):
    """Column moved by delta along the grid (interpolated; exact for whole grid steps)."""
    return np.interp(grid.x - delta_ppm, grid.x, column, left=0.0, right=0.0)


def _best_joint_move(grid, r_k, rest, unit, current, centre, window, var, prior_sd):
    """Best (shift, amount) of one site within centre +- window, or None when undefined."""
    if unit.max() <= 0:
        return None
    nz = np.flatnonzero(unit > 1e-3 * unit.max())
    j0, j1 = nz[0], nz[-1] + 1
    lo_ppm, hi_ppm = centre - window - current, centre + window - current  # allowed moves
    i0 = max(0, j0 + int(np.floor(lo_ppm / grid.dx_ppm)))
    i1 = min(grid.x.size, j1 + int(np.ceil(hi_ppm / grid.dx_ppm)))
    if i1 - i0 <= j1 - j0:
        return None
    u = unit[j0:j1]
    w = grid.weight
    rest_w = rest * w
    a_num = np.dot(r_k, rest_w) + np.correlate(r_k[i0:i1] * w[i0:i1], u, mode="valid")
    b_den = (
        np.dot(rest_w, rest_w)
        + 2 * np.correlate(rest_w[i0:i1] * w[i0:i1], u, mode="valid")
        + np.correlate(w[i0:i1] ** 2, u * u, mode="valid")
    )
    moves = grid.x[i0 : i0 + a_num.size] - grid.x[j0]
    gain = np.where(a_num > 0, a_num**2 / np.maximum(b_den, 1e-300), 0.0)
    score = gain / var - ((current + moves - centre) / prior_sd) ** 2
    score[(moves < lo_ppm - 1e-12) | (moves > hi_ppm + 1e-12)] = -np.inf
    if not np.isfinite(score).any():
        return None
    i = int(np.argmax(score))
    return float(current + moves[i]), float(max(0.0, a_num[i] / max(b_den[i], 1e-300)))


def _pack_bounds(models, shifts0_all, djs, lw_hz, options, n_amounts, n_base):
    """Parameter vector layout: [shifts..., dj..., lw, amounts..., baseline...]."""
    lo, hi, x0 = [], [], []
    for m, s in zip(models, shifts0_all, strict=True):
        x0 += list(s)
        lo += list(m.shift0 - m.window)
        hi += list(m.shift0 + m.window)
    for d in djs:
        x0 += list(d)
        lo += [-options.j_window_hz] * d.size
        hi += [options.j_window_hz] * d.size
    return x0, lo, hi


class _Problem:
    """Residual and Jacobian of the full model for ``least_squares``.

    Site shifts translate the lines simulated at the start of the round; coupling changes act
    through derivative columns computed once per round (a Gauss-Newton linearisation that is
    renewed by re-simulating in the next round).
    """

    def __init__(self, grid, models, state, basis, field_mhz, jcols):
        self.grid, self.models, self.state, self.basis = grid, models, state, basis
        self.field = field_mhz
        self.jcols = jcols
        self.n_sites = sum(m.shift0.size for m in models)
        self.n_dj = sum(len(m.j_pairs) for m in models)
        self.k = len(models)
        self._last = (None, None)  # (theta bytes, columns with derivatives) of the last evaluation

    def unpack(self, theta):
        shifts, pos = [], 0
        for m in self.models:
            shifts.append(theta[pos : pos + m.shift0.size])
            pos += m.shift0.size
        djs = []
        for m in self.models:
            djs.append(theta[pos : pos + len(m.j_pairs)])
            pos += len(m.j_pairs)
        lw = theta[pos]
        amounts = theta[pos + 1 : pos + 1 + self.k]
        base = theta[pos + 1 + self.k :]
        return shifts, djs, lw, amounts, base

    def columns(self, theta, *, derivs: bool):
        shifts, djs, lw, amounts, base = self.unpack(theta)
        cols, per_site, dpos, dw = _components(
            self.grid, self.models, self.state, shifts, lw / self.field, derivs=derivs
        )
        cols = cols.copy()
        for k in range(self.k):
            if self.jcols[k] is not None:
                cols[k] += (djs[k] - self.state.dj[k]) @ self.jcols[k]
        return cols, per_site, dpos, dw

    def _columns_with_derivs(self, theta):
        """:meth:`columns` with derivatives, kept for the next call at the same theta (the solver
        asks for the Jacobian where it has just taken the residual)."""
        key = np.asarray(theta, dtype=float).tobytes()
        if self._last[0] != key:
            self._last = (key, self.columns(theta, derivs=True))
        return self._last[1]

    def residual(self, theta):
        _, _, _, amounts, base = self.unpack(theta)
        cols, _, _, _ = self._columns_with_derivs(theta)
        return (amounts @ cols + self.basis @ base - self.grid.y) * self.grid.weight

    def jacobian(self, theta):
        _, _, _, amounts, _ = self.unpack(theta)
        cols, _, dpos, dw = self._columns_with_derivs(theta)
        site_amount = np.concatenate(
            [np.full(m.shift0.size, a) for m, a in zip(self.models, amounts, strict=True)]
        )
        parts = [(dpos * site_amount[:, None]).T]
        for k in range(self.k):
            if self.jcols[k] is not None:
                parts.append((self.jcols[k] * amounts[k]).T)
        parts.append(((amounts @ dw) / self.field)[:, None])
        parts.append(cols.T)
        parts.append(self.basis)
        return np.hstack(parts) * self.grid.weight[:, None]


def _coupling_columns(grid, models, state, lw_ppm, field_mhz, *, step_hz: float = 0.1):
    """Per candidate, d(unit-amount column)/d(coupling offset) by re-simulation (None if none)."""
    out = []
    for k, m in enumerate(models):
        if not m.j_pairs:
            out.append(None)
            continue
        base_ppm, base_int, _, base_sat = state.lines[k]
        base, _, _ = _render(
            grid, base_ppm, base_int, np.zeros(base_ppm.size, int), 1, lw_ppm, derivs=False, near=base_sat
        )
        rows = []
        for p in range(len(m.j_pairs)):
            dj = state.dj[k].copy()
            dj[p] += step_hz
            ppm, inten, _, sat = _model_lines(m, state.base_shift[k], _j_matrix(m, dj), field_mhz)
            col, _, _ = _render(grid, ppm, inten, np.zeros(ppm.size, int), 1, lw_ppm, derivs=False, near=sat)
            rows.append((col[0] - base[0]) / step_hz)
        out.append(np.array(rows))
    return out


def _refine(grid, models, state, shifts, djs, lw_hz, basis, field_mhz, options):
    jcols = _coupling_columns(grid, models, state, lw_hz / field_mhz, field_mhz)
    problem = _Problem(grid, models, state, basis, field_mhz, jcols)
    cols, _, _, _ = _components(grid, models, state, shifts, lw_hz / field_mhz, derivs=False)
    amounts, base = _solve_linear(cols, basis, grid)
    x0, lo, hi = _pack_bounds(models, shifts, djs, lw_hz, options, len(models), basis.shape[1])
    # the fitted width includes the fit blur, so it can never be narrower than that
    lw_lo = max(0.1, 1.5 * grid.dx_ppm * field_mhz / options.points_per_width) + _fit_blur_hz(
        options, field_mhz
    )
    lw_hi = options.max_line_width_hz + _fit_blur_hz(options, field_mhz)
    x0 = np.array(x0 + [np.clip(lw_hz, lw_lo * 1.01, lw_hi * 0.99)] + list(amounts) + list(base))
    lo = np.array(lo + [lw_lo] + [0.0] * len(models) + [-np.inf] * basis.shape[1])
    hi = np.array(hi + [lw_hi] + [np.inf] * (len(models) + basis.shape[1]))
    x0 = np.clip(x0, lo, hi)
    result = least_squares(
        problem.residual,
        x0,
        jac=problem.jacobian,
        bounds=(lo, hi),
        method="trf",
        x_scale="jac",
        max_nfev=40,
        ftol=1e-8,
        xtol=1e-8,
        tr_solver="lsmr",
    )
    return problem, result


# --------------------------------------------------------------------------------------------
# Uncertainty
# --------------------------------------------------------------------------------------------


def _fraction_covariance(amounts: np.ndarray, cov: np.ndarray) -> np.ndarray:
    total = amounts.sum()
    if total <= 0:
        return np.zeros_like(cov)
    grad = (np.eye(amounts.size) * total - amounts[:, None]) / total**2  # d x_i / d a_j
    return grad @ cov @ grad.T


def _amount_covariance(jac: np.ndarray, n_amount_start: int, k: int, sigma2: float) -> np.ndarray:
    norms = np.linalg.norm(jac, axis=0)
    live = norms > 1e-12 * max(norms.max(), 1e-300)
    sub = jac[:, live] / norms[live]
    cov_scaled = np.linalg.pinv(sub.T @ sub, rcond=1e-12, hermitian=True)
    cov_live = cov_scaled / np.outer(norms[live], norms[live]) * sigma2
    full = np.zeros((jac.shape[1], jac.shape[1]))
    full[np.ix_(live, live)] = cov_live
    amount_idx = np.arange(n_amount_start, n_amount_start + k)
    cov = full[np.ix_(amount_idx, amount_idx)]
    dead = ~live[amount_idx]
    if dead.any():
        cov[dead, dead] = sigma2 / 1e-300
    return cov


def _bootstrap_fractions(cols, basis, grid, model, residual, options, detected_mask):
    """Fractions re-solved after adding block-resampled residuals to the fitted model."""
    if options.n_bootstrap < 2:
        return None
    rng = np.random.default_rng(options.seed)
    n = residual.size
    block = max(8, n // 200)
    starts = np.arange(0, n, block)
    draws = []
    for _ in range(options.n_bootstrap):
        picks = rng.integers(0, max(1, n - block), size=starts.size)
        noise = np.concatenate([residual[p : p + block] for p in picks])[:n]
        noise = noise * rng.choice([-1.0, 1.0], size=starts.size).repeat(block)[:n]
        fake = _Grid(
            x=grid.x,
            y=model + noise,
            weight=grid.weight,
            region=grid.region,
            n_regions=grid.n_regions,
            dx_ppm=grid.dx_ppm,
        )
        a, _ = _solve_linear(cols, basis, fake)
        a = np.where(detected_mask, a, 0.0)
        draws.append(a / a.sum() if a.sum() > 0 else a)
    return np.std(np.array(draws), axis=0, ddof=1)


# --------------------------------------------------------------------------------------------
# Evidence
# --------------------------------------------------------------------------------------------


def _site_contributions(models, per_site, amounts, offsets) -> np.ndarray:
    """Each site's model scaled by its molecule's amount, shape (n_sites, n_points)."""
    return np.concatenate(
        [per_site[o : o + m.shift0.size] * a for o, m, a in zip(offsets, models, amounts, strict=True)]
    )


def _site_evidence(grid, models, per_site, amounts, y_clean, noise_sd):
    """Per site: (sigma seen, shape match, overlap share, expected height in noise sd, support).

    ``support`` is the share of the predicted intensity that the data under the site (minus
    the other components) actually holds: 1 when fully there, 0 when absent."""
    offsets, _ = _site_offsets(models)
    contrib = _site_contributions(models, per_site, amounts, offsets)
    total = contrib.sum(0)
    out = []
    for k, m in enumerate(models):
        rows = []
        for s in range(m.shift0.size):
            c = contrib[offsets[k] + s]
            sel = (c > 0.05 * c.max()) & (grid.weight > 0) if c.max() > 0 else np.zeros(c.size, bool)
            if sel.sum() < 3:
                rows.append((0.0, 0.0, 1.0, 0.0, 0.0))
                continue
            cs, others = c[sel], total[sel] - c[sel]
            own = y_clean[sel] - others
            norm_c = np.linalg.norm(cs)
            sigma = float(np.dot(cs, own) / (noise_sd * norm_c + 1e-300))
            shape = float(np.dot(cs, own) / (norm_c * np.linalg.norm(own) + 1e-300))
            overlap = float(np.dot(others, cs) / (np.dot(cs, cs) + np.dot(others, cs) + 1e-300))
            support = float(np.dot(cs, own) / (np.dot(cs, cs) + 1e-300))
            rows.append((sigma, shape, overlap, float(cs.max() / noise_sd), support))
        out.append(rows)
    return out


def _observed_j_text(model: _Model, j: np.ndarray, s: int) -> str:
    big = [abs(j[s, t]) for t in range(j.shape[0]) if t != s and abs(j[s, t]) >= 4.0]
    return ", ".join(f"{v:.1f}" for v in sorted(big, reverse=True))


def _evidence_lines(models, k, system, shifts, djs, site_rows, field_mhz):
    m = models[k]
    j_fit = _j_matrix(m, djs[k])
    lines = []
    for s in range(m.shift0.size):
        sigma, shape, overlap, _, _ = site_rows[s]
        site = system.sites[m.sites[s]]
        j_obs, j_pred = _observed_j_text(m, j_fit, s), _observed_j_text(m, m.j0, s)
        j_part = f"; J = {j_obs} Hz (predicted {j_pred})" if j_obs else ""
        seen = "observed" if sigma >= 5 and shape >= 0.5 else "not clearly seen"
        lines.append(
            f"{site.label or 'H'} ({site.n_h}H) {seen} at {shifts[k][s]:.3f} ppm (predicted "
            f"{site.shift_ppm:.2f} +- {site.shift_sd_ppm:.2f}){j_part}; {sigma:.0f} sigma, "
            f"shape match {shape:.2f}, overlap {overlap:.0%}"
        )
    return tuple(lines)


def _diagnostic_sites(model: _Model) -> list[int]:
    """Sites that identify the molecule: its vinyl H when it has any, else every site."""
    vinyl = [s for s, lab in enumerate(model.labels) if "vinyl" in lab.lower() or "olefin" in lab.lower()]
    return vinyl or list(range(len(model.labels)))


def _upper_bounds(grid, models, per_site, amounts, y_clean, noise_sd, detected) -> np.ndarray:
    """95 % upper bound of each undetected candidate's amount from its diagnostic signals.

    Each diagnostic site's template is fitted alone to the data left after the detected
    components; the estimates are combined by inverse variance, where the variance is
    the noise plus 5 % of the overlapping model (model error of the detected components,
    common practice). The bound is the estimate (floored at 0) plus 1.96 sd; detected
    candidates get 0.
    """
    offsets, _ = _site_offsets(models)
    contrib = _site_contributions(models, per_site, amounts, offsets)
    others_all = contrib.sum(0)
    bounds = np.zeros(len(models))
    for k, m in enumerate(models):
        if detected[k]:
            continue
        est, weight = [], []
        others_k = others_all - contrib[offsets[k] : offsets[k] + m.shift0.size].sum(0)
        for s in _diagnostic_sites(m):
            t = per_site[offsets[k] + s]
            sel = (t > 0.05 * t.max()) & (grid.weight > 0) if t.max() > 0 else np.zeros(t.size, bool)
            if sel.sum() < 3:
                continue
            ts, others = t[sel], others_k[sel]
            tt = float(np.dot(ts, ts))
            var = noise_sd**2 / tt + (0.05 * float(np.dot(others, ts)) / tt) ** 2
            est.append(float(np.dot(ts, y_clean[sel] - others)) / tt)
            weight.append(1.0 / var)
        if weight:
            w = np.asarray(weight)
            bounds[k] = max(0.0, float(np.dot(w, est) / w.sum())) + Z_95 * float(1.0 / np.sqrt(w.sum()))
        else:
            bounds[k] = np.inf
    return bounds


def _diagnostic_ok(rows, model: _Model) -> bool:
    """The candidate's own diagnostic signals are there: at least one of them is clearly seen,
    with its own multiplet shape and most of its predicted intensity, where no other component
    overlaps it, and none of them that should stand above the noise is absent."""
    diag = [rows[s] for s in _diagnostic_sites(model)]
    seen = [
        sig >= 5 and shape >= 0.6 and overlap < 0.5 and support >= 0.5
        for sig, shape, overlap, _, support in diag
    ]
    own = [
        (shape, support) for _, shape, overlap, expected, support in rows if expected >= 3 and overlap < 0.5
    ]
    held = sum(support >= 0.5 and shape >= 0.3 for shape, support in own)
    # the amount must be carried by most of the molecule's own, unoverlapped signals (predicted
    # couplings can be off, so one misshapen multiplet does not veto the molecule; an absent
    # molecule has none of them)
    return any(seen) and held >= max(1, int(np.ceil(0.6 * len(own))))


# --------------------------------------------------------------------------------------------
# Unknown signals
# --------------------------------------------------------------------------------------------


def _unexplained_signals(spectrum, fit_grid, model_full, masks, noise_sd, corr, field_mhz, total_area):
    """Residual peaks above the noise outside masks: (ppm, share of proton signal) pairs."""
    ppm = np.asarray(spectrum.ppm)[::-1]
    y = np.asarray(spectrum.intensity, dtype=float)[::-1]
    resid = y.copy()
    inside = np.zeros(y.size, bool)
    idx = np.searchsorted(ppm, fit_grid.x)
    # subtract the model where it was fitted (interpolated from the binned grid)
    lo, hi = fit_grid.x.min(), fit_grid.x.max()
    sel = (ppm >= lo) & (ppm <= hi)
    model_at = np.zeros(y.size)
    model_at[sel] = np.interp(ppm[sel], fit_grid.x, model_full)
    resid -= model_at
    inside[np.clip(idx, 0, y.size - 1)] = True
    for a, b, _ in masks:
        resid[(ppm >= a) & (ppm <= b)] = 0.0
    width = max(3, int(round(0.5 / abs(spectrum.hz_per_point))))
    smooth = np.convolve(resid, np.ones(width) / width, mode="same")
    thresh = max(8 * noise_sd * corr / np.sqrt(width), 0.0)
    found = []
    order = np.argsort(-smooth)
    taken = np.zeros(y.size, bool)
    hz = abs(spectrum.hz_per_point)
    for i in order[:5000]:
        if smooth[i] < thresh or len(found) >= 10:
            break
        if taken[i]:
            continue
        j0, j1 = max(0, i - int(15 / hz)), min(y.size, i + int(15 / hz))
        taken[j0:j1] = True
        if model_at[i] > 0.5 * smooth[i]:
            continue  # misfit of a modelled multiplet, not a new signal
        area = float(np.clip(resid[j0:j1], 0, None).sum() * hz / field_mhz)
        share = area / total_area if total_area > 0 else 0.0
        if share >= 0.005:
            found.append((float(ppm[i]), share))
    return found


# --------------------------------------------------------------------------------------------
# Public entry point
# --------------------------------------------------------------------------------------------


def _check_inputs(spectrum, systems, candidates):
    if not isinstance(spectrum, Spectrum):
        raise InputError(f"spectrum: expected a Spectrum, got {type(spectrum).__name__}")
    if str(spectrum.nucleus).upper().replace(" ", "") not in ("1H", "H1", "H"):
        raise InputError(f"spectrum: nucleus is {spectrum.nucleus!r}; only 1H spectra can be fitted")
    systems, candidates = tuple(systems), tuple(candidates)
    if not candidates:
        raise FitError("candidates: at least one candidate is needed to fit a spectrum")
    if len(systems) != len(candidates):
        raise InputError(f"systems: got {len(systems)} spin systems for {len(candidates)} candidates")
    for sys_, cand in zip(systems, candidates, strict=True):
        if not isinstance(sys_, SpinSystem) or not isinstance(cand, Candidate):
            raise InputError("systems/candidates: expected SpinSystem and Candidate objects")
    return systems, candidates


def fit_mixture(
    spectrum: Spectrum,
    systems: Sequence[SpinSystem],
    candidates: Sequence[Candidate],
    *,
    noise_sd: float | None = None,
    options: FitOptions | None = None,
) -> MixtureFit:
    """Fit a processed 1H spectrum as a non-negative mixture of candidate spectra.

    Parameters
    ----------
    spectrum : Spectrum
        Phased, baseline-corrected and referenced 1H spectrum.
    systems : sequence of SpinSystem
        Predicted (or known) spin system of each candidate.
    candidates : sequence of Candidate
        The candidates, same order as ``systems``.
    noise_sd : float, optional
        Noise standard deviation of ``spectrum.intensity``; estimated when None.
    options : FitOptions, optional

    Returns
    -------
    MixtureFit
        One :class:`ComponentFit` per candidate (same order), the model and residual on the
        fitted (binned) axis, the common line width and quality figures.

    Raises
    ------
    FitError
        No candidates, no signal in the fitted regions, or a fit that cannot converge.
    InputError
        Wrong nucleus or mismatched inputs.
    """
    options = options or FitOptions()
    systems, candidates = _check_inputs(spectrum, systems, candidates)
    field = float(spectrum.field_mhz)
    y_all = np.asarray(spectrum.intensity, dtype=float)
    noise = float(noise_sd) if noise_sd else estimate_noise_sd(y_all)
    if not np.isfinite(noise) or noise <= 0:
        raise InputError(f"noise_sd: must be a positive number, got {noise_sd!r}")
    lw = options.line_width_hz or estimate_line_width_hz(spectrum, noise_sd=noise)
    raw_snr = float(np.max(y_all) / noise)
    blur = _fit_blur_hz(options, field)
    spectrum, noise = _blurred(spectrum, noise, blur)
    lw += blur
    models = [_build_model(s, options) for s in systems]
    masks, notes = (
        ([], []) if not options.mask_solvent else _mask_intervals(spectrum.solvent, field, lw, models)
    )
    grid = _build_grid(spectrum, _fit_intervals(models, field, lw), masks, lw, options)
    if np.max(np.abs(grid.y * grid.weight)) < 5 * noise:
        raise FitError("spectrum: no signal above 5x the noise where the candidates have signals")
    basis = _baseline_basis(grid, options.baseline_degree)
    # the best few starts are refined in full; the lowest final cost wins
    with TaskPool(max_workers=options.n_workers, shared=models) as pool:
        starts = _coarse_start(spectrum, models, masks, lw, noise, field, options, pool)
        basis = _drop_small_phase(grid, models, starts[0], lw, basis, field)
        problem, result, alternatives = _refine_starts(grid, models, starts, lw, basis, field, options, pool)
    return _finish(
        spectrum,
        systems,
        candidates,
        models,
        grid,
        problem,
        result,
        basis,
        masks,
        notes,
        noise,
        options,
        raw_snr,
        alternatives,
    )


#: After the first refinement round, starts whose cost exceeds the best one's this many times are
#: dropped: one re-simulation round changes a cost by well under a third.
_ROUND_KEEP_FACTOR = 2.0


def _refine_starts(grid, models, starts, lw, basis, field, options, pool: TaskPool):
    """Refine every start (re-simulating between rounds); the lowest final cost wins.

    Returns (problem, result) of the winner and the (parameters, cost) of the other starts
    refined to the end. Starts far behind the best after a round are not refined further (see
    ``_ROUND_KEEP_FACTOR``)."""
    zero_dj = [np.zeros(len(m.j_pairs)) for m in models]
    tasks = [(grid, shifts, zero_dj, lw, basis, field, options) for shifts in starts]
    for round_ in range(options.rounds):
        final = round_ == options.rounds - 1
        outs = pool.map(_refine_task if final else _refine_round_task, tasks)
        if final:
            break
        best = min(cost for _, cost in outs)
        unpack = _Problem(grid, models, None, basis, field, None).unpack
        tasks = []
        for x, cost in outs:
            if cost > _ROUND_KEEP_FACTOR * best:
                continue
            shifts, djs, lw_fit, _, _ = unpack(x)
            shifts, djs = [s.copy() for s in shifts], [d.copy() for d in djs]
            tasks.append((grid, shifts, djs, lw_fit, basis, field, options))
    i = int(np.argmin([r.cost for _, _, r in outs]))
    state, jcols, result = outs[i]
    alternatives = [(r.x, float(r.cost)) for j, (_, _, r) in enumerate(outs) if j != i]
    return _Problem(grid, models, state, basis, field, jcols), result, alternatives


def _refine_task(models, task):
    """One refinement round from one start (a task for ``TaskPool.map``): (state, jcols, result)."""
    grid, shifts, djs, lw, basis, field, options = task
    state = _simulate_all(models, shifts, djs, field)
    if options.fine_sweeps:
        shifts = _sweep_sites(grid, models, state, shifts, lw / field, basis, n_sweeps=2)
        state = _simulate_all(models, shifts, djs, field)
    problem, result = _refine(grid, models, state, shifts, djs, lw, basis, field, options)
    return state, problem.jcols, result


def _refine_round_task(models, task):
    """:func:`_refine_task` for a round that is not the last: only (parameters, cost) come back
    (the Jacobian and derivative columns, about a megabyte, are needed only of the winner)."""
    _, _, result = _refine_task(models, task)
    return result.x, float(result.cost)


def _drop_small_phase(grid, models, shifts, lw_hz, basis, field_mhz) -> np.ndarray:
    """The baseline basis without its two phase columns when the phase error they measure is small.

    The columns cost a little accuracy on a well-phased spectrum (near-coincident lines of two
    molecules can trade intensity through a small dispersive term), so they are kept only when
    the best start says the spectrum's phase is off by more than ``_MIN_PHASE_DEG`` somewhere in
    the fitted range.
    """
    if grid.dispersion is None:
        return basis
    state = _simulate_all(models, shifts, [np.zeros(len(m.j_pairs)) for m in models], field_mhz)
    cols, _, _, _ = _components(grid, models, state, shifts, lw_hz / field_mhz, derivs=False)
    _, base = _solve_linear(cols, basis, grid)
    phase_deg = float(np.degrees(abs(base[-2]) + abs(base[-1])))  # largest |phi0 + phi1 t|, |t| <= 1
    return basis if phase_deg > _MIN_PHASE_DEG else basis[:, :-2]


#: Smallest residual phase error (degrees) the fit corrects (see :func:`_drop_small_phase`).
#: Calibrated: on perfectly phased published-value mixtures the columns take up 1.7-2.5 degrees of
#: model misfit (and cost up to 0.7 points of accuracy); the demo FID needs about 11.
_MIN_PHASE_DEG = 3.0


def _fit_blur_hz(options: FitOptions, field_mhz: float) -> float:
    if options.fit_blur_hz is not None:
        return float(options.fit_blur_hz)
    return 3.0 if field_mhz >= 200 else 0.0


def _blurred(spectrum: Spectrum, noise_sd: float, blur_hz: float) -> tuple[Spectrum, float]:
    """The spectrum convolved with a unit-area Lorentzian of FWHM ``blur_hz`` and its noise sd."""
    if blur_hz <= 0:
        return spectrum, noise_sd
    y = np.asarray(spectrum.intensity, dtype=float)
    hz = abs(spectrum.hz_per_point)
    freq = np.fft.rfftfreq(y.size, d=hz)
    response = np.exp(-np.pi * blur_hz * freq)
    blurred = np.fft.irfft(np.fft.rfft(y) * response, n=y.size)
    # white noise through the filter: variance scales by the mean squared response
    full = np.concatenate([response, response[1 : (y.size + 1) // 2][::-1]])
    factor = float(np.sqrt(np.mean(full**2)))
    out = Spectrum(
        ppm=spectrum.ppm,
        intensity=blurred,
        field_mhz=spectrum.field_mhz,
        nucleus=spectrum.nucleus,
        solvent=spectrum.solvent,
        metadata=spectrum.metadata,
    )
    return out, noise_sd * factor


def _finish(
    spectrum,
    systems,
    candidates,
    models,
    grid,
    problem,
    result,
    basis,
    masks,
    notes,
    noise,
    options,
    raw_snr,
    alternatives=(),
):
    field = float(spectrum.field_mhz)
    theta = result.x.copy()
    shifts, djs, lw, amounts, base = problem.unpack(theta)
    cols, per_site, _, _ = problem.columns(theta, derivs=False)
    factor = int(round(grid.dx_ppm * field / abs(spectrum.hz_per_point)))
    noise_bin = noise / np.sqrt(max(1, factor))
    corr = _noise_correlation_factor(np.asarray(spectrum.intensity)[:: max(1, factor)], noise_bin)
    w = grid.weight > 0
    resid = grid.y - amounts @ cols - basis @ base
    chi2 = float(np.sum((resid[w] / noise_bin) ** 2) / max(1, w.sum() - theta.size)) / corr**2
    noise_eff = noise_bin * corr * np.sqrt(max(1.0, chi2))
    rows = _site_evidence(grid, models, per_site, amounts, grid.y - basis @ base, noise_eff)
    k = len(models)
    start = problem.n_sites + problem.n_dj + 1
    inflate = corr * np.sqrt(max(1.0, chi2)) * options.uncertainty_scale
    cov_full = _amount_covariance(result.jac, start, k, noise_bin**2) * inflate**2
    significant = amounts > options.detection_sigma * np.sqrt(np.clip(np.diag(cov_full), 0, None))
    detected = np.array([bool(significant[i]) and _diagnostic_ok(rows[i], models[i]) for i in range(k)])
    upper = amounts.copy()
    if detected.any() and not detected.all():
        # amounts of the detected components alone: an undetected candidate must not keep signal
        amounts_det, base = _solve_linear(cols[detected], basis, grid)
        theta[start : start + k] = 0.0
        theta[start + np.flatnonzero(detected)] = amounts_det
        theta[start + k :] = base
        amounts = theta[start : start + k]
    jac = problem.jacobian(theta) if detected.any() and not detected.all() else result.jac
    model = amounts @ cols + basis @ base
    resid = grid.y - model
    cov_a = _amount_covariance(jac, start, k, noise_bin**2) * inflate**2
    sd_up = np.sqrt(np.clip(np.diag(cov_full), 0, None))
    cov_a[~detected, ~detected] = sd_up[~detected] ** 2
    frac, frac_sd, frac_cov, limits = _fractions(np.where(detected, amounts, upper), cov_a, detected, options)
    spread, worst, alt_fracs = _alternative_spread(problem, alternatives, float(result.cost), frac, detected)
    if spread is not None:
        frac_cov = frac_cov + spread
        frac_sd = np.where(detected, np.sqrt(np.clip(np.diag(frac_cov), 0, None)), frac_sd)
    bounds = _upper_bounds(grid, models, per_site, amounts, grid.y - basis @ base, noise_eff, detected)
    with np.errstate(invalid="ignore"):
        share = bounds / np.maximum(amounts[detected].sum() + bounds, 1e-300)
    share = np.where(np.isfinite(bounds), share, 1.0)
    upper_limits = np.maximum(limits, share)
    boot = _bootstrap_fractions(cols, basis, grid, model, resid, options, detected)
    if boot is not None:
        frac_sd = np.where(detected, np.maximum(frac_sd, boot * options.uncertainty_scale), frac_sd)
    components = []
    for i, cand in enumerate(candidates):
        components.append(
            ComponentFit(
                candidate=cand,
                mole_fraction=float(np.clip(frac[i], 0, 1)),
                mole_fraction_sd=float(frac_sd[i]),
                detection_limit=float(limits[i]),
                detected=bool(detected[i]),
                upper_limit=None if detected[i] else float(np.clip(upper_limits[i], 0, 1)),
                refined_shifts_ppm=_refined_shifts(systems[i], models[i], shifts[i]),
                evidence=_evidence_lines(models, i, systems[i], shifts, djs, rows[i], field),
            )
        )
    total_area = float(sum(a * m.n_h.sum() for a, m in zip(amounts, models, strict=True)))
    unknown = _unexplained_signals(spectrum, grid, model, masks, noise, corr, field, total_area)
    warnings = list(notes) + [
        f"unexplained signal at {p:.2f} ppm (~{100 * s:.1f} % of the fitted proton "
        f"signal): an unknown component or a missing candidate"
        for p, s in unknown
    ]
    if not detected.any():
        warnings.append("no candidate is clearly present in this spectrum")
    if worst[0] > _ALTERNATIVE_NOTE:
        warnings.append(
            f"another assignment of the multiplets fits almost as well (cost within "
            f"{100 * _ALTERNATIVE_COST_MARGIN:.0f} %) and changes the mole fractions by up to "
            f"{100 * worst[0]:.0f} points ({candidates[worst[1]].label or candidates[worst[1]].smiles}); "
            "the uncertainties include this spread"
        )
    quality = _quality(
        grid,
        model,
        resid,
        noise_bin,
        chi2,
        corr,
        lw - _fit_blur_hz(options, field),
        unknown,
        raw_snr,
        noise,
        result,
    )
    quality["alternative_spread"] = float(worst[0])
    return MixtureFit(
        components=tuple(components),
        ppm=grid.x[::-1],
        model=model[::-1],
        residual=resid[::-1],
        line_width_hz=float(lw - _fit_blur_hz(options, field)),
        quality=quality,
        warnings=tuple(warnings),
        fraction_covariance=frac_cov,
        unexplained_ppm=tuple(p for p, _ in unknown),
        alternative_fractions=tuple(map(tuple, alt_fracs)),
    )


#: Other refined starts whose final cost is within this margin of the best one count as fitting the
#: spectrum about as well (the cost is then dominated by how far the predicted spectra are from the
#: real ones, not by noise). Calibrated on the sample spectra: at 400 MHz the runner-up sits 4 %
#: above the best and agrees within 1 point; at 60 MHz assignments 16 % above the best differ by
#: 10-15 points, which the covariance of the best fit alone does not show.
_ALTERNATIVE_COST_MARGIN = 0.25
#: A spread of the mole fractions among such fits above this (fraction) is reported in the warnings.
_ALTERNATIVE_NOTE = 0.02


def _alternative_spread(problem, alternatives, best_cost: float, frac, detected):
    """Extra covariance of the detected components' mole fractions from the other refined fits that
    are about as good as the best (see ``_ALTERNATIVE_COST_MARGIN``): their mean squared deviation
    from the best fit's fractions, over 4 (each such fit is taken to lie 2 sd away); (largest
    deviation, component index); and those fits' mole fractions (0 for undetected components).
    (None, (0.0, 0), empty array) when there is no such fit.

    The covariance of the best fit measures noise; it cannot show that the multiplets could be
    assigned another way about as well, which with predicted spectra at low field is the larger
    uncertainty (the 60 MHz sample spectrum: mole fractions 10-30 points apart)."""
    devs = []
    for x, cost in alternatives:
        if not cost <= best_cost * (1 + _ALTERNATIVE_COST_MARGIN) or not detected.any():
            continue
        amounts = np.where(detected, np.clip(problem.unpack(x)[3], 0.0, None), 0.0)
        if amounts.sum() <= 0:
            continue
        devs.append(np.where(detected, amounts / amounts.sum() - frac, 0.0))
    if not devs:
        return None, (0.0, 0), np.zeros((0, detected.size))
    devs = np.array(devs)
    worst = np.unravel_index(int(np.argmax(np.abs(devs))), devs.shape)
    fractions = np.where(detected, devs + frac, 0.0)
    # a fit almost as good as the best is taken to lie at the edge of the 95 % interval (2 sd)
    return devs.T @ devs / len(devs) / 4.0, (float(abs(devs[worst])), int(worst[1])), fractions


def _fractions(amounts, cov_a, detected, options):
    k = amounts.size
    det_amounts = np.where(detected, amounts, 0.0)
    total = det_amounts.sum()
    frac = np.zeros(k)
    frac_cov = np.zeros((k, k))
    sd = np.sqrt(np.clip(np.diag(cov_a), 0, None))
    if total > 0:
        frac = np.where(detected, amounts / total, amounts / (total + amounts))
        idx = np.flatnonzero(detected)
        frac_cov[np.ix_(idx, idx)] = _fraction_covariance(amounts[idx], cov_a[np.ix_(idx, idx)])
        limits = options.detection_sigma * sd / (total + options.detection_sigma * sd)
    else:
        limits = np.ones(k)
    frac_sd = np.sqrt(np.clip(np.diag(frac_cov), 0, None))
    undetected_sd = np.where(total + amounts > 0, sd / np.maximum(total + amounts, 1e-300), 0.0)
    frac_sd = np.where(detected, frac_sd, np.minimum(undetected_sd, 1.0))
    return frac, frac_sd, frac_cov, np.clip(limits, 0.0, 1.0)


def _refined_shifts(system: SpinSystem, model: _Model, shifts: np.ndarray) -> tuple[float, ...]:
    out = [s.shift_ppm for s in system.sites]
    for idx, value in zip(model.sites, shifts, strict=True):
        out[idx] = float(value)
    return tuple(out)


def _quality(grid, model, resid, noise_bin, chi2, corr, lw, unknown, snr, noise, result) -> dict:
    w = grid.weight > 0
    y = grid.y[w]
    ss_tot = float(np.sum((y - y.mean()) ** 2)) or 1.0
    strong = w & (np.abs(grid.y) > 10 * noise_bin * corr)  # signal points only: noise is not "unexplained"
    explained = 1.0 - float(np.sum(np.abs(resid[strong]))) / max(
        float(np.sum(np.abs(grid.y[strong]))), 1e-300
    )
    return {
        "r_squared": 1.0 - float(np.sum(resid[w] ** 2)) / ss_tot,
        "explained_fraction": explained,
        "reduced_chi2": chi2,
        "noise_sd": float(noise),
        "noise_correlation_factor": float(corr),
        "snr": float(snr),
        "line_width_hz": float(lw),
        "n_unexplained": float(len(unknown)),
        "unexplained_share": float(sum(s for _, s in unknown)),
        "n_points_fitted": float(w.sum()),
        "n_function_evaluations": float(result.nfev),
    }
