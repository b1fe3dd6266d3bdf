"""Mixture fitting against synthetic spectra built from PUBLISHED shifts and couplings.

The spectra come from tests/confirm/published_spectra.py (each compound with its source); the
fitter is given published spin systems perturbed away from the truth (shifts, couplings), never our
own predictor, so these tests check the fit, not the prediction. Tolerances are those the fit must
hold under any rounding (they are far from one run's digits).
"""

from __future__ import annotations

import numpy as np
import pytest

from confirm.fitting import FitOptions, estimate_noise_sd, fit_mixture
from predictors.core import Spectrum
from predictors.errors import FitError, InputError
from tests.confirm.published_spectra import (
    ANISYL_BROMIDE,
    ANISYL_PROPANOL,
    ASPIRIN,
    BUTENOATE,
    E_ANETHOLE,
    E_CROTONATE,
    ESTRAGOLE,
    Z_ANETHOLE,
    Z_CROTONATE,
    mixture_lines,
    published_candidate,
    published_system,
)

ANISYL_MIX = (
    (E_ANETHOLE, 0.55),
    (Z_ANETHOLE, 0.15),
    (ESTRAGOLE, 0.12),
    (ANISYL_PROPANOL, 0.08),
    (ANISYL_BROMIDE, 0.10),
)


def render_mixture(
    mixture, *, field_mhz, n=32768, line_width_hz=1.0, snr=300.0, roll=0.0, seed=0, phase_deg=(0.0, 0.0)
):
    """Lorentzian spectrum of a mixture (with satellites and CDCl3/water/TMS) plus noise and a roll.

    ``phase_deg`` leaves a zero- and first-order phase error (degrees at the centre of the axis and
    change across it): each line is then a mix of absorption and dispersion.
    """
    ppm = np.linspace(11.0, -1.0, n)
    pos, inten, extra = mixture_lines(mixture, field_mhz=field_mhz)
    gamma = (line_width_hz + extra) / 2 / field_mhz
    y = np.zeros(n)
    for p, i, g in zip(pos, inten, gamma, strict=True):
        phi = np.radians(phase_deg[0] + phase_deg[1] * ((p - 5.0) / 12.0))
        y += i / np.pi * (g * np.cos(phi) - (ppm - p) * np.sin(phi)) / ((ppm - p) ** 2 + g * g)
    rng = np.random.default_rng(seed)
    y += roll * y.max() * np.cos(ppm / 3.0)
    y += rng.standard_normal(n) * y.max() / snr
    return Spectrum(ppm=ppm, intensity=y, field_mhz=field_mhz, solvent="CDCl3")


def _offsets(compound, seed, scale=0.04):
    """Shift errors of a prediction (about 0.04 ppm, fixed per compound and seed)."""
    return np.random.default_rng(seed).normal(0.0, scale, len(compound.sites))


def perturbed_systems(compounds, *, j_offset_hz=0.6, seed=0):
    """Published systems moved away from the truth: shifts by ~0.04 ppm (sd 0.08 stated), every
    coupling by ``j_offset_hz``."""
    return [published_system(c, shift_sd_ppm=0.08, shift_offsets_ppm=_offsets(c, seed + i),
                             j_offsets_hz=j_offset_hz)
            for i, c in enumerate(compounds)]


def fit_perturbed(spectrum, compounds, *, j_offset_hz=0.6, seed=0, **kw):
    """Fit with :func:`perturbed_systems`."""
    systems = perturbed_systems(compounds, j_offset_hz=j_offset_hz, seed=seed)
    return fit_mixture(spectrum, systems, [published_candidate(c) for c in compounds], **kw)


def truth_fractions(mixture, compounds):
    total = sum(a for _, a in mixture)
    amounts = {c.name: a / total for c, a in mixture}
    return np.array([amounts.get(c.name, 0.0) for c in compounds])


def _values(fit):
    return np.array([c.share for c in fit.components])


