"""Batch state: what counts as finished, ids, interruption, exit codes, what the summary may show.

The analysis behind the batch is the stand-in of test_batch.py (non-negative least squares of
the measured intensity on the candidates' model spectra), so these tests check the batch
machinery, not the chemistry.
"""

from __future__ import annotations

import csv
import functools
import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from confirm.batch import BatchItem, item_fingerprint, read_manifest, run_batch, run_item, runner, scan_folder
from confirm.reading import write_jcamp_spectrum
from predictors.errors import InputError
from tests.confirm.test_batch import CANDIDATES, SPEC_TEXT, _write_spectra, mixture_spectrum, nnls_analyze

PROJECT = Path(__file__).resolve().parents[2]


def _run(items, out, **kwargs):
    kwargs.setdefault("analyze", nnls_analyze)
    return run_batch(items, out, write_reports=kwargs.pop("write_reports", False), progress=False, **kwargs)


@pytest.fixture
def three(tmp_path):
    paths = _write_spectra(tmp_path / "spectra", 3)
    return [BatchItem(item_id=p.stem, spectrum=p, candidates=CANDIDATES) for p in paths]


# --- what counts as finished ------------------------------------------------------------------------


def test_a_rerun_redoes_items_whose_chemistry_or_options_changed(three, tmp_path):
    out = tmp_path / "out"
    assert _run(three, out).counts["done"] == 3
    assert _run(three, out).counts == {"done": 0, "skipped": 3, "error": 0}
    changed = [three[0], BatchItem(**{**three[1].__dict__, "candidates": CANDIDATES[:3]}),
               BatchItem(**{**three[2].__dict__, "temp_c": 80.0})]
    assert [o.status for o in _run(changed, out).outcomes] == ["skipped", "done", "done"]
    assert [o.status for o in _run(changed[:1], out, write_reports=True).outcomes] == ["done"]


def test_a_changed_specification_is_redone(three, tmp_path):
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC_TEXT)
    items = [BatchItem(**{**three[0].__dict__, "spec": spec})]
    out = tmp_path / "out"
    assert _run(items, out).outcomes[0].status == "done"
    assert _run(items, out).outcomes[0].status == "skipped"
    spec.write_text(SPEC_TEXT.replace("2.0", "3.0"))
    assert _run(items, out).outcomes[0].status == "done"


@pytest.mark.parametrize("damage", ["corrupt", "empty_object", "missing", "other_fingerprint", "no_audit"])
def test_a_result_that_does_not_read_back_is_redone(three, tmp_path, damage):
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC_TEXT)
    items = [BatchItem(**{**three[0].__dict__, "spec": spec})]
    out = tmp_path / "out"
    _run(items, out)
    item_dir = out / items[0].item_id
    if damage == "corrupt":
        (item_dir / "result.json").write_text('{"components": [')
    elif damage == "empty_object":
        (item_dir / "result.json").write_text("{}")
    elif damage == "missing":
        (item_dir / "result.json").unlink()
    elif damage == "no_audit":
        (item_dir / "audit.json").unlink()
    else:
        outcome = json.loads((item_dir / "outcome.json").read_text())
        (item_dir / "outcome.json").write_text(json.dumps({**outcome, "fingerprint": "0" * 64}))
    again = _run(items, out)
    assert again.outcomes[0].status == "done"
    assert json.loads((item_dir / "result.json").read_text())["components"]


def test_the_fingerprint_covers_every_part_of_the_work(three):
    item = three[0]
    base = item_fingerprint(item, spectrum_sha256="a" * 64)
    variants = [
        item_fingerprint(item, spectrum_sha256="b" * 64),
        item_fingerprint(BatchItem(**{**item.__dict__, "substrate": "CC(Br)CCC", "reagent": "KOH"}),
                         spectrum_sha256="a" * 64),
        item_fingerprint(BatchItem(**{**item.__dict__, "reaction_solvent": "DMSO"}),
                         spectrum_sha256="a" * 64),
        item_fingerprint(BatchItem(**{**item.__dict__, "nmr_solvent": "DMSO-d6"}), spectrum_sha256="a" * 64),
        item_fingerprint(BatchItem(**{**item.__dict__, "decoupled": ("19F",)}), spectrum_sha256="a" * 64),
        item_fingerprint(BatchItem(**{**item.__dict__, "temp_c": 0.0}), spectrum_sha256="a" * 64),
        item_fingerprint(BatchItem(**{**item.__dict__, "field_mhz": 60.0}), spectrum_sha256="a" * 64),
        item_fingerprint(item, spectrum_sha256="a" * 64, options={"write_reports": True}),
    ]
    assert len({base, *variants}) == len(variants) + 1


