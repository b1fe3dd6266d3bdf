"""Lines of one cluster: its exact eigenstates, and the neighbouring clusters' states applied to them.

A cluster is first diagonalised on its own (:func:`prepare_cluster`): this gives
its lines when nothing else is coupled to it, and its eigenstates' ``<Fz>``,
``I(I+1) - <Fz^2>`` and flip-flop expectations, which its neighbours need.
Then (:func:`simulate_cluster`) the neighbours' states enter: for the largest
affordable set the cluster is re-diagonalised once per neighbour state
(stacked), and any remaining neighbours split each line first order by the
line's change of ``<Fz>``.

Frequency derivatives (on request) follow each step: Hellmann-Feynman inside the
cluster (the changes of ``<Fz_g>``, ``<F_g . F_h>``, ``<Fz_g^2>`` and flip-flop
expectations over the transition, against the derivatives of the terms they
multiply), and for lines split by remaining neighbours the derivative of the
offset (``delta . d offset``; the change of ``delta`` itself, second order in
the cut, is left out).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse

from predictors.spin._basis import _build_cluster
from predictors.spin._eigen import (
    _isolated_states,
    _Observe,
    _pair_index,
    _States,
    _subsystem_lines,
    diagonalise,
)
from predictors.spin._lines import _SPLIT_POOL_HZ, _pool_split_lines
from predictors.spin._neighbours import _Params, combine, group_rows, neighbour_sets, reduce_states

# Neighbour states handled by re-diagonalising the cluster once per state (batched):
# at most this many, and (states x cluster cost) below the budget; beyond it,
# neighbours are applied as first-order splittings of the finished lines.
_NEIGHBOUR_COST_BUDGET = 4e6
_MAX_NEIGHBOUR_STATES = 4096
_BATCH_ELEMENTS = 4_000_000  # neighbour states x sum of block sizes^2 diagonalised at once
# Neighbours applied as splittings of finished lines: at most this many state offsets each.
_MAX_SPLIT_STATES = 16


@dataclass(frozen=True)
class _Lines:
    """Lines of one cluster before the global merge (Hz, intensity, change of <Fz> per site)."""

    freq: np.ndarray
    inten: np.ndarray
    delta: np.ndarray
    deriv: np.ndarray | None = None    # (L, P) frequency derivatives, columns as in the request


@dataclass(frozen=True)
class _Cluster:
    sites: np.ndarray              # global site indices
    subsystems: tuple              # composite-spin subsystems
    n_protons: int
    area: int                      # sum of block sizes squared (memory per neighbour state)
    cost: float                    # sum of block sizes cubed (decides the neighbour treatment)
    zq: np.ndarray | None          # isolated eigenstates: <Fz>, I(I+1) - <Fz^2>, flip-flops per site (pair)
    weight: np.ndarray | None      # state weights, sum 1
    lines: _Lines                  # isolated lines, derivatives by the cluster's own sites and pairs


@dataclass(frozen=True)
class _Request:
    """Derivatives wanted from one cluster: the cluster's local pairs (triu positions) and their columns."""

    pairs: np.ndarray      # local triu positions of requested in-cluster pairs
    columns: np.ndarray    # their columns in the cluster's parameter list
    params: _Params


def _triu(k):
    return np.triu_indices(k, 1)


def export_pairs(local, j, requested) -> np.ndarray:
    """Local pairs (triu positions) whose flip-flop expectations the neighbours need.

    Pair (h, h') here enters a neighbour's shift through ``(J_gh t_gh' + J_gh' t_gh) x / 4`` for a
    site g outside; with derivatives, also where only one of the two couplings is non-zero
    and the other is a requested pair.
    """
    k = len(local)
    outside = np.setdiff1d(np.arange(j.shape[0]), local)
    coupled = j[np.ix_(local, outside)] != 0
    touched = coupled | requested[np.ix_(local, outside)]
    h1, h2 = _triu(k)
    both = (coupled[h1] & touched[h2]) | (touched[h1] & coupled[h2])
    return np.flatnonzero(both.any(axis=1)) if both.size else np.zeros(0, dtype=int)


def prepare_cluster(sites, nu, j, n, min_intensity, *, exports: tuple,
                    request: _Request | None) -> _Cluster:
    """Diagonalise a cluster on its own: its lines and, when coupled outside, its eigenstates.

    ``exports`` = (flip-flop pairs the neighbours' lines need, pairs only their derivatives need).
    """
    local = np.array(sites)
    k = len(local)
    outside = np.setdiff1d(np.arange(len(n)), local)
    want_states = bool(np.any(j[np.ix_(local, outside)]))
    subsystems = _build_cluster(n[local])
    sizes = [b.m.shape[0] for s in subsystems for b in s.blocks] or [1]
    in_pairs = request.pairs if request is not None else np.zeros(0, dtype=int)
    xx = np.union1d(in_pairs, np.concatenate(exports) if want_states else np.zeros(0, dtype=int)).astype(int)
    observe = _Observe(k, fz2=want_states, zz=in_pairs, xx=xx)
    n_total = int(n[local].sum())
    scale = 2.0 ** (n_total - 1)
    states = _isolated_states(k)
    eig = diagonalise(subsystems, nu[local], j[np.ix_(local, local)], states)
    parts = [_subsystem_lines(s, e, states, min_intensity * scale, observe, want_states)
             for s, e in zip(subsystems, eig, strict=True)]
    change = np.concatenate([p[3] for p in parts])
    lines = _Lines(np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts]) / scale,
                   change[:, :k], None if request is None else _explicit(change, observe, request, k))
    zq = weight = None
    if want_states:
        zq, weight = _exported_states(parts, subsystems, observe, exports, k, n_total)
    cost = float(np.sum(np.power(sizes, 3.0)))
    return _Cluster(local, subsystems, n_total, int(np.sum(np.square(sizes))), cost, zq, weight, lines)


