"""Property-based tests of the measured-data readers through ``confirm process``.

Whatever the file (JCAMP-DX spectra and FIDs in every ASDF form, raw FID folders with their
parameter file, peak lists; well made, odd or damaged), ``confirm process`` exits 0 or 2 (one
line), never 3, never hangs, writes nothing outside its output folder and stays within a memory
bound. Inputs come from the builders of ``tests/confirm/robustness_corpus.py``; settings in
``tests/confirm/_fuzz.py``. Inputs that once broke a reader (exit 3 from parameter files with text
or zero, DUP counts past the declared size, implausible fields and units accepted, damaged lines
called 2D) are kept below as explicit cases.
"""

from __future__ import annotations

import random
import resource
import struct
import subprocess
import sys

import pytest
from hypothesis import given
from hypothesis import strategies as st

from tests.confirm._fuzz import FUZZ, check_case
from tests.confirm.robustness_corpus import (
    ACQUS_DEFAULTS,
    FORMS,
    Case,
    acqus_folder,
    fid_points,
    jcamp_fid,
    jcamp_spectrum,
    mutate,
    peak_list,
)

#: Memory bound of one ``process`` run on these small inputs (at most a few thousand points, zero
#: filled to at most 256k): the arrays take a few MB; 192 MB leaves room for the decoder's lists.
MEMORY_MB = 192
_PROCESS = ("process", "{dir}/in.jdx", "--out", "{out}/spectrum.csv", "--json")
_ODD = st.sampled_from(["0", "-1", "1e-4", "1e12", "abc", "nan", "", "60", "400.13", "1e-300", "(0..1)"])


def _lorentzians(n: int, rng: random.Random, scale: int) -> list[int]:
    centres = [rng.randrange(max(n, 1)) for _ in range(3)]
    return [int(sum(scale / (1 + ((k - c) / 3) ** 2) for c in centres) + rng.gauss(0, scale / 500))
            for k in range(n)]


@st.composite
def jcamp_spectra(draw) -> bytes:
    rng = random.Random(draw(st.integers(0, 2**32)))
    n = draw(st.sampled_from([0, 1, 7, 300, 600, 1024, 2049]))
    values = _lorentzians(n, rng, draw(st.sampled_from([0, 1, 1000, 10**6, 10**9])))
    data = jcamp_spectrum(values, form=draw(st.sampled_from(FORMS)),
                          npoints=draw(st.none() | st.sampled_from([0, 1, n - 1, n + 1, 2 * n, 10**5])),
                          observe_mhz=draw(st.one_of(st.sampled_from([60.0, 400.0, 600.0]), _ODD)),
                          xunits=draw(st.sampled_from(["HZ", "PPM", "SECONDS", "", "1/CM"])),
                          end=draw(st.booleans()))
    return _damaged(draw, data)


@st.composite
def jcamp_fids(draw) -> bytes:
    n = draw(st.sampled_from([0, 2, 64, 700, 2048]))
    real, imag = fid_points(n, seed=draw(st.integers(0, 1000)),
                            amplitude=draw(st.sampled_from([0.0, 1.0, 2e5, 2e9])))
    if draw(st.booleans()) and n:
        imag = imag[: draw(st.integers(0, n - 1))]  # a short imaginary page
    data = jcamp_fid(real, imag, form=draw(st.sampled_from(FORMS)),
                     npoints=draw(st.one_of(st.none(), st.sampled_from([1, n + 1, 2 * n]))),
                     observe_mhz=draw(st.one_of(st.sampled_from([60.0, 400.0]), _ODD)),
                     end=draw(st.booleans()))
    return _damaged(draw, data)


def _damaged(draw, data: bytes) -> bytes:
    rounds = draw(st.integers(0, 3))
    return mutate(data, random.Random(draw(st.integers(0, 2**32))), rounds=rounds) if rounds else data


@FUZZ
@given(jcamp_spectra())
def test_jcamp_spectra_in_every_form(data):
    check_case(Case("jcamp", "spectrum", (("in.jdx", data),), _PROCESS), memory_mb=MEMORY_MB)


@FUZZ
@given(jcamp_fids())
def test_jcamp_fids_in_every_form(data):
    check_case(Case("jcamp", "fid", (("in.jdx", data),), _PROCESS), memory_mb=MEMORY_MB)


