"""Amounts from integrals over a component's own multiplets (confirm.fitting.integrals), checked on
hand-made Lorentzian lines whose areas are known in closed form."""

from __future__ import annotations

import numpy as np
import pytest

from confirm.fitting.grid import Grid
from confirm.fitting.integrals import integral_amounts

FIELD = 400.0
STEP = 0.1 / FIELD  # 0.1 Hz per point


def _grid(y):
    x = 1.0 + np.arange(y.size) * STEP
    return Grid(x=x, y=y, weight=np.ones(x.size), region=np.zeros(x.size, int), n_regions=1, dx_ppm=STEP,
                curvature_ppm2=0.0)


def _x(n=8000):
    return 1.0 + np.arange(n) * STEP


def _lines(x, centres_ppm, heights, fwhm_hz=1.0):
    """Lorentzian lines of unit area per unit height (area in ppm units times height)."""
    g = fwhm_hz / FIELD / 2
    out = np.zeros(x.size)
    for c, h in zip(centres_ppm, heights, strict=True):
        out += h * g / np.pi / ((x - c) ** 2 + g**2)
    return out


def _doublet(x, centre, j_hz, height=1.0):
    return _lines(x, [centre - j_hz / 2 / FIELD, centre + j_hz / 2 / FIELD], [height / 2, height / 2])


def _read(y, per_site, offsets, n_sites, amounts, noise=1e-3, baseline=None):
    grid = _grid(y)
    base = np.zeros(y.size) if baseline is None else baseline
    cols = np.array([per_site[o:o + n].sum(0) for o, n in zip(offsets, n_sites, strict=True)])
    return integral_amounts(grid, per_site, cols, offsets, n_sites, np.asarray(amounts, float), base,
                            np.ones(len(n_sites), bool), noise, width_ppm=1.0 / FIELD)


def test_a_misshapen_model_still_reads_the_area_of_the_measured_multiplet():
    """The data's doublet has J 8 Hz, the model's 4 Hz (a coupling the fit could not fix): least
    squares reads the height, the integral the area (here exactly 0.7 units)."""
    x = _x()
    data = 0.7 * _doublet(x, 1.40, 8.0)
    model_col = _doublet(x, 1.40, 4.0)
    # least squares on the misshapen column reads well below 0.7
    ls = float(model_col @ data / (model_col @ model_col))
    assert ls < 0.6
    found = _read(data, model_col[None, :], [0], [1], [ls])
    amount, sd, readings, weight = found[0]
    # the measured lines sit nearer the window's edges than the model's, so a little more of their
    # Lorentzian tails lies outside it (and in the flanks): 3 % low, against 20 % for least squares
    assert amount == pytest.approx(0.7, rel=0.04)
    assert abs(amount - 0.7) < abs(ls - 0.7) / 4
    assert len(readings) == 1 and sd < 0.02 and weight == 1.0


def test_a_local_offset_under_the_window_is_taken_out():
    """A constant offset (a broad line's wing) under the multiplet does not enter the integral."""
    x = _x()
    data = 0.5 * _doublet(x, 1.40, 6.0) + 20.0
    col = _doublet(x, 1.40, 6.0)
    amount = _read(data, col[None, :], [0], [1], [0.5])[0][0]
    assert amount == pytest.approx(0.5, rel=0.02)


def test_a_window_another_component_fills_gives_no_reading_and_clean_ones_are_combined():
    """Component 0 has two sites: one alone (1.2 ppm), one under component 1's much larger line
    (1.6 ppm). Only the clean one reads; component 1's own line is not clean either (a third of
    its window is component 0's), so it reads from its second, clean site."""
    x = _x()
    site_a = _lines(x, [1.2], [1.0])
    site_b = _lines(x, [1.6], [1.0])
    other_1 = _lines(x, [1.6005], [1.0])
    other_2 = _lines(x, [1.5], [1.0])
    per_site = np.array([site_a, site_b, other_1, other_2])
    amounts = [0.3, 1.0]
    data = 0.3 * (site_a + site_b) + 1.0 * (other_1 + other_2)
    found = _read(data, per_site, [0, 2], [2, 2], amounts)
    amount0, _, readings0, _ = found[0]
    assert [r.sites for r in readings0] == [(0,)]
    assert amount0 == pytest.approx(0.3, rel=0.02)
    amount1, _, readings1, _ = found[1]
    assert [r.sites for r in readings1] == [(1,)]
    assert amount1 == pytest.approx(1.0, rel=0.02)