def test_the_model_reproduces_the_measured_lines():
    """A clean spectrum of one known compound is fitted to the noise (reduced chi-square near 1)
    although the stated couplings are 0.6 Hz off and the shifts ~0.04 ppm: the couplings are
    refined within their bounds."""
    spectrum = render_mixture(((E_CROTONATE, 1.0),), field_mhz=400.0, n=65536, snr=2000.0, seed=11)
    fit = fit_perturbed(spectrum, [E_CROTONATE])
    assert fit.components[0].detected
    assert fit.quality["reduced_chi2"] < 3.0


def test_a_small_isomer_with_a_clean_multiplet_is_measured_beside_a_large_one():
    """1.5 % of the Z isomer beside the E isomer at 400 MHz, SNR 1500: the Z vinyl multiplets stand
    clear; the Z is found near its amount and the absent deconjugated ester is not claimed."""
    mix = ((E_CROTONATE, 0.985), (Z_CROTONATE, 0.015))
    spectrum = render_mixture(mix, field_mhz=400.0, n=65536, snr=1500.0, seed=3)
    fit = fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE, BUTENOATE])
    e, z, b = fit.components
    assert e.detected and z.detected and not b.detected
    assert abs(z.mole_fraction - 0.015) <= max(0.003, 2.5 * z.mole_fraction_sd)
    assert b.mole_fraction is None and 0 < b.upper_limit < 0.01


@pytest.mark.slow
def test_five_component_mixture_at_400mhz():
    compounds = [c for c, _ in ANISYL_MIX] + [BUTENOATE]
    spectrum = render_mixture(ANISYL_MIX, field_mhz=400.0, snr=300.0, roll=0.01, seed=4)
    fit = fit_perturbed(spectrum, compounds)
    truth = truth_fractions(ANISYL_MIX, compounds)
    detected = np.array([c.detected for c in fit.components])
    assert detected[:5].all() and not detected[5]
    assert np.max(np.abs(_values(fit)[:5] - truth[:5])) <= 0.02
    assert abs(sum(c.share for c in fit.components) - 1.0) < 1e-9


def test_a_residual_phase_error_is_absorbed():
    mix = ((E_CROTONATE, 0.7), (Z_CROTONATE, 0.3))
    spectrum = render_mixture(mix, field_mhz=400.0, n=32768, snr=500.0, seed=5, phase_deg=(6.0, 3.0))
    fit = fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE])
    assert np.max(np.abs(_values(fit) - [0.7, 0.3])) <= 0.01


def test_a_decoy_that_lacks_a_multiplet_is_not_claimed():
    """A spectrum of (E)-anethole offered only the Z isomer and estragole: the Z isomer can sit on
    the aryl, methoxy and methyl signals, but its own cis-vinyl multiplet (near 5.7 ppm) is not in
    the data, so it is not claimed, and the evidence names the missing multiplet."""
    spectrum = render_mixture(((E_ANETHOLE, 1.0),), field_mhz=400.0, snr=500.0, seed=2)
    fit = fit_perturbed(spectrum, [Z_ANETHOLE, ESTRAGOLE])
    assert not any(c.detected for c in fit.components)
    z = fit.components[0]
    assert any(e.missing for e in z.site_evidence)
    # the text of each missing multiplet says so (and, for a cis doublet stretched to the trans
    # range, why: its coupling sits at the edge of its range)
    assert all(" missing" in text for e, text in zip(z.site_evidence, z.evidence, strict=True) if e.missing)


def test_an_unrelated_compound_is_not_detected():
    spectrum = render_mixture(((ASPIRIN, 1.0),), field_mhz=400.0, n=16384, snr=400.0, seed=7)
    fit = fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE, BUTENOATE])
    assert not any(c.detected for c in fit.components)
    assert any("no candidate" in w for w in fit.warnings)


def test_noise_alone_is_no_product():
    rng = np.random.default_rng(9)
    ppm = np.linspace(11.0, -1.0, 16384)
    spectrum = Spectrum(ppm=ppm, intensity=rng.standard_normal(ppm.size), field_mhz=400.0, solvent="CDCl3")
    with pytest.raises(FitError, match="no signal"):
        fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE])


