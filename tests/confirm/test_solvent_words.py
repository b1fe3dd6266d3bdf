"""The reaction's solvent and the NMR sample's solvent have their own names everywhere."""

from __future__ import annotations

import json

import pytest

from confirm.batch import read_manifest
from confirm.commands.demo import sample_files
from predictors.errors import InputError

E_ANETHOLE = "C/C=C/c1ccc(OC)cc1"


@pytest.mark.parametrize("args", [
    ("candidates", "CC(Br)CCC", "--reagent", "ethoxide", "--solvent", "ethanol"),
    ("process", "SAMPLE", "--solvent", "CDCl3"),
    ("analyze", "--spectrum", "SAMPLE", "--candidates", E_ANETHOLE, "--solvent", "CDCl3"),
])
def test_the_retired_solvent_flag_names_the_two_new_ones(run_cli, args):
    args = [str(sample_files()[1]) if a == "SAMPLE" else a for a in args]
    result = run_cli(*args)
    assert result.exit_code == 2
    assert "--reaction-solvent" in result.stderr and "--nmr-solvent" in result.stderr
    assert "Traceback" not in result.stderr


def test_the_reaction_solvent_steers_the_enumeration(run_cli):
    result = run_cli("candidates", "CC(Br)CCC", "--reagent", "ethoxide", "--reaction-solvent", "ethanol",
                     "--json")
    assert result.exit_code == 0, result.stderr
    assert json.loads(result.stdout)["candidates"]
    bad = run_cli("candidates", "CC(Br)CCC", "--reagent", "ethoxide", "--reaction-solvent", "CDCl3x")
    assert bad.exit_code == 2 and "solvent" in bad.stderr


def test_the_nmr_solvent_overrides_the_file_and_is_recorded(run_cli):
    # the 60 MHz sample records CDCl3; told DMSO-d6 the processing references and masks for DMSO
    result = run_cli("process", str(sample_files()[1]), "--nmr-solvent", "DMSO-d6", "--json")
    assert result.exit_code == 0, result.stderr
    assert "DMSO" in json.dumps(json.loads(result.stdout))
    analysed = run_cli("analyze", "--spectrum", str(sample_files()[1]), "--candidates", E_ANETHOLE,
                       "--nmr-solvent", "CDCl3", "--reference", "tms", "--json")
    assert analysed.exit_code == 0, analysed.stderr
    params = json.loads(analysed.stdout)["parameters"]
    assert params["nmr_solvent"] == "CDCl3" and params["reference"] == "tms"
    assert params["reaction_solvent"] is None


def test_a_manifest_with_a_plain_solvent_column_is_refused(tmp_path):
    manifest = tmp_path / "plate.csv"
    manifest.write_text("spectrum,candidates,solvent\na.jdx,CCO,CDCl3\n")
    with pytest.raises(InputError, match="reaction_solvent.*nmr_solvent"):
        read_manifest(manifest)
    manifest.write_text("spectrum,candidates,reaction_solvent,nmr_solvent\na.jdx,CCO,ethanol,CDCl3\n")
    item = read_manifest(manifest)[0]
    assert item.reaction_solvent == "ethanol" and item.nmr_solvent == "CDCl3"
