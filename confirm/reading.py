"""Read measured 1H data: raw FIDs, JCAMP-DX files and plain peak lists.

:func:`read_measurement` looks at the files present and returns one of three
frozen records:

* :class:`RawFid` -- a complex time-domain signal with its acquisition
  parameters, the digital-filter group delay (in points) and the sign
  convention of its imaginary channel. Sources: a raw FID directory with an
  ``acqus`` parameter file (and optional ``pdata/1`` processed spectrum), a raw
  FID directory with a ``procpar`` parameter file, or a JCAMP-DX ``NMR FID``
  file (NTUPLES with real and imaginary pages).
* :class:`RawSpectrum` -- a processed real spectrum on a ppm axis (JCAMP-DX
  ``NMR SPECTRUM`` or XYDATA file).
* :class:`PeakList` -- a CSV, TSV or whitespace table of peaks.

The binary and JCAMP-DX decoding (every compression form: AFFN, PAC, SQZ, DIF,
DUP) is done by nmrglue; this module adds format detection, parameter
extraction, consistency checks and one-line errors.
"""

from __future__ import annotations

import math
import os
import re
import tempfile
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from confirm.results import sha256_of_path
from confirm.solvents import normalise_solvent_name
from predictors.core import Spectrum
from predictors.errors import FileFormatError, InputError

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

#: File name endings taken as JCAMP-DX without looking inside.
JCAMP_SUFFIXES = (".dx", ".jdx", ".jcamp", ".jcm")
_TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".tab", ".peaks", ".lst")


@dataclass(frozen=True)
class AcquisitionParameters:
    """What the instrument recorded about the acquisition (None where unknown).

    Attributes
    ----------
    field_mhz : float or None
        Observe (spectrometer) frequency of the nucleus, MHz.
    nucleus : str or None
        e.g. ``"1H"``.
    solvent : str or None
        Canonical solvent name when recognised, else the label as written.
    spectral_width_hz : float or None
    carrier_ppm : float or None
        Chemical shift of the transmitter frequency on the acquired scale.
    n_scans : int or None
    receiver_gain : float or None
    relaxation_delay_s : float or None
    acquisition_time_s : float or None
    temperature_k : float or None
    pulse_program : str or None
    n_dimensions : int or None
    """

    field_mhz: float | None = None
    nucleus: str | None = None
    solvent: str | None = None
    spectral_width_hz: float | None = None
    carrier_ppm: float | None = None
    n_scans: int | None = None
    receiver_gain: float | None = None
    relaxation_delay_s: float | None = None
    acquisition_time_s: float | None = None
    temperature_k: float | None = None
    pulse_program: str | None = None
    n_dimensions: int | None = None


@dataclass(frozen=True, eq=False)
class RawSpectrum:
    """A processed real spectrum as stored by the instrument or another program.

    Attributes
    ----------
    ppm : ndarray, shape (n,)
        Strictly decreasing chemical-shift axis as stored (not re-referenced).
    intensity : ndarray, shape (n,)
    parameters : AcquisitionParameters
    source_path : str
    sha256 : str
    format : str
        ``"jcamp-spectrum"`` or ``"fid-directory-processed"``.
    notes : tuple of str
        What the file says about its own processing (phases, referencing).
    """

    ppm: np.ndarray
    intensity: np.ndarray
    parameters: AcquisitionParameters
    source_path: str
    sha256: str
    format: str
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        ppm = _readonly(self.ppm, float)
        inten = _readonly(self.intensity, float)
        if ppm.ndim != 1 or ppm.shape != inten.shape or ppm.size < 2:
            raise FileFormatError(f"{self.source_path}: spectrum axis and data differ in length or are empty")
        if not np.all(np.isfinite(inten)):
            raise FileFormatError(f"{self.source_path}: spectrum contains NaN or infinite values")
        if ppm[0] < ppm[-1]:
            ppm, inten = _readonly(ppm[::-1], float), _readonly(inten[::-1], float)
        object.__setattr__(self, "ppm", ppm)
        object.__setattr__(self, "intensity", inten)
        object.__setattr__(self, "notes", tuple(self.notes))


@dataclass(frozen=True, eq=False)
class RawFid:
    """A complex 1D free induction decay with what is needed to transform it.

    Attributes
    ----------
    fid : ndarray of complex, shape (n,)
        Time-domain points as stored (digital-filter delay still in place).
    dwell_s : float
        Time between complex points (1 / spectral width).
    group_delay_points : float
        Digital-filter group delay in points (0 for analogue filtering).
    frequency_sign : int
        +1 when a line above the carrier (higher ppm) rotates as
        ``exp(+2 pi i f t)`` in ``fid``; -1 for the opposite convention of the
        imaginary channel. Processing uses it to orient the spectrum.
    parameters : AcquisitionParameters
    source_path : str
    sha256 : str
    format : str
        ``"fid-directory-acqus"``, ``"fid-directory-procpar"`` or ``"jcamp-fid"``.
    processed : RawSpectrum or None
        The processed spectrum stored beside the FID, when present.
    reference_mhz : float or None
        Frequency of 0 ppm on the acquired scale, when the file records it.
    notes : tuple of str
        Reading remarks (e.g. where the group delay came from).
    """

    fid: np.ndarray
    dwell_s: float
    group_delay_points: float
    frequency_sign: int
    parameters: AcquisitionParameters
    source_path: str
    sha256: str
    format: str
    processed: RawSpectrum | None = None
    reference_mhz: float | None = None
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        fid = _readonly(self.fid, complex)
        if fid.ndim != 1:
            raise FileFormatError(f"{self.source_path}: expected 1D FID data, got shape {fid.shape}")
        if fid.size < 16:
            raise FileFormatError(f"{self.source_path}: FID has only {fid.size} points (truncated or empty)")
        if not np.all(np.isfinite(fid)):
            raise FileFormatError(f"{self.source_path}: FID contains NaN or infinite values")
        if not (math.isfinite(self.dwell_s) and self.dwell_s > 0):
            raise FileFormatError(f"{self.source_path}: dwell time must be > 0 s, got {self.dwell_s!r}")
        if self.frequency_sign not in (1, -1):
            raise InputError(f"frequency_sign: expected +1 or -1, got {self.frequency_sign!r}")
        object.__setattr__(self, "fid", fid)
        object.__setattr__(self, "notes", tuple(self.notes))

    @property
    def spectral_width_hz(self) -> float:
        """Spectral width, 1 / dwell time."""
        return 1.0 / self.dwell_s


