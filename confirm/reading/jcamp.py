"""JCAMP-DX 1D NMR files: FIDs (NTUPLES real and imaginary pages), spectra, compound (LINK) files.

Which block: the one 1D 1H NMR block of the file; in a compound file (``##DATA TYPE= LINK``) a
1H FID block is preferred, a 1H spectrum block is attached to it as its processed spectrum, and
every other block (13C, 2D, structures) is named in the notes. Orientation from the metadata:
the pages are told apart by their own labels (the symbol of each ``##DATA TABLE`` and its
``##VAR_NAME``, e.g. ``FID/IMAG``), so a file that stores the imaginary page first reads the
same; ``##$REVERSE= yes`` asks for the spectrum reversed after the transform, the opposite sign
convention of the imaginary channel.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np

from confirm.reading.checks import check_axis_units, check_fid_magnitude, check_field, check_spectral_width
from confirm.reading.decoupling import decoupled_nuclei
from confirm.reading.fid_directory import group_delay
from confirm.reading.jcamp_blocks import JcampBlock, JcampTable, split_blocks
from confirm.reading.jcamp_decode import MAX_POINTS, decode_ordinates, decode_pairs
from confirm.reading.labels import clean_label, nucleus_label, solvent_label
from confirm.reading.records import AcquisitionParameters, RawFid, RawSpectrum
from confirm.results import sha256_of_path
from predictors.errors import FileFormatError

__all__ = ["read_jcamp", "JCAMP_SUFFIXES"]

#: File name endings taken as JCAMP-DX without looking inside.
JCAMP_SUFFIXES = (".dx", ".jdx", ".jcamp", ".jcm")
#: A text file larger than this cannot hold a 1D 1H data set within the point bound.
_MAX_FILE_BYTES = 40 * MAX_POINTS
_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


def read_jcamp(path: Path) -> RawFid | RawSpectrum:
    """Read the 1D 1H NMR block of a JCAMP-DX file (see the module docstring for the choice)."""
    size = path.stat().st_size
    if size > _MAX_FILE_BYTES:
        raise FileFormatError(f"{path}: {size / 1e6:.0f} MB is too large for a 1D JCAMP-DX file "
                              f"(limit {_MAX_FILE_BYTES / 1e6:.0f} MB)")
    text = path.read_bytes().decode("latin-1")
    roots = split_blocks(text, source=str(path))
    leaves = [leaf for root in roots for leaf in _leaves(root)]
    chosen, processed, notes = _choose_blocks(path, roots, leaves)
    digest = sha256_of_path(path)
    record = _read_block(path, chosen, digest, notes)
    if processed is not None and isinstance(record, RawFid):
        from dataclasses import replace

        spectrum = _read_block(path, processed, digest, ())
        if isinstance(spectrum, RawSpectrum):
            record = replace(record, processed=spectrum)
    return record


def _leaves(block: JcampBlock) -> list[JcampBlock]:
    if not block.children:
        return [block]
    return [leaf for child in block.children for leaf in _leaves(child)]


def _kind(block: JcampBlock) -> str:
    data_type = block.data_type
    if "LINK" in data_type:
        return "link"
    if _is_multidimensional(block):
        return "nd"
    if "NMR" in data_type and "FID" in data_type:
        return "fid"
    if "NMR" in data_type and "SPECTRUM" in data_type:
        return "spectrum"
    if not data_type and block.tables:
        return "spectrum"  # no DATA TYPE label: taken as a spectrum, as before
    if "PEAK" in data_type or (block.tables and all(t.label == "PEAKTABLE" for t in block.tables)):
        return "peaks"
    return "other"


def _is_multidimensional(block: JcampBlock) -> bool:
    dims = _first_number(block.text("NUMDIM"))
    data_type = block.data_type
    return (dims is not None and dims > 1) or data_type.split(" ")[0] in ("ND", "2D")


def _nucleus(block: JcampBlock) -> str | None:
    return nucleus_label(block.text(".OBSERVENUCLEUS") or block.text("$NUC1"))


def _describe(index: int, block: JcampBlock) -> str:
    parts = [block.data_type or "no DATA TYPE"]
    nucleus = _nucleus(block)
    if nucleus and _kind(block) in ("fid", "spectrum", "nd"):
        parts.append(nucleus)
    return f"block {index} ({', '.join(parts)})"


def _choose_blocks(path: Path, roots, leaves) -> tuple[JcampBlock, JcampBlock | None, list[str]]:
    """The block to read, a spectrum block to attach to a FID block, and notes naming the rest."""
    kinds = [_kind(b) for b in leaves]
    one_d = [b for b, k in zip(leaves, kinds, strict=True) if k in ("fid", "spectrum")]
    proton = [b for b in one_d if _nucleus(b) in (None, "1H")]
    pool = proton or one_d
    if not pool:
        if "nd" in kinds:
            raise FileFormatError(f"{path}: holds 2D (or nD) data; only 1D spectra are supported")
        if len(leaves) == 1:
            if kinds[0] == "peaks":
                raise FileFormatError(f"{path}: holds a JCAMP-DX peak table, not a spectrum; export the "
                                      "spectrum or write the peaks as a CSV peak list")
            data_type = leaves[0].data_type or "none"
            raise FileFormatError(f"{path}: JCAMP-DX data type {data_type!r} is not an NMR spectrum")
        found = "; ".join(_describe(i + 1, b) for i, b in enumerate(leaves))
        raise FileFormatError(f"{path}: compound JCAMP-DX file holds no 1D NMR block ({found})")
    fids = [b for b in pool if _kind(b) == "fid"]
    chosen = fids[0] if fids else pool[0]
    processed = next((b for b in pool if _kind(b) == "spectrum"), None) if fids else None
    notes = []
    if len(leaves) > 1:
        used = [chosen] + ([processed] if processed is not None else [])
        index = {id(b): i + 1 for i, b in enumerate(leaves)}
        others = [_describe(index[id(b)], b) for b in leaves if all(b is not u for u in used)]
        text = f"compound JCAMP-DX file: read {_describe(index[id(chosen)], chosen)}"
        if processed is not None:
            text += f" with {_describe(index[id(processed)], processed)} as its processed spectrum"
        if others:
            text += "; not used: " + ", ".join(others)
        notes.append(text)
    return chosen, processed, notes


def _read_block(path: Path, block: JcampBlock, digest: str, notes) -> RawFid | RawSpectrum:
    params = _parameters(block)
    source = str(path)
    check_field(source, params.field_mhz, params.nucleus, label=".OBSERVE FREQUENCY")
    if _kind(block) == "fid":
        return _read_fid(path, block, params, digest, list(notes))
    return _read_spectrum(path, block, params, digest, list(notes))


# ---------------------------------------------------------------------------
# labels
# ---------------------------------------------------------------------------

def _first_number(text: str | None) -> float | None:
    if text is None:
        return None
    match = _NUMBER.search(text)
    if match is None:
        return None
    value = float(match.group(0))
    return value if math.isfinite(value) else None


def _float(block: JcampBlock, *keys: str) -> float | None:
    for key in keys:
        text = block.text(key)
        if text is None:
            continue
        match = re.match(r"\s*\(?\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)", text)
        if match:
            value = float(match.group(1))
            if math.isfinite(value):
                return value
    return None


def _numbers(block: JcampBlock, key: str) -> list[float]:
    text = block.text(key)
    if text is None:
        return []
    body = text.split("\n", 1)[1] if text.startswith("(") and "\n" in text else text
    return [float(x) for x in _NUMBER.findall(body)]


def _cells(block: JcampBlock, key: str) -> list[str]:
    text = block.text(key)
    return [] if text is None else [cell.strip() for cell in text.split(",")]


def _suffix_float(block: JcampBlock, *suffixes: str) -> float | None:
    """A private ``##$...`` label ending in one of ``suffixes`` (makers prefix their own names)."""
    for key in block.labels:
        if key.startswith("$") and key.endswith(suffixes):
            value = _float(block, key)
            if value is not None:
                return value
    return None


