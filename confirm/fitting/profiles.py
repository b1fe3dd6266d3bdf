"""The coupling that tells an alkene's geometry, profiled over its whole range.

The refinement is local. A vinyl doublet's cost, as a function of its 3J, has one minimum for
every way its lines can sit on measured lines: a (E) candidate whose 15.6 Hz trans doublet is laid
over a (Z) isomer's 11.6 Hz doublet settles near 14.4 Hz, each of its lines half on a measured
one, although the fit at the bound of its range (13.6 Hz) is clearly better. Left there, the
coupling looks inside its range and the wrong geometry is claimed. So each geometry coupling of a
candidate with some amount is started again from points across its range, one line width apart.
From each, the candidate alone is refined against the data less the other candidates' fitted
signal, with only its two vinyl shifts and their couplings free (a probe: one molecule's lines,
not the whole mixture's); the best probe, refined in full, replaces the fit when its objective
is lower, so the step can only lower the objective.

The same probe, started across the other geometry's range (:func:`other_geometry_sites`), asks what
coupling the data show: a (E) decoy whose 15 Hz doublets lie over a (Z) compound's 11.6 Hz ones
stays inside its own range however poorly its lines sit, and only a look outside it shows the data
want a cis coupling.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from confirm._parallel import TaskPool
from confirm.fitting.refine import Refined, Refinement, parameter_map

__all__ = ["profile_geometry_couplings", "other_geometry_sites"]

#: Spacing of the starting points (Hz) is the line width, within these bounds: a doublet's cost
#: has a minimum for every line it can sit on, about a line width wide.
_STEP_HZ = (0.5, 1.5)
#: Rounds of the partial refinement from each starting point.
_QUICK_ROUNDS = 2
#: Relative tolerance of the comparison of objectives (rounding must not decide).
_RTOL = 1e-9


def profile_geometry_couplings(refinement: Refinement, refined: Refined, *, rounds: int,
                               line_width_hz: float) -> Refined:
    """``refined`` with the geometry coupling of each candidate with some amount moved to the best
    place in its range (unchanged when no start does better)."""
    step = float(np.clip(line_width_hz, *_STEP_HZ))
    best = refined
    for k, model in enumerate(refinement.models):
        if model.nuisance or not best.amounts[k] > 0:
            continue
        for i in model.geometry_couplings():
            col = refinement.layout.jvals_of(k).start + i
            best = _profile_one(refinement, best, model, k, i, col, step, rounds)
    return best


def _profile_one(refinement, best: Refined, model, k: int, i: int, col: int, step: float,
                 rounds: int) -> Refined:
    lo, hi = float(refinement.lo[col]), float(refinement.hi[col])
    if not hi - lo > step:
        return best
    at = float(best.theta[col])
    starts = [v for v in np.linspace(lo, hi, int(np.floor((hi - lo) / step)) + 2) if abs(v - at) > 0.5 * step]
    (probe,) = _alone(refinement, best, k, model)  # the probe
    index = parameter_map(best.layout, probe.layout, [k])
    free = _vinyl_free(probe, model, i)
    j0 = probe.layout.j_slice.start
    scale2 = best.scale**2
    top, top_value = None, np.inf
    for value in starts:
        theta = best.theta[index].copy()
        theta[j0 + i] = value
        quick = probe.run(theta, rounds=_QUICK_ROUNDS, free=free)
        value_q = quick.cost / scale2 + quick.prior
        if top is None or value_q < top_value - _RTOL * abs(top_value):
            top, top_value = quick, value_q
    here, _ = probe.objective(best.theta[index], best.scale)
    if top is None or not top_value < here - _RTOL * abs(here):
        return best  # no start does better than where the coupling is
    theta = best.theta.copy()
    theta[index] = top.theta
    full = refinement.run(theta, rounds=rounds)
    if full.cost / scale2 + full.prior < best.objective - _RTOL * abs(best.objective):
        return full
    return best


#: 3J across a C=C between cis and between trans vinyl H (Hz); # common practice (the vinyl
#: tables' ranges: cis about 6-12, trans about 12-18).
_CIS_HZ = (6.0, 12.0)
_TRANS_HZ = (12.0, 18.0)
#: Starting points of the probe across the other geometry's range.
_OTHER_STARTS = 3
#: Least drop of the data's cost (chi-square in noise units, over the best fit's reduced chi-square
#: when that is above 1) for the data to show the other geometry: about 5 sd.
_OTHER_GEOMETRY_DROP = 25.0


def other_geometry_sites(refinement: Refinement, refined: Refined, view: Refinement, viewed: Refined, *,
                         blur_hz: float, temperature: float, n_workers: int = 1) -> list:
    """Per model, the vinyl sites whose geometry coupling the data place in the other geometry's
    range (empty for most).

    For each candidate with some amount in ``refined`` and each coupling between the two vinyl H of
    a 1,2-disubstituted C=C (a vinyl H with one geometry coupling: the =CH2 of a terminal alkene
    has two, and a look at the other range only relabels its protons), the probe of
    :func:`profile_geometry_couplings` (the candidate alone against the data less the others, its
    vinyl shifts and their couplings free) is started across the part of the other geometry's
    range outside the candidate's own. Each start is refined first on the blurred copy (``view``,
    ``viewed``: the same fit seen there, its lines ``blur_hz`` wider), where a doublet laid half on
    the data's lines still feels where the rest of them are, then at full resolution. When the best
    cost (the data's part only: a coupling far from its prediction pays a prior that is no evidence)
    lies more than :data:`_OTHER_GEOMETRY_DROP` times ``temperature`` below that of the same probe
    run inside the candidate's own range from the fitted parameters, the data show the other
    geometry and both vinyl H are returned. The probe runs are independent of each other and run on
    up to ``n_workers`` forked workers, with the same results."""
    jobs = []  # (model index, coupling index, the other geometry's range)
    for k, model in enumerate(refinement.models):
        if not model.nuisance and refined.amounts[k] > 0:
            couplings = model.geometry_couplings()
            ends = [s for i in couplings for s in model.j_pairs[i]]
            for i in couplings:
                a, b = model.j_pairs[i]
                other = _other_range(refinement, model, k, i)
                if ends.count(a) == 1 and ends.count(b) == 1 and other is not None:
                    jobs.append((k, i, other))
    tasks = [(k, i, other, start) for k, i, other in jobs for start in range(-1, _OTHER_STARTS)]
    with TaskPool(max_workers=n_workers, shared=(refinement, refined, view, viewed, blur_hz)) as pool:
        costs = pool.map(_probe_task, tasks)
    costs = np.reshape(np.asarray(costs, dtype=float), (len(jobs), _OTHER_STARTS + 1))
    out: list = [set() for _ in refinement.models]
    for (k, i, _), (here, *others) in zip(jobs, costs, strict=True):
        if min(others) < here - _OTHER_GEOMETRY_DROP * max(1.0, temperature):
            out[k].update(int(s) for s in refinement.models[k].j_pairs[i])
    return [tuple(sorted(sites)) for sites in out]


def _alone(refinement: Refinement, refined: Refined, k: int, *models) -> list:
    """Candidate ``k`` alone against the data less the others' fitted signal: one refinement per
    version of it in ``models``, on the one residual grid."""
    others = refined.amounts @ refined.cols - refined.amounts[k] * refined.cols[k]
    grid = replace(refinement.grid, y=refinement.grid.y - others)
    return [Refinement(grid, refinement.basis, [model], field_mhz=refinement.field,
                       width_ppm=refinement.width0, noise_sd=refinement.noise,
                       max_width_hz=refinement.max_width_hz) for model in models]


def _vinyl_free(probe: Refinement, model, i: int) -> np.ndarray:
    """The probe's free parameters for geometry coupling ``i``: the two vinyl shifts and every
    coupling of either vinyl H."""
    a, b = model.j_pairs[i]
    free = np.zeros(probe.layout.size, bool)
    free[[a, b]] = True
    j0 = probe.layout.j_slice.start
    for n, (p, q) in enumerate(model.j_pairs):
        if {p, q} & {a, b}:
            free[j0 + n] = True
    return free


def _other_range(refinement: Refinement, model, k: int, i: int):
    """The part of the other geometry's range of coupling ``i`` of candidate ``k`` outside its own
    refined range, or None when nothing is left."""
    col = refinement.layout.jvals_of(k).start + i
    lo, hi = float(refinement.lo[col]), float(refinement.hi[col])
    a, b = model.j_pairs[i]
    if abs(model.j0[a, b]) >= _TRANS_HZ[0]:
        other = (_CIS_HZ[0], min(_CIS_HZ[1], lo))
    else:
        other = (max(_TRANS_HZ[0], hi), _TRANS_HZ[1])
    return other if other[1] > other[0] else None


def _probe_task(shared, task) -> float:
    """The data's cost (noise units) of one probe of candidate ``k``'s geometry coupling ``i`` (a
    task for ``TaskPool.map``; see :func:`other_geometry_sites`): ``start`` -1 is the reference,
    the probe inside the candidate's own range from the fitted parameters (the probe's freedom
    alone lowers the cost below the fitted state, where the vinyl shifts are a compromise with the
    others' lines); 0, 1, ... the starts across the other geometry's range ``other``."""
    refinement, refined, view, viewed, blur_hz = shared
    k, i, other, start = task
    model = refinement.models[k]
    scale2 = refined.scale**2
    if start < 0:
        (own,) = _alone(refinement, refined, k, model)
        index = parameter_map(refined.layout, own.layout, [k])
        free = _vinyl_free(own, model, i)
        return own.run(refined.theta[index], rounds=_QUICK_ROUNDS, free=free).cost / scale2
    j_lo, j_hi = model.j_lo.copy(), model.j_hi.copy()
    j_lo[i], j_hi[i] = other
    moved = replace(model, j_lo=j_lo, j_hi=j_hi)
    (probe,) = _alone(refinement, refined, k, moved)
    (probe_blurred,) = _alone(view, viewed, k, moved)
    index = parameter_map(refined.layout, probe.layout, [k])
    free = _vinyl_free(probe, model, i)
    j0 = probe.layout.j_slice.start
    theta = viewed.theta[index].copy()
    theta[probe.layout.width_slice] += blur_hz / refinement.field
    theta[j0 + i] = other[0] + (start + 0.5) / _OTHER_STARTS * (other[1] - other[0])
    blurred = probe_blurred.run(theta, rounds=_QUICK_ROUNDS, free=free)
    theta = refined.theta[index].copy()
    theta[free] = blurred.theta[free]
    return probe.run(theta, rounds=_QUICK_ROUNDS, free=free).cost / scale2
