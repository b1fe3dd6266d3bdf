"""``confirm trend``: a specification's lots over time, read back from their audit records."""

from __future__ import annotations

import csv
import json

import pytest

from confirm.qc import SignOff, audit_record, parse_spec, run_qc, write_json_atomic
from confirm.trend import find_lots
from predictors.errors import InputError
from tests.confirm._synthetic_results import pentene_mixture

SPEC = {"name": "Lot release (E)-pent-2-ene", "product": "C/C=C/CC", "candidates": ["C/C=C\\CC", "C=CCCC"],
        "limits": {"min_isomeric_purity_percent": 98.0, "max_other_isomer_percent": 2.0}}

#: (lot, time, E, Z): two clean lots and one with 4 % Z isomer
LOTS = [("L-03", "2026-11-30T09:00:00+00:00", 0.996, 0.002),
        ("L-01", "2026-11-28T09:00:00+00:00", 0.997, 0.001),
        ("L-02", "2026-11-29T09:00:00+00:00", 0.96, 0.04)]


def _write_lots(folder, spec_table=SPEC, lots=LOTS):
    spec = parse_spec(spec_table)
    for lot, time, e, z in lots:
        result = pentene_mixture(e, z, 0.0, 0.0, sds=(0.002, 0.002, 0.001, 0.001))
        _, qc = run_qc(spec, f"{lot}.jdx", analyze=lambda path, result=result, **kw: result,
                       signoff=SignOff(lot=lot))
        (folder / lot).mkdir(parents=True)
        write_json_atomic(audit_record(result, qc, timestamp=time, user="qc"), folder / lot / "audit.json")


def test_lots_come_back_in_time_order_with_their_checks(tmp_path, run_cli):
    _write_lots(tmp_path / "audits")
    (tmp_path / "audits" / "notes.json").write_text('{"not": "an audit record"}')
    lots = find_lots(tmp_path / "audits")
    assert [r.lot for r in lots] == ["L-01", "L-02", "L-03"]
    assert [r.status for r in lots] == ["PASS", "FAIL", "PASS"]
    out = tmp_path / "out"
    out.mkdir()
    result = run_cli("trend", tmp_path / "audits", "--csv", out / "trend.csv", "--plot", out / "trend.png")
    assert result.exit_code == 0, result.stderr
    assert "3 lots, 2 PASS, 1 FAIL" in result.stdout
    assert max(len(line) for line in result.stdout.splitlines()) <= 100
    rows = list(csv.DictReader((out / "trend.csv").open(newline="")))
    assert {r["lot"] for r in rows} == {"L-01", "L-02", "L-03"}
    z_rows = [r for r in rows if r["lot"] == "L-02" and r["check_status"] == "FAIL"]
    assert z_rows and all(float(r["high_95"]) >= float(r["low_95"]) for r in z_rows)
    assert (out / "trend.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    data = json.loads(run_cli("trend", tmp_path / "audits", "--json").stdout)
    assert [lot["lot"] for lot in data["lots"]] == ["L-01", "L-02", "L-03"]


def test_two_specifications_need_a_choice(tmp_path, run_cli):
    _write_lots(tmp_path / "a")
    other = dict(SPEC, name="Lot release, tighter")
    _write_lots(tmp_path / "a" / "tight", other, [("T-01", "2026-12-01T09:00:00+00:00", 0.999, 0.001)])
    with pytest.raises(InputError, match="2 specifications"):
        find_lots(tmp_path / "a")
    assert [r.lot for r in find_lots(tmp_path / "a", spec="Lot release, tighter")] == ["T-01"]
    result = run_cli("trend", tmp_path / "a")
    assert result.exit_code == 2 and "--spec" in result.stderr and "Traceback" not in result.stderr


def test_a_folder_without_records_exits_2(tmp_path, run_cli):
    result = run_cli("trend", tmp_path)
    assert result.exit_code == 2 and "no QC audit record" in result.stderr
    assert run_cli("trend", tmp_path / "absent").exit_code == 2
