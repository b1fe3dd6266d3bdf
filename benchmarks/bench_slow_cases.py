"""Benchmark: the analyses that once ran away finish inside the default budget (issue 14, item 3).

Three cases, each a ``python -m confirm analyze`` in a fresh interpreter on a JCAMP-DX file written
here, timed from start-up to exit against the default ``--max-seconds`` of 60 s:

- the five products of 2-bromoheptane + ethoxide (enumerated by ``confirm``), drawn from their own
  predicted spectra at 400 MHz (amounts 1.0 : 0.8 : 0.6 : 0.4 : 0.2, noise 0.1 % of the tallest
  point): long chains whose exact simulation has thousands of lines;
- the same for 2-bromopentane;
- 24 small candidates (C2-C7 alkenes, alcohols, bromides, ethers; our choice) against the
  2-bromopentane spectrum.

The spectra come from our own predictor: this measures speed, not accuracy. Prints per case the
wall time, the exit code and the major product named.

    python -m benchmarks.bench_slow_cases
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
BUDGET_S = 60.0
SMALL_CANDIDATES = [
    "C=CCCC", "C/C=C/CC", "C/C=C\\CC", "CCCC(C)Br", "CCCC(C)OCC", "CCCC(C)O", "C=C(C)CC", "CC=C(C)C",
    "CCCCCBr", "CCC(Br)CC", "CCCCC", "CCOCC", "CCO", "CC(C)=O", "CCCCO", "C=CC", "CC=CC", "C=CCC",
    "CCC(C)O", "CCBr", "CC(C)Br", "CCCBr", "CC(C)(C)Br", "C=C(C)C",
]


def _spectrum(substrate: str, reagent: str, field: float, path: Path) -> None:
    import numpy as np

    from confirm.analysis import build_candidates, predict_systems
    from confirm.reading.jcamp_write import write_jcamp_spectrum
    from predictors.core import Spectrum
    from predictors.spin import model_spectrum

    cands, _ = build_candidates(substrate=substrate, reagent=reagent)
    systems = predict_systems(cands)
    ppm = np.linspace(10.0, -0.5, 32768)
    amounts = np.linspace(1.0, 0.2, len(systems))
    y = sum(a * model_spectrum(s, ppm, field_mhz=field, line_width_hz=1.0)
            for a, s in zip(amounts, systems, strict=True))
    y = y + np.random.default_rng(3).normal(0.0, 1e-3 * y.max(), ppm.size)
    write_jcamp_spectrum(Spectrum(ppm=ppm, intensity=y, field_mhz=field, solvent="CDCl3"), path)


def _run(args: list[str]) -> tuple[float, int, str]:
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "confirm", "analyze", *args, "--json"], capture_output=True,
                          text=True, cwd=ROOT, check=False)
    wall = time.perf_counter() - start
    major = ""
    if proc.returncode == 0:
        out = json.loads(proc.stdout)
        major = str(out.get("verdict", {}).get("summary", ""))[:70]
    else:
        major = (proc.stderr.strip().splitlines() or [""])[-1][:90]
    return wall, proc.returncode, major


def main() -> int:
    sys.path.insert(0, str(ROOT))
    with tempfile.TemporaryDirectory() as tmp:
        heptane, pentane = Path(tmp) / "heptane.jdx", Path(tmp) / "pentane.jdx"
        _spectrum("CCCCCC(C)Br", "ethoxide", 400.0, heptane)
        _spectrum("CCCC(C)Br", "ethoxide", 400.0, pentane)
        cases = [
            ("2-bromoheptane + ethoxide products, 400 MHz",
             ["--spectrum", str(heptane), "--substrate", "CCCCCC(C)Br", "--reagent", "ethoxide"]),
            ("2-bromopentane + ethoxide products, 400 MHz",
             ["--spectrum", str(pentane), "--substrate", "CCCC(C)Br", "--reagent", "ethoxide"]),
            ("24 small candidates on the 2-bromopentane spectrum",
             ["--spectrum", str(pentane), "--candidates", *SMALL_CANDIDATES]),
        ]
        print(f"default budget {BUDGET_S:.0f} s; wall time of `confirm analyze`, start-up included")
        for name, args in cases:
            wall, code, note = _run(args)
            print(f"{name}: {wall:.1f} s ({wall / BUDGET_S:.2f} of the budget), exit {code}; {note}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
