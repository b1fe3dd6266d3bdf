"""Batch runs on a Dask cluster (``confirm batch --scheduler``, confirm/batch/dask_runner.py).

A local cluster of two worker processes (one thread each), started once for the module the way
``--scheduler local`` starts one, runs batches of spectra written by the project's JCAMP-DX
writer; the analysis is the stand-in of test_batch.py (non-negative least squares on the
candidates' model spectra), so these tests check the machinery: the same files as the process
pool, a worker killed mid-item, the lock on ``--out``, and the error without Dask.
"""

from __future__ import annotations

import csv
import functools
import io
import json
import os
import signal
import sys
import threading
import time
from pathlib import Path

import pytest

from confirm.batch import BatchItem, run_batch, runner
from confirm.batch.lock import LOCK_NAME
from confirm.qc import read_spec
from predictors.errors import InputError
from tests.confirm.test_batch import CANDIDATES, SPEC_TEXT, _write_spectra, nnls_analyze
from tests.confirm.test_batch_state import interrupt_slow_batch

PROJECT = Path(__file__).resolve().parents[2]
_NO_DASK = "Dask is an optional extra (pip install '.[cluster]'); not installed here"


@pytest.fixture(scope="module")
def cluster():
    """The scheduler address of a local cluster with two worker processes."""
    pytest.importorskip("distributed", reason=_NO_DASK)
    from confirm.batch.dask_runner import DaskRunner

    with DaskRunner("local", local_workers=2) as running:
        yield running.address


def _items(folder: Path, n: int, **kwargs) -> list[BatchItem]:
    paths = _write_spectra(folder, n, **kwargs)
    return [BatchItem(item_id=p.stem, spectrum=p, candidates=CANDIDATES) for p in paths]


def _marked_analyze(path, budget=None, *, marks: str, sleep_s: float = 0.0, **kwargs):
    """The stand-in analysis, which first leaves a file ``<item>.<pid>`` in ``marks`` (who ran which
    attempt) and then takes ``sleep_s``."""
    Path(marks, f"{Path(path).stem}.{os.getpid()}").touch()
    time.sleep(sleep_s)
    return nnls_analyze(path, **kwargs)


def _without_seconds(text: str, column: str = "seconds") -> list[dict]:
    rows = list(csv.DictReader(io.StringIO(text)))
    for row in rows:
        row.pop(column)
    return rows


def _item_files(out: Path, item_id: str) -> dict[str, object]:
    """An item's files as they should agree between runs: timings and time stamps left out."""
    found = {}
    for path in sorted((out / item_id).iterdir()):
        if path.suffix == ".json":
            data = json.loads(path.read_text())
            for key in ("seconds", "timestamp"):
                data.pop(key, None)
            found[path.name] = data
        else:
            found[path.name] = path.read_bytes()
    return found


def _half_written(out: Path) -> list[str]:
    """Temporary files left in ``out``, and items marked finished whose files do not read back."""
    bad = [str(p) for p in out.rglob("*.tmp")]
    for outcome_file in out.glob("*/outcome.json"):
        outcome = json.loads(outcome_file.read_text())
        if outcome["status"] == "done":
            result = json.loads((outcome_file.parent / "result.json").read_text())
            if not {"components", "verdict", "inputs"} <= set(result):
                bad.append(str(outcome_file.parent))
    return bad


# --- same results as the process pool -----------------------------------------------------------------


@pytest.mark.slow
def test_twenty_spectra_with_one_corrupt_file_give_the_same_files_as_the_process_pool(cluster, tmp_path):
    z_values = [0.005 if k % 2 else 0.05 for k in range(20)]  # QC: alternately PASS and FAIL
    items = _items(tmp_path / "spectra", 20, corrupt_index=7, z_values=z_values, terminal=0.0)
    (tmp_path / "spec.toml").write_text(SPEC_TEXT)
    spec = read_spec(tmp_path / "spec.toml")
    runs = {"pool": {"jobs": 2}, "dask2": {"scheduler": cluster}, "dask1": {"scheduler": "local", "jobs": 1}}
    summaries = {name: run_batch(items, tmp_path / name, spec=spec, analyze=nnls_analyze, write_reports=False,
                                 progress=False, **options) for name, options in runs.items()}
    pool = summaries["pool"]
    assert pool.counts == {"done": 19, "skipped": 0, "error": 1}
    assert {o.qc_status for o in pool.outcomes if o.status == "done"} == {"PASS", "FAIL"}
    for name in ("dask2", "dask1"):
        other = summaries[name]
        assert [(o.item_id, o.status, o.qc_status, o.major, o.error) for o in other.outcomes] == \
            [(o.item_id, o.status, o.qc_status, o.major, o.error) for o in pool.outcomes], name
        assert _without_seconds(other.summary_csv.read_text()) == \
            _without_seconds(pool.summary_csv.read_text())
        for table in ("components.csv", "index.html"):
            assert (tmp_path / name / table).read_bytes() == (tmp_path / "pool" / table).read_bytes(), table
        for item in items:
            assert _item_files(tmp_path / name, item.item_id) == _item_files(tmp_path / "pool", item.item_id)
        assert _half_written(tmp_path / name) == []
    assert set(_item_files(tmp_path / "dask2", "lot03")) == {"audit.json", "components.csv", "outcome.json",
                                                              "ratios.csv", "result.json"}
    again = run_batch(items, tmp_path / "dask2", spec=spec, analyze=nnls_analyze, write_reports=False,
                      progress=False, scheduler=cluster)
    assert again.counts == {"done": 0, "skipped": 19, "error": 1}  # a rerun skips the finished items


