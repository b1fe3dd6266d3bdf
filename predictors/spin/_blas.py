"""One BLAS thread while a spin system is simulated.

The simulator diagonalises many small blocks (at most a few hundred rows). A
threaded BLAS splits each small call across cores and synchronises them many
times per call; on a loaded machine every synchronisation waits for a time
slice, so the same simulation ran 5-50 times slower with OpenBLAS on two
threads than on one (``benchmarks/bench_spin.py`` prints both). The simulator
keeps its own coarse parallelism (large blocks on two Python threads) instead.

The thread count is set through the OpenBLAS library already loaded by numpy,
found in the process's memory map; on other platforms or BLAS builds this is
a no-op. The previous count is restored when the last simulation running in
the process leaves.
"""

from __future__ import annotations

import contextlib
import ctypes
import functools
import os
import threading

# (get, set) entry points, by the name prefixes and suffixes OpenBLAS builds use
_SYMBOLS = (
    ("openblas_get_num_threads", "openblas_set_num_threads"),
    ("openblas_get_num_threads64_", "openblas_set_num_threads64_"),
    ("scipy_openblas_get_num_threads64_", "scipy_openblas_set_num_threads64_"),
    ("scipy_openblas_get_num_threads", "scipy_openblas_set_num_threads"),
)
_LOCK = threading.Lock()
_ACTIVE = {"depth": 0, "saved": ()}


def _loaded_openblas_paths() -> tuple[str, ...]:
    try:
        with open("/proc/self/maps", encoding="utf-8", errors="replace") as maps:
            paths = {line.split()[-1] for line in maps if "openblas" in line.rsplit("/", 1)[-1]}
    except OSError:
        return ()
    return tuple(sorted(p for p in paths if os.path.isfile(p)))


@functools.lru_cache(maxsize=1)
def _controls() -> tuple:
    """(get, set) ctypes functions of every OpenBLAS loaded at the first call (numpy's is
    loaded with numpy); nothing new is loaded."""
    found = []
    paths = _loaded_openblas_paths()
    mode = getattr(os, "RTLD_NOLOAD", 0) | getattr(os, "RTLD_LAZY", 1)
    for path in paths:
        try:
            lib = ctypes.CDLL(path, mode=mode)
        except OSError:
            continue
        for get_name, set_name in _SYMBOLS:
            get_fn, set_fn = getattr(lib, get_name, None), getattr(lib, set_name, None)
            if get_fn is not None and set_fn is not None:
                get_fn.restype, get_fn.argtypes = ctypes.c_int, []
                set_fn.restype, set_fn.argtypes = None, [ctypes.c_int]
                found.append((get_fn, set_fn))
                break
    return tuple(found)


@contextlib.contextmanager
def one_blas_thread():
    """Run the body with every loaded OpenBLAS on one thread; nested and concurrent uses share it."""
    with _LOCK:
        if _ACTIVE["depth"] == 0:
            controls = _controls()
            saved = tuple((set_fn, get_fn()) for get_fn, set_fn in controls)
            for set_fn, count in saved:
                if count != 1:
                    set_fn(1)
            _ACTIVE["saved"] = saved
        _ACTIVE["depth"] += 1
    try:
        yield
    finally:
        with _LOCK:
            _ACTIVE["depth"] -= 1
            if _ACTIVE["depth"] == 0:
                for set_fn, count in _ACTIVE["saved"]:
                    if count != 1:
                        set_fn(count)
                _ACTIVE["saved"] = ()
