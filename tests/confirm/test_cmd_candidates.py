"""``confirm candidates``: JSON contract, readable table, molfile input, bad input -> exit 2."""

from __future__ import annotations

import json

import pytest
from rdkit import Chem
from rdkit.Chem import AllChem

from confirm.structures import load_structure
from predictors.errors import ChemistryError, FileFormatError


def test_json_follows_the_contract(run_cli):
    result = run_cli("candidates", "CCCCC(C)(C)Br", "--reagent", "NaOEt", "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert set(data) >= {"candidates", "notes"}
    # design.md JSON contract for `candidates`.
    for cand in data["candidates"]:
        assert {"smiles", "pathways", "label", "prior", "rationale"} <= set(cand)
        assert cand["smiles"] == Chem.MolToSmiles(Chem.MolFromSmiles(cand["smiles"]))
        assert 0.0 <= cand["prior"] <= 1.0
    priors = [c["prior"] for c in data["candidates"]]
    assert priors == sorted(priors, reverse=True)
    # Common practice: tertiary bromide + ethoxide -> more substituted alkene first.
    assert data["candidates"][0]["smiles"] == "CCCC=C(C)C"
    assert any(c["pathways"] == ["starting material"] for c in data["candidates"])


def test_readable_table(run_cli):
    result = run_cli("candidates", "CCC(C)Br", "--reagent", "ethoxide", "--temp-c", "70")
    assert result.exit_code == 0, result.stderr
    lines = result.stdout.splitlines()
    assert lines[1].split()[:3] == ["rank", "prior", "pathways"]
    assert "C/C=C/C" in result.stdout and "starting material" in result.stdout
    assert "note: solvent not given: assumed ethanol" in result.stdout


def test_molfile_input_keeps_stereochemistry(run_cli, tmp_path):
    # The molfile is written by RDKit's writer from 3D coordinates; the reader must recover the
    # configuration from them (two diastereomers -> opposite alkene geometries, common practice).
    geometries = []
    for smiles in ("C[C@@H](Br)[C@@H](C)CC", "C[C@@H](Br)[C@H](C)CC"):
        mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
        AllChem.EmbedMolecule(mol, randomSeed=1)
        path = tmp_path / f"sub{len(geometries)}.mol"
        Chem.MolToMolFile(mol, str(path))
        result = run_cli("candidates", str(path), "--reagent", "ethoxide", "--json")
        assert result.exit_code == 0, result.stderr
        data = json.loads(result.stdout)
        assert data["substrate"] == Chem.MolToSmiles(Chem.MolFromSmiles(smiles))
        geometries.append(data["candidates"][0]["geometry"])
    assert set(geometries) == {"E", "Z"}


def test_sdf_input(tmp_path):
    path = tmp_path / "one.sdf"
    writer = Chem.SDWriter(str(path))
    writer.write(Chem.MolFromSmiles("CC(C)(C)Br"))
    writer.close()
    assert Chem.MolToSmiles(load_structure(str(path))) == "CC(C)(C)Br"


def test_load_structure_errors(tmp_path):
    with pytest.raises(FileFormatError, match="does not exist"):
        load_structure(str(tmp_path / "missing.mol"))
    bad = tmp_path / "bad.mol"
    bad.write_text("not a molfile\n")
    with pytest.raises(FileFormatError, match="not a readable"):
        load_structure(str(bad))
    with pytest.raises(ChemistryError, match="neither"):
        load_structure("C1CC(")


@pytest.mark.parametrize("args, message", [
    (("C1CC(", "--reagent", "ethoxide"), "valid SMILES"),
    (("CCCCO", "--reagent", "ethoxide"), "no leaving group"),
    (("CI", "--reagent", "LDA"), "no elimination or substitution path"),
    (("CC[Sn](C)(C)CBr", "--reagent", "ethoxide"), "unsupported element"),
    (("CC[Fe]CBr", "--reagent", "ethoxide"), "unsupported element"),
    (("[CH2]C(C)Br", "--reagent", "ethoxide"), "radicals"),
    (("C" * 101 + "Br", "--reagent", "ethoxide"), "heavy atoms"),
    (("CCBr", "--reagent", "unobtainium"), "unknown name"),
    (("CCBr", "--reagent", "ethoxide", "--temp-c", "5000"), "temp_c"),
    (("missing.mol", "--reagent", "ethoxide"), "does not exist"),
    (("CCBr",), "--reagent"),
])
def test_bad_input_exits_2_with_one_line(run_cli, args, message):
    result = run_cli("candidates", *args)
    assert result.exit_code == 2
    assert "Traceback" not in result.stderr
    assert result.stderr.startswith("error: ") and message in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_no_beta_hydrogen_is_substitution_only_with_a_note(run_cli):
    result = run_cli("candidates", "CC(C)(C)CBr", "--reagent", "NaN3", "--json")
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert {p for c in data["candidates"] for p in c["pathways"]} == {"SN2", "starting material"}
    assert any("no beta-H" in n for n in data["notes"])


def test_periplanar_conformers_are_reported(run_cli):
    # trans-1-bromo-2-methylcyclohexane: its one anti H needs the other chair (common practice).
    result = run_cli("candidates", "C[C@@H]1CCCC[C@H]1Br", "--reagent", "ethoxide", "--json")
    assert result.exit_code == 0, result.stderr
    reports = json.loads(result.stdout)["beta_hydrogens"]
    reachable = [r for r in reports if r["reachable"]]
    assert [r["conformer"] for r in reachable] == ["flipped chair"] and reachable[0]["ring_flip"]
    text = " ".join(run_cli("candidates", "C[C@@H]1CCCC[C@H]1Br", "--reagent", "ethoxide").stdout.split())
    assert "flipped chair" in text and "ring flip needed" in text


@pytest.mark.parametrize("args, message", [
    (("CCC(C)Br", "--reagent", "Burgess"), "activates alcohols"),
    (("CCC(C)(C)O", "--reagent", "Mitsunobu"), "tertiary carbon"),
    (("CCC(C)Br", "--reagent", "heat", "--temp-c", "200"), "heat alone does not remove"),
    (("CCC(C)OC(C)=O", "--reagent", "heat", "--temp-c", "700"), "temp_c"),
])
def test_new_reagents_refuse_what_they_cannot_do_in_one_line(run_cli, args, message):
    result = run_cli("candidates", *args)
    assert result.exit_code == 2 and message in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1 and "Traceback" not in result.stderr
