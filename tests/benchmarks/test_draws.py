"""Judging a change against several rounding draws of the unchanged code."""

from __future__ import annotations

import json

import pytest

from benchmarks.draws import limits, main, reproducibility_changes
from benchmarks.paired import PairedFigures


def _figures(error, absent, controls, identity):
    return PairedFigures(n_mixtures=10, mixture_error=error, absent_claimed=absent, n_identity=5,
                         identity_true=identity, n_controls=5, controls_claimed=controls)


def test_limits_are_mean_plus_two_sd_with_counts_floored_at_one():
    draws = [_figures(100.0, 3, 2, 4), _figures(110.0, 3, 2, 4), _figures(120.0, 3, 2, 4)]
    err, absent, controls, identity = limits(draws)
    assert err.mean == pytest.approx(110.0) and err.sd == pytest.approx(10.0)
    assert err.bound == pytest.approx(130.0)  # not floored: an error is no count
    assert err.keeps(130.0) and not err.keeps(130.5)
    # draws that agree on a count do not make one more claim a failure: the sd is floored at 1
    assert absent.sd == 0.0 and absent.bound == pytest.approx(5.0)
    assert controls.keeps(4) and not controls.keeps(5)
    assert identity.bound == pytest.approx(2.0)  # higher is better: mean - 2 sd
    assert identity.keeps(2) and not identity.keeps(1)
    with pytest.raises(ValueError, match="two draws"):
        limits(draws[:1])


def _comp(key, truth, found=None):
    return {"key": key, "smiles": key, "truth": truth, "detected": found is not None, "mole_fraction": found,
            "upper_limit": None}


def _record(case_id, kind, comps, major=None):
    return {"id": case_id, "kind": kind, "field_mhz": 400.0, "error": None, "major": major,
            "major_key": major,
            "truth": {c["key"]: c["truth"] for c in comps if c["truth"] > 0}, "components": comps}


def _run(a_found, b_found, major="a"):
    return [
        _record("m1", "mixture", [_comp("a", 0.9, a_found), _comp("b", 0.1, b_found)], major=major),
        _record("k1", "control", [_comp("c", 0.0)]),
        _record("i1", "identity", [_comp("a", 1.0, 1.0), _comp("d", 0.0)], major="a"),
    ]


def test_reproducibility_counts_sets_majors_and_amounts_beyond_a_tenth_of_a_point():
    def by_id(run):
        return {r["id"]: r for r in run}

    base = by_id(_run(0.9, 0.1))
    assert reproducibility_changes(base, by_id(_run(0.9005, 0.0995))) == []  # 0.05 point: the same
    moved = reproducibility_changes(base, by_id(_run(0.898, 0.102)))
    assert [(k, s, m) for k, s, m, _ in moved] == [("m1", False, False)]
    assert moved[0][3] == pytest.approx(0.2)
    gone = reproducibility_changes(base, by_id(_run(1.0, None)))
    assert gone[0][:3] == ("m1", True, False) and gone[0][3] == pytest.approx(10.0)
    flipped = reproducibility_changes(base, by_id(_run(0.9, 0.1, major="b")))
    assert flipped[0][:3] == ("m1", False, True)


def _write(path, records, seed=6363):
    path.write_text(json.dumps({"half": "tune", "seed": seed, "records": records}))
    return str(path)


def test_command_line_reports_the_limits_and_whether_the_arm_keeps_them(tmp_path, capsys):
    draws = [_write(tmp_path / f"d{i}.json", _run(0.9 - 0.01 * i, 0.1 + 0.01 * i)) for i in range(3)]
    arm = _write(tmp_path / "arm.json", _run(0.5, 0.5))
    same = _write(tmp_path / "arm_p.json", _run(0.5, 0.5))
    assert main(["--base", *draws, "--arm", arm, "--arm-perturbed", same]) == 0
    out = capsys.readouterr().out
    assert "mixtures: summed |error| (points)" in out and "NOT kept" in out  # 80 points against 0-4
    assert "arm / arm perturbed: 0 cases changed" in out
    assert "draw 0 / draw 1: 1 cases changed" in out


def test_bad_input_gives_one_line_errors(tmp_path, capsys):
    one = _write(tmp_path / "d0.json", _run(0.9, 0.1))
    assert main(["--base", one]) == 2
    assert "at least two draws" in capsys.readouterr().err
    other = _write(tmp_path / "d1.json", _run(0.9, 0.1), seed=4242)
    assert main(["--base", one, other]) == 2
    assert "different samples" in capsys.readouterr().err
    fewer = _write(tmp_path / "d2.json", _run(0.9, 0.1)[:2])
    assert main(["--base", one, fewer]) == 2
    assert "same cases" in capsys.readouterr().err
    (tmp_path / "bad.json").write_text("{not json")
    assert main(["--base", one, str(tmp_path / "bad.json")]) == 2
    assert capsys.readouterr().err.startswith("error: ")
