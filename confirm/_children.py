"""Tasks on a few worker processes that Ctrl-C and overdue tasks can stop (private).

``confirm batch`` runs its items this way when it has more than one job. Each worker process
takes one task at a time and keeps its caches between tasks; a worker that crashes is replaced
instead of hanging the run and its task run again as often as the caller allows, then reported;
one that runs far past its time is stopped from outside and replaced, and Ctrl-C in the parent
stops every worker within about two seconds. Workers ignore Ctrl-C themselves (the parent
decides) and end on SIGTERM by unwinding, so their temporary files are removed.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import signal
import time
from collections.abc import Callable, Iterator, Sequence
from multiprocessing.connection import wait

__all__ = ["run_in_workers"]

#: How long stopped workers get to end before they are killed.
_STOP_WAIT_S = 1.0
#: How often the parent looks for overdue tasks while it waits.
_POLL_S = 0.5


class _Worker:
    """One worker process and the task it is running (None when idle)."""

    def __init__(self, ctx, func: Callable):
        self.conn, child_end = ctx.Pipe(duplex=True)
        self.proc = ctx.Process(target=_worker_main, args=(child_end, func), daemon=True)
        self.proc.start()
        child_end.close()
        self.task, self.started = None, 0.0

    def give(self, task) -> None:
        self.conn.send(task)
        self.task, self.started = task, time.monotonic()


def run_in_workers(func: Callable, tasks: Sequence, *, jobs: int, overdue_s: Callable,
                   on_failure: Callable, retries: int = 0) -> Iterator:
    """Yield ``func(task)`` for every task, in the order they finish, from up to ``jobs`` workers.

    Parameters
    ----------
    func : callable
        ``func(task) -> result``; must not raise (turn errors into results). Module-level, and
        tasks and results picklable.
    tasks : sequence
    jobs : int, keyword-only
        Worker processes.
    overdue_s : callable, keyword-only
        ``overdue_s(task)``: seconds after which a worker still on ``task`` is stopped.
    on_failure : callable, keyword-only
        ``on_failure(task, why) -> result`` for a task that gave no result; ``why`` is ``"died"``
        (the worker ended) or ``"overdue"``.
    retries : int, keyword-only
        How many times a task whose worker ended is run again (on a fresh worker, before the
        tasks not yet started) before ``on_failure(task, "died")``; an overdue task is never
        run again.

    Leaving early (Ctrl-C in the parent, or the caller stops iterating) stops every worker.
    """
    methods = multiprocessing.get_all_start_methods()
    ctx = multiprocessing.get_context("fork" if "fork" in methods else "spawn")
    waiting = list(reversed(tasks))
    workers = [_Worker(ctx, func) for _ in range(min(jobs, len(tasks)))]
    deaths: dict[int, int] = {}  # by id(task): the caller's sequence keeps every task alive
    try:
        while waiting or any(w.task is not None for w in workers):
            for worker in workers:
                if worker.task is None and waiting:
                    worker.give(waiting.pop())
            busy = {w.conn: w for w in workers if w.task is not None}
            for conn in wait(list(busy), timeout=_POLL_S):
                worker = busy[conn]
                result = _receive(worker)
                task, worker.task = worker.task, None
                if result is _DIED:
                    workers[workers.index(worker)] = _replace(ctx, func, worker)
                    deaths[id(task)] = deaths.get(id(task), 0) + 1
                    if deaths[id(task)] <= retries:
                        waiting.append(task)
                        continue
                    result = on_failure(task, "died")
                yield result
            for k, worker in enumerate(workers):
                if worker.task is not None and time.monotonic() - worker.started > overdue_s(worker.task):
                    task = worker.task
                    workers[k] = _replace(ctx, func, worker)
                    yield on_failure(task, "overdue")
    finally:
        for worker in workers:
            if worker.task is None and worker.proc.is_alive():
                with contextlib.suppress(OSError):
                    worker.conn.send(None)  # done: the idle ones leave by themselves
        _stop([w.proc for w in workers])
        for worker in workers:
            worker.conn.close()


_DIED = object()


def _receive(worker: _Worker):
    try:
        return worker.conn.recv()
    except (EOFError, OSError):  # the worker ended before it could answer
        return _DIED


def _replace(ctx, func: Callable, worker: _Worker) -> _Worker:
    """Stop ``worker`` and return a fresh one in its place."""
    _stop([worker.proc])
    worker.conn.close()
    return _Worker(ctx, func)


def _worker_main(conn, func: Callable) -> None:
    """Body of a worker: run the tasks it is sent until it gets None or the parent goes away."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent decides what Ctrl-C stops
    signal.signal(signal.SIGTERM, _exit_on_term)
    try:
        while True:
            try:
                task = conn.recv()
            except (EOFError, OSError):
                return
            if task is None:
                return
            conn.send(func(task))
    finally:
        conn.close()


def _exit_on_term(_signum, _frame):
    raise SystemExit(143)  # unwinds, so temporary files are removed


def _stop(processes) -> None:
    """Ask the processes to end (SIGTERM), then kill those still there after a second."""
    for proc in processes:
        if proc.is_alive():
            proc.terminate()
    deadline = time.monotonic() + _STOP_WAIT_S
    for proc in processes:
        proc.join(timeout=max(0.0, deadline - time.monotonic()))
        if proc.is_alive():
            proc.kill()
            proc.join(timeout=_STOP_WAIT_S)
