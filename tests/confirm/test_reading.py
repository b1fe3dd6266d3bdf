"""Readers: real files, files from other writers (nmrglue, hand-encoded JCAMP-DX), peak lists, bad input."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from confirm.processing import load_spectrum
from confirm.reading import PeakList, RawFid, RawSpectrum, read_measurement, write_jcamp_spectrum
from predictors.core import Spectrum
from predictors.errors import FileFormatError
from tests.confirm.test_processing import FIELD_MHZ, SW_HZ, synthetic_fid, write_fid_directory

# ---------------------------------------------------------------------------
# real files (values read from their own headers)
# ---------------------------------------------------------------------------


@pytest.mark.real_data
def test_real_jcamp_fid_parameters(real_spectra):
    raw = read_measurement(real_spectra / "butyl_acrylate" / "1h.fid.dx")
    assert isinstance(raw, RawFid) and raw.format == "jcamp-fid"
    p = raw.parameters
    assert p.field_mhz == pytest.approx(600.1337, abs=1e-4)
    assert (p.nucleus, p.solvent, p.n_scans, p.n_dimensions) == ("1H", "CDCl3", 32, 1)
    assert p.spectral_width_hz == pytest.approx(12376.24, abs=0.01)
    assert p.relaxation_delay_s == 2.0 and p.temperature_k == 300.0 and p.pulse_program
    assert raw.fid.size == 32768
    assert p.acquisition_time_s == pytest.approx(32768 / 12376.2376, rel=1e-4)
    # DECIM 16 / DSPFVS 12 digital filter: 71.625 points (nmrglue's filter table)
    assert raw.group_delay_points == pytest.approx(71.625)


@pytest.mark.real_data
def test_real_benchtop_fid_parameters(real_spectra):
    raw = read_measurement(real_spectra / "ibuprofen_60mhz" / "1h.fid.jdx")
    p = raw.parameters
    assert p.field_mhz == pytest.approx(60.124, abs=1e-3) and p.solvent == "CDCl3"
    assert p.carrier_ppm == pytest.approx(6.0, abs=1e-3)
    assert p.temperature_k == pytest.approx(33.0 + 273.15, abs=0.01)  # JCAMP-DX TEMPERATURE is in deg C
    assert raw.group_delay_points == 0.0 and raw.fid.size == 2048


@pytest.mark.real_data
def test_raw_directory_and_jcamp_copy_hold_the_same_fid(real_spectra):
    directory = read_measurement(real_spectra / "aspirin_300mhz_raw")
    jcamp = read_measurement(real_spectra / "aspirin" / "1h.fid.dx")
    assert directory.format == "fid-directory-acqus"
    assert directory.fid.size == jcamp.fid.size
    assert np.allclose(directory.fid, jcamp.fid)
    assert directory.group_delay_points == pytest.approx(jcamp.group_delay_points)
    assert directory.parameters.carrier_ppm == pytest.approx(jcamp.parameters.carrier_ppm, abs=1e-6)


@pytest.mark.real_data
def test_real_processed_spectrum_axis_from_shift_reference(real_spectra):
    spectrum = read_measurement(real_spectra / "butyl_acrylate" / "1h.dx")
    assert isinstance(spectrum, RawSpectrum)
    assert spectrum.ppm[0] == pytest.approx(16.39691)  # ##.SHIFT REFERENCE= INTERNAL, CDCl3, 1, 16.39691
    assert np.all(np.diff(spectrum.ppm) < 0) and spectrum.ppm.size == 32768


@pytest.mark.real_data
def test_real_folder_prefers_fid_and_attaches_processed(real_spectra):
    raw = read_measurement(real_spectra / "estragole")
    assert isinstance(raw, RawFid) and isinstance(raw.processed, RawSpectrum)


# ---------------------------------------------------------------------------
# JCAMP-DX writer and other writers' files
# ---------------------------------------------------------------------------

def _spectrum(n=1000) -> Spectrum:
    rng = np.random.default_rng(5)
    ppm = np.linspace(12.0, -1.0, n)
    intensity = 1e5 / (1 + ((ppm - 2.05) / 0.002) ** 2) + rng.normal(0, 3.3, n) + 1e-7
    return Spectrum(ppm=ppm, intensity=intensity, field_mhz=400.13, solvent="CDCl3",
                    metadata={"sha256": "0" * 64})


def test_jcamp_xydata_round_trip_is_identical(tmp_path):
    spectrum = _spectrum()
    path = write_jcamp_spectrum(spectrum, tmp_path / "out.jdx")
    back = read_measurement(path)
    assert isinstance(back, RawSpectrum) and back.format == "jcamp-spectrum"
    assert np.array_equal(back.intensity, spectrum.intensity)
    assert np.allclose(back.ppm, spectrum.ppm, rtol=0, atol=1e-12)
    assert back.parameters.field_mhz == 400.13 and back.parameters.solvent == "CDCl3"


def test_jcamp_writer_output_reads_in_nmrglue(tmp_path):
    import nmrglue as ng

    spectrum = _spectrum(300)
    path = write_jcamp_spectrum(spectrum, tmp_path / "out.dx")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        dic, data = ng.jcampdx.read(str(path))
    assert np.allclose(np.asarray(data), spectrum.intensity, rtol=1e-12)
    assert float(dic["NPOINTS"][0]) == 300
    assert not list(tmp_path.glob(".*tmp"))  # written through a temporary file


_SQZ = {0: "@", **{d: "ABCDEFGHI"[d - 1] for d in range(1, 10)},
        **{-d: "abcdefghi"[d - 1] for d in range(1, 10)}}
_DIF = {0: "%", **{d: "JKLMNOPQR"[d - 1] for d in range(1, 10)},
        **{-d: "jklmnopqr"[d - 1] for d in range(1, 10)}}


def _encode(value: int, table) -> str:
    digits = str(abs(value))
    return table[int(digits[0]) * (1 if value >= 0 else -1)] + digits[1:]


def _jcamp_text(values: list[int], form: str) -> str:
    """Encode integer Y values as XYDATA lines (JCAMP-DX 4.24 ASDF forms), 10 values a line, 10 Hz apart."""
    lines = []
    if form == "DIF":
        # each line ends with the first ordinate of the next line (the Y check value)
        for start in range(0, len(values) - 1, 10):
            chunk = values[start:start + 11]
            diffs = [b - a for a, b in zip(chunk[:-1], chunk[1:], strict=True)]
            lines.append(f"{start}" + _encode(chunk[0], _SQZ) + "".join(_encode(d, _DIF) for d in diffs))
    for start in range(0, len(values), 10) if form != "DIF" else ():
        chunk = values[start:start + 10]
        if form == "SQZ":
            body = "".join(_encode(v, _SQZ) for v in chunk)
        else:  # PAC
            body = "".join(f"{v:+d}" for v in chunk)
        lines.append(f"{start}{body}")
    header = ["##TITLE=hand encoded", "##JCAMP-DX=4.24", "##DATA TYPE=NMR SPECTRUM", "##XUNITS=HZ",
              "##YUNITS=ARBITRARY UNITS", "##.OBSERVE FREQUENCY=100.0", "##XFACTOR=1", "##YFACTOR=1",
              "##FIRSTX=0", f"##LASTX={10 * (len(values) - 1)}", f"##NPOINTS={len(values)}",
              "##XYDATA=(X++(Y..Y))"]
    return "\n".join(header + lines + ["##END="]) + "\n"


@pytest.mark.parametrize("form", ["SQZ", "DIF", "PAC"])
def test_compressed_jcamp_forms_read(tmp_path, form):
    values = [int(1000 * math.sin(k / 7.0)) - 3 * k for k in range(95)]
    path = tmp_path / f"{form}.jdx"
    path.write_text(_jcamp_text(values, form))
    spectrum = read_measurement(path)
    assert np.array_equal(spectrum.intensity[::-1], np.array(values, dtype=float))  # Hz axis ascending


def test_nmrglue_written_fid_directory_reads_back(tmp_path):
    fid = synthetic_fid(group_delay=71.625)
    raw = read_measurement(write_fid_directory(tmp_path / "exp", fid))
    assert raw.format == "fid-directory-acqus"
    assert raw.dwell_s == pytest.approx(1 / SW_HZ)
    assert raw.parameters.field_mhz == pytest.approx(FIELD_MHZ * (1 + 4e-6))
    assert raw.parameters.carrier_ppm == pytest.approx(4.0)
    assert raw.group_delay_points == pytest.approx(71.625)
    scale = np.max(np.abs(raw.fid)) / np.max(np.abs(fid))
    assert np.allclose(raw.fid / scale, fid, atol=1e-6 * np.max(np.abs(fid)))
    # a file inside the directory reads as the directory
    assert read_measurement(tmp_path / "exp" / "fid").sha256 == raw.sha256


def test_nmrglue_written_float_big_endian_directory(tmp_path):
    fid = synthetic_fid()
    raw = read_measurement(write_fid_directory(tmp_path / "f8", fid, bytorda=1, dtypa=2))
    assert np.allclose(raw.fid / np.max(np.abs(raw.fid)), fid / np.max(np.abs(fid)), atol=1e-9)


def test_procpar_directory_reads_and_processes(tmp_path):
    import nmrglue as ng

    fid = np.conj(synthetic_fid())  # opposite sign convention of the imaginary channel
    udic = ng.fileiobase.create_blank_udic(1)
    udic[0].update(size=fid.size, complex=True, sw=SW_HZ, obs=FIELD_MHZ, car=4.0 * FIELD_MHZ)
    dic = ng.varian.create_dic(udic)
    pp = dic["procpar"]
    for name, value in (("sfrq", FIELD_MHZ * (1 + 4e-6)), ("reffrq", FIELD_MHZ), ("sw", SW_HZ),
                        ("nt", 8), ("d1", 14.0), ("temp", 25.0), ("tn", "H1"), ("solvent", "cdcl3"),
                        ("seqfil", "onepulse")):
        pp[name] = ng.varian.create_pdic_param(name, [str(value)])
    folder = tmp_path / "exp.fid"
    ng.varian.write(str(folder), dic, (fid * 1e6).astype("complex64"), overwrite=True)
    raw = read_measurement(folder)
    assert raw.format == "fid-directory-procpar" and raw.frequency_sign == -1
    assert raw.parameters.temperature_k == pytest.approx(298.15)
    assert raw.parameters.carrier_ppm == pytest.approx(4.0, abs=1e-6)
    result = load_spectrum(folder)
    assert result.reference == "TMS at 0.00 ppm"
    assert any(abs(m.ppm - 2.05) < 0.002 for m in result.multiplets)


# ---------------------------------------------------------------------------
# peak lists
# ---------------------------------------------------------------------------

def test_csv_peak_list_with_header(tmp_path):
    path = tmp_path / "peaks.csv"
    path.write_text("Shift (ppm),Intensity,Integral,Multiplicity,J (Hz)\n"
                    "6.39,100,1.0,dd,17.3 1.4\n2.05,300,3.0,s,\n")
    peaks = read_measurement(path)
    assert isinstance(peaks, PeakList) and peaks.format == "peak-list"
    assert [e.ppm for e in peaks.entries] == [6.39, 2.05]
    assert peaks.entries[0].j_hz == (17.3, 1.4) and peaks.entries[0].multiplicity == "dd"
    assert peaks.entries[1].integral == 3.0


def test_whitespace_peak_list_without_header_and_decimal_comma(tmp_path):
    path = tmp_path / "peaks.txt"
    path.write_text("# exported peaks\n7,26  120\n2,05\t 300\n")
    peaks = read_measurement(path)
    assert [(e.ppm, e.intensity) for e in peaks.entries] == [(7.26, 120.0), (2.05, 300.0)]


def test_semicolon_peak_list_with_decimal_comma(tmp_path):
    path = tmp_path / "peaks.csv"
    path.write_text("ppm;height\n7,26;120,5\n1,56;30\n")
    peaks = read_measurement(path)
    assert peaks.entries[0].intensity == 120.5


def test_ambiguous_decimal_comma_rejected(tmp_path):
    path = tmp_path / "peaks.csv"
    path.write_text("ppm,intensity\n7,26,120\n")
    with pytest.raises(FileFormatError, match="decimal comma"):
        read_measurement(path)


def test_text_in_number_column_rejected(tmp_path):
    path = tmp_path / "peaks.tsv"
    path.write_text("ppm\tintensity\n7.26\t120\nabc\t5\n")
    with pytest.raises(FileFormatError, match=r"line 3, column ppm: 'abc'"):
        read_measurement(path)


# ---------------------------------------------------------------------------
# bad input
# ---------------------------------------------------------------------------

def test_missing_and_empty(tmp_path):
    with pytest.raises(FileFormatError, match="does not exist"):
        read_measurement(tmp_path / "nothing.dx")
    empty = tmp_path / "empty.dx"
    empty.write_text("")
    with pytest.raises(FileFormatError, match="empty"):
        read_measurement(empty)


def test_truncated_jcamp(tmp_path):
    path = write_jcamp_spectrum(_spectrum(), tmp_path / "full.jdx")
    text = path.read_text()
    cut = tmp_path / "cut.jdx"
    cut.write_text(text[: len(text) // 2])
    with pytest.raises(FileFormatError, match="truncated"):
        read_measurement(cut)


def test_two_dimensional_data_rejected(tmp_path):
    path = tmp_path / "2d.jdx"
    path.write_text("##TITLE=x\n##JCAMP-DX=6.0\n##DATA TYPE=nD NMR SPECTRUM\n##NUM DIM=2\n##END=\n")
    with pytest.raises(FileFormatError, match="2D"):
        read_measurement(path)
    folder = write_fid_directory(tmp_path / "exp2", synthetic_fid())
    (folder / "fid").rename(folder / "ser")
    with pytest.raises(FileFormatError, match="2D"):
        read_measurement(folder)


def test_truncated_fid_and_missing_files(tmp_path):
    folder = write_fid_directory(tmp_path / "exp", synthetic_fid())
    data = (folder / "fid").read_bytes()
    (folder / "fid").write_bytes(data[: len(data) // 3])
    with pytest.raises(FileFormatError, match="truncated"):
        read_measurement(folder)
    (folder / "fid").unlink()
    with pytest.raises(FileFormatError, match="'fid' is missing"):
        read_measurement(folder)
    other = write_fid_directory(tmp_path / "exp2", synthetic_fid())
    (other / "acqus").unlink()
    with pytest.raises(FileFormatError, match="parameter file"):
        read_measurement(other)


def test_wrong_byte_order_detected(tmp_path):
    folder = write_fid_directory(tmp_path / "exp", synthetic_fid(), bytorda=1)
    acqus = (folder / "acqus").read_text().replace("##$BYTORDA= 1", "##$BYTORDA= 0")
    (folder / "acqus").write_text(acqus)
    with pytest.raises(FileFormatError, match="byte order"):
        read_measurement(folder)


def test_nan_in_fid_rejected(tmp_path):
    fid = synthetic_fid()
    fid[100] = np.nan
    folder = write_fid_directory(tmp_path / "nan", fid, dtypa=2)
    with pytest.raises(FileFormatError, match="NaN"):
        read_measurement(folder)


def test_folder_with_nothing_nmr(tmp_path):
    (tmp_path / "notes.md").write_text("hello")
    (tmp_path / "image.png").write_bytes(b"\x89PNG\x00\x00")
    with pytest.raises(FileFormatError, match="no NMR data"):
        read_measurement(tmp_path)


def test_binary_junk_rejected(tmp_path):
    path = tmp_path / "junk.bin"
    path.write_bytes(bytes(range(256)) * 4)
    with pytest.raises(FileFormatError, match="not a recognised NMR format"):
        read_measurement(path)


def test_parameter_files_read_like_the_nmrglue_reference(real_spectra, tmp_path):
    # every parameter of the real acqus/procs (and of a written acqus with arrays and strings)
    # equals what nmrglue's Bruker JCAMP reader gives
    import nmrglue as ng

    from confirm.reading.parameters import read_parameter_file as _read_parameter_file

    written = tmp_path / "acqus"
    written.write_text("##TITLE= test\n##$TD= 64\n##$SW_h= 8012.8205128\n##$PULPROG= <zg30>\n"
                       "##$D= (0..3)\n0 1.5 2e-05\n0.1\n##$NUC1= <1H>\n##$AUNM= <au_zg>\n##END=\n",
                       encoding="latin-1")
    files = [written, real_spectra / "aspirin_300mhz_raw" / "acqus"]
    files += list((real_spectra / "aspirin_300mhz_raw" / "pdata").glob("*/procs"))
    for path in files:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            expected = {k: v for k, v in ng.bruker.read_jcamp(str(path), encoding="latin-1").items()
                        if not k.startswith("_")}
        assert _read_parameter_file(path) == expected, path
