"""The forked task pool of the fit (confirm/_parallel.py)."""

from __future__ import annotations

import multiprocessing
import os
import threading

import numpy as np
import pytest

from confirm._parallel import Beside, TaskPool, usable_cores
from predictors.errors import InputError


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


@pytest.mark.skipif(
    usable_cores() < 2 or "fork" not in multiprocessing.get_all_start_methods(),
    reason="needs two cores and fork",
)
def test_off_the_main_thread_the_tasks_run_here_without_forking():
    found = {}

    def work():
        with TaskPool(max_workers=2, shared=_Unpicklable(2)) as pool:
            found["pool"] = pool.map(_scaled, [1, 2, 3])
        with Beside(_square_and_pid, 4) as job:
            found["beside"] = job.result()

    thread = threading.Thread(target=work)
    thread.start()
    thread.join()
    assert [value for value, _ in found["pool"]] == [2, 4, 6]
    assert {pid for _, pid in found["pool"]} == {os.getpid()}
    assert found["beside"] == (16, os.getpid())


def _square_and_pid(x):
    return x * x, os.getpid()


def _fails(x):
    raise InputError(f"candidates: cannot parse {x!r}")


def _dies_in_a_child(x):
    if multiprocessing.parent_process() is not None:
        os._exit(3)  # a worker killed from outside looks like this
    return x + 1


needs_fork = pytest.mark.skipif(
    usable_cores() < 2 or "fork" not in multiprocessing.get_all_start_methods(),
    reason="needs two cores and fork",
)


@needs_fork
def test_beside_runs_in_another_process_and_returns_the_value():
    with Beside(_square_and_pid, 7) as job:
        value, pid = job.result()
    assert value == 49 and pid != os.getpid()


@needs_fork
def test_beside_raises_the_functions_own_error_here():
    with Beside(_fails, "C1CC") as job, pytest.raises(InputError, match="cannot parse 'C1CC'"):
        job.result()


@needs_fork
def test_beside_falls_back_to_this_process_when_the_worker_dies():
    with Beside(_dies_in_a_child, 1) as job:
        assert job.result() == 2


def _unsendable(x):
    import threading

    return x, threading.Lock()  # a lock cannot be pickled back to the parent


@needs_fork
def test_beside_does_the_work_here_when_the_outcome_cannot_be_sent_back():
    with Beside(_unsendable, 4) as job:
        value, lock = job.result()
    assert value == 4 and hasattr(lock, "acquire")


def test_read_only_mappings_survive_pickling():
    import pickle

    from predictors.core import Spectrum

    spectrum = Spectrum(ppm=np.linspace(10, 0, 8), intensity=np.ones(8), field_mhz=400.0, metadata={"a": 1})
    again = pickle.loads(pickle.dumps(spectrum))
    assert dict(again.metadata) == {"a": 1}
    with pytest.raises(TypeError):
        again.metadata["a"] = 2  # still read-only
