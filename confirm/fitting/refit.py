"""Refit without the candidates the evidence rejected, so the true owners of their lines can
take them.

A decoy that shares a fragment with a true component (the allyl group of an allylarene and of an
allyl ester) can take that component's multiplets in the search and hold them through the
refinement. The evidence then rejects the decoy (a multiplet missing or of the wrong shape), but
the true component still sits elsewhere. So the candidates rejected while they carried clear
signal are left out, the others are placed again on what is then unexplained, and the fit is
refined once more; the left-out candidates keep no amount.
"""

from __future__ import annotations

import numpy as np

from confirm.fitting.refine import Refined, Refinement, exact_columns, parameter_map
from confirm.fitting.search import resweep

__all__ = ["refit_without"]


def refit_without(refined: Refined, exclude, *, grid, basis, models, mid_view, field_mhz: float,
                  width_ppm: float, noise_sd: float, options, resweep_blur_hz: float) -> Refined:
    """``refined`` fitted again with the candidates ``exclude`` left out (amount 0)."""
    keep = [k for k in range(len(models)) if k not in set(exclude)]
    lay = refined.layout
    shifts, jvals = lay.shifts(refined.theta), lay.jvals(refined.theta)
    sub_models = [models[k] for k in keep]
    sub = Refinement(grid, basis, sub_models, field_mhz=field_mhz, width_ppm=width_ppm, noise_sd=noise_sd,
                     max_width_hz=options.max_line_width_hz)
    mid, mid_basis, mid_noise = mid_view
    candidates = [k for k in keep if not models[k].nuisance]
    moved = []
    if candidates:  # every candidate may be rejected: then only the nuisances are refitted
        moved, _ = resweep(mid, mid_basis, [models[k] for k in candidates], [shifts[k] for k in candidates],
                           [jvals[k] for k in candidates],
                           lw_ppm=float(np.median(refined.widths_ppm)) + resweep_blur_hz / field_mhz,
                           field_mhz=field_mhz, noise_sd=mid_noise)
    moved = dict(zip(candidates, moved, strict=True))
    index = parameter_map(lay, sub.layout, keep)
    start = refined.theta[index].copy()
    start[sub.layout.shift_slice] = np.concatenate([moved.get(k, shifts[k]) for k in keep])
    fit = sub.run(start, rounds=options.rounds)
    theta = refined.theta.copy()
    theta[lay.amount_slice] = 0.0
    theta[index] = fit.theta
    per_site, cols = exact_columns(grid, models, lay, field_mhz, theta)
    jac = np.zeros((fit.jacobian.shape[0], lay.size))
    jac[:, index] = fit.jacobian
    return Refined(theta=theta, layout=lay, per_site=per_site, cols=cols, model=fit.model, cost=fit.cost,
                   prior=fit.prior, objective=fit.objective, jacobian=jac, scale=fit.scale,
                   width0_ppm=width_ppm,
                   excluded=tuple(sorted(set(exclude) | set(refined.excluded))))