@dataclass(frozen=True)
class PeakListEntry:
    """One row of a peak list (None where the file has no such column)."""

    ppm: float
    intensity: float | None = None
    integral: float | None = None
    width_hz: float | None = None
    multiplicity: str | None = None
    j_hz: tuple[float, ...] = ()


@dataclass(frozen=True)
class PeakList:
    """A table of peaks read from a text file.

    Attributes
    ----------
    entries : tuple of PeakListEntry
        Sorted by decreasing ppm.
    parameters : AcquisitionParameters
        Usually empty: plain tables carry no acquisition record.
    source_path, sha256, format : str
        ``format`` is ``"peak-list"``.
    columns : tuple of str
        Column meaning as understood (``ppm``, ``intensity``, ``integral``...).
    """

    entries: tuple[PeakListEntry, ...]
    parameters: AcquisitionParameters
    source_path: str
    sha256: str
    format: str = "peak-list"
    columns: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default=())


def _readonly(values, dtype) -> np.ndarray:
    arr = np.array(values, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


# ---------------------------------------------------------------------------
# format detection
# ---------------------------------------------------------------------------

def read_measurement(path: str | os.PathLike) -> RawFid | RawSpectrum | PeakList:
    """Read a measured 1H data set, detecting its format from the files present.

    Parameters
    ----------
    path : str or path-like
        A raw FID directory (``fid`` + ``acqus`` or ``fid`` + ``procpar``),
        a file inside one, a JCAMP-DX file, a peak-list text file, or a folder
        holding exactly one kind of these (a JCAMP-DX FID is preferred over a
        processed JCAMP-DX spectrum of the same data, which is attached).

    Returns
    -------
    RawFid or RawSpectrum or PeakList

    Raises
    ------
    FileFormatError
        Missing, empty, truncated, 2D, non-finite or unrecognised data.
    """
    path = Path(path)
    if not path.exists():
        raise FileFormatError(f"path: {str(path)!r} does not exist")
    if path.is_dir():
        return _read_directory(path)
    if path.name in ("fid", "ser", "acqus", "acqu", "procpar") and _looks_like_fid_dir(path.parent):
        return _read_directory(path.parent)
    if path.stat().st_size == 0:
        raise FileFormatError(f"path: {str(path)!r} is empty")
    head = _read_head(path)
    if head.lstrip().startswith(b"##"):
        return _read_jcamp(path)
    if path.suffix.lower() in JCAMP_SUFFIXES:
        raise FileFormatError(f"{path}: named like JCAMP-DX but does not start with a '##' label")
    if b"\x00" in head:
        raise FileFormatError(
            f"{path}: binary file that is not a recognised NMR format (expected a FID directory "
            "with its parameter file, a JCAMP-DX file or a peak-list table)")
    return _read_peak_list(path)


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
        return _read_fid_directory(folder, names)
    jcamps = sorted(p for p in folder.iterdir() if p.is_file() and p.suffix.lower() in JCAMP_SUFFIXES)
    if jcamps:
        return _read_jcamp_folder(folder, jcamps)
    tables = sorted(p for p in folder.iterdir() if p.is_file() and p.suffix.lower() in _TEXT_SUFFIXES)
    if len(tables) == 1:
        return _read_peak_list(tables[0])
    raise FileFormatError(
        f"{folder}: no NMR data found (expected fid + acqus, fid + procpar, a JCAMP-DX file "
        f"{'/'.join(JCAMP_SUFFIXES)} or one peak-list table)")


def _read_jcamp_folder(folder: Path, files: list[Path]) -> RawFid | RawSpectrum:
    records = [_read_jcamp(p) for p in files]
    fids = [r for r in records if isinstance(r, RawFid)]
    spectra = [r for r in records if isinstance(r, RawSpectrum)]
    if len(fids) > 1 or (not fids and len(spectra) > 1):
        raise FileFormatError(
            f"{folder}: holds {len(files)} JCAMP-DX data sets; pass the file to read "
            f"({', '.join(p.name for p in files)})")
    if fids:
        fid = fids[0]
        if spectra and fid.processed is None:
            return _replace(fid, processed=spectra[0])
        return fid
    return spectra[0]


def _replace(record, **changes):
    from dataclasses import replace

    return replace(record, **changes)


# ---------------------------------------------------------------------------
# raw FID directories
# ---------------------------------------------------------------------------

def _read_fid_directory(folder: Path, names: set[str]) -> RawFid:
    if "acqus" in names or ("procpar" not in names and "fid" in names):
        if "acqus" not in names:
            raise FileFormatError(f"{folder}: FID present but its parameter file (acqus or procpar) "
                                  "is missing")
        if "fid" not in names:
            raise FileFormatError(f"{folder}: parameter file acqus present but the FID file 'fid' is missing")
        return _read_acqus_directory(folder)
    if "fid" not in names:
        raise FileFormatError(f"{folder}: parameter file procpar present but the FID file 'fid' is missing")
    return _read_procpar_directory(folder)


def _read_parameter_file(path: Path) -> dict:
    """Parameters of a JCAMP-DX style parameter file (acqus, procs): ``##$KEY= value`` lines.

    Values are int, float, str (``<...>``, may span lines), bool (``yes``/``no``) or, for
    ``(0..n)`` arrays, lists continued on the following lines. Read here rather than through a
    general reader so that opening a FID folder does not load a signal-processing stack.
    """
    try:
        text = path.read_bytes().decode("latin-1")
    except OSError as exc:
        raise FileFormatError(f"{path}: cannot read parameter file ({_first_line(exc)})") from exc
    lines = text.splitlines()
    dic, i = {}, 0
    while i < len(lines):
        line = lines[i]
        i += 1
        if not line.startswith("##$") or "=" not in line:
            continue
        key = line[3 : line.index("=")].strip()
        value = line[line.index("=") + 1 :].strip()
        if value.startswith("<"):
            while ">" not in value and i < len(lines) and not lines[i].startswith("##"):
                value += "\n" + lines[i].rstrip()
                i += 1
            dic[key] = value[1 : value.rindex(">")] if ">" in value else value[1:]
        elif value.startswith("(") and ".." in value and ")" in value:
            try:
                count = int(value[value.index("..") + 2 : value.index(")")]) + 1
            except ValueError:
                raise FileFormatError(f"{path}: cannot parse parameter file (bad array size of {key})") \
                    from None
            items = [_jcamp_value(t) for t in value[value.index(")") + 1 :].split()]
            while len(items) < count and i < len(lines) and not lines[i].startswith("##"):
                items += [_jcamp_value(t) for t in lines[i].split()]
                i += 1
            dic[key] = items
        elif value in ("yes", "no"):
            dic[key] = value == "yes"
        else:
            dic[key] = _jcamp_value(value)
    if not dic:
        raise FileFormatError(f"{path}: parameter file is empty or unreadable")
    return dic


def _jcamp_value(text: str):
    for kind in (int, float):
        try:
            return kind(text)
        except ValueError:
            pass
    return text


def _param(dic: dict, key: str, default=None):
    value = dic.get(key, default)
    return default if value is None or value == "" else value


def _read_acqus_directory(folder: Path) -> RawFid:
    acqus = _read_parameter_file(folder / "acqus")
    for key in ("TD", "SW_h", "SFO1"):
        if key not in acqus:
            raise FileFormatError(f"{folder / 'acqus'}: required parameter {key} is missing")
    if int(_param(acqus, "PARMODE", 0)) > 0:
        n_dim = int(acqus["PARMODE"]) + 1
        raise FileFormatError(f"{folder}: acqus declares {n_dim}D data; only 1D is supported")
    fid = _read_acqus_binary(folder / "fid", acqus)
    procs_path = folder / "pdata" / "1" / "procs"
    procs = _read_parameter_file(procs_path) if procs_path.is_file() else {}
    params = _acqus_parameters(acqus, procs, fid.size)
    delay, note = _group_delay(_param(acqus, "DECIM"), _param(acqus, "DSPFVS"), _param(acqus, "GRPDLY"))
    processed = _read_pdata(folder, procs, params) if procs else None
    return RawFid(
        fid=fid, dwell_s=1.0 / float(acqus["SW_h"]), group_delay_points=delay, frequency_sign=1,
        parameters=params, source_path=str(folder), sha256=sha256_of_path(folder),
        format="fid-directory-acqus", processed=processed,
        reference_mhz=float(procs["SF"]) if procs.get("SF") else None, notes=(note,),
    )


def _binary_dtype(big_endian: bool, kind: int) -> np.dtype:
    code = {0: "i4", 1: "f4", 2: "f8"}.get(kind)
    if code is None:
        raise FileFormatError(f"data type: DTYPA/DTYPP = {kind} is not supported "
                              "(allowed 0 int32, 1 float32, 2 float64)")
    return np.dtype((">" if big_endian else "<") + code)


def _read_acqus_binary(path: Path, acqus: dict) -> np.ndarray:
    size = path.stat().st_size
    if size == 0:
        raise FileFormatError(f"{path}: FID file is empty")
    dtype = _binary_dtype(int(_param(acqus, "BYTORDA", 0)) == 1, int(_param(acqus, "DTYPA", 0)))
    n_values = int(acqus["TD"])
    if n_values < 32 or n_values % 2:
        raise FileFormatError(f"{path.parent / 'acqus'}: TD = {n_values} is not an even number >= 32")
    if size < n_values * dtype.itemsize:
        raise FileFormatError(f"{path}: holds {size // dtype.itemsize} values but acqus TD = {n_values} "
                              "(truncated file)")
    raw = np.fromfile(path, dtype=dtype, count=n_values)
    _check_byte_order(path, raw, dtype)
    values = raw.astype(float)
    return values[0::2] + 1j * values[1::2]


def _decay_ratio(values: np.ndarray) -> float:
    """Mean |value| of the first 10 % over the last half: >> 1 for a decaying FID."""
    mags = np.abs(values.astype(float))
    n = mags.size
    head = mags[: max(4, n // 10)].mean()
    tail = mags[n // 2:].mean()
    return float(head / tail) if tail > 0 else float("inf")


def _check_byte_order(path: Path, raw: np.ndarray, dtype: np.dtype) -> None:
    swapped = raw.byteswap()  # the same bytes read in the other byte order
    with np.errstate(all="ignore"):
        finite = bool(np.all(np.isfinite(raw.astype(float))))
        finite_swapped = bool(np.all(np.isfinite(swapped.astype(float))))
        if not finite:
            hint = " (the other byte order gives finite values: wrong BYTORDA?)" if finite_swapped else ""
            raise FileFormatError(f"{path}: FID contains NaN or infinite values{hint}")
        if dtype.kind == "f" and np.max(np.abs(raw)) > 1e30 and np.max(np.abs(swapped)) < 1e30:
            raise FileFormatError(f"{path}: values look byte-swapped (wrong BYTORDA in acqus?)")
        if dtype.kind == "i" and _decay_ratio(raw) < 2.0 and _decay_ratio(swapped) > 10.0:
            order = "big" if dtype.byteorder == ">" else "little"
            raise FileFormatError(f"{path}: data do not decay as a FID with the declared {order}-endian byte "
                                  "order but do with the other one (wrong BYTORDA in acqus?)")


def _acqus_parameters(acqus: dict, procs: dict, n_complex: int) -> AcquisitionParameters:
    sfo1, sw_hz = float(acqus["SFO1"]), float(acqus["SW_h"])
    if procs.get("SF"):
        carrier = (sfo1 / float(procs["SF"]) - 1.0) * 1e6
    elif _param(acqus, "BF1") and _param(acqus, "O1") is not None:
        carrier = float(acqus["O1"]) / float(acqus["BF1"])
    else:
        carrier = None
    delays = acqus.get("D") or []
    return AcquisitionParameters(
        field_mhz=sfo1,
        nucleus=_nucleus(str(_param(acqus, "NUC1", "")) or None),
        solvent=_solvent(str(_param(acqus, "SOLVENT", "")) or None),
        spectral_width_hz=sw_hz,
        carrier_ppm=carrier,
        n_scans=int(acqus["NS"]) if _param(acqus, "NS") is not None else None,
        receiver_gain=float(acqus["RG"]) if _param(acqus, "RG") is not None else None,
        relaxation_delay_s=float(delays[1]) if len(delays) > 1 else None,
        acquisition_time_s=n_complex / sw_hz,
        temperature_k=float(acqus["TE"]) if _param(acqus, "TE") else None,
        pulse_program=_clean_label(str(_param(acqus, "PULPROG", "")) or None),
        n_dimensions=1,
    )


def _read_pdata(folder: Path, procs: dict, params: AcquisitionParameters) -> RawSpectrum | None:
    path = folder / "pdata" / "1" / "1r"
    needed = ("SI", "SW_p", "SF", "OFFSET")
    if not path.is_file() or any(procs.get(k) in (None, "") for k in needed):
        return None
    n = int(procs["SI"])
    dtype = _binary_dtype(int(_param(procs, "BYTORDP", 0)) == 1, int(_param(procs, "DTYPP", 0)))
    if path.stat().st_size < n * dtype.itemsize:
        raise FileFormatError(f"{path}: processed spectrum shorter than SI = {n} points (truncated file)")
    values = np.fromfile(path, dtype=dtype, count=n).astype(float) * 2.0 ** float(_param(procs, "NC_proc", 0))
    step_ppm = float(procs["SW_p"]) / float(procs["SF"]) / n
    ppm = float(procs["OFFSET"]) - step_ppm * np.arange(n)
    notes = (f"stored phases {procs.get('PHC0', 0)} / {procs.get('PHC1', 0)} deg",)
    return RawSpectrum(ppm=ppm, intensity=values, parameters=params, source_path=str(path),
                       sha256=sha256_of_path(path), format="fid-directory-processed", notes=notes)


def _read_procpar_directory(folder: Path) -> RawFid:
    import nmrglue as ng

    if (folder / "fid").stat().st_size == 0:
        raise FileFormatError(f"{folder / 'fid'}: FID file is empty")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            dic, data = ng.varian.read(str(folder))
    except Exception as exc:
        raise FileFormatError(f"{folder}: cannot read procpar/fid ({_first_line(exc)})") from exc
    data = np.asarray(data)
    if data.ndim > 1 and data.shape[0] > 1:
        raise FileFormatError(f"{folder}: holds {data.ndim}D data {data.shape}; only 1D is supported")
    data = data.reshape(-1)
    pp = dic.get("procpar", {})
    declared = _procpar_float(pp, "np")
    if declared and data.size * 2 < declared:
        raise FileFormatError(f"{folder / 'fid'}: holds {data.size} complex points but procpar np = "
                              f"{declared:g} (truncated file)")
    sw_hz = _procpar_float(pp, "sw")
    if not sw_hz:
        raise FileFormatError(f"{folder / 'procpar'}: required parameter sw is missing")
    params = _procpar_parameters(pp, data.size, sw_hz)
    return RawFid(
        fid=data, dwell_s=1.0 / sw_hz, group_delay_points=0.0, frequency_sign=-1,  # (memory) convention
        parameters=params, source_path=str(folder), sha256=sha256_of_path(folder),
        format="fid-directory-procpar", reference_mhz=_procpar_float(pp, "reffrq"),
        notes=("procpar data: imaginary channel taken with the opposite sign convention",),
    )


def _procpar_value(pp: dict, key: str):
    entry = pp.get(key)
    if not entry or not entry.get("values"):
        return None
    return entry["values"][0]


def _procpar_float(pp: dict, key: str) -> float | None:
    value = _procpar_value(pp, key)
    try:
        return float(value) if value is not None else None
    except ValueError:
        return None


def _procpar_parameters(pp: dict, n_complex: int, sw_hz: float) -> AcquisitionParameters:
    sfrq, reffrq = _procpar_float(pp, "sfrq"), _procpar_float(pp, "reffrq")
    temp_c = _procpar_float(pp, "temp")
    scans = _procpar_float(pp, "nt")
    return AcquisitionParameters(
        field_mhz=sfrq,
        nucleus=_nucleus(_procpar_value(pp, "tn")),
        solvent=_solvent(_procpar_value(pp, "solvent")),
        spectral_width_hz=sw_hz,
        carrier_ppm=(sfrq / reffrq - 1.0) * 1e6 if sfrq and reffrq else None,
        n_scans=int(scans) if scans is not None else None,
        receiver_gain=_procpar_float(pp, "gain"),
        relaxation_delay_s=_procpar_float(pp, "d1"),
        acquisition_time_s=n_complex / sw_hz,
        temperature_k=temp_c + 273.15 if temp_c is not None else None,
        pulse_program=_procpar_value(pp, "seqfil"),
        n_dimensions=1,
    )


# ---------------------------------------------------------------------------
# JCAMP-DX
# ---------------------------------------------------------------------------

def _read_jcamp(path: Path) -> RawFid | RawSpectrum:
    import nmrglue as ng

    header = _read_head(path, 1 << 16).decode("latin-1", errors="replace")
    _check_jcamp_header(path, header)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            dic, data = ng.jcampdx.read(str(path))
    except Exception as exc:  # nmrglue raises bare exceptions on malformed files
        raise FileFormatError(f"{path}: cannot decode JCAMP-DX data ({_first_line(exc)})") from exc
    if "_datatypes" in dic and len(dic.get("_datatypes", ())) > 2:
        raise FileFormatError(f"{path}: holds several data blocks; only single 1D spectra are supported")
    data_type = _jcamp_text(dic, "DATATYPE", "").upper()
    params = _jcamp_parameters(dic, path)
    digest = sha256_of_path(path)
    if "FID" in data_type:
        return _jcamp_fid(path, dic, data, params, digest)
    return _jcamp_spectrum(path, dic, data, params, digest, header)


def _check_jcamp_header(path: Path, header: str) -> None:
    upper = header.upper()
    for pattern in (r"##NUM\s*DIM\s*=\s*([2-9])", r"##DATA\s*TYPE\s*=\s*(nD|2D)"):
        if re.search(pattern, upper, flags=re.IGNORECASE):
            raise FileFormatError(f"{path}: holds 2D (or nD) data; only 1D spectra are supported")
    if "##END=" not in _tail(path).upper().replace(" ", ""):
        raise FileFormatError(f"{path}: JCAMP-DX file has no ##END= label (truncated file?)")
    match = re.search(r"##DATA\s*TYPE\s*=\s*([^\n]*)", upper)
    if match and not any(word in match.group(1) for word in ("NMR", "FID", "SPECTRUM")):
        raise FileFormatError(f"{path}: JCAMP-DX data type {match.group(1).strip()!r} is not an NMR spectrum")


def _tail(path: Path, n_bytes: int = 512) -> str:
    with open(path, "rb") as handle:
        handle.seek(max(0, path.stat().st_size - n_bytes))
        return handle.read().decode("latin-1", errors="replace")


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip() or type(exc).__name__
    return text.splitlines()[0][:200]


def _jcamp_text(dic: dict, key: str, default=None):
    value = dic.get(key)
    if not value:
        return default
    text = str(value[0]).strip()
    return text if text else default


def _jcamp_float(dic: dict, *keys: str) -> float | None:
    for key in keys:
        text = _jcamp_text(dic, key)
        if text is None:
            continue
        match = re.match(r"\s*\(?\s*([-+]?\d*\.?\d+(?:[eE][-+]?\d+)?)", text)
        if match:
            value = float(match.group(1))
            if math.isfinite(value):
                return value
    return None


def _jcamp_array(dic: dict, key: str) -> list[float]:
    text = _jcamp_text(dic, key)
    if text is None:
        return []
    body = text.split("\n", 1)[1] if text.startswith("(") and "\n" in text else text
    return [float(x) for x in re.findall(r"[-+]?\d*\.?\d+(?:[eE][-+]?\d+)?", body)]


def _clean_label(text: str | None) -> str | None:
    if text is None:
        return None
    text = text.strip().strip("<>").strip()
    return text or None


def _nucleus(text: str | None) -> str | None:
    text = _clean_label(text)
    if text is None:
        return None
    match = re.search(r"\^?(\d+)\s*([A-Za-z]{1,2})", text)
    return f"{match.group(1)}{match.group(2).capitalize()}" if match else text


def _solvent(text: str | None) -> str | None:
    label = _clean_label(text)
    return normalise_solvent_name(label) or label


def _jcamp_parameters(dic: dict, path: Path) -> AcquisitionParameters:
    sfo1 = _jcamp_float(dic, ".OBSERVEFREQUENCY", "$SFO1", "$SF")
    sw_hz = _jcamp_float(dic, "$SWH", "$SWEEPWIDTHHZ")
    sf = _jcamp_float(dic, "$SF", "$BF1")
    carrier = None
    if sfo1 and sf:
        carrier = (sfo1 / sf - 1.0) * 1e6
    elif _jcamp_float(dic, "$O1P") is not None:
        carrier = _jcamp_float(dic, "$O1P")
    delays = _jcamp_array(dic, "$D")
    relax = _jcamp_float(dic, "$RELAXATIONDELAY")
    if relax is None and len(delays) > 1:
        relax = delays[1]
    temp_k = _jcamp_float(dic, "$TE")
    if temp_k is None and _jcamp_float(dic, "TEMPERATURE") is not None:
        temp_k = _jcamp_float(dic, "TEMPERATURE") + 273.15  # JCAMP-DX TEMPERATURE is in deg C
    scans = _jcamp_float(dic, ".AVERAGES", "$NS", "$SCANS")
    return AcquisitionParameters(
        field_mhz=sfo1,
        nucleus=_nucleus(_jcamp_text(dic, ".OBSERVENUCLEUS") or _jcamp_text(dic, "$NUC1")),
        solvent=_solvent(_jcamp_text(dic, ".SOLVENTNAME") or _jcamp_text(dic, "$SOLVENT")),
        spectral_width_hz=sw_hz,
        carrier_ppm=carrier,
        n_scans=int(scans) if scans is not None else None,
        receiver_gain=_jcamp_float(dic, "$RG", "$RECVRGAIN"),
        relaxation_delay_s=relax,
        acquisition_time_s=_jcamp_float(dic, ".ACQUISITIONTIME", "$AQ"),
        temperature_k=temp_k,
        pulse_program=_clean_label(_jcamp_text(dic, ".PULSESEQUENCE") or _jcamp_text(dic, "$PULPROG")),
        n_dimensions=1,
    )


def _jcamp_pages(path: Path, data) -> tuple[np.ndarray, np.ndarray | None]:
    if isinstance(data, list):
        arrays = [np.asarray(d, dtype=float) for d in data]
    else:
        arrays = [np.asarray(data, dtype=float)]
    if not arrays or arrays[0].size == 0:
        raise FileFormatError(f"{path}: JCAMP-DX file holds no data points")
    if any(a.ndim != 1 for a in arrays):
        raise FileFormatError(f"{path}: holds 2D data; only 1D spectra are supported")
    real = arrays[0]
    imag = arrays[1] if len(arrays) > 1 else None
    if imag is not None and imag.shape != real.shape:
        raise FileFormatError(
            f"{path}: real ({real.size}) and imaginary ({imag.size}) pages differ in length (truncated?)")
    return real, imag


def _declared_points(dic: dict) -> int | None:
    text = _jcamp_text(dic, "VARDIM") or _jcamp_text(dic, "NPOINTS")
    if text is None:
        return None
    numbers = [int(x) for x in re.findall(r"\d+", text)]
    if not numbers:
        return None
    return numbers[1] if len(numbers) > 1 else numbers[0]


def _check_length(path: Path, dic: dict, n_found: int) -> None:
    declared = _declared_points(dic)
    if declared is not None and n_found < declared:
        raise FileFormatError(f"{path}: header declares {declared} points but only {n_found} were read "
                              "(truncated file?)")


def _jcamp_dwell(path: Path, dic: dict, n_points: int, params: AcquisitionParameters) -> float:
    firsts = _jcamp_array(dic, "FIRST")
    lasts = _jcamp_array(dic, "LAST")
    if firsts and lasts and n_points > 1 and lasts[0] > firsts[0]:
        return (lasts[0] - firsts[0]) / (n_points - 1)
    if params.spectral_width_hz:
        return 1.0 / params.spectral_width_hz
    delta = _jcamp_float(dic, "DELTAX")
    if delta and delta > 0:
        return delta
    raise FileFormatError(f"{path}: cannot find the dwell time (no time axis FIRST/LAST and no sweep width)")


def _group_delay(decim: float | None, dspfvs: float | None, grpdly: float | None) -> tuple[float, str]:
    """Digital-filter group delay in points and where the value came from."""
    if grpdly is not None and grpdly > 0:
        return float(grpdly), f"group delay {grpdly:g} points from GRPDLY"
    if decim is None or dspfvs is None:
        return 0.0, "no digital-filter parameters: group delay 0"
    from nmrglue.fileio import bruker as _vendor_io

    table = _vendor_io.bruker_dsp_table
    version, rate = int(dspfvs), int(round(decim))
    if version in table and rate in table[version]:
        delay = float(table[version][rate])
        return delay, f"group delay {delay:g} points from the filter table (DECIM {rate}, DSPFVS {version})"
    return 0.0, f"DECIM {decim:g} / DSPFVS {dspfvs:g} not in the filter table: group delay 0"


def _jcamp_fid(path, dic, data, params, digest) -> RawFid:
    real, imag = _jcamp_pages(path, data)
    if imag is None:
        raise FileFormatError(f"{path}: JCAMP-DX FID has no imaginary page; a complex FID is required")
    _check_length(path, dic, real.size)
    dwell = _jcamp_dwell(path, dic, real.size, params)
    if params.spectral_width_hz is None:
        params = _replace(params, spectral_width_hz=1.0 / dwell)
    if params.acquisition_time_s is None:
        params = _replace(params, acquisition_time_s=real.size * dwell)
    if params.carrier_ppm is None:
        params = _replace(params, carrier_ppm=_carrier_from_shift_reference(dic, real.size, params))
    delay, note = _group_delay(_jcamp_float(dic, "$DECIM"), _jcamp_float(dic, "$DSPFVS"),
                               _jcamp_float(dic, "$GRPDLY"))
    return RawFid(
        fid=real + 1j * imag, dwell_s=dwell, group_delay_points=delay, frequency_sign=1,
        parameters=params, source_path=str(path), sha256=digest, format="jcamp-fid",
        reference_mhz=_jcamp_float(dic, "$SF", "$BF1"), notes=(note,),
    )


def _carrier_from_shift_reference(dic: dict, n_points: int, params: AcquisitionParameters) -> float | None:
    """Carrier ppm from ``.SHIFT REFERENCE = (kind, solvent, point, ppm)`` of a spectrum of n points."""
    text = _jcamp_text(dic, ".SHIFTREFERENCE")
    if text is None or not params.field_mhz or not params.spectral_width_hz:
        return None
    parts = [p.strip() for p in text.split(",")]
    try:
        point, ppm = float(parts[2]), float(parts[3])
    except (IndexError, ValueError):
        return None
    # point is 1-based on the ppm-decreasing axis; the carrier sits at index n/2 of the ascending axis
    centre_point = n_points - n_points // 2
    return ppm - (centre_point - point) * params.spectral_width_hz / n_points / params.field_mhz


def _jcamp_spectrum(path, dic, data, params, digest, header) -> RawSpectrum:
    real, _imag = _jcamp_pages(path, data)
    _check_length(path, dic, real.size)
    ppm = _jcamp_ppm_axis(path, dic, real.size, params, header)
    notes = []
    phc0, phc1 = _jcamp_float(dic, "$PHC0"), _jcamp_float(dic, "$PHC1")
    if phc0 is not None:
        notes.append(f"stored phases {phc0:g} / {phc1 or 0:g} deg")
    return RawSpectrum(ppm=ppm, intensity=real, parameters=params, source_path=str(path), sha256=digest,
                       format="jcamp-spectrum", notes=tuple(notes))


def _jcamp_ppm_axis(path, dic, n_points, params, header) -> np.ndarray:
    firsts, lasts = _jcamp_array(dic, "FIRST"), _jcamp_array(dic, "LAST")
    first = firsts[0] if firsts else _jcamp_float(dic, "FIRSTX")
    last = lasts[0] if lasts else _jcamp_float(dic, "LASTX")
    if first is None or last is None or first == last:
        raise FileFormatError(f"{path}: JCAMP-DX spectrum lacks a usable FIRSTX/LASTX axis")
    units = (_jcamp_text(dic, "UNITS") or _jcamp_text(dic, "XUNITS") or "HZ").upper()
    axis = np.linspace(first, last, n_points)
    if "PPM" in units.split(",")[0]:
        return axis
    if not params.field_mhz:
        raise FileFormatError(f"{path}: spectrum axis is in Hz but no .OBSERVE FREQUENCY is given")
    ppm = axis / params.field_mhz
    offset = _jcamp_float(dic, "$OFFSET")
    reference = _jcamp_text(dic, ".SHIFTREFERENCE")
    if reference is not None:
        parts = [p.strip() for p in reference.split(",")]
        try:
            point, value = int(float(parts[2])), float(parts[3])
            return ppm + (value - ppm[point - 1])
        except (IndexError, ValueError):
            pass
    if offset is not None:
        return ppm + (offset - ppm[0])
    return ppm


# ---------------------------------------------------------------------------
# peak lists
# ---------------------------------------------------------------------------

_COLUMN_NAMES = {
    "ppm": ("ppm", "shift", "shiftppm", "delta", "deltappm", "δ", "δppm", "chemicalshift", "position"),
    "intensity": ("intensity", "height", "amplitude", "intens", "int", "i", "peakheight", "y"),
    "integral": ("integral", "area", "integration", "nh", "integrals"),
    "width_hz": ("width", "widthhz", "fwhm", "fwhmhz", "linewidth", "linewidthhz", "w12", "halfwidth"),
    "multiplicity": ("multiplicity", "mult", "pattern", "shape"),
    "j_hz": ("j", "jhz", "coupling", "couplings", "couplingconstant", "couplingconstants", "jvalues"),
}
_NUMERIC = ("ppm", "intensity", "integral", "width_hz")


def _read_peak_list(path: Path) -> PeakList:
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        text = path.read_text(encoding="latin-1")
    lines = [(i + 1, ln.strip()) for i, ln in enumerate(text.splitlines())]
    lines = [(n, ln) for n, ln in lines if ln and not ln.startswith(("#", "%", "//", ";"))]
    if not lines:
        raise FileFormatError(f"{path}: empty (no peak rows)")
    delimiter = _detect_delimiter([ln for _, ln in lines])
    rows = [(n, _split_row(ln, delimiter)) for n, ln in lines]
    header = rows[0][1] if not _is_number(rows[0][1][0], delimiter) else None
    body = rows[1:] if header is not None else rows
    if not body:
        raise FileFormatError(f"{path}: peak list has a header but no rows")
    columns = _map_columns(path, header, max(len(r) for _, r in body))
    _check_decimal_comma(path, delimiter, header, body)
    entries = [_parse_row(path, n, row, columns, delimiter) for n, row in body]
    entries.sort(key=lambda e: -e.ppm)
    return PeakList(entries=tuple(entries), parameters=AcquisitionParameters(), source_path=str(path),
                    sha256=sha256_of_path(path), columns=tuple(c for c in columns if c))


def _detect_delimiter(lines: list[str]) -> str | None:
    for candidate in ("\t", ";"):
        if all(candidate in ln for ln in lines):
            return candidate
    if all("," in ln for ln in lines):
        # "7,26  120": whitespace-separated numbers written with a decimal comma
        number = re.compile(r"[-+]?\d+(?:[.,]\d+)?(?:[eE][-+]?\d+)?")
        if all(len(ln.split()) >= 2 and all(number.fullmatch(tok) for tok in ln.split()) for ln in lines):
            return None
        return ","
    return None


def _split_row(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    return [cell.strip().strip('"').strip("'") for cell in line.split(delimiter)]


def _is_number(text: str, delimiter: str | None) -> bool:
    return _to_float(text, delimiter) is not None


def _to_float(text: str, delimiter: str | None) -> float | None:
    text = text.strip()
    if delimiter != "," and re.fullmatch(r"[-+]?\d+,\d+", text):
        text = text.replace(",", ".")  # decimal comma (only where ',' is not the delimiter)
    try:
        value = float(text)
    except ValueError:
        return None
    return value


def _map_columns(path: Path, header: list[str] | None, n_columns: int) -> list[str | None]:
    if header is None:
        defaults = ["ppm", "intensity", "integral", "width_hz"]
        return [defaults[i] if i < len(defaults) else None for i in range(n_columns)]
    mapped: list[str | None] = []
    for cell in header:
        key = re.sub(r"[\s_\-/().\[\]]+", "", cell.lower())
        kind = next((k for k, names in _COLUMN_NAMES.items() if key in names), None)
        if kind is None and key.startswith("j"):
            kind = "j_hz"
        if kind is not None and kind in mapped and kind != "j_hz":
            kind = None
        mapped.append(kind)
    if "ppm" not in mapped:
        raise FileFormatError(f"{path}: peak-list header {header} has no ppm column "
                              "(expected one of: ppm, shift, delta)")
    return mapped + [None] * max(0, n_columns - len(mapped))


def _check_decimal_comma(path: Path, delimiter, header, body) -> None:
    if delimiter != "," or header is None:
        return
    for line_no, row in body:
        if len(row) > len(header):
            raise FileFormatError(
                f"{path}: line {line_no} has {len(row)} fields but the header has {len(header)}; "
                "a decimal comma in a comma-separated file is ambiguous: use ';' or tab as the delimiter")


def _parse_row(path: Path, line_no: int, row: list[str], columns, delimiter) -> PeakListEntry:
    values: dict = {}
    j_values: list[float] = []
    for cell, kind in zip(row, columns, strict=False):
        if kind is None or cell == "":
            continue
        if kind in _NUMERIC:
            value = _to_float(cell, delimiter)
            if value is None or not math.isfinite(value):
                raise FileFormatError(f"{path}: line {line_no}, column {kind}: {cell!r} "
                                      "is not a finite number")
            values[kind] = value
        elif kind == "multiplicity":
            values[kind] = cell
        else:
            j_values.extend(_parse_j(path, line_no, cell, delimiter))
    if "ppm" not in values:
        raise FileFormatError(f"{path}: line {line_no} has no ppm value")
    if not -5.0 <= values["ppm"] <= 25.0:
        raise FileFormatError(f"{path}: line {line_no}: ppm {values['ppm']} is outside -5..25 for 1H")
    return PeakListEntry(j_hz=tuple(j_values), **values)


def _parse_j(path: Path, line_no: int, cell: str, delimiter) -> list[float]:
    parts = [p for p in re.split(r"[\s/|]+" if delimiter != "," else r"[\s/|;]+", cell) if p]
    if delimiter not in (",",) and len(parts) == 1 and parts[0].count(",") > 1:
        parts = parts[0].split(",")
    values = []
    for part in parts:
        value = _to_float(part, delimiter)
        if value is None or not math.isfinite(value):
            raise FileFormatError(f"{path}: line {line_no}, column j_hz: {cell!r} is not a list of numbers")
        values.append(value)
    return values


# ---------------------------------------------------------------------------
# JCAMP-DX writer
# ---------------------------------------------------------------------------

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
