"""Batch throughput: 48 spectra analysed with 2 worker processes.

Writes 48 synthetic crude spectra (JCAMP-DX, 400 MHz, 32k points) of the anisyl propene family
built from published shifts and couplings (tests/confirm/published_spectra.py, each compound
with its source), with varying E:Z ratios and noise, then runs ``confirm.batch.run_batch`` with
the real analysis and 2 jobs, and prints the throughput in spectra per minute.

Run: ``python -m benchmarks.bench_batch [--spectra 48] [--jobs 2] [--reports]``
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np

from confirm.batch import BatchItem, run_batch
from confirm.reading import write_jcamp_spectrum
from predictors.core import Spectrum
from tests.confirm.published_spectra import ANISYL_FAMILY, E_ANETHOLE, ESTRAGOLE, Z_ANETHOLE, mixture_lines

FIELD_MHZ = 400.0
N_POINTS = 32768


def _spectrum(mixture, *, seed: int) -> Spectrum:
    """Lorentzian lines (1.0 Hz wide) on a 12 ppm grid with white noise (SNR about 300)."""
    rng = np.random.default_rng(seed)
    ppm = np.linspace(11.0, -1.0, N_POINTS)
    centres, heights, widths = mixture_lines(mixture, field_mhz=FIELD_MHZ)
    intensity = np.zeros(N_POINTS)
    for centre, height, extra in zip(centres, heights, widths, strict=True):
        half = (1.0 + extra) / FIELD_MHZ / 2
        window = np.abs(ppm - centre) < 400 * half
        intensity[window] += height * half / np.pi / ((ppm[window] - centre) ** 2 + half**2)
    intensity += rng.normal(0.0, intensity.max() / 300.0, N_POINTS)
    return Spectrum(ppm=ppm, intensity=intensity, field_mhz=FIELD_MHZ, solvent="CDCl3")


def write_spectra(folder: Path, n: int) -> list[BatchItem]:
    """``n`` crude spectra with E:Z from 95:5 to 60:40 and a little terminal isomer."""
    candidates = tuple(c.smiles for c in ANISYL_FAMILY)
    items = []
    for k in range(n):
        z = 0.05 + 0.35 * k / max(n - 1, 1)
        mixture = [(E_ANETHOLE, 0.9 * (1 - z)), (Z_ANETHOLE, 0.9 * z), (ESTRAGOLE, 0.1)]
        path = write_jcamp_spectrum(_spectrum(mixture, seed=k), folder / f"crude{k:02d}.jdx")
        items.append(BatchItem(item_id=path.stem, spectrum=path, candidates=candidates, solvent="CDCl3"))
    return items


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--spectra", type=int, default=48)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--reports", action="store_true", help="also write the HTML report per spectrum")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        items = write_spectra(folder, args.spectra)
        start = time.perf_counter()
        summary = run_batch(items, folder / "out", jobs=args.jobs, write_reports=args.reports, progress=True)
        elapsed = time.perf_counter() - start
    counts = summary.counts
    print(f"spectra: {len(items)} ({N_POINTS} points, {FIELD_MHZ:.0f} MHz, {len(ANISYL_FAMILY)} candidates); "
          f"jobs: {args.jobs}; reports: {'yes' if args.reports else 'no'}")
    print(f"analysed: {counts['done']}, failed: {counts['error']}")
    for outcome in summary.outcomes:
        if outcome.status == "error":
            print(f"  {outcome.item_id}: {outcome.error}")
    print(f"wall time: {elapsed:.1f} s; throughput: {60.0 * len(items) / elapsed:.1f} spectra/min")


if __name__ == "__main__":
    main()
