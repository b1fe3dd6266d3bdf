"""Input checks shared by the spin simulator's public functions."""

from __future__ import annotations

import math

import numpy as np

from predictors.errors import InputError

#: Spectrometer frequencies the simulator accepts (1H, MHz).
FIELD_RANGE_MHZ = (40.0, 1200.0)
_MAX_SPINS_ALLOWED = 14


def _check_field(field_mhz) -> float:
    low, high = FIELD_RANGE_MHZ
    try:
        value = float(field_mhz)
    except (TypeError, ValueError):
        raise InputError(f"field_mhz: expected a number, got {field_mhz!r}") from None
    if not math.isfinite(value) or not low <= value <= high:
        raise InputError(f"field_mhz: {field_mhz!r} is outside the allowed {low:g}-{high:g} MHz")
    return value


def _check_arrays(shifts_ppm, j_hz, n_protons) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    try:
        shifts = np.asarray(shifts_ppm, dtype=float)
        j = np.asarray(j_hz, dtype=float)
        n_raw = np.asarray(n_protons, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"shifts_ppm, j_hz, n_protons: expected numeric arrays ({exc})") from None
    if shifts.ndim != 1 or shifts.size == 0:
        raise InputError(f"shifts_ppm: expected a non-empty 1-D array, got shape {shifts.shape}")
    n_sites = shifts.size
    if not np.all(np.isfinite(shifts)):
        raise InputError(f"shifts_ppm: contains NaN or infinite values: {shifts.tolist()}")
    if j.shape != (n_sites, n_sites):
        raise InputError(f"j_hz: expected shape ({n_sites}, {n_sites}) for {n_sites} sites, got {j.shape}")
    if not np.all(np.isfinite(j)):
        raise InputError("j_hz: contains NaN or infinite values")
    asym = np.abs(j - j.T)
    if np.any(asym > 1e-6 * (1.0 + np.abs(j))):
        a, b = np.unravel_index(np.argmax(asym), asym.shape)
        raise InputError(
            f"j_hz: coupling matrix must be symmetric; j_hz[{a},{b}]={j[a, b]!r} "
            f"but j_hz[{b},{a}]={j[b, a]!r}"
        )
    if n_raw.shape != (n_sites,):
        raise InputError(f"n_protons: expected {n_sites} values (one per site), got shape {n_raw.shape}")
    if not np.all(np.isfinite(n_raw)) or np.any(n_raw < 1) or np.any(n_raw != np.round(n_raw)):
        raise InputError(f"n_protons: expected whole numbers >= 1, got {n_raw.tolist()}")
    j = 0.5 * (j + j.T)
    np.fill_diagonal(j, 0.0)
    return shifts, j, n_raw.astype(int)


def _check_options(max_cluster_spins, cluster_ratio) -> tuple[int, float]:
    if (isinstance(max_cluster_spins, bool) or not isinstance(max_cluster_spins, (int, np.integer))
            or not 1 <= max_cluster_spins <= _MAX_SPINS_ALLOWED):
        raise InputError(
            f"max_cluster_spins: expected a whole number from 1 to {_MAX_SPINS_ALLOWED}, "
            f"got {max_cluster_spins!r}"
        )
    return int(max_cluster_spins), positive_number(cluster_ratio, "cluster_ratio")


def positive_number(value, name: str) -> float:
    """``value`` as a finite float > 0, or an InputError naming ``name``."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected a number, got {value!r}") from None
    if not math.isfinite(number) or number <= 0:
        raise InputError(f"{name}: expected a finite number > 0, got {value!r}")
    return number