def _parameters(block: JcampBlock) -> AcquisitionParameters:
    sfo1 = _float(block, ".OBSERVEFREQUENCY", "$SFO1", "$SF")
    sw_hz = _float(block, "$SWH", "$SWEEPWIDTHHZ")
    sf = _float(block, "$SF", "$BF1")
    carrier = None
    if sfo1 and sf:
        carrier = (sfo1 / sf - 1.0) * 1e6
    elif _float(block, "$O1P") is not None:
        carrier = _float(block, "$O1P")
    delays = _numbers(block, "$D")
    relax = _float(block, "$RELAXATIONDELAY")
    if relax is None and len(delays) > 1:
        relax = delays[1]
    if relax is None:
        relax = _suffix_float(block, "RECYCLEDELAY", "T1DELAY")
    temp_k = _float(block, "$TE")
    if temp_k is None and _float(block, "TEMPERATURE") is not None:
        temp_k = _float(block, "TEMPERATURE") + 273.15  # JCAMP-DX TEMPERATURE is in deg C
    scans = _float(block, ".AVERAGES", "$NS", "$SCANS")
    if scans is None:
        scans = _suffix_float(block, "NSCANS")
    return AcquisitionParameters(
        field_mhz=sfo1,
        nucleus=_nucleus(block),
        solvent=solvent_label(block.text(".SOLVENTNAME") or block.text("$SOLVENT")),
        spectral_width_hz=sw_hz,
        carrier_ppm=carrier,
        n_scans=int(scans) if scans is not None and scans >= 1 else None,
        receiver_gain=_float(block, "$RG", "$RECVRGAIN"),
        relaxation_delay_s=relax if relax is not None and relax >= 0 else None,
        acquisition_time_s=_float(block, ".ACQUISITIONTIME", "$AQ"),
        temperature_k=temp_k if temp_k is not None and temp_k > 0 else None,
        pulse_program=clean_label(block.text(".PULSESEQUENCE") or block.text("$PULPROG")),
        n_dimensions=1,
        decoupled_nuclei=decoupled_nuclei(
            channels=(block.text("$NUC2"), block.text("$NUC3")),
            pulse_program=clean_label(block.text(".PULSESEQUENCE") or block.text("$PULPROG")),
            decoupler_labels=(block.text(".DECOUPLER"), block.text("$DECOUPLER")),
            titles=(block.text("TITLE"),)),
    )


