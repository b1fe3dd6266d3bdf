"""Independent pieces of one computation run on forked worker processes (private helper).

The fit sweeps and refines several starting points that do not depend on each other; on a
machine with two or more cores these run side by side. Workers are forked (POSIX), so nothing
is imported again; elsewhere, inside another worker process, off the main thread, or with one
core, the tasks run one after the other in this process. Results come back in task order either
way, and are the same.

:class:`Beside` runs one function in a forked process while this one does something else (the
candidates' predictions run while the spectrum is processed and the fit's modules load).

Data every task needs (the fit's candidate models, about a megabyte with their cached spin
simulations) is given once as ``shared``: the workers inherit it when they are forked, so it is
never pickled, while each task carries only what differs between tasks.
"""

from __future__ import annotations

import itertools
import multiprocessing
import os
import threading
from collections.abc import Callable, Sequence

#: Shared data of the open pools, by pool number; forked workers inherit it.
_SHARED: dict[int, object] = {}
_NUMBERS = itertools.count()


def usable_cores() -> int:
    """Cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not Linux
        return os.cpu_count() or 1


def _call(job):
    """Run one task in a worker: ``func(shared, task)`` with the shared data inherited at fork."""
    func, number, task = job
    return func(_SHARED[number], task)


class TaskPool:
    """``with TaskPool(max_workers=2, shared=data) as pool: pool.map(func, tasks)`` returns
    ``[func(data, t) for t in tasks]``; forked workers are started on the first map that has two
    or more tasks and shared by later maps.

    ``func`` must be a module-level function and tasks and results picklable. ``shared`` is
    inherited by the workers as it is when they start: changes a task makes to it stay in that
    process (use it for read-only data and caches).
    """

    def __init__(self, *, max_workers: int, shared: object = None):
        self.max_workers = min(max_workers, usable_cores())
        self.shared = shared
        self._number = next(_NUMBERS)
        self._pool = None

    def __enter__(self) -> TaskPool:
        _SHARED[self._number] = self.shared
        return self

    def __exit__(self, *exc) -> None:
        _SHARED.pop(self._number, None)
        if self._pool is None:
            return
        if exc[0] is None:
            self._pool.close()
        else:
            self._pool.terminate()
        self._pool.join()
        self._pool = None

    def _usable(self) -> bool:
        return self.max_workers >= 2 and self._number in _SHARED and _fork_usable()  # in the with block

    def map(self, func: Callable, tasks: Sequence) -> list:
        """``[func(shared, t) for t in tasks]``, on the workers when there are two or more tasks."""
        tasks = list(tasks)
        if len(tasks) < 2 or not self._usable():
            return [func(self.shared, t) for t in tasks]
        if self._pool is None:
            self._pool = multiprocessing.get_context("fork").Pool(self.max_workers)
        return self._pool.map(_call, [(func, self._number, t) for t in tasks], chunksize=1)


def _fork_usable() -> bool:
    """Two cores, fork, not a worker already (no nested pools), and on the main thread: a process
    that runs its work on another thread (a Dask worker, a threaded program) has other threads
    that a fork could catch holding a lock."""
    return (
        usable_cores() >= 2
        and "fork" in multiprocessing.get_all_start_methods()
        and multiprocessing.parent_process() is None
        and threading.current_thread() is threading.main_thread()
    )


def _beside_main(conn, func, arg) -> None:
    try:
        try:
            value = func(arg)
        except BaseException as exc:  # handed to the parent, which raises it there
            conn.send((False, exc))
            return
        conn.send((True, value))
    except Exception:  # the value or the error cannot be sent: the parent does the work itself
        conn.send((None, None))
    finally:
        conn.close()


class Beside:
    """``with Beside(func, arg) as job: ...; value = job.result()``: ``func(arg)`` runs in a forked
    process while the with block goes on; ``result()`` waits for it and returns its value or
    raises its exception. With one core, without fork or inside a worker process, ``result()``
    calls ``func(arg)`` here instead; so it does if the process dies or cannot send its outcome
    back (not picklable). Leaving the block ends the process.
    """

    def __init__(self, func: Callable, arg):
        self._func, self._arg = func, arg
        self._proc = self._conn = None

    def __enter__(self) -> Beside:
        if _fork_usable():
            ctx = multiprocessing.get_context("fork")
            self._conn, send = ctx.Pipe(duplex=False)
            self._proc = ctx.Process(target=_beside_main, args=(send, self._func, self._arg), daemon=True)
            self._proc.start()
            send.close()
        return self

    def result(self):
        if self._proc is None:
            return self._func(self._arg)
        try:
            ok, value = self._conn.recv()
        except (EOFError, OSError):  # the process died: do it here
            self._close()
            return self._func(self._arg)
        self._close()
        if ok is None:  # the process could not send its outcome back
            return self._func(self._arg)
        if ok:
            return value
        raise value

    def _close(self) -> None:
        if self._proc is not None:
            self._conn.close()
            self._proc.join(timeout=5)
            if self._proc.is_alive():
                self._proc.terminate()
                self._proc.join()
            self._proc = None

    def __exit__(self, *exc) -> None:
        if self._proc is not None:
            self._proc.terminate()
            self._close()
