"""Explain a processed 1H spectrum as a mixture of candidate molecules.

The measured spectrum is modelled as a non-negative sum of the candidates' simulated spectra (one
molecule each, so amounts are proportional to moles, 13C satellites included) plus a smooth
baseline and two phase columns in each fitted region. The fit runs in four stages, one module each:

1. :mod:`~confirm.fitting.search` puts every site on its multiplet, on a blurred copy of the data,
   from several deterministic starting points (one objective throughout, comparisons with
   tolerances, ties in a fixed order);
2. :mod:`~confirm.fitting.refine` refines the best distinct assignments until the model
   reproduces the measured lines: shifts, every coupling (within bounds, sign kept), one line
   width per region and a Gaussian share of the line shape, with Gaussian priors;
3. :mod:`~confirm.fitting.evidence` reads every multiplet on its own (amount, envelope, local
   misfit) and decides which candidates are present;
4. :mod:`~confirm.fitting.assemble` averages near-equal fits and writes one coherent set of numbers.

Residual solvent, water, TMS and common impurity signals are masked (:mod:`~confirm.fitting.grid`).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from confirm._parallel import TaskPool
from confirm.fitting.assemble import (
    averaged_fractions,
    component_fits,
    evaluate,
    fit_weights,
    rank_fits,
)
from confirm.fitting.grid import (
    baseline_basis,
    bin_factor,
    blur_spectrum,
    build_grid,
    fit_intervals,
    mask_intervals,
)
from confirm.fitting.models import build_model
from confirm.fitting.noise import estimate_line_width_hz, estimate_noise_sd, noise_correlation_factor
from confirm.fitting.options import FitOptions
from confirm.fitting.refine import Refinement
from confirm.fitting.search import resweep, search_assignments
from confirm.fitting.swaps import settle_swaps
from confirm.fitting.unexplained import unexplained_signals
from predictors.core import Candidate, MixtureFit, Spectrum, SpinSystem
from predictors.errors import FitError, InputError

__all__ = ["FitOptions", "fit_mixture", "estimate_noise_sd", "estimate_line_width_hz"]


def _check_inputs(spectrum, systems, candidates):
    if not isinstance(spectrum, Spectrum):
        raise InputError(f"spectrum: expected a Spectrum, got {type(spectrum).__name__}")
    if str(spectrum.nucleus).upper().replace(" ", "") not in ("1H", "H1", "H"):
        raise InputError(f"spectrum: nucleus is {spectrum.nucleus!r}; only 1H spectra can be fitted")
    systems, candidates = tuple(systems), tuple(candidates)
    if not candidates:
        raise FitError("candidates: at least one candidate is needed to fit a spectrum")
    if len(systems) != len(candidates):
        raise InputError(f"systems: got {len(systems)} spin systems for {len(candidates)} candidates")
    for sys_, cand in zip(systems, candidates, strict=True):
        if not isinstance(sys_, SpinSystem) or not isinstance(cand, Candidate):
            raise InputError("systems/candidates: expected SpinSystem and Candidate objects")
    return systems, candidates


def fit_mixture(
    spectrum: Spectrum,
    systems: Sequence[SpinSystem],
    candidates: Sequence[Candidate],
    *,
    noise_sd: float | None = None,
    options: FitOptions | None = None,
) -> MixtureFit:
    """Fit a processed 1H spectrum as a non-negative mixture of candidate spectra.

    Parameters
    ----------
    spectrum : Spectrum
        Phased, baseline-corrected and referenced 1H spectrum.
    systems : sequence of SpinSystem
        Predicted (or known) spin system of each candidate.
    candidates : sequence of Candidate
        The candidates, same order as ``systems``.
    noise_sd : float, optional
        Noise standard deviation of ``spectrum.intensity``; estimated when None.
    options : FitOptions, optional

    Returns
    -------
    MixtureFit
        One :class:`~predictors.core.ComponentFit` per candidate (same order), the model and
        residual on the fitted (binned) axis, the line width and quality figures.

    Raises
    ------
    FitError
        No candidates, no signal where the candidates have signals, or nothing to fit.
    InputError
        Wrong nucleus or mismatched inputs.
    """
    options = options or FitOptions()
    systems, candidates = _check_inputs(spectrum, systems, candidates)
    field = float(spectrum.field_mhz)
    y_all = np.asarray(spectrum.intensity, dtype=float)
    noise = float(noise_sd) if noise_sd else estimate_noise_sd(y_all)
    if not np.isfinite(noise) or noise <= 0:
        raise InputError(f"noise_sd: must be a positive number, got {noise_sd!r}")
    lw = options.line_width_hz or estimate_line_width_hz(spectrum, noise_sd=noise)
    models = [build_model(s, options) for s in systems]
    masks, notes = ([], []) if not options.mask_solvent else mask_intervals(spectrum.solvent, field, lw, models)
    intervals = fit_intervals(models, field, lw)
    factor = bin_factor(spectrum, lw, options.points_per_width)
    grid = build_grid(spectrum, intervals, masks, factor=factor, with_dispersion=options.fit_phase)
    noise_bin, corr = _binned_noise(spectrum, factor)
    if np.max(np.abs(grid.y * grid.weight)) < 5 * noise_bin:
        raise FitError("spectrum: no signal above 5x the noise where the candidates have signals")
    basis = baseline_basis(grid, options.baseline_degree, phase=options.fit_phase)
    coarse_lw = lw + options.coarse_blur_hz
    coarse = build_grid(spectrum, intervals, masks, factor=bin_factor(spectrum, coarse_lw, 3.0),
                        blur_hz=options.coarse_blur_hz)
    coarse_noise = estimate_noise_sd(blur_spectrum(spectrum, options.coarse_blur_hz))
    with TaskPool(max_workers=options.n_workers, shared=models) as pool:
        assignments, swaps = search_assignments(
            coarse, baseline_basis(coarse, options.baseline_degree, phase=False), models,
            lw_ppm=coarse_lw / field, field_mhz=field, noise_sd=coarse_noise,
            n_random=options.n_random_starts, n_keep=options.n_refined_starts, n_swaps=_N_SWAPS,
            seed=options.seed, pool=pool,
        )
        task = (grid, basis, field, lw / field, noise_bin * corr, options)
        refined = pool.map(_refine_task, [task + (shifts, swaps if i == 0 else None) for i, shifts in
                                          enumerate(assignments)])
    return _assemble(spectrum, systems, candidates, models, grid, basis, refined, masks, notes,
                     noise_bin, corr, options, lw)


#: Near swaps of the best assignment tested with refitted couplings (see :mod:`confirm.fitting.swaps`).
_N_SWAPS = 3


def _refine_task(models, task):
    """One assignment refined in full (a task for ``TaskPool.map``): refine, test the suspect and
    near swaps (the best assignment only), move the sites again against the now small residual, and
    refine once more when a site moved."""
    grid, basis, field, width_ppm, noise, options, shifts, swaps = task
    refinement = Refinement(grid, basis, models, field_mhz=field, width_ppm=width_ppm, noise_sd=noise,
                            max_width_hz=options.max_line_width_hz)
    refined = refinement.run(refinement.start(shifts), rounds=options.rounds)
    if swaps is not None:
        refined = settle_swaps(refinement, refined, swaps, model_error=options.model_error)
    lay = refined.layout
    moved_shifts, moved = resweep(grid, basis, models, lay.shifts(refined.theta), lay.jvals(refined.theta),
                                  lw_ppm=float(np.median(refined.widths_ppm)), field_mhz=field, noise_sd=noise)
    if not moved:
        return refined
    theta = refined.theta.copy()
    theta[lay.shift_slice] = np.concatenate(moved_shifts)
    again = refinement.run(theta, rounds=max(1, options.rounds - 1))
    return again if again.cost / refined.scale**2 + again.prior < refined.objective else refined


def _binned_noise(spectrum: Spectrum, factor: int) -> tuple[float, float]:
    """Noise sd of a bin of ``factor`` samples and the correlation factor of neighbouring bins."""
    y = np.asarray(spectrum.intensity, dtype=float)
    n = y.size // factor * factor
    binned = y[:n].reshape(-1, factor).mean(1)
    return estimate_noise_sd(binned), noise_correlation_factor(binned)


def _assemble(spectrum, systems, candidates, models, grid, basis, refined, masks, notes, noise_bin, corr,
              options, lw_hz) -> MixtureFit:
    field = float(spectrum.field_mhz)
    n_points = max(1.0, float(np.sum(grid.weight > 0)))
    costs = np.array([r.cost for r in refined])
    var = max((noise_bin * corr) ** 2, float(costs.min()) / n_points)
    objectives = costs / var + np.array([r.prior for r in refined])
    order = rank_fits(objectives)
    refined = [refined[i] for i in order]
    weights = fit_weights(objectives[order])
    kept = [i for i in range(len(refined)) if weights[i] > 0]
    best = refined[0]
    settings = dict(noise_sd=noise_bin * corr, model_error=options.model_error,
                    detection_sigma=options.detection_sigma, lw_ppm=lw_hz / field,
                    uncertainty_scale=options.uncertainty_scale)
    ev = evaluate(best, models, grid, basis, **settings)
    evaluations = [ev] + [_evaluate_with(refined[i], models, grid, basis, ev.detected, settings) for i in kept[1:]]
    frac, frac_cov, fracs = averaged_fractions(evaluations, weights[kept], ev.detected)
    components = component_fits(candidates, systems, models, best, ev, frac, frac_cov, field,
                                options.detection_sigma)
    resid = grid.y - ev.model
    total_area = float(sum(a * m.n_h.sum() for a, m in zip(ev.amounts, models, strict=True)))
    unknown = unexplained_signals(spectrum, grid, ev.model, masks, noise_bin, corr, total_area)
    spread = float(np.max(np.abs(fracs - frac))) if len(kept) > 1 else 0.0
    warnings = _warnings(notes, unknown, ev.detected, spread, fracs, frac, candidates)
    quality = _quality(grid, ev.model, resid, noise_bin, corr, best, unknown, spectrum, noise_bin)
    quality["alternative_spread"] = spread
    quality["n_fits_averaged"] = float(len(kept))
    return MixtureFit(
        components=components,
        ppm=grid.x[::-1],
        model=ev.model[::-1],
        residual=resid[::-1],
        line_width_hz=float(np.median(best.widths_ppm) * field),
        quality=quality,
        warnings=tuple(warnings),
        fraction_covariance=frac_cov,
        unexplained_ppm=tuple(p for p, _ in unknown),
        alternative_fractions=tuple(map(tuple, fracs[1:])) if len(kept) > 1 else (),
    )


def _evaluate_with(refined, models, grid, basis, detected, settings):
    """:func:`evaluate` of another fit, with the best fit's set of detected candidates."""
    from dataclasses import replace

    from confirm.fitting.evidence import weighted_fit

    ev = evaluate(refined, models, grid, basis, **settings)
    amounts, base, _ = weighted_fit(refined.cols, basis, grid, ev.var, detected)
    if not np.array_equal(ev.detected, detected):
        scale = np.sqrt(np.clip(np.diag(ev.cov), 0, None))
        cov = np.diag(np.where(detected, np.maximum(scale, 0.0), 0.0) ** 2)
        return replace(ev, amounts=amounts, base=base, detected=detected, cov=cov)
    return ev


