"""The forked task pool of the fit (confirm/_parallel.py)."""

from __future__ import annotations

import multiprocessing
import os

import pytest

from confirm._parallel import TaskPool, usable_cores


class _Unpicklable:
    """Shared data that would fail if it were ever pickled to a worker."""

    def __init__(self, factor: int):
        self.factor = factor

    def __reduce__(self):
        raise TypeError("shared data must reach the workers by fork, not by pickling")


def _scaled(shared, task):
    return shared.factor * task, os.getpid()


def test_map_is_the_loop_with_the_shared_data_first():
    with TaskPool(max_workers=1, shared=_Unpicklable(3)) as pool:
        out = pool.map(_scaled, [1, 2, 3])
    assert [value for value, _ in out] == [3, 6, 9]
    assert {pid for _, pid in out} == {os.getpid()}  # one worker: runs in this process


@pytest.mark.skipif(
    usable_cores() < 2 or "fork" not in multiprocessing.get_all_start_methods(),
    reason="needs two cores and fork",
)
def test_workers_get_the_shared_data_by_fork_and_return_results_in_order():
    with TaskPool(max_workers=2, shared=_Unpicklable(5)) as pool:
        out = pool.map(_scaled, list(range(12)))
        again = pool.map(_scaled, [7, 8])  # the same workers serve a second map
    assert [value for value, _ in out] == [5 * t for t in range(12)]
    assert [value for value, _ in again] == [35, 40]
    assert os.getpid() not in {pid for _, pid in out + again}