@FUZZ
@given(st.binary(max_size=3000), st.sampled_from(["in.jdx", "in.dx", "in.csv", "in.txt", "in.bin"]))
def test_any_bytes_under_any_name(data, name):
    check_case(Case("bytes", name, ((name, data),), ("process", "{dir}/" + name, "--json")),
               memory_mb=MEMORY_MB)


@st.composite
def fid_folders(draw):
    n = draw(st.sampled_from([16, 64, 1000]))
    kind = draw(st.sampled_from(["good", "short", "random", "empty", "nan"]))
    real, imag = fid_points(n, seed=draw(st.integers(0, 100)))
    fid = b"".join(struct.pack("<ii", r, i) for r, i in zip(real, imag, strict=True))
    if kind == "short":
        fid = fid[: draw(st.integers(0, len(fid) - 1))]
    elif kind == "random":
        fid = draw(st.binary(min_size=8 * n, max_size=8 * n))
    elif kind == "empty":
        fid = b""
    elif kind == "nan":
        fid = struct.pack("<d", float("nan")) * (2 * n)
    params = {"TD": str(2 * n)} if kind != "nan" else {"TD": str(2 * n), "DTYPA": "2"}
    return acqus_folder(params, fid=fid, n_points=n)


@FUZZ
@given(fid_folders())
def test_fid_folders_with_sound_parameters_and_any_data(files):
    check_case(Case("acqus", "folder", tuple((f"exp/{n}", d) for n, d in files),
                    ("process", "{dir}/exp", "--out", "{out}/spectrum.csv", "--json")), memory_mb=MEMORY_MB)


@FUZZ
@given(st.dictionaries(st.sampled_from(sorted(ACQUS_DEFAULTS)), _ODD | st.text(max_size=6), max_size=3))
def test_fid_folders_with_any_parameter_values(params):
    files = acqus_folder(params, n_points=256)
    check_case(Case("acqus", "params", tuple((f"exp/{n}", d) for n, d in files),
                    ("process", "{dir}/exp", "--json")))


@st.composite
def peak_tables(draw) -> bytes:
    cell = st.one_of(st.floats(allow_nan=True, allow_infinity=True, width=32), st.integers(-10**6, 10**6),
                     st.text(alphabet="0123456789.,-+eE dmtsqJHz;", max_size=8))
    rows = draw(st.lists(st.lists(cell, min_size=0, max_size=6).map(tuple), max_size=15))
    header = draw(st.sampled_from([None, ("ppm", "intensity"), ("shift", "integral", "mult", "J"),
                                   ("ppm", "ppm"), ("delta",), ("x", "y")]))
    return peak_list(rows, header=header, delimiter=draw(st.sampled_from([",", ";", "\t", " "])))


@FUZZ
@given(peak_tables())
def test_peak_lists(data):
    check_case(Case("peaks", "peaks", (("peaks.csv", data),), ("process", "{dir}/peaks.csv", "--json")))


# --- inputs that once broke a reader, kept as explicit cases ------------------------------------------


def _fid_folder_case(params: dict[str, str]) -> Case:
    files = acqus_folder(params, n_points=1024)
    return Case("acqus", str(params), tuple((f"exp/{n}", d) for n, d in files),
                ("process", "{dir}/exp", "--json"))


@pytest.mark.parametrize("params", [
    {"TD": "abc"}, {"TD": "(0..1)\n1 2"}, {"SFO1": "x"}, {"SW_h": ""}, {"O1": "1 2 3"}, {"GRPDLY": "abc"},
    {"SW_h": "0"}, {"DTYPA": "x"}, {"BYTORDA": "abc"}, {"BF1": "x"}, {"NS": "abc"}, {"RG": "(0..1)\n1 2"},
], ids=lambda p: ",".join(f"{k}={v!r}" for k, v in p.items()))
def test_acqus_parameters_that_broke_the_reader(params):
    check_case(_fid_folder_case(params))


_IMPLAUSIBLE = {
    "acqus SFO1 0.001 MHz": _fid_folder_case({"SFO1": "0.001", "BF1": "0.001"}),
    "acqus SW_h 1e12 Hz": _fid_folder_case({"SW_h": "1e12"}),
    "JCAMP-DX observe frequency 1e-4 MHz": Case("jcamp", "obs", (("in.jdx", jcamp_spectrum(
        _lorentzians(2048, random.Random(1), 10**5), observe_mhz="1e-4")),), _PROCESS[:2] + ("--json",)),
    "JCAMP-DX XUNITS=PPM with Hz values": Case("jcamp", "ppm", (("in.jdx", jcamp_spectrum(
        _lorentzians(2048, random.Random(1), 10**5), xunits="PPM")),), _PROCESS[:2] + ("--json",)),
}


