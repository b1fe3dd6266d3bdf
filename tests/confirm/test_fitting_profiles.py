"""The geometry coupling of an alkene profiled over its range (confirm.fitting.profiles).

A refinement is local: a vinyl doublet whose 3J starts a few Hz from the measured one settles
with one of its lines on a measured line and the other on nothing. The vinyl 3J tells the
geometry (trans about 12-18 Hz, cis about 6-12 Hz: Pretsch, Buhlmann and Badertscher, Structure
Determination of Organic Compounds, 4th ed. 2009, 1H coupling constants of alkenes), so where it
settles decides E or Z.
"""

from __future__ import annotations

import numpy as np

from confirm.fitting import FitOptions
from confirm.fitting.grid import baseline_basis, bin_factor, build_grid, fit_intervals
from confirm.fitting.models import build_model
from confirm.fitting.profiles import profile_geometry_couplings
from confirm.fitting.refine import Refinement
from predictors.core import ProtonSite, Spectrum, SpinSystem
from predictors.spin import model_spectrum

_FIELD, _LW = 400.0, 0.5


def _alkene(j_vinyl: float, j_sd: float = 1.0) -> SpinSystem:
    """A 1,2-disubstituted alkene's two vinyl H (our own test system; no other couplings)."""
    sites = (ProtonSite(atoms=(0,), shift_ppm=6.10, shift_sd_ppm=0.1, label="vinyl"),
             ProtonSite(atoms=(1,), shift_ppm=5.80, shift_sd_ppm=0.1, label="vinyl"))
    j = np.array([[0.0, j_vinyl], [j_vinyl, 0.0]])
    return SpinSystem(smiles="ClC=CCl", sites=sites, j_hz=j, j_sd_hz=np.where(j != 0, j_sd, 0.0))


def _spectrum(j_vinyl: float) -> Spectrum:
    ppm = np.linspace(7.0, 5.0, 2**15)
    y = model_spectrum(_alkene(j_vinyl), ppm, field_mhz=_FIELD, line_width_hz=_LW)
    noise = 1e-3 * y.max()
    y = y + np.random.default_rng(5).normal(0.0, noise, ppm.size)
    return Spectrum(ppm=ppm, intensity=y, field_mhz=_FIELD, solvent="CDCl3")


def _refinement(spectrum, model):
    options = FitOptions()
    factor = bin_factor(spectrum, _LW, options.points_per_width)
    grid = build_grid(spectrum, fit_intervals([model], _FIELD, _LW), [], factor=factor)
    basis = baseline_basis(grid, options.baseline_degree, phase=False)
    noise = 1e-3 * float(spectrum.intensity.max()) / np.sqrt(factor)
    return Refinement(grid, basis, [model], field_mhz=_FIELD, width_ppm=_LW / _FIELD, noise_sd=noise,
                      max_width_hz=8.0)


def test_the_geometry_coupling_leaves_a_false_minimum_for_the_better_fit_at_its_bound():
    """A cis alkene measured (3J 11.6 Hz), offered a trans one (15.6 Hz, allowed 13.6-17.6): refined
    from 17 Hz its doublets stop with one line each on a measured line; profiled, the coupling goes
    to the bound nearest the data, where the fit is better, and that marks the wrong geometry."""
    model = build_model(_alkene(15.6), FitOptions())
    (i,) = model.geometry_couplings()
    lo, hi = model.j_lo[i], model.j_hi[i]
    assert (lo, hi) == (13.6, 17.6)
    refinement = _refinement(_spectrum(11.6), model)
    stuck = refinement.run(refinement.start([model.shift0], jvals=[np.array([17.0])]), rounds=4)
    col = stuck.layout.j_slice.start + i
    assert lo + 1.0 < stuck.theta[col] <= hi  # a false minimum inside the range
    profiled = profile_geometry_couplings(refinement, stuck, rounds=4, line_width_hz=_LW)
    assert profiled.theta[col] < lo + 0.05
    assert profiled.objective < stuck.objective


