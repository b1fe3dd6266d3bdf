"""Exact simulation of 1H spin systems and rendering of their line shapes.

The Hamiltonian (in Hz, rotating frame at 0 ppm) is

    H = sum_g nu_g Fz_g + sum_{g<h} J_gh F_g . F_h

where each *site* g is a group of ``n_g`` magnetically equivalent protons with
total-spin operators F_g. Equivalent groups are handled as composite spins:
the group's states split into total spin values I_g (with multiplicities from
the coupling of ``n_g`` spins 1/2); couplings inside a group do not show in the
spectrum and are not needed. The Hamiltonian commutes with the total Fz, so it
is diagonalised block by block (one block per total M). Lines are the
transitions between adjacent blocks, intensity ``|<lower|F-|upper>|^2``.

Large molecules are split into clusters (see :func:`plan_clusters`): sites
joined by strong couplings (``|J| > cluster_ratio * |delta nu|``, or a
coupling that changes how a strongly coupled pair mixes) are simulated
exactly, and weak couplings still join clusters while these stay cheap.
Couplings between clusters enter per eigenstate of the neighbouring clusters,
to second order in ``J / delta nu`` (shifts, an ``Fz**2`` term, couplings
induced inside the cluster and an intensity factor): for the largest
affordable set of neighbours the cluster is re-diagonalised for every
neighbour state at once (stacked ``eigh``; the way an ABX system's AB part is
two AB quartets), and any remaining neighbours split each line first order by
the line's change of ``<Fz>``. If a cluster would exceed ``max_cluster_spins``
protons, its weakest strong couplings are cut; this is reported in
:attr:`LineList.warnings`.
"""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.special import erf

from predictors.core import LineList, SpinSystem
from predictors.errors import InputError

__all__ = [
    "ClusterPlan",
    "LINE_SHAPES",
    "model_spectrum",
    "plan_clusters",
    "render_lines",
    "render_sites",
    "simulate_arrays",
    "simulate_arrays_reusing",
    "simulate_lines",
]

#: Allowed values of ``shape`` in the rendering functions.
LINE_SHAPES = ("lorentzian", "gaussian", "voigt")
#: Spectrometer frequencies the simulator accepts (1H, MHz).
FIELD_RANGE_MHZ = (40.0, 1200.0)
_MERGE_TOL_HZ = 1e-4  # lines of one site this close are one line (centroid)
_DROP_FRACTION = 1e-6
_DROP_TOTAL = 1e-5
_MAX_SPINS_ALLOWED = 14
_POOL_STEP = 0.01  # lines closer than this many line widths are drawn as one
_DIRECT_LIMIT = 2_000_000  # lines x points above which uniform grids are drawn by FFT
# Neighbour states handled by re-diagonalising the cluster once per state (batched):
# at most this many, and (states x cluster cost) below the budget; beyond it,
# neighbours are applied as first-order splittings of the finished lines.
_NEIGHBOUR_COST_BUDGET = 4e6
_MAX_NEIGHBOUR_STATES = 4096
_BATCH_ELEMENTS = 1_000_000  # states x block size^2 diagonalised in one stacked call
# Weak couplings (|J / dnu| above the first value) still join clusters while the
# joined cluster costs at most the second (sum of block sizes cubed; 8 distinct
# protons cost 7.4e5, 9 cost 5.3e6).
_WEAK_JOIN_RATIO = 2e-3
_WEAK_JOIN_COST = 1e6
# Cut couplings with |J / dnu| above this get no second-order correction.
_PERTURB_LIMIT = 0.25
# Neighbours applied as splittings of finished lines: at most this many state
# offsets each, and split lines of one site closer than this are pooled.
_MAX_SPLIT_STATES = 16
_SPLIT_POOL_HZ = 0.005
# Clusters kept by simulate_arrays_reusing before its memo is emptied.
_MEMO_LIMIT = 4096


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


# ---------------------------------------------------------------------------
# input checks


def _check_field(field_mhz) -> float:
    low, high = FIELD_RANGE_MHZ
    try:
        value = float(field_mhz)
    except (TypeError, ValueError):
        raise InputError(f"field_mhz: expected a number, got {field_mhz!r}") from None
    if not math.isfinite(value) or not low <= value <= high:
        raise InputError(f"field_mhz: {field_mhz!r} is outside the allowed {low:g}-{high:g} MHz")
    return value