# ---------------------------------------------------------------------------
# data pages
# ---------------------------------------------------------------------------

def _pages(path: Path, block: JcampBlock) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """(real, imaginary or None, abscissas or None) of a block's data tables, factors applied."""
    tables = [t for t in block.tables if t.label != "PEAKTABLE"]
    if not tables:
        raise FileFormatError(f"{path}: JCAMP-DX block has no data table (##XYDATA or ##DATA TABLE)")
    symbols = [s.upper() for s in _cells(block, "SYMBOL")]
    names = [n.upper() for n in _cells(block, "VARNAME")]
    dims = _cells(block, "VARDIM")
    factors = _cells(block, "FACTOR")
    pages: dict[str, np.ndarray] = {}
    x_values = None
    for table in tables:
        source = f"{path} (line {table.line})"
        if table.label == "XYPOINTS" or "XY..XY" in table.variables.upper().replace(" ", ""):
            declared = _first_number(block.text("NPOINTS"))
            x_values, y = decode_pairs(table.lines, source=source, declared=_whole(declared))
            role, factor = "real", _float(block, "YFACTOR") or 1.0
        else:
            symbol = _table_symbol(table)
            position = symbols.index(symbol) if symbol in symbols else None
            role = _role(symbol, names[position] if position is not None and position < len(names) else "")
            if table.label == "DATATABLE" and position is not None:
                declared = _first_number(dims[position]) if position < len(dims) else None
                factor = _first_number(factors[position]) if position < len(factors) else None
            else:
                declared = _first_number(block.text("NPOINTS"))
                factor = _float(block, "YFACTOR")
            y = decode_ordinates(table.lines, source=source, declared=_whole(declared))
            if declared is not None and y.size < declared:
                raise FileFormatError(f"{source}: header declares {declared:g} points but only {y.size} were "
                                      "read (truncated file?)")
        if role in pages:
            raise FileFormatError(f"{path}: holds more than one {role} page (2D data?); only 1D spectra are "
                                  "supported")
        pages[role] = y * (factor if factor else 1.0)
    if "real" not in pages:
        raise FileFormatError(f"{path}: JCAMP-DX block has an imaginary page but no real one")
    real, imag = pages["real"], pages.get("imag")
    if real.size == 0:
        raise FileFormatError(f"{path}: JCAMP-DX file holds no data points")
    if imag is not None and imag.shape != real.shape:
        raise FileFormatError(f"{path}: real ({real.size}) and imaginary ({imag.size}) pages differ in "
                              "length (truncated?)")
    return real, imag, x_values


