"""Explain a processed 1H spectrum as a mixture of candidate molecules.

The measured spectrum is modelled as a non-negative sum of the candidates' simulated spectra (one
molecule each, so amounts are proportional to moles, 13C satellites included) plus a smooth
baseline and two phase columns in each fitted region. The fit runs in four stages, one module each:

1. :mod:`~confirm.fitting.search` puts every site on its multiplet, on a blurred copy of the data,
   from several deterministic starting points (one objective throughout, comparisons with
   tolerances, ties in a fixed order);
2. :mod:`~confirm.fitting.refine` refines the best distinct assignments until the model
   reproduces the measured lines: shifts, every coupling (within bounds, sign kept), one line
   width per region and a Gaussian share of the line shape, with Gaussian priors; each alkene's
   geometry coupling is profiled over its whole range (:mod:`~confirm.fitting.profiles`);
3. :mod:`~confirm.fitting.evidence` reads every multiplet on its own (amount, envelope, local
   misfit) and decides which candidates are present;
4. :mod:`~confirm.fitting.assemble` averages near-equal fits and writes one coherent set of numbers.

Residual solvent, water, TMS and common impurity signals are masked (:mod:`~confirm.fitting.grid`).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from confirm._parallel import TaskPool
from confirm.budget import check_budget
from confirm.fitting.assemble import (
    averaged_fractions,
    component_fits,
    evaluate,
    fit_weights,
    rank_fits,
    refined_amount_covariance,
    with_undetected_spread,
)
from confirm.fitting.broad import broad_line_models, broad_lines, broad_masks
from confirm.fitting.evidence import SEEN_SIGMA, placement_p
from confirm.fitting.grid import (
    baseline_basis,
    bin_factor,
    blur_spectrum,
    build_grid,
    fit_intervals,
    mask_intervals,
    rephase,
)
from confirm.fitting.lookalikes import lookalike_pairs
from confirm.fitting.models import build_model
from confirm.fitting.noise import estimate_line_width_hz, estimate_noise_sd, noise_correlation_factor
from confirm.fitting.nuisance import nuisance_models
from confirm.fitting.options import FitOptions
from confirm.fitting.profiles import other_geometry_sites, profile_geometry_couplings
from confirm.fitting.refine import Refinement, blurred_view, resolve_linear
from confirm.fitting.refit import refit_without
from confirm.fitting.search import resweep, search_assignments
from confirm.fitting.swaps import settle_exchanges, settle_swaps, stereo_partners
from confirm.fitting.unexplained import unexplained_signals
from predictors.core import Candidate, MixtureFit, Spectrum, SpinSystem
from predictors.errors import FitError, InputError
from predictors.spin import one_blas_thread

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
    budget=None,
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
    budget : confirm.budget.Budget, optional
        Time budget, checked between the fit's stages (search, refinement, reading).

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
    # many small matrix products: threaded BLAS only waits for time slices (and one thread gives the
    # same rounding whatever the machine's thread count)
    # the fit sees the candidates in one canonical order, so the answer does not depend on the
    # order they were given in (the search breaks ties and draws its starts in model order)
    order = sorted(range(len(candidates)), key=lambda i: (candidates[i].smiles, candidates[i].label, i))
    with one_blas_thread():
        fit = _fit(spectrum, [systems[i] for i in order], [candidates[i] for i in order], noise_sd,
                   options, budget)
    return _in_given_order(fit, order)


def _in_given_order(fit: MixtureFit, order: list) -> MixtureFit:
    """``fit`` (candidates in ``order``) with its per-candidate parts back in the given order."""
    from dataclasses import replace

    if order == sorted(order):
        return fit
    back = np.argsort(order)
    cov = fit.fraction_covariance
    return replace(
        fit,
        components=tuple(fit.components[i] for i in back),
        fraction_covariance=None if cov is None else np.asarray(cov)[np.ix_(back, back)],
        alternative_fractions=tuple(tuple(a[i] for i in back) for a in fit.alternative_fractions),
    )


def _fit(spectrum, systems, candidates, noise_sd, options: FitOptions, budget) -> MixtureFit:
    field = float(spectrum.field_mhz)
    y_all = np.asarray(spectrum.intensity, dtype=float)
    noise = float(noise_sd) if noise_sd else estimate_noise_sd(y_all)
    if not np.isfinite(noise) or noise <= 0:
        raise InputError(f"noise_sd: must be a positive number, got {noise_sd!r}")
    lw = options.line_width_hz or estimate_line_width_hz(spectrum, noise_sd=noise)
    models = [build_model(s, options) for s in systems]
    masks, notes = ([], [])
    if options.mask_solvent:
        masks, notes = mask_intervals(spectrum.solvent, field, lw, models)
    intervals = fit_intervals(models, field, lw)
    # the refinement models the solvent, water and TMS lines instead of masking them (see nuisance)
    nuisances = nuisance_models(spectrum.solvent, intervals) if options.mask_solvent else []
    # broad OH/NH lines where a candidate expects one: hidden from the search, modelled in the
    # refinement, never counted (see broad)
    broad = broad_lines(spectrum, systems, intervals, noise_sd=noise, line_width_hz=lw,
                        avoid=[m.shift0[0] for m in nuisances if m.labels[0] == "water"])
    if broad:
        masks = list(masks) + broad_masks(broad, field)
        nuisances = nuisances + broad_line_models(broad, field)
        notes = list(notes) + [
            f"a broad line at {b.ppm:.2f} ppm ({b.fwhm_hz:.0f} Hz wide; an exchangeable OH or NH) was "
            "modelled and left out of every amount" for b in broad]
    modelled = {m.labels[0] for m in nuisances}
    fit_masks = [m for m in masks if m[2].replace(" 13C satellite", "") not in modelled]
    fit_models = models + nuisances
    factor = bin_factor(spectrum, lw, options.points_per_width)
    grid = build_grid(spectrum, intervals, fit_masks, factor=factor, with_dispersion=options.fit_phase)
    noise_bin, corr = _binned_noise(spectrum, factor) if not noise_sd else (noise / np.sqrt(factor), 1.0)
    if np.max(np.abs(grid.y * grid.weight)) < 5 * noise_bin:
        raise FitError("spectrum: no signal above 5x the noise where the candidates have signals")
    basis = baseline_basis(grid, options.baseline_degree, phase=options.fit_phase)
    coarse_lw = lw + options.coarse_blur_hz
    coarse = build_grid(spectrum, intervals, masks, factor=bin_factor(spectrum, coarse_lw, 3.0),
                        blur_hz=options.coarse_blur_hz)
    coarse_noise = estimate_noise_sd(blur_spectrum(spectrum, options.coarse_blur_hz))
    # a lightly blurred copy for moving sites again after the refinement (see _refine_task)
    mid = build_grid(spectrum, intervals, masks, factor=bin_factor(spectrum, lw + _RESWEEP_BLUR_HZ, 4.0),
                     blur_hz=_RESWEEP_BLUR_HZ)
    mid_view = (mid, baseline_basis(mid, options.baseline_degree, phase=False),
                estimate_noise_sd(blur_spectrum(spectrum, _RESWEEP_BLUR_HZ)))
    check_budget(budget, "fit: search")
    with TaskPool(max_workers=options.n_workers, shared=(models, fit_models)) as pool:
        assignments, swaps = search_assignments(
            coarse, baseline_basis(coarse, options.baseline_degree, phase=False), models,
            lw_ppm=coarse_lw / field, field_mhz=field, noise_sd=coarse_noise,
            n_random=options.n_random_starts, n_keep=options.n_refined_starts, n_swaps=_N_SWAPS,
            seed=options.seed, pool=pool,
        )
        check_budget(budget, "fit: refinement")
        task = (grid, basis, mid_view, field, lw / field, noise_bin * corr, options,
                stereo_partners(systems, models))
        start = [m.shift0.copy() for m in nuisances]
        refined = pool.map(_refine_task, [task + (list(shifts) + start, swaps if i == 0 else None)
                                          for i, shifts in enumerate(assignments)])
    spectrum, grid, basis, refined, phase_deg = _take_out_phase(spectrum, grid, basis, refined, intervals,
                                                                fit_masks, factor, options)
    if phase_deg > _MIN_PHASE_DEG:
        notes = list(notes) + [
            f"a residual phase error of up to {phase_deg:.1f} degrees was measured and corrected"]
    check_budget(budget, "fit: reading the multiplets")
    # the evidence and the amounts are read on a copy blurred a little (see refine.blurred_view)
    view_grid = build_grid(spectrum, intervals, fit_masks, factor=factor, blur_hz=_READING_BLUR_HZ,
                           with_dispersion=options.fit_phase)
    view_basis = baseline_basis(view_grid, options.baseline_degree, phase=options.fit_phase)
    views = [blurred_view(r, view_grid, view_basis, fit_models, field, _READING_BLUR_HZ) for r in refined]
    refined, views = _without_rejected(refined, views, view_grid, view_basis, len(candidates), grid, basis,
                                       fit_models, mid_view, field, lw, noise_bin * corr, options)
    return _assemble(spectrum, systems, candidates, fit_models, grid, basis, refined, views, view_grid,
                     view_basis, fit_masks, notes, noise_bin, corr, options, lw)


#: Blur (Hz) of the copy on which multiplets are read and amounts solved: couplings still about
#: 1 Hz off make a least-squares amount follow the peak heights (reading a weak multiplet 10-30 %
#: low); with 1.5 Hz of blur it follows the area.
_READING_BLUR_HZ = 3.0


#: Smallest residual phase error (degrees) taken out of the data before the refinement (smaller
#: ones are left to the phase columns, whose amplitude factor 1/cos(phase) is then below 1e-4).
_MIN_PHASE_DEG = 0.8


def _take_out_phase(spectrum, grid, basis, refined, intervals, masks, factor, options):
    """Measure the residual phase with the best refined fit and take it out of the data.

    The two phase columns absorb a phase error but leave every amount scaled by 1/cos(phase),
    which differs across the spectrum when the error has a first-order part. The data are
    rephased instead (:func:`~confirm.fitting.grid.rephase`); the grid's axis is the same, so
    each refined fit only has its amounts and baseline solved again."""
    if not options.fit_phase or grid.dispersion is None:
        return spectrum, grid, basis, refined, 0.0
    best = min(refined, key=lambda r: r.objective)
    c0, c1 = best.theta[best.layout.base_slice][-2:]
    corrected, phase_deg = rephase(spectrum, grid, float(c0), float(c1))
    if phase_deg <= _MIN_PHASE_DEG:
        return spectrum, grid, basis, refined, 0.0
    new_grid = build_grid(corrected, intervals, masks, factor=factor, with_dispersion=True)
    new_basis = baseline_basis(new_grid, options.baseline_degree, phase=True)
    refined = [resolve_linear(r, new_grid, new_basis) for r in refined]
    return corrected, new_grid, new_basis, refined, phase_deg


#: Extra width (Hz) of the copy on which sites are moved again after the refinement: at full
#: resolution a multiplet whose couplings are still about 1 Hz off can lock one line away from its
#: place (its lines half on the data's); 1.5 Hz of blur removes those false optima while the
#: refined residual stays near the noise.
_RESWEEP_BLUR_HZ = 1.5

#: Near swaps of the best assignment tested with refitted couplings (see :mod:`confirm.fitting.swaps`).
_N_SWAPS = 3


def _refine_task(shared, task):
    """One assignment refined in full (a task for ``TaskPool.map``): refine, (the best assignment
    only) profile each alkene's geometry coupling over its range (see
    :mod:`~confirm.fitting.profiles`), test the suspect and
    near swaps (the best assignment only), move the sites again against the now small residual, and
    refine once more when a site moved; then (the best assignment only) test each pair of
    stereoisomers exchanged."""
    candidates, models = shared
    n = len(candidates)
    grid, basis, (mid, mid_basis, mid_noise), field, width_ppm, noise, options, partners, shifts, swaps = task
    refinement = Refinement(grid, basis, models, field_mhz=field, width_ppm=width_ppm, noise_sd=noise,
                            max_width_hz=options.max_line_width_hz)
    refined = refinement.run(refinement.start(shifts), rounds=options.rounds)
    if swaps is not None:
        refined = profile_geometry_couplings(refinement, refined, rounds=options.rounds,
                                             line_width_hz=float(np.median(refined.widths_ppm)) * field)
        refined = settle_swaps(refinement, refined, swaps, model_error=options.model_error)
    refined = _moved_again(refinement, refined, n, (mid, mid_basis, mid_noise), options)
    # stereoisomers on each other's signals: the exchanged fit is carried through the same steps
    # and kept only when it ends better, so the exchange can never leave a worse fit
    exchanged = settle_exchanges(refinement, refined, partners if swaps is not None else [])
    if exchanged is not refined:
        exchanged = _moved_again(refinement, exchanged, n, (mid, mid_basis, mid_noise), options)
        if exchanged.cost / refined.scale**2 + exchanged.prior < refined.objective:
            refined = exchanged
    return refined


def _moved_again(refinement, refined, n: int, mid_view, options):
    """``refined`` with its sites moved again on the lightly blurred copy and refined once more
    when one moved (kept only when the objective drops)."""
    mid, mid_basis, mid_noise = mid_view
    field = refinement.field
    lay = refined.layout
    shifts_now = lay.shifts(refined.theta)
    moved_shifts, moved = resweep(mid, mid_basis, refinement.models[:n], shifts_now[:n],
                                  lay.jvals(refined.theta)[:n],
                                  lw_ppm=float(np.median(refined.widths_ppm)) + _RESWEEP_BLUR_HZ / field,
                                  field_mhz=field, noise_sd=mid_noise)
    if not moved:
        return refined
    theta = refined.theta.copy()
    theta[lay.shift_slice] = np.concatenate(list(moved_shifts) + list(shifts_now[n:]))
    again = refinement.run(theta, rounds=options.rounds)
    return again if again.cost / refined.scale**2 + again.prior < refined.objective else refined


def _binned_noise(spectrum: Spectrum, factor: int) -> tuple[float, float]:
    """Noise sd of a bin of ``factor`` samples and the correlation factor of neighbouring bins."""
    y = np.asarray(spectrum.intensity, dtype=float)
    n = y.size // factor * factor
    binned = y[:n].reshape(-1, factor).mean(1)
    return estimate_noise_sd(binned), noise_correlation_factor(binned)


def _assemble(spectrum, systems, candidates, models, grid, basis, refined, views, view_grid, view_basis,
              masks, notes, noise_bin, corr, options, lw_hz) -> MixtureFit:
    field = float(spectrum.field_mhz)
    n_points = max(1.0, float(np.sum(grid.weight > 0)))
    costs = np.array([r.cost for r in refined])
    var = max((noise_bin * corr) ** 2, float(costs.min()) / n_points)
    objectives = costs / var + np.array([r.prior for r in refined])
    order = rank_fits(objectives)
    refined = [refined[i] for i in order]
    views = [views[i] for i in order]
    weights = fit_weights(objectives[order])
    kept = [i for i in range(len(refined)) if weights[i] > 0]
    best = refined[0]
    # the data's vinyl couplings read outside each alkene's own range (see profiles), on the fine grid
    # and on the blurred copy
    probes = [Refinement(g, b, models, field_mhz=field, width_ppm=(lw_hz + blur) / field,
                         noise_sd=noise_bin * corr, max_width_hz=options.max_line_width_hz + blur)
              for g, b, blur in ((grid, basis, 0.0), (view_grid, view_basis, _READING_BLUR_HZ))]
    other_geometry = other_geometry_sites(probes[0], best, probes[1], views[0], blur_hz=_READING_BLUR_HZ,
                                          temperature=var / (noise_bin * corr) ** 2,
                                          n_workers=options.n_workers)
    settings = {"noise_sd": noise_bin * corr, "model_error": options.model_error,
                "detection_sigma": options.detection_sigma, "lw_ppm": (lw_hz + _READING_BLUR_HZ) / field,
                "uncertainty_scale": options.uncertainty_scale}
    rejected: dict = {}
    while True:
        ev = evaluate(views[0], models, view_grid, view_basis, amount_cov=refined_amount_covariance(best),
                      reject=tuple(rejected), other_geometry=other_geometry, **settings)
        ev = _with_resolution_spread(ev, best, grid, basis, models, noise_bin * corr, options.model_error,
                                     lw_hz / field)
        ev = _with_carrier_spread(ev)
        found = _integral_readings(ev, best, grid, basis, models, noise_bin * corr)
        ev = _with_integrals(ev, found)
        more = _contradicted_by_integrals(ev, found)
        if not more:
            break
        rejected.update(more)  # read again without them: the others' amounts take back their lines
    notes = list(notes) + [_contradiction_note(candidates[k], *rejected[k]) for k in sorted(rejected)]
    notes += [_displaced_note(candidates[k], best.layout.shifts(best.theta)[k], models[k])
              for k in range(len(candidates)) if ev.presence[k].displaced]
    evaluations = [ev]
    for i in kept[1:]:
        other = _evaluate_with(views[i], models, view_grid, view_basis, ev.detected, settings)
        evaluations.append(_with_integrals(other, _integral_readings(other, refined[i], grid, basis, models,
                                                                     noise_bin * corr)))
    k = len(candidates)
    frac, frac_cov, fracs = averaged_fractions(evaluations, weights[kept], ev.detected)
    frac, frac_cov, fracs = frac[:k], frac_cov[:k, :k], fracs[:, :k]
    frac_cov = with_undetected_spread(frac, frac_cov, ev, k)
    alike = lookalike_pairs(models[:k], best.layout.shifts(best.theta)[:k], best.layout.jvals(best.theta)[:k],
                            ev.detected[:k], j_window_hz=options.j_window_hz, j_window_sd=options.j_window_sd)
    components = component_fits(candidates, systems, models[:k], best, ev, frac, frac_cov, field,
                                options.detection_sigma, alike)
    model = _model_on(grid, basis, best, ev, models)
    resid = grid.y - model
    total_area = float(sum(a * m.n_h.sum() for a, m in zip(ev.amounts[:k], models[:k], strict=True)))
    unknown = unexplained_signals(spectrum, grid, model, masks, noise_bin, corr, total_area)
    spread = float(np.max(np.abs(fracs - frac))) if len(kept) > 1 else 0.0
    warnings = _warnings(notes, unknown, ev.detected[:k], spread, fracs, frac, candidates)
    quality = _quality(grid, model, resid, noise_bin, corr, best, unknown, spectrum, noise_bin)
    quality["alternative_spread"] = spread
    quality["n_fits_averaged"] = float(len(kept))
    return MixtureFit(
        components=components,
        ppm=grid.x[::-1],
        model=model[::-1],
        residual=resid[::-1],
        line_width_hz=float(np.median(best.widths_ppm) * field),
        quality=quality,
        warnings=tuple(warnings),
        fraction_covariance=frac_cov,
        unexplained_ppm=tuple(p for p, _ in unknown),
        alternative_fractions=tuple(map(tuple, fracs[1:])) if len(kept) > 1 else (),
    )


def _without_rejected(refined, views, view_grid, view_basis, n_candidates, grid, basis, models, mid_view,
                      field, lw, noise, options):
    """The fits, refitted once without the candidates the evidence rejects although they carry clear
    signal (see :mod:`confirm.fitting.refit`); unchanged when there is none."""
    best = int(np.argmin([r.objective for r in refined]))
    settings = {"noise_sd": noise, "model_error": options.model_error,
                "detection_sigma": options.detection_sigma,
                "lw_ppm": (lw + _READING_BLUR_HZ) / field, "uncertainty_scale": options.uncertainty_scale}
    ev = evaluate(views[best], models, view_grid, view_basis, **settings)
    rejected = [k for k in range(n_candidates) if not ev.detected[k]
                and ev.presence[k].amount > SEEN_SIGMA * ev.presence[k].amount_sd]
    if not rejected or len(rejected) == len(models):  # nothing would be left to refit
        return refined, views
    again = refit_without(refined[best], rejected, grid=grid, basis=basis, models=models, mid_view=mid_view,
                          field_mhz=field, width_ppm=lw / field, noise_sd=noise, options=options,
                          resweep_blur_hz=_RESWEEP_BLUR_HZ)
    # the refit competes with the fit it came from: a rejected candidate may be the true one with one
    # multiplet misplaced, and leaving it out then leaves most of the signal unexplained
    return ([again, refined[best]],
            [blurred_view(again, view_grid, view_basis, models, field, _READING_BLUR_HZ), views[best]])


def _with_resolution_spread(ev, refined, grid, basis, models, noise_sd: float, model_error: float,
                            lw_ppm: float):
    """``ev`` with the change of each amount between the blurred copy and full resolution added
    to its variance.

    A multiplet whose pattern is still wrong (couplings of a weak component the data barely fix)
    reads differently at the two resolutions, a well-fitted one does not: the difference measures
    the systematic error the noise-based uncertainty cannot see."""
    from dataclasses import replace

    from confirm.fitting.evidence import point_variance, weighted_fit

    nuisance = np.array([m.nuisance for m in models])
    if not ev.detected.any():
        return ev
    var = point_variance(noise_sd, refined.amounts @ refined.cols, model_error)
    fine, _, _ = weighted_fit(refined.cols, basis, grid, var, ev.detected | nuisance)
    spread = np.where(ev.detected, ev.amounts - fine, 0.0)
    return replace(ev, cov=ev.cov + np.diag(spread**2))


def _with_carrier_spread(ev):
    """``ev`` with the difference between each detected amount and the amount its multiplets seen
    on their own read (``Presence.amount``) added to its variance.

    The whole-spectrum amount also draws on multiplets that share their lines with others (two
    methyl doublets 2 Hz apart at 60 MHz); where the clean multiplets say something else, the
    split of the shared lines is what decides the amount, and the data do not fix it."""
    from dataclasses import replace

    spread = np.zeros(ev.amounts.size)
    for k, p in enumerate(ev.presence):
        if ev.detected[k] and p.seen and np.isfinite(p.amount):
            spread[k] = ev.amounts[k] - p.amount
    if not spread.any():
        return ev
    return replace(ev, cov=ev.cov + np.diag(spread**2))


def _integral_readings(ev, refined, grid, basis, models, noise_sd: float) -> dict:
    """Integral readings of the detected candidates over their own multiplets (see
    :func:`confirm.fitting.integrals.integral_amounts`)."""
    from confirm.fitting.integrals import integral_amounts

    if not ev.detected.any():
        return {}
    amounts, base = _full_resolution_amounts(grid, basis, refined, ev, models)
    n_sites = [m.n_sites for m in models]
    offsets = np.cumsum([0] + n_sites)[:-1]
    return integral_amounts(grid, refined.per_site, refined.cols, offsets, n_sites, amounts, basis @ base,
                            ev.detected, noise_sd, width_ppm=float(np.median(refined.widths_ppm)))


#: A detected candidate's integrals show none of it when their mean lies below this many sd ...
_INTEGRAL_NULL_SD = 2.0
#: ... and they contradict its multiplet readings when these read more by this many sd of the
#: difference (both sds in quadrature).
_INTEGRAL_CONTRADICTION_SD = 3.0


def _contradicted_by_integrals(ev, found: dict) -> dict:
    """Detected candidates whose own integrals show none of them although their multiplet readings
    do: candidate index -> (integral mean, its sd, reading amount, its sd).

    A multiplet reading fits the candidate's predicted pattern to whatever lies in its window; a
    narrow impurity line inside the window of a decoy's vinyl multiplet reads as 10 sd of the decoy.
    The integral over the same window, with the fitted lines of the others and the local baseline
    taken away, then holds nothing beyond its noise: the multiplet is not there. A window passing
    its clean and flank tests only in part counts in part (its sd divided by the square root of its
    weight), so that no threshold switches a reading fully on or off."""
    out = {}
    for k, (mean, sd, _, weight) in found.items():
        p = ev.presence[k]
        if weight <= 0 or not np.isfinite(p.amount_sd):  # (only detected candidates are read)
            continue
        sd_eff = sd / np.sqrt(weight)
        gap = p.amount - mean
        limit = _INTEGRAL_CONTRADICTION_SD * np.hypot(sd_eff, p.amount_sd)
        if mean < _INTEGRAL_NULL_SD * sd_eff and gap > limit:
            out[int(k)] = (float(mean), float(sd_eff), float(p.amount), float(p.amount_sd))
    return out


def _contradiction_note(candidate, mean: float, sd: float, reading: float, reading_sd: float) -> str:
    name = candidate.label or candidate.smiles
    return (f"{name}: its multiplets read {reading:.3g} +- {reading_sd:.2g} (in units of one molecule's "
            f"lines) but their integrals, with the other components' lines taken away, hold "
            f"{mean:.3g} +- {sd:.2g}: another line sits in its windows, and it is counted as not detected")


def _displaced_note(candidate, shifts, model) -> str:
    p, value, n = placement_p(shifts, model.shift0, model.sd)
    name = candidate.label or candidate.smiles
    return (f"{name}: its multiplets were fitted to lines that lie, taken together, too far from its "
            f"predicted shifts (chi-square {value:.1f} over {n} sites, p = {p:.1g}): those lines are not "
            "its own, and it is counted as not detected")


def _with_integrals(ev, found: dict):
    """``ev`` with the amounts of the detected candidates taken from integrals over their own
    multiplets where they have any (``found``, from :func:`_integral_readings`; see
    :mod:`confirm.fitting.integrals`); an integral at or below zero leaves the fitted amount. Their
    sd is that of the integrals with the difference from the fitted amount added in quadrature: two
    readings of one amount that disagree mean a systematic error the data do not resolve (as in
    :func:`_with_carrier_spread`); the correlations of the fit are kept. Where the best window
    passes its tests only in part (weight below 1), amount and variance are blended with the
    fitted ones by that weight."""
    from dataclasses import replace

    found = {k: v for k, v in found.items() if v[0] > 0}
    if not found:
        return ev
    new = ev.amounts.copy()
    sd_old = np.sqrt(np.clip(np.diag(ev.cov), 0, None))
    sd_new = sd_old.copy()
    for k, (value, sd, _, weight) in found.items():
        # a window only partly passing its tests blends the two readings (no jump at a threshold)
        new[k] = weight * value + (1.0 - weight) * ev.amounts[k]
        sd_new[k] = float(np.sqrt(weight * (sd**2 + (value - ev.amounts[k]) ** 2)
                                  + (1.0 - weight) * sd_old[k] ** 2))
    safe = np.where(sd_old > 0, sd_old, 1.0)
    corr = np.where(np.outer(sd_old > 0, sd_old > 0), ev.cov / np.outer(safe, safe), 0.0)
    np.fill_diagonal(corr, 1.0)
    return replace(ev, amounts=new, cov=corr * np.outer(sd_new, sd_new),
                   integrals={k: readings for k, (_, _, readings, _) in found.items()})


def _full_resolution_amounts(grid, basis, refined, ev, models) -> tuple:
    """Amounts (0 for the candidates not present) and baseline coefficients of the refined columns
    of the components present and of the solvent lines, solved on the full-resolution data."""
    from confirm.fitting.linear import solve_amounts

    use = ev.detected | np.array([m.nuisance for m in models])
    amounts = np.zeros(refined.cols.shape[0])
    if use.any():
        amounts[use], base = solve_amounts(refined.cols[use], basis, grid.y, grid.weight)
    else:
        _, base = solve_amounts(np.zeros((1, grid.x.size)), basis, grid.y, grid.weight)
    return amounts, base


def _model_on(grid, basis, refined, ev, models) -> np.ndarray:
    """The fitted spectrum at full resolution (see :func:`_full_resolution_amounts`)."""
    amounts, base = _full_resolution_amounts(grid, basis, refined, ev, models)
    return amounts @ refined.cols + basis @ base


def _evaluate_with(refined, models, grid, basis, detected, settings):
    """:func:`evaluate` of another fit, with the best fit's set of detected candidates."""
    from dataclasses import replace

    from confirm.fitting.evidence import weighted_fit

    ev = evaluate(refined, models, grid, basis, **settings)
    if np.array_equal(ev.detected, detected):
        return ev
    nuisance = np.array([m.nuisance for m in models])
    amounts, base, _ = weighted_fit(refined.cols, basis, grid, ev.var, detected | nuisance)
    scale = np.sqrt(np.clip(np.diag(ev.cov), 0, None))
    cov = np.diag(np.where(detected, scale, 0.0) ** 2)
    return replace(ev, amounts=np.where(nuisance, 0.0, amounts), base=base, detected=detected, cov=cov)


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
    strong_signal = max(float(np.sum(np.abs(grid.y[strong]))), 1e-300)
    explained = 1.0 - float(np.sum(np.abs(resid[strong]))) / strong_signal
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
