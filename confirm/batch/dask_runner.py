"""Batch items on a Dask cluster: a running scheduler (``tcp://host:8786``) or a local one.

Each item runs on a worker in a temporary folder of its own (:func:`run_item_on_worker`); the
worker sends back the item's outcome and the bytes of the files it wrote, and this process (the
driver) writes them into ``--out/<id>/``, each through a temporary file and a rename, with
``outcome.json`` last: a worker that dies mid-item leaves nothing in ``--out``, and an item is
marked finished only once all its files are there. Workers therefore need to read the spectra
(the same paths on every machine, or a shared file system) but never write to ``--out``; paths
are sent absolute to a scheduler elsewhere.

Items stream through: at most a few per worker thread are submitted at a time, and each result is
written to disk and dropped as it arrives, so the driver's memory does not grow with the batch.
A worker that dies (crashed, killed, or stopped by its watchdog long past the item's time budget)
costs only its item's attempt: the scheduler runs the item again on another worker, once for a
local cluster (``distributed.scheduler.allowed-failures = 1``; a scheduler started elsewhere uses
its own setting), and reports it as an error after that.

Dask is an optional dependency (``pip install "confirm-nmr[cluster]"``); this module imports it
only when a cluster is used, and :func:`require_dask` turns its absence into a one-line error.
"""

from __future__ import annotations

import contextlib
import itertools
import json
import logging
import os
import shutil
import tempfile
import threading
import time
import uuid
from collections.abc import Callable, Iterator, Sequence
from dataclasses import asdict, replace
from pathlib import Path

from confirm._files import atomic_path, write_text_atomic
from confirm.batch.finished import ItemOutcome
from confirm.batch.run_item import Task, item_dir_in, one_line, process_item
from predictors.errors import ConfirmError, InputError

__all__ = ["INSTALL_HINT", "DaskRunner", "require_dask", "run_item_on_worker"]

#: How to install the optional dependency (named in the error when it is missing).
INSTALL_HINT = 'pip install "confirm-nmr[cluster]" (or ".[cluster]" in a source checkout)'
#: Items submitted per worker thread at a time: enough to keep every worker busy, few enough that
#: the results in flight stay small.
_IN_FLIGHT_PER_THREAD = 2
#: How long the driver tries to reach a scheduler before it gives up.
_CONNECT_TIMEOUT_S = 20.0
#: How often the driver asks how many worker threads the cluster has (workers come and go).
_RECOUNT_S = 5.0
#: Scheduler settings of a local cluster: a task whose worker dies is run once more, then erred;
#: a worker holds only the item it runs, so a killed worker costs no other item its retry.
_LOCAL_CONFIG = {"distributed.scheduler.allowed-failures": 1, "distributed.scheduler.worker-saturation": 1.0}
#: Name of the outcome file, which the driver writes itself after the item's other files.
_OUTCOME = "outcome.json"
#: Start of an item's temporary folder on a worker, followed by the worker's process id.
_ITEM_PREFIX = "confirm-item-"


def require_dask() -> None:
    """Raise :class:`InputError` naming the extra to install when ``dask.distributed`` is missing."""
    try:
        import distributed  # noqa: F401
    except ImportError:
        raise InputError(f"--scheduler needs Dask, which is not installed; install it with "
                         f"{INSTALL_HINT}") from None


# --- on a worker -------------------------------------------------------------------------------------

#: One item at a time per worker process, whatever its number of threads: the analysis sets
#: process-wide state (BLAS threads, caches) and is not written to run twice at once.
_ONE_AT_A_TIME = threading.Lock()


