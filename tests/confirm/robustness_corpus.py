"""Generated inputs for the robustness checks: every kind of file confirm reads, well and badly made.

Builders write small JCAMP-DX files (spectra and FIDs, in every ASDF compression form: AFFN,
PAC, SQZ, DIF, DUP), raw FID folders with their parameter file, peak lists, QC specifications,
batch manifests and SMILES. ``mutate`` damages any of them the way a careless or hostile user
would (truncation, bytes flipped or inserted, lines repeated, numbers swapped for text or
extremes). The Hypothesis tests (``tests/confirm/test_fuzz_*.py``) draw their inputs through
these builders; ``benchmarks/robustness.py`` runs a fixed, seeded corpus made by :func:`corpus`.
Nothing here is stored as a binary: every input is generated.
"""

from __future__ import annotations

import math
import random
import struct
from dataclasses import dataclass

__all__ = ["Case", "FORMS", "encode_xydata", "jcamp_spectrum", "jcamp_fid", "acqus_folder", "peak_list",
           "spec_toml", "manifest_csv", "mutate", "corpus", "output_cases", "run_case", "SMILES_PIECES"]

#: ASDF forms of JCAMP-DX 4.24 (section 5.9) the builders can write.
FORMS = ("AFFN", "PAC", "SQZ", "DIF", "SQZ+DUP", "DIF+DUP")
_SQZ = {0: "@", **{d: "ABCDEFGHI"[d - 1] for d in range(1, 10)},
        **{-d: "abcdefghi"[d - 1] for d in range(1, 10)}}
_DIF = {0: "%", **{d: "JKLMNOPQR"[d - 1] for d in range(1, 10)},
        **{-d: "jklmnopqr"[d - 1] for d in range(1, 10)}}
_DUP = {d: "STUVWXYZs"[d - 1] for d in range(1, 10)}
#: Pieces a random SMILES is built from (valid and invalid).
SMILES_PIECES = ("C", "C", "C", "c1ccccc1", "O", "N", "Br", "Cl", "=", "#", "(", ")", "1", "/", "\\", "[Na+]",
                 ".", " ", "[C@@H]", "[2H]", "C(=O)", "x", "%", "\t", "é")


@dataclass(frozen=True)
class Case:
    """One generated input: files to write (relative path -> bytes) and the command line to run.

    ``argv`` may hold ``{dir}`` (the folder the files are written into) and ``{out}`` (a folder for
    outputs, inside ``{dir}``); nothing may be written outside ``{out}``. ``links`` are made after
    the files, ``name -> target`` (a target inside the case folder; a target left out of ``files``
    makes a link to nothing).
    """

    kind: str
    name: str
    files: tuple[tuple[str, bytes], ...]
    argv: tuple[str, ...]
    links: tuple[tuple[str, str], ...] = ()  # symbolic links (relative path -> target, relative)


# --- JCAMP-DX ---------------------------------------------------------------------------------------


def _token(value: int, table: dict) -> str:
    digits = str(abs(value))
    return table[int(digits[0]) * (1 if value >= 0 else -1)] + digits[1:]


def _dup(tokens: list[str]) -> list[str]:
    """Run-length compress equal neighbouring tokens: ``A A A`` -> ``AU`` (DUP count 3)."""
    out, k = [], 0
    while k < len(tokens):
        run = 1
        while k + run < len(tokens) and tokens[k + run] == tokens[k]:
            run += 1
        out.append(tokens[k] + (_token(run, _DUP) if run > 1 else ""))
        k += run
    return out


def encode_xydata(values: list[int], form: str, *, per_line: int = 10, x_step: int = 1) -> list[str]:
    """Data lines ``X Y Y Y...`` of integer ordinates in one of :data:`FORMS`.

    DIF lines end with the first ordinate of the next line (the Y check), as the standard asks.
    """
    lines = []
    dif = form.startswith("DIF")
    step = per_line if not dif else per_line
    for start in range(0, len(values), step):
        chunk = values[start:start + per_line + (1 if dif and start + per_line < len(values) else 0)]
        x = start * x_step
        if form == "AFFN":
            lines.append(f"{x} " + " ".join(str(v) for v in chunk))
        elif form == "PAC":
            lines.append(f"{x}" + "".join(f"{v:+d}" for v in chunk))
        elif form.startswith("SQZ"):
            tokens = [_token(v, _SQZ) for v in chunk]
            lines.append(f"{x}" + "".join(_dup(tokens) if "DUP" in form else tokens))
        else:
            diffs = [_token(b - a, _DIF) for a, b in zip(chunk[:-1], chunk[1:], strict=True)]
            tokens = [_token(chunk[0], _SQZ)] + (_dup(diffs) if "DUP" in form else diffs)
            lines.append(f"{x}" + "".join(tokens))
    return lines


