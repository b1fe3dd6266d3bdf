"""Composite-spin basis of a cluster: Fz blocks, flip-flop elements and lowering operators."""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass

import numpy as np
from scipy import sparse


def _group_spins(n: int) -> list[tuple[float, int]]:
    """Total-spin values of ``n`` equivalent spins 1/2 with their multiplicities."""
    out = []
    for k in range(n // 2 + 1):
        mult = math.comb(n, k) - (math.comb(n, k - 1) if k else 0)
        out.append((n / 2 - k, mult))
    return out


@dataclass(frozen=True)
class _Block:
    m: np.ndarray          # (n_states, G) m value of each composite spin
    mm: np.ndarray         # (n_states, n_pairs) products m_g m_h
    rows: np.ndarray       # flip-flop element positions
    cols: np.ndarray
    pair: np.ndarray       # index into the pair list
    coef: np.ndarray       # sqrt factors of the flip-flop


@dataclass(frozen=True, eq=False)
class _Subsystem:
    sites: np.ndarray      # local cluster site of each composite spin (I > 0)
    spin_sq: np.ndarray    # I (I + 1) of each composite spin
    pairs: np.ndarray      # (n_pairs, 2) composite-spin pairs
    weight: float          # multiplicity of this combination of total spins
    blocks: tuple[_Block, ...]   # M descending
    lowering: tuple[np.ndarray, ...]   # F-_g from block b to b+1, shape (G, n_{b+1}, n_b)
    lowering_sum: tuple = ()   # sum over g of the above (total F-), sparse CSR


def _build_subsystem(spins: np.ndarray, sites: np.ndarray, weight: float) -> _Subsystem:
    dims = (2 * spins + 1).round().astype(int)
    k = np.indices(dims).reshape(len(dims), -1).T
    m = spins[None, :] - k
    total = m.sum(axis=1)
    order = np.lexsort((np.arange(len(total)), -total))
    _, first, sizes = np.unique(-total[order], return_index=True, return_counts=True)
    block_of = np.empty(len(total), dtype=int)
    pos_of = np.empty(len(total), dtype=int)
    block_of[order] = np.repeat(np.arange(len(sizes)), sizes)
    pos_of[order] = np.arange(len(total)) - np.repeat(first, sizes)
    members = np.split(order, first[1:])
    strides = np.array([int(np.prod(dims[g + 1:])) for g in range(len(dims))])
    pairs = np.array(list(itertools.combinations(range(len(dims)), 2)), dtype=int).reshape(-1, 2)
    flips = _split_by_block(_flip_flops(m, k, dims, strides, pairs, spins), block_of, pos_of, len(sizes))
    mm = m[:, pairs[:, 0]] * m[:, pairs[:, 1]]
    blocks = tuple(_Block(m[idx], mm[idx], *flips[b]) for b, idx in enumerate(members))
    lowering = _lowering_ops(m, k, dims, strides, spins, block_of, pos_of, sizes)
    total = tuple(sparse.csr_matrix(op.sum(axis=0)) for op in lowering)
    return _Subsystem(sites, spins * (spins + 1), pairs, weight, blocks, lowering, total)


def _raise_coef(spin, m):
    return np.sqrt(np.maximum(spin * (spin + 1) - m * (m + 1), 0.0))


def _lower_coef(spin, m):
    return np.sqrt(np.maximum(spin * (spin + 1) - m * (m - 1), 0.0))


def _flip_flops(m, k, dims, strides, pairs, spins):
    """All F+_g F-_h elements (g < h): source state, target state, pair index, factor."""
    src, dst, which, coef = [np.zeros(0, int)], [np.zeros(0, int)], [np.zeros(0, int)], [np.zeros(0)]
    for p, (g, h) in enumerate(pairs):
        s = np.flatnonzero((k[:, g] >= 1) & (k[:, h] < dims[h] - 1))
        src.append(s)
        dst.append(s - strides[g] + strides[h])
        which.append(np.full(len(s), p))
        coef.append(_raise_coef(spins[g], m[s, g]) * _lower_coef(spins[h], m[s, h]))
    return [np.concatenate(x) for x in (src, dst, which, coef)]


def _split_by_block(flips, block_of, pos_of, n_blocks):
    src, dst, which, coef = flips
    blk = block_of[src]
    order = np.argsort(blk, kind="stable")
    cuts = np.searchsorted(blk[order], np.arange(1, n_blocks))
    parts = [np.split(a[order], cuts) for a in (pos_of[src], pos_of[dst], which, coef)]
    return [tuple(p[b] for p in parts) for b in range(n_blocks)]


def _lowering_ops(m, k, dims, strides, spins, block_of, pos_of, sizes):
    """Dense F-_g of every composite spin g from each block to the next, shape (G, n_lower, n_upper)."""
    ops = [np.zeros((len(dims), sizes[b + 1], sizes[b])) for b in range(len(sizes) - 1)]
    for g in range(len(dims)):
        s = np.flatnonzero(k[:, g] < dims[g] - 1)
        vals = _lower_coef(spins[g], m[s, g])
        blk = block_of[s]
        for b in range(len(ops)):
            sel = blk == b
            ops[b][g, pos_of[s[sel] + strides[g]], pos_of[s[sel]]] = vals[sel]
    return tuple(ops)


def _build_cluster(n_local: np.ndarray) -> tuple[_Subsystem, ...]:
    return _build_cluster_cached(tuple(int(x) for x in n_local))


@functools.lru_cache(maxsize=64)
def _build_cluster_cached(n_local: tuple[int, ...]) -> tuple[_Subsystem, ...]:
    """Composite-spin bases of a cluster; a pure function of the proton counts (arrays read-only)."""
    options = [_group_spins(n) for n in n_local]
    subsystems = []
    for combo in itertools.product(*options):
        spins = np.array([s for s, _ in combo])
        weight = float(np.prod([w for _, w in combo]))
        active = np.flatnonzero(spins > 0)
        if active.size:
            subsystems.append(_build_subsystem(spins[active], active, weight))
    for sub in subsystems:
        for arr in _arrays_of(sub):
            arr.flags.writeable = False
    return tuple(subsystems)


def _arrays_of(sub: _Subsystem):
    yield from (sub.sites, sub.spin_sq, sub.pairs, *sub.lowering)
    for block in sub.blocks:
        yield from (block.m, block.mm, block.rows, block.cols, block.pair, block.coef)
