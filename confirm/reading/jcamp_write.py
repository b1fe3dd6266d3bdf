"""Write a processed spectrum as JCAMP-DX (``NMR SPECTRUM``, XYDATA, AFFN) that reads back exactly."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import numpy as np

from predictors.core import Spectrum
from predictors.errors import InputError

__all__ = ["write_jcamp_spectrum"]


def write_jcamp_spectrum(spectrum: Spectrum, path: str | os.PathLike, *, title: str = "") -> Path:
    """Write a processed spectrum as a JCAMP-DX 5.01 ``NMR SPECTRUM`` (XYDATA, AFFN).

    Values are written in the shortest decimal form that reads back to the
    same double, so :func:`read_measurement` returns the identical intensity
    array. The file is written to a temporary name and renamed.

    Parameters
    ----------
    spectrum : Spectrum
        ppm decreasing; ``field_mhz`` gives the Hz axis.
    path : path-like
        Output file.
    title : str, optional
        ``##TITLE``; defaults to the file stem.

    Returns
    -------
    Path
        The written file.
    """
    if not isinstance(spectrum, Spectrum):
        raise InputError(f"spectrum: expected a Spectrum, got {type(spectrum).__name__}")
    path = Path(path)
    n = spectrum.ppm.size
    hz = spectrum.ppm * spectrum.field_mhz
    first_hz, last_hz = float(hz[0]), float(hz[-1])
    if not np.allclose(np.diff(hz), (last_hz - first_hz) / (n - 1), rtol=1e-6, atol=1e-9):
        raise InputError("spectrum: XYDATA needs an evenly spaced axis; resample first")
    header = [
        f"##TITLE={title or path.stem}", "##JCAMP-DX=5.01", "##DATA TYPE=NMR SPECTRUM",
        "##DATA CLASS=XYDATA", "##ORIGIN=confirm", "##OWNER=public",
        f"##.OBSERVE FREQUENCY={_exact(spectrum.field_mhz)}", f"##.OBSERVE NUCLEUS=^{spectrum.nucleus}",
        f"##.SOLVENT NAME={spectrum.solvent or ''}",
        f"##.SHIFT REFERENCE=INTERNAL, {spectrum.solvent or 'unknown'}, 1, {_exact(float(spectrum.ppm[0]))}",
        "##XUNITS=HZ", "##YUNITS=ARBITRARY UNITS", "##XFACTOR=1", "##YFACTOR=1",
        f"##FIRSTX={_exact(first_hz)}", f"##LASTX={_exact(last_hz)}", f"##NPOINTS={n}",
        f"##FIRSTY={_exact(float(spectrum.intensity[0]))}",
        f"##MAXY={_exact(float(spectrum.intensity.max()))}",
        f"##MINY={_exact(float(spectrum.intensity.min()))}",
    ]
    sha = spectrum.metadata.get("sha256") if spectrum.metadata else None
    if sha:
        header.append(f"##$SOURCE SHA256={sha}")
    header.append("##XYDATA=(X++(Y..Y))")
    step = (last_hz - first_hz) / (n - 1)
    body = []
    for start in range(0, n, 8):
        ys = " ".join(_exact(float(y)) for y in spectrum.intensity[start:start + 8])
        body.append(f"{_exact(first_hz + start * step)} {ys}")
    _write_text_atomic(path, "\n".join(header + body + ["##END="]) + "\n")
    return path


def _exact(value: float) -> str:
    """Shortest positional decimal that reads back to the same double (no exponent letters)."""
    return np.format_float_positional(value, unique=True, trim="-")


def _write_text_atomic(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, "w", encoding="ascii", newline="\n") as out:
            out.write(text)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
