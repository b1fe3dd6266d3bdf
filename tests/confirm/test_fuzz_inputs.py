"""Property-based tests of the parsers of what users type and write: QC specifications, batch
manifests, SMILES and numeric options.

Whatever the text, the command exits 0, 1 or 2 (one line for 2), never 3, never hangs and writes
nothing outside its output folder. Settings in ``tests/confirm/_fuzz.py``; builders in
``tests/confirm/robustness_corpus.py``.
"""

from __future__ import annotations

import contextlib
import json
import random
from pathlib import Path
from unittest import mock

import pytest
from hypothesis import given
from hypothesis import strategies as st

from confirm.qc import read_spec
from confirm.structures import load_structure
from predictors.errors import ConfirmError, InputError
from tests.confirm._fuzz import FUZZ, check_case
from tests.confirm.robustness_corpus import SMILES_PIECES, Case, manifest_csv, mutate, output_cases, spec_toml

_TOML_VALUE = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(lambda x: repr(x).replace("inf", "inf")),
    st.integers(-10**20, 10**20).map(str), st.text(max_size=10).map(lambda t: '"' + t.replace('"', "") + '"'),
    st.sampled_from(["true", "[]", '["C=C"]', "{}", "nan", "-inf", "1e400", '"C/C=C/CC junk"', '"CC.CCO"']))
_KEYS = st.sampled_from(["name", "product", "candidates", "starting_material", "solvent", "field_mhz",
                         "bogus"])
_LIMITS = st.sampled_from(["min_isomeric_purity_percent", "max_other_isomer_percent",
                           "max_starting_material_percent", "min_snr", "unknown_limit"])


@st.composite
def spec_files(draw) -> bytes:
    extra = "\n".join(f"{draw(_KEYS)} = {draw(_TOML_VALUE)}" for _ in range(draw(st.integers(0, 2))))
    limits = {draw(_LIMITS): draw(_TOML_VALUE) for _ in range(draw(st.integers(0, 3)))}
    data = spec_toml(product=draw(st.sampled_from(["C/C=C/CC", "C/C=C/CC x", "", "CC.CCO", "C1CC"])),
                     limits=limits, extra=extra, bom=draw(st.booleans()))
    rounds = draw(st.integers(0, 2))
    return mutate(data, random.Random(draw(st.integers(0, 2**32))), rounds=rounds) if rounds else data


@FUZZ
@given(spec_files())
def test_qc_specifications(data):
    # the spectrum is missing, so a specification that reads stops there (exit 2) without an analysis
    check_case(Case("spec", "spec", (("spec.toml", data),),
                    ("qc", "--spec", "{dir}/spec.toml", "--spectrum", "{dir}/none.jdx", "--audit",
                     "{out}/audit.json")))


@FUZZ
@given(spec_files())
def test_read_spec_raises_only_its_own_errors(data):
    import tempfile

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "spec.toml"
        path.write_bytes(data)
        with contextlib.suppress(ConfirmError):
            read_spec(path)


_ID = st.one_of(st.sampled_from(["a", "a", "a_2", "A", "summary.csv", "index.html", "../up", "x/y", "", ".h",
                                 "con", "a b", "é"]), st.text(max_size=6))
_SPECTRUM = st.sampled_from(["m.csv", "none.jdx", "..", ".", "", "sub", "sub/x.jdx", "/dev/null", "out"])


@st.composite
def manifests(draw) -> bytes:
    candidates = st.sampled_from(["C/C=C/CC C=CCCC", "", "C1CC", "CCO foo"])
    temp_c = st.sampled_from(["0", "", "x", "nan", "25"])
    spec = st.sampled_from(["", "spec.toml", "none.toml"])
    rows = [{"id": draw(_ID), "spectrum": draw(_SPECTRUM), "candidates": draw(candidates),
             "temp_c": draw(temp_c), "spec": draw(spec)} for _ in range(draw(st.integers(1, 4)))]
    columns = draw(st.sampled_from([("id", "spectrum", "candidates", "temp_c", "spec"), ("spectrum",),
                                    ("id", "spectrum", "candidates", "bogus"), ("id", "path")]))
    data = manifest_csv(rows, columns=columns)
    rounds = draw(st.integers(0, 2))
    return mutate(data, random.Random(draw(st.integers(0, 2**32))), rounds=rounds) if rounds else data