def jcamp_spectrum(values: list[int], *, form: str = "AFFN", npoints: int | None = None,
                   observe_mhz: float | str = 400.0, xunits: str = "HZ", first_x: float | None = None,
                   last_x: float | None = None, solvent: str = "CDCl3", extra: tuple[str, ...] = (),
                   end: bool = True) -> bytes:
    """A JCAMP-DX ``NMR SPECTRUM`` (XYDATA) file with the given integer ordinates."""
    n = len(values)
    first = 10.0 * float(observe_mhz) if first_x is None and _is_number(observe_mhz) else (first_x or 4000.0)
    last = -1.0 * float(observe_mhz) if last_x is None and _is_number(observe_mhz) else (last_x or -400.0)
    header = ["##TITLE=generated", "##JCAMP-DX=4.24", "##DATA TYPE=NMR SPECTRUM", f"##XUNITS={xunits}",
              "##YUNITS=ARBITRARY UNITS", f"##.OBSERVE FREQUENCY={observe_mhz}", "##.OBSERVE NUCLEUS=^1H",
              f"##.SOLVENT NAME={solvent}", "##XFACTOR=1", "##YFACTOR=1", f"##FIRSTX={first}",
              f"##LASTX={last}",
              f"##NPOINTS={n if npoints is None else npoints}", *extra, "##XYDATA=(X++(Y..Y))"]
    return _text(header + encode_xydata(values, form) + (["##END="] if end else []))


def jcamp_fid(real: list[int], imag: list[int], *, form: str = "AFFN", npoints: int | None = None,
              observe_mhz: float | str = 400.0, dwell_s: float = 1.25e-4, extra: tuple[str, ...] = (),
              end: bool = True) -> bytes:
    """A JCAMP-DX ``NMR FID`` (NTUPLES, a real and an imaginary page) with integer points."""
    n = len(real) if npoints is None else npoints
    last = dwell_s * (len(real) - 1)
    header = ["##TITLE=generated fid", "##JCAMP-DX=5.01", "##DATA TYPE=NMR FID", "##DATA CLASS=NTUPLES",
              f"##.OBSERVE FREQUENCY={observe_mhz}", "##.OBSERVE NUCLEUS=^1H", "##.SOLVENT NAME=CDCl3",
              *extra, "##NTUPLES=NMR FID", "##VAR_NAME=TIME,FID/REAL,FID/IMAG,PAGE NUMBER",
              "##SYMBOL=X,R,I,N", "##VAR_TYPE=INDEPENDENT,DEPENDENT,DEPENDENT,PAGE",
              "##VAR_FORM=AFFN,ASDF,ASDF,AFFN", f"##VAR_DIM={n},{n},{n},2",
              "##UNITS=SECONDS,ARBITRARY UNITS,ARBITRARY UNITS,", f"##FIRST=0,{real[0] if real else 0},"
              f"{imag[0] if imag else 0},1", f"##LAST={last},0,0,2", f"##FACTOR={dwell_s},1,1,1"]
    body = ["##PAGE=N=1", "##DATA TABLE= (X++(R..R)), XYDATA", *encode_xydata(real, form),
            "##PAGE=N=2", "##DATA TABLE= (X++(I..I)), XYDATA", *encode_xydata(imag, form),
            "##END NTUPLES=NMR FID"]
    return _text(header + body + (["##END="] if end else []))


def _is_number(value) -> bool:
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def _text(lines: list[str]) -> bytes:
    return ("\n".join(lines) + "\n").encode("utf-8", errors="surrogateescape")


