"""E/Z isomers that swapped places: the exchange test of the refinement (confirm.fitting.swaps).

An E and a Z isomer have the same multiplets a little apart; the search works on blurred data
with predicted couplings and the refinement moves lines only locally, so one isomer can end up on
the other's signals. The vinyl 3J tells them apart (trans about 12-18 Hz, cis about 6-12 Hz:
Pretsch, Buhlmann and Badertscher, Structure Determination of Organic Compounds, 4th ed. 2009,
1H coupling constants of alkenes), and it is refined only within a few Hz of the prediction.
"""

from __future__ import annotations

import numpy as np

from confirm.analysis import build_candidates, predict_systems
from confirm.fitting import FitOptions, fit_mixture
from confirm.fitting.grid import baseline_basis, bin_factor, build_grid, fit_intervals
from confirm.fitting.models import build_model
from confirm.fitting.refine import Refinement
from confirm.fitting.swaps import settle_exchanges, stereo_partners
from predictors.core import Spectrum
from predictors.spin import model_spectrum

# methyl crotonates (our choice): the vinyl 3J of the E and Z isomers differ by about 4 Hz
_E, _Z, _OTHER = "C/C=C/C(=O)OC", "C/C=C\\C(=O)OC", "C=CCC(=O)OC"


def _setup(field: float = 400.0):
    cands, _ = build_candidates(candidates=[_E, _Z, _OTHER])
    systems = predict_systems(cands)
    order = [next(i for i, c in enumerate(cands) if c.smiles == s) for s in (_E, _Z, _OTHER)]
    systems = [systems[i] for i in order]
    models = [build_model(s, FitOptions()) for s in systems]
    return systems, models


def test_stereo_partners_pair_the_e_z_isomers_site_by_site():
    systems, models = _setup()
    partners = stereo_partners(systems, models)
    assert [(k, k2) for k, k2, _ in partners] == [(0, 1)]
    _, _, mapping = partners[0]
    assert sorted(mapping) == list(range(models[0].n_sites))
    assert [models[1].labels[t] for t in mapping] == list(models[0].labels)
    assert np.array_equal(models[1].n_h[mapping], models[0].n_h)


def test_isomers_on_each_others_signals_are_exchanged():
    field, lw = 400.0, 1.0
    systems, models = _setup(field)
    ppm = np.linspace(7.5, 0.5, 2**15)
    y = model_spectrum(systems[0], ppm, field_mhz=field, line_width_hz=lw)  # the E isomer only
    noise = 1e-3 * y.max()
    y = y + np.random.default_rng(11).normal(0.0, noise, ppm.size)
    spectrum = Spectrum(ppm=ppm, intensity=y, field_mhz=field, solvent="CDCl3")
    factor = bin_factor(spectrum, lw, FitOptions().points_per_width)
    grid = build_grid(spectrum, fit_intervals(models, field, lw), [], factor=factor)
    basis = baseline_basis(grid, 1, phase=False)
    refinement = Refinement(grid, basis, models, field_mhz=field, width_ppm=lw / field,
                            noise_sd=noise / np.sqrt(factor), max_width_hz=8.0)
    (_, _, mapping), = stereo_partners(systems, models)
    # crossed start: Z on the E isomer's signals, E where Z is predicted
    z_on_e = np.empty(models[1].n_sites)
    z_on_e[mapping] = models[0].shift0
    e_on_z = models[1].shift0[mapping]
    crossed = refinement.run(refinement.start([e_on_z, z_on_e, models[2].shift0]), rounds=2)
    assert crossed.amounts[1] > 0.5 * crossed.amounts.sum()  # a local optimum: Z holds the signal
    settled = settle_exchanges(refinement, crossed, stereo_partners(systems, models))
    share = settled.amounts / settled.amounts.sum()
    # the E isomer takes the signal back (Z keeps a little where the two are alike: the CH3 and OCH3
    # lines coincide, and its shift windows, 3 calibrated sd, reach them; the later stages of the fit
    # take it further, below)
    assert share[0] > 0.75 and share[0] > 3 * share[1]
    assert settled.objective < crossed.objective
    # the whole fit on the same spectrum: the E isomer alone
    cands, _ = build_candidates(candidates=[_E, _Z, _OTHER])
    order = [next(i for i, c in enumerate(cands) if c.smiles == s) for s in (_E, _Z, _OTHER)]
    fit = fit_mixture(spectrum, systems, [cands[i] for i in order], options=FitOptions(n_workers=1))
    e, z, other = fit.components
    assert e.detected and e.mole_fraction > 0.95
    assert not z.detected and not other.detected