def run_item_on_worker(task: Task, stop_after_s: float) -> tuple[ItemOutcome, dict[str, bytes]]:
    """Run one item in a temporary folder; return its outcome and its files (path inside the item
    folder -> bytes, ``outcome.json`` left out). Never raises for the item's own errors.

    ``stop_after_s``: a worker still on the item this long after it started is ended (like a
    crash), so that an analysis stuck where no budget check reaches cannot hold a worker forever.
    """
    from confirm._allocator import tune_allocator

    tune_allocator()  # a worker starts with a trim threshold that doubles the time of an analysis
    with _ONE_AT_A_TIME, _ended_after(stop_after_s), \
            tempfile.TemporaryDirectory(prefix=f"{_ITEM_PREFIX}{os.getpid()}-") as tmp:
        _sweep_dead_workers_folders(Path(tmp).parent)
        outcome = process_item(replace(task, out_dir=tmp))
        folder = Path(tmp) / task.item.item_id
        files = {}
        if folder.is_dir():
            for path in sorted(folder.rglob("*")):
                name = path.relative_to(folder).as_posix()
                if path.is_file() and name != _OUTCOME:
                    files[name] = path.read_bytes()
    return outcome, files


def _sweep_dead_workers_folders(parent: Path) -> None:
    """Remove the item folders left in ``parent`` by worker processes that no longer run.

    A worker that dies mid-item (killed, out of memory, or ended by its watchdog) cannot remove its
    temporary folder; the next item on this machine does, once the process named in the folder's
    name is gone. A folder of a live process (or of a number reused since) is left alone.
    """
    if os.name != "posix":  # elsewhere signal 0 does not merely ask whether a process runs
        return
    for folder in parent.glob(f"{_ITEM_PREFIX}*-*"):
        pid = folder.name[len(_ITEM_PREFIX):].split("-", 1)[0]
        if not pid.isdigit() or int(pid) == os.getpid() or _process_runs(int(pid)):
            continue
        shutil.rmtree(folder, ignore_errors=True)


