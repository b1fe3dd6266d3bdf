"""The processing pipeline: raw FID or stored spectrum in, referenced spectrum with peaks out."""

from __future__ import annotations

from dataclasses import asdict

import numpy as np

from confirm.peaks import group_multiplets, pick_peaks
from confirm.processing.baseline import correct_baseline, estimate_noise_sd
from confirm.processing.options import FIELD_TOLERANCE, SNR_DEFINITION, ProcessedSpectrum, ProcessingOptions
from confirm.processing.patterns import view_spectrum
from confirm.processing.referencing import decide_orientation, decide_reference
from confirm.processing.transform import parameter_warnings, transform_fid
from confirm.reading import PeakList, RawFid, RawSpectrum, read_measurement
from confirm.solvents import TMS_PPM, normalise_solvent_name, solvent_signals
from predictors.core import Spectrum
from predictors.errors import InputError

__all__ = ["process_measurement", "load_spectrum", "resolve_field"]

#: Below this SNR the spectrum holds no signal worth interpreting.
_NO_SIGNAL_SNR = 5.0
#: Tallest line over noise sd beyond which a spectrum is not a measurement (the shared real files
#: reach about 2e5; double-precision rounding of noise-free data gives 1e12 and more).
_MAX_DYNAMIC_RANGE = 1e8


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


def resolve_field(recorded_mhz: float | None, given_mhz: float | None, *, force: bool,
                  source: str) -> float | None:
    """The spectrometer frequency to use: the file's, or the one given when the file has none.

    A given value more than :data:`FIELD_TOLERANCE` from the recorded one is an error unless
    ``force`` is set: a wrong field moves every multiplet and picks the wrong isomer.

    Raises
    ------
    InputError
        The two disagree and ``force`` is not set (both values in the message).
    """
    if given_mhz is None:
        return recorded_mhz
    if recorded_mhz and abs(given_mhz - recorded_mhz) > FIELD_TOLERANCE * recorded_mhz and not force:
        raise InputError(f"field_mhz: {given_mhz:g} MHz was given but {source} records "
                         f"{recorded_mhz:.4g} MHz; drop --field-mhz, or add --force-field to use the given "
                         "value")
    return given_mhz


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

    Raises
    ------
    InputError
        A peak list, no known field, or a given field that contradicts the file's.
    """
    options = options or ProcessingOptions()
    if isinstance(raw, PeakList):
        raise InputError(f"raw: {raw.source_path} is a peak list, not a spectrum; "
                         "read it with confirm.reading.read_measurement")
    if not isinstance(raw, (RawFid, RawSpectrum)):
        raise InputError(f"raw: expected RawFid or RawSpectrum, got {type(raw).__name__}")
    field_mhz = resolve_field(raw.parameters.field_mhz, options.field_mhz, force=options.force_field,
                              source=raw.source_path)
    if not field_mhz:
        raise InputError(f"field_mhz: {raw.source_path} does not record the spectrometer frequency; "
                         "pass ProcessingOptions(field_mhz=...) (--field-mhz)")
    warnings = list(parameter_warnings(raw))
    if options.field_mhz is not None and field_mhz != raw.parameters.field_mhz and raw.parameters.field_mhz:
        warnings.append(f"field {field_mhz:g} MHz used instead of the {raw.parameters.field_mhz:.4g} MHz the "
                        "file records (forced)")
    record: dict = {"options": asdict(options), "snr_definition": SNR_DEFINITION}
    if isinstance(raw, RawFid):
        ppm, intensity, phases, fid_warnings = transform_fid(raw, field_mhz, options, record)
        warnings += fid_warnings
    else:
        ppm, intensity, phases = np.array(raw.ppm), np.array(raw.intensity), (0.0, 0.0)
        record["stored_notes"] = list(raw.notes)
    intensity = correct_baseline(intensity, options)
    return _finish(raw, ppm, intensity, phases, field_mhz, options, record, warnings)


def _finish(raw, ppm, intensity, phases, field_mhz, options, record, warnings) -> ProcessedSpectrum:
    given = options.solvent or raw.parameters.solvent
    header = normalise_solvent_name(given)
    if given and header is None and str(given).strip().lower() not in ("neat", "none", "n/a", "unknown"):
        warnings.append(f"solvent {given!r} not in the solvent table: the data decide the residual line")
    noise_sd = estimate_noise_sd(intensity)
    dynamic_range = float(np.max(np.abs(intensity))) / noise_sd
    if dynamic_range > _MAX_DYNAMIC_RANGE:
        warnings.append(f"the tallest line is {dynamic_range:.1e} times the noise (measured spectra reach "
                        "about 1e5): simulated or noise-free data? SNR, detection limits and uncertainties "
                        "are not physical")
    view = view_spectrum(ppm, intensity, noise_sd, field_mhz)
    temperature = raw.parameters.temperature_k
    orientation_text = "stored spectrum: axis as stored"
    if isinstance(raw, RawFid):
        carrier = raw.parameters.carrier_ppm or 0.0
        orientation = decide_orientation(view, carrier_ppm=carrier, basis=raw.orientation_basis,
                                         solvent=header, window_ppm=options.reference_window_ppm,
                                         temperature_k=temperature, request=options.orientation)
        warnings += orientation.warnings
        orientation_text = orientation.text
        record["orientation"] = {"text": orientation.text, **orientation.record}
        if orientation.mirrored:
            ppm, intensity = (2.0 * carrier - ppm)[::-1].copy(), intensity[::-1].copy()
            view = view_spectrum(ppm, intensity, noise_sd, field_mhz)
    reference = decide_reference(view, header_solvent=header, request=options.reference,
                                 window_ppm=options.reference_window_ppm, temperature_k=temperature)
    warnings += reference.warnings
    ppm = ppm + reference.shift_ppm
    solvent = reference.solvent
    record.update(reference=reference.label, reference_source=reference.source,
                  reference_shift_ppm=reference.shift_ppm, referencing=reference.record)
    metadata = {
        "source_path": raw.source_path, "sha256": raw.sha256, "format": raw.format,
        "acquisition": asdict(raw.parameters), "processing": record, "reading_notes": list(raw.notes),
    }
    spectrum = Spectrum(ppm=ppm, intensity=intensity, field_mhz=field_mhz,
                        nucleus=raw.parameters.nucleus or "1H", solvent=solvent, metadata=metadata)
    peaks = pick_peaks(spectrum, noise_sd=noise_sd, threshold_snr=options.threshold_snr)
    multiplets = group_multiplets(peaks, field_mhz=field_mhz, max_j_hz=options.max_j_hz,
                                  tolerance_hz=options.j_tolerance_hz)
    snr = _snr(peaks, noise_sd, solvent, field_mhz)
    if snr < _NO_SIGNAL_SNR:
        warnings.append(f"no signal: the tallest line is {2 * snr:.1f} noise standard deviations high; "
                        "this spectrum cannot show which product formed")
    elif snr < 100:
        warnings.append(f"SNR {snr:.0f} < 100: integrals uncertain by more than about 1 % "
                        "(Malz and Jancke 2005)")
    return ProcessedSpectrum(spectrum=spectrum, noise_sd=noise_sd, snr=snr, peaks=peaks,
                             multiplets=multiplets, reference=reference.label, phase_deg=tuple(phases),
                             warnings=tuple(dict.fromkeys(warnings)), reference_source=reference.source,
                             orientation=orientation_text)


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
