"""Sites whose protons are not magnetically equivalent are simulated proton by proton."""

from __future__ import annotations

import numpy as np
import pytest

from predictors.core import ProtonSite, SpinSystem
from predictors.errors import InputError
from predictors.prediction import predict_spin_system
from predictors.spin import render_lines, simulate_arrays, simulate_lines, spin_units


def _every_proton(system: SpinSystem, field_mhz: float):
    """The same system simulated with one spin per proton (no composite spins at all)."""
    shifts = np.repeat(system.shifts_ppm, system.n_protons)
    return simulate_arrays(shifts, system.proton_j_hz, np.ones(shifts.size, int), field_mhz=field_mhz)


def test_a_para_disubstituted_ring_is_split_and_its_site_couplings_are_the_means():
    system = predict_spin_system("COc1ccc(C=O)cc1")
    units = spin_units(system)
    ring = [k for k, s in enumerate(system.sites) if s.label == "aryl"]
    assert len(ring) == 2 and units.split
    for k in ring:
        assert np.sum(units.owner == k) == 2 and set(units.n_h[units.owner == k]) == {1}
    a, b = ring
    block = units.j_hz[np.ix_(units.owner == a, units.owner == b)]
    assert np.mean(block) == pytest.approx(system.j_hz[a, b], abs=0.01)
    # one ortho and one para coupling per proton: not all equal (that is why it is split)
    assert block.max() - block.min() > 5.0


@pytest.mark.parametrize("smiles", ["CCCC(C)Br", "BrC1CCCCC1"])
def test_a_molecule_without_split_aromatic_sites_is_simulated_as_before(smiles):
    # the cyclohexane ring CH2 pairs are not magnetically equivalent but stay composite
    system = predict_spin_system(smiles)
    units = spin_units(system)
    assert not units.split and system.split_sites == ()
    assert np.array_equal(units.j_hz, system.j_hz)


@pytest.mark.parametrize("field_mhz", [60.0, 400.0])
def test_split_sites_give_the_spectrum_of_every_proton_simulated_alone(field_mhz):
    # composite spins are exact for magnetically equivalent groups; the split rings make the
    # whole molecule equal to the brute-force simulation of every proton as its own spin
    system = predict_spin_system("COc1ccc(C=O)cc1")
    grid = np.linspace(11.0, 3.0, 40001)
    ours = render_lines(simulate_lines(system, field_mhz=field_mhz), grid, line_width_hz=0.5)
    brute = render_lines(_every_proton(system, field_mhz), grid, line_width_hz=0.5)
    assert np.max(np.abs(ours - brute)) <= 1e-3 * np.max(brute)


def test_lines_are_reported_by_site_and_keep_each_site_area():
    system = predict_spin_system("COc1ccc(C=O)cc1")
    lines = simulate_lines(system, field_mhz=400.0)
    assert lines.site_index.max() < len(system.sites)
    area = np.bincount(lines.site_index, weights=lines.intensity, minlength=len(system.sites))
    assert np.allclose(area, system.n_protons, atol=0.02)


def test_aa_xx_lines_match_the_published_analysis():
    # AA'XX' analysis (Pople, Schneider & Bernstein 1959; as tabulated in H. Guenther, NMR
    # Spectroscopy, 2nd ed., Wiley 1995, the AA'XX' section; from memory): with N = J_AX + J_AX',
    # L = J_AX - J_AX', K = J_AA' + J_XX', M = J_AA' - J_XX', each half shows two strong lines at
    # +-N/2 about its centre, and two quartets at +-K/2 +- sqrt(K^2 + L^2)/2 and
    # +-M/2 +- sqrt(M^2 + L^2)/2.
    j_ax, j_ax2, j_aa, j_xx = 8.4, 0.4, 2.5, 2.0
    sites = (ProtonSite((0, 1), 7.0, 0.1, "aryl", magnetically_equivalent=False),
             ProtonSite((2, 3), 3.0, 0.1, "aryl", magnetically_equivalent=False))
    pj = np.zeros((4, 4))
    for p, q, value in ((0, 2, j_ax), (1, 3, j_ax), (0, 3, j_ax2), (1, 2, j_ax2), (0, 1, j_aa), (2, 3, j_xx)):
        pj[p, q] = pj[q, p] = value
    mean = (j_ax + j_ax2) / 2
    system = SpinSystem("c1ccccc1", sites, np.array([[0, mean], [mean, 0]]), proton_j_hz=pj,
                        split_sites=(0, 1))
    field = 1200.0  # 4 ppm apart: the X limit to 1e-3 Hz
    lines = simulate_lines(system, field_mhz=field)
    x = (lines.site_index == 1) & (lines.intensity > 1e-3)
    offsets = np.sort((lines.ppm[x] - 3.0) * field)
    n, l_, k, m = j_ax + j_ax2, j_ax - j_ax2, j_aa + j_xx, j_aa - j_xx
    expected = [n / 2, -n / 2]
    for c in (k, m):
        root = np.hypot(c, l_) / 2
        expected += [c / 2 + root, c / 2 - root, -c / 2 + root, -c / 2 - root]
    for value in expected:
        assert np.min(np.abs(offsets - value)) < 0.02, value
    at, total = np.unique(np.round((lines.ppm[x] - 3.0) * field, 2), return_inverse=True)
    height = np.bincount(total, weights=lines.intensity[x])
    assert sorted(at[np.argsort(height)[-2:]]) == pytest.approx([-n / 2, n / 2], abs=0.02)


def test_proton_couplings_are_checked():
    site = ProtonSite((0, 1), 7.0, 0.1, "aryl", magnetically_equivalent=False)
    with pytest.raises(InputError, match="proton_j_hz"):
        SpinSystem("c1ccccc1", (site,), np.zeros((1, 1)), proton_j_hz=np.zeros((3, 3)))
    with pytest.raises(InputError, match="proton_j_hz"):
        SpinSystem("c1ccccc1", (site,), np.zeros((1, 1)), proton_j_hz=np.array([[0.0, 1.0], [2.0, 0.0]]))
    with pytest.raises(InputError, match="split_sites"):
        SpinSystem("c1ccccc1", (site,), np.zeros((1, 1)), split_sites=(0,))
