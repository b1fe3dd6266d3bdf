"""Benchmark: ``confirm analyze`` of a 64k-point spectrum with 6 candidates, start-up included.

Target (issue 7): < 5 s wall. The spectrum is a raw FID folder (32768 complex points, zero-filled to
65536 by the processing) of the anisyl mixture built from published shifts; the six candidates are
the five anisyl compounds plus an absent one (ethyl but-3-enoate). Prints the wall time of
``python -m confirm analyze`` in a fresh interpreter (median of 3 runs), its CPU time (all
processes: the fit sweeps and refines its starts on up to two forked workers) and the load average
before the runs: on a shared machine a busy core shows as wall time above CPU time / cores.

    python -m benchmarks.bench_analyze
"""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CANDIDATES = [
    "C/C=C/c1ccc(OC)cc1",
    "C/C=C\\c1ccc(OC)cc1",
    "C=CCc1ccc(OC)cc1",
    "CC(O)Cc1ccc(OC)cc1",
    "CC(Br)Cc1ccc(OC)cc1",
    "C=CCC(=O)OCC",
]


def main() -> int:
    sys.path.insert(0, str(ROOT))
    sys.path.insert(0, str(ROOT / "scripts"))
    from make_sample_spectra import TRUE_COMPOSITION, acqus_dictionary, write_fid_directory

    from tests.confirm.published_spectra import synthesize_fid

    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "fid64k"
        n, sw, field = 32768, 8012.8, 400.13
        fid = synthesize_fid(
            TRUE_COMPOSITION,
            field_mhz=field,
            sw_hz=sw,
            n_points=n,
            carrier_ppm=6.175,
            snr=800.0,
            phase_deg=20.0,
            group_delay_points=67.98,
            seed=1,
        )
        write_fid_directory(
            folder, fid, acqus_dictionary(field_mhz=field, sw_hz=sw, n_complex=n, carrier_ppm=6.175)
        )
        times, cpus = [], []
        load = os.getloadavg()[0]
        for _ in range(3):
            start = time.perf_counter()
            before = resource.getrusage(resource.RUSAGE_CHILDREN)
            proc = subprocess.run(
                [
                    sys.executable,
                    "-m",
                    "confirm",
                    "analyze",
                    "--spectrum",
                    str(folder),
                    "--candidates",
                    *CANDIDATES,
                    "--json",
                ],
                capture_output=True,
                text=True,
                cwd=ROOT,
                check=False,
            )
            times.append(time.perf_counter() - start)
            after = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpus.append(after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime)
            if proc.returncode != 0:
                print(proc.stderr)
                return 1
    print(
        "analyze, 64k-point spectrum, 6 candidates, start-up included: "
        f"median {statistics.median(times):.2f} s "
        f"(runs: {', '.join(f'{t:.2f}' for t in times)}; target < 5 s); "
        f"CPU median {statistics.median(cpus):.2f} s over up to {min(2, os.cpu_count() or 1)} cores; "
        f"load average before the runs {load:.2f}"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
