"""Independent pieces of one computation run on forked worker processes (private helper).

The fit sweeps and refines several starting points that do not depend on each other; on a
machine with two or more cores these run side by side. Workers are forked (POSIX), so nothing
is imported again; elsewhere, inside another worker process, or with one core, the tasks run
one after the other in this process. Results come back in task order either way, and are the
same.
"""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Callable, Sequence


def usable_cores() -> int:
    """Cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not Linux
        return os.cpu_count() or 1


class TaskPool:
    """``with TaskPool(max_workers=2) as pool: pool.map(func, tasks)``; forked workers are started
    on the first map that has two or more tasks and shared by later maps.

    ``func`` must be a module-level function and tasks and results picklable.
    """

    def __init__(self, *, max_workers: int):
        self.max_workers = min(max_workers, usable_cores())
        self._pool = None

    def __enter__(self) -> TaskPool:
        return self

    def __exit__(self, *exc) -> None:
        if self._pool is None:
            return
        if exc[0] is None:
            self._pool.close()
        else:
            self._pool.terminate()
        self._pool.join()
        self._pool = None

    def _usable(self) -> bool:
        return (
            self.max_workers >= 2
            and "fork" in multiprocessing.get_all_start_methods()
            and multiprocessing.parent_process() is None  # already a worker: no nested pools
        )

    def map(self, func: Callable, tasks: Sequence) -> list:
        """``[func(t) for t in tasks]``, on the workers when there are two or more tasks."""
        tasks = list(tasks)
        if len(tasks) < 2 or not self._usable():
            return [func(t) for t in tasks]
        if self._pool is None:
            self._pool = multiprocessing.get_context("fork").Pool(self.max_workers)
        return self._pool.map(func, tasks, chunksize=1)
