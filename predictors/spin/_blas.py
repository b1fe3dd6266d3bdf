"""One BLAS thread while the simulator (or the mixture fit) runs.

The simulator diagonalises many small blocks (at most a few hundred rows). A threaded BLAS splits
each small call across cores and synchronises them many times per call; on a loaded machine every
synchronisation waits for a time slice, so the same simulation ran 5-50 times slower with
OpenBLAS on two threads than on one (``benchmarks/bench_spin.py`` prints both). One thread also
makes every result independent of the machine's thread count.

The limit is set with threadpoolctl (every BLAS library loaded in the process); the previous
setting is restored when the last user in the process leaves, so nested and concurrent uses
share one limit.
"""

from __future__ import annotations

import contextlib
import threading

__all__ = ["one_blas_thread"]

_LOCK = threading.Lock()
_ACTIVE = {"depth": 0, "limiter": None}


@contextlib.contextmanager
def one_blas_thread():
    """Run the body with every loaded BLAS on one thread; nested and concurrent uses share it."""
    from threadpoolctl import threadpool_limits

    with _LOCK:
        if _ACTIVE["depth"] == 0:
            _ACTIVE["limiter"] = threadpool_limits(limits=1, user_api="blas")
        _ACTIVE["depth"] += 1
    try:
        yield
    finally:
        with _LOCK:
            _ACTIVE["depth"] -= 1
            if _ACTIVE["depth"] == 0:
                _ACTIVE["limiter"].restore_original_limits()
                _ACTIVE["limiter"] = None