def test_numbers_are_coherent():
    """Detected components carry a value and sd and sum to 1; an undetected one carries no value,
    only an upper bound; no value above its own bound."""
    mix = ((E_CROTONATE, 0.8), (Z_CROTONATE, 0.2))
    spectrum = render_mixture(mix, field_mhz=400.0, n=32768, snr=400.0, seed=8)
    fit = fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE, BUTENOATE])
    detected = [c for c in fit.components if c.detected]
    assert sum(c.mole_fraction for c in detected) == pytest.approx(1.0)
    assert all(c.mole_fraction_sd > 0 and c.upper_limit is None for c in detected)
    for c in fit.components:
        if not c.detected:
            assert c.mole_fraction is None and c.upper_limit is not None
        assert len(c.site_evidence) == len(c.evidence) > 0
    cov = fit.fraction_covariance
    assert cov.shape == (3, 3) and np.allclose(cov, cov.T)
    # the amounts of the detected isomers are integrated over their own vinyl multiplets (clean at
    # 400 MHz); each integrated multiplet reports its reading, near the component's amount, and an
    # undetected component reports none
    for c in detected:
        read = [e for e in c.site_evidence if np.isfinite(e.integral_amount)]
        assert read and all(e.integral_amount_sd > 0 for e in read)
        assert any("vinyl" in e.label.lower() for e in read)
        share = c.mole_fraction
        assert all(abs(e.integral_amount - share) < max(0.05, 4 * e.integral_amount_sd) for e in read)
    assert all(not np.isfinite(e.integral_amount) for c in fit.components if not c.detected
               for e in c.site_evidence)
    assert "integral_amount" in fit.components[0].site_evidence[0].to_json()


def test_a_component_found_alone_is_uncertain_by_what_may_hide_below_the_bounds():
    """97 % E and 3 % Z at SNR 60: the Z isomer stays below its detection limit, so the E isomer is
    all that is found (100 % of the detected components). Its sd still covers the truth: an
    undetected candidate may hold up to its bound, and the sd carries that (about half the bound),
    instead of reading 100 +- 0 %."""
    mix = ((E_CROTONATE, 0.97), (Z_CROTONATE, 0.03))
    spectrum = render_mixture(mix, field_mhz=400.0, n=16384, snr=60.0, seed=2)
    e, z = fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE], seed=2).components
    assert e.detected and not z.detected
    assert e.mole_fraction == pytest.approx(1.0)
    bound = z.upper_limit / (1.0 - z.upper_limit)  # the bound as a share of the detected amount
    assert e.mole_fraction_sd >= 0.45 * bound
    assert abs(e.mole_fraction - 0.97) <= 2 * e.mole_fraction_sd


@pytest.mark.slow
def test_uncertainty_covers_the_truth_over_noise_realisations():
    """Small version of the corpus coverage figure: truth within 2 sd in all but one of eight."""
    mix = ((E_CROTONATE, 0.8), (Z_CROTONATE, 0.2))
    hits, total = 0, 0
    for seed in range(4):
        spectrum = render_mixture(mix, field_mhz=400.0, n=16384, snr=150.0, seed=100 + seed)
        fit = fit_perturbed(spectrum, [E_CROTONATE, Z_CROTONATE], seed=seed)
        for comp, true in zip(fit.components, (0.8, 0.2), strict=True):
            hits += abs(comp.share - true) <= 2 * comp.mole_fraction_sd
            total += 1
    assert hits >= total - 1