def _exported_states(parts, subsystems, observe: _Observe, exports, k, n_total):
    """Rows (<Fz> | I(I+1) - <Fz^2> | flip-flops in triu order) of every eigenstate, grouped.

    ``exports`` = (pairs whose flip-flops move the neighbours' lines, pairs needed only for
    derivatives); states are grouped by the first kind only, so the lines do not depend on
    whether derivatives are asked for, and the second kind is averaged within each group.
    """
    base, extra = exports
    n_pairs = k * (k - 1) // 2
    rows, more, weights = [np.zeros((1, 2 * k + n_pairs))], [np.zeros((1, len(extra)))], []
    xx_col = {int(p): i for i, p in enumerate(observe.xx)}
    first_xx = observe.width - len(observe.xx)
    for p, sub in zip(parts, subsystems, strict=True):
        values = p[4]
        spin_sq = np.zeros(k)
        spin_sq[sub.sites] = sub.spin_sq
        block = np.zeros((len(values), 2 * k + n_pairs))
        block[:, :k] = values[:, :k]
        block[:, k:2 * k] = np.where(spin_sq > 0, spin_sq[None, :] - values[:, k:2 * k], 0.0)
        for pos in base:
            block[:, 2 * k + pos] = values[:, first_xx + xx_col[int(pos)]]
        rows.append(block)
        more.append(values[:, [first_xx + xx_col[int(pos)] for pos in extra]])
        weights.append(np.full(len(values), sub.weight / 2.0**n_total))
    rest = max(1.0 - sum(w.sum() for w in weights), 0.0)
    zq, w, added = group_rows(np.concatenate(rows), np.concatenate([[rest], *weights]), np.concatenate(more))
    zq[:, 2 * k + extra] = added
    return zq, w


def _explicit(change, observe: _Observe, request: _Request, k):
    """Derivatives by the cluster's own shifts and couplings: d nu / d nu_g = delta <Fz_g>,
    d nu / d J_gh = delta <Fz_g Fz_h> + delta <F+_g F-_h + F-_g F+_h> / 2 (Hellmann-Feynman)."""
    mapping = np.zeros((observe.width, request.params.size))
    mapping[np.arange(k), np.arange(k)] = 1.0     # the cluster's sites come first in its parameter list
    if len(request.pairs):
        zz0 = k * (2 if observe.fz2 else 1)
        xx_col = {int(p): i for i, p in enumerate(observe.xx)}
        xx0 = observe.width - len(observe.xx)
        for i, (pos, col) in enumerate(zip(request.pairs, request.columns, strict=True)):
            mapping[zz0 + i, col] = 1.0
            mapping[xx0 + xx_col[int(pos)], col] = 0.5
    return change @ mapping


def _rows_to_states(rows, weights, k) -> _States:
    dj = np.zeros((len(weights), k, k))
    upper = _triu(k)
    dj[:, upper[0], upper[1]] = rows[:, 3 * k:]
    dj = dj + np.swapaxes(dj, 1, 2)
    return _States(rows[:, :k], rows[:, k:2 * k], 1.0 + rows[:, 2 * k:3 * k], dj, weights)


