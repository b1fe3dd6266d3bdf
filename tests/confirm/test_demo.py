"""``confirm demo`` on the bundled sample spectra (true composition in sample_spectra/README.md).

The sample spectra are built from published shifts and couplings (tests/confirm/published_spectra.py),
while ``confirm`` fits them with its own predicted spin systems, whose shifts differ from the
published ones by up to ~0.15 ppm and whose couplings by up to ~2 Hz. The tolerances below
are therefore wider than the synthetic-mixture targets of test_fitting.py, which use the
published systems themselves.
"""

from __future__ import annotations

import json

import pytest

from confirm.commands.demo import sample_files
from scripts.make_sample_spectra import TRUE_COMPOSITION

E_ANETHOLE = "C/C=C/c1ccc(OC)cc1"
#: sample_spectra/README.md, "True composition": mole fractions by canonical SMILES
TRUTH = {
    "C/C=C/c1ccc(OC)cc1": 0.56,
    "C/C=C\\c1ccc(OC)cc1": 0.14,
    "C=CCc1ccc(OC)cc1": 0.06,
    "COc1ccc(CC(C)O)cc1": 0.09,
    "COc1ccc(CC(C)Br)cc1": 0.15,
}
#: 400 MHz: largest allowed |fitted - true| mole fraction with predicted spin systems (measured:
#: 1.0 point at most, also under other OpenBLAS kernels; see sample_spectra/README.md)
TOLERANCE_400 = 0.03


def test_truth_table_matches_the_generator():
    from rdkit import Chem

    generated = {Chem.MolToSmiles(Chem.MolFromSmiles(c.smiles)): amount for c, amount in TRUE_COMPOSITION}
    assert generated == pytest.approx({Chem.MolToSmiles(Chem.MolFromSmiles(s)): v for s, v in TRUTH.items()})


def test_sample_files_exist():
    fid_dir, jdx = sample_files()
    assert (fid_dir / "acqus").is_file() and (fid_dir / "fid").is_file()
    assert jdx.is_file()


@pytest.mark.slow
def test_demo_finds_the_true_composition_at_400mhz_and_the_main_product_at_60mhz(run_cli, tmp_path):
    result = run_cli("demo", "--json", "--out", tmp_path)
    assert result.exit_code == 0, result.stderr
    assert "Traceback" not in result.stderr
    data = json.loads(result.stdout)
    res400 = data["results"]["anisyl_elimination_400mhz"]
    assert res400["verdict"]["major"] == E_ANETHOLE
    found = {c["smiles"]: c for c in res400["components"]}
    assert set(found) == set(TRUTH)
    for smiles, true in TRUTH.items():
        assert found[smiles]["detected"], smiles
        assert abs(found[smiles]["mole_fraction"] - true) <= TOLERANCE_400, smiles
    res60 = data["results"]["anisyl_elimination_60mhz.jdx"]
    # 60 MHz: (E)-anethole is found and named the major product; the minor components are not
    # checked (at 60 MHz the predicted spectra overlap too much: see sample_spectra/README.md)
    e60 = [c for c in res60["components"] if c["smiles"] == E_ANETHOLE][0]
    assert e60["detected"] and e60["mole_fraction"] >= 0.3
    assert res60["verdict"]["major"] == E_ANETHOLE
    # ... and says so: where the shared lines decide the split (E and Z methyl doublets 2 Hz apart)
    # the uncertainties widen and the confidence is not "high"
    assert res60["verdict"]["confidence"] != "high"
    alternatives = res60["alternative_fits"]  # fits about as good, if any, in the JSON
    assert all(set(a) == set(TRUTH) for a in alternatives)
    assert all(sum(a.values()) == pytest.approx(1.0) for a in alternatives)
    # every detected component's truth within 3 sd (measured: the same detected set and amounts
    # within 0.1 point under the Haswell, Prescott, Sandybridge and SkylakeX kernels, the (Z)
    # isomer not detected with a bound above its 14 %; sample_spectra/README.md); the tolerance is
    # wide because the E/Z split at 60 MHz rests on shared lines (issue 13)
    for c in res60["components"]:
        if c["detected"]:
            assert abs(c["mole_fraction"] - TRUTH[c["smiles"]]) <= 3 * c["mole_fraction_sd"], c["smiles"]
    assert sorted(p.name for p in tmp_path.glob("*.json")) == [
        "anisyl_elimination_400mhz.json",
        "anisyl_elimination_60mhz.json",
    ]