def test_the_result_does_not_depend_on_workers_or_rounding():
    """One worker or two, and the input changed at 1e-9 relative (a different rounding of the same
    data): the same detected set and amounts within 0.1 point."""
    mix = ((E_CROTONATE, 0.9), (Z_CROTONATE, 0.1))
    spectrum = render_mixture(mix, field_mhz=400.0, n=16384, snr=300.0, seed=13)
    compounds = [E_CROTONATE, Z_CROTONATE, BUTENOATE]
    one = fit_perturbed(spectrum, compounds, options=FitOptions(n_workers=1))
    two = fit_perturbed(spectrum, compounds, options=FitOptions(n_workers=2))
    noise = np.random.default_rng(1).standard_normal(spectrum.ppm.size)
    y = np.asarray(spectrum.intensity) * (1 + 1e-9 * noise)
    nudged = fit_perturbed(Spectrum(ppm=spectrum.ppm, intensity=y, field_mhz=400.0, solvent="CDCl3"),
                           compounds)
    for other in (two, nudged):
        assert [c.detected for c in other.components] == [c.detected for c in one.components]
        assert np.max(np.abs(_values(other) - _values(one))) < 1e-3


def test_the_result_does_not_depend_on_the_order_of_the_candidates():
    """The candidates given in reverse order: the same answer, reported in the order given."""
    mix = ((E_CROTONATE, 0.9), (Z_CROTONATE, 0.1))
    spectrum = render_mixture(mix, field_mhz=400.0, n=16384, snr=300.0, seed=13)
    compounds = [E_CROTONATE, Z_CROTONATE, BUTENOATE]
    systems = perturbed_systems(compounds)
    given = fit_mixture(spectrum, systems, [published_candidate(c) for c in compounds])
    back = fit_mixture(spectrum, systems[::-1], [published_candidate(c) for c in compounds[::-1]])
    assert [c.candidate.smiles for c in back.components] == [c.smiles for c in compounds[::-1]]
    assert [c.detected for c in back.components][::-1] == [c.detected for c in given.components]
    assert np.max(np.abs(_values(back)[::-1] - _values(given))) < 1e-3
    cov, cov_back = given.fraction_covariance, back.fraction_covariance
    assert np.allclose(cov_back[::-1, ::-1], cov, atol=1e-6)


def test_noise_estimate_matches_known_noise():
    rng = np.random.default_rng(1)
    y = rng.standard_normal(65536) * 3.0
    y[30000:30050] += 1000.0
    assert estimate_noise_sd(y) == pytest.approx(3.0, rel=0.1)


def test_bad_input_gives_clear_errors():
    spectrum = render_mixture(((E_CROTONATE, 1.0),), field_mhz=400.0, n=4096, seed=1)
    with pytest.raises(FitError, match="candidates"):
        fit_mixture(spectrum, [], [])
    carbon = Spectrum(ppm=spectrum.ppm, intensity=spectrum.intensity, field_mhz=100.0, nucleus="13C")
    with pytest.raises(InputError, match="nucleus"):
        fit_perturbed(carbon, [E_CROTONATE])
    with pytest.raises(InputError, match="systems"):
        fit_mixture(spectrum, [published_system(E_CROTONATE)], [published_candidate(E_CROTONATE)] * 2)
    for bad in ({"shift_window_sd": -1.0}, {"n_workers": 0}, {"model_error": float("nan")}, {"rounds": 1.5}):
        with pytest.raises(InputError):
            FitOptions(**bad)


def test_analysing_a_fid_folder_does_not_load_the_signal_processing_stack(tmp_path):
    # start-up time: nmrglue, pybaselines and scipy.signal/stats take about 0.8 s to import (they
    # are still used for other formats, old filter tables and the asls/iarpls baselines)
    import subprocess
    import sys

    from tests.confirm.test_processing import synthetic_fid, write_fid_directory

    folder = tmp_path / "fid"  # a modern FID folder: it records its group delay (GRPDLY)
    write_fid_directory(folder, synthetic_fid(group_delay=67.98), grpdly=67.98)
    heavy = ("scipy.signal", "scipy.stats", "nmrglue", "pybaselines")
    code = ("import sys; from confirm.analysis import analyze_path; "
            f"analyze_path({str(folder)!r}, candidates=['CCOC(C)=O']); "
            f"print(sorted(m for m in {heavy!r} if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip().splitlines()[-1] == "[]"