def _check_arrays(shifts_ppm, j_hz, n_protons) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    try:
        shifts = np.asarray(shifts_ppm, dtype=float)
        j = np.asarray(j_hz, dtype=float)
        n_raw = np.asarray(n_protons, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"shifts_ppm, j_hz, n_protons: expected numeric arrays ({exc})") from None
    if shifts.ndim != 1 or shifts.size == 0:
        raise InputError(f"shifts_ppm: expected a non-empty 1-D array, got shape {shifts.shape}")
    n_sites = shifts.size
    if not np.all(np.isfinite(shifts)):
        raise InputError(f"shifts_ppm: contains NaN or infinite values: {shifts.tolist()}")
    if j.shape != (n_sites, n_sites):
        raise InputError(f"j_hz: expected shape ({n_sites}, {n_sites}) for {n_sites} sites, got {j.shape}")
    if not np.all(np.isfinite(j)):
        raise InputError("j_hz: contains NaN or infinite values")
    asym = np.abs(j - j.T)
    if np.any(asym > 1e-6 * (1.0 + np.abs(j))):
        a, b = np.unravel_index(np.argmax(asym), asym.shape)
        raise InputError(
            f"j_hz: coupling matrix must be symmetric; j_hz[{a},{b}]={j[a, b]!r} "
            f"but j_hz[{b},{a}]={j[b, a]!r}"
        )
    if n_raw.shape != (n_sites,):
        raise InputError(f"n_protons: expected {n_sites} values (one per site), got shape {n_raw.shape}")
    if not np.all(np.isfinite(n_raw)) or np.any(n_raw < 1) or np.any(n_raw != np.round(n_raw)):
        raise InputError(f"n_protons: expected whole numbers >= 1, got {n_raw.tolist()}")
    j = 0.5 * (j + j.T)
    np.fill_diagonal(j, 0.0)
    return shifts, j, n_raw.astype(int)


def _check_options(max_cluster_spins, cluster_ratio) -> tuple[int, float]:
    if (isinstance(max_cluster_spins, bool) or not isinstance(max_cluster_spins, (int, np.integer))
            or not 1 <= max_cluster_spins <= _MAX_SPINS_ALLOWED):
        raise InputError(
            f"max_cluster_spins: expected a whole number from 1 to {_MAX_SPINS_ALLOWED}, "
            f"got {max_cluster_spins!r}"
        )
    try:
        ratio = float(cluster_ratio)
    except (TypeError, ValueError):
        raise InputError(f"cluster_ratio: expected a number, got {cluster_ratio!r}") from None
    if not math.isfinite(ratio) or ratio <= 0:
        raise InputError(f"cluster_ratio: expected a finite number > 0, got {cluster_ratio!r}")
    return int(max_cluster_spins), ratio


# ---------------------------------------------------------------------------
# clusters


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


# ---------------------------------------------------------------------------
# composite-spin basis of one cluster


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


@dataclass(frozen=True)
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


# ---------------------------------------------------------------------------
# diagonalisation and transitions, batched over neighbour states


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


def _pool_split_lines(freq, inten, delta, min_intensity, source=None):
    """Pool lines of the same main site closer than _SPLIT_POOL_HZ (weighted means); drop tiny ones.

    Line i has the change of <Fz> ``delta[source[i]]`` (``delta[i]`` when
    ``source`` is None), so lines split from one parent need no copies of it.
    """
    kept = np.flatnonzero(inten > min_intensity)
    source = kept if source is None else source[kept]
    freq, inten = freq[kept], inten[kept]
    if freq.size == 0:
        return freq, inten, delta[:0]
    cell = np.round(freq / _SPLIT_POOL_HZ).astype(np.int64)
    cell -= cell.min()
    keys = np.argmax(delta, axis=1).astype(np.int64)[source] * (int(cell.max()) + 1) + cell
    _, inverse = _group_keys(keys)
    total = np.bincount(inverse, weights=inten)
    pool = sparse.csr_matrix((inten, (inverse, source)), shape=(total.size, len(delta)))
    return np.bincount(inverse, weights=inten * freq) / total, total, (pool @ delta) / total[:, None]


