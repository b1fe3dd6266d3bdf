"""FID to spectrum: orientation of the imaginary channel, group delay, apodization, FFT, phasing.

Also the warnings that only the FID can give (clipped, truncated) and those from the
acquisition parameters (wrong nucleus, short repetition time, a FID whose dynamic range no
receiver can have).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import minimize

from confirm.processing.options import VINYL_T1_S, ProcessingOptions
from confirm.reading import RawFid, RawSpectrum

__all__ = ["transform_fid", "apply_phase", "apply_phase_at", "find_phase", "parameter_warnings"]


def transform_fid(raw: RawFid, field_mhz: float, options: ProcessingOptions, record: dict):
    """FID to phased real spectrum: (ppm decreasing, intensity, phases, warnings).

    The imaginary channel is taken with ``raw.frequency_sign`` (what the file's metadata say);
    ``record`` receives what was done.
    """
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


def parameter_warnings(raw: RawFid | RawSpectrum) -> list[str]:
    """Warnings from the acquisition parameters: wrong nucleus, too short a repetition time."""
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
