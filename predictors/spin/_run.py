"""One simulation from checked arrays: plan, join equivalent sites, simulate the clusters, assemble.

Lines of one site closer than ``_MERGE_TOL_HZ`` become one line at their
intensity-weighted centroid, and the weakest lines (together < 1e-5 of the
total) are dropped. Frequency derivatives, when asked for, are merged the same
way (intensity-weighted mean: the derivative of the merged line's centroid for
fixed intensities).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from predictors.spin._blas import one_blas_thread
from predictors.spin._cluster import export_pairs, prepare_cluster, request_for, simulate_cluster
from predictors.spin._equivalence import _Reduced, reduce_equivalent
from predictors.spin._lines import _DROP_FRACTION, _merge_lines, _significant
from predictors.spin.clusters import ClusterPlan, _plan


@dataclass(frozen=True)
class _Result:
    """Lines in Hz of the original sites; derivatives (Hz per Hz) when asked for."""

    freq: np.ndarray
    inten: np.ndarray
    site: np.ndarray
    plan: ClusterPlan
    dshift: np.ndarray | None = None   # (n_lines, n_sites)
    dj: np.ndarray | None = None       # (n_lines, n_pairs)


def run(nu, j, n, max_spins, ratio, *, memo: dict | None, pairs=None) -> _Result:
    """Simulate checked arrays (``nu`` in Hz); ``pairs`` (list of (a, b), a != b) asks for derivatives."""
    plan = _plan(nu, j, n, max_spins, ratio)
    red = reduce_equivalent(nu, j, n, plan.clusters)
    total = float(n.sum())
    min_intensity = 1e-3 * _DROP_FRACTION * total
    want, factors = _reduced_pairs(red, n, pairs)
    with one_blas_thread():
        parts = _simulate_all(red, min_intensity, memo, want, pairs is not None)
    n_red = len(red.n)
    freq = np.concatenate([p[0].freq for p in parts])
    inten = np.concatenate([p[0].inten for p in parts])
    site = np.concatenate([p[1] for p in parts]).astype(int)
    deriv = None
    if pairs is not None:
        deriv = np.concatenate([_global_columns(lines, req, n_red, len(want)) for lines, _, req in parts])
    freq, inten, site, deriv = _merge_lines(freq, inten, site, deriv)
    keep = _significant(inten, total)
    freq, inten, site = freq[keep], inten[keep], site[keep]
    inten = inten * (total / inten.sum())
    dshift = dj = None
    if deriv is not None:
        deriv = deriv[keep]
        dshift = deriv[:, red.group_of] * (n / red.n[red.group_of])[None, :]
        dj = np.zeros((len(freq), len(pairs)))
        for i, (col, factor) in enumerate(factors):
            if col >= 0:
                dj[:, i] = deriv[:, n_red + col] * factor
    freq, inten, site, dshift, dj = _expand_groups(red, n, freq, inten, site, dshift, dj)
    order = np.lexsort((site, -freq))
    return _Result(freq[order], inten[order], site[order], plan, _take(dshift, order), _take(dj, order))


def _reduced_pairs(red: _Reduced, n, pairs):
    """Distinct reduced pairs to differentiate by, and for each original pair (column, factor)."""
    if pairs is None:
        return [], []
    want, factors, index = [], [], {}
    for a, b in pairs:
        g, h = int(red.group_of[a]), int(red.group_of[b])
        if g == h:
            factors.append((-1, 0.0))   # inside one equivalent group: no line moves
            continue
        key = (min(g, h), max(g, h))
        if key not in index:
            index[key] = len(want)
            want.append(key)
        factors.append((index[key], n[a] * n[b] / (red.n[g] * red.n[h])))
    return want, factors


def _global_columns(lines, request, n_red, n_want):
    """One cluster's derivatives in the columns (reduced sites | wanted reduced pairs)."""
    out = np.zeros((len(lines.freq), n_red + n_want))
    if lines.deriv is None or request is None:
        return out
    params = request.params
    out[:, params.sites] = lines.deriv[:, :len(params.sites)]
    if len(params.pairs):
        out[:, n_red + params.pair_out] = lines.deriv[:, len(params.sites):]
    return out