def _merge_lines(freq, inten, site):
    """Pool the lines of each site that fall in one _MERGE_TOL_HZ cell (intensity-weighted centre).

    The pooled lines come out by descending cell (so nearly by descending
    frequency), sites ascending within a cell.
    """
    if freq.size == 0:
        return freq, inten, site
    n_sites = int(site.max()) + 1
    cell = np.round((freq - freq.min()) / _MERGE_TOL_HZ).astype(np.int64)
    uniq, inverse = _group_keys((int(cell.max()) - cell) * n_sites + site)
    total = np.bincount(inverse, weights=inten)
    centre = np.bincount(inverse, weights=inten * freq) / np.where(total > 0, total, 1.0)
    return centre, total, uniq % n_sites


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


def simulate_arrays(shifts_ppm, j_hz, n_protons, *, field_mhz: float, max_cluster_spins: int = 12,
                    cluster_ratio: float = 0.05) -> LineList:
    """Simulate the 1H spectrum lines of a spin system given as arrays.

    Parameters
    ----------
    shifts_ppm : array_like, shape (n_sites,)
        Chemical shift of each site.
    j_hz : array_like, shape (n_sites, n_sites)
        Symmetric signed couplings between sites in Hz; the diagonal is
        ignored (couplings inside an equivalent group do not show).
    n_protons : array_like of int, shape (n_sites,)
        Protons per site; each site is a magnetically equivalent group.
    field_mhz : float
        1H spectrometer frequency, 40-1200 MHz.
    max_cluster_spins : int, optional
        Most protons simulated together exactly (1-14, default 12).
    cluster_ratio : float, optional
        Couplings with ``|J| <= cluster_ratio * |delta nu|`` (see
        :func:`plan_clusters`) may be cut and are then applied to second
        order; the error left is third order in the ratio for positions and
        second order for intensities (default 0.05: within 1 % of the peak
        height against the full matrix on alkenyl chains at 60-400 MHz).

    Returns
    -------
    LineList
        Lines in ppm; intensities sum to ``sum(n_protons)``; ``warnings``
        names any strong coupling cut because of ``max_cluster_spins``.

    Raises
    ------
    InputError
        Non-symmetric or non-finite couplings, bad shifts, proton counts,
        field or options.
    """
    return _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, None)


def simulate_arrays_reusing(shifts_ppm, j_hz, n_protons, *, field_mhz: float, memo: dict,
                            max_cluster_spins: int = 12, cluster_ratio: float = 0.05) -> LineList:
    """:func:`simulate_arrays`, reusing the clusters of earlier calls that shared ``memo``.

    For callers that simulate one molecule many times with a few values changed (a coupling
    nudged to take a derivative): a cluster whose sites, shifts, couplings and proton counts,
    and those of the clusters it is coupled to, are bitwise equal to an earlier one's is not
    diagonalised again, so the lines are identical to :func:`simulate_arrays`'.

    Parameters
    ----------
    shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio
        As for :func:`simulate_arrays`.
    memo : dict
        Owned by the caller; start with an empty dict and pass the same one to related calls.
        It is emptied when it grows past a few thousand clusters.

    Returns
    -------
    LineList
    """
    if not isinstance(memo, dict):
        raise InputError(f"memo: expected a dict, got {type(memo).__name__}")
    if len(memo) > _MEMO_LIMIT:
        memo.clear()
    return _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, memo)


