"""First-order splitting of 1H lines by heteronuclei (19F, 31P).

A heteronucleus X is thousands of Hz off the 1H resonances, so its coupling to a proton is weak at
any field: the Hamiltonian keeps only ``J Iz Sz``, each X spin state shifts the protons it couples
to by ``m J``, and each 1H transition of a site splits by +-J/2 per coupled X nucleus. ``n``
equivalent X nuclei coupled alike give the binomial pattern (``n + 1`` lines, 1:3:3:1 for a CF3),
and the patterns of several groups are convolved. The protons stay exact (strongly coupled among
themselves, second order); each of their lines is split by the pattern of the site it belongs to
most (``LineList.site_index``). That is exact where a line belongs to one site, and approximate
for the mixed lines of protons that are strongly coupled to each other *and* couple differently
to X (their X splittings differ by the share of each site in the line).
"""

from __future__ import annotations

from math import comb

import numpy as np

from predictors.core import LineList, SpinSystem

__all__ = ["x_patterns", "split_by_x", "split_lines_by_x"]

_POOL_HZ = 1e-6  # pattern offsets closer than this are one line


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


def split_lines_by_x(lines: LineList, system: SpinSystem) -> LineList:
    """``lines`` of ``system`` split by its heteronuclear couplings (see :func:`split_by_x`),
    highest shift first; the same object when the system has none."""
    if not any(system.x_couplings):
        return lines
    freq, inten, site, _ = split_by_x(np.asarray(lines.ppm) * lines.field_mhz, lines.intensity,
                                      lines.site_index, system.x_couplings)
    order = np.argsort(-freq, kind="stable")
    return LineList(ppm=freq[order] / lines.field_mhz, intensity=inten[order], field_mhz=lines.field_mhz,
                    site_index=site[order], warnings=lines.warnings)