def test_the_terminal_shows_the_workers_and_the_dashboard(cluster, tmp_path, capsys):
    items = _items(tmp_path / "spectra", 2)
    summary = run_batch(items, tmp_path / "out", analyze=nnls_analyze, write_reports=False, progress=True,
                        scheduler=cluster)
    assert summary.counts["done"] == 2
    err = capsys.readouterr().err
    assert f"dask: 2 worker(s), 2 thread(s) on {cluster}" in err
    assert "dask dashboard: http://" in err and "/status" in err
    assert "analysing: 100%" in err and "2/2" in err  # the progress bar as with the process pool


# --- faults ---------------------------------------------------------------------------------------------


@pytest.mark.slow
def test_a_worker_killed_mid_item_costs_only_that_attempt(cluster, tmp_path):
    items = _items(tmp_path / "spectra", 8)
    marks = tmp_path / "marks"
    marks.mkdir()
    analyze = functools.partial(_marked_analyze, marks=str(marks), sleep_s=1.0)
    killed = []

    def kill_the_first_worker_that_starts_an_item():
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and not killed:
            started = sorted(marks.iterdir())
            if started:
                item, pid = started[0].name.rsplit(".", 1)
                os.kill(int(pid), signal.SIGKILL)  # mid-item: the analysis sleeps a second after its mark
                killed.append((item, int(pid)))
            time.sleep(0.05)

    killer = threading.Thread(target=kill_the_first_worker_that_starts_an_item)
    killer.start()
    summary = run_batch(items, tmp_path / "out", analyze=analyze, write_reports=True, progress=False,
                        scheduler=cluster)
    killer.join()
    assert killed, "no item started within a minute"
    item, pid = killed[0]
    assert {o.status for o in summary.outcomes} <= {"done", "error"}
    assert summary.counts["done"] == 8  # the killed item's attempt was run again, on a live worker
    attempts = sorted(p.name for p in marks.iterdir() if p.name.startswith(item + "."))
    assert len(attempts) == 2 and f"{item}.{pid}" in attempts
    assert _half_written(tmp_path / "out") == []
    assert (tmp_path / "out" / item / "report.html").read_text().rstrip().endswith("</html>")


def _dies_or_hangs(path, budget=None, **kwargs):
    """lot00: the worker process dies each time; lot01: hangs where no budget check reaches; lot02: fine."""
    name = Path(path).stem
    if name == "lot00":
        os._exit(7)
    if name == "lot01":
        time.sleep(120)
    return nnls_analyze(path, **kwargs)


@pytest.mark.slow
def test_an_item_that_kills_its_worker_twice_or_hangs_is_reported_and_the_rest_go_on(cluster, tmp_path,
                                                                                        monkeypatch):
    monkeypatch.setattr(runner, "_KILL_GRACE_S", 1.0)
    items = _items(tmp_path / "spectra", 3)
    start = time.monotonic()
    summary = run_batch(items, tmp_path / "out", analyze=_dies_or_hangs, write_reports=False, progress=False,
                        max_seconds=1.0, scheduler=cluster)
    assert time.monotonic() - start < 60
    status = {o.item_id: (o.status, o.error) for o in summary.outcomes}
    assert status["lot00"][0] == "error" and "ended without a result each time" in status["lot00"][1]
    assert status["lot01"][0] == "error" and "stopped after 2 s" in status["lot01"][1]
    assert status["lot02"][0] == "done"
    assert not (tmp_path / "out" / "lot00" / "result.json").exists()
    assert _half_written(tmp_path / "out") == []


@pytest.mark.slow
def test_ctrl_c_ends_the_local_cluster_at_once_and_writes_the_summary(tmp_path):
    pytest.importorskip("distributed", reason=_NO_DASK)
    items = _items(tmp_path / "spectra", 4)
    rows = ["spectrum,candidates"] + [f"{i.spectrum},{' '.join(CANDIDATES)}" for i in items]
    seconds, proc, stdout, stderr, out, pids = interrupt_slow_batch(
        tmp_path, rows, options='"--scheduler", "local", ', start_within_s=90.0)
    # The unfinished items sleep 120 s: an exit within 10 s did not wait for them. Closing the local
    # cluster (scheduler, nannies) took 0.5-2.7 s here (idle) and 3.25 s on a loaded CI machine; a
    # tighter bound would time the machine, not the interrupt.
    assert seconds < 10.0
    assert proc.returncode == 130, stderr.decode()
    assert b"Traceback" not in stderr and b"internal error" not in stderr
    assert stdout.decode().splitlines()[-1].startswith("Interrupted: 1 of 4 items finished")
    with open(out / "summary.csv", newline="") as handle:
        status = {r["id"]: r["status"] for r in csv.DictReader(handle)}
    assert status == {"lot00": "done", "lot01": "interrupted", "lot02": "interrupted", "lot03": "interrupted"}
    for pid_file in pids.iterdir():  # the workers that ran the items are gone
        with pytest.raises(ProcessLookupError):
            os.kill(int(pid_file.read_text()), 0)
    assert not (out / LOCK_NAME).exists()