def test_a_coupling_in_its_true_minimum_stays_there():
    """A trans alkene measured (3J 15.0 Hz) and offered (15.6 Hz predicted): the profile finds
    nothing better than the refined fit."""
    model = build_model(_alkene(15.6), FitOptions())
    (i,) = model.geometry_couplings()
    refinement = _refinement(_spectrum(15.0), model)
    refined = refinement.run(refinement.start([model.shift0]), rounds=4)
    col = refined.layout.j_slice.start + i
    assert abs(refined.theta[col] - 15.0) < 0.05
    profiled = profile_geometry_couplings(refinement, refined, rounds=4, line_width_hz=_LW)
    assert abs(profiled.theta[col] - 15.0) < 0.05
    assert profiled.objective <= refined.objective


def _views(spectrum, model, refined, blur_hz=3.0):
    """The blurred copy of the data and ``refined`` seen on it (as the assembly reads the evidence)."""
    from confirm.fitting.refine import blurred_view

    options = FitOptions()
    factor = bin_factor(spectrum, _LW, options.points_per_width)
    grid = build_grid(spectrum, fit_intervals([model], _FIELD, _LW), [], factor=factor, blur_hz=blur_hz)
    basis = baseline_basis(grid, options.baseline_degree, phase=False)
    noise = 1e-3 * float(spectrum.intensity.max()) / np.sqrt(factor)
    view = Refinement(grid, basis, [model], field_mhz=_FIELD, width_ppm=(_LW + blur_hz) / _FIELD,
                      noise_sd=noise,
                      max_width_hz=8.0 + blur_hz)
    return view, blurred_view(refined, grid, basis, [model], _FIELD, blur_hz)


def test_a_trans_candidate_on_a_cis_doublet_is_shown_the_other_geometry():
    """A cis alkene measured (3J 11.6 Hz), offered a trans one (15.6 Hz, allowed 13.6-17.6) whose
    refined doublets sit half on the measured lines at 15.6 Hz, 2 Hz off centre: inside its range
    nothing does better, but started across the cis range the probe finds the measured doublet."""
    from confirm.fitting.profiles import other_geometry_sites

    model = build_model(_alkene(15.6), FitOptions())
    spectrum = _spectrum(11.6)
    refinement = _refinement(spectrum, model)
    half_on = np.array([6.10 + 2.0 / _FIELD, 5.80 - 2.0 / _FIELD])
    refined = refinement.run(refinement.start([half_on], jvals=[np.array([15.6])]), rounds=4)
    col = refined.layout.j_slice.start
    assert model.j_lo[0] + 1.0 < refined.theta[col] < model.j_hi[0] - 1.0  # not at a bound of its range
    view, viewed = _views(spectrum, model, refined)
    for workers in (1, 2):  # the probes on forked workers or here: the same answer
        assert other_geometry_sites(refinement, refined, view, viewed, blur_hz=3.0, temperature=1.0,
                                    n_workers=workers) == [(0, 1)]


def test_the_other_geometry_probes_cost_the_same_on_workers_as_here():
    from confirm._parallel import TaskPool
    from confirm.fitting.profiles import _OTHER_STARTS, _other_range, _probe_task

    model = build_model(_alkene(15.6), FitOptions())
    spectrum = _spectrum(11.6)
    refinement = _refinement(spectrum, model)
    refined = refinement.run(refinement.start([model.shift0]), rounds=4)
    view, viewed = _views(spectrum, model, refined)
    shared = (refinement, refined, view, viewed, 3.0)
    tasks = [(0, 0, _other_range(refinement, model, 0, 0), s) for s in range(-1, _OTHER_STARTS)]
    here = [_probe_task(shared, t) for t in tasks]
    with TaskPool(max_workers=2, shared=shared) as pool:
        assert pool.map(_probe_task, tasks) == here  # bit for bit


def test_a_coupling_of_the_candidates_own_geometry_is_not_questioned():
    """The trans alkene measured (15.0 Hz) and offered, and a cis one (11.6 Hz) measured and
    offered (11.0 Hz predicted): the other geometry's range does not fit better."""
    from confirm.fitting.profiles import other_geometry_sites

    for measured, predicted in ((15.0, 15.6), (11.6, 11.0)):
        model = build_model(_alkene(predicted), FitOptions())
        spectrum = _spectrum(measured)
        refinement = _refinement(spectrum, model)
        refined = refinement.run(refinement.start([model.shift0]), rounds=4)
        view, viewed = _views(spectrum, model, refined)
        assert other_geometry_sites(refinement, refined, view, viewed, blur_hz=3.0, temperature=1.0) == [()]
