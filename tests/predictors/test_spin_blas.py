"""The spin simulator runs OpenBLAS on one thread and gives the caller's thread count back."""

from __future__ import annotations

import threading

import numpy as np
import pytest

from predictors.spin import simulate_arrays
from predictors.spin._blas import one_blas_thread


def _counts():
    from threadpoolctl import threadpool_info

    return [lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"]


@pytest.fixture
def two_threads():
    from threadpoolctl import threadpool_limits

    if not _counts():
        pytest.skip("no BLAS library loaded by numpy in this process")
    limiter = threadpool_limits(limits=2, user_api="blas")
    yield
    limiter.restore_original_limits()


def test_one_thread_inside_and_restored_after(two_threads):
    with one_blas_thread():
        assert set(_counts()) == {1}
        with one_blas_thread():  # nested: still one, and the outer exit restores
            assert set(_counts()) == {1}
        assert set(_counts()) == {1}
    assert set(_counts()) == {2}


def test_simulation_restores_the_thread_count_also_when_run_concurrently(two_threads):
    shifts, j = [1.0, 1.1, 1.3], np.array([[0, 7.0, 1.0], [7.0, 0, 6.0], [1.0, 6.0, 0]])
    errors = []

    def work():
        try:
            for _ in range(5):
                simulate_arrays(shifts, j, [2, 2, 3], field_mhz=60.0)
        except Exception as exc:  # pragma: no cover - reported below
            errors.append(exc)

    threads = [threading.Thread(target=work) for _ in range(3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors
    assert _counts() == [2] * len(_counts())
