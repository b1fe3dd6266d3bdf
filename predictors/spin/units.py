"""The spins a simulation needs: one composite spin per equivalent site, one spin per proton elsewhere.

A site whose protons are magnetically equivalent (a methyl group, the CH2 of a freely rotating
chain) is simulated as one composite spin, which is exact and cheap. A site whose protons are
only chemically equivalent (the two ortho protons of a phenyl ring: each couples 7.8 Hz to its
own meta neighbour and 0.6 Hz to the other) is not: as one composite spin with the mean coupling
its AA'BB' multiplet becomes an A2B2 pattern, wrong by about half the pattern's height at any
field. Such a site (``SpinSystem.split_sites``) is split into one spin per proton; its spins
share the site's shift and keep their own couplings (``SpinSystem.proton_j_hz``), and their lines
are reported as the site's.

The prediction splits the sites of aromatic rings only. The ring CH2 protons of a cyclohexane are
not magnetically equivalent either, but ring flips and overlapping multiplets turn them into
envelopes, and split they cost 5-50 times the lines (cyclohexyl bromide at 90 MHz: 142,000 lines
against 20,000).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from predictors.core import SpinSystem

__all__ = ["SpinUnits", "spin_units"]


@dataclass(frozen=True, eq=False)
class SpinUnits:
    """The simulated spins of a spin system.

    Attributes
    ----------
    owner : ndarray of int, shape (n_units,)
        The site each spin belongs to (sites in order; a split site's spins are consecutive).
    n_h : ndarray of int, shape (n_units,)
        Protons per spin (1 for the spins of a split site).
    j_hz : ndarray, shape (n_units, n_units)
        Couplings between the spins; between two unsplit sites exactly the system's ``j_hz``.
    """

    owner: np.ndarray
    n_h: np.ndarray
    j_hz: np.ndarray

    @property
    def split(self) -> bool:
        """Whether any site is simulated proton by proton."""
        return self.owner.size != np.unique(self.owner).size


def spin_units(system: SpinSystem) -> SpinUnits:
    """The spins that simulate ``system`` exactly (see the module text).

    A site is split when it is one of ``system.split_sites`` and has more than one proton.
    Couplings between spins are the means of the proton
    couplings they stand for (rounded to 1 mHz like the site couplings).
    """
    n_sites = len(system.sites)
    j_site = np.asarray(system.j_hz, dtype=float)
    if system.proton_j_hz is None or not system.split_sites:
        return SpinUnits(np.arange(n_sites), system.n_protons, j_site.copy())
    start = np.concatenate([[0], np.cumsum(system.n_protons)])
    members, owner, whole = [], [], []
    for k, site in enumerate(system.sites):
        rows = list(range(int(start[k]), int(start[k + 1])))
        if site.n_h > 1 and k in system.split_sites:
            members.extend([r] for r in rows)
            owner.extend([k] * len(rows))
            whole.extend([False] * len(rows))
        else:
            members.append(rows)
            owner.append(k)
            whole.append(True)
    if len(members) == n_sites:
        return SpinUnits(np.arange(n_sites), system.n_protons, j_site.copy())
    pj = np.asarray(system.proton_j_hz, dtype=float)
    n = len(members)
    j = np.zeros((n, n))
    for u in range(n):
        for v in range(u + 1, n):
            if whole[u] and whole[v]:
                value = j_site[owner[u], owner[v]]
            else:
                value = float(np.mean(pj[np.ix_(members[u], members[v])]))
                value = round(value, 3) if abs(value) >= 0.05 else 0.0
            j[u, v] = j[v, u] = value
    return SpinUnits(np.array(owner, dtype=int), np.array([len(m) for m in members], dtype=int), j)
