"""``confirm process``: output, JSON contract, files written atomically, one-line errors."""

from __future__ import annotations

import json

import numpy as np
import pytest

from tests.confirm.test_processing import synthetic_fid, write_fid_directory


@pytest.fixture(scope="module")
def fid_dir(tmp_path_factory):
    return write_fid_directory(tmp_path_factory.mktemp("cli") / "exp1",
                               synthetic_fid(phase_deg=20.0, group_delay=71.625, shift_ppm=0.03))


def _assert_bad_input(result):
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ")
    assert len(result.stderr.strip().splitlines()) == 1
    assert "Traceback" not in result.stderr


def test_json_contract(run_cli, fid_dir):
    result = run_cli("process", fid_dir, "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    for key in ("field_mhz", "nucleus", "solvent", "snr", "peaks", "multiplets", "warnings"):
        assert key in data
    assert data["nucleus"] == "1H" and data["solvent"] == "CDCl3"
    assert {"ppm", "height", "integral"} <= set(data["peaks"][0])
    assert {"ppm", "integral", "j_hz"} <= set(data["multiplets"][0])
    quartet = [m for m in data["multiplets"] if abs(m["ppm"] - 4.12) < 0.002]
    assert quartet and quartet[0]["j_hz"] == pytest.approx([7.1], abs=0.1)
    assert "snr_definition" in data and data["reference"] == "TMS at 0.00 ppm"


def test_text_output_and_files(run_cli, fid_dir, tmp_path):
    out, plot = tmp_path / "s.csv", tmp_path / "s.png"
    result = run_cli("process", fid_dir, "--out", out, "--plot", plot)
    assert result.exit_code == 0, result.stderr
    assert "TMS at 0.00 ppm" in result.stdout and "q" in result.stdout
    table = np.loadtxt(out, delimiter=",", skiprows=2)  # a comment line with the field, then the header
    assert table.shape[1] == 2 and np.all(np.diff(table[:, 0]) < 0)
    assert plot.read_bytes()[:4] == b"\x89PNG"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.csv", "s.png"]  # no temporary leftovers


def test_peak_list_is_printed(run_cli, tmp_path):
    table = tmp_path / "peaks.csv"
    table.write_text("ppm,intensity,multiplicity,J\n6.39,100,dd,17.3 1.4\n2.05,300,s,\n")
    result = run_cli("process", table, "--json")
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert [p["ppm"] for p in data["peaks"]] == [6.39, 2.05]
    assert data["multiplets"][0]["j_hz"] == [17.3, 1.4]
    text = run_cli("process", table)
    assert "6.3900" in text.stdout
    _assert_bad_input(run_cli("process", table, "--out", tmp_path / "x.csv"))
    assert not (tmp_path / "x.csv").exists()


@pytest.mark.parametrize("case", ["missing", "empty", "text_in_number", "two_d", "nan", "nothing_nmr",
                                  "no_parameters", "truncated", "bad_option"])
def test_bad_input_one_line_exit_2_no_output(run_cli, tmp_path, case):
    target = tmp_path / "in"
    if case == "empty":
        target = tmp_path / "empty.jdx"
        target.write_text("")
    elif case == "text_in_number":
        target = tmp_path / "peaks.csv"
        target.write_text("ppm,intensity\n7.26,1\nseven,2\n")
    elif case == "two_d":
        target = tmp_path / "2d.dx"
        target.write_text("##TITLE=t\n##JCAMP-DX=6.0\n##DATA TYPE=nD NMR FID\n##NUM DIM=2\n##END=\n")
    elif case == "nan":
        fid = synthetic_fid()
        fid[7] = np.nan
        target = write_fid_directory(tmp_path / "nan", fid, dtypa=2)
    elif case == "nothing_nmr":
        target.mkdir()
        (target / "readme.md").write_text("no data here")
    elif case == "no_parameters":
        target = write_fid_directory(tmp_path / "nopar", synthetic_fid())
        (target / "acqus").unlink()
    elif case == "truncated":
        target = write_fid_directory(tmp_path / "trunc", synthetic_fid())
        (target / "fid").write_bytes((target / "fid").read_bytes()[:1000])
    out = tmp_path / "out.csv"
    args = ["process", target, "--out", out]
    if case == "bad_option":
        target = write_fid_directory(tmp_path / "ok", synthetic_fid())
        args = ["process", target, "--out", out, "--lb-hz", "-3"]
    _assert_bad_input(run_cli(*args))
    assert not out.exists()


def test_bad_plot_name(run_cli, fid_dir, tmp_path):
    _assert_bad_input(run_cli("process", fid_dir, "--plot", tmp_path / "plot.csv"))


@pytest.mark.real_data
def test_real_butyl_acrylate_json(run_cli, real_spectra):
    result = run_cli("process", real_spectra / "butyl_acrylate" / "1h.fid.dx", "--json")
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert data["field_mhz"] == pytest.approx(600.13, abs=0.01)
    dd = [m for m in data["multiplets"] if abs(m["ppm"] - 6.11) < 0.02]
    assert dd and dd[0]["j_hz"] == pytest.approx([17.3, 10.4], abs=0.3)
    assert any("repetition time" in w for w in data["warnings"])


def test_integrate_ranges_gives_areas_shares_and_proton_counts():
    import numpy as np

    from confirm.commands.process import integrate_ranges
    from predictors.core import Spectrum

    ppm = np.linspace(10.0, 0.0, 20001)
    lorentz = lambda x0, area, w=0.002: area * (w / np.pi) / ((ppm - x0) ** 2 + w**2)  # noqa: E731
    spectrum = Spectrum(ppm=ppm, intensity=lorentz(6.0, 1.0) + lorentz(2.0, 3.0), field_mhz=400.0)
    (a, b) = integrate_ranges(spectrum, [(6.5, 5.5), (2.5, 1.5)], protons=4)
    assert a[4] == pytest.approx(1.0, rel=0.02) and b[4] == pytest.approx(3.0, rel=0.02)
    assert a[3] + b[3] == pytest.approx(100.0)


@pytest.mark.parametrize("text", ["6.5", "6.5-6.5", "a-b", "6-5,"])
def test_bad_ranges_exit_2_with_the_form_expected(run_cli, text):
    from confirm.commands.demo import sample_files

    result = run_cli("process", str(sample_files()[1]), "--integrate", text)
    assert result.exit_code == 2 and "--integrate" in result.stderr and "Traceback" not in result.stderr


def test_process_integrates_user_ranges(run_cli):
    import json

    from confirm.commands.demo import sample_files

    out = run_cli("process", str(sample_files()[0]), "--integrate", "6.15-6.05,1.92-1.82", "--json")
    assert out.exit_code == 0, out.stderr
    integrals = json.loads(out.stdout)["integrals"]
    assert [(i["high_ppm"], i["low_ppm"]) for i in integrals] == [(6.15, 6.05), (1.92, 1.82)]
    assert sum(i["percent"] for i in integrals) == pytest.approx(100.0)


def test_line_list_alone_is_one_journal_line(run_cli):
    from confirm.commands.demo import sample_files

    out = run_cli("process", str(sample_files()[0]), "--line-list", "--protons", "12")
    assert out.exit_code == 0, out.stderr
    lines = out.stdout.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("1H NMR (400 MHz, CDCl3) δ") and lines[0].endswith(".")