def _split_neighbours(sets, cluster: _Cluster):
    budget = min(_MAX_NEIGHBOUR_STATES, max(1, int(_NEIGHBOUR_COST_BUDGET // max(cluster.cost, 1.0))))
    exact, states = [], 1
    for item in sets:
        if states * len(item.weight) > budget:
            break
        exact.append(item)
        states *= len(item.weight)
    return exact, sets[len(exact):]


def _exact_lines(cluster: _Cluster, nu, j, rows, weights, drows, min_intensity, request: _Request | None):
    """Lines of the cluster re-diagonalised for every combined neighbour state (stacked)."""
    local = cluster.sites
    k = len(local)
    states = _rows_to_states(rows, weights, k)
    in_pairs = request.pairs if request is not None else np.zeros(0, dtype=int)
    dj_used = np.zeros(0, dtype=int)
    if request is not None:
        dj_used = np.flatnonzero(np.any(drows[:, 3 * k:, :] != 0, axis=(0, 2)))
    xx = np.union1d(in_pairs, dj_used).astype(int)
    observe = _Observe(k, fz2=request is not None, zz=in_pairs, xx=xx)
    scale = 2.0 ** (cluster.n_protons - 1)
    chunk = max(1, _BATCH_ELEMENTS // cluster.area)
    nu_local, j_local = nu[local], j[np.ix_(local, local)]
    freqs, intens, changes, state_of = [], [], [], []
    for start in range(0, len(weights), chunk):
        part_states = states.rows(slice(start, start + chunk))
        eig = diagonalise(cluster.subsystems, nu_local, j_local, part_states)
        for sub, e in zip(cluster.subsystems, eig, strict=True):
            f, i, s, c, _ = _subsystem_lines(sub, e, part_states, min_intensity * scale, observe)
            freqs.append(f)
            intens.append(i)
            changes.append(c)
            state_of.append(s + start)
    change = np.concatenate(changes)
    deriv = None
    if request is not None:
        deriv = _explicit(change, observe, request, k)
        deriv += _through_rows(change, np.concatenate(state_of), drows, observe, dj_used, k)
    return _Lines(np.concatenate(freqs), np.concatenate(intens) / scale, change[:, :k], deriv)


def _through_rows(change, state, drows, observe: _Observe, dj_used, k):
    """Derivatives through the neighbour terms: sum over terms of (change of the operator it
    multiplies) x (derivative of the term in the line's neighbour state)."""
    xx_col = {int(p): i for i, p in enumerate(observe.xx)}
    xx0 = observe.width - len(observe.xx)
    ops = np.hstack([change[:, :2 * k], 0.5 * change[:, [xx0 + xx_col[int(p)] for p in dj_used]]])
    term_rows = np.concatenate([np.arange(2 * k), 3 * k + dj_used]).astype(int)
    d = drows[:, term_rows, :]                      # (S, R', P)
    n_lines, width = ops.shape
    q = sparse.csr_matrix((ops.ravel(), (np.repeat(np.arange(n_lines), width),
                                         (state[:, None] * width + np.arange(width)[None, :]).ravel())),
                          shape=(n_lines, d.shape[0] * width))
    return np.asarray(q @ d.reshape(-1, d.shape[2]))


def simulate_cluster(cluster: _Cluster, others, nu, j, min_intensity, request: _Request | None):
    """Lines of a cluster with its neighbours' states applied; returns _Lines and global sites."""
    k = len(cluster.sites)
    params = request.params if request is not None else None
    sets = neighbour_sets(cluster.sites, others, nu, j, params)
    exact, rest = _split_neighbours(sets, cluster)
    if exact:
        rows, weights, drows = combine(exact)
        lines = _exact_lines(cluster, nu, j, rows, weights, drows, min_intensity, request)
        if len(weights) > 1:
            lines = _Lines(*_pool_split_lines(lines.freq, lines.inten, lines.delta, min_intensity,
                                              deriv=lines.deriv))
    else:
        lines = cluster.lines
        if rest:
            lines = _Lines(*_pool_split_lines(lines.freq, lines.inten, lines.delta, min_intensity,
                                              deriv=lines.deriv))
    for item in rest:
        doff = None if item.drows is None else item.drows[:, :k, :]
        off, w, doff = reduce_states(item.rows[:, :k], item.weight, doff, _MAX_SPLIT_STATES, _SPLIT_POOL_HZ)
        shift = lines.delta @ off.T          # (n_lines, n_states) first-order move of each line
        freq = (lines.freq[:, None] + shift).ravel()
        inten = (lines.inten[:, None] * w[None, :]).ravel()
        source = np.repeat(np.arange(len(lines.delta)), len(w))
        lines = _Lines(*_pool_split_lines(freq, inten, lines.delta, min_intensity, source,
                                          deriv=lines.deriv, split=doff))
    site = cluster.sites[np.argmax(lines.delta, axis=1)] if len(lines.freq) else np.zeros(0, int)
    return lines, site


def request_for(local, others_sites, j, pairs_global) -> _Request:
    """Parameter list of one cluster: its sites, the sites of coupled neighbours, the requested
    pairs inside it or across to a coupled neighbour."""
    local = np.asarray(local)
    k = len(local)
    coupled = [np.asarray(o) for o in others_sites if np.any(j[np.ix_(o, local)])]
    nb_sites = np.concatenate(coupled) if coupled else np.zeros(0, dtype=int)
    sites = np.concatenate([local, nb_sites]).astype(int)
    inside = set(local.tolist())
    reach = inside | set(nb_sites.tolist())
    chosen, out = [], []
    for i, (a, b) in enumerate(pairs_global):
        if (a in inside or b in inside) and a in reach and b in reach:
            chosen.append((a, b))
            out.append(i)
    pairs = np.array(chosen, dtype=int).reshape(-1, 2)
    params = _Params(sites, pairs, np.array(out, dtype=int))
    pos = {int(s): i for i, s in enumerate(local)}
    in_pos, in_col = [], []
    for c, (a, b) in enumerate(pairs):
        if int(a) in inside and int(b) in inside:
            g, h = sorted((pos[int(a)], pos[int(b)]))
            in_pos.append(_pair_index(g, h, k))
            in_col.append(k + len(nb_sites) + c)
    return _Request(np.array(in_pos, dtype=int), np.array(in_col, dtype=int), params)