def _whole(value: float | None) -> int | None:
    if value is None:
        return None
    if value < 1 or value != int(value):
        return None
    return int(value)


def _table_symbol(table: JcampTable) -> str:
    match = re.search(r"\(\s*[A-Z]\s*\+\+\s*\(\s*([A-Z])\s*\.\.", table.variables.upper())
    return match.group(1) if match else "Y"


def _role(symbol: str, name: str) -> str:
    """``"imag"`` or ``"real"``: the variable's name decides (``FID/IMAG``), else its symbol."""
    if "IMAG" in name:
        return "imag"
    if "REAL" in name:
        return "real"
    return "imag" if symbol == "I" else "real"


# ---------------------------------------------------------------------------
# FID
# ---------------------------------------------------------------------------

def _read_fid(path: Path, block: JcampBlock, params: AcquisitionParameters, digest: str, notes) -> RawFid:
    real, imag, _x = _pages(path, block)
    if imag is None:
        raise FileFormatError(f"{path}: JCAMP-DX FID has no imaginary page; a complex FID is required")
    dwell = _dwell(path, block, real.size, params)
    from dataclasses import replace

    if params.spectral_width_hz is None:
        params = replace(params, spectral_width_hz=1.0 / dwell)
    check_spectral_width(str(path), params.spectral_width_hz, params.field_mhz, label="spectral width")
    if params.acquisition_time_s is None:
        params = replace(params, acquisition_time_s=real.size * dwell)
    if params.carrier_ppm is None:
        params = replace(params, carrier_ppm=_carrier_from_shift_reference(path, block, real.size, params))
    delay, note = group_delay(_float(block, "$DECIM"), _float(block, "$DSPFVS"), _float(block, "$GRPDLY"))
    fid = real + 1j * imag
    check_fid_magnitude(str(path), fid)
    sign, basis = 1, "JCAMP-DX FID pages as labelled (real and imaginary pages)"
    reverse = (block.text("$REVERSE") or "").strip().strip("<>").lower()
    if reverse in ("yes", "true", "1"):
        sign, basis = -1, "##$REVERSE= yes (spectrum reversed after the transform)"
    return RawFid(
        fid=fid, dwell_s=dwell, group_delay_points=delay, frequency_sign=sign,
        parameters=params, source_path=str(path), sha256=digest, format="jcamp-fid",
        reference_mhz=_float(block, "$SF", "$BF1"), notes=(*notes, note), orientation_basis=basis,
    )


def _dwell(path: Path, block: JcampBlock, n_points: int, params: AcquisitionParameters) -> float:
    firsts, lasts = _numbers(block, "FIRST"), _numbers(block, "LAST")
    if firsts and lasts and n_points > 1 and lasts[0] > firsts[0]:
        return (lasts[0] - firsts[0]) / (n_points - 1)
    if params.spectral_width_hz and params.spectral_width_hz > 0:
        return 1.0 / params.spectral_width_hz
    delta = _float(block, "DELTAX")
    if delta and delta > 0:
        return delta
    raise FileFormatError(f"{path}: cannot find the dwell time (no time axis FIRST/LAST and no sweep width)")