def _process_runs(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # another user's process (PermissionError), or a platform without signal 0
        return True
    return True


@contextlib.contextmanager
def _ended_after(seconds: float) -> Iterator[None]:
    timer = threading.Timer(seconds, os._exit, args=(70,))  # 70: EX_SOFTWARE, an internal failure
    timer.daemon = True
    timer.start()
    try:
        yield
    finally:
        timer.cancel()


# --- in the driver -----------------------------------------------------------------------------------


class DaskRunner:
    """``with DaskRunner(address) as runner: for outcome in runner.outcomes(tasks, out): ...``

    Parameters
    ----------
    scheduler : str
        ``"local"`` starts a local cluster of ``local_workers`` worker processes (one thread
        each) for the duration of the block; anything else is the address of a running
        scheduler (``tcp://host:8786``).
    local_workers : int, keyword-only
        Worker processes of a local cluster.

    Raises
    ------
    InputError
        Dask is not installed, or no scheduler answers at the address.
    """

    def __init__(self, scheduler: str, *, local_workers: int = 2):
        require_dask()
        if not isinstance(scheduler, str) or not scheduler.strip():
            raise InputError(f"--scheduler: expected 'local' or a scheduler address such as "
                             f"tcp://host:8786, got {scheduler!r}")
        self.scheduler = scheduler.strip()
        self.local = self.scheduler == "local"
        self.local_workers = local_workers
        self._cluster = self._client = None
        self._quiet = contextlib.ExitStack()

    def __enter__(self) -> DaskRunner:
        self._quiet.enter_context(_quiet_dask_logs())
        try:
            self._connect()
        except BaseException:
            self.__exit__(None, None, None)
            raise
        return self

    def _connect(self) -> None:
        import dask
        from distributed import Client, LocalCluster

        if self.local:
            try:
                with dask.config.set(_LOCAL_CONFIG):
                    self._cluster = LocalCluster(n_workers=self.local_workers, threads_per_worker=1,
                                                 processes=True, memory_limit=0, silence_logs=logging.ERROR)
            except (OSError, RuntimeError, TimeoutError) as exc:
                raise InputError(f"--scheduler local: cannot start a local Dask cluster ({one_line(exc)}); "
                                 "run without --scheduler to use worker processes instead") from None
            self._client = Client(self._cluster, set_as_default=False)
            return
        try:
            self._client = Client(self.scheduler, timeout=_CONNECT_TIMEOUT_S, set_as_default=False)
        except (OSError, ValueError, TypeError) as exc:
            raise InputError(f"--scheduler {self.scheduler!r}: no Dask scheduler answers there "
                             f"({one_line(exc)}); start one with 'dask scheduler' or use "
                             "--scheduler local") from None

    def __exit__(self, *exc) -> None:
        with contextlib.suppress(Exception):
            if self._client is not None:
                self._client.close()
        with contextlib.suppress(Exception):
            if self._cluster is not None:
                self._cluster.close()
        self._client = self._cluster = None
        self._quiet.close()

    @property
    def address(self) -> str:
        """The scheduler's address (of the local cluster too, while the block runs)."""
        return self._client.scheduler.address

    def describe(self) -> list[str]:
        """Lines for the terminal: the scheduler, its workers and the dashboard when one is up."""
        nthreads = self._client.nthreads()
        threads = sum(nthreads.values())
        where = "a local cluster" if self.local else self.scheduler
        lines = [f"dask: {len(nthreads)} worker(s), {threads} thread(s) on {where}"]
        if "dashboard" in self._client.scheduler_info().get("services", {}):
            hint = "" if _has_bokeh() or not self.local else " (its plots need bokeh>=3.1: pip install bokeh)"
            lines.append(f"dask dashboard: {self._client.dashboard_link}{hint}")
        if not threads:
            lines.append("dask: no workers yet; items wait until one connects (dask worker ADDRESS)")
        retried = self._allowed_failures()
        if retried is not None and retried != 1:
            lines.append(f"dask: this scheduler runs an item whose worker died up to {retried} more time(s) "
                         "(distributed.scheduler.allowed-failures; a local cluster: once)")
        return lines

    def _allowed_failures(self) -> int | None:
        try:
            value = self._client.run_on_scheduler(_scheduler_allowed_failures)
        except Exception:  # a scheduler that refuses to run functions: its setting stays unknown
            return None
        return value if isinstance(value, int) else None

    def _threads(self) -> int:
        return sum(self._client.nthreads().values())

    def outcomes(self, tasks: Sequence[Task], out: Path, *, overdue_s: Callable) -> Iterator[ItemOutcome]:
        """Run the tasks on the cluster; yield each outcome once its files are written into ``out``.

        ``overdue_s(task)``: seconds after which a worker still on ``task`` is ended.
        """
        from distributed import as_completed

        pending = iter(tasks)
        running: dict[str, tuple[object, Task]] = {}
        finished = as_completed(loop=self._client.loop)
        limit, counted = self._limit(), time.monotonic()

        def submit(count: int) -> None:
            for task in itertools.islice(pending, max(count, 0)):
                sent = task if self.local else _absolute(task)
                try:
                    future = self._client.submit(run_item_on_worker, sent, overdue_s(task),
                                                 key=f"confirm-item-{uuid.uuid4().hex}", pure=False)
                except Exception as exc:  # the client has closed: the scheduler went away
                    raise self._lost(exc) from None
                running[future.key] = (future, task)
                finished.add(future)

        submit(limit)
        try:
            for future in finished:
                _, task = running.pop(future.key)
                outcome = self._collect(future, task, out, overdue_s(task))
                try:
                    future.release()
                    if time.monotonic() - counted > _RECOUNT_S:
                        limit, counted = self._limit(), time.monotonic()
                except Exception as exc:  # the client has closed: the scheduler went away
                    raise self._lost(exc) from None
                del future
                submit(limit - len(running))
                yield outcome
        finally:
            if running:  # left early (Ctrl-C): the items still queued or running are dropped
                with contextlib.suppress(Exception):
                    self._client.cancel([future for future, _ in running.values()], force=True)
                if self.local:
                    self._end_local_workers()
            finished.clear()

    def _end_local_workers(self) -> None:
        """End the local cluster's worker processes at once (SIGKILL): asked to close, a worker busy
        with an item takes about four seconds, and nothing of a stopped item is kept anyway."""
        import signal

        with contextlib.suppress(Exception):
            for pid in self._client.run(os.getpid).values():
                with contextlib.suppress(OSError):
                    os.kill(pid, signal.SIGKILL)

    def _lost(self, exc: BaseException) -> InputError:
        return InputError(f"--scheduler {self.scheduler!r}: lost the Dask scheduler ({one_line(exc)}); the "
                          "finished items are kept: run the same command again for the rest")

    def _limit(self) -> int:
        return max(2, _IN_FLIGHT_PER_THREAD * self._threads())

    def _collect(self, future, task: Task, out: Path, overdue_s: float) -> ItemOutcome:
        try:
            outcome, files = future.result()
        except Exception as exc:
            return _failed(task, _failure_text(exc, task, overdue_s))
        outcome = replace(outcome, spectrum=str(task.item.spectrum))  # as given, also when sent absolute
        return store_item(outcome, files, out)


def _scheduler_allowed_failures(dask_scheduler=None):
    return getattr(dask_scheduler, "allowed_failures", None)


def _absolute(task: Task) -> Task:
    """The task with its paths made absolute (from this process's folder), for workers elsewhere."""
    item = task.item
    spec = None if item.spec is None else Path(os.path.abspath(item.spec))
    return replace(task, item=replace(item, spectrum=Path(os.path.abspath(item.spectrum)), spec=spec))


def _failure_text(exc: BaseException, task: Task, overdue_s: float) -> str:
    if type(exc).__name__ == "KilledWorker":
        return (f"worker process ended without a result each time the item was tried (crashed, killed, "
                f"or stopped after {overdue_s:g} s: the {task.max_seconds:g} s budget and a grace)")
    return f"Dask could not run this item ({type(exc).__name__}: {one_line(exc)})"


def _failed(task: Task, error: str) -> ItemOutcome:
    return ItemOutcome(item_id=task.item.item_id, spectrum=str(task.item.spectrum), status="error",
                       sha256=task.sha256, error=error, fingerprint=task.fingerprint)


def store_item(outcome: ItemOutcome, files: dict[str, bytes], out: Path) -> ItemOutcome:
    """Write an item's files into ``out/<id>/``, each through a temporary file and a rename, then
    its ``outcome.json`` (removed first, so the item reads as finished only when all are there).
    Returns the outcome, turned into an error when the files cannot be written."""
    item_dir = None
    try:
        item_dir = item_dir_in(Path(out), outcome.item_id)
        item_dir.mkdir(parents=True, exist_ok=True)
        (item_dir / _OUTCOME).unlink(missing_ok=True)
        for name, data in files.items():
            target = item_dir / name
            if Path(name).is_absolute() or ".." in Path(name).parts:
                raise InputError(f"item {outcome.item_id}: a worker sent a file named {name!r}")
            target.parent.mkdir(parents=True, exist_ok=True)
            with atomic_path(target) as tmp:
                tmp.write_bytes(data)
    except (ConfirmError, OSError) as exc:
        outcome = replace(outcome, status="error", error=f"cannot write the item's files: {one_line(exc)}",
                          major="", confidence="", verdict="", qc_status="", report="")
    if item_dir is None or not item_dir.is_dir():
        return outcome
    try:
        write_text_atomic(item_dir / _OUTCOME, json.dumps(asdict(outcome), indent=2) + "\n")
    except ConfirmError as exc:
        outcome = replace(outcome, status="error", error=one_line(exc))
    return outcome


def _has_bokeh() -> bool:
    try:
        import bokeh  # noqa: F401
    except ImportError:
        return False
    return True


@contextlib.contextmanager
def _quiet_dask_logs() -> Iterator[None]:
    """Dask's own log lines (a worker restarted, a task failed because its workers died) stay out
    of the terminal while the batch shows its progress: the batch reports each item's failure."""
    names = ["distributed"] + [name for name in logging.root.manager.loggerDict
                               if name.startswith("distributed.")]
    loggers = [logging.getLogger(name) for name in names]
    levels = [logger.level for logger in loggers]
    for logger in loggers:
        logger.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        for logger, level in zip(loggers, levels, strict=True):
            logger.setLevel(level)