def fid_points(n: int, *, seed: int = 0, amplitude: float = 2e5,
               lines: int = 3) -> tuple[list[int], list[int]]:
    """Integer real and imaginary points of a decaying FID with a few lines (a plausible signal)."""
    rng = random.Random(seed)
    freqs = [rng.uniform(-1500, 1500) for _ in range(lines)]
    real, imag = [], []
    for k in range(n):
        t = k * 1.25e-4
        decay = math.exp(-t / 0.3)
        re_ = sum(math.cos(2 * math.pi * f * t) for f in freqs) * decay * amplitude + rng.gauss(0, 50)
        im_ = sum(math.sin(2 * math.pi * f * t) for f in freqs) * decay * amplitude + rng.gauss(0, 50)
        real.append(int(re_))
        imag.append(int(im_))
    return real, imag


# --- raw FID folders with a parameter file ----------------------------------------------------------


#: Parameters a minimal acqus file holds (JCAMP-style ``##$KEY= value`` lines).
ACQUS_DEFAULTS = {"TD": "2048", "SW_h": "8012.8", "SFO1": "400.13", "BF1": "400.1275", "O1": "2470.8",
                  "NS": "16", "RG": "64", "DTYPA": "0", "BYTORDA": "0", "GRPDLY": "67.98", "DECIM": "16",
                  "DSPFVS": "20", "NUC1": "<1H>", "SOLVENT": "<CDCl3>", "PARMODE": "0"}


def acqus_folder(params: dict[str, str] | None = None, *, fid: bytes | None = None, n_points: int = 1024,
                 seed: int = 0, procs: dict[str, str] | None = None) -> tuple[tuple[str, bytes], ...]:
    """Files of a raw FID folder: ``acqus`` (from ``params`` over :data:`ACQUS_DEFAULTS`) and ``fid``
    (int32 little-endian complex points, or the given bytes); ``pdata/1/procs`` when given."""
    values = {**ACQUS_DEFAULTS, "TD": str(2 * n_points), **(params or {})}
    lines = ["##TITLE= generated", "##JCAMPDX= 5.0", "##DATATYPE= Parameter Values"]
    lines += [f"##${key}= {value}" for key, value in values.items()] + ["##END="]
    if fid is None:
        real, imag = fid_points(n_points, seed=seed)
        fid = b"".join(struct.pack("<ii", r, i) for r, i in zip(real, imag, strict=True))
    files = [("acqus", _text(lines)), ("fid", fid)]
    if procs is not None:
        plines = ["##TITLE= generated", *(f"##${k}= {v}" for k, v in procs.items()), "##END="]
        files.append(("pdata/1/procs", _text(plines)))
    return tuple(files)


# --- tables and texts -----------------------------------------------------------------------------------


def peak_list(rows: list[tuple], *, header: tuple[str, ...] | None = ("ppm", "intensity"),
              delimiter: str = ",") -> bytes:
    """A peak-list table: an optional header and rows of cells (any values, written with ``str``)."""
    lines = [delimiter.join(header)] if header else []
    lines += [delimiter.join(str(c) for c in row) for row in rows]
    return _text(lines)


