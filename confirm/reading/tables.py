"""Text tables: peak lists (CSV, TSV, semicolon or whitespace) and dense spectra written as CSV.

A table of two numeric columns with at least :data:`DENSE_MIN_ROWS` rows whose first column is
evenly spaced is a spectrum (for example ``confirm process --out``), not a peak list: it is read
as a :class:`RawSpectrum` (format ``"csv-spectrum"``), with the field, nucleus and solvent taken
from a ``# ... field_mhz=...; nucleus=...; solvent=...`` comment line when there is one.

Peak lists keep their multiplicity and coupling columns. A cell of couplings may separate its
values with blanks, ``,``, ``/``, ``;`` or ``|`` (``"15.6, 6.9"``, ``"15.6/6.9"``,
``"15.6 6.9"``); any other separator is named in the error.
"""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path

import numpy as np

from confirm.reading.checks import check_field
from confirm.reading.labels import nucleus_label, solvent_label
from confirm.reading.records import AcquisitionParameters, PeakList, PeakListEntry, RawSpectrum
from confirm.results import sha256_of_path
from predictors.errors import FileFormatError

__all__ = ["read_table", "DENSE_MIN_ROWS", "TEXT_SUFFIXES"]

#: File name endings taken as text tables in a folder.
TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".tab", ".peaks", ".lst")
#: A two-column table with at least this many evenly spaced rows is a spectrum.
DENSE_MIN_ROWS = 256

_COLUMN_NAMES = {
    "ppm": ("ppm", "shift", "shiftppm", "delta", "deltappm", "δ", "δppm", "chemicalshift", "position"),
    "intensity": ("intensity", "height", "amplitude", "intens", "int", "i", "peakheight", "y"),
    "integral": ("integral", "area", "integration", "nh", "integrals"),
    "width_hz": ("width", "widthhz", "fwhm", "fwhmhz", "linewidth", "linewidthhz", "w12", "halfwidth"),
    "multiplicity": ("multiplicity", "mult", "pattern", "shape"),
    "j_hz": ("j", "jhz", "coupling", "couplings", "couplingconstant", "couplingconstants", "jvalues"),
}
_NUMERIC = ("ppm", "intensity", "integral", "width_hz")
_NUMBER = re.compile(r"[-+]?\d+(?:[.,]\d+)?(?:[eE][-+]?\d+)?")
_J_SEPARATORS = "blanks, ',', '/', ';' or '|'"


