"""Turn a raw FID or stored spectrum into a phased, baselined, referenced 1H spectrum.

The steps, each overridable through :class:`ProcessingOptions`:

1. orientation of the imaginary channel (from the format's convention);
2. digital-filter group delay removed as an exact time shift (FFT phase ramp),
   the wrapped points at the end of the FID set to zero;
3. DC offset (mean of the last 10 % of the FID) subtracted, first point halved;
4. exponential apodization (``lb_hz``, default 0.3 Hz);
5. zero filling to the next power of two of ``zero_fill_factor`` x points;
6. FFT, axis in ppm from the carrier, ppm decreasing;
7. automatic zero- and first-order phasing by minimising the entropy of the
   spectrum's first derivative with a penalty on negative intensity (Chen,
   Weng, Goh, Garland, J. Magn. Reson. 2002, 158, 164);
8. baseline by asymmetrically reweighted penalised least squares (Baek et al.,
   Analyst 2015, 140, 250; the asymmetric least squares family of Eilers and
   Boelens 2005) from pybaselines, fitted on a block-averaged copy;
9. referencing: TMS at 0.00 ppm when a sharp singlet sits near it and agrees
   with the solvent, else the residual solvent line from the published table
   (:mod:`confirm.solvents`), else the axis as acquired (with a warning);
   a spectrum whose solvent line is found only after mirroring about the
   carrier is mirrored, with a warning;
10. noise, SNR, peaks, integrals and multiplets (:mod:`confirm.peaks`).

SNR definition (also written into the metadata and the JSON output): the
height of the tallest line that is not solvent, water or TMS, divided by two
times the noise standard deviation; the noise standard deviation is the lower
quartile of the standard deviations of 64 equal blocks of the spectrum, each
after removing a straight line (blocks holding lines are thereby ignored).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np
from scipy.optimize import minimize

from confirm.peaks import Multiplet, Peak, find_peak_indices, group_multiplets, pick_peaks
from confirm.reading import PeakList, RawFid, RawSpectrum, read_measurement
from confirm.solvents import TMS_PPM, normalise_solvent_name, solvent_signals
from predictors.core import Spectrum
from predictors.errors import InputError

__all__ = [
    "ProcessingOptions",
    "ProcessedSpectrum",
    "SNR_DEFINITION",
    "process_measurement",
    "load_spectrum",
    "apply_phase",
    "find_phase",
    "estimate_noise_sd",
]

SNR_DEFINITION = ("height of the tallest line other than solvent, water and TMS divided by 2 x noise_sd; "
                  "noise_sd = lower quartile of the standard deviations of 64 blocks of the "
                  "baseline-corrected spectrum, each detrended")

#: T1 assumed for vinyl protons when judging the repetition time (common practice).
VINYL_T1_S = 3.0
_ORIENTATIONS = ("auto", "as-read", "mirrored")
_REFERENCES = ("auto", "tms", "solvent", "none")
_BASELINES = ("arpls", "asls", "iarpls", "none")
_PHASINGS = ("entropy", "none")


@dataclass(frozen=True)
class ProcessingOptions:
    """Every processing parameter; defaults work on ordinary 1H data.

    Attributes
    ----------
    lb_hz : float
        Exponential line broadening.
    zero_fill_factor : int
        Transform size is the next power of two >= factor x complex points.
    remove_dc : bool
        Subtract the mean of the last 10 % of the FID.
    phasing : str
        ``"entropy"`` (automatic, Chen et al. 2002) or ``"none"``.
    phase_deg : (float, float) or None
        Fixed (zero-order at the carrier, first-order across the spectral
        width) phases; overrides ``phasing``.
    entropy_penalty : float
        Weight of the negative-intensity penalty in the phasing score.
    baseline : str
        ``"arpls"``, ``"asls"``, ``"iarpls"`` or ``"none"``.
    baseline_lam : float
        Smoothness of the baseline on the block-averaged (4096-point) copy.
    baseline_p : float
        Asymmetry for ``"asls"`` (0.001-0.1).
    edge_fraction : float
        Share of the spectral width dropped at each edge of digitally
        filtered data (filter roll-off).
    reference : str
        ``"auto"`` (TMS, then solvent, then as acquired), ``"tms"``,
        ``"solvent"`` or ``"none"``.
    reference_window_ppm : float
        How far from its table value the TMS or solvent line is searched.
    solvent : str or None
        Overrides the solvent recorded in the file.
    field_mhz : float or None
        Overrides (or supplies) the spectrometer frequency.
    orientation : str
        ``"auto"`` (format convention, checked against the solvent line),
        ``"as-read"`` or ``"mirrored"``.
    threshold_snr : float
        Lines lower than this many noise standard deviations are not picked.
    max_j_hz : float
        Lines closer than this are grouped into one multiplet.
    j_tolerance_hz : float
        Agreement needed between spacings that form one coupling.
    """

    lb_hz: float = 0.3
    zero_fill_factor: int = 2
    remove_dc: bool = True
    phasing: str = "entropy"
    phase_deg: tuple[float, float] | None = None
    entropy_penalty: float = 1000.0
    baseline: str = "arpls"
    baseline_lam: float = 1e4
    baseline_p: float = 0.01
    edge_fraction: float = 0.015
    reference: str = "auto"
    reference_window_ppm: float = 0.15
    solvent: str | None = None
    field_mhz: float | None = None
    orientation: str = "auto"
    threshold_snr: float = 8.0
    max_j_hz: float = 20.0
    j_tolerance_hz: float = 0.6

    def __post_init__(self) -> None:
        _check_number("lb_hz", self.lb_hz, low=0.0, high=100.0)
        if int(self.zero_fill_factor) != self.zero_fill_factor or not 1 <= self.zero_fill_factor <= 16:
            raise InputError(f"zero_fill_factor: expected an integer 1-16, got {self.zero_fill_factor!r}")
        _check_choice("phasing", self.phasing, _PHASINGS)
        _check_choice("baseline", self.baseline, _BASELINES)
        _check_choice("reference", self.reference, _REFERENCES)
        _check_choice("orientation", self.orientation, _ORIENTATIONS)
        if self.phase_deg is not None:
            if len(self.phase_deg) != 2:
                raise InputError(f"phase_deg: expected (zero_order, first_order), got {self.phase_deg!r}")
            for value in self.phase_deg:
                _check_number("phase_deg", value, low=-1e5, high=1e5)
        _check_number("baseline_lam", self.baseline_lam, low=1.0, high=1e12)
        _check_number("baseline_p", self.baseline_p, low=1e-5, high=0.5)
        _check_number("edge_fraction", self.edge_fraction, low=0.0, high=0.2)
        _check_number("entropy_penalty", self.entropy_penalty, low=0.0, high=1e9)
        _check_number("reference_window_ppm", self.reference_window_ppm, low=0.005, high=2.0)
        if self.field_mhz is not None:
            _check_number("field_mhz", self.field_mhz, low=1.0, high=2000.0)
        _check_number("threshold_snr", self.threshold_snr, low=0.5, high=1e6)
        _check_number("max_j_hz", self.max_j_hz, low=0.1, high=100.0)
        _check_number("j_tolerance_hz", self.j_tolerance_hz, low=0.01, high=10.0)


def _check_number(name: str, value, *, low: float, high: float) -> None:
    ok = isinstance(value, (int, float, np.integer, np.floating)) and math.isfinite(value)
    if not ok or not low <= value <= high:
        raise InputError(f"{name}: expected a number in [{low:g}, {high:g}], got {value!r}")


def _check_choice(name: str, value, allowed: tuple[str, ...]) -> None:
    if value not in allowed:
        raise InputError(f"{name}: expected one of {', '.join(allowed)}, got {value!r}")


@dataclass(frozen=True, eq=False)
class ProcessedSpectrum:
    """A processed spectrum with what was measured on it.

    Attributes
    ----------
    spectrum : Spectrum
        ppm decreasing; ``metadata`` holds ``source_path``, ``sha256``,
        ``format``, ``acquisition`` and ``processing`` (the record of what was
        done, including ``snr_definition``).
    noise_sd : float
        Noise standard deviation (see :data:`SNR_DEFINITION`).
    snr : float
        Tallest non-solvent line / (2 x noise_sd).
    peaks : tuple of Peak
    multiplets : tuple of Multiplet
    reference : str
        How the axis was referenced, e.g. ``"residual CHCl3 at 7.26 ppm"``.
    phase_deg : (float, float)
        Zero-order phase at the carrier and first-order phase across the
        spectral width that were applied (0, 0 for stored spectra).
    warnings : tuple of str
    """

    spectrum: Spectrum
    noise_sd: float
    snr: float
    peaks: tuple[Peak, ...]
    multiplets: tuple[Multiplet, ...]
    reference: str
    phase_deg: tuple[float, float]
    warnings: tuple[str, ...] = ()


# ---------------------------------------------------------------------------
# public entry points
# ---------------------------------------------------------------------------

def load_spectrum(path, *, options: ProcessingOptions | None = None) -> ProcessedSpectrum:
    """Read ``path`` (:func:`confirm.reading.read_measurement`) and process it.

    Raises
    ------
    InputError
        When the path holds a peak list (use ``read_measurement`` for those).
    FileFormatError
        When the data cannot be read.
    """
    return process_measurement(read_measurement(path), options=options)


def process_measurement(raw: RawFid | RawSpectrum, *,
                        options: ProcessingOptions | None = None) -> ProcessedSpectrum:
    """Process a raw FID or a stored spectrum with ``options`` (defaults when None).

    Parameters
    ----------
    raw : RawFid or RawSpectrum
        From :func:`confirm.reading.read_measurement`.
    options : ProcessingOptions, optional

    Returns
    -------
    ProcessedSpectrum
    """
    options = options or ProcessingOptions()
    if isinstance(raw, PeakList):
        raise InputError(f"raw: {raw.source_path} is a peak list, not a spectrum; "
                         "read it with confirm.reading.read_measurement")
    if not isinstance(raw, (RawFid, RawSpectrum)):
        raise InputError(f"raw: expected RawFid or RawSpectrum, got {type(raw).__name__}")
    field_mhz = options.field_mhz or raw.parameters.field_mhz
    if not field_mhz:
        raise InputError(f"field_mhz: {raw.source_path} does not record the spectrometer frequency; "
                         "pass ProcessingOptions(field_mhz=...)")
    warnings = list(_parameter_warnings(raw))
    record: dict = {"options": asdict(options), "snr_definition": SNR_DEFINITION}
    if isinstance(raw, RawFid):
        ppm, intensity, phases, fid_warnings = _transform_fid(raw, field_mhz, options, record)
        warnings += fid_warnings
    else:
        ppm, intensity, phases = np.array(raw.ppm), np.array(raw.intensity), (0.0, 0.0)
        record["stored_notes"] = list(raw.notes)
    intensity = _correct_baseline(intensity, options)
    return _finish(raw, ppm, intensity, phases, field_mhz, options, record, warnings)


# ---------------------------------------------------------------------------
# FID to spectrum
# ---------------------------------------------------------------------------

def _transform_fid(raw: RawFid, field_mhz: float, options: ProcessingOptions, record: dict):
    warnings = []
    fid = np.array(raw.fid, dtype=complex)
    if raw.frequency_sign < 0:
        fid = np.conj(fid)
    fid = _shift_group_delay(fid, raw.group_delay_points)
    warnings += _fid_quality_warnings(np.array(raw.fid), fid, raw.group_delay_points)
    if options.remove_dc:
        tail = fid[int(0.9 * fid.size): fid.size - int(math.ceil(raw.group_delay_points)) - 2]
        if tail.size:
            fid[: fid.size - int(math.ceil(raw.group_delay_points)) - 2] -= tail.mean()
    fid[0] *= 0.5
    t = np.arange(fid.size) * raw.dwell_s
    fid *= np.exp(-math.pi * options.lb_hz * t)
    size = 1 << int(math.ceil(math.log2(fid.size * options.zero_fill_factor)))
    spec = np.fft.fftshift(np.fft.fft(fid, size))
    sw = raw.spectral_width_hz
    freq = (np.arange(size) - size // 2) * (sw / size)
    carrier = raw.parameters.carrier_ppm if raw.parameters.carrier_ppm is not None else 0.0
    if raw.parameters.carrier_ppm is None:
        warnings.append("carrier frequency unknown: axis centred on 0 ppm before referencing")
    if options.phase_deg is not None:
        phases = (float(options.phase_deg[0]), float(options.phase_deg[1]))
    elif options.phasing == "entropy":
        phases = find_phase(spec, penalty=options.entropy_penalty)
    else:
        phases = (0.0, 0.0)
    real = apply_phase(spec, phases).real
    ppm = carrier + freq / field_mhz
    # a digital filter leaves the outer edges attenuated and bent: drop them (they hold no usable data)
    edge = int(options.edge_fraction * size) if raw.group_delay_points > 0 else 0
    keep = slice(edge, size - edge)
    record.update(group_delay_points=raw.group_delay_points, transform_size=size, carrier_ppm=carrier,
                  phase_deg=list(phases), frequency_sign=raw.frequency_sign, edge_points_dropped=edge)
    return ppm[keep][::-1].copy(), real[keep][::-1].copy(), phases, warnings


def _shift_group_delay(fid: np.ndarray, delay_points: float) -> np.ndarray:
    """Advance the FID by ``delay_points`` (fractional) and zero the wrapped tail."""
    if delay_points <= 0:
        return fid
    n = fid.size
    k = np.fft.fftfreq(n) * n
    shifted = np.fft.ifft(np.fft.fft(fid) * np.exp(2j * math.pi * k * delay_points / n))
    shifted[n - int(math.ceil(delay_points)) - 2:] = 0.0
    return shifted


def apply_phase(spec: np.ndarray, phase_deg: tuple[float, float]) -> np.ndarray:
    """Multiply a spectrum in ascending-frequency order by ``exp(i (p0 + p1 (x - 1/2)))``.

    ``x`` runs from 0 to 1 across the array, so ``p0`` is the phase at the
    carrier (array centre) and ``p1`` the change across the spectral width.
    """
    x = np.arange(spec.size) / spec.size - 0.5
    return spec * np.exp(1j * np.deg2rad(phase_deg[0] + phase_deg[1] * x))


def apply_phase_at(spec: np.ndarray, phase_deg: tuple[float, float], index: np.ndarray) -> np.ndarray:
    """``apply_phase(spec, phase_deg)[index]`` without phasing the whole array."""
    x = index / spec.size - 0.5
    return spec[index] * np.exp(1j * np.deg2rad(phase_deg[0] + phase_deg[1] * x))


def _phase_subset(spec: np.ndarray, max_points: int = 12000) -> tuple[np.ndarray, np.ndarray]:
    """Indices of the lines and their near wings (magnitude >= 1 % of the tallest, padded).

    The wings carry the dispersive part that tells the phase; the empty
    rest of the spectrum only adds noise and time.
    """
    mag = np.abs(spec)
    top = float(mag.max()) or 1.0
    pad = max(16, spec.size // 1024)
    level = max(0.01 * top, 6.0 * float(np.median(mag)))  # above 1 % of the top and well above the noise
    mask = np.convolve((mag >= level).astype(float), np.ones(2 * pad + 1), mode="same") > 0
    idx = np.flatnonzero(mask)
    if idx.size > max_points:
        idx = np.sort(idx[np.argsort(mag[idx])[-max_points:]])
    return idx, spec[idx] / top


def _entropy_score(phases, data: np.ndarray, x: np.ndarray, penalty: float,
                   contiguous: np.ndarray | None = None) -> float:
    real = (data * np.exp(1j * np.deg2rad(phases[0] + phases[1] * x))).real
    deriv = np.abs(np.diff(real))
    if contiguous is not None:
        deriv = deriv[contiguous]  # no derivative across the gaps between the stretches kept
    total = deriv.sum()
    if total <= 0:
        return 0.0
    prob = deriv / total
    prob = prob[prob > 0]
    entropy = -np.sum(prob * np.log(prob))
    negative = real[real < 0]
    return float(entropy + penalty * np.sum(negative * negative) / real.size)


def find_phase(spec: np.ndarray, *, penalty: float = 1000.0) -> tuple[float, float]:
    """Zero- and first-order phase by entropy minimisation (Chen et al. 2002).

    Parameters
    ----------
    spec : ndarray of complex
        Spectrum in ascending-frequency order.
    penalty : float
        Weight of the negative-intensity penalty (intensities scaled to 1).

    Returns
    -------
    (float, float)
        Phases in degrees for :func:`apply_phase`, zero order in [-180, 180).
    """
    idx, data = _phase_subset(spec)
    x = idx / spec.size - 0.5
    contiguous = np.diff(idx) == 1
    grid = np.arange(-180.0, 180.0, 10.0)
    scores = [_entropy_score((p0, 0.0), data, x, penalty, contiguous) for p0 in grid]
    best = (float(grid[int(np.argmin(scores))]), 0.0)
    for step in (30.0, 5.0):
        result = minimize(_entropy_score, np.array(best), args=(data, x, penalty, contiguous),
                          method="Nelder-Mead",
                          options={"xatol": 0.01, "fatol": 1e-10, "initial_simplex":
                                   [best, (best[0] + step, best[1]), (best[0], best[1] + step)]})
        best = (float(result.x[0]), float(result.x[1]))
    best = _refine_phase(spec, best, idx)
    p0 = (best[0] + 180.0) % 360.0 - 180.0
    return p0, best[1]


def _refine_phase(spec: np.ndarray, phases: tuple[float, float], idx: np.ndarray) -> tuple[float, float]:
    """Polish the entropy phases with the phase of each signal region's complex area.

    Over a window that holds a whole line or first-order multiplet the
    dispersion part integrates to zero, so the angle of the complex area is
    that region's residual phase; a weighted straight-line fit of these angles
    against position gives the zero- and first-order corrections. Entropy
    minimisation alone leaves a few degrees of bias on well-resolved spectra.
    The polish is kept only when the regions agree with one straight line to
    within 2 degrees (rms); otherwise (overlapping or distorted lines) the
    entropy result stands.
    """
    breaks = np.flatnonzero(np.diff(idx) > 1) + 1
    segments = [seg for seg in np.split(idx, breaks) if seg.size >= 8]
    refined = phases
    for _ in range(3):
        xs, angles, weights = _region_angles(spec, refined, segments)
        if xs.size == 0:
            return phases
        if xs.size >= 3 and np.ptp(xs) > 0.05:
            slope, intercept = np.polyfit(xs, angles, 1, w=np.sqrt(weights))
        else:
            slope, intercept = 0.0, float(np.average(angles, weights=weights))
        refined = (refined[0] - intercept, refined[1] - slope)
    xs, angles, weights = _region_angles(spec, refined, segments)
    if xs.size < 2 or np.sqrt(np.average(angles ** 2, weights=weights)) > 2.0:
        return phases
    return refined


def _region_angles(spec, phases, segments):
    """Position (-0.5..0.5), residual phase (deg) and relative weight of each strong region."""
    xs, angles, weights = [], [], []
    for seg in segments:
        power = np.maximum(apply_phase_at(spec, phases, seg).real, 0.0) ** 2 + 1e-300
        centre = int(round(float(np.sum(seg * power) / np.sum(power))))
        half = max(centre - seg[0], seg[-1] - centre)
        window = np.arange(max(0, centre - half), min(spec.size - 1, centre + half) + 1)
        values = apply_phase_at(spec, phases, window)
        # symmetric window: the region's own dispersion cancels; the straight line through the
        # (averaged) ends removes the slowly varying dispersion background of distant lines
        k = max(1, values.size // 16)
        left, right = values[:k].mean(), values[-k:].mean()
        ramp = left + (right - left) * (np.arange(values.size) - (k - 1) / 2) / (values.size - k)
        area = np.sum(values - ramp)
        xs.append(centre / spec.size - 0.5)
        angles.append(np.degrees(np.angle(area)))
        weights.append(abs(area))
    if not xs:
        return np.zeros(0), np.zeros(0), np.zeros(0)
    xs, angles, weights = np.asarray(xs), np.asarray(angles), np.asarray(weights) / max(weights)
    # small regions and regions far off (overlaps, distorted lines) do not vote
    keep = (weights > 0.02) & (np.abs(angles) < 30.0)
    return xs[keep], angles[keep], weights[keep]


def _fid_quality_warnings(stored: np.ndarray, fid: np.ndarray, delay_points: float) -> list[str]:
    warnings = []
    for name, channel in (("real", stored.real), ("imaginary", stored.imag)):
        peak = np.max(np.abs(channel))
        if peak > 0 and np.count_nonzero(np.abs(channel) >= peak * (1 - 1e-9)) >= 3:
            warnings.append(f"clipped FID: the {name} channel sits at its maximum for several points "
                            "(receiver overflow); lower the receiver gain and re-acquire")
            break
    end = fid.size - int(math.ceil(delay_points)) - 2
    seg = max(64, end // 16)
    if end > 4 * seg:
        head = np.abs(np.fft.fft(fid[:seg]))
        tail = np.fft.fft(fid[end - seg:end])
        noise = 1.4826 * np.median(np.abs(tail.real - np.median(tail.real))) + 1e-300
        ratio = np.max(np.abs(tail)) / noise
        if ratio > 12 and np.max(np.abs(tail)) > 0.03 * np.max(head):
            warnings.append(f"truncated FID: signal has not decayed at the end of the acquisition "
                            f"({ratio:.0f} x noise in the last {seg} points); expect sinc wiggles, "
                            "use a longer acquisition time or more line broadening")
    return warnings


def _parameter_warnings(raw: RawFid | RawSpectrum) -> list[str]:
    params, warnings = raw.parameters, []
    if params.nucleus and params.nucleus != "1H":
        warnings.append(f"wrong nucleus: the data are {params.nucleus}; confirm interprets 1H spectra")
    d1, aq = params.relaxation_delay_s, params.acquisition_time_s
    if d1 is not None and aq is not None:
        if d1 + aq < 5 * VINYL_T1_S:
            warnings.append(f"repetition time d1 + aq = {d1 + aq:.1f} s is below "
                            f"5 x T1 = {5 * VINYL_T1_S:.0f} s "
                            "(vinyl T1 up to 3 s assumed, common practice): integrals of slowly relaxing "
                            "protons may be low")
    elif isinstance(raw, RawFid):
        warnings.append("relaxation delay unknown: cannot check that integrals are quantitative")
    return warnings


# ---------------------------------------------------------------------------
# baseline, noise, referencing
# ---------------------------------------------------------------------------

def _correct_baseline(intensity: np.ndarray, options: ProcessingOptions) -> np.ndarray:
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


def _finish(raw, ppm, intensity, phases, field_mhz, options, record, warnings) -> ProcessedSpectrum:
    solvent = normalise_solvent_name(options.solvent or raw.parameters.solvent)
    if (options.solvent or raw.parameters.solvent) and solvent is None:
        warnings.append(f"solvent {options.solvent or raw.parameters.solvent!r} not in the solvent table: "
                        "no residual-solvent referencing")
    noise_sd = estimate_noise_sd(intensity)
    ppm, intensity, reference, ref_warnings = _orient_and_reference(
        raw, ppm, intensity, noise_sd, field_mhz, solvent, options)
    warnings += ref_warnings
    metadata = {
        "source_path": raw.source_path, "sha256": raw.sha256, "format": raw.format,
        "acquisition": asdict(raw.parameters), "processing": {**record, "reference": reference},
    }
    spectrum = Spectrum(ppm=ppm, intensity=intensity, field_mhz=field_mhz,
                        nucleus=raw.parameters.nucleus or "1H", solvent=solvent, metadata=metadata)
    peaks = pick_peaks(spectrum, noise_sd=noise_sd, threshold_snr=options.threshold_snr)
    multiplets = group_multiplets(peaks, field_mhz=field_mhz, max_j_hz=options.max_j_hz,
                                  tolerance_hz=options.j_tolerance_hz)
    snr = _snr(peaks, noise_sd, solvent, field_mhz)
    if snr < 100:
        warnings.append(f"SNR {snr:.0f} < 100: integrals uncertain by more than about 1 % "
                        "(Malz and Jancke 2005)")
    return ProcessedSpectrum(spectrum=spectrum, noise_sd=noise_sd, snr=snr, peaks=peaks,
                             multiplets=multiplets, reference=reference, phase_deg=tuple(phases),
                             warnings=tuple(dict.fromkeys(warnings)))


def _masked_ppm(solvent: str | None) -> list[float]:
    masked = [TMS_PPM]
    if solvent:
        signals = solvent_signals(solvent)
        masked.append(signals.residual_ppm)
        if signals.water_ppm is not None:
            masked.append(signals.water_ppm)
    return masked


def _snr(peaks, noise_sd: float, solvent: str | None, field_mhz: float) -> float:
    masked = _masked_ppm(solvent)
    window = max(0.02, 8.0 / field_mhz)
    heights = [p.height for p in peaks if all(abs(p.ppm - m) > window for m in masked)]
    if not heights:
        heights = [p.height for p in peaks] or [0.0]
    return float(max(heights) / (2.0 * noise_sd))


def _find_singlet(ppm, y, noise_sd, field_mhz, expected, window, multiplicity="s") -> float | None:
    """Position of the tallest isolated line near ``expected`` (None if there is none)."""
    in_window = np.flatnonzero(np.abs(ppm - expected) <= window)
    if in_window.size < 3:
        return None
    lo, hi = in_window[0], in_window[-1]
    segment = y[lo:hi + 1]
    idx = find_peak_indices(segment, height=20 * noise_sd, prominence=10 * noise_sd)
    if idx.size == 0:
        return None
    hz_step = abs(ppm[1] - ppm[0]) * field_mhz
    partner_span = (1.2 / hz_step, 20.0 / hz_step) if multiplicity == "s" else (6.0 / hz_step, 20.0 / hz_step)
    candidates = []
    for i in idx:
        others = idx[(np.abs(idx - i) >= partner_span[0]) & (np.abs(idx - i) <= partner_span[1])]
        if np.all(segment[others] < 0.2 * segment[i]):
            candidates.append(i)
    if not candidates:
        return None
    best = lo + max(candidates, key=lambda i: segment[i])
    if best <= 0 or best >= y.size - 1:
        return float(ppm[best])
    a, b, c = y[best - 1], y[best], y[best + 1]
    denom = a - 2 * b + c
    shift = 0.5 * (a - c) / denom if denom < 0 else 0.0
    return float(ppm[best] + shift * (ppm[best + 1] - ppm[best]))


def _orient_and_reference(raw, ppm, y, noise_sd, field_mhz, solvent, options):
    warnings: list[str] = []
    window = options.reference_window_ppm
    residual = solvent_signals(solvent) if solvent else None
    if isinstance(raw, RawFid) and options.orientation != "as-read":
        carrier = raw.parameters.carrier_ppm or 0.0
        mirrored_ppm = (2 * carrier - ppm)[::-1]
        if options.orientation == "mirrored":
            ppm, y = mirrored_ppm, y[::-1].copy()
            warnings.append("spectrum mirrored about the carrier on request")
        elif residual is not None:
            found = _find_singlet(ppm, y, noise_sd, field_mhz, residual.residual_ppm, window,
                                  residual.residual_multiplicity)
            found_mirror = _find_singlet(mirrored_ppm, y[::-1], noise_sd, field_mhz, residual.residual_ppm,
                                         window, residual.residual_multiplicity)
            if found is None and found_mirror is not None:
                ppm, y = mirrored_ppm, y[::-1].copy()
                warnings.append(f"spectrum came out mirrored about the carrier (the residual "
                                f"{residual.residual_label} line is found only after mirroring): mirrored")
            elif found is None:
                warnings.append(f"orientation taken from the {raw.format} convention: no isolated residual "
                                f"{residual.residual_label} line to verify it")
    shift, reference, ref_warnings = _reference_shift(ppm, y, noise_sd, field_mhz, residual, options)
    warnings += ref_warnings
    return ppm + shift, y, reference, warnings


def _reference_shift(ppm, y, noise_sd, field_mhz, residual, options):
    window = options.reference_window_ppm
    if options.reference == "none":
        return 0.0, "as acquired (referencing switched off)", []
    tms = None
    if options.reference in ("auto", "tms"):
        tms = _find_singlet(ppm, y, noise_sd, field_mhz, TMS_PPM, window)
    solvent_pos = None
    if residual is not None and options.reference in ("auto", "solvent", "tms"):
        solvent_pos = _find_singlet(ppm, y, noise_sd, field_mhz, residual.residual_ppm, window,
                                    residual.residual_multiplicity)
    label = f"residual {residual.residual_label} at {residual.residual_ppm:.2f} ppm" if residual else ""
    if tms is not None and options.reference != "solvent":
        consistent = solvent_pos is None or abs((solvent_pos - tms) - residual.residual_ppm) <= 0.03
        if consistent or options.reference == "tms":
            return TMS_PPM - tms, "TMS at 0.00 ppm", []
        note = (f"a singlet near 0 ppm ({tms:.3f} as acquired) disagrees with the residual "
                f"{residual.residual_label} line; it is not TMS (grease?): referenced to the solvent")
        return residual.residual_ppm - solvent_pos, label, [note]
    if solvent_pos is not None:
        return residual.residual_ppm - solvent_pos, label, []
    if options.reference == "tms":
        return 0.0, "as acquired (no TMS line found)", ["TMS requested but no TMS line found: "
                                                         "axis as acquired"]
    reason = ("no solvent recorded" if residual is None
              else f"no isolated {residual.residual_label} line found")
    return 0.0, f"as acquired ({reason})", [f"axis not referenced ({reason}): shifts as acquired, "
                                            "may be off by 0.1 ppm"]

