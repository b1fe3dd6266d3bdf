"""Public entry points of the spin simulation: line lists from arrays or spin systems."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from predictors.core import LineList, SpinSystem
from predictors.errors import InputError
from predictors.spin._checks import _check_arrays, _check_field, _check_options
from predictors.spin._run import run
from predictors.spin.hetero import plan_x, pool_state_lines, split_lines_by_x
from predictors.spin.units import spin_units

# Clusters kept by simulate_arrays_reusing before its memo is emptied.
_MEMO_LIMIT = 4096


@dataclass(frozen=True, eq=False)
class LineDerivatives:
    """Lines of a spin system with the derivatives of every line frequency.

    Unpacks as ``lines, dfreq_dj_hz, dfreq_dshift_hz``.

    Attributes
    ----------
    lines : LineList
        Exactly the lines :func:`simulate_arrays` gives for the same input.
    pairs : ndarray of int, shape (n_pairs, 2)
        The site pairs of the coupling derivatives, as given.
    dfreq_dj_hz : ndarray, shape (n_lines, n_pairs)
        d(line frequency in Hz) / d(J of the pair in Hz).
    dfreq_dshift_hz : ndarray, shape (n_lines, n_sites)
        d(line frequency in Hz) / d(site frequency in Hz); the line moves by this times
        ``field_mhz`` Hz per ppm of the site's shift. Each row sums to 1 (a common shift of
        all sites moves every line by as much).
    """

    lines: LineList
    pairs: np.ndarray
    dfreq_dj_hz: np.ndarray
    dfreq_dshift_hz: np.ndarray

    def __post_init__(self) -> None:
        for name in ("pairs", "dfreq_dj_hz", "dfreq_dshift_hz"):
            value = np.array(getattr(self, name))
            value.flags.writeable = False
            object.__setattr__(self, name, value)

    def __iter__(self):
        return iter((self.lines, self.dfreq_dj_hz, self.dfreq_dshift_hz))


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


def simulate_with_derivatives(shifts_ppm, j_hz, n_protons, *, field_mhz: float, pairs,
                              memo: dict | None = None, max_cluster_spins: int = 12,
                              cluster_ratio: float = 0.05) -> LineDerivatives:
    """:func:`simulate_arrays` plus the derivative of every line frequency by couplings and shifts.

    The derivatives are first-order perturbation theory (Hellmann-Feynman): for a line between
    eigenstates u and l of a cluster, ``d nu / d J_ab = <u|F_a.F_b|u> - <l|F_a.F_b|l>`` and
    ``d nu / d nu_a = <u|Fz_a|u> - <l|Fz_a|l>``, exact for the simulated (exact) clusters. A
    coupling across a cluster cut acts through the cut's terms (first order ``J <Fz_h>`` plus
    the second-order terms in ``J / delta nu``), differentiated exactly, with the neighbour's
    own expectation values held fixed; for lines split first order by a neighbour, the change of
    the split with the cluster's own couplings is left out. Both omissions are first order in
    the cut coupling times the mixing of the states they hold fixed.

    Merged lines: lines pooled into one (same site, within 1e-4 Hz, or within 0.005 Hz after a
    neighbour's split) get the intensity-weighted mean derivative, the derivative of their
    centroid for fixed intensities; lines from exactly degenerate eigenstates get the
    derivative of the centroid of all the lines between the two degenerate levels, which does
    not depend on the basis chosen. Two sites with equal shifts and equal couplings to all
    others (one magnetically equivalent group given as two sites) get equal shares of the
    group's derivatives, and the coupling between them has derivative 0; a coupling to a site
    in a cluster not coupled to the line's cluster has derivative 0 (the centroid does not move).

    Parameters
    ----------
    shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio
        As for :func:`simulate_arrays`.
    pairs : sequence of (int, int)
        Site pairs (a, b), a != b, whose coupling derivatives are wanted (in that order; the
        coupling may be zero).
    memo : dict, optional
        As for :func:`simulate_arrays_reusing` (may be shared with it).

    Returns
    -------
    LineDerivatives
        ``lines`` equal to :func:`simulate_arrays`' (same order), ``dfreq_dj_hz`` (n_lines,
        n_pairs) and ``dfreq_dshift_hz`` (n_lines, n_sites), Hz per Hz.

    Raises
    ------
    InputError
        As :func:`simulate_arrays`, and for pairs that are not two different site indices.
    """
    field = _check_field(field_mhz)
    shifts, j, n = _check_arrays(shifts_ppm, j_hz, n_protons)
    max_spins, ratio = _check_options(max_cluster_spins, cluster_ratio)
    wanted = _check_pairs(pairs, len(n))
    if memo is not None:
        if not isinstance(memo, dict):
            raise InputError(f"memo: expected a dict or None, got {type(memo).__name__}")
        if len(memo) > _MEMO_LIMIT:
            memo.clear()
    result = run(shifts * field, j, n, max_spins, ratio, memo=memo, pairs=[tuple(p) for p in wanted.tolist()])
    lines = LineList(ppm=result.freq / field, intensity=result.inten, field_mhz=field,
                     site_index=result.site, warnings=result.plan.warnings)
    return LineDerivatives(lines, wanted, result.dj, result.dshift)


def _check_pairs(pairs, n_sites: int) -> np.ndarray:
    try:
        raw = np.asarray(pairs if len(pairs) else np.zeros((0, 2)), dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"pairs: expected a sequence of (site, site) index pairs, got {pairs!r}") from None
    if raw.ndim != 2 or raw.shape[1] != 2:
        raise InputError(f"pairs: expected a sequence of (site, site) index pairs, got shape {raw.shape}")
    if not np.all(np.isfinite(raw)) or np.any(raw != np.round(raw)):
        raise InputError(f"pairs: site indices must be whole numbers, got {raw.tolist()}")
    out = raw.astype(int)
    if np.any(out < 0) or np.any(out >= n_sites):
        raise InputError(f"pairs: site indices must be 0 to {n_sites - 1}, got {out.tolist()}")
    same = out[:, 0] == out[:, 1]
    if np.any(same):
        raise InputError(f"pairs: a pair needs two different sites, got {out[same][0].tolist()}")
    return out


def _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, memo) -> LineList:
    field = _check_field(field_mhz)
    shifts, j, n = _check_arrays(shifts_ppm, j_hz, n_protons)
    max_spins, ratio = _check_options(max_cluster_spins, cluster_ratio)
    result = run(shifts * field, j, n, max_spins, ratio, memo=memo)
    return LineList(ppm=result.freq / field, intensity=result.inten, field_mhz=field,
                    site_index=result.site, warnings=result.plan.warnings)


def simulate_lines(system: SpinSystem, *, field_mhz: float, **options) -> LineList:
    """Simulate the lines of a :class:`SpinSystem`.

    A magnetically equivalent site is simulated as one composite spin; a site
    whose protons are not (``magnetically_equivalent`` False, with the proton
    couplings ``proton_j_hz`` known) proton by proton, its spins at the site's
    shift (:func:`predictors.spin.units.spin_units`). Lines are reported by site.
    Couplings to 19F or 31P (``system.x_couplings``) enter by simulating the protons once per
    spin state of the X group where every site couples to the same group (exact), and as
    first-order splittings of the finished lines otherwise (:mod:`predictors.spin.hetero`).

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
    units = spin_units(system)
    plan = plan_x(system.x_couplings, system.smiles)
    field = _check_field(field_mhz)
    parts = []
    for weight, offsets in zip(plan.weights, plan.offsets_hz, strict=True):
        shifts = system.shifts_ppm + offsets / field
        lines = simulate_arrays(shifts[units.owner], units.j_hz, units.n_h, field_mhz=field, **options)
        parts.append((lines, weight))
    if len(parts) == 1:
        lines = parts[0][0]
        site = units.owner[lines.site_index]
        lines = LineList(ppm=lines.ppm, intensity=lines.intensity, field_mhz=field, site_index=site,
                         warnings=lines.warnings)
    else:
        freq = np.concatenate([p.ppm * field for p, _ in parts])
        inten = np.concatenate([p.intensity * w for p, w in parts])
        site = np.concatenate([units.owner[p.site_index] for p, _ in parts])
        freq, inten, site, _ = pool_state_lines(freq, inten, site)
        order = np.argsort(-freq, kind="stable")
        warnings = tuple(dict.fromkeys(w for p, _ in parts for w in p.warnings))
        lines = LineList(ppm=freq[order] / field, intensity=inten[order], field_mhz=field,
                         site_index=site[order], warnings=warnings)
    return split_lines_by_x(lines, plan.first_order)
