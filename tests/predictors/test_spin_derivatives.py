"""Tests of the line-frequency derivatives of the spin simulator (predictors.spin.simulate_with_derivatives).

Checked against closed forms (AB quartet, first-order multiplets), central finite differences of
the simulated line frequencies on systems whose lines keep their identity under a small change,
and exact identities: a common shift moves every line as much (rows of d nu / d shift sum to 1),
and line frequencies are homogeneous of degree 1 in all shifts and couplings (Euler's theorem).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from predictors.errors import InputError
from predictors.spin import LineDerivatives, simulate_arrays, simulate_with_derivatives

_STEP_HZ = 1e-5


def _pairs_of(j):
    j = np.asarray(j)
    return [(a, b) for a in range(len(j)) for b in range(a + 1, len(j)) if j[a, b] != 0]


def _moved(shifts, j, n, field, *, pairs=(), sites=(), step=_STEP_HZ, **options):
    """Line frequencies (Hz) with the couplings of ``pairs`` and shifts of ``sites`` moved by ``step`` Hz."""
    shifts = np.array(shifts, float)
    j = np.array(j, float)
    for a, b in pairs:
        j[a, b] += step
        j[b, a] += step
    for g in sites:
        shifts[g] += step / field
    return simulate_arrays(shifts, j, n, field_mhz=field, **options).ppm * field


def _central(shifts, j, n, field, **kw):
    """Central difference of every line frequency; None if the number of lines changes."""
    up = _moved(shifts, j, n, field, step=_STEP_HZ, **kw)
    down = _moved(shifts, j, n, field, step=-_STEP_HZ, **kw)
    if up.size != down.size:
        return None
    return (up - down) / (2 * _STEP_HZ)


def _check_against_differences(shifts, j, n, field, *, tol=1e-6, **options):
    pairs = _pairs_of(j)
    res = simulate_with_derivatives(shifts, j, n, field_mhz=field, pairs=pairs, **options)
    n_lines = res.lines.ppm.size
    for c, pair in enumerate(pairs):
        fd = _central(shifts, j, n, field, pairs=[pair], **options)
        assert fd is not None and fd.size == n_lines
        np.testing.assert_allclose(res.dfreq_dj_hz[:, c], fd, atol=tol, err_msg=f"J{pair}")
    for g in range(len(n)):
        fd = _central(shifts, j, n, field, sites=[g], **options)
        assert fd is not None and fd.size == n_lines
        np.testing.assert_allclose(res.dfreq_dshift_hz[:, g], fd, atol=tol, err_msg=f"shift {g}")
    return res


# ---------------------------------------------------------------------------
# closed forms


@pytest.mark.parametrize(("dnu_hz", "j_hz"), [(20.0, 10.0), (5.0, 12.0), (30.0, -7.5)])
def test_ab_quartet_derivatives_match_closed_form(dnu_hz, j_hz):
    # AB quartet (references.md section 7, any NMR textbook): lines at c + s D/2 + t J/2 with
    # D = sqrt(dnu^2 + J^2), s, t = +-1; so d/dJ = s J / (2 D) + t / 2 and
    # d/dnu_B = 1/2 + s dnu / (2 D) (dnu = nu_B - nu_A), d/dnu_A = 1 - d/dnu_B.
    field, centre = 100.0, 250.0
    nu_a, nu_b = centre - dnu_hz / 2, centre + dnu_hz / 2
    res = simulate_with_derivatives([nu_a / field, nu_b / field], [[0, j_hz], [j_hz, 0]], [1, 1],
                                    field_mhz=field, pairs=[(0, 1)])
    d = math.hypot(dnu_hz, j_hz)
    expected = {}
    for s in (-1, 1):
        for t in (-1, 1):
            freq = centre + s * d / 2 + t * j_hz / 2
            expected[round(freq, 6)] = (s * j_hz / (2 * d) + t / 2, 0.5 - s * dnu_hz / (2 * d),
                                        0.5 + s * dnu_hz / (2 * d))
    got = res.lines.ppm * field
    assert got.size == 4
    for i, f in enumerate(got):
        dj, da, db = expected[round(f, 6)]
        assert res.dfreq_dj_hz[i, 0] == pytest.approx(dj, abs=1e-9)
        assert res.dfreq_dshift_hz[i, 0] == pytest.approx(da, abs=1e-9)
        assert res.dfreq_dshift_hz[i, 1] == pytest.approx(db, abs=1e-9)


def test_first_order_a3x_derivatives_are_spin_projections():
    # CH3-CH far apart (J / dnu = 0.002): to first order each X line sits at nu_X + m J with m the
    # total spin projection of the CH3 (-3/2 .. 3/2), each CH3 line at nu_A +- J/2, so
    # d nu / d J = m (common practice: first-order multiplet rule). The second-order terms
    # (J^2 / 2 dnu) (I(I+1) - m^2 ...) add at most I(I+1) J / dnu = 3.75 J / dnu to the derivative.
    field, j = 600.0, 7.0
    shifts = [1.2, 7.2]
    res = simulate_with_derivatives(shifts, [[0, j], [j, 0]], [3, 1], field_mhz=field, pairs=[(0, 1)])
    hz = res.lines.ppm * field
    second = 3.75 * j / 3600
    for m in (-1.5, -0.5, 0.5, 1.5):
        near = np.abs(hz - (7.2 * field + m * j)) < 0.1
        assert near.any()
        np.testing.assert_allclose(res.dfreq_dj_hz[near, 0], m, atol=second)
        np.testing.assert_allclose(res.dfreq_dshift_hz[near, 1], 1.0, atol=3 * (j / 3600) ** 2)
    for m in (-0.5, 0.5):
        near = np.abs(hz - (1.2 * field + m * j)) < 0.1
        np.testing.assert_allclose(res.dfreq_dj_hz[near, 0], m, atol=second)


# ---------------------------------------------------------------------------
# finite differences (systems whose lines keep their identity under a small change)


def test_abx_derivatives_match_finite_differences():
    j = [[0, 12.0, 7.0], [12.0, 0, 2.0], [7.0, 2.0, 0]]
    _check_against_differences([2.0, 2.15, 4.0], j, [1, 1, 1], 100.0)


def test_a2b2_derivatives_match_finite_differences():
    _check_against_differences([2.0, 2.1], [[0, 7.0], [7.0, 0]], [2, 2], 60.0)


def test_vinyl_with_methyl_derivatives_match_finite_differences():
    # propene-like CH=CH2 with CH3 (plausible values): the vinyl dq and its partners, strongly
    # coupled at 80 MHz
    j = [[0, 17.0, 10.0, 6.5], [17.0, 0, 2.0, -1.5], [10.0, 2.0, 0, -1.5], [6.5, -1.5, -1.5, 0]]
    _check_against_differences([5.8, 5.0, 4.95, 1.7], j, [1, 1, 1, 3], 80.0)


@pytest.mark.parametrize(("shifts", "field"), [([1.2, 3.6], 400.0), ([1.2, 9.6], 600.0)])
def test_weakly_coupled_ethyl_derivatives_match_finite_differences(shifts, field):
    # the second is cut into two clusters (J / dnu = 0.0014): the coupling enters through the
    # second-order terms, whose dependence on J and both shifts is differentiated exactly
    res = _check_against_differences(shifts, [[0, 7.0], [7.0, 0]], [3, 2], field)
    assert len(res.lines.ppm) > 4


def test_cut_between_two_strongly_coupled_pairs_matches_finite_differences():
    # two AB pairs joined by one weak coupling that is cut (max_cluster_spins=2), each
    # re-diagonalised per state of the other. The derivatives hold the neighbour's <Fz> fixed
    # (first order in the cut): lines of one pair miss J_cut x d<Fz>/dp of the other pair, and
    # in an AB pair |d<Fz>/dp| <= 1 / (2 D), D = sqrt(dnu^2 + J^2) (p a shift or the coupling;
    # <Fz> = cos(2 theta) / 2 with tan(2 theta) = J / dnu); everything else is exact
    shifts = [1.00, 1.05, 3.00, 3.08]
    j = np.zeros((4, 4))
    for a, b, value in [(0, 1, 7.0), (2, 3, 15.0), (1, 2, 0.3)]:
        j[a, b] = j[b, a] = value
    bound = 0.3 / (2 * math.hypot(0.05 * 60.0, 7.0))
    _check_against_differences(shifts, j, [1, 1, 1, 1], 60.0, tol=bound, max_cluster_spins=2)
    res = simulate_with_derivatives(shifts, j, [1, 1, 1, 1], field_mhz=60.0, pairs=[(1, 2)],
                                    max_cluster_spins=2)
    fd = _central(shifts, j, [1, 1, 1, 1], 60.0, pairs=[(1, 2)], max_cluster_spins=2)
    np.testing.assert_allclose(res.dfreq_dj_hz[:, 0], fd, atol=1e-6)   # the cut coupling itself: exact


def test_symmetric_system_with_degenerate_levels_matches_finite_differences():
    # A C3-symmetric six-spin system (three A and three B sites, chiral couplings, so no site
    # is magnetically equivalent to another): its eigenvalues come in exactly degenerate pairs.
    # Changes that keep the symmetry keep the degeneracy, so lines keep their identity; the
    # derivatives of the lines from degenerate levels are those of their centroid.
    field = 60.0
    shifts = np.array([2.0, 2.0, 2.0, 2.2, 2.2, 2.2])
    j = np.zeros((6, 6))
    for i in range(3):
        for step, value in ((0, 7.0), (1, 3.0), (2, -1.0)):
            j[i, 3 + (i + step) % 3] = j[3 + (i + step) % 3, i] = value
        j[i, (i + 1) % 3] = j[(i + 1) % 3, i] = -2.0
        j[3 + i, 3 + (i + 1) % 3] = j[3 + (i + 1) % 3, 3 + i] = 1.0
    sets = [[(i, 3 + (i + s) % 3) for i in range(3)] for s in range(3)]
    sets += [[(0, 1), (1, 2), (0, 2)], [(3, 4), (4, 5), (3, 5)]]
    res = simulate_with_derivatives(shifts, j, [1] * 6, field_mhz=field, pairs=[p for s in sets for p in s])
    plain = simulate_arrays(shifts, j, [1] * 6, field_mhz=field)
    np.testing.assert_array_equal(res.lines.ppm, plain.ppm)
    for c, pairs in enumerate(sets):
        fd = _central(shifts, j, [1] * 6, field, pairs=pairs)
        assert fd is not None and fd.size == plain.ppm.size
        np.testing.assert_allclose(res.dfreq_dj_hz[:, 3 * c:3 * c + 3].sum(axis=1), fd, atol=1e-6)
    for first in (0, 3):
        fd = _central(shifts, j, [1] * 6, field, sites=range(first, first + 3))
        np.testing.assert_allclose(res.dfreq_dshift_hz[:, first:first + 3].sum(axis=1), fd, atol=1e-6)


# ---------------------------------------------------------------------------
# equivalent sites given separately


def test_equivalent_sites_share_the_group_derivatives():
    # CH3-CH2 with the CH2 given as two sites of equal shift and couplings (a geminal J that
    # does not show): the same lines as one 2H site, the group's derivatives shared by its two
    # sites (each line goes to either of them), the geminal coupling without effect
    field, j_vic = 60.0, 7.2
    split = np.array([[0, j_vic, j_vic], [j_vic, 0, -12.0], [j_vic, -12.0, 0]])
    res = simulate_with_derivatives([1.2, 1.5, 1.5], split, [3, 1, 1], field_mhz=field,
                                    pairs=[(0, 1), (0, 2), (1, 2)])
    whole = simulate_with_derivatives([1.2, 1.5], [[0, j_vic], [j_vic, 0]], [3, 2], field_mhz=field,
                                      pairs=[(0, 1)])
    for line in range(whole.lines.ppm.size):
        mine = np.flatnonzero(np.abs(res.lines.ppm - whole.lines.ppm[line]) * field < 1e-6)
        assert res.lines.intensity[mine].sum() == pytest.approx(whole.lines.intensity[line], rel=1e-9)
        np.testing.assert_allclose(res.dfreq_dj_hz[mine][:, 0], res.dfreq_dj_hz[mine][:, 1], atol=1e-9)
        np.testing.assert_allclose(res.dfreq_dj_hz[mine][:, :2].sum(axis=1), whole.dfreq_dj_hz[line, 0],
                                   atol=1e-9)
        np.testing.assert_allclose(res.dfreq_dj_hz[mine][:, 2], 0.0, atol=1e-9)
        np.testing.assert_allclose(res.dfreq_dshift_hz[mine][:, 1:].sum(axis=1),
                                   whole.dfreq_dshift_hz[line, 1], atol=1e-9)
    assert res.lines.ppm.size >= whole.lines.ppm.size
    # and the group change (both couplings at once) against differences
    fd = _central([1.2, 1.5, 1.5], split, [3, 1, 1], field, pairs=[(0, 1), (0, 2)])
    np.testing.assert_allclose(res.dfreq_dj_hz[:, :2].sum(axis=1), fd, atol=1e-6)


# ---------------------------------------------------------------------------
# identities on whole molecules (every cluster treatment)


def _hexanol(*, merge_diastereotopic: bool = False):
    from predictors.prediction import predict_spin_system
    from predictors.shifts import DIASTEREOTOPIC_FLAG

    system = predict_spin_system("CCCCC(C)O", n_conformers=4)
    shifts = np.asarray(system.shifts_ppm, dtype=float)
    if merge_diastereotopic:
        # the two sites of each diastereotopic CH2 back at their common mean shift
        from rdkit import Chem

        mol_h = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
        carbon_sites = {}
        for k, site in enumerate(system.sites):
            if DIASTEREOTOPIC_FLAG in site.flags:
                carbon = mol_h.GetAtomWithIdx(site.atoms[0]).GetNeighbors()[0].GetIdx()
                carbon_sites.setdefault(carbon, []).append(k)
        for ks in carbon_sites.values():
            shifts[ks] = shifts[ks].mean()
    return shifts, np.asarray(system.j_hz), np.asarray(system.n_protons)


@pytest.mark.parametrize("field", [80.0, 400.0])
def test_derivative_identities_hold_on_a_whole_molecule(field):
    # 2-hexanol: one large cluster, methyl groups cut off and applied as splittings or per state
    shifts, j, n = _hexanol()
    pairs = _pairs_of(j)
    res = simulate_with_derivatives(shifts, j, n, field_mhz=field, pairs=pairs)
    plain = simulate_arrays(shifts, j, n, field_mhz=field)
    np.testing.assert_array_equal(res.lines.ppm, plain.ppm)
    np.testing.assert_array_equal(res.lines.intensity, plain.intensity)
    np.testing.assert_array_equal(res.lines.site_index, plain.site_index)
    assert res.dfreq_dj_hz.shape == (plain.ppm.size, len(pairs))
    assert res.dfreq_dshift_hz.shape == (plain.ppm.size, len(n))
    # a common shift of every site moves every line as much
    np.testing.assert_allclose(res.dfreq_dshift_hz.sum(axis=1), 1.0, atol=1e-9)
    # frequencies are homogeneous of degree 1 in (shifts, couplings): Euler's theorem
    nu = shifts * field
    j_values = np.array([j[a, b] for a, b in pairs])
    euler = res.dfreq_dshift_hz @ nu + res.dfreq_dj_hz @ j_values
    np.testing.assert_allclose(euler, plain.ppm * field, atol=1e-6 * np.max(np.abs(nu)))


def _match(base_hz, base_int, other):
    """Index of the line of ``other`` nearest to each base line, -1 unless it is the only one
    within 2e-3 Hz and of nearly the same intensity (lines of equivalent sites may change site)."""
    hz = other.ppm * other.field_mhz
    order = np.argsort(hz)
    pos = np.clip(np.searchsorted(hz[order], base_hz), 1, order.size - 1)
    left, right = order[pos - 1], order[pos]
    near = np.where(np.abs(hz[left] - base_hz) < np.abs(hz[right] - base_hz), left, right)
    far = np.where(near == left, right, left)
    ok = ((np.abs(hz[near] - base_hz) < 1e-3) & (np.abs(hz[far] - base_hz) > 2e-3)
          & (np.abs(other.intensity[near] - base_int) < 1e-3 * base_int))
    return np.where(ok, near, -1)


@pytest.mark.slow
def test_split_lines_of_a_whole_molecule_follow_finite_differences():
    # 2-hexanol at 80 MHz: the large cluster is split first order by the cut methyl. Lines are
    # matched by position; the derivatives leave out the change of the split with the
    # cluster's own couplings (first order in the cut), so they agree to ~1e-3 Hz/Hz on average.
    # The diastereotopic CH2 protons are put back at one shift: 0.1 ppm (8 Hz) apart with 2J -13 Hz
    # they are so strongly coupled that the neglected term reaches 0.14 Hz/Hz on single lines
    shifts, j, n = _hexanol(merge_diastereotopic=True)
    field = 80.0
    pairs = [p for p in _pairs_of(j) if p in {(0, 1), (5, 7), (7, 8)}]
    res = simulate_with_derivatives(shifts, j, n, field_mhz=field, pairs=pairs)
    base = res.lines
    hz = base.ppm * field
    for c, pair in enumerate(pairs):
        up = simulate_arrays(shifts, j + _bump(j, pair, _STEP_HZ), n, field_mhz=field)
        down = simulate_arrays(shifts, j + _bump(j, pair, -_STEP_HZ), n, field_mhz=field)
        iu, idn = _match(hz, base.intensity, up), _match(hz, base.intensity, down)
        ok = (iu >= 0) & (idn >= 0)
        assert base.intensity[ok].sum() > 0.6 * base.intensity.sum()
        fd = (up.ppm[iu[ok]] - down.ppm[idn[ok]]) * field / (2 * _STEP_HZ)
        err = np.abs(fd - res.dfreq_dj_hz[ok, c])
        assert np.average(err, weights=base.intensity[ok]) < 1e-3, pair
        assert err.max() < 0.1, pair


def _bump(j, pair, step):
    out = np.zeros_like(j)
    out[pair] = out[pair[::-1]] = step
    return out


# ---------------------------------------------------------------------------
# interface


def test_result_unpacks_and_is_read_only():
    res = simulate_with_derivatives([1.0, 1.2], [[0, 7], [7, 0]], [1, 1], field_mhz=60, pairs=[(1, 0)])
    assert isinstance(res, LineDerivatives)
    lines, dj, dshift = res
    assert lines is res.lines and dj.shape == (4, 1) and dshift.shape == (4, 2)
    with pytest.raises(ValueError):
        dj[0, 0] = 1.0
    np.testing.assert_array_equal(res.pairs, [[1, 0]])


def test_memo_gives_the_same_result():
    shifts, j, n = [1.0, 1.05, 3.0], [[0, 7, 1], [7, 0, 0.5], [1, 0.5, 0]], [1, 2, 3]
    memo = {}
    first = simulate_with_derivatives(shifts, j, n, field_mhz=60, pairs=[(0, 1), (0, 2)], memo=memo)
    again = simulate_with_derivatives(shifts, j, n, field_mhz=60, pairs=[(0, 1), (0, 2)], memo=memo)
    fresh = simulate_with_derivatives(shifts, j, n, field_mhz=60, pairs=[(0, 1), (0, 2)])
    assert memo
    for res in (again, fresh):
        np.testing.assert_array_equal(res.lines.ppm, first.lines.ppm)
        np.testing.assert_array_equal(res.dfreq_dj_hz, first.dfreq_dj_hz)
        np.testing.assert_array_equal(res.dfreq_dshift_hz, first.dfreq_dshift_hz)


@pytest.mark.parametrize(("pairs", "fragment"), [
    ([(0, 0)], "two different sites"),
    ([(0, 2)], "0 to 1"),
    ([(0, 1.5)], "whole numbers"),
    ([(0, 1, 2)], "pairs"),
    ("ab", "pairs"),
])
def test_bad_pairs_raise_input_error(pairs, fragment):
    with pytest.raises(InputError, match=fragment):
        simulate_with_derivatives([1.0, 1.2], [[0, 7], [7, 0]], [1, 1], field_mhz=60, pairs=pairs)


def test_bad_memo_raises_input_error():
    with pytest.raises(InputError, match="memo"):
        simulate_with_derivatives([1.0, 1.2], [[0, 7], [7, 0]], [1, 1], field_mhz=60, pairs=[], memo=[])
