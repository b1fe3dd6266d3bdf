"""Tests of the spin-system simulator and line-shape rendering (predictors.spin)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import sparse

from predictors.core import LineList, ProtonSite, SpinSystem
from predictors.errors import InputError
from predictors.spin import (
    model_spectrum,
    plan_clusters,
    render_lines,
    render_sites,
    simulate_arrays,
    simulate_lines,
)

# ---------------------------------------------------------------------------
# slow, obviously correct reference: every proton a spin 1/2, full 2^n space


def _reference_lines(shifts_ppm, j_hz, n_protons, field_mhz):
    """Lines (Hz, intensity) from the full Kronecker-product Hamiltonian.

    H = sum_i nu_i Iz_i + sum_{i<k} J_ik (Iz_i Iz_k + (I+_i I-_k + I-_i I+_k) / 2), all real.
    """
    site = np.repeat(np.arange(len(n_protons)), n_protons)
    nu = np.asarray(shifts_ppm, float)[site] * field_mhz
    n = len(nu)
    iz1 = sparse.csr_matrix(np.array([[0.5, 0.0], [0.0, -0.5]]))
    ip1 = sparse.csr_matrix(np.array([[0.0, 1.0], [0.0, 0.0]]))

    def op(single, i):
        left, right = sparse.identity(2**i), sparse.identity(2 ** (n - i - 1))
        return sparse.kron(sparse.kron(left, single), right).tocsr()

    iz = [op(iz1, i) for i in range(n)]
    ip = [op(ip1, i) for i in range(n)]
    ham = sum(nu[i] * iz[i] for i in range(n))
    for a in range(n):
        for b in range(a + 1, n):
            coupling = j_hz[site[a]][site[b]] if site[a] != site[b] else 0.0
            if coupling:
                ham = ham + coupling * (iz[a] @ iz[b] + 0.5 * (ip[a] @ ip[b].T + ip[a].T @ ip[b]))
    ham = ham.toarray()
    energy, vec = np.linalg.eigh(ham)
    f_minus = sum(p.T for p in ip)
    inten = (vec.T @ (f_minus @ vec)) ** 2 / 2 ** (n - 1)
    lo, up = np.nonzero(inten > 1e-12)
    return energy[up] - energy[lo], inten[lo, up]


def _render_hz(freq_hz, inten, ppm, field_mhz, width_hz):
    lines = LineList(ppm=np.asarray(freq_hz) / field_mhz, intensity=inten, field_mhz=field_mhz,
                     site_index=np.zeros(len(inten), int))
    return render_lines(lines, ppm, line_width_hz=width_hz)


def _random_system(rng, n_protons, *, spread_ppm, j_max_hz):
    n_sites = len(n_protons)
    shifts = rng.uniform(1.0, 1.0 + spread_ppm, n_sites)
    j = rng.uniform(-j_max_hz, j_max_hz, (n_sites, n_sites))
    j = np.triu(j, 1)
    return shifts, j + j.T, np.asarray(n_protons)


def _relative_difference(a, b):
    return float(np.max(np.abs(a - b)) / np.max(np.abs(b)))


# ---------------------------------------------------------------------------
# closed forms and limits


@pytest.mark.parametrize(("dnu_hz", "j_hz"), [(20.0, 10.0), (5.0, 12.0), (30.0, -7.5), (0.8, 15.0)])
def test_ab_quartet_matches_closed_form(dnu_hz, j_hz):
    # Closed-form AB quartet, references.md section 7 (any NMR textbook): lines at
    # centre +-(D/2 +- J/2), D = sqrt(dnu^2 + J^2), inner/outer intensity (D+J)/(D-J).
    field = 100.0
    centre_hz = 250.0
    shifts = [(centre_hz - dnu_hz / 2) / field, (centre_hz + dnu_hz / 2) / field]
    lines = simulate_arrays(shifts, [[0, j_hz], [j_hz, 0]], [1, 1], field_mhz=field)
    d = math.hypot(dnu_hz, j_hz)
    jj = abs(j_hz)
    expected = np.sort([centre_hz + s * (d / 2) + t * jj / 2 for s in (-1, 1) for t in (-1, 1)])
    got = np.sort(lines.ppm * field)
    assert got.shape == (4,)
    np.testing.assert_allclose(got, expected, atol=1e-6)
    inten = lines.intensity[np.argsort(lines.ppm)]
    ratio = (d + jj) / (d - jj)
    assert inten[1] / inten[0] == pytest.approx(ratio, rel=1e-6)
    assert inten[2] / inten[3] == pytest.approx(ratio, rel=1e-6)
    assert inten.sum() == pytest.approx(2.0, abs=1e-9)


@pytest.mark.parametrize("n_h", [1, 2, 3, 6, 9])
def test_equivalent_group_gives_one_line(n_h):
    lines = simulate_arrays([2.5], [[0.0]], [n_h], field_mhz=60)
    assert lines.ppm.shape == (1,)
    assert lines.ppm[0] == pytest.approx(2.5, abs=1e-12)
    assert lines.intensity[0] == pytest.approx(n_h)


def test_a2_as_two_sites_with_equal_shift_gives_one_line():
    # A2: two protons of equal shift show no splitting whatever their coupling.
    lines = simulate_arrays([3.1, 3.1], [[0, 12.0], [12.0, 0]], [1, 1], field_mhz=80)
    assert lines.ppm.size == 1
    assert lines.ppm[0] == pytest.approx(3.1, abs=1e-9)
    assert lines.intensity.sum() == pytest.approx(2.0)


def test_ax_limit_gives_first_order_doublets():
    field, j = 1200.0, 7.0
    lines = simulate_arrays([1.0, 9.0], [[0, j], [j, 0]], [1, 1], field_mhz=field,
                            cluster_ratio=1e-9)  # simulate exactly, no cut
    hz = np.sort(lines.ppm * field)
    # second-order shift is J^2 / (2 dnu) = 0.0026 Hz at dnu = 9600 Hz
    np.testing.assert_allclose(hz, [1200 - 3.5, 1200 + 3.5, 10800 - 3.5, 10800 + 3.5], atol=5e-3)
    np.testing.assert_allclose(lines.intensity, 0.5, atol=2e-3)


def test_a3x_first_order_multiplicities():
    # CH3-CH with a large shift difference: CH3 doublet 1:1, CH quartet 1:3:3:1, each line moved
    # and split by second-order terms J^2 / (2 dnu) times at most I(I+1) = 15/4 (0.08 Hz here;
    # common practice)
    field, j = 400.0, 7.0
    lines = simulate_arrays([1.2, 4.2], [[0, j], [j, 0]], [3, 1], field_mhz=field)
    second = 4 * j**2 / (2 * 1200.0)
    hz = lines.ppm * field
    for centre, inten in [(480 - 3.5, 1.5), (480 + 3.5, 1.5)]:
        near = np.abs(hz - centre) <= second + 1e-9
        assert lines.intensity[near].sum() == pytest.approx(inten, rel=2 * j / 1200)  # roof effect
        assert set(lines.site_index[near].tolist()) == {0}
    for k, inten in zip([-1.5, -0.5, 0.5, 1.5], [0.125, 0.375, 0.375, 0.125], strict=True):
        near = np.abs(hz - (1680 + k * j)) <= second + 1e-9
        # roof effect 2 |m| J / dnu = 3 J / dnu (first order) for the m = 3/2 state of the CH3
        assert lines.intensity[near].sum() == pytest.approx(inten, rel=4 * j / 1200)
        assert set(lines.site_index[near].tolist()) == {1}
    # and exactly what the full matrix gives
    ref_hz, ref_int = _reference_lines([1.2, 4.2], [[0, j], [j, 0]], [3, 1], field)
    for f in ref_hz[ref_int > 0.01]:
        assert np.min(np.abs(hz - f)) < 1e-6


def test_abx_ab_part_in_x_limit_is_two_ab_quartets():
    # ABX with X far away (Pople, Schneider & Bernstein 1959, ABX analysis; from memory): the AB part
    # is two AB quartets with effective shifts nu_A +- J_AX/2, nu_B +- J_BX/2 (one per X spin state).
    field = 100.0
    nu_a, nu_b, j_ab, j_ax, j_bx = 200.0, 215.0, 12.0, 7.0, 2.0
    shifts = [nu_a / field, nu_b / field, 11.0]
    j = np.array([[0, j_ab, j_ax], [j_ab, 0, j_bx], [j_ax, j_bx, 0]])
    lines = simulate_arrays(shifts, j, [1, 1, 1], field_mhz=field)
    expected = []
    for m_x in (0.5, -0.5):
        a, b = nu_a + m_x * j_ax, nu_b + m_x * j_bx
        d = math.hypot(b - a, j_ab)
        c = (a + b) / 2
        expected += [c + s * d / 2 + t * j_ab / 2 for s in (-1, 1) for t in (-1, 1)]
    ab = np.sort(lines.ppm[lines.site_index < 2] * field)
    # the X limit holds to second order in J_AX / dnu_AX: J_AX^2 / (2 * 885 Hz) = 0.028 Hz
    np.testing.assert_allclose(ab, np.sort(expected), atol=j_ax**2 / (2 * 885.0))
    assert lines.intensity[lines.site_index < 2].sum() == pytest.approx(2.0)
    # the simulation itself is exact: the full matrix gives the same AB lines to 1e-6 Hz
    ref_hz, ref_int = _reference_lines(shifts, j, [1, 1, 1], field)
    ref_ab = np.sort(ref_hz[(ref_int > 1e-3) & (ref_hz < 600)])
    np.testing.assert_allclose(ab, ref_ab, atol=1e-6)


# ---------------------------------------------------------------------------
# invariances and totals


def test_total_intensity_equals_number_of_protons():
    rng = np.random.default_rng(3)
    for counts in ([1, 2, 3], [3, 2, 2, 1, 1], [1] * 7, [9, 1, 2]):
        shifts, j, n = _random_system(rng, counts, spread_ppm=0.5, j_max_hz=12)
        for field in (40.0, 60.0, 600.0, 1200.0):
            lines = simulate_arrays(shifts, j, n, field_mhz=field)
            assert lines.intensity.sum() == pytest.approx(sum(counts), rel=1e-9)
            per_site = np.bincount(lines.site_index, weights=lines.intensity, minlength=len(counts))
            assert per_site.sum() == pytest.approx(sum(counts))


def test_sign_flip_of_all_couplings_leaves_spectrum_unchanged():
    rng = np.random.default_rng(5)
    shifts, j, n = _random_system(rng, [1, 2, 1, 3, 1], spread_ppm=0.3, j_max_hz=15)
    ppm = np.linspace(0.5, 1.8, 3000)
    a = render_lines(simulate_arrays(shifts, j, n, field_mhz=60), ppm, line_width_hz=0.5)
    b = render_lines(simulate_arrays(shifts, -j, n, field_mhz=60), ppm, line_width_hz=0.5)
    assert _relative_difference(b, a) < 1e-9


def test_reordering_sites_leaves_spectrum_unchanged():
    rng = np.random.default_rng(7)
    shifts, j, n = _random_system(rng, [1, 2, 1, 3, 1, 2], spread_ppm=0.4, j_max_hz=15)
    perm = rng.permutation(len(n))
    ppm = np.linspace(0.5, 1.9, 3000)
    lines_a = simulate_arrays(shifts, j, n, field_mhz=80)
    lines_b = simulate_arrays(shifts[perm], j[np.ix_(perm, perm)], n[perm], field_mhz=80)
    assert _relative_difference(render_lines(lines_b, ppm, line_width_hz=0.5),
                                render_lines(lines_a, ppm, line_width_hz=0.5)) < 1e-9
    # per-site areas follow the sites to their new places
    area_a = np.bincount(lines_a.site_index, weights=lines_a.intensity)
    area_b = np.bincount(lines_b.site_index, weights=lines_b.intensity)
    np.testing.assert_allclose(area_b, area_a[perm], atol=1e-6)


# ---------------------------------------------------------------------------
# fast vs slow


@pytest.mark.parametrize(("counts", "seed"), [([1, 1, 1, 1, 1, 1], 11), ([2, 1, 3, 2], 12),
                                              ([1, 1, 1, 1, 1, 1, 1, 1], 13), ([3, 3, 1, 1], 14)])
def test_fast_simulation_agrees_with_full_matrix(counts, seed):
    rng = np.random.default_rng(seed)
    shifts, j, n = _random_system(rng, counts, spread_ppm=0.25, j_max_hz=16)
    field = 60.0
    lines = simulate_arrays(shifts, j, n, field_mhz=field, cluster_ratio=1e-9)
    ref_hz, ref_int = _reference_lines(shifts, j, n, field)
    assert ref_int.sum() == pytest.approx(sum(counts))
    ppm = np.linspace(0.6, 1.65, 6000)
    fast = render_lines(lines, ppm, line_width_hz=0.3)
    slow = _render_hz(ref_hz, ref_int, ppm, field, 0.3)
    # lines below 1e-6 of the total are dropped by design
    assert _relative_difference(fast, slow) < 1e-4
    # strongest lines at the same places
    strong = ref_int > 0.05
    for f in ref_hz[strong]:
        assert np.min(np.abs(lines.ppm * field - f)) < 1e-6


def _single_spin_op(single, i, n):
    return sparse.kron(sparse.kron(sparse.identity(2**i), sparse.csr_matrix(single)),
                       sparse.identity(2 ** (n - i - 1))).tocsr()


def _full_hamiltonian(shifts_ppm, j_hz, field_mhz):
    """Dense 2^n Hamiltonian of single protons, H = sum nu_i Iz_i + sum J_ik I_i . I_k (Hz)."""
    nu = np.asarray(shifts_ppm, float) * field_mhz
    n = len(nu)
    iz = [_single_spin_op(np.diag([0.5, -0.5]), i, n) for i in range(n)]
    ip = [_single_spin_op(np.array([[0.0, 1.0], [0.0, 0.0]]), i, n) for i in range(n)]
    ham = sum(nu[i] * iz[i] for i in range(n))
    for a in range(n):
        for b in range(a + 1, n):
            if j_hz[a][b]:
                ham = ham + j_hz[a][b] * (iz[a] @ iz[b] + 0.5 * (ip[a] @ ip[b].T + ip[a].T @ ip[b]))
    return ham.toarray()


def _reference_pipeline(shifts_ppm, j_hz, field_mhz):
    """Full-matrix lines put through the documented line bookkeeping, written the plain way.

    Single protons only. Each line belongs to the proton whose <Iz> changes most; lines below
    1e-9 of the total are not extracted; lines of one proton within 1e-4 Hz cells are pooled
    (weighted centre); then the weakest lines (each < 1e-6 of the total) are dropped while they
    add up to < 1e-5 of it, and the rest is scaled back to the number of protons.
    """
    n = len(shifts_ppm)
    energy, vec = np.linalg.eigh(_full_hamiltonian(shifts_ppm, j_hz, field_mhz))
    ip = [_single_spin_op(np.array([[0.0, 1.0], [0.0, 0.0]]), i, n) for i in range(n)]
    inten = (vec.T @ (sum(p.T for p in ip) @ vec)) ** 2 / 2 ** (n - 1)
    lo, up = np.nonzero(inten > 1e-9 * n)
    iz_diag = np.stack([_single_spin_op(np.diag([0.5, -0.5]), i, n).diagonal() for i in range(n)], axis=1)
    z = vec.T**2 @ iz_diag  # <Iz_i> of every eigenstate
    freq, inten, site = energy[up] - energy[lo], inten[lo, up], np.argmax(z[up] - z[lo], axis=1)
    cells = {}
    for f, i, s in zip(freq, inten, site, strict=True):
        cells.setdefault((s, round((f - freq.min()) / 1e-4)), []).append((f, i))
    freq = np.array([sum(f * i for f, i in group) / sum(i for _, i in group) for group in cells.values()])
    inten = np.array([sum(i for _, i in group) for group in cells.values()])
    dropped, keep = 0.0, np.ones(len(inten), bool)
    for k in np.argsort(inten, kind="stable"):
        if inten[k] >= 1e-6 * n or dropped + inten[k] > 1e-5 * n:
            break
        dropped += inten[k]
        keep[k] = False
    return freq[keep], inten[keep] * n / inten[keep].sum(), np.array([s for s, _ in cells])[keep]


def ten_spin_ring():
    """Ten distinct protons of a substituted cyclohexene-like ring (plausible values), also
    the strongly coupled cluster of ``benchmarks/bench_spin.py``: shifts, J, protons per site."""
    shifts = np.array([5.62, 5.70, 2.05, 2.12, 1.62, 1.74, 1.95, 2.20, 1.48, 1.55])
    j = np.zeros((10, 10))
    pairs = {(0, 1): 10.2, (0, 2): 3.5, (0, 3): 2.2, (1, 6): 4.0, (1, 7): 2.5, (0, 6): -1.5,
             (2, 3): -17.5, (2, 4): 6.0, (2, 5): 3.0, (3, 4): 9.5, (3, 5): 5.5,
             (4, 5): -13.0, (4, 8): 11.0, (4, 9): 3.5, (5, 8): 3.0, (5, 9): 4.0,
             (8, 9): -13.2, (8, 6): 10.5, (8, 7): 3.2, (9, 6): 3.8, (9, 7): 3.4, (6, 7): -17.8}
    for (a, b), value in pairs.items():
        j[a, b] = j[b, a] = value
    return shifts, j, np.ones(10, dtype=int)


@pytest.mark.slow
def test_ten_spin_ring_matches_plain_reference_pipeline():
    # the block-diagonal fast path (with its batched, sorted and sparse bookkeeping) against the
    # plain full 2^10 computation of the same lines: equal to rounding on the rendered spectrum
    shifts, j, n = ten_spin_ring()
    lines = simulate_arrays(shifts, j, n, field_mhz=60.0)
    ref_hz, ref_int, ref_site = _reference_pipeline(shifts, j, 60.0)
    assert lines.ppm.size == ref_hz.size
    reference = LineList(ppm=ref_hz / 60.0, intensity=ref_int, field_mhz=60.0, site_index=ref_site)
    ppm = np.linspace(1.2, 6.0, 20000)
    for width in (0.3, 1.0):
        fast = render_sites(lines, ppm, n_sites=10, line_width_hz=width)
        slow = render_sites(reference, ppm, n_sites=10, line_width_hz=width)
        assert _relative_difference(fast, slow) < 1e-6


# ---------------------------------------------------------------------------
# rendering


def test_render_area_and_grid_direction():
    lines = simulate_arrays([1.0, 1.1, 3.0], [[0, 8, 0], [8, 0, 1], [0, 1, 0]], [3, 2, 1], field_mhz=60)
    ppm_down = np.linspace(12.0, -2.0, 20001)
    for shape, frac in (("lorentzian", 0.0), ("gaussian", 0.0), ("voigt", 0.4)):
        y = render_lines(lines, ppm_down, line_width_hz=1.0, shape=shape, gaussian_fraction=frac)
        area = y.sum() * abs(ppm_down[1] - ppm_down[0])
        assert area == pytest.approx(6.0, rel=2e-3)
        y_up = render_lines(lines, ppm_down[::-1], line_width_hz=1.0, shape=shape, gaussian_fraction=frac)
        np.testing.assert_allclose(y_up[::-1], y, rtol=1e-9, atol=1e-12)


def test_render_area_exact_on_coarse_grid():
    # Points hold bin means, so even a grid coarser than the line keeps the area.
    lines = LineList(ppm=[2.0], intensity=[3.0], field_mhz=400.0, site_index=[0])
    ppm = np.linspace(-8.0, 12.0, 101)  # 0.2 ppm = 80 Hz per point, line 1 Hz wide
    y = render_lines(lines, ppm, line_width_hz=1.0, shape="gaussian")
    assert y.sum() * 0.2 == pytest.approx(3.0, rel=1e-12)


def test_lorentzian_peak_height_and_half_width():
    field, width = 100.0, 2.0
    lines = LineList(ppm=[1.0], intensity=[1.0], field_mhz=field, site_index=[0])
    ppm = np.linspace(0.9, 1.1, 20001)
    y = render_lines(lines, ppm, line_width_hz=width)
    gamma_ppm = width / field / 2
    assert y.max() == pytest.approx(1 / (math.pi * gamma_ppm), rel=1e-4)
    above = ppm[y >= y.max() / 2]
    assert (above.max() - above.min()) * field == pytest.approx(width, abs=2e-3)


def test_render_sites_splits_by_site():
    shifts, j, n = np.array([1.0, 1.3, 5.5]), np.array([[0, 7, 0], [7, 0, 1.5], [0, 1.5, 0]]), [3, 2, 1]
    lines = simulate_arrays(shifts, j, n, field_mhz=60)
    ppm = np.linspace(8.0, -1.0, 9001)
    per_site = render_sites(lines, ppm, n_sites=3, line_width_hz=1.0)
    assert per_site.shape == (3, ppm.size)
    np.testing.assert_allclose(per_site.sum(axis=0), render_lines(lines, ppm, line_width_hz=1.0), atol=1e-10)
    areas = per_site.sum(axis=1) * 0.001
    np.testing.assert_allclose(areas, [3, 2, 1], rtol=0.02)


def test_model_spectrum_of_spin_system_integrates_to_proton_count():
    # ethanol-like system: CH3 (atoms 3-5), CH2 (6, 7), OH (8) of AddHs("CCO")
    sites = (ProtonSite((3, 4, 5), 1.22, 0.05, "CH3"), ProtonSite((6, 7), 3.69, 0.05, "CH2"),
             ProtonSite((8,), 2.6, 0.3, "OH", exchangeable=True))
    j = np.array([[0, 7.0, 0], [7.0, 0, 0], [0, 0, 0]])
    system = SpinSystem("CCO", sites, j)
    ppm = np.linspace(10.0, -2.0, 24001)
    y = model_spectrum(system, ppm, field_mhz=60.0, line_width_hz=1.0)
    assert y.sum() * 0.0005 == pytest.approx(6.0, rel=3e-3)
    lines = simulate_lines(system, field_mhz=60.0)
    assert lines.intensity.sum() == pytest.approx(6.0)
    assert set(lines.site_index.tolist()) == {0, 1, 2}


# ---------------------------------------------------------------------------
# bad input


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"j_hz": [[0, 7.0], [6.0, 0]]}, "symmetric"),
        ({"j_hz": [[0, float("nan")], [float("nan"), 0]]}, "NaN"),
        ({"shifts_ppm": [1.0, float("nan")]}, "shifts_ppm"),
        ({"field_mhz": -60.0}, "field_mhz"),
        ({"field_mhz": 0.0}, "field_mhz"),
        ({"field_mhz": 30.0}, "30"),
        ({"field_mhz": 1500.0}, "1500"),
        ({"n_protons": [1, 0]}, "n_protons"),
        ({"n_protons": [1, 1.5]}, "n_protons"),
        ({"j_hz": [[0, 1, 2], [1, 0, 3], [2, 3, 0]]}, "shape"),
        ({"max_cluster_spins": 40}, "max_cluster_spins"),
        ({"cluster_ratio": -1.0}, "cluster_ratio"),
    ],
)
def test_bad_input_raises_input_error(kwargs, fragment):
    args = {"shifts_ppm": [1.0, 2.0], "j_hz": [[0, 7.0], [7.0, 0]], "n_protons": [1, 1], "field_mhz": 60.0}
    args.update(kwargs)
    with pytest.raises(InputError, match=fragment):
        simulate_arrays(args.pop("shifts_ppm"), args.pop("j_hz"), args.pop("n_protons"), **args)


def test_bad_render_input_raises_input_error():
    lines = LineList(ppm=[1.0], intensity=[1.0], field_mhz=60.0, site_index=[0])
    with pytest.raises(InputError, match="shape"):
        render_lines(lines, [0.0, 1.0, 2.0], line_width_hz=1.0, shape="triangle")
    with pytest.raises(InputError, match="line_width_hz"):
        render_lines(lines, [0.0, 1.0, 2.0], line_width_hz=0.0)
    with pytest.raises(InputError, match="ppm"):
        render_lines(lines, [0.0, 1.0, 0.5], line_width_hz=1.0)
    with pytest.raises(InputError, match="gaussian_fraction"):
        render_lines(lines, [0.0, 1.0], line_width_hz=1.0, shape="voigt", gaussian_fraction=1.5)
    with pytest.raises(InputError, match="n_sites"):
        render_sites(lines, [0.0, 1.0], n_sites=0, line_width_hz=1.0)
    with pytest.raises(InputError, match="options"):
        simulate_lines(SpinSystem("C", (ProtonSite((1, 2, 3, 4), 0.2, 0.1),), [[0.0]]), field_mhz=60,
                       colour="red")


def test_plan_clusters_keeps_weak_couplings_apart():
    # two strongly coupled pairs joined by a 0.01 Hz coupling over 300 Hz (|J / dnu| = 3e-5)
    shifts = [1.00, 1.05, 6.00, 6.10]
    j = np.zeros((4, 4))
    j[0, 1] = j[1, 0] = 7.0
    j[2, 3] = j[3, 2] = 15.0
    j[1, 2] = j[2, 1] = 0.01
    plan = plan_clusters(shifts, j, [3, 2, 1, 1], field_mhz=60)
    assert sorted(plan.clusters) == [(0, 1), (2, 3)]
    assert plan.cut_strong == () and plan.warnings == ()


def test_plan_clusters_joins_weak_couplings_when_cheap_and_cuts_only_when_large():
    # a 0.3 Hz coupling over 300 Hz is weak (also against the pairs' mixing, 0.3 / 7.6 Hz < 0.05),
    # but the joined cluster is small: simulated exactly
    shifts = [1.00, 1.05, 6.00, 6.10]
    j = np.zeros((4, 4))
    j[0, 1] = j[1, 0] = 7.0
    j[2, 3] = j[3, 2] = 15.0
    j[1, 2] = j[2, 1] = 0.3
    assert plan_clusters(shifts, j, [3, 2, 1, 1], field_mhz=60).clusters == ((0, 1, 2, 3),)
    plan = plan_clusters(shifts, j, [3, 2, 1, 1], field_mhz=60, max_cluster_spins=5)
    assert sorted(plan.clusters) == [(0, 1), (2, 3)] and plan.cut_strong == ()


def test_plan_clusters_keeps_abx_partner_with_its_strongly_coupled_pair():
    # CH3 next to a strongly coupled vinyl pair: J/dnu = 0.03 is small, but J_AX - J_BX = 8 Hz changes
    # how the pair mixes (sqrt(6^2 + 15.2^2) = 16 Hz), so a cut is not legal and is reported
    shifts, j, n = np.array([1.70, 5.45, 5.55]), np.zeros((3, 3)), [3, 1, 1]
    for a, b, value in [(0, 1, 6.4), (0, 2, -1.6), (1, 2, 15.2)]:
        j[a, b] = j[b, a] = value
    assert plan_clusters(shifts, j, n, field_mhz=60).clusters == ((0, 1, 2),)
    plan = plan_clusters(shifts, j, n, field_mhz=60, max_cluster_spins=3)
    assert plan.cut_strong and plan.warnings


# ---------------------------------------------------------------------------
# clusters


def _butenyl_system():
    # CH3-CH=CH-CH2-X plus a remote CH3 with a small long-range coupling (plausible values)
    shifts = np.array([1.70, 5.45, 5.55, 2.02, 3.40])
    j = np.zeros((5, 5))
    for a, b, value in [(0, 1, 6.4), (0, 2, -1.6), (1, 2, 15.2), (2, 3, 6.7), (1, 3, -1.3), (3, 4, 0.6)]:
        j[a, b] = j[b, a] = value
    return shifts, j, np.array([3, 1, 1, 2, 3])


def _pentenyl_system():
    # 5-bromopent-1-ene CH2=CH-CH2-CH2-CH2Br (plausible values; from memory)
    shifts = np.array([5.03, 4.98, 5.78, 2.20, 1.93, 3.41])
    j = np.zeros((6, 6))
    for a, b, value in [(0, 2, 17.1), (1, 2, 10.2), (0, 1, 1.9), (2, 3, 6.7), (0, 3, -1.5), (1, 3, -1.3),
                        (3, 4, 7.2), (4, 5, 6.8)]:
        j[a, b] = j[b, a] = value
    return shifts, j, np.array([1, 1, 1, 2, 2, 2])


def _ethyl_pentenyl_system():
    # (E)-CH3-CH2-CH=CH-CH2-OR, a pent-2-enyl ether (plausible values; from memory)
    shifts = np.array([0.99, 2.06, 5.72, 5.56, 3.95])
    j = np.zeros((5, 5))
    for a, b, value in [(0, 1, 7.5), (1, 2, 6.3), (2, 3, 15.4), (3, 4, 6.0), (1, 3, -1.4), (2, 4, -1.3),
                        (1, 4, 1.0)]:
        j[a, b] = j[b, a] = value
    return shifts, j, np.array([3, 2, 1, 1, 2])


_SYSTEMS = {"butenyl": _butenyl_system, "pentenyl": _pentenyl_system,
            "ethyl_pentenyl": _ethyl_pentenyl_system}
_SPLIT_LEGAL_AT_400 = {"butenyl", "ethyl_pentenyl"}  # the others have no legal split: all exact


@pytest.mark.parametrize("field", [60.0, 400.0])
@pytest.mark.parametrize("name", sorted(_SYSTEMS))
def test_cluster_split_agrees_with_exact_where_legal(name, field):
    # Legal split: every cut coupling is weak (plan.cut_strong empty). Every cluster size that gives
    # a legal split is compared with the full 2^n matrix: max |difference| / max height < 1 %.
    shifts, j, n = _SYSTEMS[name]()
    ref_hz, ref_int = _reference_lines(shifts, j, n, field)
    ppm = np.linspace(shifts.min() - 0.3, shifts.max() + 0.3, 12000)
    exact = _render_hz(ref_hz, ref_int, ppm, field, 1.0)
    checked = 0
    for max_spins in range(int(n.max()), int(n.sum()) + 1):
        plan = plan_clusters(shifts, j, n, field_mhz=field, max_cluster_spins=max_spins)
        if plan.cut_strong:
            continue
        lines = simulate_arrays(shifts, j, n, field_mhz=field, max_cluster_spins=max_spins)
        assert lines.warnings == ()
        assert _relative_difference(render_lines(lines, ppm, line_width_hz=1.0), exact) < 0.01
        checked += len(plan.clusters) > 1
    if field == 400.0 and name in _SPLIT_LEGAL_AT_400:
        assert checked  # a real split, not only the one exact cluster


def test_cut_weak_couplings_get_second_order_corrections():
    # AX cut on purpose (max_cluster_spins=1): the closed-form AB quartet (references.md section 7)
    # is met to third order in J / dnu = 0.07, far better than the first-order doublets
    field, dnu, jj = 100.0, 100.0, 7.0
    lines = simulate_arrays([1.0, 2.0], [[0, jj], [jj, 0]], [1, 1], field_mhz=field, max_cluster_spins=1)
    d = math.hypot(dnu, jj)
    expected = np.sort([150 + s * d / 2 + t * jj / 2 for s in (-1, 1) for t in (-1, 1)])
    got = np.sort(lines.ppm * field)
    np.testing.assert_allclose(got, expected, atol=jj * (jj / dnu) ** 2 / 4)
    inten = lines.intensity[np.argsort(lines.ppm)]
    ratio = (d + jj) / (d - jj)
    assert inten[1] / inten[0] == pytest.approx(ratio, rel=(jj / dnu) ** 2)


def test_exact_cluster_matches_full_matrix_for_strongly_coupled_neighbours():
    # the CH3 next to a strongly coupled vinyl pair: its lines follow the pair's eigenstates
    shifts, j, n = _butenyl_system()
    ref_hz, ref_int = _reference_lines(shifts, j, n, 600.0)
    ppm = np.linspace(1.6, 1.8, 4000)
    fast = render_lines(simulate_arrays(shifts, j, n, field_mhz=600), ppm, line_width_hz=1.0)
    slow = _render_hz(ref_hz, ref_int, ppm, 600.0, 1.0)
    # residual is second order in the cut couplings (J^2 / dnu ~ 0.02 Hz here)
    assert _relative_difference(fast, slow) < 0.02


def test_oversize_cluster_is_cut_with_warning():
    # eight CH2 groups of a chain with nearly equal shifts: one strongly coupled 16-spin system
    shifts = 1.25 + 0.01 * np.arange(8)
    j = np.zeros((8, 8))
    for a in range(7):
        j[a, a + 1] = j[a + 1, a] = 7.0
    lines = simulate_arrays(shifts, j, [2] * 8, field_mhz=60, max_cluster_spins=6)
    assert lines.warnings and "max_cluster_spins=6" in lines.warnings[0]
    assert lines.intensity.sum() == pytest.approx(16.0)
    near = np.abs(lines.ppm - 1.29) < 0.3
    assert lines.intensity[near].sum() > 0.99 * 16.0


@pytest.mark.slow
def test_sixty_proton_molecule_simulates():
    # triacontene-like C30H60: CH2=CH- (3 H) + 27 CH2 + CH3 at 60 MHz, default options
    shifts = np.array([4.93, 4.99, 5.81, 2.04, 1.37] + [1.26 + 0.002 * k for k in range(25)] + [0.88])
    n = np.array([1, 1, 1, 2, 2] + [2] * 25 + [3])
    j = np.zeros((31, 31))
    for a, b, value in [(0, 2, 10.2), (1, 2, 17.1), (0, 1, 2.0), (2, 3, 6.7), (0, 3, -1.2), (1, 3, -1.4)]:
        j[a, b] = j[b, a] = value
    for a in range(3, 30):
        j[a, a + 1] = j[a + 1, a] = 7.0
    lines = simulate_arrays(shifts, j, n, field_mhz=60)
    assert n.sum() == 60
    assert lines.intensity.sum() == pytest.approx(60.0)
    assert lines.warnings
    vinyl = np.bincount(lines.site_index, weights=lines.intensity, minlength=31)[:3]
    np.testing.assert_allclose(vinyl, 1.0, atol=0.05)


def test_uncoupled_sites_at_equal_shifts_across_a_cut_give_finite_lines():
    # Two clusters cut apart, with a site of each at exactly the same shift and no coupling
    # between those two: the zero coupling at zero shift difference must not give 0/0.
    import warnings

    shifts = np.array([5.10, 5.25, 5.10, 4.95])
    j = np.zeros((4, 4))
    for a, b, value in ((0, 1, 10.0), (2, 3, 10.0), (1, 2, 1.0)):
        j[a, b] = j[b, a] = value
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        lines = simulate_arrays(shifts, j, np.ones(4, dtype=int), field_mhz=500.0, max_cluster_spins=2)
    assert np.all(np.isfinite(lines.ppm))
    assert lines.intensity.sum() == pytest.approx(4.0)
