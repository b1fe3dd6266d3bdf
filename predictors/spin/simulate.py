"""Public entry points of the spin simulation: line lists from arrays or spin systems."""

from __future__ import annotations

from predictors.core import LineList, SpinSystem
from predictors.errors import InputError
from predictors.spin._checks import _check_arrays, _check_field, _check_options
from predictors.spin._run import run

# Clusters kept by simulate_arrays_reusing before its memo is emptied.
_MEMO_LIMIT = 4096



def simulate_arrays(shifts_ppm, j_hz, n_protons, *, field_mhz: float, max_cluster_spins: int = 12,
                    cluster_ratio: float = 0.05) -> LineList:
    """Simulate the 1H spectrum lines of a spin system given as arrays.

    Parameters
    ----------
    shifts_ppm : array_like, shape (n_sites,)
        Chemical shift of each site.
    j_hz : array_like, shape (n_sites, n_sites)
        Symmetric signed couplings between sites in Hz; the diagonal is
        ignored (couplings inside an equivalent group do not show).
    n_protons : array_like of int, shape (n_sites,)
        Protons per site; each site is a magnetically equivalent group.
    field_mhz : float
        1H spectrometer frequency, 40-1200 MHz.
    max_cluster_spins : int, optional
        Most protons simulated together exactly (1-14, default 12).
    cluster_ratio : float, optional
        Couplings with ``|J| <= cluster_ratio * |delta nu|`` (see
        :func:`plan_clusters`) may be cut and are then applied to second
        order; the error left is third order in the ratio for positions and
        second order for intensities (default 0.05: within 1 % of the peak
        height against the full matrix on alkenyl chains at 60-400 MHz).

    Returns
    -------
    LineList
        Lines in ppm; intensities sum to ``sum(n_protons)``; ``warnings``
        names any strong coupling cut because of ``max_cluster_spins``.

    Raises
    ------
    InputError
        Non-symmetric or non-finite couplings, bad shifts, proton counts,
        field or options.
    """
    return _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, None)


def simulate_arrays_reusing(shifts_ppm, j_hz, n_protons, *, field_mhz: float, memo: dict,
                            max_cluster_spins: int = 12, cluster_ratio: float = 0.05) -> LineList:
    """:func:`simulate_arrays`, reusing the clusters of earlier calls that shared ``memo``.

    For callers that simulate one molecule many times with a few values changed (a coupling
    nudged to take a derivative): a cluster whose sites, shifts, couplings and proton counts,
    and those of the clusters it is coupled to, are bitwise equal to an earlier one's is not
    diagonalised again, so the lines are identical to :func:`simulate_arrays`'.

    Parameters
    ----------
    shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio
        As for :func:`simulate_arrays`.
    memo : dict
        Owned by the caller; start with an empty dict and pass the same one to related calls.
        It is emptied when it grows past a few thousand clusters.

    Returns
    -------
    LineList
    """
    if not isinstance(memo, dict):
        raise InputError(f"memo: expected a dict, got {type(memo).__name__}")
    if len(memo) > _MEMO_LIMIT:
        memo.clear()
    return _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, memo)


def _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, memo) -> LineList:
    field = _check_field(field_mhz)
    shifts, j, n = _check_arrays(shifts_ppm, j_hz, n_protons)
    max_spins, ratio = _check_options(max_cluster_spins, cluster_ratio)
    result = run(shifts * field, j, n, max_spins, ratio, memo=memo)
    return LineList(ppm=result.freq / field, intensity=result.inten, field_mhz=field,
                    site_index=result.site, warnings=result.plan.warnings)


def simulate_lines(system: SpinSystem, *, field_mhz: float, **options) -> LineList:
    """Simulate the lines of a :class:`SpinSystem`.

    Every site is simulated as one magnetically equivalent group, also when
    ``magnetically_equivalent`` is False: a site carries one coupling to each
    other site, so its protons couple identically by construction.

    Parameters
    ----------
    system : SpinSystem
    field_mhz : float
        1H spectrometer frequency, 40-1200 MHz.
    **options
        ``max_cluster_spins`` and ``cluster_ratio`` of :func:`simulate_arrays`.

    Returns
    -------
    LineList
    """
    if not isinstance(system, SpinSystem):
        raise InputError(f"system: expected a SpinSystem, got {type(system).__name__}")
    unknown = set(options) - {"max_cluster_spins", "cluster_ratio"}
    if unknown:
        raise InputError(
            f"options: unknown {sorted(unknown)}; allowed: max_cluster_spins, cluster_ratio"
        )
    if not system.sites:
        raise InputError("system: the spin system has no proton sites")
    return simulate_arrays(system.shifts_ppm, system.j_hz, system.n_protons, field_mhz=field_mhz, **options)
