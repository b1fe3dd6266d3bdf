"""JCAMP-DX text written by hand for the reader tests (JCAMP-DX 5.01 NTUPLES and XYDATA, AFFN).

Independent of :mod:`confirm.reading.jcamp_write`: the layout follows the NMR extension of the
standard (Davies and Lampen, Appl. Spectrosc. 1993, 47, 1093; memory) as the real files in the
shared folder use it.
"""

from __future__ import annotations

import numpy as np


def fid_block(fid: np.ndarray, *, field_mhz: float, sw_hz: float, carrier_ppm: float, solvent: str = "CDCl3",
              title: str = "synthetic FID", labels: tuple[str, ...] = (), imaginary_first: bool = False,
              nucleus: str = "1H") -> str:
    """One ``NMR FID`` block: real and imaginary pages of integers (AFFN), 8 values a line."""
    n = fid.size
    scale = 1e6 / np.max(np.abs(fid))
    real, imag = np.round(fid.real * scale).astype(int), np.round(fid.imag * scale).astype(int)
    dwell = 1.0 / sw_hz
    sf = field_mhz / (1 + carrier_ppm * 1e-6)
    header = [
        f"##TITLE={title}", "##JCAMP-DX=5.01", "##DATA TYPE=NMR FID", "##DATA CLASS=NTUPLES",
        "##ORIGIN=tests", "##OWNER=public", f"##.OBSERVE FREQUENCY={field_mhz!r}",
        f"##.OBSERVE NUCLEUS=^{nucleus}", f"##.SOLVENT NAME={solvent}", f"##$SF={sf!r}",
        f"##$SW_h={sw_hz!r}", "##$RELAXATION DELAY=10", "##TEMPERATURE=25", *labels,
        "##NTUPLES=NMR FID", "##VAR_NAME=TIME, FID/REAL, FID/IMAG, PAGE NUMBER", "##SYMBOL=X, R, I, N",
        "##VAR_TYPE=INDEPENDENT, DEPENDENT, DEPENDENT, PAGE", "##VAR_FORM=AFFN, AFFN, AFFN, AFFN",
        f"##VAR_DIM={n}, {n}, {n}, 2", "##UNITS=SECONDS, ARBITRARY UNITS, ARBITRARY UNITS,",
        f"##FIRST=0, {real[0]}, {imag[0]}, 1",
        f"##LAST={float((n - 1) * dwell)!r}, {real[-1]}, {imag[-1]}, 2",
        "##FACTOR=1, 1, 1, 1",
    ]
    pages = [("R", 1, real), ("I", 2, imag)]
    if imaginary_first:
        pages = pages[::-1]
    body = []
    for symbol, number, values in pages:
        body += [f"##PAGE=N={number}", f"##DATA TABLE=(X++({symbol}..{symbol})), XYDATA"]
        body += [f"{k} " + " ".join(str(v) for v in values[k:k + 8]) for k in range(0, n, 8)]
    return "\n".join(header + body + ["##END NTUPLES=NMR FID", "##END="])


def spectrum_block(ppm: np.ndarray, intensity: np.ndarray, *, field_mhz: float, nucleus: str = "1H",
                   title: str = "synthetic spectrum") -> str:
    """One ``NMR SPECTRUM`` block with an XYDATA table in Hz (ppm decreasing)."""
    hz = [float(v) for v in ppm * field_mhz]
    n = ppm.size
    values = np.round(intensity / np.max(np.abs(intensity)) * 1e6).astype(int)
    header = [f"##TITLE={title}", "##JCAMP-DX=5.01", "##DATA TYPE=NMR SPECTRUM", "##DATA CLASS=XYDATA",
              f"##.OBSERVE FREQUENCY={field_mhz!r}", f"##.OBSERVE NUCLEUS=^{nucleus}", "##XUNITS=HZ",
              "##YUNITS=ARBITRARY UNITS", "##XFACTOR=1", "##YFACTOR=1", f"##FIRSTX={hz[0]!r}",
              f"##LASTX={hz[-1]!r}", f"##NPOINTS={n}", "##XYDATA=(X++(Y..Y))"]
    step = (hz[-1] - hz[0]) / (n - 1)
    body = [f"{hz[0] + k * step!r} " + " ".join(str(v) for v in values[k:k + 8]) for k in range(0, n, 8)]
    return "\n".join(header + body + ["##END="])


def structure_block() -> str:
    """A block that is not a spectrum (compound files carry structures beside the spectra)."""
    return "\n".join(["##TITLE=structure", "##JCAMP-DX=5.01", "##DATA TYPE=CHEMICAL STRUCTURE",
                      "##BLOCK_ID=1", "##MOLFORM=C 4 H 8", "##END="])


def link_file(*blocks: str) -> str:
    """A compound file: ``##DATA TYPE=LINK`` wrapping ``blocks``."""
    head = ["##TITLE=compound file", "##JCAMP-DX=5.01", "##DATA TYPE=LINK", f"##BLOCKS={len(blocks)}"]
    return "\n".join(head + list(blocks) + ["##END="]) + "\n"
