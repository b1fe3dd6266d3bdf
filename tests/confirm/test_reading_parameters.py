"""Parameter files (acqus, procs) with text, arrays or zero where numbers belong: exit 2 with one
line naming the parameter, never a traceback (exit 3). Issue 14, deliver 5."""

from __future__ import annotations

import re

import numpy as np
import pytest

from confirm.reading import read_measurement
from predictors.errors import FileFormatError
from tests.confirm.test_processing import synthetic_fid, write_fid_directory

_TEXT, _ARRAY, _ZERO, _BAD = "abc", "(0..3)\n1 2 3 4", "0", "7"

ACQUS_CASES = [(key, value) for key in ("TD", "SW_h", "SFO1", "NS", "RG") for value in (_TEXT, _ARRAY, _ZERO)]
ACQUS_CASES += [("O1", _TEXT), ("O1", _ARRAY), ("GRPDLY", _TEXT), ("GRPDLY", _ARRAY)]
ACQUS_CASES += [(key, value) for key in ("DTYPA", "BYTORDA") for value in (_TEXT, _ARRAY, _BAD)]
PROCS_CASES = [(key, value) for key in ("SF", "SI") for value in (_TEXT, _ARRAY, _ZERO)]


@pytest.fixture(scope="module")
def template(tmp_path_factory):
    folder = write_fid_directory(tmp_path_factory.mktemp("par") / "exp", synthetic_fid(n_points=2048))
    return folder


def _copy_with(template, target, *, acqus=None, procs=None):
    import shutil

    shutil.copytree(template, target)
    if acqus is not None:
        key, value = acqus
        path = target / "acqus"
        text = path.read_text(encoding="latin-1")
        text, count = re.subn(rf"^##\$({re.escape(key)})=.*$", lambda m: f"##${m.group(1)}= {value}", text,
                              flags=re.M)
        assert count == 1, key
        path.write_text(text, encoding="latin-1")
    if procs is not None:
        key, value = procs
        pdata = target / "pdata" / "1"
        pdata.mkdir(parents=True)
        entries = {"SF": "400.13", "SI": "4096", "SW_p": "6009.6", "OFFSET": "11.5", "BYTORDP": "0",
                   "DTYPP": "0"}
        entries[key] = value
        body = "\n".join(f"##${k}= {v}" for k, v in entries.items())
        (pdata / "procs").write_text(f"##TITLE= processing parameters\n{body}\n##END=\n", encoding="latin-1")
        np.zeros(4096, dtype="<i4").tofile(pdata / "1r")
    return target


@pytest.mark.parametrize("key, value", ACQUS_CASES)
def test_bad_acqus_values_exit_2_with_one_line(run_cli, template, tmp_path, key, value):
    folder = _copy_with(template, tmp_path / "exp", acqus=(key, value))
    with pytest.raises(FileFormatError, match=re.escape(key)):
        read_measurement(folder)
    result = run_cli("process", folder)
    assert result.exit_code == 2, result.stderr
    assert result.stderr.startswith("error: ") and len(result.stderr.strip().splitlines()) == 1
    assert key in result.stderr


@pytest.mark.parametrize("key, value", PROCS_CASES)
def test_bad_procs_values_exit_2_with_one_line(run_cli, template, tmp_path, key, value):
    folder = _copy_with(template, tmp_path / "exp", procs=(key, value))
    result = run_cli("process", folder)
    assert result.exit_code == 2, result.stderr
    assert len(result.stderr.strip().splitlines()) == 1 and key in result.stderr


def test_good_values_still_read(template, tmp_path):
    # zero is a valid carrier offset, int32 little-endian a valid data type: these must not be refused
    folder = _copy_with(template, tmp_path / "exp", acqus=("O1", "0"))
    assert read_measurement(folder).parameters.carrier_ppm == 0.0
    folder = _copy_with(template, tmp_path / "exp2", procs=("SI", "4096"))
    assert read_measurement(folder).processed is not None


@pytest.mark.parametrize("key, value, message", [
    ("SFO1", "0.001", "outside 40-1200 MHz"),       # would put lines at 500,000 ppm
    ("SW_h", "1000000000000", "1-100 ppm"),
    ("SW_h", "100", "1-100 ppm"),
])
def test_implausible_acquisition_refused(template, tmp_path, key, value, message):
    folder = _copy_with(template, tmp_path / "exp", acqus=(key, value))
    with pytest.raises(FileFormatError, match=message):
        read_measurement(folder)


def test_fid_of_1e_minus_300_in_a_directory_is_refused(tmp_path):
    # issue 14: a FID of 1e-300 gave an SNR of 57,000,000; no digitiser produces such numbers
    import nmrglue as ng

    from tests.confirm.test_processing import acqus_dict

    fid = synthetic_fid(n_points=2048) * 1e-300
    params = acqus_dict(fid.size, dtypa=2)
    folder = tmp_path / "tiny"
    folder.mkdir()
    ng.bruker.write(str(folder), {"acqus": params}, fid, overwrite=True, write_prog=False)
    with pytest.raises(FileFormatError, match="not a digitised signal"):
        read_measurement(folder)
