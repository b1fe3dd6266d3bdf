"""Running a batch: which items need work, running them, the progress bar and the summary.

Items run in this process, in worker processes on this machine (``jobs > 1``) or on a Dask
cluster (``scheduler=``, see :mod:`confirm.batch.dask_runner`). Ctrl-C stops the workers within
about two seconds, keeps what finished and writes the summary of it.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from confirm.batch.finished import ItemOutcome, finished_outcome, hash_or_empty, item_fingerprint
from confirm.batch.manifest import BatchItem
from confirm.batch.run_item import Task, process_item
from confirm.batch.summary import BatchSummary, write_summary
from confirm.budget import DEFAULT_MAX_SECONDS, Budget
from confirm.qc import QcSpec
from predictors.errors import InputError

#: A child process still running this long after its budget ran out is stopped from outside.
_KILL_GRACE_S = 30.0
#: What the summary says when a child process gives no outcome.
_FAILURES = {"died": "worker process ended without a result (crashed or killed)",
             "overdue": "time budget: no result long after the {limit:g} s budget; the worker was stopped"}


def run_batch(items: Sequence[BatchItem], out_dir: str | Path, *, jobs: int = 1, force: bool = False,
              spec: QcSpec | None = None, analyze: Callable | None = None, write_reports: bool = True,
              progress: bool = True, max_seconds: float = DEFAULT_MAX_SECONDS) -> BatchSummary:
    """Analyse every item, in ``jobs`` child processes, and write the summary files.

    Parameters
    ----------
    items : sequence of BatchItem
    out_dir : path
        Created when missing; one sub-folder per item plus ``summary.csv`` and ``index.html``.
    jobs : int, keyword-only
        Child processes (1 runs in this process).
    force : bool, keyword-only
        Redo items that a previous run finished on identical work.
    spec : QcSpec, keyword-only
        Shared specification: every item without its own is QC-checked against it.
    analyze : callable, keyword-only
        ``analyze(path, **kwargs) -> AnalysisResult``; given ``budget=`` too when it names that
        parameter.
        ``confirm.analysis.analyze_path`` by default. Must be picklable (module-level) where
        child processes are started without fork.
    write_reports : bool, keyword-only
        Write an HTML report per item.
    progress : bool, keyword-only
        Show a progress bar on stderr.
    max_seconds : float, keyword-only
        Time budget of each item's analysis.

    Returns
    -------
    BatchSummary
        ``interrupted`` is True when Ctrl-C stopped the run: finished items are kept and the
        summary lists the others as ``"interrupted"``.
    """
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"jobs: expected a whole number >= 1, got {jobs!r}")
    Budget(max_seconds=max_seconds)  # checked before anything runs
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"out: cannot create folder {str(out)!r} ({exc.strerror or exc})") from None
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
    interrupted = False
    bar = _progress_bar(len(tasks), enabled=progress)
    stream = _execute(tasks, jobs)
    try:
        for outcome in stream:
            outcomes[outcome.item_id] = outcome
            bar.update(1)
    except KeyboardInterrupt:
        interrupted = True
    finally:
        stream.close()  # stops the children still running
        bar.close()
    ordered = tuple(outcomes.get(item.item_id)
                    or ItemOutcome(item_id=item.item_id, spectrum=str(item.spectrum), status="interrupted")
                    for item in items)
    summary = write_summary(ordered, out)
    return BatchSummary(outcomes=summary.outcomes, summary_csv=summary.summary_csv,
                        index_html=summary.index_html, counts=summary.counts, interrupted=interrupted)


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
        process_item, tasks, jobs=jobs, overdue_s=lambda task: task.max_seconds + _KILL_GRACE_S,
        on_failure=lambda task, why: _failed(task, _FAILURES[why].format(limit=task.max_seconds)))


def _failed(task: Task, error: str) -> ItemOutcome:
    return ItemOutcome(item_id=task.item.item_id, spectrum=str(task.item.spectrum), status="error",
                       sha256=task.sha256, error=error, fingerprint=task.fingerprint)
