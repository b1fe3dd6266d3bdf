"""Speed of the spin simulator: ``python -m benchmarks.bench_spin``.

Prints, in one run (best of several calls, the median and the best CPU time):
1. a 10-spin strongly coupled cluster (a cyclohexene-like ring of ten distinct
   protons at 60 MHz): fast block-diagonal simulation vs the full 2^10
   Kronecker-product matrix (targets: >= 10x faster, < 50 ms);
2. a 30-H molecule at 60 MHz, (E)-pentadec-2-ene built from explicit arrays
   (target: < 0.5 s).

OpenBLAS runs single-threaded here (unless OPENBLAS_NUM_THREADS is set): the
blocks are small, and on a shared 2-core machine threads mostly add contention
(a 252 x 252 eigh took 20 ms on one thread and 20-570 ms on two).
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import statistics  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

from predictors.spin import plan_clusters, simulate_arrays  # noqa: E402
from tests.predictors.test_spin import ten_spin_ring  # noqa: E402


def _times(func, repeat: int) -> tuple[float, float, float]:
    """Best and median wall time and best CPU time of ``repeat`` calls.

    On a shared machine the median shows how busy it is, and the CPU time
    (this process only; BLAS is single-threaded) what an idle machine gives.
    """
    wall, cpu = [], []
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        func()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return min(wall), statistics.median(wall), min(cpu)


def _full_matrix_lines(shifts_ppm, j_hz, field_mhz):
    """Every proton a spin 1/2 in the full 2^n product space (the slow way)."""
    nu = np.asarray(shifts_ppm) * field_mhz
    n = len(nu)
    iz1 = np.array([[0.5, 0.0], [0.0, -0.5]])
    ip1 = np.array([[0.0, 1.0], [0.0, 0.0]])
    iz = [np.kron(np.kron(np.eye(2**i), iz1), np.eye(2 ** (n - i - 1))) for i in range(n)]
    ip = [np.kron(np.kron(np.eye(2**i), ip1), np.eye(2 ** (n - i - 1))) for i in range(n)]
    ham = sum(nu[i] * iz[i] for i in range(n))
    for a in range(n):
        for b in range(a + 1, n):
            if j_hz[a][b]:
                ham = ham + j_hz[a][b] * (iz[a] @ iz[b] + 0.5 * (ip[a] @ ip[b].T + ip[a].T @ ip[b]))
    energy, vec = np.linalg.eigh(ham)
    inten = (vec.T @ sum(p.T for p in ip) @ vec) ** 2 / 2 ** (n - 1)
    lo, up = np.nonzero(inten > 1e-9)
    return energy[up] - energy[lo], inten[lo, up]


def _pentadecene():
    """(E)-pentadec-2-ene, 30 H: CH3-CH=CH-CH2-(CH2)10-CH3 as 15 sites (plausible values)."""
    shifts = [1.64, 5.42, 5.39, 1.97, 1.36] + [1.30, 1.28, 1.27, 1.26, 1.26, 1.26, 1.27, 1.29, 1.31] + [0.88]
    n = [3, 1, 1, 2, 2] + [2] * 9 + [3]
    j = np.zeros((15, 15))
    for a, b, value in [(0, 1, 6.4), (0, 2, -1.6), (1, 2, 15.2), (2, 3, 6.6), (1, 3, -1.3), (0, 3, 1.1)]:
        j[a, b] = j[b, a] = value
    for a in range(3, 14):
        j[a, a + 1] = j[a + 1, a] = 7.0
    return np.array(shifts), j, np.array(n)


def main() -> None:
    """Run the benchmarks and print their figures."""
    shifts, j, n = ten_spin_ring()
    plan = plan_clusters(shifts, j, n, field_mhz=60.0)
    simulate_arrays(shifts, j, n, field_mhz=60.0)  # warm-up
    fast, fast_median, fast_cpu = _times(lambda: simulate_arrays(shifts, j, n, field_mhz=60.0), 15)
    slow, _, _ = _times(lambda: _full_matrix_lines(shifts, j, 60.0), 2)
    print(f"10-spin strongly coupled cluster at 60 MHz (clusters: {[len(c) for c in plan.clusters]})")
    print(f"  fast (Fz blocks):       {1e3 * fast:8.1f} ms   (target < 50 ms; "
          f"median {1e3 * fast_median:.1f} ms, CPU {1e3 * fast_cpu:.1f} ms)")
    print(f"  full 2^10 matrix:       {1e3 * slow:8.1f} ms")
    print(f"  speed-up:               {slow / fast:8.1f} x   (target >= 10 x)")

    shifts, j, n = _pentadecene()
    lines = simulate_arrays(shifts, j, n, field_mhz=60.0)
    mol, mol_median, mol_cpu = _times(lambda: simulate_arrays(shifts, j, n, field_mhz=60.0), 7)
    print("30-H molecule ((E)-pentadec-2-ene) at 60 MHz")
    print(f"  simulation:             {1e3 * mol:8.1f} ms   (target < 500 ms; {mol / 0.5:.2f} of it; "
          f"median {1e3 * mol_median:.1f} ms, CPU {1e3 * mol_cpu:.1f} ms)")
    print(f"  lines: {lines.ppm.size}, total intensity {lines.intensity.sum():.6f}, "
          f"cut strong couplings: {len(lines.warnings)}")


if __name__ == "__main__":
    main()