def spec_toml(*, product: str = "C/C=C/CC", candidates=("C/C=C\\\\CC",), limits: dict | None = None,
              extra: str = "", bom: bool = False) -> bytes:
    """A QC specification; values are written as given, so bad ones make bad files."""
    cands = ", ".join(f'"{c}"' for c in candidates)
    text = f'product = "{product}"\ncandidates = [{cands}]\n{extra}\n'
    if limits:
        text += "[limits]\n" + "".join(f"{k} = {v}\n" for k, v in limits.items())
    return (b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8", errors="surrogateescape")


def manifest_csv(rows: list[dict[str, str]], *,
                 columns: tuple[str, ...] = ("id", "spectrum", "candidates")) -> bytes:
    """A batch manifest with the given columns (missing cells empty)."""
    lines = [",".join(columns)] + [",".join(_csv_cell(row.get(c, "")) for c in columns) for row in rows]
    return _text(lines)


def _csv_cell(text: str) -> str:
    return '"' + text.replace('"', '""') + '"' if any(ch in text for ch in ',"\n') else text


# --- damage -------------------------------------------------------------------------------------------------


def mutate(data: bytes, rng: random.Random, *, rounds: int = 1) -> bytes:
    """Damage ``data``: truncate, flip, insert or delete bytes, repeat or drop lines, replace numbers."""
    for _ in range(rounds):
        kind = rng.randrange(8)
        if not data:
            return bytes([rng.randrange(256)])
        k = rng.randrange(len(data))
        if kind == 0:
            data = data[:k]
        elif kind == 1:
            data = data[:k] + bytes([rng.randrange(256)]) + data[k + 1:]
        elif kind == 2:
            data = data[:k] + bytes(rng.randrange(256) for _ in range(rng.randrange(1, 8))) + data[k:]
        elif kind == 3:
            data = data[:k] + data[k + rng.randrange(1, 64):]
        else:
            lines = data.split(b"\n")
            j = rng.randrange(len(lines))
            if kind == 4:
                lines.insert(j, lines[j])
            elif kind == 5 and len(lines) > 1:
                del lines[j]
            else:
                lines[j] = _replace_number(lines[j], rng)
            data = b"\n".join(lines)
    return data


_ODD_NUMBERS = (b"0", b"-0", b"-1", b"1e308", b"-1e308", b"1e-308", b"nan", b"inf", b"NaN", b"abc", b"",
                b"99999999999999999999", b"(0..3)", b"0.001", b"1e12", b"<1H>", b"2147483648")


def _replace_number(line: bytes, rng: random.Random) -> bytes:
    import re

    numbers = list(re.finditer(rb"[-+]?\d+(\.\d*)?([eE][-+]?\d+)?", line))
    if not numbers:
        return line + rng.choice(_ODD_NUMBERS)
    match = rng.choice(numbers)
    return line[:match.start()] + rng.choice(_ODD_NUMBERS) + line[match.end():]


# --- the fixed corpus of the benchmark ------------------------------------------------------------------


def _values(rng: random.Random, n: int) -> list[int]:
    centres = [rng.randrange(n) for _ in range(3)]
    return [int(sum(5000 / (1 + ((k - c) / 3) ** 2) for c in centres) + rng.gauss(0, 20)) for k in range(n)]


def _jcamp_cases(rng: random.Random, n: int) -> list[Case]:
    cases = []
    for k in range(n):
        form = FORMS[k % len(FORMS)]
        if k % 2:
            real, imag = fid_points(rng.choice((256, 512, 1024)), seed=k)
            data = jcamp_fid(real, imag, form=form)
        else:
            data = jcamp_spectrum(_values(rng, rng.choice((300, 1000, 2048))), form=form)
        if k % 3:
            data = mutate(data, rng, rounds=rng.randrange(1, 4))
        cases.append(Case("jcamp", f"jcamp-{form}-{k}", (("in.jdx", data),),
                          ("process", "{dir}/in.jdx", "--out", "{out}/spectrum.csv", "--json")))
    return cases


def _acqus_cases(rng: random.Random, n: int) -> list[Case]:
    odd = ("0", "-1", "abc", "(0..1)\n1 2", "1e-300", "1e300", "nan", "", "3.5", "<x>", "1 2 3")
    cases = []
    for k in range(n):
        params = {key: rng.choice(odd) for key in rng.sample(sorted(ACQUS_DEFAULTS), rng.randrange(0, 3))}
        procs = {"SF": rng.choice(("400.13", "0", "x")), "SI": rng.choice(("1024", "0", "-5"))}
        files = acqus_folder(params, n_points=rng.choice((64, 256, 1024)), seed=k,
                             procs=procs if k % 4 == 0 else None)
        if k % 3 == 1:
            files = tuple((name, mutate(data, rng) if name == "acqus" else data) for name, data in files)
        cases.append(Case("acqus", f"acqus-{k}", tuple((f"exp/{name}", data) for name, data in files),
                          ("process", "{dir}/exp", "--out", "{out}/spectrum.csv", "--json")))
    return cases


def _peak_cases(rng: random.Random, n: int) -> list[Case]:
    cases = []
    for k in range(n):
        rows = [(round(rng.uniform(-1, 12), 3), round(rng.uniform(0, 100), 2))
                for _ in range(rng.randrange(1, 12))]
        data = peak_list(rows, header=rng.choice((("ppm", "intensity"), None, ("shift", "integral", "mult"))),
                         delimiter=rng.choice((",", ";", "\t", " ")))
        if k % 2:
            data = mutate(data, rng, rounds=rng.randrange(1, 3))
        cases.append(Case("peaks", f"peaks-{k}", (("peaks.csv", data),),
                          ("process", "{dir}/peaks.csv", "--json")))
    return cases


def _spec_cases(rng: random.Random, n: int) -> list[Case]:
    cases = []
    for k in range(n):
        limit = rng.choice(("2.0", "-1", "1e400", '"x"', "200"))
        data = spec_toml(limits={"max_other_isomer_percent": limit}, bom=bool(k % 2),
                         product=rng.choice(("C/C=C/CC", "C/C=C/CC x", "CC.CCO", "")))
        if k % 3 == 2:
            data = mutate(data, rng)
        cases.append(Case("spec", f"spec-{k}", (("spec.toml", data),),
                          ("qc", "--spec", "{dir}/spec.toml", "--spectrum", "{dir}/missing.jdx",
                           "--audit", "{out}/audit.json")))
    return cases


def _manifest_cases(rng: random.Random, n: int) -> list[Case]:
    cases = []
    for k in range(n):
        ids = [rng.choice(("a", "a", "a_2", "A", "summary.csv", "index.html", "../up", "x/y", "", ".hidden"))
               for _ in range(rng.randrange(1, 5))]
        rows = [{"id": i, "spectrum": rng.choice(("m.csv", "none.jdx", "..", "/etc/hostname", "")),
                 "candidates": "C/C=C/CC C=CCCC", "temp_c": rng.choice(("0", "", "x", "nan"))} for i in ids]
        data = manifest_csv(rows, columns=("id", "spectrum", "candidates", "temp_c"))
        if k % 3 == 2:
            data = mutate(data, rng)
        cases.append(Case("manifest", f"manifest-{k}", (("m.csv", data),),
                          ("batch", "{dir}/m.csv", "--out", "{out}", "--no-reports", "--max-seconds", "20")))
    return cases


def _smiles_cases(rng: random.Random, n: int) -> list[Case]:
    cases = []
    for k in range(n):
        text = "".join(rng.choice(SMILES_PIECES) for _ in range(rng.randrange(1, 7)))
        cases.append(Case("smiles", f"smiles-{k}", (), ("predict", text, "--field-mhz", "60")))
    return cases


def output_cases(rng: random.Random, n: int) -> list[Case]:
    """Output options that name an input of the same command, a place inside an input folder, a
    link to an input, or another output; and a batch whose output folder holds a planted link. Each
    must be refused (the whole run, or the one item) before anything is written there."""
    spectrum = jcamp_spectrum(_values(rng, 1024))
    files = (("in.jdx", spectrum), ("spec.toml", spec_toml()), *((f"exp/{k}", v) for k, v in acqus_folder()),
             ("plate/a.jdx", spectrum), ("A1/data.jdx", spectrum),
             ("m.csv", manifest_csv([{"id": "A1", "spectrum": "A1", "candidates": "C=C"}])))
    links = (("link.html", "in.jdx"), ("exp_link", "exp"), ("out/a", "A1"))
    file_targets = ("{dir}/in.jdx", "{dir}/link.html")
    folder_targets = ("{dir}/exp/fid", "{dir}/exp/acqus", "{dir}/exp_link/x.png", "{dir}/exp")
    commands = (
        lambda: ("process", "{dir}/in.jdx", rng.choice(("--out", "--plot")), rng.choice(file_targets)),
        lambda: ("process", "{dir}/exp", rng.choice(("--out", "--plot")), rng.choice(folder_targets)),
        lambda: ("process", "{dir}/in.jdx", "--out", "{out}/same.png", "--plot", "{out}/same.png"),
        lambda: ("analyze", "--spectrum", "{dir}/in.jdx", "--candidates", "C/C=C/CC", "--report",
                 rng.choice(file_targets)),
        lambda: ("analyze", "--spectrum", "{dir}/exp", "--candidates", "C/C=C/CC", "--report",
                 rng.choice(folder_targets).replace(".png", ".html")),
        lambda: ("qc", "--spec", "{dir}/spec.toml", "--spectrum", "{dir}/in.jdx",
                 rng.choice(("--report", "--audit")), rng.choice(("{dir}/spec.toml", *file_targets))),
        lambda: ("qc", "--spec", "{dir}/spec.toml", "--spectrum", "{dir}/in.jdx", "--report", "{out}/x",
                 "--audit", "{out}/x"),
        lambda: ("batch", "{dir}/plate", "--out", rng.choice(("{dir}/plate", "{dir}/plate/results"))),
        lambda: ("batch", "{dir}/m.csv", "--out", "{dir}"),
        lambda: ("batch", "{dir}/plate", "--out", "{out}", "--no-reports"),  # out/a is a planted link
        lambda: ("demo", "--out", rng.choice(("{dir}/in.jdx", "{dir}/spec.toml"))),
    )
    return [Case("outputs", f"outputs-{k}", files, rng.choice(commands)(), links) for k in range(n)]


def corpus(*, seed: int = 14, per_kind: int = 30) -> list[Case]:
    """The fixed corpus: ``per_kind`` cases of each kind (JCAMP-DX, FID folders, peak lists, specs,
    manifests, SMILES, output paths that would overwrite inputs), the same for the same seed."""
    rng = random.Random(seed)
    makers = (_jcamp_cases, _acqus_cases, _peak_cases, _spec_cases, _manifest_cases, _smiles_cases,
              output_cases)
    return [case for make in makers for case in make(rng, per_kind)]


# --- running one case ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Outcome:
    """What one case did: exit code (None when it hung), seconds, output and any data loss."""

    exit_code: int | None
    seconds: float
    stderr: str
    data_loss: tuple[str, ...]
    stdout: str = ""


class _Hung(BaseException):
    """Raised by the timer when a case runs past its time (not an Exception: the CLI lets it pass)."""


def _snapshot(root, out) -> dict[str, str]:
    import hashlib

    found = {}
    for path in sorted(root.rglob("*")):
        if path.is_file() and not path.is_symlink() and out not in path.parents:
            found[str(path.relative_to(root))] = hashlib.sha256(path.read_bytes()).hexdigest()
    return found


def write_case(case: Case, root) -> tuple[dict[str, str], list[str]]:
    """Write the case's files under ``root``; return the format values and the argv."""
    from pathlib import Path

    root = Path(root)
    for name, data in case.files:
        target = root / name
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(data)
    out = root / "out"
    out.mkdir(exist_ok=True)
    for name, target in case.links:
        link = root / name
        link.parent.mkdir(parents=True, exist_ok=True)
        link.symlink_to(root / target)
    values = {"dir": str(root), "out": str(out)}
    return values, [part.format(**values) for part in case.argv]


def run_case(case: Case, root, *, timeout_s: float = 60.0) -> Outcome:
    """Write the case under ``root`` (an empty folder), run the command line in this process, and
    report its exit code, time, stderr and any file outside ``root/out`` it changed or created."""
    import contextlib
    import io
    import signal
    import time
    from pathlib import Path

    from confirm.cli import main

    root = Path(root)
    _, argv = write_case(case, root)
    before = _snapshot(root, root / "out")

    def _on_timer(_signum, _frame):
        raise _Hung

    previous = signal.signal(signal.SIGALRM, _on_timer)
    signal.setitimer(signal.ITIMER_REAL, timeout_s)
    stdout, stderr = io.StringIO(), io.StringIO()
    start = time.perf_counter()
    try:
        with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
            code: int | None = main(argv)
    except _Hung:
        code = None
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0.0)
        signal.signal(signal.SIGALRM, previous)
    seconds = time.perf_counter() - start
    after = _snapshot(root, root / "out")
    loss = tuple(sorted({name for name in before if after.get(name) != before[name]}
                        | (set(after) - set(before))))
    return Outcome(code, seconds, stderr.getvalue(), loss, stdout.getvalue())
