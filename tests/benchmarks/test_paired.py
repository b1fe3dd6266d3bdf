"""The paired comparison of two benchmark runs, and the case filters it relies on."""

from __future__ import annotations

import json

import pytest

from benchmarks.corpus.cases import generate_cases, select_cases
from benchmarks.paired import changed_cases, figures, load_records, main, paired_change


def _comp(key, truth, found=None):
    return {"key": key, "smiles": key, "truth": truth, "detected": found is not None,
            "mole_fraction": found, "upper_limit": None}


def _record(case_id, kind, comps, major=None):
    return {"id": case_id, "kind": kind, "field_mhz": 400.0, "error": None, "major_key": major,
            "truth": {c["key"]: c["truth"] for c in comps if c["truth"] > 0}, "components": comps}


def _runs():
    base = [
        _record("m1", "mixture", [_comp("a", 0.9, 0.88), _comp("b", 0.1, 0.12), _comp("c", 0.0)]),
        _record("m2", "mixture", [_comp("a", 0.95, 0.7), _comp("b", 0.05), _comp("c", 0.0, 0.3)]),
        _record("i1", "identity", [_comp("a", 1.0, 1.0), _comp("b", 0.0)], major="a"),
        _record("k1", "control", [_comp("b", 0.0, 0.04), _comp("c", 0.0)]),
    ]
    arm = [
        _record("m1", "mixture", [_comp("a", 0.9, 0.88), _comp("b", 0.1, 0.12), _comp("c", 0.0)]),
        _record("m2", "mixture", [_comp("a", 0.95, 0.96), _comp("b", 0.05, 0.04), _comp("c", 0.0)]),
        _record("i1", "identity", [_comp("a", 1.0), _comp("b", 0.0, 1.0)], major="b"),
        _record("k1", "control", [_comp("b", 0.0, 0.6), _comp("c", 0.0, 0.4)]),
    ]
    return base, arm


def test_figures_count_errors_claims_identity_and_controls():
    base, arm = _runs()
    fb, fa = figures(base), figures(arm)
    # m1: 2 + 2 points; m2: 25 + 5 (b undetected counts as 0 %) in the base, 1 + 1 in the arm
    assert fb.mixture_error == pytest.approx(4.0 + 30.0)
    assert fa.mixture_error == pytest.approx(4.0 + 2.0)
    assert (fb.absent_claimed, fa.absent_claimed) == (1, 0)
    assert (fb.identity_true, fa.identity_true) == (1, 0)
    # a candidate detected at 4 % is below the 5 % claim line of the report
    assert (fb.controls_claimed, fa.controls_claimed) == (0, 1)


def test_changed_cases_are_the_ones_that_moved():
    base, arm = _runs()
    changed = changed_cases({r["id"]: r for r in base}, {r["id"]: r for r in arm})
    assert changed == ["m2", "i1", "k1"]


def test_paired_change_counts_each_way_and_brackets_the_error_change():
    base, arm = _runs()
    ch = paired_change({r["id"]: r for r in base}, {r["id"]: r for r in arm})
    assert ch.error_change == pytest.approx(-28.0)
    lo, hi = ch.error_interval
    # two mixtures, changes 0 and -28: resampled sums are -56, -28 or 0
    assert -56.0 <= lo <= hi <= 0.0
    assert (ch.mixtures_better, ch.mixtures_worse) == (1, 0)
    assert ch.claims[:2] == (1, 0) and ch.claims[2] == pytest.approx(1.0)
    assert ch.identity[:2] == (0, 1)
    assert ch.controls[:2] == (0, 1)
    # a lopsided split is unlikely by chance: 9 of 9 one way, p = 2 / 2**9
    from benchmarks.paired import _sign_test
    assert _sign_test(9, 0) == pytest.approx(2 / 2**9)
    # the bootstrap has a fixed seed: the report repeats exactly
    again = paired_change({r["id"]: r for r in base}, {r["id"]: r for r in arm})
    assert again == ch


def test_command_line_fills_only_when_asked(tmp_path, capsys):
    base, arm = _runs()
    (tmp_path / "base.json").write_text(json.dumps({"half": "tune", "records": base}))
    (tmp_path / "arm.json").write_text(json.dumps({"half": "tune", "records": arm[1:2]}))
    assert main([str(tmp_path / "base.json"), str(tmp_path / "arm.json")]) == 0
    assert "cases compared: 1 (1 mixtures" in capsys.readouterr().out
    assert main([str(tmp_path / "base.json"), str(tmp_path / "arm.json"), "--fill"]) == 0
    assert "cases compared: 4 (2 mixtures" in capsys.readouterr().out


def test_runs_of_different_samples_are_not_paired(tmp_path, capsys):
    base, arm = _runs()
    (tmp_path / "base.json").write_text(json.dumps({"half": "tune", "records": base}))
    (tmp_path / "arm.json").write_text(json.dumps({"half": "tune", "seed": 4242, "records": arm}))
    assert main([str(tmp_path / "base.json"), str(tmp_path / "arm.json")]) == 2
    assert "different samples" in capsys.readouterr().err


def test_bad_files_give_one_line_errors(tmp_path, capsys):
    (tmp_path / "x.json").write_text("{not json")
    (tmp_path / "y.json").write_text(json.dumps({"rows": []}))
    assert main([str(tmp_path / "x.json"), str(tmp_path / "y.json")]) == 2
    assert capsys.readouterr().err.startswith("error: ")
    with pytest.raises(ValueError, match="not a benchmarks.quantification"):
        load_records(str(tmp_path / "y.json"))


def test_cases_selected_by_id_and_by_substructure():
    cases = generate_cases()
    some = select_cases(cases, half="tune", kinds=["mixture"], ids=["mix010-cyclohexyl", "mix002-hexyl"])
    assert [c.id for c in some] == ["mix002-hexyl", "mix010-cyclohexyl"]
    with pytest.raises(ValueError, match="not cases of this half"):
        select_cases(cases, half="held-out", ids=["mix010-cyclohexyl"])
    ring = select_cases(cases, half="tune", matching=["[CX4;R]@[CX4;R]"])
    assert ring and all(any("1" in s for s, _ in c.candidates) for c in ring)
    assert {c.id for c in ring} < {c.id for c in select_cases(cases, half="tune")}
    with pytest.raises(ValueError, match="not a valid SMARTS"):
        select_cases(cases, half="tune", matching=["[C"])
