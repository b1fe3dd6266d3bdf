"""Lines of one cluster: batched diagonalisation and the treatment of neighbouring clusters."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from predictors.spin._basis import _Block, _build_cluster, _Subsystem
from predictors.spin._lines import _SPLIT_POOL_HZ, _pool_split_lines

# Neighbour states handled by re-diagonalising the cluster once per state (batched):
# at most this many, and (states x cluster cost) below the budget; beyond it,
# neighbours are applied as first-order splittings of the finished lines.
_NEIGHBOUR_COST_BUDGET = 4e6
_MAX_NEIGHBOUR_STATES = 4096
_BATCH_ELEMENTS = 1_000_000  # states x block size^2 diagonalised in one stacked call

# Cut couplings with |J / dnu| above this get no second-order correction.
_PERTURB_LIMIT = 0.25
# Neighbours applied as splittings of finished lines: at most this many state
# offsets each, and split lines of one site closer than this are pooled.
_MAX_SPLIT_STATES = 16


@dataclass(frozen=True)
class _States:
    """Spin states of the neighbours of a cluster as seen by the cluster's k sites.

    Each row is one combination of neighbour eigenstates with its weight.
    ``lin`` moves the shifts (first order plus the second-order Bloch-Siegert
    type term), ``quad`` multiplies ``Fz_g**2``, ``scale`` multiplies each
    site's share of the lowering operator (intensity correction), ``dj`` adds
    to the couplings inside the cluster (k x k).
    """

    lin: np.ndarray
    quad: np.ndarray
    scale: np.ndarray
    dj: np.ndarray
    weight: np.ndarray


def _isolated_states(k: int) -> _States:
    return _States(np.zeros((1, k)), np.zeros((1, k)), np.ones((1, k)), np.zeros((1, k, k)), np.ones(1))


def _diagonalise_batch(block: _Block, nu, quad, j_pairs, dj_pairs):
    """Eigenvalues (S, n) and vectors (S, n, n) of one block for S neighbour states."""
    n_batch, n_states = nu.shape[0], block.m.shape[0]
    diag = nu @ block.m.T + (block.mm @ j_pairs)[None, :] + quad @ (block.m**2).T
    if n_states == 1:
        return diag, np.ones((n_batch, 1, 1))
    h = np.zeros((n_batch, n_states, n_states))
    idx = np.arange(n_states)
    h[:, idx, idx] = diag
    if block.rows.size:
        vals = 0.5 * (j_pairs[block.pair][None, :] + dj_pairs[:, block.pair]) * block.coef[None, :]
        h[:, block.rows, block.cols] = vals
        h[:, block.cols, block.rows] = vals
    return np.linalg.eigh(h)


#: Blocks whose work (states**3 x neighbour states) reaches this are diagonalised on two
#: threads (LAPACK releases the GIL); smaller work is not worth a thread.
_THREADED_BLOCK_WORK = 2_000_000


def _diagonalise_blocks(blocks, nu, quad, j_pairs, dj_pairs):
    """Eigen-decomposition of every Fz block; the large ones on two threads."""
    work = [b.m.shape[0] ** 3 * nu.shape[0] for b in blocks]
    big = [i for i, w in enumerate(work) if w >= _THREADED_BLOCK_WORK]
    if len(big) < 2:
        return [_diagonalise_batch(b, nu, quad, j_pairs, dj_pairs) for b in blocks]
    from concurrent.futures import ThreadPoolExecutor

    out = [None] * len(blocks)
    with ThreadPoolExecutor(max_workers=2) as pool:
        futures = {i: pool.submit(_diagonalise_batch, blocks[i], nu, quad, j_pairs, dj_pairs) for i in big}
        for i, b in enumerate(blocks):
            if i not in futures:
                out[i] = _diagonalise_batch(b, nu, quad, j_pairs, dj_pairs)
        for i, fut in futures.items():
            out[i] = fut.result()
    return out


def _subsystem_lines(sub: _Subsystem, nu_local, j_local, states: _States, min_intensity,
                     want_states: bool = False):
    """Lines of one composite-spin subsystem for every neighbour state (batched).

    Returns freq, intensity (times the state and subsystem weights, not yet
    normalised), delta <Fz> per cluster site, and for the first state the
    eigenstates' <Fz> and I(I+1) - <Fz^2> per cluster site.
    """
    k = len(nu_local)
    first, second = sub.pairs[:, 0], sub.pairs[:, 1]
    g_first, g_second = sub.sites[first], sub.sites[second]
    nu = nu_local[None, sub.sites] + states.lin[:, sub.sites]
    quad = states.quad[:, sub.sites]
    j_pairs = j_local[g_first, g_second]
    dj_pairs = states.dj[:, g_first, g_second]
    eig = _diagonalise_blocks(sub.blocks, nu, quad, j_pairs, dj_pairs)
    # <Fz> of every eigenstate per cluster site: squared eigenvector components against m, (S * n, k)
    to_sites = np.eye(k)[sub.sites]
    fz = [(np.swapaxes(np.square(v), 1, 2) @ (b.m @ to_sites)).reshape(-1, k)
          for (_, v), b in zip(eig, sub.blocks, strict=True)]
    scale = states.scale[:, sub.sites]
    isolated = len(states.weight) == 1 and np.all(scale == 1.0)
    weight = sub.weight * states.weight
    freqs, intens, pairs = [], [], []
    for b, op in enumerate(sub.lowering):
        (e_up, v_up), (e_lo, v_lo) = eig[b], eig[b + 1]
        n_lo, n_up = op.shape[1:]
        if isolated:
            amp = (v_lo[0].T @ (sub.lowering_sum[b] @ v_up[0]))[None]
        else:
            lower = (scale @ op.reshape(op.shape[0], -1)).reshape(-1, n_lo, n_up)
            amp = np.swapaxes(v_lo, 1, 2) @ (lower @ v_up)
        inten = np.square(amp, out=amp)
        inten *= weight[:, None, None]
        allowed = inten > min_intensity
        if isolated:
            lo_index, up_index = np.nonzero(allowed[0])
        else:
            s, lo, up = np.nonzero(allowed)
            up_index, lo_index = s * n_up + up, s * n_lo + lo
        freqs.append(np.take(e_up, up_index) - np.take(e_lo, lo_index))
        intens.append(inten[allowed])
        pairs.append((up_index, lo_index))
    delta = np.empty((sum(len(f) for f in freqs), k))
    start = 0
    for b, (up_index, lo_index) in enumerate(pairs):  # written in place: no per-pair copies
        part = delta[start:start + len(up_index)]
        np.take(fz[b], up_index, axis=0, out=part)
        part -= np.take(fz[b + 1], lo_index, axis=0)
        start += len(up_index)
    lines = (np.concatenate(freqs), np.concatenate(intens)) if freqs else (np.zeros(0), np.zeros(0))
    if not want_states:
        return (*lines, delta, None)
    z = np.concatenate([f[:b.m.shape[0]] for f, b in zip(fz, sub.blocks, strict=True)])
    fz2 = np.concatenate([np.square(v[0]).T @ np.square(b.m) for (_, v), b in
                          zip(eig, sub.blocks, strict=True)])
    q = np.zeros_like(z)
    q[:, sub.sites] = sub.spin_sq[None, :] - fz2
    x = np.zeros((len(z), k * (k - 1) // 2))
    x[:, _pair_index(g_first, g_second, k)] = np.concatenate(
        [_flip_flop_expectation(b, v[0], len(first)) for (_, v), b in zip(eig, sub.blocks, strict=True)])
    return (*lines, delta, (z, q, x))


def _pair_index(a, b, k):
    """Position of site pairs (a < b) in ``np.triu_indices(k, 1)`` order."""
    return (a * (2 * k - a - 1)) // 2 + (b - a - 1)


def _flip_flop_expectation(block: _Block, vecs, n_pairs):
    """<F+_g F-_h + F-_g F+_h> of every composite-spin pair in every eigenstate, (n_states, n_pairs)."""
    out = np.zeros((vecs.shape[1], n_pairs))
    if block.rows.size:
        prod = np.take(vecs, block.rows, axis=0) * np.take(vecs, block.cols, axis=0)
        prod *= 2.0 * block.coef[:, None]
        starts = np.flatnonzero(np.diff(block.pair, prepend=-1))
        out[:, block.pair[starts]] = np.add.reduceat(prod, starts, axis=0).T
    return out


def _chunks(states: _States, size: int):
    for start in range(0, len(states.weight), size):
        sl = slice(start, start + size)
        yield _States(states.lin[sl], states.quad[sl], states.scale[sl], states.dj[sl], states.weight[sl])


def _cluster_lines(cluster: _Cluster, nu_local, j_local, states: _States, min_intensity):
    """Lines of a cluster (Hz, intensity, delta <Fz>) summed over the neighbour states."""
    scale = 2.0 ** (cluster.n_protons - 1)
    chunk = max(1, _BATCH_ELEMENTS // cluster.largest_block**2)
    parts = [_subsystem_lines(s, nu_local, j_local, c, min_intensity * scale)
             for c in _chunks(states, chunk) for s in cluster.subsystems]
    freq = np.concatenate([p[0] for p in parts])
    inten = np.concatenate([p[1] for p in parts]) / scale
    delta = np.concatenate([p[2] for p in parts])
    return freq, inten, delta


def _isolated_lines_and_states(cluster: _Cluster, nu_local, j_local, min_intensity, want_states: bool):
    """Lines of an isolated cluster plus (<Fz>, I(I+1) - <Fz^2>) per site of every eigenstate.

    The states come as rows (n_states, 2 k) with weights summing to 1
    (states where every group has total spin 0 are one row of zeros).
    """
    n_total = cluster.n_protons
    scale = 2.0 ** (n_total - 1)
    states = _isolated_states(len(nu_local))
    parts = [_subsystem_lines(s, nu_local, j_local, states, min_intensity * scale, want_states)
             for s in cluster.subsystems]
    lines = tuple(parts[0][k] if len(parts) == 1 else np.concatenate([p[k] for p in parts]) for k in range(3))
    if not want_states:
        return (lines[0], lines[1] / scale, lines[2]), None, None
    weights = [np.full(len(p[3][0]), sub.weight / 2.0**n_total)
               for p, sub in zip(parts, cluster.subsystems, strict=True)]
    rest = max(1.0 - sum(w.sum() for w in weights), 0.0)
    k = len(nu_local)
    rows = np.concatenate([np.zeros((1, 2 * k + k * (k - 1) // 2))] + [np.hstack(p[3]) for p in parts])
    zq, w = _group_rows(rows, np.concatenate([[rest], *weights]))
    return (lines[0], lines[1] / scale, lines[2]), zq, w


def _group_rows(values: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge rows equal within 1e-6 (Hz or spin units), adding their weights.

    Rows are sorted by a hash of their rounded values; neighbours join only
    when the rounded rows are equal, so a hash collision can at worst leave
    two equal rows apart (same result, one more state).
    """
    keys = np.round(values / 1e-6).astype(np.int64)
    mult = np.arange(1, keys.shape[1] + 1, dtype=np.uint64) * np.uint64(0x9E3779B97F4A7C15) | np.uint64(1)
    digest = (keys.view(np.uint64) * mult).sum(axis=1, dtype=np.uint64)
    order = np.argsort(digest, kind="stable")  # the first of equal rows stands for them
    ordered = keys[order]
    new_group = np.ones(len(order), dtype=bool)
    new_group[1:] = np.any(ordered[1:] != ordered[:-1], axis=1)
    group = np.cumsum(new_group) - 1
    total = np.bincount(group, weights=weights[order])
    keep = total > 0
    return values[order[new_group]][keep], total[keep]