def _warnings(notes, unknown, detected, spread, fracs, frac, candidates) -> list:
    warnings = list(notes) + [
        f"unexplained signal at {p:.2f} ppm (~{100 * s:.1f} % of the fitted proton signal): an unknown "
        "component or a missing candidate"
        for p, s in unknown
    ]
    if not detected.any():
        warnings.append("no candidate is clearly present in this spectrum")
    if spread > 0.02:
        worst = int(np.argmax(np.max(np.abs(fracs - frac), axis=0)))
        name = candidates[worst].label or candidates[worst].smiles
        warnings.append(
            f"another assignment of the multiplets fits almost as well and changes the mole fractions by up "
            f"to {100 * spread:.0f} points ({name}); the uncertainties include this spread"
        )
    return warnings


def _quality(grid, model, resid, noise_bin, corr, best, unknown, spectrum, noise) -> dict:
    w = grid.weight > 0
    y = grid.y[w]
    ss_tot = float(np.sum((y - y.mean()) ** 2)) or 1.0
    strong = w & (np.abs(grid.y) > 10 * noise_bin * corr)
    explained = 1.0 - float(np.sum(np.abs(resid[strong]))) / max(float(np.sum(np.abs(grid.y[strong]))), 1e-300)
    dof = max(1.0, float(w.sum()) - best.theta.size)
    y_all = np.asarray(spectrum.intensity, dtype=float)
    return {
        "r_squared": 1.0 - float(np.sum(resid[w] ** 2)) / ss_tot,
        "explained_fraction": explained,
        "reduced_chi2": float(np.sum((resid[w] / (noise_bin * corr)) ** 2) / dof),
        "noise_sd": float(noise),
        "noise_correlation_factor": float(corr),
        "snr": float(np.max(y_all) / estimate_noise_sd(y_all)),
        "line_width_hz": float(np.median(best.widths_ppm) * float(spectrum.field_mhz)),
        "gaussian_share": best.gauss,
        "n_unexplained": float(len(unknown)),
        "unexplained_share": float(sum(s for _, s in unknown)),
        "n_points_fitted": float(w.sum()),
    }
