"""Independent pieces of one computation run on forked worker processes (private helper).

The fit refines several starting points that do not depend on each other; on a machine with
two or more cores these run side by side. Workers are forked (POSIX), so nothing is imported
again; elsewhere, inside another worker process, or with one core, the tasks run one after the
other in this process. Results come back in task order either way, and are the same.
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


def map_tasks(func: Callable, tasks: Sequence, *, max_workers: int) -> list:
    """``[func(t) for t in tasks]``, on up to ``max_workers`` forked processes when that helps.

    ``func`` must be a module-level function and tasks and results picklable.
    """
    tasks = list(tasks)
    workers = min(max_workers, usable_cores(), len(tasks))
    if (
        workers < 2
        or "fork" not in multiprocessing.get_all_start_methods()
        or multiprocessing.parent_process() is not None  # already a worker: no nested pools
    ):
        return [func(t) for t in tasks]
    with multiprocessing.get_context("fork").Pool(workers) as pool:
        return pool.map(func, tasks, chunksize=1)
