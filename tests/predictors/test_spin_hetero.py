"""First-order splitting of 1H lines by 19F / 31P, against patterns worked out by hand and against a
slow, obviously correct simulation (one proton simulation per X spin state)."""

from __future__ import annotations

from math import comb

import numpy as np
import pytest
from scipy.signal import find_peaks

from predictors.core import ProtonSite, SpinSystem
from predictors.hetero_couplings import without_x_couplings
from predictors.spin import model_spectrum, simulate_arrays, simulate_lines, split_by_x, x_patterns

FIELD = 400.0


def _ch2cf3(j_hf: float = 8.8, x=None) -> SpinSystem:
    """A lone CH2 next to a CF3 (the CH2 of 2,2,2-trifluoroethanol with its OH left out)."""
    sites = (ProtonSite(atoms=(6, 7), shift_ppm=3.9, shift_sd_ppm=0.1, label="CH2"),)
    couplings = ((("19F", 3, j_hf),),) if x is None else x
    return SpinSystem(smiles="OCC(F)(F)F", sites=sites, j_hz=np.zeros((1, 1)), x_couplings=couplings)


def test_ch2cf3_renders_a_1_3_3_1_quartet_with_spacing_j():
    # first-order rule: n equivalent spin-1/2 partners give n + 1 lines in binomial ratio
    j = 8.8
    lines = simulate_lines(_ch2cf3(j), field_mhz=FIELD)
    hz = np.sort(lines.ppm * FIELD)
    assert hz.size == 4
    assert np.allclose(np.diff(hz), j, atol=1e-6)
    order = np.argsort(lines.ppm)
    assert np.allclose(lines.intensity[order] / lines.intensity[order][0], [1, 3, 3, 1], atol=1e-9)
    assert lines.intensity.sum() == pytest.approx(2.0)
    # drawn: four maxima J apart with heights 1:3:3:1 (1 Hz lines)
    ppm = np.linspace(3.95, 3.85, 8001)
    spectrum = model_spectrum(_ch2cf3(j), ppm, field_mhz=FIELD, line_width_hz=1.0)
    peaks, _ = find_peaks(spectrum, height=0.05 * spectrum.max())
    assert peaks.size == 4
    assert np.allclose(np.abs(np.diff(ppm[peaks])) * FIELD, j, atol=0.05)
    heights = spectrum[peaks] / spectrum[peaks].min()
    assert np.allclose(sorted(heights), [1, 1, 3, 3], rtol=0.05)


def test_decoupled_ch2cf3_renders_a_singlet():
    system = without_x_couplings(_ch2cf3(), "19F")
    lines = simulate_lines(system, field_mhz=FIELD)
    assert lines.ppm.size == 1 and lines.ppm[0] == pytest.approx(3.9)
    ppm = np.linspace(3.95, 3.85, 8001)
    spectrum = model_spectrum(system, ppm, field_mhz=FIELD, line_width_hz=1.0)
    peaks, _ = find_peaks(spectrum, height=0.05 * spectrum.max())
    assert peaks.size == 1


def test_patterns_of_several_groups_convolve():
    # a CH2 between CF3 (8.8 Hz) and one P (17.5 Hz): a doublet of quartets, 8 lines
    offsets, weights = x_patterns(((("19F", 3, 8.8), ("31P", 1, 17.5)),))[0]
    assert offsets.size == 8 and weights.sum() == pytest.approx(1.0)
    expected = sorted(p * 17.5 / 2 + (k - 1.5) * 8.8 for p in (-1, 1) for k in range(4))
    assert np.allclose(np.sort(offsets), expected)
    # lines falling together pool: 2 x 5 Hz plus 1 x 10 Hz -> the (1 2 1) x (1 1) pattern: 5 lines
    offsets, weights = x_patterns(((("19F", 2, 5.0), ("31P", 1, 10.0)),))[0]
    assert offsets.size == 5
    assert np.allclose(weights, np.array([1, 2, 2, 2, 1]) / 8.0)


@pytest.mark.parametrize("n", [1, 2, 3, 6])
def test_binomial_weights(n):
    offsets, weights = x_patterns(((("19F", n, 7.0),),))[0]
    assert np.allclose(weights, [comb(n, k) / 2**n for k in range(n + 1)])
    assert np.allclose(offsets, (np.arange(n + 1) - n / 2) * 7.0)


def test_split_equals_one_simulation_per_fluorine_state():
    # CH3-CH2-CF3 at 400 MHz (CH2 2.2, CH3 1.1 ppm, J(H,H) 7.5, CH2-F 10.5 Hz): every X spin state
    # m shifts the CH2 by m J; summing simulations over the states (weights 1:3:3:1) is exact
    shifts, j_hh, n_h, j_hf = np.array([2.2, 1.1]), np.array([[0, 7.5], [7.5, 0]]), np.array([2, 3]), 10.5
    base = simulate_arrays(shifts, j_hh, n_h, field_mhz=FIELD)
    freq, inten, site, parent = split_by_x(base.ppm * FIELD, base.intensity, base.site_index,
                                           ((("19F", 3, j_hf),), ()))
    exact_f, exact_i = [], []
    for k, weight in enumerate([1, 3, 3, 1]):
        m = k - 1.5
        lines = simulate_arrays(shifts + np.array([m * j_hf / FIELD, 0.0]), j_hh, n_h, field_mhz=FIELD)
        exact_f.append(lines.ppm * FIELD)
        exact_i.append(lines.intensity * weight / 8)
    exact_f, exact_i = np.concatenate(exact_f), np.concatenate(exact_i)
    grid = np.linspace(freq.min() - 20, freq.max() + 20, 20001)

    def draw(f, i):
        return np.sum(i[:, None] * 0.5 / np.pi / ((grid[None, :] - f[:, None]) ** 2 + 0.25), axis=0)

    ours, exact = draw(freq, inten), draw(exact_f, exact_i)
    assert np.max(np.abs(ours - exact)) < 0.01 * exact.max()
    assert np.array_equal(np.sort(np.unique(parent)), np.arange(base.ppm.size))
    assert inten.sum() == pytest.approx(base.intensity.sum())


