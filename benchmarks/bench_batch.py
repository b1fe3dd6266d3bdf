"""Batch throughput on the process pool and on a local Dask cluster, and the driver's memory.

Part 1 writes 48 synthetic crude spectra (JCAMP-DX, 400 MHz, 32k points) of the anisyl propene
family built from published shifts and couplings (tests/confirm/published_spectra.py, each
compound with its source), with varying E:Z ratios and noise, and runs ``run_batch`` with the
real analysis twice on the same spectra: on 2 worker processes (the default pool) and on a local
Dask cluster of 2 workers (``scheduler="local"``, start-up and shut-down included). It prints
spectra per minute for each, side by side, and their ratio (target: Dask within 15 % of the pool).

Part 2 writes a manifest of 2,000 small peak lists (ethyl crotonate, one candidate, lines from
published data with a little noise on the intensities) and runs it on the local Dask cluster in a
fresh interpreter, which prints its own peak resident memory (``ru_maxrss``) before and after the
batch: items stream through, so the driver's memory does not grow with the number of items.

Run: ``python -m benchmarks.bench_batch [--spectra 48] [--jobs 2] [--reports] [--memory-items 2000]``
(``--memory-items 0`` skips part 2, which takes several minutes on 2 cores). The load average is
printed after each run: on a shared machine compare the ratio, not the absolute rates.
"""

from __future__ import annotations

import argparse
import csv
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from confirm._allocator import tune_allocator
from confirm.batch import BatchItem, read_manifest, run_batch
from confirm.reading import write_jcamp_spectrum
from predictors.core import Spectrum
from tests.confirm.published_spectra import (
    ANISYL_FAMILY,
    E_ANETHOLE,
    E_CROTONATE,
    ESTRAGOLE,
    Z_ANETHOLE,
    mixture_lines,
)

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
        items.append(BatchItem(item_id=path.stem, spectrum=path, candidates=candidates, nmr_solvent="CDCl3"))
    return items


def write_peak_lists(folder: Path, n: int) -> Path:
    """``n`` small peak lists (the strong lines of ethyl crotonate, intensities with 1 % noise) and
    a manifest of them; returns the manifest's path."""
    ppm, intensity, _ = mixture_lines(((E_CROTONATE, 1.0),), field_mhz=FIELD_MHZ, solvent_lines=False)
    keep = intensity > 0.05
    ppm, intensity = ppm[keep], intensity[keep]
    order = np.argsort(ppm)[::-1]
    rng = np.random.default_rng(0)
    folder.mkdir(parents=True, exist_ok=True)
    manifest = folder / "manifest.csv"
    with open(manifest, "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["spectrum", "candidates", "field_mhz"])
        for k in range(n):
            noisy = intensity * (1.0 + 0.01 * rng.standard_normal(intensity.size))
            rows = "\n".join(f"{ppm[j]:.5f},{noisy[j]:.6f}" for j in order)
            (folder / f"peaks{k:05d}.csv").write_text("ppm,integral\n" + rows + "\n")
            writer.writerow([f"peaks{k:05d}.csv", E_CROTONATE.smiles, f"{FIELD_MHZ:g}"])
    return manifest


def _rate(n: int, seconds: float) -> float:
    return 60.0 * n / seconds


def _throughput(folder: Path, n: int, jobs: int, reports: bool) -> None:
    items = write_spectra(folder, n)
    rates = {}
    for name, options in (("process pool", {}), ("local Dask cluster", {"scheduler": "local"})):
        start = time.perf_counter()
        summary = run_batch(items, folder / name.replace(" ", "_"), jobs=jobs, write_reports=reports,
                            progress=True, **options)
        elapsed = time.perf_counter() - start
        rates[name] = _rate(len(items), elapsed)
        failed = [o for o in summary.outcomes if o.status == "error"]
        print(f"{name}: {summary.counts['done']} analysed, {len(failed)} failed in {elapsed:.1f} s "
              f"(load average after: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)"
              + "".join(f"\n  {o.item_id}: {o.error}" for o in failed), flush=True)
    print(f"\nspectra: {n} ({N_POINTS} points, {FIELD_MHZ:.0f} MHz, {len(ANISYL_FAMILY)} candidates); "
          f"{jobs} workers; reports: {'yes' if reports else 'no'}")
    print(f"{'':22}{'spectra/min':>12}")
    for name, rate in rates.items():
        print(f"{name:22}{rate:12.1f}")
    ratio = rates["local Dask cluster"] / rates["process pool"]
    print(f"Dask / pool: {ratio:.2f} (target >= 0.85)")


def _peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kilobytes on Linux


def _memory_child(manifest: Path, out: Path, jobs: int) -> None:
    """The driver of part 2 (a fresh interpreter): run the manifest on a local Dask cluster."""
    items = read_manifest(manifest)
    before = _peak_rss_mb()
    start = time.perf_counter()
    summary = run_batch(items, out, jobs=jobs, write_reports=False, progress=True, scheduler="local")
    elapsed = time.perf_counter() - start
    print(f"items: {len(items)} small peak lists on a local Dask cluster of {jobs} workers: "
          f"{summary.counts['done']} analysed, {summary.counts['error']} failed in {elapsed:.0f} s "
          f"({_rate(len(items), elapsed):.0f} spectra/min)")
    print(f"driver peak RSS: {before:.0f} MB before the batch (modules and manifest loaded), "
          f"{_peak_rss_mb():.0f} MB at the end")


def _memory(folder: Path, n: int, jobs: int) -> None:
    manifest = write_peak_lists(folder / "peaks", n)
    subprocess.run([sys.executable, "-m", "benchmarks.bench_batch", "--memory-child", str(manifest),
                    "--jobs", str(jobs), "--out", str(folder / "peaks_out")], check=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--spectra", type=int, default=48)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--reports", action="store_true", help="also write the HTML report per spectrum")
    parser.add_argument("--memory-items", type=int, default=2000, help="peak lists of part 2 (0: skip it)")
    parser.add_argument("--memory-child", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--out", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    tune_allocator()  # as the command line does (the pool's workers inherit it, Dask's set it per item)
    if args.memory_child is not None:
        _memory_child(args.memory_child, args.out, args.jobs)
        return
    with tempfile.TemporaryDirectory() as tmp:
        if args.spectra > 0:
            _throughput(Path(tmp), args.spectra, args.jobs, args.reports)
        if args.memory_items > 0:
            print()
            _memory(Path(tmp), args.memory_items, args.jobs)


if __name__ == "__main__":
    main()
