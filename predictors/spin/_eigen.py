"""Eigenstates of one composite-spin subsystem and the lines between them, batched over neighbour states.

Besides frequency and intensity, every line carries the change (upper minus lower
eigenstate) of a few expectation values: ``<Fz_g>`` of every cluster site (which
site the line belongs to, and by Hellmann-Feynman its derivative with respect
to the site's frequency), and on request ``<Fz_g^2>``, ``<Fz_g Fz_h>`` and
``<F+_g F-_h + F-_g F+_h>`` of chosen site pairs (derivatives with respect to
the couplings and the neighbour terms). Eigenstates of one block closer than
``_DEGENERATE_HZ`` are degenerate: there the eigenvectors are any basis of the
subspace, so lines touching them get the change of the intensity-weighted
centroid of all lines between the two subspaces, which does not depend on the
basis (first-order degenerate perturbation theory); the change of ``<Fz>``
also decides which site a line belongs to, so this keeps that choice, and the
merging of such lines, independent of the basis.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from predictors.spin._basis import _Block, _Subsystem

#: Blocks whose work (states**3 x neighbour states) reaches this are diagonalised on two
#: threads (LAPACK releases the GIL); smaller work is not worth a thread.
_THREADED_BLOCK_WORK = 2_000_000
#: Eigenvalues of one block closer than this (Hz, scaled by 1 + |E| / 1 kHz) are one degenerate level.
_DEGENERATE_HZ = 1e-7
#: Elements (neighbour states x flip-flop elements x block size) gathered at once.
_GATHER_ELEMENTS = 4_000_000


@dataclass(frozen=True)
class _States:
    """Spin states of the neighbours of a cluster as seen by the cluster's k sites.

    Each row is one combination of neighbour eigenstates with its weight.
    ``lin`` moves the shifts (first order plus the second-order Bloch-Siegert
    type term), ``quad`` multiplies ``Fz_g**2``, ``scale`` multiplies each
    site's share of the lowering operator (intensity correction), ``dj`` adds
    to the flip-flop couplings inside the cluster (k x k).
    """

    lin: np.ndarray
    quad: np.ndarray
    scale: np.ndarray
    dj: np.ndarray
    weight: np.ndarray

    def rows(self, sl: slice) -> _States:
        return _States(self.lin[sl], self.quad[sl], self.scale[sl], self.dj[sl], self.weight[sl])


def _isolated_states(k: int) -> _States:
    return _States(np.zeros((1, k)), np.zeros((1, k)), np.ones((1, k)), np.zeros((1, k, k)), np.ones(1))


@dataclass(frozen=True)
class _Observe:
    """Expectation values measured in every eigenstate besides ``<Fz_g>`` of the k cluster sites.

    ``zz`` and ``xx`` hold cluster-local site pairs as positions in
    ``np.triu_indices(k, 1)`` order. Columns come in the order
    ``Fz (k) | Fz^2 (k, if fz2) | Fz Fz (len zz) | F+F- + F-F+ (len xx)``.
    """

    k: int
    fz2: bool = False
    zz: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))
    xx: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))

    @property
    def width(self) -> int:
        return self.k * (2 if self.fz2 else 1) + len(self.zz) + len(self.xx)


def _pair_index(a, b, k):
    """Position of site pairs (a < b) in ``np.triu_indices(k, 1)`` order."""
    return (a * (2 * k - a - 1)) // 2 + (b - a - 1)


def _hamiltonians(block: _Block, nu, quad, j_pairs, dj_pairs):
    """Diagonal (S, n) and, for n > 1, the matrices (S, n, n) of one block for S neighbour states."""
    n_batch, n_states = nu.shape[0], block.m.shape[0]
    diag = nu @ block.m.T + (block.mm @ j_pairs)[None, :] + quad @ (block.m**2).T
    if n_states == 1:
        return diag, None
    h = np.zeros((n_batch, n_states, n_states))
    idx = np.arange(n_states)
    h[:, idx, idx] = diag
    if block.rows.size:
        vals = 0.5 * (j_pairs[block.pair][None, :] + dj_pairs[:, block.pair]) * block.coef[None, :]
        h[:, block.rows, block.cols] = vals
        h[:, block.cols, block.rows] = vals
    return diag, h


def diagonalise(subsystems, nu_local, j_local, states: _States):
    """Eigenvalues (S, n) and vectors (S, n, n) of every block of every subsystem, ``[sub][block]``.

    Blocks of one size are diagonalised in one stacked call whatever subsystem they belong to
    (hundreds of small calls cost more than their arithmetic); the large ones are shared
    between two threads (LAPACK releases the GIL).
    """
    out = [[None] * len(sub.blocks) for sub in subsystems]
    by_size: dict[int, list] = {}
    for i, sub in enumerate(subsystems):
        g_first, g_second = sub.sites[sub.pairs[:, 0]], sub.sites[sub.pairs[:, 1]]
        nu = nu_local[None, sub.sites] + states.lin[:, sub.sites]
        quad = states.quad[:, sub.sites]
        j_pairs = j_local[g_first, g_second]
        dj_pairs = states.dj[:, g_first, g_second]
        for b, block in enumerate(sub.blocks):
            diag, h = _hamiltonians(block, nu, quad, j_pairs, dj_pairs)
            if h is None:
                out[i][b] = (diag, np.ones(diag.shape + (1,)))
            else:
                by_size.setdefault(h.shape[1], []).append((i, b, h))
    jobs = []
    for size, items in by_size.items():
        stack = items[0][2] if len(items) == 1 else np.concatenate([h for _, _, h in items])
        work = stack.shape[0] * size**3
        halves = 2 if work >= 2 * _THREADED_BLOCK_WORK and stack.shape[0] > 1 else 1
        bounds = np.linspace(0, stack.shape[0], halves + 1).round().astype(int)
        for lo, hi in zip(bounds[:-1], bounds[1:], strict=True):
            jobs.append((items, lo, hi, stack[lo:hi], (hi - lo) * size**3))
    results = _run_jobs(jobs)
    for (items, lo, _, _, _), (energies, vectors) in zip(jobs, results, strict=True):
        start = 0
        for i, b, h in items:
            count = h.shape[0]
            first, last = max(start, lo), min(start + count, lo + energies.shape[0])
            if first < last:
                part = (energies[first - lo:last - lo], vectors[first - lo:last - lo])
                out[i][b] = part if out[i][b] is None else (np.concatenate([out[i][b][0], part[0]]),
                                                             np.concatenate([out[i][b][1], part[1]]))
            start += count
    return out


def _run_jobs(jobs):
    """``eigh`` of every job's stack; the large ones on two threads."""
    big = [k for k, job in enumerate(jobs) if job[4] >= _THREADED_BLOCK_WORK]
    if len(big) < 2:
        return [np.linalg.eigh(job[3]) for job in jobs]
    from concurrent.futures import ThreadPoolExecutor

    out = [None] * len(jobs)
    with ThreadPoolExecutor(max_workers=2) as pool:
        futures = {k: pool.submit(np.linalg.eigh, jobs[k][3]) for k in big}
        for k, job in enumerate(jobs):
            if k not in futures:
                out[k] = np.linalg.eigh(job[3])
        for k, fut in futures.items():
            out[k] = fut.result()
    return out


