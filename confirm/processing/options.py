"""Processing options (every parameter of the pipeline) and the processed result."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from confirm.peaks import Multiplet, Peak
from predictors.core import Spectrum
from predictors.errors import InputError

__all__ = ["ProcessingOptions", "ProcessedSpectrum", "SNR_DEFINITION", "VINYL_T1_S", "FIELD_TOLERANCE"]

SNR_DEFINITION = ("height of the tallest line other than solvent, water and TMS divided by 2 x noise_sd; "
                  "noise_sd = lower quartile of the standard deviations of 64 blocks of the "
                  "baseline-corrected spectrum, each detrended")

#: T1 assumed for vinyl protons when judging the repetition time (common practice).
VINYL_T1_S = 3.0
#: A --field-mhz this far (relative) from the file's recorded field contradicts it.
FIELD_TOLERANCE = 0.02
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
        Supplies the spectrometer frequency when the file lacks it. A value more than
        :data:`FIELD_TOLERANCE` (2 %) from the field the file records is an error unless
        ``force_field`` is set.
    force_field : bool
        Use ``field_mhz`` even where it contradicts the file.
    orientation : str
        ``"auto"`` (what the file's metadata say; the data may confirm it, or overrule it only
        with several independent lines of evidence), ``"as-read"`` (the metadata, unchecked)
        or ``"mirrored"`` (the opposite).
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
    force_field: bool = False
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
            _check_number("field_mhz", self.field_mhz, low=40.0, high=1200.0)
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
        How the axis was referenced, e.g. ``"residual CHCl3 at 7.26 ppm"``,
        ``"TMS at 0.00 ppm"`` or ``"as acquired (...)"``.
    phase_deg : (float, float)
        Zero-order phase at the carrier and first-order phase across the
        spectral width that were applied (0, 0 for stored spectra).
    warnings : tuple of str
    reference_source : str
        What the axis rests on: ``"tms"``, ``"solvent"`` or ``"none"`` (as acquired).
    orientation : str
        How the orientation was decided (the file's metadata, and what in the data
        confirmed or contradicted it).
    """

    spectrum: Spectrum
    noise_sd: float
    snr: float
    peaks: tuple[Peak, ...]
    multiplets: tuple[Multiplet, ...]
    reference: str
    phase_deg: tuple[float, float]
    warnings: tuple[str, ...] = ()
    reference_source: str = "none"
    orientation: str = ""