@pytest.mark.parametrize("name", sorted(_IMPLAUSIBLE))
def test_implausible_acquisition_parameters_are_refused_or_flagged(name):
    outcome = check_case(_IMPLAUSIBLE[name])
    if outcome.exit_code == 0:
        import json

        warnings = " ".join(json.loads(outcome.stdout)["warnings"]).lower()
        assert any(word in warnings for word in ("field", "frequency", "spectral width", "sweep", "unit")), \
            warnings


@pytest.mark.parametrize("form", FORMS)
def test_every_form_of_a_sound_file_reads(form):
    spectrum = jcamp_spectrum(_lorentzians(2048, random.Random(3), 10**5), form=form)
    outcome = check_case(Case("jcamp", form, (("in.jdx", spectrum),), _PROCESS), memory_mb=MEMORY_MB)
    assert outcome.exit_code == 0
    real, imag = fid_points(1024, seed=1)
    fid = jcamp_fid(real, imag, form=form)
    assert check_case(Case("jcamp", form, (("in.jdx", fid),), _PROCESS)).exit_code == 0


def _dup_bomb(*, declared: int, repeats: int, lines: int) -> bytes:
    """A tiny JCAMP-DX spectrum whose DUP counts expand far past the points it declares: each data
    line is one SQZ value ("A", 1) followed by a DUP count (JCAMP-DX 4.24: S-Z, s = 1-9)."""
    digits = str(repeats)
    count = "STUVWXYZs"[int(digits[0]) - 1] + digits[1:]
    header = ["##TITLE=dup bomb", "##JCAMP-DX=4.24", "##DATA TYPE=NMR SPECTRUM", "##XUNITS=HZ",
              "##YUNITS=ARBITRARY UNITS", "##.OBSERVE FREQUENCY=400", "##XFACTOR=1", "##YFACTOR=1",
              "##FIRSTX=4000", "##LASTX=-400", f"##NPOINTS={declared}", "##XYDATA=(X++(Y..Y))"]
    return ("\n".join(header + [f"{k}A{count}" for k in range(lines)] + ["##END="]) + "\n").encode()


def _run_limited(path, *, limit_mb: int, cpu_s: int = 3,
                 timeout_s: float = 60.0) -> subprocess.CompletedProcess:
    """``confirm process PATH`` in a child whose address space is capped at ``limit_mb`` and whose
    processor time at ``cpu_s`` (a refusal before decoding needs about one second, for the imports)."""

    def cap():
        resource.setrlimit(resource.RLIMIT_AS, (limit_mb * 2**20, limit_mb * 2**20))
        resource.setrlimit(resource.RLIMIT_CPU, (cpu_s, cpu_s))

    return subprocess.run([sys.executable, "-m", "confirm", "process", str(path)], capture_output=True,
                          text=True, timeout=timeout_s, preexec_fn=cap, check=False)


def test_dup_counts_past_the_declared_points_are_refused(tmp_path):
    path = tmp_path / "bomb.jdx"
    path.write_bytes(_dup_bomb(declared=32768, repeats=499_999, lines=2))  # 1.0 M points
    assert path.stat().st_size < 300
    result = _run_limited(path, limit_mb=1024)
    assert result.returncode == 2 and "declare" in result.stderr, (result.returncode, result.stderr[-300:])


def test_dup_counts_past_two_to_the_24_are_refused_within_bounded_memory(tmp_path):
    path = tmp_path / "bomb.jdx"
    path.write_bytes(_dup_bomb(declared=19_999_998, repeats=9_999_999, lines=2))  # 20 M points
    assert path.stat().st_size < 300
    result = _run_limited(path, limit_mb=1024)
    assert result.returncode == 2 and "2^24" in result.stderr.replace("16777216", "2^24"), \
        (result.returncode, result.stderr[-300:])


def test_a_damaged_data_line_is_not_called_two_dimensional():
    lines = jcamp_spectrum(_lorentzians(1024, random.Random(1), 10**5), form="SQZ").decode().split("\n")
    k = next(i for i, line in enumerate(lines) if line.startswith("##XYDATA")) + 3
    lines[k] = lines[k][:5] + "?" + lines[k][5:]
    outcome = check_case(Case("jcamp", "damaged", (("in.jdx", "\n".join(lines).encode()),), _PROCESS))
    assert outcome.exit_code == 2 and "2D" not in outcome.stderr, outcome.stderr
