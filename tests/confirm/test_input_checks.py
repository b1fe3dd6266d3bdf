"""Input that used to be accepted silently: SMILES with text after a space, two organic molecules,
a spec with a byte-order mark, internal-standard options without a standard, a standard that is
also a candidate."""

from __future__ import annotations

import argparse

import pytest

from confirm.commands.demo import sample_files
from confirm.qc import parse_spec, read_spec
from confirm.qnmr import InternalStandard, add_yield_arguments, analyze_with_standard, standard_from_args
from confirm.structures import check_single_molecule, check_smiles, load_structure
from predictors.errors import ChemistryError, InputError

E_ANETHOLE = "C/C=C/c1ccc(OC)cc1"
Z_ANETHOLE = "C/C=C\\c1ccc(OC)cc1"
SPEC = 'product = "C/C=C/c1ccc(OC)cc1"\ncandidates = ["C/C=C\\\\c1ccc(OC)cc1"]\n'


@pytest.mark.parametrize("text", ["CCO foo", "CCBr CCCl", "C=C\tx", "CC\nC"])
def test_text_after_a_space_is_an_error(text):
    with pytest.raises(InputError, match="text after a space"):
        load_structure(text)
    with pytest.raises(InputError, match="text after a space"):
        check_smiles(text)


def test_surrounding_whitespace_is_fine():
    assert load_structure("  CCO\t").GetNumAtoms() == 3


@pytest.mark.parametrize("text", ["CCCBr.CC(Br)C", "CCBr.CCO", "c1ccccc1.CC(C)Br"])
def test_two_organic_molecules_are_an_error(text):
    with pytest.raises(ChemistryError, match="2 separate organic molecules"):
        load_structure(text)


@pytest.mark.parametrize("text", [
    "CC[N+](C)(C)CC.[I-]",  # a quaternary ammonium iodide (Hofmann elimination substrate)
    "CCBr.[Na+].[Cl-]",
    "Cc1ccc(S(=O)(=O)[O-])cc1.C[N+](C)(C)CCC",  # a tosylate counter-ion
    "CC(Br)C.O",  # water beside it
])
def test_counter_ions_stay_allowed(text):
    check_single_molecule(load_structure(text))


@pytest.mark.parametrize("args, message", [
    (["candidates", "CC(Br)CC junk", "--reagent", "KOH"], "text after a space"),
    (["candidates", "CCCBr.CC(Br)C", "--reagent", "KOH"], "separate organic"),
    (["predict", "C=CC x"], "text after a space"),
    (["predict", "CCCBr.CC(Br)C"], "separate organic"),
    (["analyze", "--spectrum", sample_files()[1], "--candidates", E_ANETHOLE + " (E)"], "text after a space"),
    (["analyze", "--spectrum", sample_files()[1], "--substrate", "CCCBr.CC(Br)C", "--reagent", "KOH"],
     "separate organic"),
    (["analyze", "--spectrum", sample_files()[1], "--candidates", E_ANETHOLE, "--std-mass-mg", "3.1"],
     "--std-mass-mg: needs an internal standard"),
    (["analyze", "--spectrum", sample_files()[1], "--candidates", E_ANETHOLE, "--sample-mass-mg", "50"],
     "--sample-mass-mg: needs an internal standard"),
    (["analyze", "--spectrum", sample_files()[1], "--candidates", E_ANETHOLE, Z_ANETHOLE,
      "--std-smiles", Z_ANETHOLE, "--std-protons", "1", "--std-mass-mg", "3"], "also one of the candidates"),
])
def test_the_command_line_refuses_it_in_one_line(run_cli, args, message):
    result = run_cli(*args)
    assert result.exit_code == 2, result.stderr
    assert message in result.stderr and result.stderr.count("\n") == 1


def test_standard_options_without_a_standard():
    parser = argparse.ArgumentParser()
    add_yield_arguments(parser)
    for option in (["--std-protons", "3"], ["--std-purity-percent", "99"], ["--theoretical-mmol", "1"]):
        with pytest.raises(InputError, match="needs an internal standard"):
            standard_from_args(parser.parse_args(option))
    assert standard_from_args(parser.parse_args([])) is None
    with pytest.raises(InputError, match="text after a space"):
        standard_from_args(parser.parse_args(["--std-smiles", "COc1cc(OC)cc(OC)c1 TMB", "--std-protons", "3",
                                              "--std-mass-mg", "5"]))


def test_a_standard_identical_to_a_candidate_is_refused_before_any_work():
    standard = InternalStandard(smiles=Z_ANETHOLE, n_h=1, mass_mg=3.0)
    with pytest.raises(InputError, match="also one of the candidates"):
        analyze_with_standard("/nonexistent/file.jdx", standard, candidates=[E_ANETHOLE, Z_ANETHOLE])


def test_a_spec_with_a_byte_order_mark_is_read(tmp_path):
    path = tmp_path / "spec.toml"
    path.write_bytes(b"\xef\xbb\xbf" + SPEC.encode())
    spec = read_spec(path)
    assert spec.product == E_ANETHOLE and spec.candidates == (Z_ANETHOLE,)


@pytest.mark.parametrize("table, message", [
    ({"product": "C/C=C/CC junk", "candidates": ["C=CCCC"]}, "text after a space"),
    ({"product": "C/C=C/CC", "candidates": ["C=CCCC.CCCCO"]}, "separate organic"),
])
def test_spec_smiles_are_checked_like_command_line_ones(table, message):
    with pytest.raises(InputError, match=message):
        parse_spec(table)


@pytest.mark.parametrize("smiles, reason", [
    ("CC(C", "extra open parentheses, around character 3"),
    ("CC)C", "extra close parentheses, around character 3"),
    ("C1CC", "unclosed ring"),
    ("C(C)(C)(C)(C)C", "valence for atom # 0"),
    ("CCX", "syntax error, around character 3"),
])
def test_a_bad_smiles_error_says_what_is_wrong_and_where(smiles, reason):
    from confirm.structures import load_structure
    from predictors.errors import ChemistryError

    with pytest.raises(ChemistryError) as info:
        load_structure(smiles)
    message = str(info.value)
    assert reason in message and "\n" not in message