# --- ids and manifests ----------------------------------------------------------------------------------


def test_ids_stay_unique_after_sanitising_and_never_overwrite(tmp_path):
    paths = _write_spectra(tmp_path / "spectra", 4, z_values=(0.01, 0.1, 0.2, 0.3))
    rows = ["id,spectrum,candidates"] + [f"{i},spectra/{p.name},{' '.join(CANDIDATES)}"
                                         for i, p in zip(["a", "a", "a_2", "A"], paths, strict=True)]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    items = read_manifest(tmp_path / "m.csv")
    ids = [i.item_id for i in items]
    assert ids == ["a", "a_3", "a_2", "A_4"]  # A is a on a case-insensitive disk
    assert len({i.casefold() for i in ids}) == 4
    summary = _run(items, tmp_path / "out")
    z = {o.item_id: json.loads((tmp_path / "out" / o.item_id / "result.json").read_text())
         for o in summary.outcomes}
    assert {k: v["inputs"][0]["path"] for k, v in z.items()} == {
        i.item_id: str(i.spectrum) for i in items}


@pytest.mark.parametrize("name", ["summary.csv", "components.csv", "index.html", "INDEX.HTML", "nul"])
def test_reserved_ids_are_refused(tmp_path, name):
    (tmp_path / "m.csv").write_text(f"id,spectrum\n{name},a.jdx\n")
    with pytest.raises(InputError, match="reserved"):
        read_manifest(tmp_path / "m.csv")


def test_a_temperature_of_zero_is_kept(tmp_path):
    (tmp_path / "m.csv").write_text("spectrum,temp_c\na.jdx,0\nb.jdx,\nc.jdx,-10.5\n")
    assert [i.temp_c for i in read_manifest(tmp_path / "m.csv")] == [0.0, 25.0, -10.5]
    (tmp_path / "m.csv").write_text("spectrum,temp_c\na.jdx,nan\n")
    with pytest.raises(InputError, match="temp_c"):
        read_manifest(tmp_path / "m.csv")


def test_data_sets_one_folder_down_are_found_and_deeper_ones_named(tmp_path):
    root = tmp_path / "plate"
    spectrum = mixture_spectrum(0.9, 0.05, 0.03, 0.02)
    root.mkdir()
    write_jcamp_spectrum(spectrum, root / "top.jdx")
    (root / "sample1" / "exp10").mkdir(parents=True)
    write_jcamp_spectrum(spectrum, root / "sample1" / "exp10" / "data.jdx")
    (root / "sample2").mkdir()
    write_jcamp_spectrum(spectrum, root / "sample2" / "run.jdx")
    (root / "deep" / "a" / "b").mkdir(parents=True)
    write_jcamp_spectrum(spectrum, root / "deep" / "a" / "b" / "x.jdx")
    (root / "notes.docx").write_bytes(b"PK")
    items, notes = scan_folder(root)
    assert [i.item_id for i in items] == ["sample1_exp10", "sample2", "top"]
    assert any("deep" in n and "one level down" in n for n in notes)
    assert any("notes.docx" in n for n in notes)


# --- what the summary may show --------------------------------------------------------------------------


def test_item_errors_never_show_the_contents_of_the_file(tmp_path):
    secret = tmp_path / "credentials.csv"
    secret.write_text("password=hunter2-very-secret,token\nline two,of secrets\n")
    summary = _run([BatchItem(item_id="x", spectrum=secret, candidates=CANDIDATES)], tmp_path / "out",
                   analyze=run_item._default_analyze)
    (outcome,) = summary.outcomes
    assert outcome.status == "error" and "credentials.csv" in outcome.error
    for text in (outcome.error, summary.summary_csv.read_text(), summary.index_html.read_text()):
        assert "hunter2" not in text and "of secrets" not in text