def _reading_analysis(path, budget=None, **kwargs):
    """Stand-in for the analysis: reads the named file (so every reader meets whatever the manifest
    names), then refuses; the manifest parser and the batch machinery are what is tested here."""
    from confirm.reading import read_measurement

    read_measurement(path)
    raise InputError("stand-in analysis: read the file, analysed nothing")


@FUZZ
@given(manifests())
def test_batch_manifests(data):
    sub = b"##TITLE=x\n##JCAMP-DX=4.24\n##END=\n"
    files = (("m.csv", data), ("sub/x.jdx", sub), ("spec.toml", spec_toml()))
    with mock.patch("confirm.commands.batch._analyze", _reading_analysis):
        outcome = check_case(Case("manifest", "manifest", files,
                                  ("batch", "{dir}/m.csv", "--out", "{out}", "--no-reports", "--json")),
                             allowed=(0, 1, 2))
    if outcome.exit_code in (0, 1):  # the batch ran: one summary row per item, ids unique
        items = json.loads(outcome.stdout)["items"]
        assert len({item["id"].casefold() for item in items}) == len(items)


def test_batch_ids_in_a_fuzzed_manifest_never_share_a_folder(tmp_path):
    rows = [{"id": i, "spectrum": "none.jdx", "candidates": "C=C"} for i in
            ["a", "a", "a_2", "A", "a b", "a_b", "A_2", "a__2", "é", "e"]]
    (tmp_path / "m.csv").write_bytes(manifest_csv(rows))
    with mock.patch("confirm.commands.batch._analyze", _reading_analysis):
        outcome = check_case(Case("manifest", "ids", (("m.csv", (tmp_path / "m.csv").read_bytes()),),
                                  ("batch", "{dir}/m.csv", "--out", "{out}", "--no-reports", "--json")),
                             allowed=(1,))
    ids = [item["id"] for item in json.loads(outcome.stdout)["items"]]
    assert len(ids) == 10 and len({i.casefold() for i in ids}) == 10


@FUZZ
@given(st.lists(st.sampled_from(SMILES_PIECES), min_size=1, max_size=8).map("".join))
def test_load_structure_raises_only_its_own_errors(text):
    with contextlib.suppress(ConfirmError):
        load_structure(text)


@FUZZ
@given(st.lists(st.sampled_from(SMILES_PIECES[:13] + (" ", ".", "[Na+]")), min_size=1,
                max_size=5).map("".join))
def test_predict_takes_any_small_smiles(text):
    check_case(Case("smiles", "predict", (), ("predict", text, "--field-mhz", "60", "--json")))


_NUMBER = st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                    st.sampled_from(["abc", "", "1e999", "-0"]))


@FUZZ
@given(_NUMBER, _NUMBER, _NUMBER)
def test_numeric_options_of_analyze(temp_c, field_mhz, max_seconds):
    # a missing spectrum ends every run after the options are read, so no analysis runs
    check_case(Case("options", "analyze", (), (
        "analyze", "--spectrum", "{dir}/none.jdx", "--candidates", "C=C", "--temp-c", str(temp_c),
        "--field-mhz", str(field_mhz), "--max-seconds", str(max_seconds), "--report", "{out}/r.html")))


@pytest.mark.parametrize("args", [
    ("batch", "{dir}", "--out", "{out}", "--jobs", "-1"),
    ("batch", "{dir}", "--out", "{out}", "--max-seconds", "nan"),
    ("demo", "--max-seconds", "-5"),
    ("analyze", "--spectrum", "{dir}/a.jdx", "--candidates", "C=C", "--temp-c", "nan"),
    ("analyze", "--spectrum", "{dir}/a.jdx", "--candidates", "C=C", "--temp-c", "-300"),
])
def test_numeric_options_out_of_range_are_bad_input(args):
    from confirm.commands.demo import sample_files

    spectrum = sample_files()[1].read_bytes()
    outcome = check_case(Case("options", "x", (("a.jdx", spectrum),), args), allowed=(2,))
    option = next(a for a in args if a in ("--jobs", "--max-seconds", "--temp-c"))
    assert option.lstrip("-").replace("-", "_") in outcome.stderr.replace("-", "_"), outcome.stderr


@FUZZ
@given(st.integers(0, 2**32))
def test_output_options_never_touch_an_input(seed):
    """An output naming an input, a place inside one, a link to one, or another output is refused
    (exit 2), and a link planted in a batch's --out stops that item (exit 1): nothing outside --out
    changes."""
    (case,) = output_cases(random.Random(seed), 1)
    check_case(case, allowed=(1, 2) if case.argv[0] == "batch" else (2,))
