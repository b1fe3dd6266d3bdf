"""Broad OH/NH lines: found where a candidate expects one, modelled, never counted.

Synthetic spectra built from published shifts and couplings (tests/confirm/published_spectra.py)
with an added broad OH line: 1-(4-methoxyphenyl)propan-2-ol, OH about 1.6 ppm, broad (the
compound's literature entry, from memory); its position and width move with concentration and
water, so the line is placed at 1.80 ppm here, beside where E-anethole's CH3 doublet would be.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from confirm.fitting import fit_mixture
from confirm.fitting.broad import broad_lines
from predictors.core import ProtonSite, Spectrum
from tests.confirm.published_spectra import ANISYL_PROPANOL, E_ANETHOLE, published_candidate
from tests.confirm.test_fitting import perturbed_systems, render_mixture

FIELD = 300.0


def _with_oh(system, shift_ppm=1.9, sd_ppm=1.0):
    """``system`` with an exchangeable OH site (no couplings), as the predictor gives in CDCl3."""
    n = len(system.sites)
    start = max(a for s in system.sites for a in s.atoms) + 1
    oh = ProtonSite(atoms=(start,), shift_ppm=shift_ppm, shift_sd_ppm=sd_ppm, label="OH", exchangeable=True)
    j = np.zeros((n + 1, n + 1))
    j[:n, :n] = system.j_hz
    sd = None if system.j_sd_hz is None else np.pad(np.asarray(system.j_sd_hz), ((0, 1), (0, 1)))
    pj = None if system.proton_j_hz is None else np.pad(np.asarray(system.proton_j_hz), ((0, 1), (0, 1)))
    return dataclasses.replace(system, sites=system.sites + (oh,), j_hz=j, j_sd_hz=sd, proton_j_hz=pj,
                               x_couplings=())


def _add_broad(spectrum, ppm, fwhm_hz, area):
    x = np.asarray(spectrum.ppm)
    g = fwhm_hz / 2 / spectrum.field_mhz
    y = np.asarray(spectrum.intensity) + area / np.pi * g / ((x - ppm) ** 2 + g * g)
    return Spectrum(ppm=x, intensity=y, field_mhz=spectrum.field_mhz, solvent=spectrum.solvent)


@pytest.fixture(scope="module")
def alcohol_with_oh():
    spectrum = render_mixture(((ANISYL_PROPANOL, 1.0),), field_mhz=FIELD, n=32768, snr=800.0, seed=5)
    return _add_broad(spectrum, 1.80, 12.0, 1.0)  # one H's area spread over 12 Hz


def test_a_broad_oh_line_is_found_where_the_candidate_expects_one(alcohol_with_oh):
    system = _with_oh(perturbed_systems([ANISYL_PROPANOL])[0])
    noise = float(np.std(np.asarray(alcohol_with_oh.intensity)[np.asarray(alcohol_with_oh.ppm) > 9.5]))
    # the water line at 1.56 is the water model's (the fit passes its place)
    found = broad_lines(alcohol_with_oh, [system], [(0.5, 4.5)], noise_sd=noise, line_width_hz=1.0,
                        avoid=[1.56])
    assert len(found) == 1
    assert found[0].ppm == pytest.approx(1.80, abs=0.01)
    assert found[0].fwhm_hz == pytest.approx(12.0, rel=0.3)
    # without an exchangeable site nobody expects a broad line, and none is looked for
    plain = perturbed_systems([ANISYL_PROPANOL])[0]
    assert broad_lines(alcohol_with_oh, [plain], [(0.5, 4.5)], noise_sd=noise, line_width_hz=1.0,
                       avoid=[1.56]) == []


def test_sharp_multiplets_are_not_taken_for_a_broad_line():
    # the alcohol alone (no OH line): its CH3 doublet at 1.23 and CH2 pair at 2.6-2.7 are sharp lines
    spectrum = render_mixture(((ANISYL_PROPANOL, 1.0),), field_mhz=FIELD, n=32768, snr=800.0, seed=6)
    system = _with_oh(perturbed_systems([ANISYL_PROPANOL])[0], shift_ppm=2.0)
    noise = float(np.std(np.asarray(spectrum.intensity)[np.asarray(spectrum.ppm) > 9.5]))
    found = broad_lines(spectrum, [system], [(0.5, 4.5)], noise_sd=noise, line_width_hz=1.0, avoid=[1.56])
    assert found == []


def test_the_broad_line_is_modelled_and_counted_in_no_amount(alcohol_with_oh):
    systems = [_with_oh(s) for s in perturbed_systems([ANISYL_PROPANOL, E_ANETHOLE])]
    candidates = [published_candidate(c) for c in (ANISYL_PROPANOL, E_ANETHOLE)]
    fit = fit_mixture(alcohol_with_oh, systems, candidates)
    alcohol, anethole = fit.components
    assert alcohol.detected and alcohol.mole_fraction == pytest.approx(1.0)
    assert not anethole.detected
    assert any("broad line at 1.80" in w for w in fit.warnings)
    # without the model the line is left over and reported as an unknown component
    assert not any("unexplained signal at 1.8" in w for w in fit.warnings)
    near = np.abs(np.asarray(fit.ppm) - 1.80) < 0.05
    peak = float(np.max(np.asarray(fit.model)[near]))
    assert float(np.max(np.abs(np.asarray(fit.residual)[near]))) < 0.1 * peak


def test_an_oh_that_couples_is_a_site_not_a_broad_line():
    # in DMSO-d6 the ethanol OH is a triplet of its molecule's model (slow exchange), in CDCl3 a
    # broad line to look for
    from confirm.fitting.broad import _ranges
    from predictors.prediction import predict_spin_system

    dmso = predict_spin_system("CCO", n_conformers=2, solvent="DMSO-d6")
    cdcl3 = predict_spin_system("CCO", n_conformers=2, solvent="CDCl3")
    assert _ranges([dmso], [(0.0, 10.0)]) == []
    assert len(_ranges([cdcl3], [(0.0, 10.0)])) == 1
