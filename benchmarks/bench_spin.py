"""Speed of the spin simulator, before and after, in one run: ``python -m benchmarks.bench_spin``.

Prints (best of several calls; wall and CPU time of this process, BLAS threads included):
1. predicted spin systems of 2-hexanol, bromocyclohexane, cyclohexanol and hex-1-ene at 60-600
   MHz, and of menthol, menthyl acetate and ibuprofen at 600 MHz: the simulator as it was at
   commit ``BASELINE_COMMIT`` (read from git, run with the process's BLAS threads as a caller
   would, and again on one BLAS thread) against the current one, with the largest difference of
   the drawn spectra (relative to the peak height; lines 0.3 Hz wide). Targets: >= 5x faster on
   the first four at 60-600 MHz, the 20-25 H molecules at 600 MHz well under 1 s;
2. the line-frequency derivatives (``simulate_with_derivatives``, every coupled pair and every
   site) against one plain simulation and against forward differences with a memo (one
   simulation per coupling and per site, unchanged clusters reused);
3. the older checks: a 10-spin strongly coupled cluster against the full 2^10 matrix (targets
   >= 10x faster, < 50 ms) and a 30-H molecule at 60 MHz (target < 0.5 s).

The BLAS thread count is left as the environment sets it: the current simulator limits itself to
one thread while it runs (see ``predictors/spin/_blas.py``), the baseline did not. Pass
``--quick`` for fewer fields and repeats.
"""

from __future__ import annotations

import functools
import importlib.util
import os
import pathlib
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np

from predictors.spin import (
    plan_clusters,
    render_lines,
    simulate_arrays,
    simulate_arrays_reusing,
    simulate_with_derivatives,
)
from predictors.spin._blas import one_blas_thread
from tests.predictors.test_spin import ten_spin_ring

#: The simulator before this work (spin.py as one module).
BASELINE_COMMIT = "feff77fe89aeb73e00ea174e09619f6899a920a9"
#: (name, SMILES, fields in MHz): the four slow cases reported, at the fields they were timed
#: at and at 60 and 600 MHz, then larger molecules at 600 MHz.
CASES = (
    ("2-hexanol", "CCCCC(C)O", (60.0, 80.0, 400.0, 600.0)),
    ("bromocyclohexane", "BrC1CCCCC1", (60.0, 90.0, 600.0)),
    ("cyclohexanol", "OC1CCCCC1", (60.0, 90.0, 600.0)),
    ("hex-1-ene", "C=CCCCC", (60.0, 80.0, 600.0)),
    ("menthol (20 H)", "CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O", (600.0,)),
    ("menthyl acetate (22 H)", "CC(=O)O[C@@H]1C[C@H](C)CC[C@H]1C(C)C", (600.0,)),
    ("ibuprofen (18 H)", "CC(C)Cc1ccc(cc1)C(C)C(=O)O", (600.0,)),
)
QUICK_FIELDS = {"2-hexanol": (80.0, 400.0), "bromocyclohexane": (90.0,), "cyclohexanol": (90.0,),
                "hex-1-ene": (80.0,)}


def _times(func, repeat: int) -> tuple[float, float, float]:
    """Best and median wall time and best CPU time of ``repeat`` calls (after one warm-up)."""
    func()
    wall, cpu = [], []
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        func()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return min(wall), statistics.median(wall), min(cpu)


