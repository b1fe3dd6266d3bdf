"""Text tables: peak lists with multiplicity and J columns, dense spectra written as CSV (the
``confirm process --out`` round trip), and a --field-mhz that contradicts the file."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest

from confirm.processing import ProcessingOptions, load_spectrum, process_measurement
from confirm.reading import PeakList, RawSpectrum, read_measurement
from confirm.reading.tables import parse_couplings
from predictors.errors import FileFormatError, InputError
from tests.confirm.test_processing import synthetic_fid, write_fid_directory

# ---------------------------------------------------------------------------
# coupling constants as journals and programs write them
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("cell, expected", [
    ("15.6, 6.9", [15.6, 6.9]), ("15.6/6.9", [15.6, 6.9]), ("15.6 6.9", [15.6, 6.9]),
    ("15.6; 6.9", [15.6, 6.9]), ("15.6 | 6.9", [15.6, 6.9]), ("J = 15.6, 6.9 Hz", [15.6, 6.9]),
    ("3J = 7.1 Hz", [7.1]), ("17.3,10.4,1.4", [17.3, 10.4, 1.4]), ("", []),
])
def test_coupling_lists(cell, expected):
    assert parse_couplings(cell) == expected


def test_coupling_lists_with_decimal_commas():
    assert parse_couplings("15,6; 6,9", decimal_comma=True) == [15.6, 6.9]
    assert parse_couplings("15,6, 6,9", decimal_comma=True) == [15.6, 6.9]


@pytest.mark.parametrize("cell, separator", [("15.6 & 6.9", "'&'"), ("15.6 + 6.9", "'+'"),
                                             ("15.6x6.9", "'x'")])
def test_unknown_separators_are_named(cell, separator):
    with pytest.raises(FileFormatError, match=re.escape(f"{separator} is not a coupling constant")) as info:
        parse_couplings(cell, where="peaks.csv: line 2, column j_hz")
    assert "'15.6, 6.9'" in str(info.value)  # says what is accepted


def test_peak_list_keeps_multiplicity_and_journal_style_j(tmp_path):
    path = tmp_path / "peaks.csv"
    path.write_text('ppm,integral,multiplicity,J (Hz)\n6.96,1,dq,"15.6, 6.9"\n5.84,1,dq,15.6/1.7\n'
                    "3.73,3,s,\n1.88,3,dd,6.9 1.7\n")
    peaks = read_measurement(path)
    assert isinstance(peaks, PeakList)
    assert [e.j_hz for e in peaks.entries] == [(15.6, 6.9), (15.6, 1.7), (), (6.9, 1.7)]
    assert [e.multiplicity for e in peaks.entries] == ["dq", "dq", "s", "dd"]


def test_peak_list_with_a_bad_j_cell_names_line_and_separator(tmp_path):
    path = tmp_path / "peaks.tsv"
    path.write_text("ppm\tintegral\tJ\n6.96\t1\t15.6 & 6.9\n")
    with pytest.raises(FileFormatError, match=r"line 2, column j_hz: '15.6 & 6.9': '&'"):
        read_measurement(path)


# ---------------------------------------------------------------------------
# dense spectra: a table of evenly spaced points is a spectrum, not a 60,000-line peak list
# ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def processed_csv(tmp_path_factory):
    from confirm.cli import main

    folder = write_fid_directory(tmp_path_factory.mktemp("csv") / "exp", synthetic_fid(group_delay=71.625))
    out = folder.parent / "spectrum.csv"
    assert main(["process", str(folder), "--out", str(out)]) == 0
    return folder, out


def test_process_out_csv_reads_back_as_a_spectrum(processed_csv):
    folder, out = processed_csv
    raw = read_measurement(out)
    assert isinstance(raw, RawSpectrum) and raw.format == "csv-spectrum"
    assert raw.parameters.field_mhz == pytest.approx(400.13 * (1 + 4e-6))
    assert raw.parameters.solvent == "CDCl3" and raw.parameters.nucleus == "1H"
    again = process_measurement(raw)
    first = load_spectrum(folder)
    for ppm in (6.05, 4.12, 2.05, 1.26):
        a = min(first.multiplets, key=lambda m: abs(m.ppm - ppm))
        b = min(again.multiplets, key=lambda m: abs(m.ppm - ppm))
        assert abs(a.ppm - b.ppm) < 0.001 and a.multiplicity == b.multiplicity


def test_dense_table_without_field_needs_one(tmp_path):
    ppm = np.linspace(10, 0, 2000)
    path = tmp_path / "dense.csv"
    path.write_text("ppm,intensity\n" + "\n".join(f"{float(p)!r},{float(np.exp(-((p - 2) / 0.01) ** 2))!r}"
                                                   for p in ppm))
    raw = read_measurement(path)
    assert isinstance(raw, RawSpectrum)
    with pytest.raises(InputError, match="field-mhz"):
        process_measurement(raw)
    assert process_measurement(raw, options=ProcessingOptions(field_mhz=400.0)).spectrum.field_mhz == 400.0


def test_short_or_uneven_tables_stay_peak_lists(tmp_path):
    path = tmp_path / "peaks.csv"
    rows = [f"{7.0 - 0.01 * k - 0.002 * (k % 3)},{k}" for k in range(300)]  # 300 rows, not evenly spaced
    path.write_text("ppm,intensity\n" + "\n".join(rows))
    assert isinstance(read_measurement(path), PeakList)


def test_analyze_reads_the_csv_as_a_spectrum(run_cli, processed_csv):
    # issue 15: the CSV fed back to analyze was read as a 63,571-line peak list
    _, out = processed_csv
    result = run_cli("process", out, "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["format"] == "csv-spectrum" and data["field_mhz"] == pytest.approx(400.13, abs=0.01)


# ---------------------------------------------------------------------------
# --field-mhz that contradicts the file
# ---------------------------------------------------------------------------

def test_contradicting_field_is_an_error_unless_forced(run_cli, processed_csv):
    folder, _ = processed_csv
    result = run_cli("process", folder, "--field-mhz", "60")
    assert result.exit_code == 2 and len(result.stderr.strip().splitlines()) == 1
    assert "60 MHz was given" in result.stderr and "400.1 MHz" in result.stderr
    assert "--force-field" in result.stderr
    assert run_cli("process", folder, "--field-mhz", "400").exit_code == 0  # within 2 %: the same field
    forced = run_cli("process", folder, "--field-mhz", "60", "--force-field", "--json")
    assert forced.exit_code == 0
    data = json.loads(forced.stdout)
    assert data["field_mhz"] == 60.0 and any("forced" in w for w in data["warnings"])


def test_analyze_refuses_a_contradicting_field(run_cli, processed_csv):
    folder, _ = processed_csv
    result = run_cli("analyze", "--spectrum", folder, "--field-mhz", "60", "--candidates", "C/C=C/C(=O)OC")
    assert result.exit_code == 2 and "--force-field" in result.stderr and "400.1 MHz" in result.stderr


@pytest.mark.real_data
def test_field_of_a_60_mhz_file_cannot_be_overridden_to_400(run_cli, real_spectra):
    # issue 15: --field-mhz 400 on a 60 MHz JCAMP-DX file was accepted and named the wrong isomer
    result = run_cli("process", real_spectra / "ibuprofen_60mhz" / "1h.fid.jdx", "--field-mhz", "400")
    assert result.exit_code == 2 and "400 MHz was given" in result.stderr and "60.12 MHz" in result.stderr
