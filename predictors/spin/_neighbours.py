"""What the eigenstates of neighbouring clusters do to a cluster, and the derivatives of that.

With ``t = J_gh / (nu_g - nu_h)`` for a cut coupling (g here, h there),
perturbation theory to second order in t gives, per neighbour state with
``z = <Fz_h>`` and ``q = I_h(I_h+1) - <Fz_h^2>``: a shift ``J z + J t q / 2``
of g (plus ``(J_gh t_gh' + J_gh' t_gh) x / 4`` for every pair h, h' there,
``x = <F+_h F-_h' + F-_h F+_h'>``), a term ``J t z / 2 * Fz_g^2``, an extra
flip-flop coupling ``-(J_gh t_g'h + J_g'h t_gh) z / 2`` between g and g' and a
factor ``1 - t z`` on g's part of the lowering operator. Cuts with
``|t| > _PERTURB_LIMIT`` (strong couplings cut for size) keep only the
first-order shift.

One row per neighbour state holds these terms (``lin | quad | scale | dj``,
``3 k + k (k - 1) / 2`` columns for k cluster sites). Their derivatives with
respect to the couplings across the cut and the shifts of both sides (through
t) are taken by complex-step differentiation of the same expressions, exact to
rounding; the neighbour's own expectation values z, q, x are held fixed (their
change with the neighbour's couplings is left out: first order in the cut).
States whose rows are equal are merged, their derivative rows averaged by
weight (the derivative of the merged lines' centroid).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse

#: Cut couplings with |J / dnu| above this get no second-order correction.
_PERTURB_LIMIT = 0.25
_STEP = 1e-30  # complex step (no subtraction, so any tiny step is exact to rounding)


@dataclass(frozen=True)
class _Params:
    """Derivative columns of one cluster's lines: site shifts, then couplings (global indices).

    ``pair_out`` is each pair's position in the caller's list of pairs.
    """

    sites: np.ndarray
    pairs: np.ndarray
    pair_out: np.ndarray

    @property
    def size(self) -> int:
        return len(self.sites) + len(self.pairs)

    def site_column(self) -> dict:
        return {int(s): i for i, s in enumerate(self.sites)}

    def pair_column(self) -> dict:
        base = len(self.sites)
        return {(int(a), int(b)): base + i for i, (a, b) in enumerate(self.pairs)}


@dataclass(frozen=True)
class _Neighbour:
    """One neighbouring cluster's states as seen by this cluster: rows, weights, row derivatives."""

    rows: np.ndarray            # (S, R)
    weight: np.ndarray          # (S,)
    drows: np.ndarray | None    # (S, R, P) or None
    strength: float             # largest |J| across the cut
    first_site: int


def _terms(cross, gap, small, z, q, x, k):
    """Rows of the neighbour terms; ``cross`` and ``gap`` (kb, k) may carry a leading axis."""
    t = np.where(small, cross / np.where(small, gap, 1.0), 0.0)
    kb = cross.shape[-2]
    h1, h2 = np.triu_indices(kb, 1)
    lin = z @ cross + q @ (cross * t / 2)
    if len(h1):
        lin = lin + x @ ((cross[..., h1, :] * t[..., h2, :] + cross[..., h2, :] * t[..., h1, :]) / 4)
    quad = z @ (cross * t / 2)
    scale = -(z @ t)
    dj = -0.5 * np.einsum("sh,...hg,...hk->...sgk", z, cross, t)
    dj = dj + np.swapaxes(dj, -1, -2)
    upper = np.triu_indices(k, 1)
    return np.concatenate([lin, quad, scale, dj[..., upper[0], upper[1]]], axis=-1)


def _directions(a, b, params: _Params, k, kb):
    """Unit changes of ``cross`` and ``gap`` for each parameter that moves them, with its column."""
    pos_a = {int(s): i for i, s in enumerate(a)}
    pos_b = {int(s): i for i, s in enumerate(b)}
    cols, d_cross, d_gap = [], [], []
    for c, s in enumerate(params.sites):
        s = int(s)
        if s in pos_a or s in pos_b:
            g = np.zeros((kb, k))
            if s in pos_a:
                g[:, pos_a[s]] = 1.0      # gap = nu_g - nu_h
            else:
                g[pos_b[s], :] = -1.0
            cols.append(c)
            d_cross.append(np.zeros((kb, k)))
            d_gap.append(g)
    base = len(params.sites)
    for c, (p, r) in enumerate(params.pairs):
        p, r = int(p), int(r)
        if p in pos_b and r in pos_a:
            p, r = r, p
        if p in pos_a and r in pos_b:
            e = np.zeros((kb, k))
            e[pos_b[r], pos_a[p]] = 1.0
            cols.append(base + c)
            d_cross.append(e)
            d_gap.append(np.zeros((kb, k)))
    return np.array(cols, dtype=int), np.array(d_cross).reshape(-1, kb, k), np.array(d_gap).reshape(-1, kb, k)


