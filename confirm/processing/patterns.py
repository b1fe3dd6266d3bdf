"""Recognise reference lines by their own patterns, not by their position alone.

A line near 0 ppm is TMS only when it is a sharp singlet with its 29Si satellites (+-3.3 Hz,
4.7 % of the line together); a line near 7.26 ppm is residual CHCl3 only when it is a singlet
of ordinary width with no coupling partner (its 13C satellites at +-104.5 Hz make it certain);
DMSO-d5, acetone-d5, CHD2OD and CHD2CN are 1:2:3:2:1 quintets with J(H,D) about 1.7-2.5 Hz,
CHDCl2 a 1:1:1 triplet, C6D5H a broadened singlet, HDO a singlet that moves with temperature.
Each check fits the expected pattern (Lorentzian lines of the spectrum's own width on a
straight baseline) to the data around a candidate line and judges the fit, the width and the
multiplicity.

13C satellites also tell the orientation of a spectrum: the proton on 13C is shielded by the
one-bond isotope effect (about 1-3 ppb, memory; 1.6-2.6 ppb measured on the shared real
spectra), so the midpoint of a satellite pair lies upfield of its parent. In a spectrum
mirrored about its carrier it would lie downfield.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from confirm.peaks import find_peak_indices, half_height_widths
from confirm.solvents import TMS_SI_SATELLITE_J_HZ, TMS_SI_SATELLITE_SHARE, SolventSignals

__all__ = ["SpectrumView", "LineCheck", "view_spectrum", "check_tms", "check_residual", "isotope_direction",
           "find_candidates"]

#: 13C natural abundance share of one satellite (references.md section 5: ~0.55 % each).
_C13_SATELLITE_SHARE = 0.0055
#: Fit quality (share of the signal's variance explained) a pattern needs.
_MIN_EXPLAINED = 0.9
#: The 13C isotope shift on 1H: the satellite midpoint lies this far upfield at least (ppm).
_MIN_ISOTOPE_SHIFT_PPM = 0.0008
_MAX_ISOTOPE_SHIFT_PPM = 0.006


@dataclass(frozen=True)
class SpectrumView:
    """A real spectrum prepared for pattern checks.

    Attributes
    ----------
    ppm : ndarray
        Decreasing axis.
    y : ndarray
        Intensity.
    noise_sd : float
    field_mhz : float
    line_width_hz : float
        Typical full width at half height of the spectrum's sharp lines.
    """

    ppm: np.ndarray
    y: np.ndarray
    noise_sd: float
    field_mhz: float
    line_width_hz: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "_negated", -np.asarray(self.ppm))  # ascending, for searchsorted

    @property
    def hz_per_point(self) -> float:
        return abs(float(self.ppm[0] - self.ppm[1])) * self.field_mhz

    def index(self, ppm: float) -> int:
        """Index of the point nearest ``ppm``."""
        return int(np.clip(np.searchsorted(self._negated, -ppm), 0, self.ppm.size - 1))

    def span(self, high_ppm: float, low_ppm: float) -> tuple[int, int]:
        """Index range [lo, hi) of the points from ``high_ppm`` down to ``low_ppm``."""
        return (int(np.searchsorted(self._negated, -high_ppm)),
                int(np.searchsorted(self._negated, -low_ppm, side="right")))

    def segment(self, centre_ppm: float, half_hz: float) -> tuple[np.ndarray, np.ndarray]:
        """(offset in Hz from ``centre_ppm``, intensity) of the points within ``half_hz``."""
        half_ppm = half_hz / self.field_mhz
        lo, hi = self.span(centre_ppm + half_ppm, centre_ppm - half_ppm)
        return (self.ppm[lo:hi] - centre_ppm) * self.field_mhz, self.y[lo:hi]


@dataclass(frozen=True)
class LineCheck:
    """The verdict on one candidate reference line.

    Attributes
    ----------
    status : str
        ``"strong"`` (the pattern itself is characteristic: TMS with its 29Si satellites, a
        resolved H-D multiplet with the right J, a singlet with its 13C satellites at the
        species' 1J(C,H)), ``"weak"`` (shape and width right, nothing characteristic),
        ``"untestable"`` (TMS-like, too weak or too broad to see the satellites) or
        ``"rejected"``.
    ppm : float
        Centre of the pattern as found.
    detail : str
        What was measured, for the report.
    """

    status: str
    ppm: float
    detail: str

    @property
    def valid(self) -> bool:
        return self.status in ("strong", "weak")


def view_spectrum(ppm: np.ndarray, y: np.ndarray, noise_sd: float, field_mhz: float) -> SpectrumView:
    """A :class:`SpectrumView` with the typical width of the sharp lines measured."""
    hz_step = abs(float(ppm[0] - ppm[1])) * field_mhz
    y = np.asarray(y)
    # prominent lines only: ripples on a broad hump are not lines and would give the hump's width
    idx = find_peak_indices(y, height=50 * noise_sd, prominence=20 * noise_sd)
    if idx.size:
        idx = idx[np.argsort(y[idx])[-40:]]
        widths = half_height_widths(y, idx) * hz_step
        width = float(np.percentile(widths, 25))
    else:
        width = 1.0
    return SpectrumView(ppm=np.asarray(ppm), y=np.asarray(y), noise_sd=float(noise_sd),
                        field_mhz=float(field_mhz),
                        line_width_hz=max(width, 2.0 * hz_step, 0.3))


# ---------------------------------------------------------------------------
# fitting a line pattern
# ---------------------------------------------------------------------------

def _lorentz(x: np.ndarray, width_hz) -> np.ndarray:
    half = 0.5 * np.asarray(width_hz)
    return half * half / (x * x + half * half)


def _fit_shapes(x: np.ndarray, y: np.ndarray, shapes: np.ndarray, degree: int = 1):
    """Amplitude of each row of ``shapes`` on a polynomial baseline of ``degree``, and the share of
    the variance (left by the baseline alone) it explains. All shapes in one projection."""
    base = np.vander(x / max(float(np.max(np.abs(x))), 1e-12), degree + 1)
    q, _ = np.linalg.qr(base)
    y_perp = y - q @ (q.T @ y)
    s_perp = shapes - (shapes @ q) @ q.T
    cross = s_perp @ y_perp
    norm = np.einsum("ij,ij->i", s_perp, s_perp)
    total = float(y_perp @ y_perp)
    with np.errstate(divide="ignore", invalid="ignore"):
        amplitude = np.where(norm > 0, cross / norm, 0.0)
        explained = np.where((norm > 0) & (total > 0), cross * cross / (norm * total), 0.0)
    return amplitude, explained


@dataclass(frozen=True)
class _PatternFit:
    amplitude: float
    explained: float
    centre_hz: float
    width_hz: float
    j_hz: float


def _fit_pattern(x, y, offsets, weights, *, widths, couplings, centres) -> _PatternFit:
    """Best fit of lines at ``centre + offsets * J`` with relative ``weights``: the grids coarsely
    (every other value), then finely around the best coarse point."""
    widths, couplings, centres = (np.asarray(g, dtype=float) for g in (widths, couplings, centres))
    coarse = _grid_fit(x, y, offsets, weights, widths[::2], couplings[::2], centres[::2])
    if coarse.amplitude <= 0:
        return coarse

    def near(grid, value):
        k = int(np.argmin(np.abs(grid - value)))
        return grid[max(0, k - 2):k + 3]

    fine = _grid_fit(x, y, offsets, weights, near(widths, coarse.width_hz), near(couplings, coarse.j_hz),
                     near(centres, coarse.centre_hz))
    return fine if fine.explained >= coarse.explained else coarse


def _grid_fit(x, y, offsets, weights, widths, couplings, centres) -> _PatternFit:
    grid = np.array([(j, w, c) for j in couplings for w in widths for c in centres], dtype=float)
    shapes = np.zeros((grid.shape[0], x.size))
    for offset, weight in zip(offsets, weights, strict=True):
        shapes += weight * _lorentz(x[None, :] - grid[:, 2:3] - offset * grid[:, 0:1], grid[:, 1:2])
    amplitude, explained = _fit_shapes(x, y, shapes)
    explained = np.where(amplitude > 0, explained, -1.0)
    k = int(np.argmax(explained))
    if explained[k] < 0:
        return _PatternFit(0.0, 0.0, 0.0, float(widths[0]), float(couplings[0]))
    return _PatternFit(float(amplitude[k]), float(explained[k]), float(grid[k, 2]), float(grid[k, 1]),
                       float(grid[k, 0]))


def _width_grid(view: SpectrumView, low: float, high: float, n: int = 9) -> np.ndarray:
    return view.line_width_hz * np.geomspace(low, high, n)


def _centre_grid(view: SpectrumView, half_hz: float = 0.3) -> np.ndarray:
    step = max(0.05, min(0.1, view.hz_per_point / 3))
    return np.arange(-half_hz, half_hz + step / 2, step)


def _interpolated_ppm(view: SpectrumView, i: int) -> float:
    """Position of the maximum at index ``i`` between grid points.

    Through 1/y when the three top points are positive: 1/y of a Lorentzian is a parabola, so its
    vertex is the line's centre exactly (a parabola through y itself is biased by up to a tenth of
    a point); through y otherwise.
    """
    if not 0 < i < view.y.size - 1:
        return float(view.ppm[i])
    a, b, c = view.y[i - 1], view.y[i], view.y[i + 1]
    if min(a, b, c) > 0:
        a, b, c = 1.0 / a, 1.0 / b, 1.0 / c
        denom = a - 2 * b + c
        shift = 0.5 * (a - c) / denom if denom > 0 else 0.0
    else:
        denom = a - 2 * b + c
        shift = 0.5 * (a - c) / denom if denom < 0 else 0.0
    shift = float(np.clip(shift, -0.5, 0.5))
    return float(view.ppm[i] + shift * (view.ppm[i + 1] - view.ppm[i]))


def _max_singlet_width(view: SpectrumView, extra_hz: float = 0.0) -> float:
    return max(2.5 * view.line_width_hz, view.line_width_hz + 1.5) + extra_hz


def _singlet(view: SpectrumView, i: int, *, extra_width_hz: float = 0.0):
    """(fit, centre ppm) of a singlet at index ``i`` with its width free."""
    centre = _interpolated_ppm(view, i)
    half = max(4.0 * view.line_width_hz, 3.0) + extra_width_hz
    x, y = view.segment(centre, half)
    if x.size < 7:
        return None, centre
    widths = _width_grid(view, 0.4, 4.0 + extra_width_hz / view.line_width_hz, 12)
    fit = _fit_pattern(x, y, (0.0,), (1.0,), widths=widths, couplings=(0.0,), centres=_centre_grid(view))
    # the position is the interpolated maximum (continuous); the fit judges shape and width only
    return fit, centre


def _partner(view: SpectrumView, i: int) -> float | None:
    """Distance (Hz) to a line of similar height 1.5-20 Hz away: a coupling partner (None if none)."""
    x, y = view.segment(float(view.ppm[i]), 20.0)
    idx = find_peak_indices(y, height=5 * view.noise_sd, prominence=5 * view.noise_sd)
    height = float(view.y[i])
    for k in idx:
        if 1.5 <= abs(x[k]) <= 20.0 and 0.5 <= y[k] / height <= 2.0:
            return float(abs(x[k]))
    return None


# ---------------------------------------------------------------------------
# satellites
# ---------------------------------------------------------------------------

def _bumps(view: SpectrumView, centre_ppm: float, positions_hz: np.ndarray, width_hz: float,
           margin_hz: float) -> np.ndarray:
    """Amplitude of a Lorentzian bump of ``width_hz`` at each of ``positions_hz`` from ``centre_ppm``.

    One window spans the positions plus ``margin_hz``; a quadratic baseline takes up the tail of
    the parent line and of neighbours. Amplitudes are in intensity units (the bump's height).
    """
    mid = 0.5 * (positions_hz[0] + positions_hz[-1])
    half = 0.5 * abs(positions_hz[-1] - positions_hz[0]) + margin_hz
    x, y = view.segment(centre_ppm + mid / view.field_mhz, half)
    if x.size < 8:
        return np.zeros(positions_hz.size)
    shapes = _lorentz(x[None, :] - (positions_hz[:, None] - mid), width_hz)
    amplitude, _ = _fit_shapes(x, y, shapes, degree=2)
    return amplitude


def _satellite_pair(view: SpectrumView, centre_ppm: float, width_hz: float, *,
                    j_range: tuple[float, float], spread: float = 0.0):
    """Satellites at about +-J/2 (J in ``j_range``): (left height, right height, J, midpoint Hz).

    ``spread`` = 0 ties both to one J (symmetric about the parent); otherwise each side is placed
    on its own within ``spread`` Hz, so that the midpoint (the isotope shift) can be measured.
    """
    step = max(0.05, min(0.1, view.hz_per_point / 2))
    halves = np.arange(j_range[0] / 2 - spread, j_range[1] / 2 + spread + step / 2, step)
    margin = max(1.0, 1.5 * width_hz)
    left = _bumps(view, centre_ppm, -halves[::-1], width_hz, margin)[::-1]
    right = _bumps(view, centre_ppm, halves, width_hz, margin)
    if spread == 0.0:
        k = int(np.argmax(np.minimum(left, right)))
        return float(left[k]), float(right[k]), float(2 * halves[k]), 0.0
    a, b = int(np.argmax(left)), int(np.argmax(right))
    return float(left[a]), float(right[b]), float(halves[a] + halves[b]), float(0.5 * (halves[b] - halves[a]))


def _satellites_ok(left: float, right: float, height: float, share: float, noise_sd: float) -> bool:
    low, high = 0.35 * share, 2.2 * share
    return (left > 4 * noise_sd and right > 4 * noise_sd and low <= left / height <= high
            and low <= right / height <= high and 0.5 <= left / right <= 2.0)


def _c13_satellites(view: SpectrumView, centre_ppm: float, height: float, width_hz: float,
                    j_ch_hz: float) -> tuple[bool | None, str]:
    """Whether the 13C satellites of a line are where ``j_ch_hz`` puts them (None: too weak to tell)."""
    if _C13_SATELLITE_SHARE * height < 6 * view.noise_sd:
        return None, ""
    left, right, j, mid_hz = _satellite_pair(view, centre_ppm, width_hz,
                                             j_range=(j_ch_hz - 2.0, j_ch_hz + 2.0), spread=1.5)
    symmetric = abs(mid_hz) <= _MAX_ISOTOPE_SHIFT_PPM * view.field_mhz and abs(j - j_ch_hz) <= 2.5
    if symmetric and _satellites_ok(left, right, height, _C13_SATELLITE_SHARE, view.noise_sd):
        return True, (f"13C satellites {j:.1f} Hz apart ({100 * left / height:.2f} %, "
                      f"{100 * right / height:.2f} %)")
    return False, ""


def _close_satellites(view: SpectrumView, centre_ppm: float, width_hz: float,
                      j_range: tuple[float, float]) -> tuple[float, float, float]:
    """Satellites a few Hz from their parent: (left height, right height, J).

    The parent is modelled with it (a narrow and a wider Lorentzian and a dispersion part take
    up a line shape that is not quite Lorentzian or not quite in phase), so that its flanks are
    not mistaken for satellites; each satellite is a Lorentzian of the parent's width.
    """
    x, y = view.segment(centre_ppm, j_range[1] / 2 + 3.0 * width_hz + 1.0)
    if x.size < 12:
        return 0.0, 0.0, 0.0
    half = 0.5 * width_hz
    parent = [_lorentz(x, width_hz), _lorentz(x, 3.0 * width_hz), x * half / (x * x + half * half),
              np.ones_like(x), x]
    best = (np.inf, 0.0, 0.0, 0.0)
    for j in np.arange(j_range[0], j_range[1] + 0.01, 0.1):
        design = np.column_stack(parent + [_lorentz(x + j / 2, width_hz), _lorentz(x - j / 2, width_hz)])
        coef, *_ = np.linalg.lstsq(design, y, rcond=None)
        cost = float(np.sum((y - design @ coef) ** 2))
        # x runs with ppm: the column at x = -J/2 is the upfield (right-hand) satellite
        right, left = float(coef[-2]), float(coef[-1])
        if cost < best[0]:
            best = (cost, left, right, float(j))
    return best[1], best[2], best[3]


# ---------------------------------------------------------------------------
# TMS
# ---------------------------------------------------------------------------

def check_tms(view: SpectrumView, i: int) -> LineCheck:
    """Is the line at index ``i`` TMS: a sharp singlet with 29Si satellites +-3.3 Hz (4.7 %)?"""
    fit, centre = _singlet(view, i)
    where = f"singlet at {centre:.3f} ppm"
    if fit is None or fit.explained < _MIN_EXPLAINED:
        return LineCheck("rejected", centre, f"{where}: not a singlet")
    if fit.width_hz > _max_singlet_width(view):
        return LineCheck("rejected", centre, f"{where}: {fit.width_hz:.1f} Hz wide, too broad for TMS")
    height = float(view.y[i])
    each = 0.5 * TMS_SI_SATELLITE_SHARE / (1 - TMS_SI_SATELLITE_SHARE)
    if each * height < 5 * view.noise_sd or fit.width_hz > 0.9 * TMS_SI_SATELLITE_J_HZ:
        return LineCheck("untestable", centre, f"{where}: too weak or broad to see the 29Si satellites")
    left, right, j = _close_satellites(view, centre, fit.width_hz,
                                       (TMS_SI_SATELLITE_J_HZ - 0.6, TMS_SI_SATELLITE_J_HZ + 0.6))
    # line shapes of real (benchtop) TMS lines are often skewed: a shoulder on one side takes up part
    # of one satellite, so the two are not asked to match, only both to be there and together right
    both = left > 4 * view.noise_sd and right > 4 * view.noise_sd
    in_range = 0.3 * each <= min(left, right) / height and max(left, right) / height <= 3.0 * each
    if not (both and in_range and 1.0 * each <= (left + right) / height <= 5.0 * each):
        return LineCheck("rejected", centre, f"{where}: no 29Si satellites at "
                                             f"+-{TMS_SI_SATELLITE_J_HZ / 2:.1f} Hz (found "
                                             f"{100 * left / height:.1f} % and {100 * right / height:.1f} %, "
                                             f"expected {100 * each:.1f} % each): not TMS")
    return LineCheck("strong", centre, f"{where} with 29Si satellites {j:.1f} Hz apart "
                                       f"({100 * left / height:.1f} % and {100 * right / height:.1f} %)")


# ---------------------------------------------------------------------------
# residual solvent lines
# ---------------------------------------------------------------------------

_QUINTET = ((-2.0, -1.0, 0.0, 1.0, 2.0), (1.0, 2.0, 3.0, 2.0, 1.0))
_TRIPLET = ((-1.0, 0.0, 1.0), (1.0, 1.0, 1.0))


def check_residual(view: SpectrumView, i: int, signals: SolventSignals) -> LineCheck:
    """Is the line at index ``i`` the residual line of ``signals`` (pattern, width, multiplicity)?"""
    label = signals.residual_label
    multiplicity = signals.residual_multiplicity
    if multiplicity in ("quint", "t") and signals.residual_j_hd_hz:
        return _check_multiplet(view, i, signals, _QUINTET if multiplicity == "quint" else _TRIPLET)
    broad = 3.0 if multiplicity.startswith("br") or label == "HDO" else 0.0
    fit, centre = _singlet(view, i, extra_width_hz=broad)
    where = f"{label} candidate at {centre:.3f} ppm"
    if fit is None or fit.explained < _MIN_EXPLAINED:
        return LineCheck("rejected", centre, f"{where}: not a singlet")
    if fit.width_hz > _max_singlet_width(view, broad):
        return LineCheck("rejected", centre, f"{where}: {fit.width_hz:.1f} Hz wide, broader than a residual "
                                             f"{label} line")
    partner = _partner(view, i)
    if partner is not None:
        return LineCheck("rejected", centre, f"{where}: a line of similar height {partner:.1f} Hz away "
                                             "(part of a multiplet)")
    j_ch = signals.residual_j_ch_hz
    satellites, note = (_c13_satellites(view, centre, float(view.y[i]), fit.width_hz, j_ch)
                        if j_ch else (None, ""))
    if satellites:
        return LineCheck("strong", centre, f"singlet at {centre:.3f} ppm with its {note}")
    return LineCheck("weak", centre, f"singlet at {centre:.3f} ppm, {fit.width_hz:.1f} Hz wide")


def _check_multiplet(view: SpectrumView, i: int, signals: SolventSignals, pattern) -> LineCheck:
    offsets, weights = pattern
    j0 = signals.residual_j_hd_hz
    name = "quintet" if len(offsets) == 5 else "1:1:1 triplet"
    centre = _interpolated_ppm(view, i)
    where = f"{signals.residual_label} candidate at {centre:.3f} ppm"
    span = max(offsets) * (j0 + 0.6)
    x, y = view.segment(centre, span + max(4.0 * view.line_width_hz, 3.0))
    if x.size < 9:
        return LineCheck("rejected", centre, f"{where}: too few points")
    couplings = np.arange(max(0.8, j0 - 0.6), j0 + 0.61, 0.1)
    widths = _width_grid(view, 0.35, 2.5, 9)
    fit = _fit_pattern(x, y, offsets, weights, widths=widths, couplings=couplings,
                       centres=_centre_grid(view, 0.4))
    found = centre  # the central line (or the envelope's maximum) marks the pattern's centre
    if fit.explained < _MIN_EXPLAINED:
        return LineCheck("rejected", found, f"{where}: not a {name} with J(H,D) near {j0:g} Hz")
    single = _fit_pattern(x, y, (0.0,), (1.0,), widths=_width_grid(view, 0.35, 6.0, 14), couplings=(0.0,),
                          centres=_centre_grid(view, 0.4))
    text = f"{name} at {found:.3f} ppm, J(H,D) {fit.j_hz:.2f} Hz"
    if single.explained >= fit.explained - 0.002 and single.width_hz <= 1.6 * view.line_width_hz:
        return LineCheck("rejected", found, f"{where}: a sharp singlet, not a {name}")
    resolved = fit.explained - single.explained >= 0.01 or fit.width_hz < fit.j_hz
    if not resolved:
        return LineCheck("weak", found, f"{text} (unresolved: {single.width_hz:.1f} Hz envelope)")
    if len(offsets) == 5:
        return LineCheck("strong", found, f"{text} (resolved)")
    # narrow 1:1:1 triplets also come from small long-range couplings: the 13C satellites decide
    satellites, note = (_c13_satellites(view, found, float(view.y[i]), fit.width_hz, signals.residual_j_ch_hz)
                        if signals.residual_j_ch_hz else (None, ""))
    if satellites:
        return LineCheck("strong", found, f"{text} (resolved) with its {note}")
    return LineCheck("weak", found, f"{text} (resolved; no 13C satellites seen to confirm it)")


# ---------------------------------------------------------------------------
# candidates and the 13C isotope shift
# ---------------------------------------------------------------------------

def find_candidates(view: SpectrumView, expected_ppm: float, window_ppm: float, *,
                    limit: int = 4) -> list[int]:
    """Indices of the tallest lines (>= 10 noise sd) within ``window_ppm`` of ``expected_ppm``."""
    lo, hi = view.span(expected_ppm + window_ppm, expected_ppm - window_ppm)
    if hi - lo < 3:
        return []
    segment = view.y[lo:hi]
    idx = find_peak_indices(segment, height=10 * view.noise_sd, prominence=5 * view.noise_sd)
    order = idx[np.argsort(segment[idx])[::-1]][:limit]
    return [int(lo + k) for k in order]


def isotope_direction(view: SpectrumView, centre_ppm: float, j_ch_hz: float) -> tuple[int, str]:
    """Which side of a reference line its 13C satellites' midpoint lies on.

    Returns +1 when the midpoint lies upfield of the line by the one-bond 13C isotope shift
    (0.8-6 ppb: the orientation as given), -1 when it lies downfield by as much (the spectrum is
    mirrored), 0 when the satellites are not clean or the midpoint too close to tell.
    """
    i = view.index(centre_ppm)
    height = float(view.y[i])
    if _C13_SATELLITE_SHARE * height < 8 * view.noise_sd:
        return 0, ""
    width = view.line_width_hz
    left, right, j, mid_hz = _satellite_pair(view, centre_ppm, width, j_range=(j_ch_hz - 4.0, j_ch_hz + 4.0),
                                             spread=2.5)
    if not _satellites_ok(left, right, height, _C13_SATELLITE_SHARE, view.noise_sd):
        return 0, ""
    shift_ppm = mid_hz / view.field_mhz
    text = (f"13C satellites of the line at {centre_ppm:.3f} ppm ({j:.1f} Hz apart): midpoint "
            f"{1000 * abs(shift_ppm):.1f} ppb {'up' if shift_ppm < 0 else 'down'}field")
    if -_MAX_ISOTOPE_SHIFT_PPM <= shift_ppm <= -_MIN_ISOTOPE_SHIFT_PPM:
        return 1, text
    if _MIN_ISOTOPE_SHIFT_PPM <= shift_ppm <= _MAX_ISOTOPE_SHIFT_PPM:
        return -1, text
    return 0, text
