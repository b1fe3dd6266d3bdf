"""The analysis pipeline: in-memory spectra, peak lists and candidate building."""

from __future__ import annotations

import numpy as np
import pytest

from confirm.analysis import analyze_path, analyze_spectrum, build_candidates
from predictors.errors import ChemistryError, InputError
from tests.confirm.published_spectra import (
    E_CROTONATE,
    Z_CROTONATE,
    mixture_lines,
    published_candidate,
    published_system,
)
from tests.confirm.test_fitting import render_mixture


def test_analyze_spectrum_with_published_systems():
    spectrum = render_mixture(((E_CROTONATE, 0.75), (Z_CROTONATE, 0.25)), field_mhz=400.0, n=16384, seed=2)
    cands = [published_candidate(E_CROTONATE), published_candidate(Z_CROTONATE)]
    result = analyze_spectrum(
        spectrum, cands, systems=[published_system(E_CROTONATE), published_system(Z_CROTONATE)]
    )
    assert result.verdict.major == cands[0].smiles
    data = result.to_json()
    assert {"components", "ratios", "verdict", "warnings", "inputs", "version"} <= set(data)
    assert data["ratios"]["E:Z"]["share"] == pytest.approx(0.75, abs=0.02)


def test_peak_list_gives_the_same_verdict(tmp_path):
    """Peak list of a 70:30 E/Z crotonate mixture (lines from published data) -> same major, wider sd."""
    ppm, inten, _ = mixture_lines(
        ((E_CROTONATE, 0.7), (Z_CROTONATE, 0.3)), field_mhz=400.0, solvent_lines=False
    )
    keep = inten > 0.01
    path = tmp_path / "peaks.csv"
    rows = "\n".join(
        f"{p:.5f},{i:.6f}" for p, i in sorted(zip(ppm[keep], inten[keep], strict=True), reverse=True)
    )
    path.write_text("ppm,integral\n" + rows + "\n")
    result = analyze_path(path, candidates=[E_CROTONATE.smiles, Z_CROTONATE.smiles], field_mhz=400.0)
    assert result.verdict.major == published_candidate(E_CROTONATE).smiles
    e = result.fit.components[0]
    assert e.detected and abs(e.mole_fraction - 0.7) < 0.08
    assert any("peak list" in u for u in result.verdict.unresolved)


def test_peak_list_without_field_is_rejected(tmp_path):
    path = tmp_path / "peaks.csv"
    path.write_text("ppm,integral\n6.97,1\n5.84,1\n1.87,3\n")
    with pytest.raises(InputError, match="field_mhz"):
        analyze_path(path, candidates=[E_CROTONATE.smiles])


def test_build_candidates_rules():
    cands, _ = build_candidates(candidates=["C/C=C/C(=O)OCC", "C/C=C\\C(=O)OCC", "CCOC(=O)/C=C/C"])
    assert len(cands) == 2  # the third is the first written differently
    assert [c.geometry for c in cands] == ["E", "Z"]
    with pytest.raises(InputError, match="no candidate"):
        build_candidates()
    with pytest.raises(InputError, match="not both"):
        build_candidates(candidates=["C=C"], substrate="CCBr", reagent="ethoxide")
    with pytest.raises(ChemistryError):
        build_candidates(candidates=["C1CC"])
    subs, _ = build_candidates(substrate="CC(Br)Cc1ccc(OC)cc1", reagent="hydroxide")
    assert any("starting material" in c.pathways for c in subs)
    assert np.all([c.smiles for c in subs])