def test_disagreeing_windows_widen_the_sd():
    """Two clean sites of one component reading 0.5 and 0.8: the combined sd covers the spread
    (Birge ratio), not only the noise."""
    x = _x()
    a, b = _lines(x, [1.2], [1.0]), _lines(x, [1.6], [1.0])
    data = 0.5 * a + 0.8 * b
    amount, sd, readings, _ = _read(data, np.array([a, b]), [0], [2], [0.65])[0]
    assert len(readings) == 2
    assert 0.5 < amount < 0.8
    assert sd > 0.1


def test_a_flank_holding_lines_marks_the_window_cut_and_an_offset_does_not():
    """The local baseline comes from the fit's residual beside the window: a flat offset with noise
    is an offset (its level is taken out); a measured line the fitted multiplet does not reach is
    structure, and the window then gives no reading."""
    from confirm.fitting.integrals import _flank_line

    rng = np.random.default_rng(3)
    n, noise = 400, 0.01
    mask = np.zeros(n, bool)
    mask[180:220] = True
    offset = 0.3 + noise * rng.standard_normal(n)
    level, level_var, structure = _flank_line(offset, mask, np.ones(n), 20, noise)
    assert structure < 0.75  # counts in full (see _ramp)
    assert level[200] == pytest.approx(0.3, abs=3 * noise)
    assert 0 < level_var < 0.1
    with_line = offset + _lines(_x(n), [1.0 + 170 * STEP], [0.05])
    assert _flank_line(with_line, mask, np.ones(n), 20, noise)[2] > 1.25  # does not count


def test_a_window_near_a_threshold_counts_in_part():
    """The tests' weights ramp from 1 (statistic at 0.75 of its threshold) to 0 (at 1.25), so a
    rounding difference near a threshold moves an amount a little, not by a whole reading."""
    from confirm.fitting.integrals import _ramp

    assert _ramp(0.5) == 1.0 and _ramp(0.75) == 1.0 and _ramp(1.25) == 0.0 and _ramp(2.0) == 0.0
    assert _ramp(1.0) == pytest.approx(0.5)
    assert abs(_ramp(1.0 + 1e-9) - _ramp(1.0)) < 1e-8


def test_a_window_holding_nothing_still_gives_its_reading():
    """The fit placed a weak component's doublet where the data hold only noise: the window's
    reading is returned, at zero within its sd, whatever its sign (with this noise it comes out
    negative). An integral that holds nothing says the component is not there."""
    x = _x()
    y = np.random.default_rng(6).normal(0.0, 1e-2, x.size)
    col = _doublet(x, 1.40, 6.0)
    found = _read(y, col[None, :], [0], [1], [0.002], noise=1e-2)
    mean, sd, readings, weight = found[0]
    assert weight == 1.0
    assert mean < 0 and abs(mean) < 2 * sd


def _evaluation(reading_amount, reading_sd):
    from confirm.fitting.assemble import Evaluation
    from confirm.fitting.evidence import Presence

    presence = Presence(reading_amount, reading_sd, True, (), (0,), np.inf)
    return Evaluation(amounts=np.array([0.37]), cov=np.eye(1), base=np.zeros(1), detected=np.array([True]),
                      presence=(presence,), readings=[()], var=np.ones(1), model=np.zeros(1))


def test_integrals_holding_none_of_a_multiplet_read_at_10_sd_contradict_it():
    """A multiplet reading 0.0026 +- 0.0003 (a 10-sd 'line' that is a baseline wave or another
    compound's line under the predicted pattern) against integrals of its own windows reading
    0.0002 +- 0.0004: contradicted. Integrals that show it (0.0024), or a window that passes its
    tests only in small part (weight 0.1: its sd three times larger), do not contradict it."""
    from confirm.fitting import _contradicted_by_integrals

    ev = _evaluation(0.00255, 0.00026)
    assert set(_contradicted_by_integrals(ev, {0: (0.0002, 0.0004, (), 1.0)})) == {0}
    assert _contradicted_by_integrals(ev, {0: (0.0024, 0.0004, (), 1.0)}) == {}
    assert _contradicted_by_integrals(ev, {0: (0.0002, 0.0004, (), 0.1)}) == {}
    # a negative integral (the window holds less than the others' lines and the flanks) contradicts too
    assert set(_contradicted_by_integrals(ev, {0: (-0.0003, 0.0004, (), 1.0)})) == {0}
