"""The user's own compound names: ``name=SMILES`` in --candidates and --also."""

from __future__ import annotations

import csv
import io
import json

import pytest

from confirm.analysis import build_candidates
from confirm.commands.demo import sample_files
from confirm.structures import split_name
from predictors.errors import InputError

E_ANETHOLE = "C/C=C/c1ccc(OC)cc1"
Z_ANETHOLE = "C/C=C\\c1ccc(OC)cc1"


@pytest.mark.parametrize(
    "text, expected",
    [
        ("C=CC", (None, "C=CC")),  # a SMILES has '=' of its own
        ("CC(C)=O", (None, "CC(C)=O")),
        ("anethole=C/C=C/c1ccc(OC)cc1", ("anethole", "C/C=C/c1ccc(OC)cc1")),
        ("lot 7 impurity = CC(C)=O", ("lot 7 impurity", "CC(C)=O")),
        ("CCO", (None, "CCO")),
    ],
)
def test_split_name(text, expected):
    assert split_name(text) == expected


@pytest.mark.parametrize("text", ["=CCO", "acetone=", "x" * 61 + "=CCO"])
def test_bad_names_are_refused(text):
    with pytest.raises(InputError, match="structure"):
        split_name(text)


def test_named_candidates_keep_their_names_and_the_rest_their_smiles():
    cands, _ = build_candidates(candidates=[f"(E)-anethole={E_ANETHOLE}", Z_ANETHOLE])
    assert [c.name for c in cands] == ["(E)-anethole", None]
    assert [c.label for c in cands] == ["(E)-anethole", Z_ANETHOLE]
    with pytest.raises(InputError, match="two different structures"):
        build_candidates(candidates=[f"A={E_ANETHOLE}", f"A={Z_ANETHOLE}"])


def test_also_adds_a_known_impurity_and_names_an_enumerated_product():
    plain, _ = build_candidates(substrate="CC(Br)Cc1ccc(OC)cc1", reagent="hydroxide")
    assert E_ANETHOLE in {c.smiles for c in plain}
    cands, notes = build_candidates(substrate="CC(Br)Cc1ccc(OC)cc1", reagent="hydroxide",
                                    also=["p-anisaldehyde=COc1ccc(C=O)cc1", f"trans-anethole={E_ANETHOLE}"])
    assert len(cands) == len(plain) + 1
    added = cands[-1]
    assert added.name == "p-anisaldehyde" and added.pathways == ("user",)
    named = next(c for c in cands if c.smiles == E_ANETHOLE)
    assert named.name == named.label == "trans-anethole" and named.pathways != ("user",)
    assert any("p-anisaldehyde" in n for n in notes)
    with pytest.raises(InputError, match="--also"):
        build_candidates(candidates=[E_ANETHOLE], also=["CCO"])


def test_names_reach_the_json_and_the_terminal_table(run_cli):
    args = ("analyze", "--spectrum", sample_files()[1], "--candidates", f"(E)-anethole={E_ANETHOLE}",
            f"(Z)-anethole={Z_ANETHOLE}")
    result = run_cli(*args, "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert [c["name"] for c in data["components"]] == ["(E)-anethole", "(Z)-anethole"]
    assert [c["smiles"] for c in data["components"]] == [E_ANETHOLE, Z_ANETHOLE]
    text = run_cli(*args)
    assert text.exit_code == 0, text.stderr
    assert "(E)-anethole" in text.stdout and "(Z)-anethole" in text.stdout


def test_also_without_substrate_exits_2(run_cli):
    result = run_cli("analyze", "--spectrum", sample_files()[1], "--candidates", E_ANETHOLE, "--also", "CCO")
    assert result.exit_code == 2 and "--also" in result.stderr and "Traceback" not in result.stderr


def test_batch_components_table_has_a_name_column():
    from confirm.batch.summary import _COMPONENT_COLUMNS

    reader = csv.reader(io.StringIO(",".join(_COMPONENT_COLUMNS)))
    assert next(reader)[2:5] == ["smiles", "name", "label"]
