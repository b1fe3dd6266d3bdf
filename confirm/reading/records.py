"""The frozen records every reader returns: raw FIDs, stored spectra and peak lists."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from predictors.errors import FileFormatError, InputError

__all__ = ["AcquisitionParameters", "RawSpectrum", "RawFid", "PeakListEntry", "PeakList"]


@dataclass(frozen=True)
class AcquisitionParameters:
    """What the instrument recorded about the acquisition (None where unknown).

    Attributes
    ----------
    field_mhz : float or None
        Observe (spectrometer) frequency of the nucleus, MHz.
    nucleus : str or None
        e.g. ``"1H"``.
    solvent : str or None
        Canonical solvent name when recognised, else the label as written.
    spectral_width_hz : float or None
    carrier_ppm : float or None
        Chemical shift of the transmitter frequency on the acquired scale.
    n_scans : int or None
    receiver_gain : float or None
    relaxation_delay_s : float or None
    acquisition_time_s : float or None
    temperature_k : float or None
    pulse_program : str or None
    n_dimensions : int or None
    decoupled_nuclei : tuple of str
        Heteronuclei (``"19F"``, ``"31P"``) the file says were decoupled during acquisition
        (:func:`confirm.reading.decoupling.decoupled_nuclei`); empty when none or unknown.
    """

    field_mhz: float | None = None
    nucleus: str | None = None
    solvent: str | None = None
    spectral_width_hz: float | None = None
    carrier_ppm: float | None = None
    n_scans: int | None = None
    receiver_gain: float | None = None
    relaxation_delay_s: float | None = None
    acquisition_time_s: float | None = None
    temperature_k: float | None = None
    pulse_program: str | None = None
    n_dimensions: int | None = None
    decoupled_nuclei: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class RawSpectrum:
    """A processed real spectrum as stored by the instrument or another program.

    Attributes
    ----------
    ppm : ndarray, shape (n,)
        Strictly decreasing chemical-shift axis as stored (not re-referenced).
    intensity : ndarray, shape (n,)
    parameters : AcquisitionParameters
    source_path : str
    sha256 : str
    format : str
        ``"jcamp-spectrum"``, ``"fid-directory-processed"`` or ``"csv-spectrum"``.
    notes : tuple of str
        What the file says about its own processing (phases, referencing) and
        reading remarks (e.g. which block of a compound JCAMP-DX file was used).
    """

    ppm: np.ndarray
    intensity: np.ndarray
    parameters: AcquisitionParameters
    source_path: str
    sha256: str
    format: str
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        ppm = readonly_array(self.ppm, float)
        inten = readonly_array(self.intensity, float)
        if ppm.ndim != 1 or ppm.shape != inten.shape or ppm.size < 2:
            raise FileFormatError(f"{self.source_path}: spectrum axis and data differ in length or are empty")
        if not np.all(np.isfinite(inten)):
            raise FileFormatError(f"{self.source_path}: spectrum contains NaN or infinite values")
        if ppm[0] < ppm[-1]:
            ppm, inten = readonly_array(ppm[::-1], float), readonly_array(inten[::-1], float)
        object.__setattr__(self, "ppm", ppm)
        object.__setattr__(self, "intensity", inten)
        object.__setattr__(self, "notes", tuple(self.notes))


@dataclass(frozen=True, eq=False)
class RawFid:
    """A complex 1D free induction decay with what is needed to transform it.

    Attributes
    ----------
    fid : ndarray of complex, shape (n,)
        Time-domain points as stored (digital-filter delay still in place).
    dwell_s : float
        Time between complex points (1 / spectral width).
    group_delay_points : float
        Digital-filter group delay in points (0 for analogue filtering).
    frequency_sign : int
        +1 when a line above the carrier (higher ppm) rotates as
        ``exp(+2 pi i f t)`` in ``fid``; -1 for the opposite convention of the
        imaginary channel. Processing uses it to orient the spectrum.
    parameters : AcquisitionParameters
    source_path : str
    sha256 : str
    format : str
        ``"fid-directory-acqus"``, ``"fid-directory-procpar"`` or ``"jcamp-fid"``.
    processed : RawSpectrum or None
        The processed spectrum stored beside the FID, when present.
    reference_mhz : float or None
        Frequency of 0 ppm on the acquired scale, when the file records it.
    notes : tuple of str
        Reading remarks (e.g. where the group delay came from).
    orientation_basis : str
        What in the file (format convention, flags, page labels) set
        ``frequency_sign``; processing reports it beside its own check.
    """

    fid: np.ndarray
    dwell_s: float
    group_delay_points: float
    frequency_sign: int
    parameters: AcquisitionParameters
    source_path: str
    sha256: str
    format: str
    processed: RawSpectrum | None = None
    reference_mhz: float | None = None
    notes: tuple[str, ...] = ()
    orientation_basis: str = "format convention"

    def __post_init__(self) -> None:
        fid = readonly_array(self.fid, complex)
        if fid.ndim != 1:
            raise FileFormatError(f"{self.source_path}: expected 1D FID data, got shape {fid.shape}")
        if fid.size < 16:
            raise FileFormatError(f"{self.source_path}: FID has only {fid.size} points (truncated or empty)")
        if not np.all(np.isfinite(fid)):
            raise FileFormatError(f"{self.source_path}: FID contains NaN or infinite values")
        if not (math.isfinite(self.dwell_s) and self.dwell_s > 0):
            raise FileFormatError(f"{self.source_path}: dwell time must be > 0 s, got {self.dwell_s!r}")
        if self.frequency_sign not in (1, -1):
            raise InputError(f"frequency_sign: expected +1 or -1, got {self.frequency_sign!r}")
        object.__setattr__(self, "fid", fid)
        object.__setattr__(self, "notes", tuple(self.notes))

    @property
    def spectral_width_hz(self) -> float:
        """Spectral width, 1 / dwell time."""
        return 1.0 / self.dwell_s


@dataclass(frozen=True)
class PeakListEntry:
    """One row of a peak list (None where the file has no such column)."""

    ppm: float
    intensity: float | None = None
    integral: float | None = None
    width_hz: float | None = None
    multiplicity: str | None = None
    j_hz: tuple[float, ...] = ()


@dataclass(frozen=True)
class PeakList:
    """A table of peaks read from a text file.

    Attributes
    ----------
    entries : tuple of PeakListEntry
        Sorted by decreasing ppm.
    parameters : AcquisitionParameters
        Usually empty: plain tables carry no acquisition record.
    source_path, sha256, format : str
        ``format`` is ``"peak-list"``.
    columns : tuple of str
        Column meaning as understood (``ppm``, ``intensity``, ``integral``...).
    """

    entries: tuple[PeakListEntry, ...]
    parameters: AcquisitionParameters
    source_path: str
    sha256: str
    format: str = "peak-list"
    columns: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default=())


def readonly_array(values, dtype) -> np.ndarray:
    """A read-only copy of ``values`` as ``dtype``."""
    arr = np.array(values, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr
