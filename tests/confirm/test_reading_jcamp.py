"""JCAMP-DX reading: the decoder against nmrglue's, compound (LINK) files, page labels, the reverse
flag, the memory bound and one-line errors for broken or implausible files."""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from confirm.reading import RawFid, RawSpectrum, read_measurement
from confirm.reading.jcamp_decode import MAX_POINTS, decode_ordinates
from predictors.errors import FileFormatError
from tests.confirm._jcamp_text import fid_block, link_file, spectrum_block, structure_block
from tests.confirm.test_processing import CARRIER_PPM, FIELD_MHZ, SW_HZ, _multiplet_near, synthetic_fid

# ---------------------------------------------------------------------------
# the decoder against a different implementation (nmrglue's JCAMP-DX reader)
# ---------------------------------------------------------------------------


def _nmrglue_arrays(path):
    import nmrglue as ng

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _dic, data = ng.jcampdx.read(str(path))
    return [np.asarray(d) for d in data] if isinstance(data, list) else [np.asarray(data)]


@pytest.mark.real_data
def test_every_real_jcamp_file_decodes_like_nmrglue(real_spectra):
    paths = sorted(p for p in real_spectra.rglob("*") if p.suffix in (".dx", ".jdx"))
    assert len(paths) >= 20
    for path in paths:
        record = read_measurement(path)
        expected = _nmrglue_arrays(path)
        if isinstance(record, RawFid):
            assert np.array_equal(record.fid.real, expected[0]), path
            assert np.array_equal(record.fid.imag, expected[1]), path
        else:
            assert np.array_equal(np.sort(record.intensity), np.sort(expected[0])), path


@pytest.mark.parametrize("line, values", [
    ("0 1 2 3", [1, 2, 3]),                      # AFFN
    ("0 1+2-3", [1, 2, -3]),                     # PAC
    ("0 A B c @", [1, 2, -3, 0]),                # SQZ
    ("0 A12Lm", [112, 115, 111]),                # SQZ then DIF (+3, -4)
    ("0 A1T B2 U", [11, 11, 22, 22, 22]),        # DUP repeats the value before it
    ("0 A0JV", [10, 11, 12, 13, 14]),            # DUP of a difference repeats the difference
    ("0 1.5E2 -2.5e-1", [150.0, -0.25]),         # AFFN with exponents
])
def test_asdf_forms(line, values):
    # JCAMP-DX 4.24 ASDF forms (McDonald and Wilks, Appl. Spectrosc. 1988, 42, 151; memory)
    assert decode_ordinates([line], source="t").tolist() == values


def test_dif_y_check_value_is_dropped_and_verified():
    # after a line ending in DIF form the next line starts with the last value again (the Y check)
    with pytest.raises(FileFormatError, match="Y check value"):
        decode_ordinates(["0 A0JJ", "3 @J"], source="t")  # the check should repeat 12, not 0
    assert decode_ordinates(["0 A0JJ", "3 A2J"], source="t").tolist() == [10, 11, 12, 13]


# ---------------------------------------------------------------------------
# memory bound (issue 14): refused before anything is allocated
# ---------------------------------------------------------------------------


def _tiny_spectrum(body: str, npoints: int) -> str:
    return "\n".join(["##TITLE=t", "##JCAMP-DX=5.01", "##DATA TYPE=NMR SPECTRUM", "##XUNITS=HZ",
                      "##.OBSERVE FREQUENCY=400", "##FIRSTX=4000", "##LASTX=0", f"##NPOINTS={npoints}",
                      "##XYDATA=(X++(Y..Y))", body, "##END="]) + "\n"


def test_dup_bomb_is_refused_before_decoding(tmp_path):
    import tracemalloc

    path = tmp_path / "bomb.jdx"
    path.write_text(_tiny_spectrum("0 A" + "Z99999999" * 3, 32768))  # 90 M points from ~400 bytes
    assert path.stat().st_size < 500
    tracemalloc.start()
    with pytest.raises(FileFormatError, match="more than the 32768 points its header declares") as info:
        read_measurement(path)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert peak < 20e6 and "\n" not in str(info.value)


def test_more_points_than_declared_is_refused(tmp_path):
    path = tmp_path / "long.jdx"
    path.write_text(_tiny_spectrum("0 A" + "Z9999" * 100, 32768))  # 9 M points, 32768 declared
    with pytest.raises(FileFormatError, match="declares"):
        read_measurement(path)


def test_undeclared_table_is_bounded_at_2_24(tmp_path):
    text = _tiny_spectrum("0 A" + "Z99999999", 1).replace("##NPOINTS=1\n", "")
    path = tmp_path / "undeclared.jdx"
    path.write_text(text)
    with pytest.raises(FileFormatError, match=f"more than {MAX_POINTS} points"):
        read_measurement(path)


# ---------------------------------------------------------------------------
# FIDs: page labels, the reverse flag, compound files
# ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def fid():
    return synthetic_fid(n_points=8192)


def test_jcamp_fid_written_by_hand_reads_and_processes(tmp_path, fid):
    path = tmp_path / "fid.jdx"
    path.write_text(fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM) + "\n")
    raw = read_measurement(path)
    assert isinstance(raw, RawFid) and raw.frequency_sign == 1
    assert "pages as labelled" in raw.orientation_basis
    assert raw.parameters.carrier_ppm == pytest.approx(CARRIER_PPM, abs=1e-6)
    assert np.allclose(raw.fid / np.abs(raw.fid).max(), fid / np.abs(fid).max(), atol=2e-6)
    from confirm.processing import process_measurement

    result = process_measurement(raw)
    assert result.reference == "TMS at 0.00 ppm" and not any("mirror" in w for w in result.warnings)
    assert abs(_multiplet_near(result, 2.05).ppm - 2.05) < 0.002


def test_imaginary_page_first_reads_the_same(tmp_path, fid):
    a, b = tmp_path / "ri.jdx", tmp_path / "ir.jdx"
    a.write_text(fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM) + "\n")
    b.write_text(fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM,
                           imaginary_first=True) + "\n")
    assert np.array_equal(read_measurement(a).fid, read_measurement(b).fid)


def test_reverse_flag_sets_the_opposite_sign_convention(tmp_path, fid):
    # a benchtop FID stored with the opposite sign of the imaginary channel and ##$REVERSE= yes:
    # read by the flag it comes out right, with no warning (issue 15: it came out mirrored)
    path = tmp_path / "reverse.jdx"
    path.write_text(fid_block(np.conj(fid), field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM,
                              labels=("##$REVERSE= yes",)) + "\n")
    raw = read_measurement(path)
    assert raw.frequency_sign == -1 and "REVERSE" in raw.orientation_basis
    from confirm.processing import process_measurement

    result = process_measurement(raw)
    assert not any("mirror" in w for w in result.warnings)
    assert "confirmed by" in result.orientation
    for ppm in (6.05, 4.12, 2.05, 1.26):
        assert abs(_multiplet_near(result, ppm).ppm - ppm) < 0.002
    vinyl = _multiplet_near(result, 6.05)
    assert vinyl.multiplicity == "d" and vinyl.j_hz[0] == pytest.approx(15.6, abs=0.1)


def test_link_file_reads_the_1h_fid_block_and_names_the_others(tmp_path, fid):
    ppm = np.linspace(200.0, 0.0, 4096)
    carbon = spectrum_block(ppm, 1.0 / (1 + ((ppm - 77.16) / 0.05) ** 2), field_mhz=100.6, nucleus="13C",
                            title="13C")
    hppm = np.linspace(12.0, -1.0, 4096)
    proton = spectrum_block(hppm, 1.0 / (1 + ((hppm - 2.05) / 0.002) ** 2) + 1e-3, field_mhz=FIELD_MHZ)
    path = tmp_path / "compound.jdx"
    block = fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM)
    path.write_text(link_file(structure_block(), carbon, block, proton))
    raw = read_measurement(path)
    assert isinstance(raw, RawFid) and isinstance(raw.processed, RawSpectrum)
    note = " ".join(raw.notes)
    assert "read block 3 (NMR FID, 1H)" in note and "block 4 (NMR SPECTRUM, 1H) as its processed" in note
    assert "block 1 (CHEMICAL STRUCTURE)" in note and "block 2 (NMR SPECTRUM, 13C)" in note


def test_link_file_with_only_a_spectrum_and_a_2d_block(tmp_path):
    hppm = np.linspace(12.0, -1.0, 4096)
    proton = spectrum_block(hppm, 1.0 / (1 + ((hppm - 2.05) / 0.002) ** 2) + 1e-3, field_mhz=FIELD_MHZ)
    two_d = "\n".join(["##TITLE=cosy", "##JCAMP-DX=6.0", "##DATA TYPE=nD NMR SPECTRUM", "##NUM DIM=2",
                       "##END="])
    path = tmp_path / "compound.dx"
    path.write_text(link_file(two_d, proton))
    raw = read_measurement(path)
    assert isinstance(raw, RawSpectrum) and "not used: block 1 (ND NMR SPECTRUM" in raw.notes[0]
    only_2d = tmp_path / "only2d.dx"
    only_2d.write_text(link_file(two_d, structure_block()))
    with pytest.raises(FileFormatError, match="2D"):
        read_measurement(only_2d)


# ---------------------------------------------------------------------------
# one-line errors: decode failures name their cause (not "holds 2D data"), implausible values
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("body, message", [
    ("0 1 2 ! 4", "unexpected character '!'"),
    ("0 1 ? 3", "missing value"),
    ("0 J5 K2", "difference \\(DIF\\) with no value before it"),
    ("0 T", "DUP count with no value"),
    ("abc 1 2", "does not start with an abscissa"),
])
def test_decode_failures_say_what_is_wrong(tmp_path, body, message):
    path = tmp_path / "bad.jdx"
    path.write_text(_tiny_spectrum(body, 3))
    with pytest.raises(FileFormatError, match=message) as info:
        read_measurement(path)
    assert "2D" not in str(info.value)


@pytest.mark.parametrize("replace, message", [
    (("##.OBSERVE FREQUENCY=400", "##.OBSERVE FREQUENCY=0.0001"), "outside 40-1200 MHz"),
    (("##.OBSERVE FREQUENCY=400", "##.OBSERVE FREQUENCY=5000"), "outside 40-1200 MHz"),
    (("##XUNITS=HZ", "##XUNITS=PPM"), "Hz values labelled PPM"),
    (("##FIRSTX=4000", "##FIRSTX=4"), "ppm values labelled HZ"),
    (("##LASTX=0", "##LASTX=-1e7"), "a 1H spectral width is 1-100 ppm"),
    (("##LASTX=0", "##LASTX=0\n##.SHIFT REFERENCE=INTERNAL, CDCl3, 9000, 7.26"), "outside the axis"),
])
def test_implausible_spectra_are_refused(tmp_path, replace, message):
    text = _tiny_spectrum("0 " + " ".join(str(v) for v in range(4096)), 4096)
    path = tmp_path / "x.jdx"
    path.write_text(text.replace(*replace))
    with pytest.raises(FileFormatError, match=message):
        read_measurement(path)


def test_fid_of_1e_minus_300_is_refused(tmp_path, fid):
    text = fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM)
    text = text.replace("##FACTOR=1, 1, 1, 1", "##FACTOR=1, 1e-306, 1e-306, 1")
    path = tmp_path / "tiny.jdx"
    path.write_text(text + "\n")
    with pytest.raises(FileFormatError, match="not a digitised signal"):
        read_measurement(path)


def test_fid_spectral_width_of_1e12_is_refused(tmp_path, fid):
    text = fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=1e12, carrier_ppm=CARRIER_PPM)
    path = tmp_path / "wide.jdx"
    path.write_text(text + "\n")
    with pytest.raises(FileFormatError, match="a 1H spectral width is 1-100 ppm"):
        read_measurement(path)
