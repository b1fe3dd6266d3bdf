"""One simulation from checked arrays: plan the clusters, simulate them, assemble the line list.

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
    total = float(n.sum())
    min_intensity = 1e-3 * _DROP_FRACTION * total
    want, column = _distinct_pairs(pairs)
    with one_blas_thread():
        parts = _simulate_all(plan.clusters, nu, j, n, min_intensity, memo, want, pairs is not None)
    n_sites = len(n)
    freq = np.concatenate([p[0].freq for p in parts])
    inten = np.concatenate([p[0].inten for p in parts])
    site = np.concatenate([p[1] for p in parts]).astype(int)
    deriv = None
    if pairs is not None:
        deriv = np.concatenate([_global_columns(lines, req, n_sites, len(want)) for lines, _, req in parts])
    freq, inten, site, deriv = _merge_lines(freq, inten, site, deriv)
    keep = _significant(inten, total)
    freq, inten, site = freq[keep], inten[keep], site[keep]
    inten = inten * (total / inten.sum())
    dshift = dj = None
    if deriv is not None:
        deriv = deriv[keep]
        dshift, dj = deriv[:, :n_sites], deriv[:, n_sites + column]
    order = np.argsort(-freq, kind="stable")  # fast: the merged lines are nearly in this order
    return _Result(freq[order], inten[order], site[order], plan, _take(dshift, order), _take(dj, order))


def _distinct_pairs(pairs):
    """Distinct pairs (a < b) to differentiate by, and the position of every given pair among them."""
    if pairs is None:
        return [], np.zeros(0, dtype=int)
    want, index, column = [], {}, []
    for a, b in pairs:
        key = (min(a, b), max(a, b))
        if key not in index:
            index[key] = len(want)
            want.append(key)
        column.append(index[key])
    return want, np.array(column, dtype=int)


def _global_columns(lines, request, n_sites, n_want):
    """One cluster's derivatives in the columns (sites | wanted pairs)."""
    out = np.zeros((len(lines.freq), n_sites + n_want))
    if lines.deriv is None or request is None:
        return out
    params = request.params
    out[:, params.sites] = lines.deriv[:, :len(params.sites)]
    if len(params.pairs):
        out[:, n_sites + params.pair_out] = lines.deriv[:, len(params.sites):]
    return out


def _take(values, index):
    return None if values is None else values[index]


def _cluster_key(sites, nu, j, n, want_states, exports, request, min_intensity):
    local = np.array(sites)
    req = None if request is None else (request.pairs.tobytes(), request.params.sites.tobytes(),
                                        request.params.pairs.tobytes(), request.params.pair_out.tobytes())
    return ("prepared", tuple(sites), nu[local].tobytes(), j[np.ix_(local, local)].tobytes(),
            n[local].tobytes(), want_states, exports[0].tobytes(), exports[1].tobytes(), min_intensity, req)


def _simulate_all(clusters, nu, j, n, min_intensity, memo: dict | None, want, derivs: bool):
    """(_Lines, site, request) of every cluster; prepared clusters and their lines are looked up
    in ``memo`` (when given) by their exact inputs."""
    requested = np.zeros((len(n), len(n)), dtype=bool)
    for a, b in want:
        requested[a, b] = requested[b, a] = True
    sites = [np.array(c) for c in clusters]
    prepared, keys, requests = [], [], []
    for i, local in enumerate(sites):
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
        key = _cluster_key(clusters[i], nu, j, n, want_states, exports, request, min_intensity)
        if memo is None or key not in memo:
            cluster = prepare_cluster(local, nu, j, n, min_intensity, exports=exports, request=request)
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
