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
