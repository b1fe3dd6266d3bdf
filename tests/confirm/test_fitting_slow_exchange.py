"""In DMSO-d6 an alcohol OH or amide NH couples to its neighbours (slow exchange): the fit's model
keeps it as a site, so its neighbour's multiplet has the measured splitting; in CDCl3 it stays out.
And an analysis whose file header names another solvent than the data show predicts again for the
solvent the data show."""

from __future__ import annotations

import numpy as np
import pytest

from confirm.analysis import _for_sample_solvent, build_candidates, predict_systems
from confirm.fitting.models import build_model, model_lines
from confirm.fitting.options import FitOptions
from predictors.prediction import predict_spin_system


def _ch2_span_hz(system) -> tuple[float, object]:
    """Width (Hz, 400 MHz) from the first to the last clear line of the model's CH2 multiplet."""
    model = build_model(system, FitOptions())
    k = model.labels.index("CH2")
    ppm, inten, site, _ = model_lines(model, model.shift0, model.j_values0, 400.0, satellites=False)
    own = (site == k) & (inten > 0.01 * inten[site == k].max())
    return float(np.ptp(ppm[own]) * 400.0), model


def test_ethanol_oh_is_a_fitted_site_in_dmso_only():
    # ethanol CH2: q in CDCl3, qd in DMSO-d6 (3J(CH2,OH) 5.1 Hz widens it by that coupling; Gottlieb,
    # Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, DMSO-d6 column, from memory)
    span_dmso, dmso = _ch2_span_hz(predict_spin_system("CCO", n_conformers=2, solvent="DMSO-d6"))
    span_cdcl3, cdcl3 = _ch2_span_hz(predict_spin_system("CCO", n_conformers=2, solvent="CDCl3"))
    assert "OH" in dmso.labels and "OH" not in cdcl3.labels
    assert span_dmso - span_cdcl3 == pytest.approx(5.1, abs=1.0)
    oh = dmso.labels.index("OH")
    assert any(oh in pair for pair in dmso.j_pairs)  # the OH coupling is refined like the others


def test_predictions_follow_the_solvent_the_data_show():
    candidates, _ = build_candidates(candidates=["CCO", "CC=C"])
    header = predict_systems(candidates, solvent="CDCl3")
    again = _for_sample_solvent(header, candidates, "CDCl3", "DMSO-d6")
    oh = next(i for i, s in enumerate(again[0].sites) if s.exchangeable)
    assert np.abs(again[0].j_hz[oh]).max() == pytest.approx(5.1, abs=1.0)
    assert _for_sample_solvent(header, candidates, "CDCl3", "CDCl3") is header
    assert _for_sample_solvent(header, candidates, "CDCl3", None) is header
    no_oh = predict_systems(candidates[1:], solvent="CDCl3")
    assert _for_sample_solvent(no_oh, candidates[1:], "CDCl3", "DMSO-d6") is no_oh
