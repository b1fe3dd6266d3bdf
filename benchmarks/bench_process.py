"""Benchmark: read and process a 64k-point raw FID directory (target < 0.3 s, interpreter start
excluded), then every shared real file (``$CONFIRM_REAL_SPECTRA`` or ``../shared/real_spectra``).

Run ``python -m benchmarks.bench_process``; prints the best and median of several runs of the
synthetic directory, then per real file the read and process times (best of three), the
reference used, its source, the solvent and the orientation decision.
"""

from __future__ import annotations

import math
import os
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np

PROJECT_ROOT = Path(__file__).resolve().parents[1]


def _write_directory(folder: Path, n_points: int) -> Path:
    import nmrglue as ng

    sw_hz, field = 8000.0, 400.13
    t = np.arange(n_points) / sw_hz
    fid = np.zeros(n_points, dtype=complex)
    for ppm, amp in ((7.26, 0.3), (6.1, 1.0), (4.1, 2.0), (2.05, 3.0), (1.25, 3.0), (0.0, 1.0)):
        fid += amp * np.exp(2j * math.pi * (ppm - 4.0) * field * t)
    fid *= np.exp(-t / 0.8)
    fid += 1e-3 * (np.random.default_rng(0).standard_normal(n_points) * (1 + 1j))
    k = np.fft.fftfreq(n_points) * n_points
    fid = np.fft.ifft(np.fft.fft(fid) * np.exp(-2j * math.pi * k * 71.625 / n_points))
    scale = 2e8 / np.abs(fid).max()
    acqus = {"TD": 2 * n_points, "SW_h": sw_hz, "SFO1": field * (1 + 4e-6), "BF1": field, "O1": 4.0 * field,
             "NUC1": "1H", "SOLVENT": "CDCl3", "NS": 16, "RG": 32.0, "D": [0.0, 10.0] + [0.0] * 30,
             "TE": 298.0, "DECIM": 16, "DSPFVS": 12, "GRPDLY": -1, "BYTORDA": 0, "DTYPA": 0, "PARMODE": 0,
             "_coreheader": ["##TITLE= benchmark", "##JCAMPDX= 5.0"], "_comments": []}
    data = np.round(fid.real * scale) + 1j * np.round(fid.imag * scale)
    ng.bruker.write(str(folder), {"acqus": acqus}, data, overwrite=True, write_prog=False)
    return folder


def real_spectra_folder() -> Path | None:
    """The shared real spectra, or None when absent."""
    env = os.environ.get("CONFIRM_REAL_SPECTRA")
    path = Path(env) if env else PROJECT_ROOT.parent / "shared" / "real_spectra"
    return path if path.is_dir() else None


def real_files(folder: Path) -> list[Path]:
    """Every JCAMP-DX file and raw FID directory under ``folder``."""
    files = sorted(p for p in folder.rglob("*") if p.suffix in (".dx", ".jdx"))
    return files + sorted(p.parent for p in folder.rglob("acqus"))


def _synthetic(n_points: int, repeats: int) -> None:
    from confirm.processing import load_spectrum

    with tempfile.TemporaryDirectory() as tmp:
        folder = _write_directory(Path(tmp) / "exp", n_points)
        load_spectrum(folder)  # warm-up: imports and caches outside the timing
        times = []
        for _ in range(repeats):
            start = time.perf_counter()
            result = load_spectrum(folder)
            times.append(time.perf_counter() - start)
    print(f"read + process {n_points} complex points ({len(result.peaks)} peaks, "
          f"{len(result.multiplets)} multiplets, reference: {result.reference})")
    print(f"best {min(times):.3f} s, median {statistics.median(times):.3f} s over {repeats} runs "
          f"(target < 0.300 s): {'PASS' if min(times) < 0.3 else 'FAIL'}")


def _real(folder: Path, repeats: int = 3) -> None:
    from confirm.processing import process_measurement
    from confirm.reading import read_measurement

    print(f"\nshared real files in {folder}:")
    print(f"{'file':36s} {'read s':>7s} {'process s':>9s}  {'source':7s} {'solvent':8s} "
          "reference / orientation")
    for path in real_files(folder):
        reads, procs = [], []
        for _ in range(repeats):
            start = time.perf_counter()
            raw = read_measurement(path)
            middle = time.perf_counter()
            result = process_measurement(raw)
            reads.append(middle - start)
            procs.append(time.perf_counter() - middle)
        name = str(path.relative_to(folder))
        shift = result.spectrum.metadata["processing"]["reference_shift_ppm"]
        orientation = _orientation_status(result.orientation)
        print(f"{name:36s} {min(reads):7.3f} {min(procs):9.3f}  {result.reference_source:7s} "
              f"{str(result.spectrum.solvent):8s} {result.reference} (shift {shift:+.4f} ppm) / "
              f"{orientation}")


def _orientation_status(text: str) -> str:
    if text.startswith("stored"):
        return "stored axis"
    if text.startswith("mirrored"):
        return "mirrored against the file"
    if "confirmed by" in text:
        return "file's, confirmed by the data"
    if "contradicted" in text:
        return "file's, one line of evidence against (warned)"
    return "file's, nothing in the data to check it"


def main(n_points: int = 65536, repeats: int = 7) -> None:
    _synthetic(n_points, repeats)
    folder = real_spectra_folder()
    if folder is None:
        print("\nshared real files: folder absent (set CONFIRM_REAL_SPECTRA or provide "
              "../shared/real_spectra)")
        return
    _real(folder)


if __name__ == "__main__":
    main()
