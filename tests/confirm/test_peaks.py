"""Peak picking, integration and first-order multiplet analysis on spectra built from known lines."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from confirm.peaks import Peak, group_multiplets, integrate_region, pick_peaks
from predictors.core import Spectrum
from predictors.errors import InputError

FIELD = 500.0


def _lorentzian_spectrum(lines, *, width_hz=1.0, noise=0.0, n=131072, seed=0) -> Spectrum:
    """Sum of absorption Lorentzians (ppm, height) on a 0-10 ppm axis."""
    ppm = np.linspace(10.0, 0.0, n)
    hwhm_ppm = 0.5 * width_hz / FIELD
    y = np.zeros(n)
    for centre, height in lines:
        y += height / (1 + ((ppm - centre) / hwhm_ppm) ** 2)
    y += np.random.default_rng(seed).normal(0, noise, n) if noise else 0.0
    return Spectrum(ppm=ppm, intensity=y, field_mhz=FIELD)


def _first_order_lines(centre_ppm: float, couplings_hz, height=1.0):
    """Stick pattern of a first-order multiplet: every +-J/2 combination, coincident lines summed."""
    positions = {}
    for signs in itertools.product((-0.5, 0.5), repeat=len(couplings_hz)):
        f = round(centre_ppm * FIELD + sum(s * j for s, j in zip(signs, couplings_hz, strict=True)), 9)
        positions[f] = positions.get(f, 0.0) + height
    return [(f / FIELD, h) for f, h in sorted(positions.items())]


def test_peaks_placed_and_measured():
    spectrum = _lorentzian_spectrum([(7.0, 100.0), (3.0, 300.0)], noise=0.1)
    peaks = pick_peaks(spectrum, noise_sd=0.1)
    assert [round(p.ppm, 4) for p in peaks] == [7.0, 3.0]
    assert peaks[0].width_hz == pytest.approx(1.0, rel=0.05)
    assert peaks[1].height == pytest.approx(300.0, rel=0.01)
    # area of a Lorentzian: pi x height x half width (Hz); the +-32-width window holds 99 % of it
    # (references.md section 5)
    for peak, height in zip(peaks, (100.0, 300.0), strict=True):
        assert peak.integral == pytest.approx(0.99 * math.pi * height * 0.5, rel=0.01)


def test_integrate_region_matches_pick_peaks_window():
    spectrum = _lorentzian_spectrum([(5.0, 50.0)])
    peak = pick_peaks(spectrum, noise_sd=0.01)[0]
    assert integrate_region(spectrum, peak.start_ppm, peak.stop_ppm) == pytest.approx(peak.integral, rel=1e-3)


def test_noise_only_gives_no_peaks():
    spectrum = _lorentzian_spectrum([], noise=1.0, seed=4)
    assert pick_peaks(spectrum, noise_sd=1.0, threshold_snr=8.0) == ()


def test_bad_arguments():
    spectrum = _lorentzian_spectrum([(5.0, 1.0)])
    with pytest.raises(InputError, match="noise_sd"):
        pick_peaks(spectrum, noise_sd=0.0)
    with pytest.raises(InputError, match="field_mhz"):
        group_multiplets((), field_mhz=float("nan"))


@pytest.mark.parametrize("couplings, label", [
    ((), "s"), ((7.0,), "d"), ((7.0, 7.0), "t"), ((7.0, 7.0, 7.0), "q"), ((17.3, 10.4), "dd"),
    ((16.9, 10.1, 6.7, 6.7), "ddt"), ((12.0, 4.0, 4.0), "dt"),
])
def test_multiplet_labels_and_couplings(couplings, label):
    spectrum = _lorentzian_spectrum(_first_order_lines(5.0, couplings, 100.0), width_hz=0.8)
    peaks = pick_peaks(spectrum, noise_sd=0.01)
    multiplets = group_multiplets(peaks, field_mhz=FIELD)
    assert len(multiplets) == 1
    m = multiplets[0]
    assert m.multiplicity == label
    assert m.ppm == pytest.approx(5.0, abs=2e-4)
    assert m.j_hz == pytest.approx(tuple(sorted(set(couplings), reverse=True)), abs=0.1)


def test_satellites_and_traces_join_no_multiplet():
    lines = _first_order_lines(4.0, (7.0, 7.0), 100.0)
    lines += [(4.0 + 70.0 / FIELD, 0.55), (4.0 - 70.0 / FIELD, 0.55)]  # 13C satellites, 0.55 % each
    multiplets = group_multiplets(pick_peaks(_lorentzian_spectrum(lines), noise_sd=0.01), field_mhz=FIELD)
    assert [m.multiplicity for m in multiplets] == ["t"]


def test_separate_multiplets_stay_separate():
    lines = _first_order_lines(6.0, (10.0,), 50.0) + _first_order_lines(5.9, (10.0,), 50.0)
    multiplets = group_multiplets(pick_peaks(_lorentzian_spectrum(lines), noise_sd=0.01), field_mhz=FIELD)
    assert [(round(m.ppm, 3), m.multiplicity) for m in multiplets] == [(6.0, "d"), (5.9, "d")]


def test_not_first_order_is_m():
    offsets_hz, heights = (0.0, 3.0, 9.5, 10.5), (1.0, 4.0, 2.0, 1.0)
    peaks = tuple(Peak(ppm=5.0 - f / FIELD, height=h, integral=h, width_hz=1.0, index=k, start_ppm=5.0,
                       stop_ppm=4.9) for k, (f, h) in enumerate(zip(offsets_hz, heights, strict=True)))
    assert group_multiplets(peaks, field_mhz=FIELD)[0].multiplicity == "m"


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(min_value=2.0, max_value=18.0), min_size=1, max_size=3))
def test_coupling_extraction_recovers_generated_couplings(couplings):
    # the analysis against the obvious generator: every +-J/2 combination of the couplings
    couplings = sorted(couplings, reverse=True)
    lines = _first_order_lines(5.0, couplings)
    peaks = tuple(Peak(ppm=p, height=h, integral=h, width_hz=0.5, index=k, start_ppm=p, stop_ppm=p)
                  for k, (p, h) in enumerate(sorted(lines, reverse=True)))
    m = group_multiplets(peaks, field_mhz=FIELD, max_j_hz=40.0, tolerance_hz=0.05)[0]
    positions = sorted(round(p * FIELD, 6) for p, _ in lines)
    gaps = np.diff(positions)
    if m.multiplicity == "m":
        # only patterns whose lines nearly coincide (closer than the tolerance) may stay unresolved
        assert gaps.min() < 0.3 or len(set(np.round(couplings, 1))) < len(couplings)
        return
    assert m.ppm == pytest.approx(5.0, abs=1e-6)
    distinct = []
    for j in couplings:
        if not distinct or abs(distinct[-1] - j) > 0.05:
            distinct.append(j)
    assert len(m.j_hz) == len(distinct)
    assert np.allclose(m.j_hz, distinct, atol=0.06)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_peak_indices_and_widths_equal_the_scipy_reference(seed):
    # scipy.signal.find_peaks / peak_widths (the reference implementation of the same definitions)
    from scipy.signal import find_peaks, peak_widths

    from confirm.peaks import find_peak_indices, half_height_widths

    rng = np.random.default_rng(seed)
    x = np.arange(6000)
    y = rng.normal(0.0, 1.0, x.size)
    for centre in rng.uniform(0, x.size, 30):
        y += rng.uniform(5, 300) / (1 + ((x - centre) / rng.uniform(1, 6)) ** 2)
    if seed == 3:
        y = np.round(y)  # flat tops
    for height, prominence in ((5.0, 5.0), (20.0, 10.0), (3.0, 30.0)):
        expected, _ = find_peaks(y, height=height, prominence=prominence)
        assert np.array_equal(find_peak_indices(y, height=height, prominence=prominence), expected)
    idx, _ = find_peaks(y, height=5.0, prominence=5.0)
    bases = (np.zeros(idx.size, dtype=np.intp), np.full(idx.size, y.size - 1, dtype=np.intp))
    widths = peak_widths(y, idx, rel_height=0.5, prominence_data=(y[idx], *bases))[0]
    assert np.allclose(half_height_widths(y, idx), np.maximum(widths, 1.0))


@pytest.mark.parametrize("j_allylic_hz", [-1.6, 1.6])
def test_a_roofed_dq_is_still_read_as_a_dq(j_allylic_hz):
    """The =CH-CH3 proton of a trans-propenylarene at 400 MHz: a dq (J 15.8, 6.6 Hz) about 100 Hz
    from its partner vinyl H, so one quartet stands about 1.4 times the other (the roof effect of
    strong coupling). It is reported as the dq a chemist reads off it, whatever the sign of the
    allylic 4J (negative, as allylic 4J are; Sternhell, Q. Rev. Chem. Soc. 1969, 23, 236).
    Shifts and couplings of trans-anethole (from memory); the exact spectrum from the spin
    simulation."""
    from predictors.core import ProtonSite, SpinSystem
    from predictors.spin import model_spectrum

    sites = (ProtonSite(atoms=(0,), shift_ppm=6.36, shift_sd_ppm=0.1, label="vinyl"),
             ProtonSite(atoms=(1,), shift_ppm=6.11, shift_sd_ppm=0.1, label="vinyl"),
             ProtonSite(atoms=(2, 3, 4), shift_ppm=1.86, shift_sd_ppm=0.1, label="CH3"))
    j = np.zeros((3, 3))
    j[0, 1] = j[1, 0] = 15.8
    j[1, 2] = j[2, 1] = 6.6
    j[0, 2] = j[2, 0] = j_allylic_hz
    system = SpinSystem(smiles="C/C=C/c1ccccc1", sites=sites, j_hz=j, j_sd_hz=np.zeros((3, 3)))
    ppm = np.linspace(7.0, 1.0, 2**17)
    y = model_spectrum(system, ppm, field_mhz=400.0, line_width_hz=0.8)
    spectrum = Spectrum(ppm=ppm, intensity=y, field_mhz=400.0)
    peaks = pick_peaks(spectrum, noise_sd=1e-4 * y.max(), ppm_range=(5.9, 6.3))
    (dq,) = group_multiplets(peaks, field_mhz=400.0)
    assert dq.multiplicity == "dq"
    assert dq.j_hz == pytest.approx((15.8, 6.6), abs=0.3)