def test_site_areas_are_kept_and_other_sites_untouched():
    sites = (ProtonSite(atoms=(0, 1), shift_ppm=3.9, shift_sd_ppm=0.1),
             ProtonSite(atoms=(2, 3, 4), shift_ppm=2.1, shift_sd_ppm=0.1))
    system = SpinSystem(smiles="CC(=O)OCC(F)(F)F", sites=sites, j_hz=np.zeros((2, 2)),
                        x_couplings=((("19F", 3, 8.4),), ()))
    lines = simulate_lines(system, field_mhz=FIELD)
    assert np.bincount(lines.site_index, weights=lines.intensity) == pytest.approx([2.0, 3.0])
    assert np.sum(lines.site_index == 1) == 1


def _with_fluorine_as_a_far_spin(system, field_mhz: float):
    """Shifts, couplings and spin counts of ``system`` with its one F as one more spin 500 ppm away:
    the full Hamiltonian, whose 1H lines the X-state simulation must reproduce (the weak-coupling
    error J^2 / delta nu is under 0.01 Hz)."""
    from predictors.spin import spin_units

    units = spin_units(system)
    n = units.owner.size
    j = np.zeros((n + 1, n + 1))
    j[:n, :n] = units.j_hz
    for u, site in enumerate(units.owner):
        for _, _, value in system.x_couplings[site]:
            j[u, n] = j[n, u] = value
    shifts = np.append(system.shifts_ppm[units.owner], 500.0)
    return shifts, j, np.append(units.n_h, 1), units.owner


@pytest.mark.parametrize("smiles", ["Fc1ccccc1", "CC(F)CC"])
@pytest.mark.parametrize("field_mhz", [60.0, 400.0])
def test_one_fluorine_matches_the_full_hamiltonian(smiles, field_mhz):
    from predictors.prediction import predict_spin_system
    from predictors.spin import plan_x, render_lines, split_lines_by_x

    system = predict_spin_system(smiles)
    assert plan_x(system.x_couplings, system.smiles).n_states == 2  # simulated state by state
    shifts, j, n_h, owner = _with_fluorine_as_a_far_spin(system, field_mhz)
    full = simulate_arrays(shifts, j, n_h, field_mhz=field_mhz)
    protons = full.site_index < owner.size
    ppm = np.linspace(system.shifts_ppm.max() + 0.6, system.shifts_ppm.min() - 0.6, 30001)
    reference = render_lines(type(full)(ppm=full.ppm[protons], intensity=full.intensity[protons],
                                        field_mhz=field_mhz, site_index=owner[full.site_index[protons]]),
                             ppm, line_width_hz=0.7)
    ours = render_lines(simulate_lines(system, field_mhz=field_mhz), ppm, line_width_hz=0.7)
    assert np.max(np.abs(ours - reference)) < 0.01 * reference.max()
    if smiles == "Fc1ccccc1" and field_mhz == 60.0:
        # splitting the finished lines by their main site's J instead misses the mixed lines of the
        # strongly coupled ring protons: far from the full Hamiltonian (why states are simulated)
        proton_only = simulate_lines(without_x_couplings(system, "19F"), field_mhz=field_mhz)
        first_order = render_lines(split_lines_by_x(proton_only, system.x_couplings), ppm, line_width_hz=0.7)
        assert np.max(np.abs(first_order - reference)) > 0.1 * reference.max()


def test_plan_falls_back_to_first_order_when_fluorines_differ():
    from predictors.prediction import predict_spin_system
    from predictors.spin import plan_x

    # 1,3-difluorobenzene: H4/H6 couple to two different F (9 and 0.2 Hz): split first order
    system = predict_spin_system("Fc1cccc(F)c1")
    plan = plan_x(system.x_couplings, system.smiles)
    assert plan.n_states == 1 and plan.first_order == system.x_couplings
    # a CF3 and one P: 4 x 2 states, nothing left first order
    both = plan_x(((("19F", 3, 9.0), ("31P", 1, 17.0)),), "O=P(O)(O)CC(F)(F)F")
    assert both.n_states == 8 and not any(both.first_order)
    assert both.weights.sum() == pytest.approx(1.0)
    assert sorted(np.round(both.offsets_hz[:, 0], 6)) == sorted(
        np.round([m * 9.0 + p * 17.0 for m in (-1.5, -0.5, 0.5, 1.5) for p in (-0.5, 0.5)], 6))
