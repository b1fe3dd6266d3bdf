"""How a spin system is cut into clusters that are simulated exactly."""

from __future__ import annotations

import functools
import itertools
from dataclasses import dataclass

import numpy as np

from predictors.spin._basis import _group_spins
from predictors.spin._checks import _check_arrays, _check_field, _check_options

# Weak couplings (|J / dnu| above the first value) still join clusters while the
# joined cluster costs at most the second (sum of block sizes cubed; 8 distinct
# protons cost 7.4e5, 9 cost 5.3e6).
_WEAK_JOIN_RATIO = 2e-3
_WEAK_JOIN_COST = 1e6


@dataclass(frozen=True)
class ClusterPlan:
    """How a spin system is cut into exactly simulated clusters.

    Attributes
    ----------
    clusters : tuple of tuple of int
        Site indices of each cluster, every site in exactly one cluster.
    cut_strong : tuple of tuple of int
        Pairs of sites joined by a strong coupling that had to be cut to
        respect ``max_cluster_spins`` (treated first order, less exact).
    warnings : tuple of str
        One message per cut strong coupling.
    """

    clusters: tuple[tuple[int, ...], ...]
    cut_strong: tuple[tuple[int, int], ...]
    warnings: tuple[str, ...]


def _coupling_strength(nu_hz: np.ndarray, j: np.ndarray, ratio: float) -> np.ndarray:
    """``|J| / |delta nu|`` of every coupled pair, raised where a cut would mislead.

    Besides the direct ratio, a coupling of g to h is as strong as
    ``|J_gh - J_gh'| / sqrt(dnu_hh'^2 + J_hh'^2)`` for every h' strongly
    coupled to h: the state of g then changes how h and h' mix (the ABX
    case), which no treatment across a cut reproduces.
    """
    dnu = np.abs(nu_hz[:, None] - nu_hz[None, :])
    with np.errstate(divide="ignore", invalid="ignore"):
        direct = np.where(j != 0, np.abs(j) / np.maximum(dnu, 1e-300), 0.0)
    strength = direct.copy()
    mixing = np.hypot(dnu, j)
    for h, h2 in zip(*np.nonzero(np.triu(direct > ratio, 1)), strict=True):
        indirect = np.abs(j[:, h] - j[:, h2]) / max(mixing[h, h2], 1e-300)
        indirect[[h, h2]] = 0.0
        for a in (h, h2):
            raised = np.where(j[:, a] != 0, indirect, 0.0)
            strength[:, a] = np.maximum(strength[:, a], raised)
            strength[a, :] = np.maximum(strength[a, :], raised)
    return strength


def _find_root(parent: list[int], i: int) -> int:
    while parent[i] != i:
        parent[i] = parent[parent[i]]
        i = parent[i]
    return i


def _cluster_cost(n_protons: tuple[int, ...]) -> float:
    """Work of diagonalising a cluster of equivalent groups: sum of block sizes cubed."""
    return _sorted_cluster_cost(tuple(sorted(int(x) for x in n_protons)))


@functools.lru_cache(maxsize=1024)
def _sorted_cluster_cost(n_sorted: tuple[int, ...]) -> float:
    cost = 0.0
    for combo in itertools.product(*[_group_spins(n) for n in n_sorted]):
        sizes = np.ones(1)
        for spin, _ in combo:
            sizes = np.convolve(sizes, np.ones(int(round(2 * spin)) + 1))
        cost += float(np.sum(sizes**3))
    return cost


def _plan(nu_hz, j, n, max_spins, ratio) -> ClusterPlan:
    strength = _coupling_strength(nu_hz, j, ratio)
    n_sites = len(n)
    pairs = [(a, b) for a in range(n_sites) for b in range(a + 1, n_sites) if strength[a, b] > 0]
    # strongest first; ties broken by values, not by the order the sites were given in
    pairs.sort(key=lambda p: (-strength[p], -abs(j[p]), sorted((nu_hz[p[0]], nu_hz[p[1]])), p))
    parent = list(range(n_sites))
    members = {i: [i] for i in range(n_sites)}
    for a, b in pairs:
        ra, rb = _find_root(parent, a), _find_root(parent, b)
        if ra == rb:
            continue
        joined = members[ra] + members[rb]
        size = int(n[joined].sum())
        strong = strength[a, b] > ratio
        # weak couplings join only while the exact cluster stays cheap (it is then exact, not second order)
        if size <= max_spins and (strong or (strength[a, b] > _WEAK_JOIN_RATIO
                                             and _cluster_cost(tuple(n[joined])) <= _WEAK_JOIN_COST)):
            parent[rb] = ra
            members[ra] = joined
    roots = [_find_root(parent, i) for i in range(n_sites)]
    clusters: dict[int, list[int]] = {}
    for i, r in enumerate(roots):
        clusters.setdefault(r, []).append(i)
    cut = tuple((a, b) for a, b in pairs if roots[a] != roots[b] and strength[a, b] > ratio)
    messages = tuple(
        f"strong coupling between sites {a} and {b} (J={j[a, b]:.2f} Hz, shift difference "
        f"{abs(nu_hz[a] - nu_hz[b]):.2f} Hz) treated first order: cluster would exceed "
        f"max_cluster_spins={max_spins}"
        for a, b in cut
    )
    return ClusterPlan(tuple(tuple(c) for c in clusters.values()), cut, messages)


def plan_clusters(shifts_ppm, j_hz, n_protons, *, field_mhz: float, max_cluster_spins: int = 12,
                  cluster_ratio: float = 0.05) -> ClusterPlan:
    """Cut a spin system into clusters that are simulated exactly.

    Couplings join sites strongest first (by ``|J| / |delta nu|``). A strong
    coupling (``|J| > cluster_ratio * |delta nu|``) joins two clusters while
    the result has at most ``max_cluster_spins`` protons; a weaker one joins
    them only while the joined cluster is also cheap to diagonalise (about
    eight distinct protons, more for equivalent groups), since a cut weak
    coupling is handled to second order anyway.

    Parameters
    ----------
    shifts_ppm, j_hz, n_protons
        As for :func:`simulate_arrays`.
    field_mhz : float
        1H frequency, 40-1200 MHz.
    max_cluster_spins : int
        Most protons in one cluster (a single site larger than this is still
        one cluster: a composite spin is cheap).
    cluster_ratio : float
        A coupling is strong when ``|J| > cluster_ratio * |delta nu|``.

    Returns
    -------
    ClusterPlan
    """
    field = _check_field(field_mhz)
    shifts, j, n = _check_arrays(shifts_ppm, j_hz, n_protons)
    max_spins, ratio = _check_options(max_cluster_spins, cluster_ratio)
    return _plan(shifts * field, j, n, max_spins, ratio)
