"""Read measured 1H data: raw FIDs, JCAMP-DX files, peak lists and spectra written as tables.

:func:`read_measurement` looks at the files present and returns one of three frozen records:

* :class:`RawFid` -- a complex time-domain signal with its acquisition parameters, the
  digital-filter group delay (in points), the sign convention of its imaginary channel and
  what in the file set it. Sources: a raw FID directory with an ``acqus`` parameter file (and
  optional ``pdata/1`` processed spectrum), one with a ``procpar`` parameter file, or a
  JCAMP-DX ``NMR FID`` (NTUPLES with real and imaginary pages), also inside a compound
  (``LINK``) file.
* :class:`RawSpectrum` -- a processed real spectrum on a ppm axis (JCAMP-DX ``NMR SPECTRUM``
  or XYDATA, or a dense two-column CSV such as ``confirm process --out`` writes).
* :class:`PeakList` -- a CSV, TSV or whitespace table of peaks.

One module per format: :mod:`~confirm.reading.fid_directory`, :mod:`~confirm.reading.jcamp`
(with :mod:`~confirm.reading.jcamp_blocks` and the bounded decoder
:mod:`~confirm.reading.jcamp_decode`), :mod:`~confirm.reading.tables`; parameter files are
parsed and checked in :mod:`~confirm.reading.parameters`, physical plausibility in
:mod:`~confirm.reading.checks`. Every problem with a file is a :class:`FileFormatError` with
a one-line message.
"""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path

from confirm.reading.fid_directory import read_fid_directory
from confirm.reading.jcamp import JCAMP_SUFFIXES, read_jcamp
from confirm.reading.jcamp_write import write_jcamp_spectrum
from confirm.reading.records import AcquisitionParameters, PeakList, PeakListEntry, RawFid, RawSpectrum
from confirm.reading.tables import TEXT_SUFFIXES, read_table
from predictors.errors import FileFormatError

__all__ = [
    "AcquisitionParameters",
    "RawFid",
    "RawSpectrum",
    "PeakListEntry",
    "PeakList",
    "read_measurement",
    "write_jcamp_spectrum",
    "JCAMP_SUFFIXES",
]


def read_measurement(path: str | os.PathLike) -> RawFid | RawSpectrum | PeakList:
    """Read a measured 1H data set, detecting its format from the files present.

    Parameters
    ----------
    path : str or path-like
        A raw FID directory (``fid`` + ``acqus`` or ``fid`` + ``procpar``),
        a file inside one, a JCAMP-DX file, a peak-list or spectrum table, or a
        folder holding exactly one kind of these (a JCAMP-DX FID is preferred over
        a processed JCAMP-DX spectrum of the same data, which is attached).

    Returns
    -------
    RawFid or RawSpectrum or PeakList

    Raises
    ------
    FileFormatError
        Missing, empty, truncated, 2D, non-finite, implausible or unrecognised data.
    """
    path = Path(path)
    if not path.exists():
        raise FileFormatError(f"path: {str(path)!r} does not exist")
    if path.is_dir():
        return _read_directory(path)
    if path.name in ("fid", "ser", "acqus", "acqu", "procpar") and _looks_like_fid_dir(path.parent):
        return _read_directory(path.parent)
    if not path.is_file():
        raise FileFormatError(f"path: {str(path)!r} is not a regular file or folder")
    if path.stat().st_size == 0:
        raise FileFormatError(f"path: {str(path)!r} is empty")
    head = _read_head(path)
    if head.lstrip().startswith(b"##"):
        return read_jcamp(path)
    if path.suffix.lower() in JCAMP_SUFFIXES:
        raise FileFormatError(f"{path}: named like JCAMP-DX but does not start with a '##' label")
    if b"\x00" in head:
        raise FileFormatError(
            f"{path}: binary file that is not a recognised NMR format (expected a FID directory "
            "with its parameter file, a JCAMP-DX file or a peak-list table)")
    return read_table(path)


def _read_head(path: Path, n_bytes: int = 4096) -> bytes:
    with open(path, "rb") as handle:
        return handle.read(n_bytes)


def _looks_like_fid_dir(folder: Path) -> bool:
    names = {p.name for p in folder.iterdir()}
    return bool(names & {"fid", "ser"}) or bool(names & {"acqus", "procpar"})


def _read_directory(folder: Path) -> RawFid | RawSpectrum | PeakList:
    names = {p.name for p in folder.iterdir()}
    if "ser" in names or "acqu2s" in names or "acqu2" in names:
        raise FileFormatError(f"{folder}: holds 2D data (ser/acqu2s); only 1D spectra are supported")
    if "fid" in names or "acqus" in names or "procpar" in names:
        return read_fid_directory(folder, names)
    jcamps = sorted(p for p in folder.iterdir() if p.is_file() and p.suffix.lower() in JCAMP_SUFFIXES)
    if jcamps:
        return _read_jcamp_folder(folder, jcamps)
    tables = sorted(p for p in folder.iterdir() if p.is_file() and p.suffix.lower() in TEXT_SUFFIXES)
    if len(tables) == 1:
        return read_table(tables[0])
    raise FileFormatError(
        f"{folder}: no NMR data found (expected fid + acqus, fid + procpar, a JCAMP-DX file "
        f"{'/'.join(JCAMP_SUFFIXES)} or one peak-list table)")


def _read_jcamp_folder(folder: Path, files: list[Path]) -> RawFid | RawSpectrum:
    records = [read_jcamp(p) for p in files]
    fids = [r for r in records if isinstance(r, RawFid)]
    spectra = [r for r in records if isinstance(r, RawSpectrum)]
    if len(fids) > 1 or (not fids and len(spectra) > 1):
        raise FileFormatError(
            f"{folder}: holds {len(files)} JCAMP-DX data sets; pass the file to read "
            f"({', '.join(p.name for p in files)})")
    if fids:
        fid = fids[0]
        if spectra and fid.processed is None:
            return replace(fid, processed=spectra[0])
        return fid
    return spectra[0]
