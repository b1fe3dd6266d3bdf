"""Raw FID directories: ``fid`` + ``acqus`` (optional ``pdata/1`` processed data) or ``fid`` + ``procpar``.

Orientation from the metadata: an ``acqus`` FID stores a line above the carrier as
``exp(+2 pi i f t)``; ``procs`` ``REVERSE= yes`` asks for the spectrum reversed after the
transform, which is the opposite sign. A ``procpar`` FID uses the opposite sign convention of
the imaginary channel (from memory).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np

from confirm.reading.checks import check_fid_magnitude, check_field, check_spectral_width
from confirm.reading.decoupling import decoupled_nuclei
from confirm.reading.labels import clean_label, nucleus_label, solvent_label
from confirm.reading.parameters import first_line, number, read_parameter_file, text_value
from confirm.reading.records import AcquisitionParameters, RawFid, RawSpectrum
from confirm.results import sha256_of_path
from predictors.errors import FileFormatError

__all__ = ["read_fid_directory", "group_delay"]

#: Largest TD (real values) accepted: 2**25 values is 128 MB of int32, beyond any 1D 1H acquisition.
_MAX_TD = 1 << 25


def read_fid_directory(folder: Path, names: set[str]) -> RawFid:
    """Read a raw FID directory holding ``fid`` and ``acqus`` or ``procpar``."""
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


def group_delay(decim: float | None, dspfvs: float | None, grpdly: float | None) -> tuple[float, str]:
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


def _read_acqus_directory(folder: Path) -> RawFid:
    acqus_path = folder / "acqus"
    acqus = read_parameter_file(acqus_path)
    parmode = number(acqus, "PARMODE", acqus_path, kind=int, default=0, low=0, high=7)
    if parmode > 0:
        raise FileFormatError(f"{folder}: acqus declares {parmode + 1}D data; only 1D is supported")
    td = number(acqus, "TD", acqus_path, kind=int, required=True, positive=True)
    sw_hz = number(acqus, "SW_h", acqus_path, required=True, positive=True)
    sfo1 = number(acqus, "SFO1", acqus_path, required=True, positive=True)
    nucleus = nucleus_label(text_value(acqus, "NUC1"))
    check_field(str(acqus_path), sfo1, nucleus, label="SFO1")
    check_spectral_width(str(acqus_path), sw_hz, sfo1, label="SW_h")
    fid = _read_acqus_binary(folder / "fid", acqus, td)
    procs_path = folder / "pdata" / "1" / "procs"
    procs = read_parameter_file(procs_path) if procs_path.is_file() else {}
    params = _acqus_parameters(acqus, procs, fid.size, folder)
    delay, note = group_delay(number(acqus, "DECIM", acqus_path, positive=True),
                              number(acqus, "DSPFVS", acqus_path, low=0, high=100),
                              number(acqus, "GRPDLY", acqus_path, low=-1, high=1e4))
    processed = _read_pdata(folder, procs, params) if procs else None
    sf = number(procs, "SF", procs_path, positive=True) if procs else None
    sign, basis = 1, "format convention of acqus FIDs"
    if procs.get("REVERSE") is True:
        sign, basis = -1, "procs REVERSE= yes (spectrum reversed after the transform)"
    return RawFid(
        fid=fid, dwell_s=1.0 / sw_hz, group_delay_points=delay, frequency_sign=sign,
        parameters=params, source_path=str(folder), sha256=sha256_of_path(folder),
        format="fid-directory-acqus", processed=processed, reference_mhz=sf, notes=(note,),
        orientation_basis=basis,
    )


def _binary_dtype(big_endian: bool, kind: int) -> np.dtype:
    code = {0: "i4", 1: "f4", 2: "f8"}[kind]
    return np.dtype((">" if big_endian else "<") + code)


def _read_acqus_binary(path: Path, acqus: dict, n_values: int) -> np.ndarray:
    source = path.parent / "acqus"
    size = path.stat().st_size
    if size == 0:
        raise FileFormatError(f"{path}: FID file is empty")
    big_endian = number(acqus, "BYTORDA", source, kind=int, default=0, allowed=(0, 1)) == 1
    dtype = _binary_dtype(big_endian, number(acqus, "DTYPA", source, kind=int, default=0, allowed=(0, 1, 2)))
    if n_values < 32 or n_values % 2 or n_values > _MAX_TD:
        raise FileFormatError(f"{source}: TD = {n_values} is not an even number from 32 to {_MAX_TD}")
    if size < n_values * dtype.itemsize:
        raise FileFormatError(f"{path}: holds {size // dtype.itemsize} values but acqus TD = {n_values} "
                              "(truncated file)")
    raw = np.fromfile(path, dtype=dtype, count=n_values)
    _check_byte_order(path, raw, dtype)
    values = raw.astype(float)
    fid = values[0::2] + 1j * values[1::2]
    check_fid_magnitude(str(path), fid)
    return fid


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


def _acqus_parameters(acqus: dict, procs: dict, n_complex: int, folder: Path) -> AcquisitionParameters:
    acqus_path, procs_path = folder / "acqus", folder / "pdata" / "1" / "procs"
    sfo1 = number(acqus, "SFO1", acqus_path, required=True, positive=True)
    sw_hz = number(acqus, "SW_h", acqus_path, required=True, positive=True)
    sf = number(procs, "SF", procs_path, positive=True) if procs else None
    bf1 = number(acqus, "BF1", acqus_path, positive=True)
    o1 = number(acqus, "O1", acqus_path)
    if sf:
        check_field(str(procs_path), sf, None, label="SF")
        carrier = (sfo1 / sf - 1.0) * 1e6
    elif bf1 and o1 is not None:
        carrier = o1 / bf1
    else:
        carrier = None
    delays = acqus.get("D") if isinstance(acqus.get("D"), list) else []
    relaxation = delays[1] if len(delays) > 1 and isinstance(delays[1], (int, float)) else None
    temperature = number(acqus, "TE", acqus_path, low=0.0, high=1000.0)
    return AcquisitionParameters(
        field_mhz=sfo1,
        nucleus=nucleus_label(text_value(acqus, "NUC1")),
        solvent=solvent_label(text_value(acqus, "SOLVENT")),
        spectral_width_hz=sw_hz,
        carrier_ppm=carrier,
        n_scans=number(acqus, "NS", acqus_path, kind=int, positive=True),
        receiver_gain=number(acqus, "RG", acqus_path, positive=True),
        relaxation_delay_s=float(relaxation) if relaxation is not None and relaxation >= 0 else None,
        acquisition_time_s=n_complex / sw_hz,
        temperature_k=temperature or None,
        pulse_program=clean_label(text_value(acqus, "PULPROG")),
        n_dimensions=1,
        decoupled_nuclei=decoupled_nuclei(
            channels=(text_value(acqus, "NUC2"), text_value(acqus, "NUC3")),
            pulse_program=clean_label(text_value(acqus, "PULPROG")),
            titles=(text_value(acqus, "TITLE"),)),
    )


def _read_pdata(folder: Path, procs: dict, params: AcquisitionParameters) -> RawSpectrum | None:
    path = folder / "pdata" / "1" / "1r"
    procs_path = folder / "pdata" / "1" / "procs"
    needed = ("SI", "SW_p", "SF", "OFFSET")
    if not path.is_file() or any(procs.get(k) in (None, "") for k in needed):
        return None
    n = number(procs, "SI", procs_path, kind=int, positive=True, high=_MAX_TD)
    big_endian = number(procs, "BYTORDP", procs_path, kind=int, default=0, allowed=(0, 1)) == 1
    dtype = _binary_dtype(big_endian, number(procs, "DTYPP", procs_path, kind=int, default=0,
                                             allowed=(0, 1, 2)))
    if path.stat().st_size < n * dtype.itemsize:
        raise FileFormatError(f"{path}: processed spectrum shorter than SI = {n} points (truncated file)")
    scale = 2.0 ** number(procs, "NC_proc", procs_path, default=0.0, low=-64, high=64)
    values = np.fromfile(path, dtype=dtype, count=n).astype(float) * scale
    sw_p = number(procs, "SW_p", procs_path, positive=True)
    sf = number(procs, "SF", procs_path, positive=True)
    offset = number(procs, "OFFSET", procs_path)
    step_ppm = sw_p / sf / n
    ppm = offset - step_ppm * np.arange(n)
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
        raise FileFormatError(f"{folder}: cannot read procpar/fid ({first_line(exc)})") from exc
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
    if not sw_hz or sw_hz <= 0:
        raise FileFormatError(f"{folder / 'procpar'}: required parameter sw is missing or not > 0")
    params = _procpar_parameters(pp, data.size, sw_hz)
    source = str(folder / "procpar")
    check_field(source, params.field_mhz, params.nucleus, label="sfrq")
    check_spectral_width(source, sw_hz, params.field_mhz, label="sw")
    check_fid_magnitude(str(folder / "fid"), data)
    return RawFid(
        fid=data, dwell_s=1.0 / sw_hz, group_delay_points=0.0, frequency_sign=-1,  # (memory) convention
        parameters=params, source_path=str(folder), sha256=sha256_of_path(folder),
        format="fid-directory-procpar", reference_mhz=_procpar_float(pp, "reffrq"),
        notes=("procpar data: imaginary channel taken with the opposite sign convention",),
        orientation_basis="format convention of procpar FIDs (opposite sign of the imaginary channel)",
    )


def _procpar_value(pp: dict, key: str):
    entry = pp.get(key)
    if not entry or not entry.get("values"):
        return None
    return entry["values"][0]


def _procpar_float(pp: dict, key: str) -> float | None:
    value = _procpar_value(pp, key)
    try:
        number_value = float(value) if value is not None else None
    except ValueError:
        return None
    return number_value if number_value is not None and np.isfinite(number_value) else None


def _procpar_parameters(pp: dict, n_complex: int, sw_hz: float) -> AcquisitionParameters:
    sfrq, reffrq = _procpar_float(pp, "sfrq"), _procpar_float(pp, "reffrq")
    temp_c = _procpar_float(pp, "temp")
    scans = _procpar_float(pp, "nt")
    return AcquisitionParameters(
        field_mhz=sfrq,
        nucleus=nucleus_label(_procpar_value(pp, "tn")),
        solvent=solvent_label(_procpar_value(pp, "solvent")),
        spectral_width_hz=sw_hz,
        carrier_ppm=(sfrq / reffrq - 1.0) * 1e6 if sfrq and reffrq else None,
        n_scans=int(scans) if scans is not None and scans >= 1 else None,
        receiver_gain=_procpar_float(pp, "gain"),
        relaxation_delay_s=_procpar_float(pp, "d1"),
        acquisition_time_s=n_complex / sw_hz,
        temperature_k=temp_c + 273.15 if temp_c is not None else None,
        pulse_program=_procpar_value(pp, "seqfil"),
        n_dimensions=1,
    )
