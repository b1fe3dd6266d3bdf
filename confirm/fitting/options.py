"""Settings of the mixture fit (:class:`FitOptions`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from predictors.errors import InputError

__all__ = ["FitOptions"]


@dataclass(frozen=True)
class FitOptions:
    """Settings of :func:`confirm.fitting.fit_mixture` (the defaults suit crude reaction spectra).

    Attributes
    ----------
    shift_window_sd : float
        A site's shift may move this many predicted standard deviations from its prediction.
    min_shift_window_ppm, max_shift_window_ppm : float
        Bounds on that window whatever the predicted sd.
    j_window_hz : float
        Every predicted coupling may change by at least this much (Hz) ...
    j_window_sd : float
        ... or by this many of its predicted standard deviations when that is more. A coupling
        never changes sign.
    refine_couplings : bool
        Refine the couplings (else they stay as predicted).
    line_width_hz : float or None
        Starting line width (full width at half height); estimated from the spectrum when None.
    max_line_width_hz : float
        Largest line width the fit may reach.
    points_per_width : float
        Smallest number of grid points per line width after binning.
    baseline_degree : int
        Degree of the polynomial baseline in each fitted region.
    mask_solvent : bool
        Leave out residual solvent, water, TMS and common impurity signals.
    fit_phase : bool
        Absorb a residual zero- and first-order phase error with two free columns (the data's own
        dispersion spectrum and that times position).
    detection_sigma : float
        A component counts as present only when its amount exceeds this many standard deviations.
    model_error : float
        Relative error of a modelled multiplet's intensity profile (line shape, couplings) that
        spills onto any multiplet it overlaps; it widens the uncertainty of amounts read from
        overlapped multiplets.
    coarse_blur_hz : float
        Extra Lorentzian width (Hz) of the copy on which the assignment is searched, so that
        couplings a little off still match.
    n_random_starts : int
        Starting points drawn from the shift prior (fixed seed), besides the predicted shifts, the
        best single placements and a matching pursuit.
    n_refined_starts : int
        The best distinct assignments refined in full; near-equal fits are averaged.
    rounds : int
        Re-simulation rounds of the refinement.
    n_workers : int
        Most processes that search and refine side by side (forked, POSIX only; never more than
        the usable cores). The result does not depend on it.
    uncertainty_scale : float
        Extra factor on every standard deviation (peak-list input uses > 1).
    seed : int
        Seed of the random starts (results repeat exactly).
    """

    shift_window_sd: float = 3.0
    min_shift_window_ppm: float = 0.02
    max_shift_window_ppm: float = 0.6
    j_window_hz: float = 1.0
    j_window_sd: float = 2.0
    refine_couplings: bool = True
    line_width_hz: float | None = None
    max_line_width_hz: float = 8.0
    points_per_width: float = 4.0
    baseline_degree: int = 1
    mask_solvent: bool = True
    fit_phase: bool = True
    detection_sigma: float = 3.0
    model_error: float = 0.03
    coarse_blur_hz: float = 2.5
    n_random_starts: int = 6
    n_refined_starts: int = 3
    rounds: int = 3
    n_workers: int = 2
    uncertainty_scale: float = 1.0
    seed: int = 7

    def __post_init__(self) -> None:
        for name in (
            "shift_window_sd",
            "min_shift_window_ppm",
            "max_shift_window_ppm",
            "j_window_hz",
            "points_per_width",
            "detection_sigma",
            "uncertainty_scale",
            "max_line_width_hz",
        ):
            value = getattr(self, name)
            if not np.isfinite(value) or value <= 0:
                raise InputError(f"{name}: must be a positive number, got {value!r}")
        for name in ("j_window_sd", "model_error", "coarse_blur_hz"):
            value = getattr(self, name)
            if not np.isfinite(value) or value < 0:
                raise InputError(f"{name}: must be a number >= 0, got {value!r}")
        if self.line_width_hz is not None and not 0.05 <= self.line_width_hz <= self.max_line_width_hz:
            raise InputError(
                f"line_width_hz: must be in 0.05-{self.max_line_width_hz} Hz, got {self.line_width_hz!r}"
            )
        if self.baseline_degree not in (0, 1, 2, 3):
            raise InputError(f"baseline_degree: must be 0-3, got {self.baseline_degree!r}")
        for name in ("n_workers", "n_refined_starts", "rounds"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < 1:
                raise InputError(f"{name}: must be a whole number >= 1, got {value!r}")
        if isinstance(self.n_random_starts, bool) or not isinstance(self.n_random_starts, int) \
                or self.n_random_starts < 0:
            raise InputError(f"n_random_starts: must be a whole number >= 0, got {self.n_random_starts!r}")
