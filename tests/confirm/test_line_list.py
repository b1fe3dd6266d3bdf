"""The journal-style line list of measured multiplets."""

from __future__ import annotations

from types import SimpleNamespace

from confirm.line_list import journal_line


def _m(ppm, mult, j, integral, half=0.02):
    return SimpleNamespace(ppm=ppm, start_ppm=ppm + half, stop_ppm=ppm - half, multiplicity=mult,
                           j_hz=j, integral=integral)


def test_line_list_of_a_pure_compound_in_journal_style():
    # ethyl (E)-crotonate written as experimental sections write it (ACS style: shift, multiplicity,
    # J largest first, nH; common practice); the TMS line is left out
    multiplets = [_m(1.28, "t", [7.1], 3.0), _m(4.18, "q", [7.1], 2.0), _m(6.97, "dq", [6.9, 15.6], 1.02),
                  _m(5.84, "dq", [15.6, 1.7], 0.97), _m(1.88, "dd", [6.9, 1.7], 3.05), _m(0.0, "s", [], 0.4),
                  _m(7.30, "m", [], 1.0, half=0.1)]
    line = journal_line(multiplets, field_mhz=400.13, solvent="CDCl3", protons=15, exclude_ppm=(0.0,))
    assert line == ("1H NMR (400 MHz, CDCl3) δ 7.40–7.20 (m, 1.4H), 6.97 (dq, J = 15.6, 6.9 Hz, 1.4H), "
                    "5.84 (dq, J = 15.6, 1.7 Hz, 1.3H), 4.18 (q, J = 7.1 Hz, 2.7H), "
                    "1.88 (dd, J = 6.9, 1.7 Hz, 4H), 1.28 (t, J = 7.1 Hz, 4H).")
    whole = journal_line(multiplets[:5], field_mhz=400.13, solvent="CDCl3", protons=10)
    assert whole == ("1H NMR (400 MHz, CDCl3) δ 6.97 (dq, J = 15.6, 6.9 Hz, 1H), "
                     "5.84 (dq, J = 15.6, 1.7 Hz, 1H), 4.18 (q, J = 7.1 Hz, 2H), "
                     "1.88 (dd, J = 6.9, 1.7 Hz, 3H), 1.28 (t, J = 7.1 Hz, 3H).")
    relative = journal_line(multiplets[:2], field_mhz=60.0, solvent=None)
    assert relative == ("1H NMR (60 MHz, solvent not recorded) δ 4.18 (q, J = 7.1 Hz, 40.0 %), "
                        "1.28 (t, J = 7.1 Hz, 60.0 %).")


def test_process_prints_the_line_list(run_cli):
    from pathlib import Path

    fid = Path(__file__).resolve().parents[2] / "sample_spectra" / "anisyl_elimination_400mhz"
    result = run_cli("process", str(fid), "--protons", "12")
    assert result.exit_code == 0, result.stderr
    assert "line list: 1H NMR (400 MHz, CDCl3) δ" in result.stdout and "(d, J = 6.6 Hz" in result.stdout
    bad = run_cli("process", str(fid), "--protons", "0")
    assert bad.exit_code == 2 and "--protons" in bad.stderr
