"""Real measured spectra (../shared/real_spectra; skipped when absent): each alkene against itself
plus its geometric and positional isomers, with predicted spin systems; two negative controls.

Compounds and files: /work/shared/real_spectra/README.md (cheminfo data sets, MIT licence).
"""

from __future__ import annotations

import pytest

from confirm.analysis import analyze_path
from confirm.verdict import alkene_facts

pytestmark = [pytest.mark.real_data, pytest.mark.slow]

CASES = {
    # folder: (true compound, isomers: geometric and positional)
    "butyl_acrylate": ("C=CC(=O)OCCCC", ["C/C=C/C(=O)OCCC", "C/C=C\\C(=O)OCCC"]),
    "estragole": ("C=CCc1ccc(OC)cc1", ["C/C=C/c1ccc(OC)cc1", "C/C=C\\c1ccc(OC)cc1"]),
    "coumarin": ("O=c1ccc2ccccc2o1", ["C=C1C(=O)Oc2ccccc21"]),
    "ipsdienol": ("CC(C)=CC(O)CC(=C)C=C", ["CC(C)=CC(O)C/C(C)=C/C", "CC(C)=CC(O)C/C(C)=C\\C"]),
}
ALKENE_CANDIDATES = ["C/C=C/c1ccc(OC)cc1", "C=CCc1ccc(OC)cc1", "C=CC(=O)OCCCC"]


@pytest.mark.parametrize("folder", sorted(CASES))
def test_alkene_identified_among_its_isomers(real_spectra, folder):
    truth, isomers = CASES[folder]
    result = analyze_path(real_spectra / folder / "1h.fid.dx", candidates=[truth] + isomers)
    comps = result.fit.components
    assert comps[0].detected
    assert comps[0].mole_fraction >= 0.95
    assert result.verdict.major == comps[0].candidate.smiles
    assert not any(c.detected for c in comps[1:])


@pytest.mark.parametrize("folder", ["menthol", "aspirin"])
def test_negative_controls_get_no_alkene_verdict(real_spectra, folder):
    result = analyze_path(real_spectra / folder / "1h.fid.dx", candidates=ALKENE_CANDIDATES)
    major = result.verdict.major
    assert major is None or alkene_facts(major).n_alkenes == 0
    assert result.verdict.confidence in ("undecided", "low")
    # with no component detected a multiplet's reading has no total to be a share of: it is not
    # expressed, never 0 +- 0 % (a reading with no uncertainty)
    if not any(c.detected for c in result.fit.components):
        for comp in result.fit.components:
            assert all(site.to_json()["amount_sd"] is None for site in comp.site_evidence)
            assert not any("0.0 +- 0.0 %" in text for text in comp.evidence)
