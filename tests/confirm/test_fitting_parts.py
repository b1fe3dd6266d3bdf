"""The mixture fit's pieces against slow, obviously correct references.

Each fast piece of :mod:`confirm.fitting` is checked against a plain computation of the same thing:
bin means drawn in closed form against the mean of many point samples, the bounded solver against
SciPy's ``least_squares``, the non-negative solve against ``scipy.optimize.nnls`` on the full
matrix, the evidence reading on hand-made columns.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from confirm.fitting import lineshape
from confirm.fitting.evidence import PLACEMENT_P, SiteReading, decide_presence, placement_p, point_variance
from confirm.fitting.grid import Grid, _hilbert_transform
from confirm.fitting.linear import Projected, solve_amounts
from confirm.fitting.lineshape import draw_lines
from confirm.fitting.search import stable_argmax
from confirm.fitting.solver import least_squares_box, power_of_two_below


def _grid(x, y=None, factor=1, step=None):
    step = float(x[1] - x[0]) if step is None else step
    return Grid(x=x, y=np.zeros(x.size) if y is None else y, weight=np.ones(x.size),
                region=np.zeros(x.size, int), n_regions=1, dx_ppm=step * factor,
                curvature_ppm2=step**2 * (factor**2 - 1) / 24.0)


@pytest.mark.parametrize(("factor", "fwhm_hz"), [(1, 1.0), (2, 1.0), (3, 2.4), (4, 2.4)])
@pytest.mark.parametrize("gauss", [0.0, 0.4])
def test_drawn_bin_means_equal_the_mean_of_the_samples(factor, fwhm_hz, gauss):
    """A bin holds the mean of `factor` samples: drawing the centre value plus the curvature term
    must equal averaging the samples themselves (pseudo-Voigt at 400 MHz, 0.1 Hz samples, at least
    the fit's 5 bins per line width)."""
    field, fwhm = 400.0, fwhm_hz / 400.0
    raw = np.arange(6000) * (0.1 / field) + 3.0
    lines = np.array([3.4, 3.4021, 3.7])
    inten = np.array([1.0, 0.5, 2.0])

    def shape(x):
        g = fwhm / 2
        sigma = fwhm / (2 * np.sqrt(2 * np.log(2)))
        lor = g / np.pi / ((x[:, None] - lines) ** 2 + g * g)
        gau = np.exp(-((x[:, None] - lines) ** 2) / (2 * sigma**2)) / (sigma * np.sqrt(2 * np.pi))
        return ((1 - gauss) * lor + gauss * gau) @ inten

    reference = shape(raw).reshape(-1, factor).mean(1)
    centres = raw.reshape(-1, factor).mean(1)
    drawn = draw_lines(_grid(centres, factor=factor, step=0.1 / field), lines, inten, np.zeros(3, int), 1,
                       fwhm, gauss=gauss).values[0]
    # +-40 half-widths are drawn: compare where the truncated tails do not matter
    near = np.abs(centres[:, None] - lines).min(1) < 15 * fwhm
    assert np.max(np.abs(drawn - reference)[near]) < 3e-4 * reference.max()


@pytest.mark.parametrize("gauss", [0.0, 0.5])
def test_near_coincident_lines_drawn_as_one_keep_their_sum(gauss):
    """Lines closer than a few % of their width are drawn as one line with their spread as a
    second-derivative term: the drawn sum must equal the analytic sum of the separate lines (and a
    cluster with lines of both signs, or of two groups, is not merged across them)."""
    field, fwhm = 400.0, 1.0 / 400.0
    x = np.arange(-0.05, 0.05, 0.1 / field) + 2.0
    rng = np.random.default_rng(5)
    lines = 2.0 + np.concatenate([rng.uniform(0, 0.02 * fwhm, 6), 0.004 + rng.uniform(0, 0.03 * fwhm, 5)])
    inten = rng.uniform(0.2, 1.0, lines.size)
    inten[-1] = -0.1
    group = np.r_[np.zeros(6, int), np.ones(5, int)]
    g, sigma = fwhm / 2, fwhm / (2 * np.sqrt(2 * np.log(2)))
    lor = g / np.pi / ((x[:, None] - lines) ** 2 + g * g)
    gau = np.exp(-((x[:, None] - lines) ** 2) / (2 * sigma**2)) / (sigma * np.sqrt(2 * np.pi))
    shapes = ((1 - gauss) * lor + gauss * gau) * inten
    reference = np.array([shapes[:, group == k].sum(1) for k in (0, 1)])
    drawn = draw_lines(_grid(x), lines, inten, group, 2, fwhm, gauss=gauss).values
    near = np.abs(x - 2.002) < 10 * fwhm  # away from the truncated tails
    for k in (0, 1):
        assert np.max(np.abs(drawn[k] - reference[k])[near]) < 2e-5 * np.abs(reference[k]).max()


def test_position_and_width_derivatives_match_finite_differences():
    x = np.linspace(3.0, 3.2, 801)
    grid = _grid(x)
    ppm, inten, fwhm = np.array([3.10011]), np.array([2.0]), 0.003  # off a grid point: the window stays
    d = draw_lines(grid, ppm, inten, np.zeros(1, int), 1, fwhm, gauss=0.3, derivs=True,
                   width_group=np.zeros(1, int), n_width_groups=1, weight=np.ones(1))
    h = 1e-7
    up = draw_lines(grid, ppm + h, inten, np.zeros(1, int), 1, fwhm, gauss=0.3).values[0]
    down = draw_lines(grid, ppm - h, inten, np.zeros(1, int), 1, fwhm, gauss=0.3).values[0]
    # the derivatives are drawn over +-10 half-widths (they only steer the refinement): compare there,
    # and they are zero beyond
    inside = np.abs(x - ppm[0]) < 4.5 * fwhm
    outside = np.abs(x - ppm[0]) > 6 * fwhm
    assert np.allclose(d.dpos[0][inside], ((up - down) / (2 * h))[inside], atol=1e-3 * np.abs(d.dpos).max())
    assert not np.any(d.dpos[0][outside]) and not np.any(d.dwidth[0][outside])
    wide = draw_lines(grid, ppm, inten, np.zeros(1, int), 1, fwhm + h, gauss=0.3).values[0]
    narrow = draw_lines(grid, ppm, inten, np.zeros(1, int), 1, fwhm - h, gauss=0.3).values[0]
    assert np.allclose(d.dwidth[0][inside], ((wide - narrow) / (2 * h))[inside],
                       atol=1e-3 * np.abs(d.dwidth).max())
    more = draw_lines(grid, ppm, inten, np.zeros(1, int), 1, fwhm, gauss=0.3 + 1e-6).values[0]
    less = draw_lines(grid, ppm, inten, np.zeros(1, int), 1, fwhm, gauss=0.3 - 1e-6).values[0]
    assert np.allclose(d.dgauss[inside], ((more - less) / 2e-6)[inside], atol=1e-4 * np.abs(d.dgauss).max())


@pytest.mark.parametrize("gauss", [0.0, 0.3])
def test_masks_leave_every_drawn_value_as_it_was(gauss):
    """Lines of a molecule with no amount are drawn without derivatives (``deriv_mask``) or not at all
    (``value_mask``, a residual): every value and derivative still drawn must be exactly what the
    unmasked drawing gives, whatever widths the left-out lines had."""
    x = np.linspace(2.0, 3.0, 3001)
    grid = _grid(x)
    rng = np.random.default_rng(11)
    n = 400
    ppm = rng.uniform(2.1, 2.9, n)
    inten = rng.uniform(0.1, 1.0, n)
    group = rng.integers(0, 6, n)
    width_group = group % 3
    fwhm = np.array([0.002, 0.0045, 0.011])[width_group]  # three width classes
    reach = np.where(rng.random(n) < 0.3, 10, 40)
    weight = np.array([1.0, 0.0, 0.4, 0.0, 2.0, 0.7])[group]
    live = weight != 0
    moves = rng.normal(size=(2, n)) * 1e-4
    kwargs = {"gauss": gauss, "derivs": True, "width_group": width_group, "n_width_groups": 3,
              "weight": weight, "reach": reach, "pos_weights": moves}
    full = draw_lines(grid, ppm, inten, group, 6, fwhm, **kwargs)
    masked = draw_lines(grid, ppm, inten, group, 6, fwhm, deriv_mask=live, **kwargs)
    assert np.array_equal(full.values, masked.values)
    rows = np.unique(group[live])
    assert np.array_equal(full.dpos[rows], masked.dpos[rows])
    assert not masked.dpos[np.unique(group[~live])].any()
    # width, shape and coupling derivatives of the left-out lines carry their weight 0
    assert np.allclose(full.dwidth, masked.dwidth, rtol=0, atol=1e-12 * np.abs(full.dwidth).max())
    assert np.allclose(full.dgauss, masked.dgauss, rtol=0, atol=1e-12 * np.abs(full.dgauss).max())
    values_only = draw_lines(grid, ppm, inten, group, 6, fwhm, gauss=gauss, reach=reach,
                             value_mask=live).values
    assert np.array_equal(values_only[rows], full.values[rows])
    assert not values_only[np.unique(group[~live])].any()


def _plain_line_table(x, centre, ppm, inten, fwhm, gauss, reach, curvature, wt, widest):
    """The line table's formulas written plainly (each a new array), as the reference."""
    step = float(x[1] - x[0])
    idx = centre[:, None] + np.arange(-reach, reach + 1)[None, :]
    u = x[idx] - ppm[:, None]
    amp, gamma = inten[:, None], fwhm[:, None] / 2
    u2 = u * u
    den = u2 + gamma * gamma
    lor = gamma / np.pi / den
    val = (1 - gauss) * (lor + curvature * gamma / np.pi * (6 * u2 - 2 * gamma * gamma) / (den * den * den))
    sig = fwhm[:, None] * lineshape._SIGMA_PER_FWHM
    core_half = int(np.ceil(5 * (widest * lineshape._SIGMA_PER_FWHM) / step))
    core = slice(max(0, reach - core_half), reach + core_half + 1)
    uc, u2c = u[:, core], u2[:, core]
    gau = np.exp(-u2c / (2 * sig * sig)) / (sig * np.sqrt(2 * np.pi))
    if gauss > 0:
        val[:, core] += gauss * (gau + curvature * gau * (u2c - sig * sig) / sig**4)
    half = int(np.ceil(lineshape._NEAR_HALF_WIDTHS * (widest / 2) / step)) + 1
    dcore = slice(max(0, reach - half), reach + half + 1)
    u, u2, den, lor = u[:, dcore], u2[:, dcore], den[:, dcore], lor[:, dcore]
    dpos = (1 - gauss) * 2 * gamma / np.pi * u / (den * den)
    dwidth = (1 - gauss) * 0.5 * (u2 - gamma * gamma) / np.pi / (den * den)
    dgauss = -lor
    g0, g1 = max(core.start, dcore.start), min(core.stop, dcore.stop)
    if g1 > g0:
        in_d, in_c = slice(g0 - dcore.start, g1 - dcore.start), slice(g0 - core.start, g1 - core.start)
        gd, ucd, u2cd = gau[:, in_c], uc[:, in_c], u2c[:, in_c]
        dgauss[:, in_d] += gd
        if gauss > 0:
            dpos[:, in_d] += gauss * gd * ucd / (sig * sig)
            dwidth[:, in_d] += gauss * gd * (u2cd / sig**3 - 1 / sig) * lineshape._SIGMA_PER_FWHM
    w = amp * wt[:, None]
    return {"idx": idx, "didx": idx[:, dcore], "val": amp * val, "dpos": amp * dpos, "dwidth": w * dwidth,
            "dgauss": w * dgauss}


@pytest.mark.parametrize("gauss", [0.0, 0.35])
def test_the_line_table_is_its_formulas_bit_for_bit(gauss):
    """The table is computed in place for speed; every value must be the plain formulas' own (a
    change of 1e-16 in a drawn value can change a fit's path)."""
    rng = np.random.default_rng(7)
    x = np.arange(-2000, 6000) * 0.0005 + 1.0
    for reach in (8, 60, 170):
        n = 37
        centre = rng.integers(reach + 1, x.size - reach - 2, n)
        ppm = x[centre] + rng.normal(0.0, 3e-4, n)
        inten, fwhm = rng.uniform(-0.5, 2.5, n), rng.uniform(5e-4, 4.5e-3, n)
        curvature, wt = rng.uniform(0.0, 2e-7, (n, 1)), rng.uniform(0.0, 1.0, n)
        plain = _plain_line_table(x, centre, ppm, inten, fwhm, gauss, reach, curvature, wt, float(fwhm.max()))
        for derivs in (False, True):
            table = lineshape._line_table(x, centre, ppm, inten, fwhm, gauss, reach, curvature, derivs, wt,
                                          float(fwhm.max()))
            for key, value in table.items():
                assert np.array_equal(value, plain[key]), key


def test_translated_column_equals_interpolation_over_the_whole_grid():
    """A column is moved by interpolating only where its non-zero stretch lands; the result must be
    exactly the whole-grid interpolation (grids with a gap, moves of any size, columns at the edges)."""
    from confirm.fitting.search import _translate_column

    x = np.sort(np.concatenate([np.linspace(0.0, 1.0, 700), np.linspace(2.0, 3.0, 900)]))
    grid = _grid(x)
    rng = np.random.default_rng(2)
    for _ in range(300):
        col = np.zeros(x.size)
        a = int(rng.integers(0, x.size - 1))
        b = min(a + int(rng.integers(1, 200)), x.size)
        col[a:b] = rng.random(b - a) - 0.3
        delta = float(rng.normal(0.0, 0.3)) if rng.random() < 0.8 else float(x[5] - x[0])
        reference = np.interp(x - delta, x, col, left=0.0, right=0.0)
        assert np.array_equal(_translate_column(grid, col, delta), reference)
    assert not _translate_column(grid, np.zeros(x.size), 0.1).any()


def test_bounded_solver_agrees_with_scipy_least_squares():
    """A bounded exponential fit (one bound active at the optimum): same minimum as SciPy's
    trust-region reflective solver, the reference implementation."""
    from scipy.optimize import least_squares

    t = np.linspace(0, 4, 60)
    y = 2.0 * np.exp(-1.3 * t) + 0.5 + np.random.default_rng(3).normal(0, 0.01, t.size)

    def residual(p):
        return p[0] * np.exp(-p[1] * t) + p[2] - y

    def jacobian(p):
        e = np.exp(-p[1] * t)
        return np.column_stack([e, -p[0] * t * e, np.ones_like(t)])

    lo, hi = np.array([0.0, 0.0, 0.0]), np.array([10.0, 5.0, 0.45])
    ours = least_squares_box(residual, jacobian, np.array([1.0, 0.5, 0.1]), lo, hi)
    ref = least_squares(residual, np.array([1.0, 0.5, 0.1]), jac=jacobian, bounds=(lo, hi))
    assert ours.x == pytest.approx(ref.x, rel=1e-5, abs=1e-7)
    assert ours.x[2] == pytest.approx(0.45)  # the bound holds


def _two_lorentzians(noise_seed: int = 4):
    """Two overlapping Lorentzians (positions, width, heights free): a small multimodal-looking
    problem like a refinement round's."""
    x = np.linspace(-3.0, 3.0, 400)

    def lines(p):
        g = p[2] / 2
        return p[3] * g * g / ((x - p[0]) ** 2 + g * g) + p[4] * g * g / ((x - p[1]) ** 2 + g * g)

    truth = np.array([-0.31, 0.42, 0.9, 1.0, 0.35])
    y = lines(truth) + np.random.default_rng(noise_seed).normal(0, 0.01, x.size)

    def jacobian(p):  # central differences (the data drop out of the residual's derivative)
        h = 1e-7
        return np.column_stack([(lines(p + h * e) - lines(p - h * e)) / (2 * h) for e in np.eye(5)])

    return lines, y, jacobian


def test_solver_on_a_grid_is_the_same_for_data_changed_by_rounding():
    """With a grid, a 1e-12 relative change of the data (far below any rounding that matters, far
    above the last bit) leaves every iterate, and so the answer, bitwise the same; the answer still
    agrees with the solver off the grid to within a few grid steps."""
    lines, y, jacobian = _two_lorentzians()
    x0 = np.array([-0.6, 0.7, 0.6, 0.5, 0.5])
    lo, hi = np.array([-1.0, 0.0, 0.1, 0.0, 0.0]), np.array([0.0, 1.0, 3.0, 5.0, 5.0])
    quantum = power_of_two_below(np.full(5, 1e-6))
    u = np.random.default_rng(9).uniform(-1, 1, y.size)
    results = [least_squares_box(lambda p, d=d: lines(p) - d, jacobian, x0, lo, hi, quantum=quantum)
               for d in (y, y * (1 + 1e-12 * u))]
    assert np.array_equal(results[0].x, results[1].x)
    assert np.array_equal(results[0].x, np.round(results[0].x / quantum) * quantum)  # on the grid
    free = least_squares_box(lambda p: lines(p) - y, jacobian, x0, lo, hi)
    assert results[0].x == pytest.approx(free.x, abs=1e-4)
    # without the grid the same change moves the answer in its last bits (what the grid removes)
    off = [least_squares_box(lambda p, d=d: lines(p) - d, jacobian, x0, lo, hi).x
           for d in (y, y * (1 + 1e-12 * u))]
    assert not np.array_equal(off[0], off[1])


def test_grid_steps_are_exact_powers_of_two():
    values = np.array([1.0, 1.5, 0.75, 1e-4 / 400.13, 3e-300, 7.0e5])
    steps = power_of_two_below(values)
    mantissa, _ = np.frexp(steps)
    assert np.all(mantissa == 0.5)  # a power of two
    assert np.all((steps <= values) & (values < 2 * steps))
    x = np.random.default_rng(2).normal(0, 10, 1000)
    q = power_of_two_below(1e-4 / 400.13)
    on = np.round(x / q) * q
    assert np.array_equal(np.round(on / q) * q, on)  # rounding to the grid is exact, and idempotent


def test_nonnegative_amounts_agree_with_nnls_on_the_full_matrix():
    from scipy.optimize import nnls

    rng = np.random.default_rng(5)
    n = 300
    cols = np.abs(rng.normal(size=(4, n)))
    basis = np.column_stack([np.ones(n), np.linspace(-1, 1, n)])
    y = np.array([1.0, 0.0, 2.0, 0.5]) @ cols + 0.3 + 0.1 * np.linspace(-1, 1, n) + rng.normal(0, 0.05, n)
    y -= 3.0 * cols[1]  # the unconstrained amount of column 1 is negative
    weight = np.ones(n)
    amounts, base = solve_amounts(cols, basis, y, weight)
    # reference: NNLS with the baseline split into positive and negative parts
    full = np.column_stack([cols.T, basis, -basis])
    ref, _ = nnls(full, y)
    assert amounts == pytest.approx(ref[:4], abs=1e-8)
    assert base == pytest.approx(ref[4:6] - ref[6:], abs=1e-8)
    proj = Projected(_grid(np.arange(n, dtype=float), y), basis)
    p = proj.project(cols)
    cost = proj.cost(p)
    r = y - amounts @ cols - basis @ base
    assert cost == pytest.approx(float(r @ r), rel=1e-9)


def test_hilbert_transform_matches_scipy_signal():
    # scipy.signal.hilbert is the reference implementation of the analytic signal
    from scipy.signal import hilbert

    for n in (1000, 1001):
        y = np.random.default_rng(n).normal(size=n)
        assert np.allclose(_hilbert_transform(y), hilbert(y).imag, atol=1e-12)


def test_stable_argmax_breaks_near_ties_by_position():
    score = np.array([1.0, 3.0, 3.0 * (1 + 1e-12), 2.0])
    assert stable_argmax(score) == 1
    assert stable_argmax(np.array([-np.inf, -np.inf])) == 0
    assert stable_argmax(np.array([0.0, 5.0, 5.0 + 1e-3])) == 2


def _reading(amount, sd, envelope=np.inf, usable=True):
    return SiteReading(ppm=1.0, amount=amount, amount_sd=sd, envelope=envelope, shape=0.9, overlap=0.0,
                       misfit=1.0, usable=usable)


def test_presence_needs_every_multiplet():
    consistent = [_reading(0.10, 0.002, 0.12), _reading(0.11, 0.003, 0.13), _reading(0.095, 0.004, 0.11)]
    p = decide_presence(consistent, detection_sigma=3.0, diagnostic=[0])
    assert p.present and not p.missing
    # a decoy: two multiplets sit on borrowed lines, its own vinyl multiplet has no lines at all
    decoy = consistent[:2] + [_reading(0.002, 0.002, envelope=0.01)]
    p = decide_presence(decoy, detection_sigma=3.0, diagnostic=[2])
    assert not p.present and p.missing == (2,)
    assert p.upper <= 0.0101  # the missing multiplet caps the amount
    # nothing there: an upper bound from the combined noise
    absent = [_reading(0.0001, 0.002, 0.007), _reading(-0.001, 0.003, 0.009)]
    p = decide_presence(absent, detection_sigma=3.0, diagnostic=[0, 1])
    assert not p.present and 0 < p.upper <= 0.007


def test_a_multiplet_beside_its_signal_is_misplaced_not_missing():
    """The missing test asks whether the data hold the multiplet anywhere in its shift window: a
    doublet the fit left twelve line widths beside its lines is not missing; with no lines in the
    window it is."""
    from confirm.fitting.evidence import _read_one

    x = np.linspace(7.0, 7.4, 1601)
    grid = _grid(x)
    g = 0.0025 / 2

    def doublet(centre):
        return sum(g / np.pi / ((x - c) ** 2 + g * g) for c in (centre - 0.0075, centre + 0.0075))

    u = doublet(7.19)  # the fitted place
    noise = 0.5
    others = np.zeros(x.size)
    beside = 3.0 * doublet(7.19 + 12 * 0.0025) + np.random.default_rng(2).normal(0, noise, x.size)
    reach = 2
    moves = (-0.1, 0.1)  # the site's window around its fitted place (ppm)
    r = _read_one(grid, u, beside, others, reach, noise, 0.03, moves)
    assert r.envelope < 1.0 and r.envelope_window > 2.5
    nothing = np.random.default_rng(3).normal(0, noise, x.size)
    r = _read_one(grid, u, nothing, others, reach, noise, 0.03, moves)
    assert r.envelope_window < 0.2


def test_a_bound_is_read_where_the_multiplet_is_likely_not_where_the_fit_parked_it():
    """An absent isomer's singlet left on its partner's singlet 0.36 ppm (2.8 sd) from its own
    prediction: there the data hold the partner's line, and a bound read there says the isomer
    could be as large as the partner. Within its prediction +-2 sd the data hold nothing, and that
    is where the bound is read. A multiplet left within its likely range keeps the bound read
    at its place."""
    from confirm.fitting.evidence import _read_one

    x = np.linspace(6.0, 7.2, 4801)
    grid = _grid(x)
    g = 0.01 / 2

    def singlet(centre):
        return g / np.pi / ((x - centre) ** 2 + g * g)

    noise = 0.05
    partner = 2.0 * singlet(6.85)  # the other component's fitted line
    y = partner + np.random.default_rng(4).normal(0, noise, x.size)
    u = singlet(6.85)  # the absent isomer parked on it (predicted 6.49, sd 0.13)
    d = y - partner  # the data with the others' model taken away (its own amount ~0)
    likely = (6.49 - 0.26 - 6.85, 6.49 + 0.26 - 6.85)  # moves reaching its prediction +-2 sd
    at_place = _read_one(grid, u, d, partner, 2, noise, 0.03, (-0.39 - 0.36, 0.39 - 0.36))
    assert at_place.envelope_all > 1.5  # the partner's line bounds nothing
    likely_read = _read_one(grid, u, d, partner, 2, noise, 0.03, (-0.39 - 0.36, 0.39 - 0.36),
                            likely=likely)
    assert likely_read.envelope_all < 0.1
    # left within its likely range (here on the partner, predicted 6.80): the bound at its place
    near = _read_one(grid, u, d, partner, 2, noise, 0.03, (-0.44, 0.34), likely=(-0.31, 0.21))
    assert near.envelope_all == pytest.approx(at_place.envelope_all)


def test_seen_needs_five_sd_after_a_searched_position():
    """A multiplet placed by searching its window is 'seen' only at 5 sd (look-elsewhere effect)."""
    weak = [_reading(0.010, 0.0025, 0.02), _reading(0.010, 0.0025, 0.02)]  # 4 sd each
    p = decide_presence(weak, detection_sigma=3.0, diagnostic=[0, 1])
    assert not p.present and p.amount / p.amount_sd > 3.0


def test_point_variance_adds_model_error_of_the_signal():
    signal = np.array([0.0, 10.0, 100.0])
    var = point_variance(0.5, signal, 0.03)
    assert var == pytest.approx([0.25, 0.25 + 0.09, 0.25 + 9.0])


def test_a_line_of_an_undetected_candidate_is_not_called_observed():
    from confirm.fitting.assemble import _evidence_text
    from predictors.core import SiteEvidence

    e = SiteEvidence(site=1, label="CHBr", n_h=1, ppm=4.21, predicted_ppm=4.25, predicted_sd_ppm=0.1,
                     amount=0.02, amount_sd=0.004, seen=True, missing=False, shape_match=0.9, overlap=0.1)
    assert " observed at 4.210 ppm" in _evidence_text(e, True)
    text = _evidence_text(e, False)
    assert "observed" not in text and "candidate not detected" in text


def test_a_diagnostic_multiplet_of_the_wrong_shape_is_no_evidence():
    # at high SNR a small line passes 5 sd wherever a vinyl multiplet is put; only one shaped like
    # the predicted multiplet (shape match >= 0.8, the test that vetoes misshapen ones) shows the alkene
    def reading(shape):
        return SiteReading(ppm=6.1, amount=0.004, amount_sd=0.0002, envelope=0.005, shape=shape, overlap=0.3,
                           misfit=1.0, usable=True)

    others = [SiteReading(ppm=1.9, amount=0.004, amount_sd=0.002, envelope=0.05, shape=0.9, overlap=0.6,
                          misfit=1.0, usable=True)]
    assert decide_presence([reading(0.95)] + others, detection_sigma=3.0, diagnostic=[0]).present
    assert not decide_presence([reading(0.59)] + others, detection_sigma=3.0, diagnostic=[0]).present


def test_a_diagnostic_multiplet_at_the_edge_of_its_window_is_missing():
    # (Z)-anethole offered for an allylarene (the real estragole FID): its second vinyl H reached
    # for a 13C satellite at the very edge of its window, 3 sd from the prediction; the molecule's
    # identifying multiplet is then not where it can be
    readings = [_reading(0.10, 0.002, 0.12), _reading(0.11, 0.003, 0.13), _reading(0.095, 0.004, 0.11)]
    assert decide_presence(readings, detection_sigma=3.0, diagnostic=[0]).present
    p = decide_presence(readings, detection_sigma=3.0, diagnostic=[0], at_edge=(0,))
    assert not p.present and p.missing == (0,) and p.outside == (0,)
    # a non-diagnostic site at its edge (a CH2 of a long chain) does not veto the molecule
    p = decide_presence(readings, detection_sigma=3.0, diagnostic=[0], at_edge=(2,))
    assert p.present and p.outside == ()


def test_a_multiplet_seen_too_weak_for_the_molecule_is_missing():
    # a homologue: its CH2 envelope stands where the data's CH2 lines are, but carries a third of the
    # molecule's amount (the data hold two CH2 fewer than the candidate has)
    chain = [_reading(1.10, 0.02), _reading(1.12, 0.02), _reading(1.02, 0.01), _reading(0.32, 0.06)]
    p = decide_presence(chain, detection_sigma=3.0, diagnostic=[0, 1])
    assert not p.present and p.missing == (3,)
    # within noise of half the amount it is no proof of absence
    loose = chain[:3] + [_reading(0.40, 0.06)]
    assert decide_presence(loose, detection_sigma=3.0, diagnostic=[0, 1]).present


def test_an_alkene_whose_vinyl_lines_are_far_too_strong_is_swamped_not_present():
    # the real menthol spectrum (600 MHz) offered butyl acrylate, under one BLAS kernel: the sample
    # holds an acrylate-like impurity whose vinyl lines the decoy's vinyl multiplets sit on (reading
    # 74-262 times the decoy's amount), while the decoy's amount comes from a trace on its OCH2,
    # CH2 and CH3 places; an alkene is known by its vinyl H, and these lines are not its own
    def site(amount, sd, overlap):
        return SiteReading(ppm=1.0, amount=amount, amount_sd=sd, envelope=np.inf, shape=0.9,
                           overlap=overlap, misfit=1.0, usable=True)

    vinyl = [site(261.7, 15.0, 0.51), site(74.3, 4.2, 0.51), site(131.4, 7.5, 0.51)]
    chain = [site(1.317, 0.039, 0.0), site(0.949, 0.023, 0.0), site(1.173, 0.137, 0.0)]
    readings = vinyl + chain
    assert decide_presence(readings, detection_sigma=3.0, diagnostic=[3]).present  # without the test
    p = decide_presence(readings, detection_sigma=3.0, diagnostic=[3], vinyl=[0, 1, 2])
    assert not p.present and p.swamped == (0, 1, 2) and not p.missing
    # a true component's vinyl H under a larger neighbour's misfit reads a few times its amount
    # (at most 4.7 times on the benchmark corpus' tuning half): still present
    near = [site(4.7, 0.3, 0.51)] + chain
    p = decide_presence(near, detection_sigma=3.0, diagnostic=[3], vinyl=[0])
    assert p.present and not p.swamped
    # far too strong, but not beyond its own noise (3 sd): no proof
    loose = [site(40.0, 11.0, 0.51)] + chain
    assert decide_presence(loose, detection_sigma=3.0, diagnostic=[3], vinyl=[0]).present


def test_a_reading_with_no_detected_total_is_not_expressed():
    # with no component detected, a multiplet's reading is no share of anything: not "0.0 +- 0.0 %"
    from confirm.fitting.assemble import _evidence_text
    from predictors.core import SiteEvidence

    e = SiteEvidence(site=0, label="CH2", n_h=2, ppm=4.26, predicted_ppm=4.12, predicted_sd_ppm=0.19,
                     amount=float("nan"), amount_sd=float("nan"), seen=True, missing=False, shape_match=0.93,
                     overlap=0.0)
    text = _evidence_text(e, False)
    assert "not expressed" in text and "+-" not in text.split("; amount from this multiplet")[1]
    assert e.to_json()["amount"] is None and e.to_json()["amount_sd"] is None


def test_a_swamped_vinyl_multiplet_is_reported_as_such():
    from confirm.fitting.assemble import _evidence_text
    from predictors.core import SiteEvidence

    e = SiteEvidence(site=2, label="vinyl", n_h=1, ppm=6.38, predicted_ppm=6.43, predicted_sd_ppm=0.13,
                     amount=0.0, amount_sd=0.0, seen=False, missing=False, shape_match=0.99, overlap=0.16,
                     swamped=True)
    assert " swamped " in _evidence_text(e, False)
    assert e.to_json()["swamped"] is True


def test_a_multiplet_under_others_lines_that_reads_below_zero_is_missing():
    # the real ipsdienol FID against its (Z)-isomer under one BLAS kernel (issue 13): the decoy is
    # carried by an impurity doublet seen on its own, its vinyl H read under the true compound's
    # lines; its CH3 singlets sit on the true compound's, and with those taken away one reads below
    # zero by more than 3 sd: the data there hold less than the others' lines alone
    def under(amount, sd):
        return SiteReading(ppm=1.7, amount=amount, amount_sd=sd, envelope=1.0, shape=-0.8, overlap=0.87,
                           misfit=1.0, usable=True, envelope_window=1.0)

    doublet = SiteReading(ppm=1.25, amount=0.102, amount_sd=0.008, envelope=0.1, shape=0.9, overlap=0.0,
                          misfit=1.0, usable=True)
    vinyl = SiteReading(ppm=5.08, amount=0.39, amount_sd=0.045, envelope=1.0, shape=0.95, overlap=0.78,
                        misfit=1.0, usable=True)
    p = decide_presence([doublet, vinyl, under(-0.114, 0.040), under(-0.116, 0.033)], detection_sigma=3.0,
                        diagnostic=[1])
    assert not p.present and p.missing == (3,)
    # below zero within 3 sd (a true 5 % component's aryl H under a 60 % one's, read -1.9 +- 1.0 %
    # in a tune mixture), or below half the amount but not below zero: the others' split of the
    # signal is uncertain there, no proof of absence
    for amount, sd in ((-0.019, 0.010), (0.025, 0.006)):
        p = decide_presence([doublet, vinyl, under(amount, sd), under(0.10, 0.03)], detection_sigma=3.0,
                            diagnostic=[1])
        assert p.present and p.missing == (), (amount, sd)


def test_a_cluster_read_one_by_one_below_zero_is_not_missing_when_its_group_is_there():
    # a 90 MHz tune-style mixture (73 % 2-bromohexane, SNR 4000): the CH2 protons of its chain form
    # one strongly coupled cluster; read one by one under the others' lines they trade amount
    # between them, down to -1.6 +- 0.4 times the molecule's amount, while its multiplets in that
    # window, taken together, match the data left for them (0.96) and hold all its signal there
    def member(amount, sd, shape_group, amount_group):
        return SiteReading(ppm=1.4, amount=amount, amount_sd=sd, envelope=200.0, shape=-0.3, overlap=0.84,
                           misfit=1.0, usable=True, overlap_all=0.88, shape_group=shape_group,
                           amount_group=amount_group)

    ch3 = SiteReading(ppm=0.87, amount=0.785, amount_sd=0.033, envelope=7.8, shape=0.95, overlap=0.37,
                      misfit=1.0, usable=True)
    chbr = SiteReading(ppm=4.14, amount=0.994, amount_sd=0.018, envelope=1.4, shape=0.98, overlap=0.17,
                       misfit=1.0, usable=True)
    p = decide_presence([ch3, chbr, member(-1.628, 0.424, 0.96, 1.04), member(-1.353, 0.399, 0.96, 0.98)],
                        detection_sigma=3.0, diagnostic=[1])
    assert p.present and p.missing == ()
    # the group must both match in shape and hold at least half the molecule's signal: a decoy
    # whose lines sit on the true compound's finds the data left for it near zero
    for shape_group, amount_group in ((0.96, 0.2), (0.5, 1.0), (0.96, np.nan)):
        p = decide_presence([ch3, chbr, member(-1.628, 0.424, shape_group, amount_group)],
                            detection_sigma=3.0, diagnostic=[1])
        assert not p.present and p.missing == (2,), (shape_group, amount_group)


def test_a_clear_multiplet_split_at_the_bound_of_its_coupling_is_missing():
    # the real ipsdienol FID against its (E)-isomer (issue 13): the decoy's CH3 doublet, 6.1 Hz
    # predicted, sat on an impurity doublet with its coupling pulled to the 7.7 Hz bound, and alone
    # carried the decoy (10.3 +- 0.8 %); its vinyl H read 24.9 +- 3.6 % under the true compound's
    doublet = SiteReading(ppm=1.26, amount=0.103, amount_sd=0.008, envelope=0.12, shape=0.88, overlap=0.0,
                          misfit=1.0, usable=True)
    vinyl = SiteReading(ppm=5.06, amount=0.249, amount_sd=0.036, envelope=1.0, shape=0.80, overlap=0.80,
                        misfit=1.0, usable=True)
    ch = SiteReading(ppm=4.54, amount=0.017, amount_sd=0.011, envelope=1.0, shape=0.2, overlap=0.88,
                     misfit=1.0, usable=True)
    readings = [doublet, vinyl, ch]
    assert decide_presence(readings, detection_sigma=3.0, diagnostic=[1]).present
    p = decide_presence(readings, detection_sigma=3.0, diagnostic=[1], stretched=[0])
    assert not p.present and p.missing == (0,) and p.outside == (0,)
    # a stretched multiplet under others' lines is no clear evidence either way: nothing changes
    p = decide_presence(readings, detection_sigma=3.0, diagnostic=[1], stretched=[2])
    assert p.present and p.missing == ()


def test_placement_p_is_the_chi_square_tail_of_the_shift_errors():
    # two sites 1 sd off: chi-square 2 on 2 degrees of freedom, tail exp(-1) (closed form for 2 dof)
    p, value, n = placement_p([1.1, 2.1, 3.0], [1.0, 2.0, 3.0], [0.1, 0.1, np.inf])
    assert n == 2 and value == pytest.approx(2.0) and p == pytest.approx(np.exp(-1.0))
    assert placement_p([1.0], [1.0], [0.0]) == (1.0, 0.0, 0)


def test_a_candidate_fitted_jointly_far_from_its_predictions_is_not_present():
    # a 60 MHz tune-style mixture (99 % diethyl fumarate, 1 % maleate, 2 % diethyl ether): the absent
    # diethyl malate, offered as a candidate, was fitted with its ethyl groups on the ether's quartet
    # and triplet and its CH2 protons on 13C satellites; its two CH2 multiplets read 19 sd clear
    predicted = np.array([1.26, 4.14, 4.09, 2.82, 2.62, 4.61, 4.15, 4.10, 1.26])
    sd = np.array([0.129, 0.19, 0.19, 0.19, 0.19, 0.174, 0.19, 0.19, 0.129])
    fitted = np.array([0.882, 3.75, 3.575, 3.017, 2.50, 4.17, 3.616, 4.184, 1.168])
    p, value, n = placement_p(fitted, predicted, sd)
    assert n == 9 and value == pytest.approx(36.4, abs=0.3) and p < PLACEMENT_P

    def reading(amount, sd_, sigma_overlap):
        return SiteReading(ppm=3.0, amount=amount, amount_sd=sd_, envelope=1.0, shape=0.85,
                           overlap=sigma_overlap, misfit=1.0, usable=True)

    readings = [reading(0.091, 0.012, 0.63), reading(0.246, 0.013, 0.19), reading(0.176, 0.009, 0.40)]
    assert decide_presence(readings, detection_sigma=3.0, diagnostic=[1, 2]).present
    p_dec = decide_presence(readings, detection_sigma=3.0, diagnostic=[1, 2], place_p=p)
    assert not p_dec.present and p_dec.displaced and p_dec.placement_p == p
    # a true compound's shifts, each within its calibrated scatter (1-2 sd), stay present
    near = predicted + sd * np.array([1.5, -1.0, 1.2, -0.5, 2.0, 0.3, -1.8, 0.9, 0.0])
    p_near = placement_p(near, predicted, sd)[0]
    assert p_near > PLACEMENT_P
    assert decide_presence(readings, detection_sigma=3.0, diagnostic=[1, 2], place_p=p_near).present


def test_main_coupling_at_bound_looks_at_each_methyls_largest_resolved_coupling():
    from types import SimpleNamespace

    from confirm.fitting.assemble import _main_coupling_at_bound

    j0 = np.zeros((3, 3))
    j0[0, 1] = j0[1, 0] = 6.1  # CH3-CH 3J
    j0[1, 2] = j0[2, 1] = 15.5  # trans vinyl 3J
    j0[0, 2] = j0[2, 0] = 0.9  # allylic 4J: below 3 Hz, may go to zero
    model = SimpleNamespace(j_pairs=((0, 1), (1, 2), (0, 2)), j0=j0, j_lo=np.array([4.5, 13.5, 0.0]),
                            j_hi=np.array([7.7, 17.5, 2.1]), labels=("CH3", "vinyl", "vinyl"))
    assert _main_coupling_at_bound(model, np.array([6.3, 15.0, 0.0])) == ()
    # the CH3's 3J at its upper bound: the CH3 (largest coupling 6.1) is stretched, the CH is not
    # (its largest is the 15.5 Hz one, inside its range)
    assert _main_coupling_at_bound(model, np.array([7.7, 15.0, 0.9])) == (0,)
    # only a methyl's: the vinyl 3J at a bound is the geometry rule's (assemble._coupling_at_edge)
    assert _main_coupling_at_bound(model, np.array([6.3, 13.5, 0.9])) == ()


def test_diagnostic_sites_are_the_ones_that_tell_the_candidates_apart():
    from types import SimpleNamespace

    from confirm.fitting.assemble import diagnostic_sites

    def model(shifts, labels, sd=0.1):
        return SimpleNamespace(shift0=np.array(shifts), sd=np.full(len(shifts), sd), labels=tuple(labels),
                               n_sites=len(shifts), nuisance=False)

    # an alcohol beside an alkene sharing its aryl H: the CH(OH) and CH2 tell it apart
    alcohol = model([4.85, 2.95, 7.30, 7.25], ["CH", "CH2", "aryl", "aryl"])
    alkene = model([6.40, 6.20, 7.32, 7.26, 1.90], ["vinyl", "vinyl", "aryl", "aryl", "CH3"])
    assert diagnostic_sites(alcohol, [alkene]) == [0, 1]
    # of the alkene's specific sites, its vinyl H (the CH3 stands apart too)
    assert diagnostic_sites(alkene, [alcohol]) == [0, 1]
    # nothing stands apart (homologues): the vinyl H, else every site
    assert diagnostic_sites(alkene, [alkene]) == [0, 1]
    assert diagnostic_sites(alcohol, [alcohol]) == [0, 1, 2, 3]
    # a solvent line is no candidate
    solvent = SimpleNamespace(shift0=np.array([4.85]), sd=np.array([0.01]), nuisance=True)
    assert diagnostic_sites(alcohol, [alkene, solvent]) == [0, 1]


def test_a_molecules_own_neighbouring_multiplet_is_no_overlap():
    """The two protons of a =CH2 a line width apart: each fills much of the other's window, but
    neither is overlapped by another compound, and together they have the shape of the data."""
    from confirm.fitting.evidence import read_sites

    x = np.linspace(5.0, 5.2, 801)
    g = 0.002 / 2

    def lorentz(c):
        return g / np.pi / ((x - c) ** 2 + g * g)

    a = lorentz(5.095) + lorentz(5.080)  # one proton's lines
    b = lorentz(5.094) + lorentz(5.0785)  # the other's, a line width beside
    other = 4.0 * lorentz(5.15)  # another compound, well apart
    rng = np.random.default_rng(5)
    y = 1.0 * (a + b) + other + rng.normal(0, 0.5, x.size)
    grid = _grid(x, y)
    per_site = np.vstack([a, b, other])
    cols = np.vstack([a + b, other])
    basis = np.zeros((x.size, 1))
    (r_a, r_b), (r_o,) = read_sites(grid, per_site, cols, np.array([1.0, 4.0]), np.zeros(1), basis, [0, 2],
                                    [2, 1], 0.004, noise_sd=0.5, model_error=0.03)
    for r in (r_a, r_b):
        assert r.overlap < 0.05 < 0.3 < r.overlap_all
        assert r.shape_group > 0.95
    assert r_o.overlap < 0.05


def test_a_clean_multiplet_at_the_edge_of_a_window_does_not_vouch_for_an_absent_one():
    """A homologue's wide CH2 multiplet (80 MHz, 30 Hz across) laid on a water line, with the
    molecule's clean CH3 doublet at the edge of its window: the CH2 reads below zero once the
    water's share is taken away, and its group (the molecule's multiplets in its window that do not
    stand clear on their own) must read the same, not borrow the doublet's good match."""
    from confirm.fitting.evidence import decide_presence, read_sites

    x = np.linspace(1.0, 2.0, 2001)
    g = 1.2 / 80.0 / 2

    def lorentz(c, w=g):
        return w / np.pi / ((x - c) ** 2 + w * w)

    ch3 = 3 * (lorentz(1.24 - 0.0390) + lorentz(1.24 + 0.0390)) / 2  # a doublet, 6.2 Hz
    ch2 = sum(lorentz(1.52 + d) for d in (-0.19, -0.11, -0.04, 0.04, 0.11, 0.19)) / 6  # one proton
    water = lorentz(1.56, 2.4 / 80.0 / 2)
    rng = np.random.default_rng(11)
    y = ch3 + 0.3 * water + rng.normal(0, 0.01, x.size)  # the molecule's CH3 is there, its CH2 is not
    grid = _grid(x, y)
    per_site = np.vstack([ch3, ch2, water])
    cols = np.vstack([ch3 + ch2, water])
    basis = np.zeros((x.size, 1))
    # the fit that laid the CH2 on the water line gave the water more than its share
    (r_ch3, r_ch2), _ = read_sites(grid, per_site, cols, np.array([1.0, 0.4]), np.zeros(1), basis, [0, 2],
                                   [2, 1], 1.2 / 80.0, noise_sd=0.01, model_error=0.03)
    assert r_ch3.sigma > 5 and r_ch3.overlap < 0.5  # seen on its own
    assert r_ch2.amount < 0 and r_ch2.overlap >= 0.5
    assert not r_ch2.amount_group >= 0.5  # the group is the CH2 alone: it does not hold
    p = decide_presence([r_ch3, r_ch2], detection_sigma=3.0, diagnostic=[1])
    assert 1 in p.missing and not p.present


def test_a_candidate_below_its_bound_widens_the_found_fractions_by_at_most_its_share():
    """A component found alone (amount 1) beside an undetected candidate bounded at 1.74: the
    candidate could be at most 1.74 / 2.74 = 63.5 % of the mixture (its reported upper limit), so
    the found 100 % carries half that as its sd, never more than its own value (read against the
    found amount alone, 1.74 / 1, it would be 87 points). A small bound gives nearly the same sd
    either way."""
    from confirm.fitting.assemble import Evaluation, with_undetected_spread
    from confirm.fitting.evidence import Presence

    def spread(bound):
        found = Presence(1.0, 0.01, True, (), (0,), np.inf)
        hidden = Presence(0.0, 0.5, False, (), (), bound)
        ev = Evaluation(amounts=np.array([1.0, 0.0]), cov=np.zeros((2, 2)), base=np.zeros(1),
                        detected=np.array([True, False]), presence=(found, hidden), readings=[(), ()],
                        var=np.ones(1), model=np.zeros(1))
        cov = with_undetected_spread(np.array([1.0, 0.0]), np.zeros((2, 2)), ev, 2)
        return float(np.sqrt(cov[0, 0]))

    assert spread(1.74) == pytest.approx(0.5 * 1.74 / 2.74)
    assert spread(0.02) == pytest.approx(0.01, rel=0.03)


def test_a_molecule_seen_nowhere_apart_from_others_lines_is_not_detected():
    """Every multiplet under other components' lines (more than half of each window theirs) and no
    identifying multiplet standing 5 sd clear in its own shape: nothing in the data shows this
    molecule rather than the others, however large the readings taken with their share away (a
    homologue's multiplets on the true compound's). It is bounded by the data instead."""
    def under(amount, sd):
        return SiteReading(ppm=1.3, amount=amount, amount_sd=sd, envelope=1.0, shape=0.6, overlap=0.9,
                           misfit=1.0, usable=True, envelope_all=0.4)

    readings = [under(0.14, 0.02), under(0.15, 0.02), under(0.13, 0.03)]
    p = decide_presence(readings, detection_sigma=3.0, diagnostic=[0])
    assert not p.present
    assert p.upper >= 0.4 - 1e-12  # the data's bound, not the readings'
    # the same readings with the identifying multiplet in its shape, 7 sd clear: present
    clear = [replace(readings[0], shape=0.95)] + readings[1:]
    assert decide_presence(clear, detection_sigma=3.0, diagnostic=[0]).present


def test_a_candidate_set_aside_for_its_placement_is_named_in_the_notes():
    from types import SimpleNamespace

    from confirm.fitting import _displaced_note

    model = SimpleNamespace(shift0=np.array([1.26, 4.14, 2.82]), sd=np.array([0.129, 0.19, 0.19]))
    note = _displaced_note(SimpleNamespace(label="diethyl malate", smiles="CCOC(=O)CC(O)C(=O)OCC"),
                           np.array([0.88, 3.62, 3.40]), model)
    value = ((0.88 - 1.26) / 0.129) ** 2 + ((3.62 - 4.14) / 0.19) ** 2 + ((3.40 - 2.82) / 0.19) ** 2
    assert note.startswith("diethyl malate: ") and f"chi-square {value:.1f} over 3 sites" in note
    assert "not detected" in note
