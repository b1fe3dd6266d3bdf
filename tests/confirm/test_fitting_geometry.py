"""A claimed alkene must be consistent with itself: its cis/trans coupling within the range its
geometry allows."""

from __future__ import annotations

from confirm.analysis import build_candidates, predict_systems
from confirm.fitting import fit_mixture
from tests.confirm.published_spectra import E_ANETHOLE, Z_ANETHOLE
from tests.confirm.test_fitting import render_mixture


def _fit_predicted(spectrum, smiles):
    candidates, _ = build_candidates(candidates=list(smiles))
    return fit_mixture(spectrum, predict_systems(candidates), candidates)


def test_the_other_geometry_is_not_claimed_on_a_coupling_it_cannot_have():
    """(Z)-anethole measured (vinyl 3J 11.6 Hz, published), offered only the E isomer (predicted
    trans 3J about 15.6 Hz): at 80 MHz the E isomer's shifts can reach the Z lines, but its trans
    doublet has to shrink to the bound of its range. It is not claimed, and the evidence says which
    multiplet is missing and why."""
    spectrum = render_mixture(((Z_ANETHOLE, 1.0),), field_mhz=80.0, n=16384, snr=1000.0, seed=3)
    fit = _fit_predicted(spectrum, [E_ANETHOLE.smiles])
    e = fit.components[0]
    assert not e.detected
    vinyl = [s for s in e.site_evidence if "vinyl" in s.label.lower()]
    assert any(s.missing and s.outside_range for s in vinyl)
    assert any("coupling to the edge" in text for text in e.evidence)


def test_the_right_geometry_keeps_its_coupling_inside_its_range():
    """The same spectrum offered both isomers: the Z isomer is found, its cis coupling inside its
    range (no vinyl multiplet pulled to an edge)."""
    spectrum = render_mixture(((Z_ANETHOLE, 1.0),), field_mhz=80.0, n=16384, snr=1000.0, seed=3)
    fit = _fit_predicted(spectrum, [E_ANETHOLE.smiles, Z_ANETHOLE.smiles])
    e, z = fit.components
    assert z.detected and not e.detected
    assert not any(s.outside_range for s in z.site_evidence)