def _simulate(shifts_ppm, j_hz, n_protons, field_mhz, max_cluster_spins, cluster_ratio, memo) -> LineList:
    field = _check_field(field_mhz)
    shifts, j, n = _check_arrays(shifts_ppm, j_hz, n_protons)
    max_spins, ratio = _check_options(max_cluster_spins, cluster_ratio)
    nu = shifts * field
    plan = _plan(nu, j, n, max_spins, ratio)
    total = float(n.sum())
    min_intensity = 1e-3 * _DROP_FRACTION * total
    if memo is None:
        clusters = [_prepare_cluster(c, nu, j, n, min_intensity) for c in plan.clusters]
        parts = [_simulate_cluster(c, [o for o in clusters if o is not c], nu, j, min_intensity)
                 for c in clusters]
    else:
        parts = _simulate_clusters_reusing(plan.clusters, nu, j, n, min_intensity, memo)
    freq = np.concatenate([p[0] for p in parts])
    inten = np.concatenate([p[1] for p in parts])
    site = np.concatenate([p[2] for p in parts]).astype(int)
    freq, inten, site = _merge_lines(freq, inten, site)
    keep = _significant(inten, total)
    freq, inten, site = freq[keep], inten[keep], site[keep]
    inten = inten * (total / inten.sum())
    order = np.argsort(-freq, kind="stable")  # fast: the merged lines are nearly in this order
    return LineList(ppm=freq[order] / field, intensity=inten[order], field_mhz=field,
                    site_index=site[order], warnings=plan.warnings)


def simulate_lines(system: SpinSystem, *, field_mhz: float, **options) -> LineList:
    """Simulate the lines of a :class:`SpinSystem`.

    Every site is simulated as one magnetically equivalent group, also when
    ``magnetically_equivalent`` is False: a site carries one coupling to each
    other site, so its protons couple identically by construction.

    Parameters
    ----------
    system : SpinSystem
    field_mhz : float
        1H spectrometer frequency, 40-1200 MHz.
    **options
        ``max_cluster_spins`` and ``cluster_ratio`` of :func:`simulate_arrays`.

    Returns
    -------
    LineList
    """
    if not isinstance(system, SpinSystem):
        raise InputError(f"system: expected a SpinSystem, got {type(system).__name__}")
    unknown = set(options) - {"max_cluster_spins", "cluster_ratio"}
    if unknown:
        raise InputError(
            f"options: unknown {sorted(unknown)}; allowed: max_cluster_spins, cluster_ratio"
        )
    if not system.sites:
        raise InputError("system: the spin system has no proton sites")
    return simulate_arrays(system.shifts_ppm, system.j_hz, system.n_protons, field_mhz=field_mhz, **options)


# ---------------------------------------------------------------------------
# line shapes


def _check_grid(ppm) -> np.ndarray:
    grid = np.asarray(ppm, dtype=float)
    if grid.ndim != 1 or grid.size < 2:
        raise InputError(f"ppm: expected a 1-D grid of at least two points, got shape {grid.shape}")
    if not np.all(np.isfinite(grid)):
        raise InputError("ppm: grid contains NaN or infinite values")
    step = np.diff(grid)
    if not (np.all(step > 0) or np.all(step < 0)):
        raise InputError("ppm: grid must be strictly increasing or strictly decreasing")
    return grid


def _gaussian_share(shape: str, gaussian_fraction) -> float:
    if shape not in LINE_SHAPES:
        raise InputError(f"shape: unknown line shape {shape!r}; allowed: {', '.join(LINE_SHAPES)}")
    try:
        eta = float(gaussian_fraction)
    except (TypeError, ValueError):
        raise InputError(f"gaussian_fraction: expected a number, got {gaussian_fraction!r}") from None
    if not math.isfinite(eta) or not 0.0 <= eta <= 1.0:
        raise InputError(f"gaussian_fraction: expected a number from 0 to 1, got {gaussian_fraction!r}")
    if shape != "voigt" and eta != 0.0:
        raise InputError(f"gaussian_fraction: {eta!r} needs shape='voigt' (got shape={shape!r})")
    return {"lorentzian": 0.0, "gaussian": 1.0}.get(shape, eta)


def _bin_edges(grid: np.ndarray) -> np.ndarray:
    mid = 0.5 * (grid[1:] + grid[:-1])
    return np.concatenate(([grid[0] - (mid[0] - grid[0])], mid, [grid[-1] + (grid[-1] - mid[-1])]))


def _profile_matrix(centres, edges, width_ppm, eta):
    """Mean of each unit-area line over each bin, shape (n_lines, n_points)."""
    x = edges[None, :] - centres[:, None]
    cdf = np.zeros_like(x)
    if eta < 1.0:
        cdf += (1.0 - eta) * np.arctan(x / (0.5 * width_ppm)) / np.pi
    if eta > 0.0:
        sigma = width_ppm / (2.0 * math.sqrt(2.0 * math.log(2.0)))
        cdf += eta * 0.5 * erf(x / (sigma * math.sqrt(2.0)))
    return np.abs(np.diff(cdf, axis=1)) / np.abs(np.diff(edges))[None, :]