def neighbour_sets(a, others, nu, j, params: _Params | None) -> list[_Neighbour]:
    """The states of every neighbouring cluster coupled to sites ``a``, largest coupling first.

    ``others`` are prepared clusters (with ``sites``, ``zq`` and ``weight``).
    """
    k = len(a)
    found = []
    for other in others:
        b = other.sites
        cross = j[np.ix_(b, a)]
        if not np.any(cross):
            continue
        gap = nu[a][None, :] - nu[b][:, None]
        # t = J / gap where the cut is perturbative; never at gap 0 (uncoupled equal shifts)
        small = (np.abs(cross) <= _PERTURB_LIMIT * np.abs(gap)) & (gap != 0)
        kb = len(b)
        z, q, x = other.zq[:, :kb], other.zq[:, kb:2 * kb], other.zq[:, 2 * kb:]
        rows = _terms(cross, gap, small, z, q, x, k)
        drows = None
        if params is not None:
            drows = np.zeros(rows.shape + (params.size,))
            cols, d_cross, d_gap = _directions(a, b, params, k, kb)
            step = max(1, 2_000_000 // max(1, rows.size))
            for c0 in range(0, len(cols), step):
                sl = slice(c0, c0 + step)
                moved = _terms(cross + 1j * _STEP * d_cross[sl], gap + 1j * _STEP * d_gap[sl], small,
                               z, q, x, k)
                drows[:, :, cols[sl]] = np.moveaxis(moved.imag / _STEP, 0, -1)
        rows, weights, drows = group_rows(rows, other.weight, drows)
        found.append(_Neighbour(rows, weights, drows, float(np.max(np.abs(cross))), int(b.min())))
    found.sort(key=lambda item: (-item.strength, item.first_site))
    return found


def group_rows(values: np.ndarray, weights: np.ndarray, extra: np.ndarray | None = None):
    """Merge rows equal within 1e-6 (Hz or spin units), adding their weights.

    Rows are sorted by a hash of their rounded values; neighbours join only
    when the rounded rows are equal, so a hash collision can at worst leave
    two equal rows apart (same result, one more state). The first of equal
    rows stands for them; ``extra`` (one array per row, e.g. derivatives) is
    averaged over each group by weight.
    """
    keys = np.round(values / 1e-6).astype(np.int64)
    mult = np.arange(1, keys.shape[1] + 1, dtype=np.uint64) * np.uint64(0x9E3779B97F4A7C15) | np.uint64(1)
    digest = (keys.view(np.uint64) * mult).sum(axis=1, dtype=np.uint64)
    order = np.argsort(digest, kind="stable")
    ordered = keys[order]
    new_group = np.ones(len(order), dtype=bool)
    new_group[1:] = np.any(ordered[1:] != ordered[:-1], axis=1)
    group = np.cumsum(new_group) - 1
    total = np.bincount(group, weights=weights[order])
    keep = total > 0
    merged = None
    if extra is not None:
        pool = sparse.csr_matrix((weights[order], (group, order)), shape=(len(total), len(weights)))
        flat = pool @ extra.reshape(len(weights), -1)
        merged = (flat / np.where(total > 0, total, 1.0)[:, None]).reshape((len(total),) + extra.shape[1:])
        merged = merged[keep]
    return values[order[new_group]][keep], total[keep], merged


def combine(sets: list[_Neighbour]):
    """Rows, weights and row derivatives of every combination of the neighbours' states."""
    rows, weights, drows = sets[0].rows, sets[0].weight, sets[0].drows
    for item in sets[1:]:
        rows = (rows[:, None, :] + item.rows[None, :, :]).reshape(-1, rows.shape[1])
        weights = (weights[:, None] * item.weight[None, :]).ravel()
        if drows is not None:
            drows = (drows[:, None] + item.drows[None, :]).reshape((-1,) + drows.shape[1:])
        rows, weights, drows = group_rows(rows, weights, drows)
    return rows, weights, drows


def reduce_states(offsets, weights, doffsets, max_rows: int, step_hz: float):
    """Bin a neighbour's state offsets (Hz) until at most ``max_rows`` remain (weighted means)."""
    keep = weights > 0
    offsets, weights = offsets[keep], weights[keep]
    doffsets = doffsets[keep] if doffsets is not None else None
    step = step_hz
    while len(weights) > max_rows:
        keys = np.round(offsets / step).astype(np.int64)
        _, inverse = np.unique(keys, axis=0, return_inverse=True)
        inverse = inverse.ravel()
        total = np.bincount(inverse, weights=weights)
        pool = sparse.csr_matrix((weights, (inverse, np.arange(len(weights)))),
                                 shape=(len(total), len(weights)))
        offsets = (pool @ offsets) / total[:, None]
        if doffsets is not None:
            doffsets = ((pool @ doffsets.reshape(len(weights), -1)) / total[:, None]).reshape(
                (len(total),) + doffsets.shape[1:])
        weights = total
        step *= 2.0
    return offsets, weights, doffsets