def _load_baseline():
    """The simulator module at BASELINE_COMMIT, or None when git or the commit is not at hand."""
    root = pathlib.Path(__file__).resolve().parent.parent
    try:
        source = subprocess.run(["git", "show", f"{BASELINE_COMMIT}:predictors/spin.py"], cwd=root,
                                capture_output=True, text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return None
    folder = tempfile.mkdtemp(prefix="spin_baseline_")
    path = pathlib.Path(folder) / "spin_baseline.py"
    path.write_text(source)
    spec = importlib.util.spec_from_file_location("spin_baseline", path)
    module = importlib.util.module_from_spec(spec)
    sys.modules["spin_baseline"] = module
    spec.loader.exec_module(module)
    return module


def _systems(smiles: list[str]) -> dict:
    from confirm.analysis import build_candidates, predict_systems

    candidates, _ = build_candidates(candidates=smiles)
    systems = predict_systems(candidates)
    return {s: (np.asarray(sys_.shifts_ppm), np.asarray(sys_.j_hz), np.asarray(sys_.n_protons))
            for s, sys_ in zip(smiles, systems, strict=True)}


def _drawn_difference(a, b) -> float:
    low = min(a.ppm.min(), b.ppm.min()) - 0.05
    high = max(a.ppm.max(), b.ppm.max()) + 0.05
    grid = np.linspace(low, high, max(20000, int((high - low) * a.field_mhz / 0.02)))
    ra, rb = render_lines(a, grid, line_width_hz=0.3), render_lines(b, grid, line_width_hz=0.3)
    return float(np.max(np.abs(ra - rb)) / np.max(rb))


def _with_one_thread(func):
    with one_blas_thread():
        return func()


def _compare(systems, baseline, quick: bool) -> None:
    repeat_old, repeat_new = (1, 3) if quick else (3, 5)
    print(f"1. simulate_arrays, before (commit {BASELINE_COMMIT[:7]}) and after; ms, best wall (CPU)")
    print(f"   {'molecule':24s} {'MHz':>5s} {'lines':>6s} {'before':>16s} {'before, 1 thread':>18s} "
          f"{'after':>14s} {'speed-up':>9s} {'(CPU)':>7s} {'drawn diff':>10s}")
    for name, smiles, fields in CASES:
        shifts, j, n = systems[smiles]
        for field in (QUICK_FIELDS.get(name, fields) if quick else fields):
            run_new = functools.partial(simulate_arrays, shifts, j, n, field_mhz=field)
            new = run_new()
            after, _, after_cpu = _times(run_new, repeat_new)
            row = f"   {name:24s} {field:5.0f} {new.ppm.size:6d} "
            if baseline is None:
                print(row + f"{'(no baseline)':>16s} {'':>18s} {1e3 * after:6.1f} ({1e3 * after_cpu:5.1f})")
                continue
            run_old = functools.partial(baseline.simulate_arrays, shifts, j, n, field_mhz=field)
            old = run_old()
            before, _, before_cpu = _times(run_old, repeat_old)
            single, _, single_cpu = _times(functools.partial(_with_one_thread, run_old), repeat_old)
            diff = _drawn_difference(new, old)
            print(row + f"{1e3 * before:7.1f} ({1e3 * before_cpu:6.1f}) {1e3 * single:8.1f} "
                  f"({1e3 * single_cpu:6.1f}) {1e3 * after:6.1f} ({1e3 * after_cpu:5.1f}) "
                  f"{before / after:8.1f}x {before_cpu / after_cpu:6.1f}x {diff:10.1e}")


def _forward_differences(shifts, j, n, field, pairs, step=1e-4):
    """The lines and one moved simulation per coupling and per site shift, unchanged clusters reused."""
    memo = {}
    simulate_arrays_reusing(shifts, j, n, field_mhz=field, memo=memo)
    for a, b in pairs:
        moved = j.copy()
        moved[a, b] += step
        moved[b, a] += step
        simulate_arrays_reusing(shifts, moved, n, field_mhz=field, memo=memo)
    for g in range(len(n)):
        moved = shifts.copy()
        moved[g] += step / field
        simulate_arrays_reusing(moved, j, n, field_mhz=field, memo=memo)


def _derivatives(systems, quick: bool) -> None:
    repeat = 2 if quick else 3
    print("2. derivatives of every line by every coupled pair and every site shift; ms, best wall (CPU)")
    print(f"   {'molecule':24s} {'MHz':>5s} {'pairs':>5s} {'plain':>14s} {'derivatives':>14s} "
          f"{'forward differences':>20s}")
    for name, smiles, fields in CASES[:5]:
        shifts, j, n = systems[smiles]
        field = fields[1] if len(fields) > 1 else fields[0]
        pairs = [(a, b) for a in range(len(n)) for b in range(a + 1, len(n)) if j[a, b] != 0]
        plain_call = functools.partial(simulate_arrays, shifts, j, n, field_mhz=field)
        deriv_call = functools.partial(simulate_with_derivatives, shifts, j, n, field_mhz=field, pairs=pairs)
        plain, _, plain_cpu = _times(plain_call, repeat)
        deriv, _, deriv_cpu = _times(deriv_call, repeat)
        diff, _, diff_cpu = _times(functools.partial(_forward_differences, shifts, j, n, field, pairs), 1)
        print(f"   {name:24s} {field:5.0f} {len(pairs):5d} {1e3 * plain:6.1f} ({1e3 * plain_cpu:5.1f}) "
              f"{1e3 * deriv:6.1f} ({1e3 * deriv_cpu:5.1f}) {1e3 * diff:11.1f} ({1e3 * diff_cpu:6.1f})")


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


def _older_checks() -> None:
    shifts, j, n = ten_spin_ring()
    plan = plan_clusters(shifts, j, n, field_mhz=60.0)
    fast, fast_median, fast_cpu = _times(lambda: simulate_arrays(shifts, j, n, field_mhz=60.0), 15)

    def full_matrix():
        with one_blas_thread():
            return _full_matrix_lines(shifts, j, 60.0)

    slow, _, _ = _times(full_matrix, 2)
    print(f"3. 10-spin strongly coupled cluster at 60 MHz (clusters: {[len(c) for c in plan.clusters]})")
    print(f"   fast (Fz blocks):       {1e3 * fast:8.1f} ms   (target < 50 ms; "
          f"median {1e3 * fast_median:.1f} ms, CPU {1e3 * fast_cpu:.1f} ms)")
    print(f"   full 2^10 matrix:       {1e3 * slow:8.1f} ms   (one BLAS thread)")
    print(f"   speed-up:               {slow / fast:8.1f} x   (target >= 10 x)")
    shifts, j, n = _pentadecene()
    lines = simulate_arrays(shifts, j, n, field_mhz=60.0)
    mol, mol_median, mol_cpu = _times(lambda: simulate_arrays(shifts, j, n, field_mhz=60.0), 7)
    print("   30-H molecule ((E)-pentadec-2-ene) at 60 MHz")
    print(f"   simulation:             {1e3 * mol:8.1f} ms   (target < 500 ms; {mol / 0.5:.2f} of it; "
          f"median {1e3 * mol_median:.1f} ms, CPU {1e3 * mol_cpu:.1f} ms)")
    print(f"   lines: {lines.ppm.size}, total intensity {lines.intensity.sum():.6f}, "
          f"cut strong couplings: {len(lines.warnings)}")


def main(argv: list[str] | None = None) -> None:
    """Run the benchmarks and print their figures."""
    quick = "--quick" in (sys.argv[1:] if argv is None else argv)
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"machine load average {load:.1f} on {os.cpu_count()} cores; "
          f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', '(unset)')}")
    systems = _systems([smiles for _, smiles, _ in CASES])
    baseline = _load_baseline()
    _compare(systems, baseline, quick)
    _derivatives(systems, quick)
    _older_checks()


if __name__ == "__main__":
    main()