def render_sites(lines: LineList, ppm, *, n_sites: int, line_width_hz: float, shape: str = "lorentzian",
                 gaussian_fraction: float = 0.0) -> np.ndarray:
    """Draw the lines of each site on a ppm grid.

    Each point holds the mean of the line shape over the point's bin (half
    way to its neighbours), so ``sum(row) * |d ppm|`` equals the area of the
    lines inside the grid exactly, also on grids coarse compared with the
    line width.

    Parameters
    ----------
    lines : LineList
    ppm : array_like, shape (n_points,)
        Strictly increasing or decreasing grid.
    n_sites : int
        Number of sites; every ``lines.site_index`` must be below it.
    line_width_hz : float
        Full width at half height, > 0.
    shape : {"lorentzian", "gaussian", "voigt"}
        ``"voigt"`` is the pseudo-Voigt sum ``(1-f) L + f G`` with the same
        width, ``f = gaussian_fraction``.
    gaussian_fraction : float
        Only with ``shape="voigt"``; 0-1.

    Returns
    -------
    ndarray, shape (n_sites, n_points)
    """
    if not isinstance(lines, LineList):
        raise InputError(f"lines: expected a LineList, got {type(lines).__name__}")
    grid = _check_grid(ppm)
    eta = _gaussian_share(shape, gaussian_fraction)
    try:
        width = float(line_width_hz)
    except (TypeError, ValueError):
        raise InputError(f"line_width_hz: expected a number, got {line_width_hz!r}") from None
    if not math.isfinite(width) or width <= 0:
        raise InputError(f"line_width_hz: expected a finite number > 0, got {line_width_hz!r}")
    if isinstance(n_sites, bool) or not isinstance(n_sites, (int, np.integer)) or n_sites < 1:
        raise InputError(f"n_sites: expected a whole number >= 1, got {n_sites!r}")
    if lines.site_index.size and (lines.site_index.min() < 0 or lines.site_index.max() >= n_sites):
        raise InputError(f"n_sites: {n_sites} is too small for site_index up to {lines.site_index.max()}")
    width_ppm = width / lines.field_mhz
    centres, inten, site = _pool_lines(lines, _POOL_STEP * width_ppm)
    n_rows = int(n_sites)
    if centres.size * grid.size > _DIRECT_LIMIT and _is_uniform(grid):
        span = grid.max() - grid.min()
        inside = (centres >= grid.min() - span) & (centres <= grid.max() + span)
        out = _draw_by_fft(centres[inside], inten[inside], site[inside], grid, n_rows, width_ppm, eta)
        far = ~inside
        return out + _draw_direct(centres[far], inten[far], site[far], grid, n_rows, width_ppm, eta)
    return _draw_direct(centres, inten, site, grid, n_rows, width_ppm, eta)


def _is_uniform(grid: np.ndarray) -> bool:
    step = np.diff(grid)
    return bool(np.all(np.abs(step - step[0]) <= 1e-6 * abs(step[0])))