@dataclass(frozen=True)
class _Measure:
    """How one subsystem measures the requested expectation values (composite-spin indices)."""

    diag: list          # per block: (n, n_diag) values of the diagonal observables in the m basis
    xx_pairs: np.ndarray    # composite pair of each requested flip-flop column (-1: not in this subsystem)
    xx_cols: np.ndarray     # output column of each
    gathers: list       # per block: (rows, cols, 2 coef, segment starts, columns filled) or None


def _measure(sub: _Subsystem, observe: _Observe) -> _Measure:
    zz, xx = tuple(observe.zz.tolist()), tuple(observe.xx.tolist())
    return _measure_cached(sub, observe.k, observe.fz2, zz, xx)


@functools.lru_cache(maxsize=1024)
def _measure_cached(sub: _Subsystem, k: int, fz2: bool, zz_pairs: tuple, xx_pairs: tuple) -> _Measure:
    to_sites = np.zeros((len(sub.sites), k))
    to_sites[np.arange(len(sub.sites)), sub.sites] = 1.0
    comp = np.full(k * (k - 1) // 2, -1)
    if len(sub.pairs):
        where = _pair_index(sub.sites[sub.pairs[:, 0]], sub.sites[sub.pairs[:, 1]], k)
        comp[where] = np.arange(len(sub.pairs))
    zz_comp = comp[np.array(zz_pairs, dtype=int)]
    xx_comp = comp[np.array(xx_pairs, dtype=int)]
    diag, gathers = [], []
    for b in sub.blocks:
        cols = [b.m @ to_sites]
        if fz2:
            cols.append(np.square(b.m) @ to_sites)
        if len(zz_pairs):
            zz = np.zeros((b.m.shape[0], len(zz_pairs)))
            have = zz_comp >= 0
            zz[:, have] = b.mm[:, zz_comp[have]]
            cols.append(zz)
        diag.append(np.hstack(cols))
        gathers.append(_gather_plan(b, xx_comp))
    first = k * (2 if fz2 else 1) + len(zz_pairs)
    return _Measure(diag, xx_comp, first + np.arange(len(xx_pairs)), gathers)


def _gather_plan(block: _Block, comps: np.ndarray):
    """Flip-flop elements of the requested composite pairs in one block, grouped by pair."""
    if not block.rows.size or not np.any(comps >= 0):
        return None
    wanted = np.zeros(int(max(block.pair.max(), comps.max())) + 1, dtype=bool)
    wanted[comps[comps >= 0]] = True
    sel = np.flatnonzero(wanted[block.pair])
    if not sel.size:
        return None
    pair = block.pair[sel]
    starts = np.flatnonzero(np.diff(pair, prepend=-1))
    where = {int(p): i for i, p in enumerate(pair[starts])}
    col_of = np.array([where.get(int(c), -1) for c in comps])
    have = np.flatnonzero(col_of >= 0)
    return block.rows[sel], block.cols[sel], 2.0 * block.coef[sel], starts, have, col_of[have]


def _flip_flop_expectations(plan, vecs: np.ndarray, n_cols: int) -> np.ndarray:
    """<F+_g F-_h + F-_g F+_h> of the requested pairs in every eigenstate, (S, n, n_cols).

    Pairs absent from the block give 0. Only the elements of the requested pairs
    are gathered, in chunks of neighbour states.
    """
    n_batch, n = vecs.shape[0], vecs.shape[2]
    out = np.zeros((n_batch, n, n_cols))
    if plan is None:
        return out
    rows, cols, coef, starts, have, source = plan
    step = max(1, _GATHER_ELEMENTS // max(1, rows.size * n))
    for s0 in range(0, n_batch, step):
        v = vecs[s0:s0 + step]
        prod = np.take(v, rows, axis=1)
        prod *= np.take(v, cols, axis=1)
        prod *= coef[None, :, None]
        sums = np.add.reduceat(prod, starts, axis=1)   # (s, n_present_pairs, n)
        out[s0:s0 + step][:, :, have] = np.swapaxes(sums[:, source, :], 1, 2)
    return out


def _state_values(vecs: np.ndarray, diag: np.ndarray, gather, width: int, k: int):
    """Requested expectation values of every eigenstate, (S, n, width).

    The ``<Fz>`` columns (which decide a line's site) are computed alone, so that they round
    the same whatever else is requested.
    """
    weights = np.swapaxes(np.square(vecs), 1, 2)
    if width == k:
        return weights @ diag
    out = np.empty((vecs.shape[0], vecs.shape[2], width))
    out[:, :, :k] = weights @ diag[:, :k]
    if diag.shape[1] > k:
        out[:, :, k:diag.shape[1]] = weights @ diag[:, k:]
    if diag.shape[1] < width:
        out[:, :, diag.shape[1]:] = _flip_flop_expectations(gather, vecs, width - diag.shape[1])
    return out


def _subsystem_lines(sub: _Subsystem, eig, states: _States, min_intensity, observe: _Observe,
                     keep_states: bool = False):
    """Lines of one composite-spin subsystem for every neighbour state (batched), from the
    eigenvalues and vectors ``eig`` of its blocks (see :func:`diagonalise`).

    Returns
    -------
    freq, inten : ndarray (L,)
        Frequencies (Hz) and intensities times the state and subsystem weights (not normalised).
    state : ndarray of int (L,)
        Neighbour state (row of ``states``) of each line.
    change : ndarray (L, observe.width)
        Upper minus lower expectation values; the first k columns are the changes of ``<Fz>``.
    values : ndarray (n_eigenstates, observe.width) or None
        With ``keep_states``: the expectation values of every eigenstate of the first neighbour
        state, blocks in order.
    """
    measure = _measure(sub, observe)
    width = observe.width
    values = [_state_values(v, d, g, width, observe.k).reshape(-1, width)
              for (_, v), d, g in zip(eig, measure.diag, measure.gathers, strict=True)]
    scale = states.scale[:, sub.sites]
    isolated = len(states.weight) == 1 and np.all(scale == 1.0)
    weight = sub.weight * states.weight
    same = [_degenerate(e) for e, _ in eig]
    hit = [bool(m.any()) for m in same]
    freqs, intens, index, fixes = [], [], [], []
    for b, op in enumerate(sub.lowering):
        (e_up, v_up), (e_lo, v_lo) = eig[b], eig[b + 1]
        n_lo, n_up = op.shape[1:]
        if isolated:
            amp = (v_lo[0].T @ (sub.lowering_sum[b] @ v_up[0]))[None]
        else:
            lower = (scale @ op.reshape(op.shape[0], -1)).reshape(-1, n_lo, n_up)
            amp = np.swapaxes(v_lo, 1, 2) @ (lower @ v_up)
        fixes.append(_degenerate_levels(b, eig, same, sub, amp, measure, width) if hit[b] or hit[b + 1]
                     else None)
        inten = np.square(amp, out=amp)
        inten *= weight[:, None, None]
        allowed = inten > min_intensity
        s, lo, up = np.nonzero(allowed)
        up_index, lo_index = s * n_up + up, s * n_lo + lo
        freqs.append(np.take(e_up, up_index) - np.take(e_lo, lo_index))
        intens.append(inten[allowed])
        index.append((s, up_index, lo_index))
    n_lines = sum(len(f) for f in freqs)
    change = np.empty((n_lines, width))
    state = np.empty(n_lines, dtype=int)
    start = 0
    for b, (s, up_index, lo_index) in enumerate(index):  # written in place: no per-pair copies
        part = change[start:start + len(up_index)]
        np.take(values[b], up_index, axis=0, out=part)
        part -= np.take(values[b + 1], lo_index, axis=0)
        if fixes[b] is not None:
            n_up, n_lo = sub.lowering[b].shape[2], sub.lowering[b].shape[1]
            _apply_degenerate(part, fixes[b], up_index, lo_index, values[b], values[b + 1], n_up, n_lo)
        state[start:start + len(up_index)] = s
        start += len(up_index)
    freq = np.concatenate(freqs) if freqs else np.zeros(0)
    inten = np.concatenate(intens) if intens else np.zeros(0)
    kept = None
    if keep_states:
        kept = np.concatenate([v[:b.m.shape[0]] for v, b in zip(values, sub.blocks, strict=True)])
    return freq, inten, state, change, kept


# ---------------------------------------------------------------------------
# degenerate levels


def _degenerate(energies: np.ndarray) -> np.ndarray:
    """Mask (S, n - 1): eigenvalue i + 1 of a block is degenerate with eigenvalue i (ascending)."""
    tol = _DEGENERATE_HZ * (1.0 + np.abs(energies[:, 1:]) / 1e3)
    return np.diff(energies, axis=1) <= tol


def _levels(same: np.ndarray) -> np.ndarray:
    """Level number of every eigenvalue of one block from its degeneracy mask (n - 1,)."""
    return np.concatenate(([0], np.cumsum(~same)))


def _operator_in(vecs, idx, block: _Block, measure: _Measure, diag: np.ndarray, width: int):
    """Matrices of the requested observables inside a degenerate subspace, (width, d, d)."""
    v = vecs[:, idx]
    out = np.zeros((width, len(idx), len(idx)))
    out[:diag.shape[1]] = np.einsum("ia,ic,ib->cab", v, diag, v)
    for c, comp in zip(measure.xx_cols, measure.xx_pairs, strict=True):
        if comp >= 0:
            sel = block.pair == comp
            half = np.einsum("ia,i,ib->ab", v[block.rows[sel]], block.coef[sel], v[block.cols[sel]])
            out[c] = half + half.T
    return out


def _level_matrices(same, vecs, block, measure, diag, width):
    """{level: (eigenstate indices, observable matrices)} of the degenerate levels of one block."""
    levels = _levels(same)
    out = {}
    for lev in np.flatnonzero(np.bincount(levels) > 1):
        idx = np.flatnonzero(levels == lev)
        out[int(lev)] = (idx, _operator_in(vecs, idx, block, measure, diag, width))
    return levels, out


def _degenerate_levels(b, eig, same, sub: _Subsystem, amp, measure: _Measure, width: int):
    """What lines between degenerate levels of blocks b and b+1 need, per neighbour state, or None.

    For levels U (upper) and L (lower) with amplitudes C = <L|F-|U>, the
    intensity-weighted mean change of an observable A over all lines U -> L is
    ``(tr(C^T C A_U) - tr(C C^T A_L)) / |C|^2``, whatever basis eigh chose.
    """
    v_up, v_lo = eig[b][1], eig[b + 1][1]
    same_up, same_lo = same[b], same[b + 1]
    hit = np.flatnonzero(same_up.any(axis=1) | same_lo.any(axis=1))
    if not hit.size:
        return None
    fixes = []
    for s in hit:
        lev_up, mats_up = _level_matrices(same_up[s], v_up[s], sub.blocks[b], measure, measure.diag[b], width)
        lev_lo, mats_lo = _level_matrices(same_lo[s], v_lo[s], sub.blocks[b + 1], measure,
                                          measure.diag[b + 1], width)
        fixes.append((int(s), lev_up, lev_lo, mats_up, mats_lo, amp[s].copy()))
    return fixes


def _apply_degenerate(change, fixes, up_index, lo_index, values_up, values_lo, n_up, n_lo):
    """Give every line that starts or ends on a degenerate level the change of its group's centroid."""
    for s, lev_up, lev_lo, mats_up, mats_lo, amp in fixes:
        rows = np.flatnonzero(up_index // n_up == s)
        up, lo = up_index[rows] - s * n_up, lo_index[rows] - s * n_lo
        lu, ll = lev_up[up], lev_lo[lo]
        touched = np.isin(lu, list(mats_up)) | np.isin(ll, list(mats_lo))
        groups = {}
        for r, a, c in zip(rows[touched], lu[touched], ll[touched], strict=True):
            groups.setdefault((int(a), int(c)), []).append(r)
        for (a, c), members in groups.items():
            first = members[0]
            i_up, m_up = mats_up.get(a, (np.array([up_index[first] - s * n_up]), None))
            i_lo, m_lo = mats_lo.get(c, (np.array([lo_index[first] - s * n_lo]), None))
            if m_up is None:
                m_up = values_up[up_index[first]][:, None, None]
            if m_lo is None:
                m_lo = values_lo[lo_index[first]][:, None, None]
            amp_ul = amp[np.ix_(i_lo, i_up)]
            total = float(np.sum(amp_ul * amp_ul))
            if total > 0.0:
                centroid = (np.einsum("ab,cab->c", amp_ul.T @ amp_ul, m_up)
                            - np.einsum("ab,cab->c", amp_ul @ amp_ul.T, m_lo)) / total
                change[members] = centroid