@dataclass(frozen=True)
class _Cluster:
    sites: np.ndarray              # global site indices
    subsystems: list               # composite-spin subsystems
    n_protons: int
    largest_block: int
    cost: float                    # sum of block sizes cubed
    zq: np.ndarray = None          # isolated eigenstates: <Fz> and I(I+1) - <Fz^2> per site
    weight: np.ndarray = None      # state weights, sum 1
    lines: tuple = ()              # isolated lines: freq (Hz), intensity, delta <Fz>


def _prepare_cluster(sites, nu, j, n, min_intensity) -> _Cluster:
    local = np.array(sites)
    outside = np.setdiff1d(np.arange(len(n)), local)
    want_states = bool(np.any(j[np.ix_(local, outside)]))
    subsystems = _build_cluster(n[local])
    sizes = [b.m.shape[0] for s in subsystems for b in s.blocks] or [1]
    bare = _Cluster(local, subsystems, int(n[local].sum()), max(sizes), float(np.sum(np.power(sizes, 3.0))))
    lines, zq, w = _isolated_lines_and_states(bare, nu[local], j[np.ix_(local, local)], min_intensity,
                                              want_states)
    return _Cluster(local, subsystems, bare.n_protons, bare.largest_block, bare.cost, zq, w, lines)


def _neighbour_states(cluster: _Cluster, others: list[_Cluster], nu, j):
    """Parameters each neighbouring cluster's eigenstates put on this cluster's sites.

    With ``t = J_gh / (nu_g - nu_h)`` for a cut coupling (g here, h there),
    perturbation theory to second order in t gives, per neighbour state with
    ``z = <Fz_h>`` and ``q = I_h(I_h+1) - <Fz_h^2>``: a shift
    ``J z + J t q / 2`` of g (plus ``(J_gh t_gh' + J_gh' t_gh) x / 4`` for
    every pair h, h' there, x = <F+_h F-_h' + F-_h F+_h'>), a term ``J t z / 2 * Fz_g^2``, an extra
    coupling ``-(J_gh t_g'h + J_g'h t_gh) z / 2`` between g and g' and a
    factor ``1 - t z`` on g's part of the lowering operator. Cuts with
    ``|t| > _PERTURB_LIMIT`` (strong couplings cut for size) keep only the
    first-order shift. Returns a list of (rows, weights), largest coupling first.
    """
    a = cluster.sites
    k = len(a)
    upper = np.triu_indices(k, 1)
    found = []
    for other in others:
        cross = j[np.ix_(other.sites, a)]
        if not np.any(cross):
            continue
        gap = nu[a][None, :] - nu[other.sites][:, None]
        # t = J / gap where the cut is perturbative; 0 where there is no coupling (even at gap 0)
        small = (cross != 0) & (np.abs(cross) <= _PERTURB_LIMIT * np.abs(gap))
        t = np.divide(cross, gap, out=np.zeros_like(cross, dtype=float), where=small)
        kb = len(other.sites)
        z, q, x = other.zq[:, :kb], other.zq[:, kb:2 * kb], other.zq[:, 2 * kb:]
        h1, h2 = np.triu_indices(kb, 1)
        lin = z @ cross + q @ (cross * t / 2) + x @ ((cross[h1] * t[h2] + cross[h2] * t[h1]) / 4)
        quad = z @ (cross * t / 2)
        scale = -(z @ t)
        dj = -0.5 * np.einsum("sh,hg,hk->sgk", z, cross, t)
        dj = dj + np.swapaxes(dj, 1, 2)
        rows = np.hstack([lin, quad, scale, dj[:, upper[0], upper[1]]])
        rows, weights = _group_rows(rows, other.weight)
        found.append((float(np.max(np.abs(cross))), int(other.sites.min()), rows, weights))
    found.sort(key=lambda item: (-item[0], item[1]))
    return [(rows, w) for _, _, rows, w in found]


