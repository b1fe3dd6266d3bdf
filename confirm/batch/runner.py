"""Running a batch: which items need work, running them, the progress bar and the summary.

Items run in this process, in worker processes on this machine (``jobs > 1``) or on a Dask
cluster (``scheduler=``, see :mod:`confirm.batch.dask_runner`). Ctrl-C stops the workers within
about two seconds, keeps what finished and writes the summary of it.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from confirm.batch.finished import ItemOutcome, finished_outcome, hash_or_empty, item_fingerprint
from confirm.batch.lock import hold_out_lock
from confirm.batch.manifest import BatchItem
from confirm.batch.run_item import Task, process_item
from confirm.batch.summary import BatchSummary, write_summary
from confirm.budget import DEFAULT_MAX_SECONDS, Budget
from confirm.qc import QcSpec
from predictors.errors import InputError

#: A worker still running this long after its item's budget ran out is stopped from outside.
_KILL_GRACE_S = 30.0
#: How many times an item whose worker process ended is run again before it is reported.
_RETRIES = 1
#: What the summary says when a child process gives no outcome.
_FAILURES = {"died": "worker process ended without a result each time the item was tried (crashed or killed)",
             "overdue": "time budget: no result long after the {limit:g} s budget; the worker was stopped"}


def run_batch(items: Sequence[BatchItem], out_dir: str | Path, *, jobs: int = 1, force: bool = False,
              spec: QcSpec | None = None, analyze: Callable | None = None, write_reports: bool = True,
              progress: bool = True, max_seconds: float = DEFAULT_MAX_SECONDS,
              scheduler: str | None = None) -> BatchSummary:
    """Analyse every item, in ``jobs`` child processes or on a Dask cluster, and write the summary
    files.

    Parameters
    ----------
    items : sequence of BatchItem
    out_dir : path
        Created when missing; one sub-folder per item plus ``summary.csv`` and ``index.html``. One
        batch at a time may run there (see :mod:`confirm.batch.lock`).
    jobs : int, keyword-only
        Child processes (1 runs in this process); with ``scheduler="local"``, the local cluster's
        worker processes.
    force : bool, keyword-only
        Redo items that a previous run finished on identical work.
    spec : QcSpec, keyword-only
        Shared specification: every item without its own is QC-checked against it.
    analyze : callable, keyword-only
        ``analyze(path, **kwargs) -> AnalysisResult``; given ``budget=`` too when it names that
        parameter.
        ``confirm.analysis.analyze_path`` by default. Must be picklable (module-level) where
        child processes are started without fork, and importable on Dask workers.
    write_reports : bool, keyword-only
        Write an HTML report per item.
    progress : bool, keyword-only
        Show a progress bar on stderr (and, on a cluster, its workers and dashboard).
    max_seconds : float, keyword-only
        Time budget of each item's analysis.
    scheduler : str, keyword-only
        None (worker processes here), ``"local"`` (a Dask cluster started here) or the address of
        a running Dask scheduler (``tcp://host:8786``); see :mod:`confirm.batch.dask_runner`.

    Returns
    -------
    BatchSummary
        ``interrupted`` is True when Ctrl-C stopped the run: finished items are kept and the
        summary lists the others as ``"interrupted"``.

    Raises
    ------
    InputError
        Bad ``jobs`` or ``max_seconds``, ``--out`` cannot be made or another batch runs there,
        or a scheduler is asked for and Dask is missing or the scheduler does not answer.
    """
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"jobs: expected a whole number >= 1, got {jobs!r}")
    Budget(max_seconds=max_seconds)  # checked before anything runs
    if scheduler is not None:
        from confirm.batch.dask_runner import require_dask

        require_dask()
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"out: cannot create folder {str(out)!r} ({exc.strerror or exc})") from None
    with hold_out_lock(out):
        outcomes, tasks = _plan(items, out, force=force, spec=spec, analyze=analyze,
                                write_reports=write_reports, max_seconds=max_seconds)
        interrupted = _run_tasks(tasks, out, outcomes, jobs=jobs, scheduler=scheduler, progress=progress)
        ordered = tuple(outcomes.get(item.item_id) or _not_run(item) for item in items)
        summary = write_summary(ordered, out)
    return BatchSummary(outcomes=summary.outcomes, summary_csv=summary.summary_csv,
                        index_html=summary.index_html, counts=summary.counts, interrupted=interrupted)


def _plan(items: Sequence[BatchItem], out: Path, *, force: bool, spec: QcSpec | None,
          analyze: Callable | None, write_reports: bool,
          max_seconds: float) -> tuple[dict[str, ItemOutcome], list[Task]]:
    """The outcomes of items an earlier run finished on identical work, and the tasks of the rest."""
    options = {"write_reports": bool(write_reports)}
    outcomes: dict[str, ItemOutcome] = {}
    tasks = []
    for item in items:
        sha256 = hash_or_empty(item.spectrum)
        fingerprint = (item_fingerprint(item, spectrum_sha256=sha256, spec=spec, options=options)
                       if sha256 else "")
        previous = None if force else finished_outcome(
            item, out / item.item_id, fingerprint, needs_audit=item.spec is not None or spec is not None,
            needs_report=write_reports)
        if previous is not None:
            outcomes[item.item_id] = previous
        else:
            tasks.append(Task(item, str(out), spec, analyze, write_reports, sha256, fingerprint,
                              max_seconds))
    return outcomes, tasks


def _run_tasks(tasks: list[Task], out: Path, outcomes: dict[str, ItemOutcome], *, jobs: int,
               scheduler: str | None, progress: bool) -> bool:
    """Run the tasks, adding their outcomes as they finish; True when Ctrl-C stopped the run."""
    with contextlib.ExitStack() as stack:
        if scheduler is not None and tasks:
            from confirm.batch.dask_runner import DaskRunner

            cluster = stack.enter_context(DaskRunner(scheduler, local_workers=jobs))
            if progress:
                for line in cluster.describe():
                    print(line, file=sys.stderr)
            stream = cluster.outcomes(tasks, out, overdue_s=_overdue_s)
        else:
            stream = _execute(tasks, jobs)
        bar = _progress_bar(len(tasks), enabled=progress)
        try:
            for outcome in stream:
                outcomes[outcome.item_id] = outcome
                bar.update(1)
        except KeyboardInterrupt:
            return True
        finally:
            stream.close()  # stops the children still running
            bar.close()
    return False


def _overdue_s(task: Task) -> float:
    return task.max_seconds + _KILL_GRACE_S


def _progress_bar(total: int, *, enabled: bool):
    from tqdm import tqdm

    class _Bar(tqdm):
        monitor_interval = 0  # no monitor thread: child processes are forked while the bar is open

    return _Bar(total=total, file=sys.stderr, disable=not enabled, unit="spectrum", desc="analysing")


def _execute(tasks: list[Task], jobs: int):
    """Outcomes of the tasks as they finish: here one by one, or in up to ``jobs`` children."""
    if jobs == 1 or len(tasks) <= 1:
        for task in tasks:
            yield process_item(task)
        return
    from confirm._children import run_in_workers

    yield from run_in_workers(
        process_item, tasks, jobs=jobs, overdue_s=_overdue_s, retries=_RETRIES,
        on_failure=lambda task, why: _failed(task, _FAILURES[why].format(limit=task.max_seconds)))


def _not_run(item: BatchItem) -> ItemOutcome:
    return ItemOutcome(item_id=item.item_id, spectrum=str(item.spectrum), status="interrupted")


def _failed(task: Task, error: str) -> ItemOutcome:
    return ItemOutcome(item_id=task.item.item_id, spectrum=str(task.item.spectrum), status="error",
                       sha256=task.sha256, error=error, fingerprint=task.fingerprint)
