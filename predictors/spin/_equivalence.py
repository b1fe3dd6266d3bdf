"""Sites that are magnetically equivalent to each other, simulated as one composite group.

Two sites with the same frequency and the same coupling to every other site
(e.g. the two protons of a CH2 given as two sites) form one magnetically
equivalent group: the coupling between them does not show, and the group's
spectrum is that of one composite spin of all their protons, which is much
cheaper to diagonalise (Fz blocks of 2^n single spins shrink to blocks of the
group's total spins). Only sites that the cluster plan put in the same cluster
are joined, so the plan, and with it every approximation, stays as it was.

Derivatives split back by symmetry, averaged over the degenerate copies of the
group's states: a member with ``n_a`` of the group's ``n_G`` protons carries
``n_a / n_G`` of the group's ``<Fz>`` and, towards another group,
``n_a n_c / (n_G n_H)`` of the group pair's ``<F_G . F_H>``; a coupling inside
a group has derivative 0 (the states keep the group's total spin).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from predictors.spin.clusters import _cluster_cost

_SAME_HZ = 1e-9  # frequencies and couplings equal to this are equal


@dataclass(frozen=True)
class _Reduced:
    """A spin system with equivalent sites joined."""

    group_of: np.ndarray             # (n_sites,) reduced site of every original site
    members: tuple                   # original sites of each reduced site, ascending
    nu: np.ndarray
    j: np.ndarray
    n: np.ndarray
    clusters: tuple                  # reduced sites of each planned cluster
    costs: tuple                     # cost of each cluster as planned (original sites)


def _find(parent, i):
    while parent[i] != i:
        parent[i] = parent[parent[i]]
        i = parent[i]
    return i


def _planned_cost(n_sites: np.ndarray) -> float:
    """Cost of a cluster of the given sites as the simulator has always counted it: sum of the
    block sizes cubed over the subsystems with some spin (the all-zero one is not built)."""
    all_even = bool(np.all(n_sites % 2 == 0))
    return _cluster_cost(tuple(int(x) for x in n_sites)) - (1.0 if all_even else 0.0)


def reduce_equivalent(nu, j, n, clusters) -> _Reduced:
    """Join the magnetically equivalent sites inside each planned cluster."""
    n_sites = len(nu)
    parent = list(range(n_sites))
    for cluster in clusters:
        for a, b in itertools.combinations(sorted(cluster), 2):
            if abs(nu[a] - nu[b]) > _SAME_HZ:
                continue
            others = np.ones(n_sites, dtype=bool)
            others[[a, b]] = False
            if np.all(np.abs(j[a, others] - j[b, others]) <= _SAME_HZ):
                ra, rb = _find(parent, a), _find(parent, b)
                if ra != rb:
                    parent[max(ra, rb)] = min(ra, rb)
    roots = np.array([_find(parent, i) for i in range(n_sites)])
    reps = np.unique(roots)
    group_of = np.searchsorted(reps, roots)
    members = tuple(tuple(np.flatnonzero(group_of == g).tolist()) for g in range(len(reps)))
    nu_r = nu[reps]
    j_r = j[np.ix_(reps, reps)].copy()
    np.fill_diagonal(j_r, 0.0)
    n_r = np.array([int(n[list(m)].sum()) for m in members])
    reduced_clusters = tuple(tuple(int(g) for g in np.unique(group_of[list(c)])) for c in clusters)
    costs = tuple(_planned_cost(n[list(c)]) for c in clusters)
    return _Reduced(group_of, members, nu_r, j_r, n_r, reduced_clusters, costs)
