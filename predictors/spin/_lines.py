"""Bookkeeping of line lists: pooling, merging and pruning."""

from __future__ import annotations

import numpy as np
from scipy import sparse

_MERGE_TOL_HZ = 1e-4  # lines of one site this close are one line (centroid)
_DROP_FRACTION = 1e-6
_DROP_TOTAL = 1e-5
_SPLIT_POOL_HZ = 0.005  # split lines of one site closer than this are pooled


def _group_keys(keys: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted distinct values of non-negative integer keys and each key's position among them.

    Dense key ranges (at most a few times the number of keys) are counted
    without sorting; sparse ones are sorted once.
    """
    top = int(keys.max()) + 1
    if top <= 4 * keys.size + 1024:
        uniq = np.flatnonzero(np.bincount(keys, minlength=top))
        lookup = np.empty(top, dtype=np.intp)
        lookup[uniq] = np.arange(uniq.size)
        return uniq, lookup[keys]
    order, ordered = _sort_keys(keys, top)
    new_group = np.empty(keys.size, dtype=bool)
    new_group[0] = True
    np.not_equal(ordered[1:], ordered[:-1], out=new_group[1:])
    inverse = np.empty(keys.size, dtype=np.intp)
    inverse[order] = np.cumsum(new_group) - 1
    return ordered[new_group], inverse


def _sort_keys(keys: np.ndarray, top: int) -> tuple[np.ndarray, np.ndarray]:
    """Stable sorting permutation of non-negative integer keys below ``top``, and the sorted keys.

    Key and position are packed into one integer when they fit, since sorting
    plain integers is several times faster than an argsort.
    """
    shift = max(int(keys.size - 1).bit_length(), 1)
    if (top - 1).bit_length() + shift > 62:
        order = np.argsort(keys, kind="stable")
        return order, keys[order]
    packed = np.sort((keys << shift) | np.arange(keys.size, dtype=np.int64))
    return packed & ((1 << shift) - 1), packed >> shift


def _pool_split_lines(freq, inten, delta, min_intensity, source=None, deriv=None, split=None):
    """Pool lines of the same main site closer than _SPLIT_POOL_HZ (weighted means); drop tiny ones.

    Line i has the change of <Fz> ``delta[source[i]]`` (``delta[i]`` when
    ``source`` is None), so lines split from one parent need no copies of it.
    ``deriv`` (one row per parent, frequency derivatives) is averaged by
    intensity like the frequencies: the derivative of the pooled centroid for
    fixed intensities. Lines split by neighbour states (``split = doff``, the
    derivatives (S, k, P) of the S state offsets, line i from parent
    ``source[i]`` and state ``i % S``) add ``delta @ doff[state]``.

    Returns
    -------
    freq, inten, delta, deriv (None when not given)
    """
    kept = np.flatnonzero(inten > min_intensity)
    state = None if split is None else kept % split.shape[0]
    source = kept if source is None else source[kept]
    freq, inten = freq[kept], inten[kept]
    if freq.size == 0:
        return freq, inten, delta[:0], None if deriv is None else deriv[:0]
    cell = np.round(freq / _SPLIT_POOL_HZ).astype(np.int64)
    cell -= cell.min()
    keys = np.argmax(delta, axis=1).astype(np.int64)[source] * (int(cell.max()) + 1) + cell
    _, inverse = _group_keys(keys)
    total = np.bincount(inverse, weights=inten)
    pool = sparse.csr_matrix((inten, (inverse, source)), shape=(total.size, len(delta)))
    pooled = None
    if deriv is not None:
        pooled = pool @ deriv
        if split is not None:
            for s in range(split.shape[0]):
                sel = state == s
                part = sparse.csr_matrix((inten[sel], (inverse[sel], source[sel])), shape=pool.shape)
                pooled += (part @ delta) @ split[s]
        pooled /= total[:, None]
    return np.bincount(inverse, weights=inten * freq) / total, total, (pool @ delta) / total[:, None], pooled


def _merge_lines(freq, inten, site, deriv=None):
    """Pool the lines of each site that fall in one _MERGE_TOL_HZ cell (intensity-weighted centre).

    The pooled lines come out by descending cell (so nearly by descending
    frequency), sites ascending within a cell. ``deriv`` rows (frequency
    derivatives) are averaged by intensity like the frequencies.
    """
    if freq.size == 0:
        return freq, inten, site, deriv
    n_sites = int(site.max()) + 1
    cell = np.round((freq - freq.min()) / _MERGE_TOL_HZ).astype(np.int64)
    uniq, inverse = _group_keys((int(cell.max()) - cell) * n_sites + site)
    total = np.bincount(inverse, weights=inten)
    safe = np.where(total > 0, total, 1.0)
    centre = np.bincount(inverse, weights=inten * freq) / safe
    if deriv is not None:
        pool = sparse.csr_matrix((inten, (inverse, np.arange(inten.size))), shape=(total.size, inten.size))
        deriv = (pool @ deriv) / safe[:, None]
    return centre, total, uniq % n_sites, deriv


def _significant(inten, total):
    """Mask of lines to keep: drop the weakest (each < 1e-6 of the total) while together < 1e-5."""
    budget = _DROP_TOTAL * total
    limit = _DROP_FRACTION * total
    count = 2048
    while count < inten.size:  # sort only the weakest lines that already exceed the budget together
        cut = np.partition(inten, count)[count]
        if cut >= limit:
            break
        if inten[inten < cut].sum() > budget:
            limit = cut
            break
        count *= 4
    weak = np.flatnonzero(inten < limit)
    order = weak[np.argsort(inten[weak], kind="stable")]
    n_drop = int(np.searchsorted(np.cumsum(inten[order]), budget, side="right"))
    keep = np.ones(len(inten), dtype=bool)
    keep[order[:n_drop]] = False
    return keep