def _rows_to_states(rows, weights, k) -> _States:
    dj = np.zeros((len(weights), k, k))
    upper = np.triu_indices(k, 1)
    dj[:, upper[0], upper[1]] = rows[:, 3 * k:]
    dj = dj + np.swapaxes(dj, 1, 2)
    return _States(rows[:, :k], rows[:, k:2 * k], 1.0 + rows[:, 2 * k:3 * k], dj, weights)


def _combine_offsets(sets):
    offsets, weights = sets[0]
    for off, w in sets[1:]:
        offsets = (offsets[:, None, :] + off[None, :, :]).reshape(-1, off.shape[1])
        weights = (weights[:, None] * w[None, :]).ravel()
        offsets, weights = _group_rows(offsets, weights)
    return offsets, weights


def _split_neighbours(sets, cluster: _Cluster):
    budget = min(_MAX_NEIGHBOUR_STATES, max(1, int(_NEIGHBOUR_COST_BUDGET // max(cluster.cost, 1.0))))
    exact, states = [], 1
    for item in sets:
        if states * len(item[1]) > budget:
            break
        exact.append(item)
        states *= len(item[1])
    return exact, sets[len(exact):]


def _simulate_clusters_reusing(plan_clusters, nu, j, n, min_intensity, memo: dict):
    """Lines of every cluster (as in simulate_arrays), looked up in ``memo`` by exact inputs."""
    keys, clusters = [], []
    for sites in plan_clusters:
        local = np.array(sites)
        key = ("prepared", tuple(sites), nu[local].tobytes(), j[np.ix_(local, local)].tobytes(),
               n[local].tobytes(), bool(np.any(np.delete(j[local], local, axis=1))), min_intensity)
        if key not in memo:
            memo[key] = _prepare_cluster(sites, nu, j, n, min_intensity)
        keys.append(key)
        clusters.append(memo[key])
    parts = []
    for c, key in zip(clusters, keys, strict=True):
        coupled = tuple((k2, j[np.ix_(o.sites, c.sites)].tobytes())
                        for o, k2 in zip(clusters, keys, strict=True)
                        if o is not c and np.any(j[np.ix_(o.sites, c.sites)]))
        full = ("lines", key, coupled)
        if full not in memo:
            memo[full] = _simulate_cluster(c, [o for o in clusters if o is not c], nu, j, min_intensity)
        parts.append(memo[full])
    return parts


def _simulate_cluster(cluster: _Cluster, others, nu, j, min_intensity):
    local = cluster.sites
    k = len(local)
    sets = _neighbour_states(cluster, others, nu, j)
    exact, rest = _split_neighbours(sets, cluster)
    if exact:
        rows, weights = _combine_offsets(exact)
        states = _rows_to_states(rows, weights, k)
        j_local = j[np.ix_(local, local)]
        freq, inten, delta = _cluster_lines(cluster, nu[local], j_local, states, min_intensity)
        if len(weights) > 1:
            freq, inten, delta = _pool_split_lines(freq, inten, delta, min_intensity)
    else:
        freq, inten, delta = cluster.lines
        if rest:
            freq, inten, delta = _pool_split_lines(freq, inten, delta, min_intensity)
    for rows, w in rest:
        off, w = _reduce_states(rows[:, :k], w)
        shift = delta @ off.T          # (n_lines, n_states) first-order move of each line
        freq = (freq[:, None] + shift).ravel()
        inten = (inten[:, None] * w[None, :]).ravel()
        source = np.repeat(np.arange(len(delta)), len(w))
        freq, inten, delta = _pool_split_lines(freq, inten, delta, min_intensity, source)
    return freq, inten, local[np.argmax(delta, axis=1)] if len(freq) else np.zeros(0, int)


def _reduce_states(offsets, weights, max_rows: int = _MAX_SPLIT_STATES):
    """Bin a neighbour's state offsets (Hz) until at most ``max_rows`` remain (weighted means)."""
    keep = weights > 0
    offsets, weights = offsets[keep], weights[keep]
    step = _SPLIT_POOL_HZ
    while len(weights) > max_rows:
        keys = np.round(offsets / step).astype(np.int64)
        _, inverse = np.unique(keys, axis=0, return_inverse=True)
        inverse = inverse.ravel()
        total = np.bincount(inverse, weights=weights)
        offsets = np.stack([np.bincount(inverse, weights=weights * col) for col in offsets.T], axis=1)
        offsets, weights = offsets / total[:, None], total
        step *= 2.0
    return offsets, weights