def test_a_link_planted_in_out_is_not_followed(three, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    (out / three[0].item_id).symlink_to(elsewhere, target_is_directory=True)
    summary = _run(three, out)
    assert [o.status for o in summary.outcomes] == ["error", "done", "done"]
    assert "symbolic link" in summary.outcomes[0].error
    assert list(elsewhere.iterdir()) == []


def test_out_inside_the_input_folder_or_on_an_input_is_refused(run_cli, tmp_path):
    folder = tmp_path / "spectra"
    _write_spectra(folder, 2)
    result = run_cli("batch", folder, "--out", folder / "results")
    assert result.exit_code == 2 and "lies inside the input" in result.stderr
    assert not (folder / "results").exists()
    # a manifest whose spectrum folder is where an item folder would go
    (tmp_path / "A1").mkdir()
    write_jcamp_spectrum(mixture_spectrum(0.9, 0.05, 0.03, 0.02), tmp_path / "A1" / "data.jdx")
    (tmp_path / "m.csv").write_text(f"id,spectrum,candidates\nA1,A1,{' '.join(CANDIDATES)}\n")
    before = sorted(p.name for p in (tmp_path / "A1").iterdir())
    result = run_cli("batch", tmp_path / "m.csv", "--out", tmp_path)
    assert result.exit_code == 2 and "A1" in result.stderr
    assert sorted(p.name for p in (tmp_path / "A1").iterdir()) == before


# --- exit codes and interruption ----------------------------------------------------------------------


def test_exit_1_when_an_item_fails_and_the_last_line_says_so(run_cli, tmp_path, monkeypatch):
    from confirm.commands import batch as batch_command

    _write_spectra(tmp_path / "spectra", 3, corrupt_index=1)
    rows = ["spectrum,candidates"] + [f"spectra/lot{k:02d}.jdx,{' '.join(CANDIDATES)}" for k in range(3)]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    monkeypatch.setattr(batch_command, "_analyze", nnls_analyze)
    result = run_cli("batch", tmp_path / "m.csv", "--out", tmp_path / "out", "--no-reports")
    assert result.exit_code == 1
    assert result.stdout.splitlines()[-1] == "Not all items passed: 1 item(s) failed (exit 1)."
    result = run_cli("batch", tmp_path / "m.csv", "--out", tmp_path / "out2", "--no-reports", "--json")
    assert result.exit_code == 1 and json.loads(result.stdout)["exit_code"] == 1


def test_ctrl_c_in_a_single_process_run_keeps_what_finished(three, tmp_path):
    calls = []

    def interrupted_on_the_second(path, budget=None, **kwargs):
        assert budget is not None and budget.max_seconds == 60.0  # each item gets its own budget
        calls.append(path)
        if len(calls) == 2:
            raise KeyboardInterrupt
        return nnls_analyze(path, **kwargs)

    summary = _run(three, tmp_path / "out", analyze=interrupted_on_the_second)
    assert summary.interrupted and not summary.all_passed
    assert [o.status for o in summary.outcomes] == ["done", "interrupted", "interrupted"]
    with open(summary.summary_csv, newline="") as handle:
        assert [r["status"] for r in csv.DictReader(handle)] == ["done", "interrupted", "interrupted"]
    assert not (tmp_path / "out" / three[1].item_id / "outcome.json").exists()
    again = _run(three, tmp_path / "out")
    assert [o.status for o in again.outcomes] == ["skipped", "done", "done"]


def test_a_worker_that_dies_or_hangs_is_reported_and_the_rest_go_on(three, tmp_path, monkeypatch):
    monkeypatch.setattr(runner, "_KILL_GRACE_S", 1.0)
    nnls_analyze(three[2].spectrum, candidates=CANDIDATES)  # model spectra cached before the workers fork
    summary = _run(three, tmp_path / "out", analyze=_dies_or_hangs, jobs=2, max_seconds=1.0)
    status = {o.item_id: (o.status, o.error) for o in summary.outcomes}
    assert status["lot00"][0] == "error" and "ended without a result" in status["lot00"][1]
    assert status["lot01"][0] == "error" and "time budget" in status["lot01"][1]
    assert status["lot02"][0] == "done"


def test_an_item_whose_worker_dies_once_is_run_again(three, tmp_path):
    nnls_analyze(three[2].spectrum, candidates=CANDIDATES)  # model spectra cached before the workers fork
    marks = tmp_path / "marks"
    marks.mkdir()
    analyze = functools.partial(_dies_the_first_time, marks=str(marks))
    summary = _run(three, tmp_path / "out", analyze=analyze, jobs=2)
    assert [o.status for o in summary.outcomes] == ["done", "done", "done"]
    assert (marks / "lot01").exists()  # its first attempt ended its worker


def _dies_the_first_time(path, budget=None, *, marks: str, **kwargs):
    """lot01: the worker process dies on the first attempt only."""
    mark = Path(marks, Path(path).stem)
    if mark.name == "lot01" and not mark.exists():
        mark.touch()
        os._exit(9)
    return nnls_analyze(path, **kwargs)


def _dies_or_hangs(path, budget=None, **kwargs):
    """lot00: the process dies; lot01: hangs where no timer signal can stop it; lot02: fine."""
    name = Path(path).stem
    if name == "lot00":
        os._exit(7)
    if name == "lot01":
        signal.signal(signal.SIGALRM, signal.SIG_IGN)
        signal.signal(signal.SIGTERM, signal.SIG_IGN)  # only a kill stops it
        time.sleep(120)
    return nnls_analyze(path, **kwargs)


#: A batch of 2 jobs (``{options}``: more options, such as a scheduler) whose items after the first
#: sleep, each leaving its worker's pid in ``pids``: a script for a process that a test interrupts.
#: The guard keeps worker processes that import the script (a local Dask cluster) from running it.
SLOW_BATCH = textwrap.dedent("""
    import os, sys, time
    from pathlib import Path
    sys.path.insert(0, {project!r})
    import confirm.commands.batch as command
    from confirm.cli import main
    from tests.confirm.test_batch import nnls_analyze

    def slow(path, budget=None, **kwargs):
        Path({pids!r}, Path(path).stem).write_text(str(os.getpid()))
        if Path(path).stem != "lot00":
            time.sleep(120)
        return nnls_analyze(path, **kwargs)

    if __name__ == "__main__":
        command._analyze = slow
        sys.exit(main(["batch", {manifest!r}, "--out", {out!r}, {options}"--jobs", "2", "--no-reports"]))
""")


def interrupt_slow_batch(tmp_path: Path, rows: list[str], *, options: str = "", start_within_s: float = 60.0):
    """Run :data:`SLOW_BATCH` on the manifest ``rows`` in a subprocess and send it SIGINT once its
    first item has finished and three items have started.

    Returns (seconds from SIGINT to exit, the process (ended), stdout, stderr, --out folder, pids
    folder).
    """
    manifest = tmp_path / "m.csv"
    manifest.write_text("\n".join(rows) + "\n")
    pids, out = tmp_path / "pids", tmp_path / "out"
    pids.mkdir()
    script = tmp_path / "run.py"
    script.write_text(SLOW_BATCH.format(project=str(PROJECT), pids=str(pids), manifest=str(manifest),
                                        out=str(out), options=options))
    proc = subprocess.Popen([sys.executable, str(script)], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.monotonic() + start_within_s
    while time.monotonic() < deadline and proc.poll() is None and not (
            (out / "lot00" / "outcome.json").exists() and len(list(pids.iterdir())) >= 3):
        time.sleep(0.1)
    assert (out / "lot00" / "outcome.json").exists(), proc.stderr.read1().decode() if proc.poll() else ""
    sent = time.monotonic()
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=30)
    return time.monotonic() - sent, proc, stdout, stderr, out, pids


def test_ctrl_c_stops_the_workers_within_two_seconds_and_writes_the_summary(tmp_path):
    _write_spectra(tmp_path / "spectra", 4)
    rows = ["spectrum,candidates"] + [f"spectra/lot{k:02d}.jdx,{' '.join(CANDIDATES)}" for k in range(4)]
    seconds, proc, stdout, stderr, out, pids = interrupt_slow_batch(tmp_path, rows)
    assert seconds < 2.0 + 1.0  # two seconds for the workers, one for the interpreter
    assert proc.returncode == 130, stderr.decode()
    assert b"Traceback" not in stderr and b"internal error" not in stderr
    assert stdout.decode().splitlines()[-1].startswith("Interrupted: 1 of 4 items finished")
    with open(out / "summary.csv", newline="") as handle:
        status = {r["id"]: r["status"] for r in csv.DictReader(handle)}
    assert status == {"lot00": "done", "lot01": "interrupted", "lot02": "interrupted", "lot03": "interrupted"}
    for pid_file in pids.iterdir():
        pid = int(pid_file.read_text())
        if pid_file.name != "lot00":
            with pytest.raises(ProcessLookupError):
                os.kill(pid, 0)
