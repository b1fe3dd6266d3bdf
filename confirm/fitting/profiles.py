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
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from confirm.fitting.refine import Refined, Refinement, parameter_map

__all__ = ["profile_geometry_couplings"]

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
    # the probe: candidate k alone, against the data less the others' fitted signal
    others = best.amounts @ best.cols - best.amounts[k] * best.cols[k]
    grid = replace(refinement.grid, y=refinement.grid.y - others)
    probe = Refinement(grid, refinement.basis, [model], field_mhz=refinement.field,
                       width_ppm=refinement.width0, noise_sd=refinement.noise,
                       max_width_hz=refinement.max_width_hz)
    index = parameter_map(best.layout, probe.layout, [k])
    a, b = model.j_pairs[i]
    free = np.zeros(probe.layout.size, bool)
    free[[a, b]] = True  # the two vinyl shifts ...
    j0 = probe.layout.j_slice.start
    for n, (p, q) in enumerate(model.j_pairs):  # ... and every coupling of either vinyl H
        if {p, q} & {a, b}:
            free[j0 + n] = True
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
