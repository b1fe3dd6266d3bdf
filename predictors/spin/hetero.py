"""Splitting of 1H lines by heteronuclei (19F, 31P).

A heteronucleus X is thousands of Hz off the 1H resonances, so its coupling to a proton is weak at
any field: the Hamiltonian keeps only ``J Iz Sz``, and each spin state of the X nuclei shifts the
protons coupled to them by ``m J``. Two treatments:

* **X states** (exact): when every site's couplings to one nucleus go to the same group of ``n``
  equivalent X atoms (the one F of a fluoroarene, the CF3 of a trifluoroethyl group, the one P of a
  phosphonate: each site has at most one coupling to that nucleus, all with the same ``n``, and the
  molecule holds exactly ``n`` such atoms), the protons are simulated once per total spin state M of
  the group (``n + 1`` states, binomial weights), every site shifted by ``M J`` of its own coupling.
  Strongly coupled protons that couple differently to X (the ring protons of fluorobenzene at
  60 MHz) come out exactly so. :func:`plan_x` finds these groups.
* **first order** (:func:`split_by_x`): the other couplings split each finished line by the pattern
  of the site it belongs to most (``LineList.site_index``): ``n`` equivalent X nuclei give ``n + 1``
  lines in binomial ratio and the patterns of several groups are convolved. Exact where a line
  belongs to one site; for mixed lines of strongly coupled protons that couple differently to X the
  split is that of the main site.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import comb

import numpy as np

from predictors.core import LineList

__all__ = ["XPlan", "plan_x", "pool_state_lines", "x_patterns", "split_by_x", "split_lines_by_x"]

_POOL_HZ = 1e-6  # pattern offsets closer than this are one line
#: Most X spin states simulated one by one; beyond, the couplings are applied first order.
MAX_X_STATES = 16
_ELEMENT = {"19F": "F", "31P": "P"}


@dataclass(frozen=True, eq=False)
class XPlan:
    """How the heteronuclear couplings of a spin system are applied.

    Attributes
    ----------
    weights : ndarray, shape (n_states,)
        Weight of each simulated X spin state (summing to 1); one state of weight 1 when none.
    offsets_hz : ndarray, shape (n_states, n_sites)
        Shift of every site in each state (Hz).
    first_order : tuple
        Per site, the couplings left to :func:`split_by_x` (same form as ``SpinSystem.x_couplings``).
    """

    weights: np.ndarray
    offsets_hz: np.ndarray
    first_order: tuple

    @property
    def n_states(self) -> int:
        """Number of simulated X spin states."""
        return int(self.weights.size)

    @property
    def trivial(self) -> bool:
        """No X coupling at all."""
        return self.n_states == 1 and not np.any(self.offsets_hz) and not any(self.first_order)


def plan_x(x_couplings, smiles: str | None = None, *, max_states: int = MAX_X_STATES) -> XPlan:
    """Split the X couplings of a system into exactly simulated X states and first-order splits.

    Parameters
    ----------
    x_couplings : sequence
        ``SpinSystem.x_couplings`` (or the same per model site).
    smiles : str or None
        The molecule, to count its F and P atoms; None: everything first order.
    max_states : int, keyword-only
        Most X states simulated (product over the nuclei treated exactly).
    """
    per_site = tuple(tuple(site) for site in x_couplings)
    n_sites = len(per_site)
    weights, offsets = np.ones(1), np.zeros((1, n_sites))
    exact: set[str] = set()
    counts = _atom_counts(smiles) if smiles else {}
    for nucleus in ("19F", "31P"):
        entries = [[c for c in site if c[0] == nucleus] for site in per_site]
        sizes = {c[1] for e in entries for c in e}
        if not sizes or any(len(e) > 1 for e in entries) or len(sizes) != 1:
            continue
        n = sizes.pop()
        if counts.get(nucleus) != n or weights.size * (n + 1) > max_states:
            continue
        m = np.arange(n + 1) - n / 2.0
        w = np.array([comb(n, k) for k in range(n + 1)], dtype=float) / 2.0**n
        j = np.array([e[0][2] if e else 0.0 for e in entries])
        offsets = (offsets[:, None, :] + m[None, :, None] * j[None, None, :]).reshape(-1, n_sites)
        weights = (weights[:, None] * w[None, :]).ravel()
        exact.add(nucleus)
    rest = tuple(tuple(c for c in site if c[0] not in exact) for site in per_site)
    return XPlan(weights=weights, offsets_hz=offsets, first_order=rest)


def pool_state_lines(freq_hz, intensity, site, deriv=None):
    """Lines of several X states (intensities already weighted) pooled: lines of one site within
    1e-4 Hz become one (a site far from X has the same lines in every state). ``deriv`` rows
    (frequency derivatives) are averaged by intensity. Returns ``freq_hz, intensity, site, deriv``."""
    from predictors.spin._lines import _merge_lines

    return _merge_lines(np.asarray(freq_hz, dtype=float), np.asarray(intensity, dtype=float),
                        np.asarray(site, dtype=int), deriv)


def _atom_counts(smiles: str) -> dict[str, int]:
    from rdkit import Chem

    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return {}
    out: dict[str, int] = {}
    for atom in mol.GetAtoms():
        for nucleus, element in _ELEMENT.items():
            if atom.GetSymbol() == element:
                out[nucleus] = out.get(nucleus, 0) + 1
    return out


def _binomial(n: int, j_hz: float) -> tuple[np.ndarray, np.ndarray]:
    k = np.arange(n + 1)
    weights = np.array([comb(n, int(i)) for i in k], dtype=float) / 2.0**n
    return (k - n / 2.0) * j_hz, weights


def x_patterns(x_couplings) -> list[tuple[np.ndarray, np.ndarray]]:
    """Per site, the offsets (Hz) and weights (summing to 1) of its heteronuclear pattern.

    Parameters
    ----------
    x_couplings : sequence of sequences of (nucleus, n_equivalent, j_hz)
        ``SpinSystem.x_couplings``.
    """
    out = []
    for site in x_couplings:
        offsets, weights = np.zeros(1), np.ones(1)
        for _nucleus, n, j in site:
            if float(j) == 0.0:
                continue
            o, w = _binomial(int(n), float(j))
            offsets = (offsets[:, None] + o[None, :]).ravel()
            weights = (weights[:, None] * w[None, :]).ravel()
        if offsets.size > 1:
            cell = np.round(offsets / _POOL_HZ).astype(np.int64)
            uniq, inverse = np.unique(cell, return_inverse=True)
            weights = np.bincount(inverse, weights=weights)
            offsets = uniq * _POOL_HZ
        out.append((offsets, weights))
    return out


def split_by_x(freq_hz: np.ndarray, intensity: np.ndarray, site: np.ndarray, x_couplings):
    """Split lines (frequencies in Hz) first order by the X pattern of their site.

    Parameters
    ----------
    freq_hz, intensity : ndarray, shape (n_lines,)
    site : ndarray of int, shape (n_lines,)
        Site of each line (index into ``x_couplings``).
    x_couplings : sequence
        ``SpinSystem.x_couplings`` (one entry per site).

    Returns
    -------
    freq_hz, intensity, site, parent : ndarray
        The split lines (a line without X couplings stays as it is) and, for each, the index of
        the line it came from. Total intensity per site is unchanged.
    """
    freq_hz = np.asarray(freq_hz, dtype=float)
    intensity = np.asarray(intensity, dtype=float)
    site = np.asarray(site, dtype=int)
    patterns = x_patterns(x_couplings)
    if freq_hz.size == 0 or all(p[0].size == 1 for p in patterns):
        return freq_hz, intensity, site, np.arange(freq_hz.size)
    width = max(p[0].size for p in patterns)
    offsets = np.zeros((len(patterns), width))
    weights = np.zeros((len(patterns), width))
    for k, (o, w) in enumerate(patterns):
        offsets[k, :o.size] = o
        weights[k, :w.size] = w
    new_freq = freq_hz[:, None] + offsets[site]
    new_inten = intensity[:, None] * weights[site]
    keep = weights[site] > 0
    parent = np.broadcast_to(np.arange(freq_hz.size)[:, None], keep.shape)
    return new_freq[keep], new_inten[keep], np.broadcast_to(site[:, None], keep.shape)[keep], parent[keep]


def split_lines_by_x(lines: LineList, x_couplings) -> LineList:
    """``lines`` split first order by ``x_couplings`` (see :func:`split_by_x`), highest shift
    first; the same object when there are none."""
    if not any(x_couplings):
        return lines
    freq, inten, site, _ = split_by_x(np.asarray(lines.ppm) * lines.field_mhz, lines.intensity,
                                      lines.site_index, x_couplings)
    order = np.argsort(-freq, kind="stable")
    return LineList(ppm=freq[order] / lines.field_mhz, intensity=inten[order], field_mhz=lines.field_mhz,
                    site_index=site[order], warnings=lines.warnings)