def _draw_direct(centres, inten, site, grid, n_rows, width_ppm, eta):
    edges = _bin_edges(grid)
    out = np.zeros((n_rows, grid.size))
    chunk = max(1, 2_000_000 // grid.size)
    for start in range(0, centres.size, chunk):
        sl = slice(start, start + chunk)
        prof = _profile_matrix(centres[sl], edges, width_ppm, eta)
        weights = np.zeros((n_rows, prof.shape[0]))
        weights[site[sl], np.arange(prof.shape[0])] = inten[sl]
        out += weights @ prof
    return out


def _draw_by_fft(centres, inten, site, grid, n_rows, width_ppm, eta):
    """Bin means on a uniform grid: sticks on a fine sub-grid convolved with the shape.

    Each line is shared linearly between the two nearest cells of a sub-grid
    at most 1/50 of a line width apart (relative error below ~4e-4 at the
    peak), convolved by FFT with the cell-mean line shape, then averaged back
    onto the grid's bins. Lines up to one grid span beyond either end come
    here (the sub-grid is padded by that much).
    """
    ascending = grid[1] > grid[0]
    core = grid if ascending else grid[::-1]
    h = core[1] - core[0]
    x = core[0] + h * np.arange(-core.size, 2 * core.size)
    over = int(min(64, max(1, math.ceil(50.0 * h / width_ppm))))
    fine_h = h / over
    n_fine = x.size * over
    u = (centres - (x[0] - h / 2)) / fine_h - 0.5
    low = np.clip(np.floor(u).astype(int), 0, n_fine - 1)
    frac = np.clip(u - low, 0.0, 1.0)
    high = np.minimum(low + 1, n_fine - 1)
    sticks = np.zeros((n_rows, n_fine))
    np.add.at(sticks, (site, low), inten * (1.0 - frac))
    np.add.at(sticks, (site, high), inten * frac)
    offsets = np.arange(-(n_fine - 1), n_fine) * fine_h
    edges = np.concatenate((offsets - fine_h / 2, [offsets[-1] + fine_h / 2]))
    kernel = _profile_matrix(np.zeros(1), edges, width_ppm, eta)[0]
    size = 1 << int(math.ceil(math.log2(3 * n_fine)))
    spec = np.fft.irfft(np.fft.rfft(sticks, size, axis=1) * np.fft.rfft(kernel, size)[None, :], size, axis=1)
    fine = spec[:, n_fine - 1:2 * n_fine - 1]
    out = fine.reshape(n_rows, x.size, over).mean(axis=2)[:, core.size:2 * core.size]
    return out if ascending else out[:, ::-1]


def _pool_lines(lines: LineList, step_ppm: float):
    """Replace the lines of a site that fall within ``step_ppm`` of each other by their centroid.

    With the step a small fraction of the line width the drawn shape changes
    only in second order (relative error ~ step^2 / width^2), while spectra of
    large strongly coupled clusters (1e4-1e5 lines) draw many times faster.
    """
    if lines.ppm.size < 2:
        return lines.ppm, lines.intensity, lines.site_index
    cell = np.floor((lines.ppm - lines.ppm.min()) / step_ppm).astype(np.int64)
    key = lines.site_index.astype(np.int64) * (int(cell.max()) + 1) + cell
    uniq, inverse = np.unique(key, return_inverse=True)
    total = np.bincount(inverse, weights=lines.intensity)
    moment = np.bincount(inverse, weights=lines.intensity * lines.ppm)
    first = np.zeros(len(uniq), dtype=int)
    first[inverse[::-1]] = np.arange(len(inverse))[::-1]
    centre = np.where(total > 0, moment / np.where(total > 0, total, 1.0), lines.ppm[first])
    return centre, total, lines.site_index[first]


def render_lines(lines: LineList, ppm, *, line_width_hz: float, shape: str = "lorentzian",
                 gaussian_fraction: float = 0.0) -> np.ndarray:
    """Draw lines on a ppm grid; see :func:`render_sites` for the parameters.

    Returns
    -------
    ndarray, shape (n_points,)
        Sum over all sites; ``sum * |d ppm|`` equals the sum of the line
        intensities for lines well inside the grid.
    """
    if not isinstance(lines, LineList):
        raise InputError(f"lines: expected a LineList, got {type(lines).__name__}")
    n_sites = int(lines.site_index.max()) + 1 if lines.site_index.size else 1
    return render_sites(lines, ppm, n_sites=max(n_sites, 1), line_width_hz=line_width_hz, shape=shape,
                        gaussian_fraction=gaussian_fraction).sum(axis=0)


def model_spectrum(system: SpinSystem, ppm, *, field_mhz: float, line_width_hz: float,
                   shape: str = "lorentzian") -> np.ndarray:
    """Simulate a spin system and draw it on a ppm grid.

    Returns
    -------
    ndarray, shape (n_points,)
        Integrates (``sum * |d ppm|``) to the number of protons when every
        line lies well inside the grid.
    """
    lines = simulate_lines(system, field_mhz=field_mhz)
    return render_lines(lines, ppm, line_width_hz=line_width_hz, shape=shape)
