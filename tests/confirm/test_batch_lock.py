"""The lock that keeps two batches out of one ``--out`` folder (confirm/batch/lock.py).

A batch running at the same time as another is tested on a Dask cluster in test_batch_dask.py;
here the lock file is written by hand as another process would leave it: held by a process that
runs, by one that has ended, by another host, half-written, or by a process id given to another.
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time

import pytest

from confirm.batch import BatchItem, run_batch
from confirm.batch.lock import LOCK_NAME, _process_start, hold_out_lock
from predictors.errors import InputError
from tests.confirm.test_batch import CANDIDATES, _write_spectra, nnls_analyze


def _lock(out, **fields) -> None:
    out.mkdir(exist_ok=True)
    record = {"pid": os.getpid(), "host": socket.gethostname(), "pid_start": "",
              "started": "2024-05-01 09:00:00"}
    (out / LOCK_NAME).write_text(json.dumps({**record, **fields}))


def _ended_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()  # reaped: the id is free
    return proc.pid


@pytest.fixture
def manifest(tmp_path):
    paths = _write_spectra(tmp_path / "spectra", 1)
    rows = ["spectrum,candidates", f"{paths[0]},{' '.join(CANDIDATES)}"]
    (tmp_path / "m.csv").write_text("\n".join(rows) + "\n")
    return tmp_path / "m.csv"


def test_a_lock_held_by_a_running_batch_is_a_one_line_error(tmp_path, manifest, run_cli):
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        _lock(tmp_path / "out", pid=sleeper.pid, pid_start=_process_start(sleeper.pid))
        result = run_cli("batch", manifest, "--out", tmp_path / "out")
    finally:
        sleeper.kill()
        sleeper.wait()
    assert result.exit_code == 2 and result.stdout == "" and result.stderr.count("\n") == 1
    assert result.stderr.startswith("error: --out ") and "in use by another batch" in result.stderr
    assert f"process {sleeper.pid} on {socket.gethostname()}, started 2024-05-01 09:00:00" in result.stderr
    assert not (tmp_path / "out" / "summary.csv").exists()  # nothing done
    assert (tmp_path / "out" / LOCK_NAME).exists()  # and the other batch's lock left alone


def test_a_lock_left_by_a_process_that_ended_is_taken_over_and_removed_after(tmp_path):
    items = [BatchItem(item_id=p.stem, spectrum=p, candidates=CANDIDATES)
             for p in _write_spectra(tmp_path / "spectra", 2)]
    _lock(tmp_path / "out", pid=_ended_pid())
    summary = run_batch(items, tmp_path / "out", analyze=nnls_analyze, write_reports=False, progress=False)
    assert summary.counts["done"] == 2
    assert not (tmp_path / "out" / LOCK_NAME).exists()
    assert [p.name for p in (tmp_path / "out").iterdir() if p.name.startswith(LOCK_NAME)] == []


@pytest.mark.skipif(not _process_start(os.getpid()), reason="process start times are read from /proc (Linux)")
def test_a_process_id_given_to_another_process_does_not_hold_the_lock(tmp_path):
    _lock(tmp_path, pid=os.getpid(), pid_start="1")  # this process's id, but started at another tick
    with hold_out_lock(tmp_path) as path:
        assert json.loads(path.read_text())["pid_start"] == _process_start(os.getpid())
    with hold_out_lock(tmp_path), pytest.raises(InputError, match="in use by another batch"), \
            hold_out_lock(tmp_path):
        pass  # the same process, started at the same tick: held


def test_a_lock_from_another_host_is_respected_and_the_message_says_what_to_delete(tmp_path):
    _lock(tmp_path, host="some-other-host", pid=_ended_pid())
    with pytest.raises(InputError) as caught, hold_out_lock(tmp_path):
        pass
    message = str(caught.value)
    assert "on some-other-host" in message and f"delete {str(tmp_path / LOCK_NAME)!r}" in message


def test_an_empty_lock_file_is_being_written_until_it_is_old(tmp_path):
    (tmp_path / LOCK_NAME).write_text("")
    with pytest.raises(InputError, match="in use by another batch;"), hold_out_lock(tmp_path):
        pass
    old = time.time() - 60
    os.utime(tmp_path / LOCK_NAME, (old, old))
    with hold_out_lock(tmp_path) as path:
        assert json.loads(path.read_text())["pid"] == os.getpid()
    assert not (tmp_path / LOCK_NAME).exists()


def test_the_lock_is_released_when_the_run_fails(tmp_path):
    with pytest.raises(RuntimeError), hold_out_lock(tmp_path):
        raise RuntimeError("a bug")
    assert not (tmp_path / LOCK_NAME).exists()