def read_table(path: Path) -> PeakList | RawSpectrum:
    """Read a text table as a dense spectrum or a peak list (see the module docstring)."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        text = path.read_text(encoding="latin-1")
    numbered = [(i + 1, ln.strip()) for i, ln in enumerate(text.splitlines())]
    comments = [ln for _, ln in numbered if ln.startswith(("#", "%", "//", ";"))]
    lines = [(n, ln) for n, ln in numbered if ln and not ln.startswith(("#", "%", "//", ";"))]
    if not lines:
        raise FileFormatError(f"{path}: empty (no peak rows)")
    delimiter = _detect_delimiter([ln for _, ln in lines])
    rows = [(n, _split_row(ln, delimiter)) for n, ln in lines]
    header = rows[0][1] if not _is_number(rows[0][1][0], delimiter) else None
    body = rows[1:] if header is not None else rows
    if not body:
        raise FileFormatError(f"{path}: peak list has a header but no rows")
    dense = _dense_spectrum(path, header, body, delimiter, comments)
    if dense is not None:
        return dense
    columns = _map_columns(path, header, max(len(r) for _, r in body))
    decimal_comma = _check_decimal_comma(path, delimiter, header, body)
    entries = [_parse_row(path, n, row, columns, delimiter, decimal_comma) for n, row in body]
    entries.sort(key=lambda e: -e.ppm)
    return PeakList(entries=tuple(entries), parameters=_comment_parameters(path, comments),
                    source_path=str(path), sha256=sha256_of_path(path),
                    columns=tuple(c for c in columns if c))


# ---------------------------------------------------------------------------
# dense spectra
# ---------------------------------------------------------------------------

def _dense_spectrum(path, header, body, delimiter, comments) -> RawSpectrum | None:
    if len(body) < DENSE_MIN_ROWS or any(len(row) != 2 for _, row in body[:DENSE_MIN_ROWS]):
        return None
    if header is not None and _column_kind(header[0]) != "ppm":
        return None
    values = np.empty((len(body), 2))
    for k, (line_no, row) in enumerate(body):
        if len(row) != 2:
            return None
        for c in (0, 1):
            value = _to_float(row[c], delimiter)
            if value is None or not math.isfinite(value):
                raise FileFormatError(f"{path}: line {line_no}: {row[c]!r} is not a finite number "
                                      "(a two-column spectrum table)")
            values[k, c] = value
    steps = np.diff(values[:, 0])
    step = float(np.median(steps))
    if step == 0 or np.any(np.abs(steps - step) > 0.05 * abs(step)):
        return None
    params = _comment_parameters(path, comments)
    return RawSpectrum(ppm=values[:, 0], intensity=values[:, 1], parameters=params, source_path=str(path),
                       sha256=sha256_of_path(path), format="csv-spectrum",
                       notes=(f"two-column table of {len(body)} evenly spaced points read as a spectrum",))


def _comment_parameters(path: Path, comments: list[str]) -> AcquisitionParameters:
    """Field, nucleus and solvent from ``key=value`` pairs in comment lines."""
    found: dict[str, str] = {}
    for line in comments:
        for key, value in re.findall(r"(field_mhz|nucleus|solvent)\s*[=:]\s*([^;,]+)", line, flags=re.I):
            found.setdefault(key.lower(), value.strip())
    field_mhz = None
    if "field_mhz" in found:
        try:
            field_mhz = float(found["field_mhz"])
        except ValueError:
            raise FileFormatError(f"{path}: comment gives field_mhz = {found['field_mhz']!r}, "
                                  "not a number") from None
    nucleus = nucleus_label(found.get("nucleus"))
    check_field(str(path), field_mhz, nucleus, label="field_mhz")
    return AcquisitionParameters(field_mhz=field_mhz, nucleus=nucleus,
                                 solvent=solvent_label(found.get("solvent")))


# ---------------------------------------------------------------------------
# peak lists
# ---------------------------------------------------------------------------

def _detect_delimiter(lines: list[str]) -> str | None:
    for candidate in ("\t", ";"):
        if all(candidate in ln for ln in lines):
            return candidate
    if all("," in ln for ln in lines):
        # "7,26  120": whitespace-separated numbers written with a decimal comma
        if all(len(ln.split()) >= 2 and all(_NUMBER.fullmatch(tok) for tok in ln.split()) for ln in lines):
            return None
        return ","
    return None


def _split_row(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    cells = next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
    return [cell.strip().strip("'") for cell in cells]


def _is_number(text: str, delimiter: str | None) -> bool:
    return _to_float(text, delimiter) is not None


def _to_float(text: str, delimiter: str | None) -> float | None:
    text = text.strip()
    if delimiter != "," and re.fullmatch(r"[-+]?\d+,\d+", text):
        text = text.replace(",", ".")  # decimal comma (only where ',' is not the delimiter)
    try:
        return float(text)
    except ValueError:
        return None


def _column_kind(cell: str) -> str | None:
    key = re.sub(r"[\s_\-/().\[\]]+", "", cell.lower())
    kind = next((k for k, names in _COLUMN_NAMES.items() if key in names), None)
    if kind is None and key.startswith("j"):
        kind = "j_hz"
    return kind


def _map_columns(path: Path, header: list[str] | None, n_columns: int) -> list[str | None]:
    if header is None:
        defaults = ["ppm", "intensity", "integral", "width_hz"]
        return [defaults[i] if i < len(defaults) else None for i in range(n_columns)]
    mapped: list[str | None] = []
    for cell in header:
        kind = _column_kind(cell)
        if kind is not None and kind in mapped and kind != "j_hz":
            kind = None
        mapped.append(kind)
    if "ppm" not in mapped:
        raise FileFormatError(f"{path}: peak-list header {header} has no ppm column "
                              "(expected one of: ppm, shift, delta)")
    return mapped + [None] * max(0, n_columns - len(mapped))


def _check_decimal_comma(path: Path, delimiter, header, body) -> bool:
    """True when numbers are written with a decimal comma; a comma-separated file cannot use one."""
    if delimiter == "," and header is not None:
        for line_no, row in body:
            if len(row) > len(header):
                raise FileFormatError(
                    f"{path}: line {line_no} has {len(row)} fields but the header has {len(header)}; "
                    "a decimal comma in a comma-separated file is ambiguous: use ';' or tab as the delimiter")
    if delimiter == ",":
        return False
    return any(re.fullmatch(r"[-+]?\d+,\d+", cell.strip()) for _, row in body for cell in row[:1])


def _parse_row(path: Path, line_no: int, row: list[str], columns, delimiter, decimal_comma) -> PeakListEntry:
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
            j_values.extend(parse_couplings(cell, decimal_comma=decimal_comma,
                                            where=f"{path}: line {line_no}, column j_hz"))
    if "ppm" not in values:
        raise FileFormatError(f"{path}: line {line_no} has no ppm value")
    if not -5.0 <= values["ppm"] <= 25.0:
        raise FileFormatError(f"{path}: line {line_no}: ppm {values['ppm']} is outside -5..25 for 1H")
    return PeakListEntry(j_hz=tuple(j_values), **values)


def parse_couplings(cell: str, *, decimal_comma: bool = False, where: str = "couplings") -> list[float]:
    """Coupling constants (Hz) from one cell: ``"15.6, 6.9"``, ``"15.6/6.9"``, ``"15.6 6.9"``...

    Parameters
    ----------
    cell : str
        The cell as written; ``J =`` before and ``Hz`` after the values are allowed.
    decimal_comma : bool
        The file writes decimals with a comma (then ``"15,6"`` is one value).
    where : str
        Named in the error message.

    Raises
    ------
    FileFormatError
        A value that is not a number, a separator other than blanks, ``,``, ``/``, ``;`` or
        ``|`` (named in the message), or a coupling outside 0-40 Hz.
    """
    text = re.sub(r"^\s*(?:\d*J(?:\([^)]*\))?|J\s*\w*)\s*[=:]\s*", "", cell.strip())
    text = re.sub(r"\s*hz\.?\s*$", "", text, flags=re.I)
    values = []
    for part in re.split(r"[\s/|;]+", text):
        part = part.strip(",")
        if not part:
            continue
        pieces = [part] if decimal_comma and re.fullmatch(r"\d+,\d+", part) else part.split(",")
        for piece in pieces:
            if not piece:
                continue
            number = piece.replace(",", ".") if decimal_comma else piece
            try:
                value = float(number)
            except ValueError:
                odd = re.sub(r"[\d.\s,/|;]+", "", piece) or piece
                raise FileFormatError(f"{where}: {cell!r}: {odd!r} is not a coupling constant or a separator "
                                      f"(separate values with {_J_SEPARATORS}, e.g. '15.6, 6.9')") from None
            if not (math.isfinite(value) and 0 <= abs(value) <= 40):
                raise FileFormatError(f"{where}: {cell!r}: coupling {value:g} Hz is outside 0-40 Hz")
            values.append(value)
    return values
