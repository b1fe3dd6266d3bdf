"""Physical plausibility of what a file records: field, spectral width, axis and signal size.

Every reader calls these where its data begin, so a file whose numbers cannot come from a 1H
measurement is refused with one line naming the value and the range allowed, instead of giving
peaks at 500,000 ppm or an SNR of 10^7.
"""

from __future__ import annotations

import math

import numpy as np

from predictors.errors import FileFormatError

__all__ = [
    "PROTON_FIELD_MHZ",
    "SPECTRAL_WIDTH_PPM",
    "check_field",
    "check_spectral_width",
    "check_axis_units",
    "check_fid_magnitude",
]

#: Observe frequencies of 1H that exist (benchtop magnets to the largest high-field ones), MHz.
PROTON_FIELD_MHZ = (40.0, 1200.0)
#: Spectral widths a 1H acquisition or stored 1H spectrum can have, ppm.
SPECTRAL_WIDTH_PPM = (1.0, 100.0)
#: |FID| values outside this range are not a digitised signal (denormal or overflowing numbers).
_FID_MAGNITUDE = (1e-30, 1e30)


def _is_proton(nucleus: str | None) -> bool:
    return nucleus is None or nucleus.upper() in ("1H", "H1", "H", "PROTON")


def check_field(source: str, field_mhz: float | None, nucleus: str | None, *, label: str) -> None:
    """Refuse an observe frequency outside 40-1200 MHz for 1H (any nucleus: finite and > 0).

    Parameters
    ----------
    source : str
        File named in the message.
    field_mhz : float or None
        None passes (unknown).
    nucleus : str or None
    label : str
        The parameter as the file names it (``SFO1``, ``.OBSERVE FREQUENCY``...).
    """
    if field_mhz is None:
        return
    if not (math.isfinite(field_mhz) and field_mhz > 0):
        raise FileFormatError(f"{source}: {label} = {field_mhz!r} is not a frequency (> 0 MHz)")
    low, high = PROTON_FIELD_MHZ
    if _is_proton(nucleus) and not low <= field_mhz <= high:
        raise FileFormatError(f"{source}: {label} = {field_mhz:g} MHz is outside {low:g}-{high:g} MHz, "
                              "the range of 1H spectrometers")
    if field_mhz > high:
        raise FileFormatError(f"{source}: {label} = {field_mhz:g} MHz is above {high:g} MHz")


def check_spectral_width(source: str, width_hz: float | None, field_mhz: float | None, *, label: str) -> None:
    """Refuse a spectral width outside 1-100 ppm (at the recorded field)."""
    if width_hz is None:
        return
    if not (math.isfinite(width_hz) and width_hz > 0):
        raise FileFormatError(f"{source}: {label} = {width_hz!r} is not a spectral width (> 0 Hz)")
    if not field_mhz:
        return
    width_ppm = width_hz / field_mhz
    low, high = SPECTRAL_WIDTH_PPM
    if not low <= width_ppm <= high:
        raise FileFormatError(f"{source}: {label} = {width_hz:g} Hz is {width_ppm:.3g} ppm at "
                              f"{field_mhz:g} MHz; a 1H spectral width is {low:g}-{high:g} ppm")


def check_axis_units(source: str, first: float, last: float, units: str, field_mhz: float | None) -> None:
    """Refuse an axis whose values contradict its units (Hz values labelled PPM and the reverse).

    Parameters
    ----------
    first, last : float
        Axis end values as written.
    units : str
        ``"PPM"`` or ``"HZ"`` (upper case).
    field_mhz : float or None
        Needed to judge a Hz axis.
    """
    span = abs(last - first)
    low, high = SPECTRAL_WIDTH_PPM
    if units == "PPM":
        if span > high or max(abs(first), abs(last)) > 1000:
            raise FileFormatError(f"{source}: XUNITS is PPM but the axis runs from {first:g} to {last:g} "
                                  f"({span:.4g} wide; a 1H axis spans at most {high:g} ppm): Hz values "
                                  "labelled PPM?")
    elif units == "HZ" and field_mhz and span / field_mhz < low:
        raise FileFormatError(f"{source}: XUNITS is HZ but the axis runs from {first:g} to {last:g} Hz, "
                              f"{span / field_mhz:.3g} ppm at {field_mhz:g} MHz: ppm values labelled HZ?")


def check_fid_magnitude(source: str, fid: np.ndarray) -> None:
    """Refuse a FID whose values are not a digitised signal (all zero, denormal or overflowing)."""
    peak = float(np.max(np.abs(fid))) if fid.size else 0.0
    low, high = _FID_MAGNITUDE
    if peak == 0.0:
        raise FileFormatError(f"{source}: the FID is all zeros (no signal was recorded)")
    if not low <= peak <= high:
        raise FileFormatError(f"{source}: the largest FID value is {peak:.3g}; values outside "
                              f"{low:g}-{high:g} are not a digitised signal")