# --- one batch at a time per --out ----------------------------------------------------------------------


@pytest.mark.slow
def test_a_second_batch_on_the_same_out_refuses_to_start(cluster, tmp_path, run_cli):
    items = _items(tmp_path / "spectra", 4)
    marks = tmp_path / "marks"
    marks.mkdir()
    analyze = functools.partial(_marked_analyze, marks=str(marks), sleep_s=1.5)
    out = tmp_path / "out"
    done = {}
    first = threading.Thread(target=lambda: done.setdefault("summary", run_batch(
        items, out, analyze=analyze, write_reports=False, progress=False, scheduler=cluster)))
    first.start()
    try:
        deadline = time.monotonic() + 30
        while not any(marks.iterdir()) and time.monotonic() < deadline:
            time.sleep(0.05)
        assert (out / LOCK_NAME).is_file()
        with pytest.raises(InputError, match="is in use by another batch"):
            run_batch(items, out, analyze=nnls_analyze, write_reports=False, progress=False)
        rows = ["spectrum,candidates"] + [f"{i.spectrum},{' '.join(CANDIDATES)}" for i in items]
        (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
        second = run_cli("batch", tmp_path / "m.csv", "--out", out)
        assert second.exit_code == 2 and "Traceback" not in second.stderr
        assert second.stderr.count("\n") == 1 and f"process {os.getpid()}" in second.stderr
    finally:
        first.join()
    assert done["summary"].counts == {"done": 4, "skipped": 0, "error": 0}
    assert not (out / LOCK_NAME).exists()  # released when the batch ended
    third = run_batch(items, out, analyze=nnls_analyze, write_reports=False, progress=False)
    assert third.counts["skipped"] == 4


# --- without Dask ---------------------------------------------------------------------------------------


def test_without_dask_the_scheduler_option_is_a_one_line_error(tmp_path, run_cli, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # "import distributed" raises ImportError
    items = _items(tmp_path / "spectra", 1)
    rows = ["spectrum,candidates", f"{items[0].spectrum},{' '.join(CANDIDATES)}"]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    for scheduler in ("local", "tcp://127.0.0.1:8786"):
        result = run_cli("batch", tmp_path / "m.csv", "--out", tmp_path / "out", "--scheduler", scheduler)
        assert result.exit_code == 2 and result.stdout == ""
        assert result.stderr.count("\n") == 1 and "Traceback" not in result.stderr
        assert 'pip install "confirm-nmr[cluster]"' in result.stderr
    assert not (tmp_path / "out").exists()  # refused before any work
    with pytest.raises(InputError, match=r"confirm-nmr\[cluster\]"):
        run_batch(items, tmp_path / "out", analyze=nnls_analyze, scheduler="local")


def test_a_scheduler_that_does_not_answer_is_a_one_line_error(tmp_path, run_cli, monkeypatch):
    pytest.importorskip("distributed", reason=_NO_DASK)
    from confirm.batch import dask_runner

    monkeypatch.setattr(dask_runner, "_CONNECT_TIMEOUT_S", 1.0)
    items = _items(tmp_path / "spectra", 1)
    with pytest.raises(InputError, match="no Dask scheduler answers there"):
        run_batch(items, tmp_path / "out", analyze=nnls_analyze, progress=False, scheduler="tcp://127.0.0.1:9")
    assert not (tmp_path / "out" / LOCK_NAME).exists()


@pytest.mark.skipif(os.name != "posix", reason="the sweep asks with signal 0, a POSIX call")
def test_the_item_folder_of_a_worker_that_died_is_removed_by_the_next_item(tmp_path):
    import subprocess

    from confirm.batch.dask_runner import _ITEM_PREFIX, _sweep_dead_workers_folders

    ended = subprocess.Popen([sys.executable, "-c", "pass"])
    ended.wait()  # a process number that no longer runs (a worker killed mid-item)
    dead = tmp_path / f"{_ITEM_PREFIX}{ended.pid}-a1b2"
    alive = tmp_path / f"{_ITEM_PREFIX}{os.getppid()}-c3d4"  # another worker, still running
    own = tmp_path / f"{_ITEM_PREFIX}{os.getpid()}-e5f6"
    other = tmp_path / f"{_ITEM_PREFIX}notanumber-g7h8"
    for folder in (dead, alive, own, other):
        (folder / "lot00").mkdir(parents=True)
    _sweep_dead_workers_folders(tmp_path)
    assert not dead.exists()
    assert alive.exists() and own.exists() and other.exists()
