"""``confirm predict``: table, JSON contract, plot and bad input."""

from __future__ import annotations

import json

import pytest
from rdkit import Chem


def test_table_output(run_cli):
    result = run_cli("predict", "C=CC(=O)OCCCC")
    assert result.exit_code == 0, result.stderr
    assert "vinyl" in result.stdout and "dd" in result.stdout and "+-" in result.stdout


def test_json_contract(run_cli):
    result = run_cli("predict", "OC(C)/C=C/C", "--json", "--field-mhz", "80")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["field_mhz"] == 80.0
    assert data["smiles"] == Chem.MolToSmiles(Chem.MolFromSmiles("OC(C)/C=C/C"))
    mol_h = Chem.AddHs(Chem.MolFromSmiles(data["smiles"]))
    seen = []
    for site in data["sites"]:
        assert {"atoms", "n_h", "shift_ppm", "shift_sd_ppm", "multiplicity", "couplings"} <= set(site)
        assert site["n_h"] == len(site["atoms"]) and site["shift_sd_ppm"] > 0
        assert all(mol_h.GetAtomWithIdx(a).GetAtomicNum() == 1 for a in site["atoms"])
        for c in site["couplings"]:
            assert 0 <= c["to_site"] < len(data["sites"])
        seen += site["atoms"]
    assert sorted(seen) == [a.GetIdx() for a in mol_h.GetAtoms() if a.GetAtomicNum() == 1]


def test_plot_written(run_cli, tmp_path):
    out = tmp_path / "spectrum.png"
    result = run_cli("predict", "C=CCc1ccc(OC)cc1", "--plot", str(out), "--field-mhz", "60")
    assert result.exit_code == 0, result.stderr
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert [p.name for p in tmp_path.iterdir()] == ["spectrum.png"]


@pytest.mark.parametrize("args, message", [
    (("[CH3]",), "radicals"),
    (("C[Hg]C",), "unsupported element"),
    (("C(C)(C)(C)(C)C",), "cannot parse"),
    (("CC", "--field-mhz", "0"), "--field-mhz"),
    (("CC", "--plot", "out.txt"), "--plot"),
    (("CC", "--plot", "/no/such/dir/out.png"), "does not exist"),
    (("CCO", "--nmr-solvent", "unobtainium-d4"), "--nmr-solvent: unknown solvent"),
    (("CCO", "--solvent", "DMSO-d6"), "--nmr-solvent"),
])
def test_bad_input_exits_2(run_cli, args, message):
    result = run_cli("predict", *args)
    assert result.exit_code == 2
    assert message in result.stderr and "Traceback" not in result.stderr
    assert result.stderr.startswith("error:")


def test_second_order_pairs_are_named_at_low_field_only(run_cli):
    # ethyl (E)-crotonate: vinyl H about 1.05 ppm apart with 3J about 15.6 Hz, so dnu/J is about 4 at
    # 60 MHz (second order, the AB roof a benchtop shows) and about 27 at 400 MHz (first order);
    # first order from dnu/J >= 10 (common practice)
    low = run_cli("predict", "CCOC(=O)/C=C/C", "--field-mhz", "60")
    assert low.exit_code == 0 and "second order at 60 MHz" in low.stdout
    high = run_cli("predict", "CCOC(=O)/C=C/C", "--field-mhz", "400")
    assert high.exit_code == 0 and "second order" not in high.stdout
    data = json.loads(run_cli("predict", "CCOC(=O)/C=C/C", "--field-mhz", "60", "--json").stdout)
    vinyl = sorted(i for i, s in enumerate(data["sites"]) if s["label"] == "vinyl")
    pairs = {tuple(p["sites"]): p["delta_nu_over_j"] for p in data["second_order"]}
    assert tuple(vinyl) in pairs and 2.0 < pairs[tuple(vinyl)] < 6.0


def test_nmr_solvent_sets_exchangeable_shifts(run_cli):
    # ethanol OH: 4.63 ppm in DMSO-d6 (Gottlieb, Kotlyar and Nudelman, J. Org. Chem. 1997, 62, 7512,
    # Table 1; from memory); in D2O it exchanges into the HDO line
    def oh_site(*extra):
        result = run_cli("predict", "CCO", "--json", *extra)
        assert result.exit_code == 0, result.stderr
        data = json.loads(result.stdout)
        return data, next(s for s in data["sites"] if s["label"] == "OH")

    data, oh = oh_site("--nmr-solvent", "dmso")
    assert data["nmr_solvent"] == "DMSO-d6" and oh["shift_ppm"] == pytest.approx(4.63, abs=0.3)
    data, plain = oh_site()
    assert data["nmr_solvent"] is None and plain["shift_ppm"] != oh["shift_ppm"]
    _, heavy = oh_site("--nmr-solvent", "D2O")
    assert any(f.startswith("exchanged") for f in heavy["flags"])
    table = run_cli("predict", "CCO", "--nmr-solvent", "DMSO-d6")
    assert table.exit_code == 0 and "in DMSO-d6" in table.stdout
