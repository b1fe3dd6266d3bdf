"""The fit's model simulates aromatic AA'BB' sites proton by proton, as the prediction does."""

from __future__ import annotations

import numpy as np
import pytest

from confirm.fitting.models import build_model, model_lines, model_lines_with_derivatives, unit_couplings
from confirm.fitting.options import FitOptions
from predictors.prediction import predict_spin_system
from predictors.spin import simulate_lines


@pytest.fixture(scope="module")
def cinnamate():
    system = predict_spin_system("CCOC(=O)/C=C/c1ccccc1")
    return system, build_model(system, FitOptions())


def test_ring_sites_are_split_into_one_spin_per_proton(cinnamate):
    system, model = cinnamate
    assert model.unit_owner is not None
    for k in system.split_sites:
        assert np.sum(model.unit_owner == k) == system.sites[k].n_h
    assert np.sum(model.unit_n) == system.n_h


def test_model_lines_at_the_predicted_values_are_the_prediction(cinnamate):
    system, model = cinnamate
    ppm, inten, site, _ = model_lines(model, system.shifts_ppm, model.j_values0, 400.0, satellites=False)
    ref = simulate_lines(system, field_mhz=400.0)
    for k in range(len(system.sites)):
        assert inten[site == k].sum() == pytest.approx(ref.intensity[ref.site_index == k].sum(), abs=0.02)
    top = np.sort(ppm[inten > 0.05 * inten.max()])
    ref_top = np.sort(ref.ppm[ref.intensity > 0.05 * ref.intensity.max()])
    assert top.size == ref_top.size and np.allclose(top, ref_top, atol=1e-6)


def test_a_refined_ring_coupling_moves_every_spin_pair_alike(cinnamate):
    _, model = cinnamate
    ring = [k for k, pair in enumerate(model.j_pairs) if all(np.sum(model.unit_owner == s) > 1 for s in pair)]
    assert ring
    values = model.j_values0.copy()
    values[ring[0]] += 0.4
    moved = unit_couplings(model, values) - unit_couplings(model, model.j_values0)
    a, b = model.j_pairs[ring[0]]
    block = np.ix_(model.unit_owner == a, model.unit_owner == b)
    assert np.allclose(moved[block], 0.4)
    moved[block] = 0.0
    moved[np.ix_(model.unit_owner == b, model.unit_owner == a)] = 0.0
    assert not moved.any()


def test_coupling_derivatives_of_split_sites_match_differences(cinnamate):
    system, model = cinnamate
    field, step = 400.0, 1e-4
    ppm, inten, _, _, dppm = model_lines_with_derivatives(model, system.shifts_ppm, model.j_values0, field)
    strong = inten > 0.05 * inten.max()
    for k in range(len(model.j_pairs)):
        values = model.j_values0.copy()
        values[k] += step
        moved, inten2, _, _ = model_lines(model, system.shifts_ppm, values, field)
        assert moved.size == ppm.size
        numeric = (moved - ppm) / step
        # lines are in the same order for a tiny step; compare the strong ones (ppm per Hz)
        assert np.allclose(dppm[strong, k], numeric[strong], atol=2e-5), model.j_pairs[k]


def test_composite_ring_ch2_pairs_beside_a_split_ring_keep_their_folded_couplings():
    # phenylcyclohexane: the aryl sites are split, the cyclohexane CH2 pairs stay composite and keep
    # the AA'XX' fold of their couplings, in the site matrix and in the spins' matrix alike
    system = predict_spin_system("c1ccc(cc1)C1CCCCC1")
    model = build_model(system, FitOptions())
    assert model.unit_owner is not None
    spins = unit_couplings(model, model.j_values0)
    single = {g: int(np.flatnonzero(model.unit_owner == g)[0]) for g in range(model.n_sites)
              if np.sum(model.unit_owner == g) == 1}
    folded = 0
    for a, ua in single.items():
        for b, ub in single.items():
            if a != b:
                assert spins[ua, ub] == pytest.approx(model.j0[a, b])
                sa, sb = system.sites[model.groups[a][0]], system.sites[model.groups[b][0]]
                if sa.n_h == sb.n_h == 2 and not (sa.magnetically_equivalent or sb.magnetically_equivalent):
                    j_site = system.j_hz[model.groups[a][0], model.groups[b][0]]
                    assert model.j0[a, b] == pytest.approx(2 * j_site)
                    folded += abs(j_site) > 0
    assert folded  # the molecule has such pairs
