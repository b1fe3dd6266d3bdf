"""``confirm demo`` on the bundled sample spectra (true composition in sample_spectra/README.md)."""

from __future__ import annotations

import json

import pytest

from confirm.commands.demo import sample_files

E_ANETHOLE = "C/C=C/c1ccc(OC)cc1"


def test_sample_files_exist():
    fid_dir, jdx = sample_files()
    assert (fid_dir / "acqus").is_file() and (fid_dir / "fid").is_file()
    assert jdx.is_file()


@pytest.mark.slow
def test_demo_json_and_out_dir(run_cli, tmp_path):
    result = run_cli("demo", "--json", "--out", tmp_path)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    res400 = data["results"]["anisyl_elimination_400mhz"]
    # true composition (README): (E)-anethole 56 mol % of the crude -> the major product
    assert res400["verdict"]["major"] == E_ANETHOLE
    e = [c for c in res400["components"] if c["smiles"] == E_ANETHOLE][0]
    assert e["detected"] and abs(e["mole_fraction"] - 0.56) < 0.05
    assert sorted(p.name for p in tmp_path.glob("*.json")) == [
        "anisyl_elimination_400mhz.json",
        "anisyl_elimination_60mhz.json",
    ]