def _expand_groups(red: _Reduced, n, freq, inten, site, dshift, dj):
    """Lines of a joined group listed once per member site, with the member's share of the intensity."""
    sizes = np.array([len(m) for m in red.members])
    if np.all(sizes == 1):
        return freq, inten, np.asarray(red.members)[site, 0], dshift, dj
    copies = sizes[site]
    take = np.repeat(np.arange(len(freq)), copies)
    start = np.cumsum(copies) - copies
    rank = np.arange(len(take)) - np.repeat(start, copies)
    members = np.array([m[r] for m, r in zip((red.members[s] for s in site[take]), rank, strict=True)],
                       dtype=int)
    share = n[members] / red.n[site[take]]
    return freq[take], inten[take] * share, members, _take(dshift, take), _take(dj, take)


def _take(values, index):
    return None if values is None else values[index]


def _cluster_key(red: _Reduced, sites, want_states, exports, request, min_intensity, cost):
    local = np.array(sites)
    req = None if request is None else (request.pairs.tobytes(), request.params.sites.tobytes(),
                                        request.params.pairs.tobytes(), request.params.pair_out.tobytes())
    return ("prepared", tuple(sites), red.nu[local].tobytes(), red.j[np.ix_(local, local)].tobytes(),
            red.n[local].tobytes(), want_states, exports[0].tobytes(), exports[1].tobytes(), min_intensity,
            cost, req)


def _simulate_all(red: _Reduced, min_intensity, memo: dict | None, want, derivs: bool):
    """(_Lines, site, request) of every cluster; prepared clusters and their lines are looked up
    in ``memo`` (when given) by their exact inputs."""
    nu, j, n = red.nu, red.j, red.n
    requested = np.zeros((len(n), len(n)), dtype=bool)
    for a, b in want:
        requested[a, b] = requested[b, a] = True
    sites = [np.array(c) for c in red.clusters]
    prepared, keys, requests = [], [], []
    for i, (local, cost) in enumerate(zip(sites, red.costs, strict=True)):
        outside = np.setdiff1d(np.arange(len(n)), local)
        want_states = bool(np.any(j[np.ix_(local, outside)]))
        none = np.zeros(0, dtype=int)
        exports = (none, none)
        if want_states:
            base = export_pairs(local, j, np.zeros_like(requested))
            exports = (base, np.setdiff1d(export_pairs(local, j, requested), base))
        request = None
        if derivs:
            request = request_for(local, [s for i2, s in enumerate(sites) if i2 != i], j, want)
        key = _cluster_key(red, red.clusters[i], want_states, exports, request, min_intensity, cost)
        if memo is None or key not in memo:
            cluster = prepare_cluster(local, nu, j, n, min_intensity, cost=cost, exports=exports,
                                      request=request)
            if memo is not None:
                memo[key] = cluster
        else:
            cluster = memo[key]
        prepared.append(cluster)
        keys.append(key)
        requests.append(request)
    parts = []
    for cluster, key, request in zip(prepared, keys, requests, strict=True):
        others = [o for o in prepared if o is not cluster]
        if memo is None:
            lines, site = simulate_cluster(cluster, others, nu, j, min_intensity, request)
        else:
            coupled = tuple((k2, j[np.ix_(o.sites, cluster.sites)].tobytes())
                            for o, k2 in zip(prepared, keys, strict=True)
                            if o is not cluster and np.any(j[np.ix_(o.sites, cluster.sites)]))
            full = ("lines", key, coupled)
            if full not in memo:
                memo[full] = simulate_cluster(cluster, others, nu, j, min_intensity, request)
            lines, site = memo[full]
        parts.append((lines, site, request))
    return parts