def _shift_reference(path: Path, block: JcampBlock, n_points: int) -> tuple[float, float] | None:
    """(1-based point, ppm) of ``##.SHIFT REFERENCE= (kind, solvent, point, ppm)``, checked."""
    text = block.text(".SHIFTREFERENCE")
    if text is None:
        return None
    parts = [p.strip() for p in text.strip("()").split(",")]
    try:
        point, ppm = float(parts[2]), float(parts[3])
    except (IndexError, ValueError):
        return None
    if not (math.isfinite(point) and math.isfinite(ppm)):
        return None
    if not 1 <= point <= n_points:
        raise FileFormatError(f"{path}: ##.SHIFT REFERENCE point {point:g} lies outside the axis of "
                              f"{n_points} points (1..n)")
    if abs(ppm) > 1000:
        raise FileFormatError(f"{path}: ##.SHIFT REFERENCE value {ppm:g} ppm is not a 1H shift")
    return point, ppm


def _carrier_from_shift_reference(path, block, n_points: int, params: AcquisitionParameters) -> float | None:
    """Carrier ppm from ``.SHIFT REFERENCE`` for a spectrum of ``n_points`` points."""
    reference = _shift_reference(path, block, n_points)
    if reference is None or not params.field_mhz or not params.spectral_width_hz:
        return None
    point, ppm = reference
    # point is 1-based on the ppm-decreasing axis; the carrier sits at index n/2 of the ascending axis
    centre_point = n_points - n_points // 2
    return ppm - (centre_point - point) * params.spectral_width_hz / n_points / params.field_mhz


# ---------------------------------------------------------------------------
# spectrum
# ---------------------------------------------------------------------------

def _read_spectrum(path: Path, block: JcampBlock, params: AcquisitionParameters, digest: str,
                   notes) -> RawSpectrum:
    real, _imag, x_values = _pages(path, block)
    ppm = _ppm_axis(path, block, real.size, params, x_values)
    phc0, phc1 = _float(block, "$PHC0"), _float(block, "$PHC1")
    if phc0 is not None:
        notes.append(f"stored phases {phc0:g} / {phc1 or 0:g} deg")
    return RawSpectrum(ppm=ppm, intensity=real, parameters=params, source_path=str(path), sha256=digest,
                       format="jcamp-spectrum", notes=tuple(notes))


def _ppm_axis(path, block, n_points, params, x_values) -> np.ndarray:
    units = (_cells(block, "UNITS") or [block.text("XUNITS") or "HZ"])[0].upper() or "HZ"
    units = "PPM" if "PPM" in units else "HZ"
    if x_values is not None:
        axis = np.asarray(x_values, dtype=float)
        first, last = float(axis[0]), float(axis[-1])
    else:
        firsts, lasts = _numbers(block, "FIRST"), _numbers(block, "LAST")
        first = firsts[0] if firsts else _float(block, "FIRSTX")
        last = lasts[0] if lasts else _float(block, "LASTX")
        if first is None or last is None or first == last:
            raise FileFormatError(f"{path}: JCAMP-DX spectrum lacks a usable FIRSTX/LASTX axis")
        axis = np.linspace(first, last, n_points)
    check_axis_units(str(path), first, last, units, params.field_mhz)
    if units == "PPM":
        ppm = axis
    else:
        if not params.field_mhz:
            raise FileFormatError(f"{path}: spectrum axis is in Hz but no .OBSERVE FREQUENCY is given")
        ppm = axis / params.field_mhz
        reference = _shift_reference(path, block, n_points)
        offset = _float(block, "$OFFSET")
        if reference is not None:
            point, value = reference
            ppm = ppm + (value - ppm[int(point) - 1])
        elif offset is not None:
            ppm = ppm + (offset - ppm[0])
    width_hz = abs(float(ppm[0] - ppm[-1])) * (params.field_mhz or 0.0)
    if params.field_mhz:
        check_spectral_width(str(path), width_hz, params.field_mhz, label="spectrum axis width")
    return ppm
