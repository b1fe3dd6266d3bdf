"""What a batch is made of: a manifest CSV or a folder of spectra, read into :class:`BatchItem` s.

A manifest has a ``spectrum`` column and, per row, ``substrate`` + ``reagent`` or ``candidates``,
optional ``id``, ``reaction_solvent``, ``nmr_solvent``, ``temp_c``, ``field_mhz``, ``spec``,
``decoupled`` (``19F``, ``31P`` or both, separated by ``;`` or spaces). A
folder's spectra (JCAMP-DX files, peak-list tables, FID folders, sub-folders holding one data
set, and data sets one folder further down, such as numbered experiment folders) all share one
QC specification. Item ids are unique after sanitising (a later duplicate gets the first free
``_2``, ``_3``... suffix) and may not be the name of one of the batch's own files.
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import asdict, dataclass
from pathlib import Path

from predictors.errors import FileFormatError, InputError
from predictors.hetero_couplings import check_nuclei

#: Columns a manifest may have (``spectrum`` is required).
MANIFEST_COLUMNS = ("id", "spectrum", "substrate", "reagent", "candidates", "reaction_solvent", "nmr_solvent",
                    "temp_c", "field_mhz", "spec", "decoupled")
#: Names an item may not have: the batch's own files (and names some systems reserve for devices).
RESERVED_IDS = frozenset({"summary.csv", "components.csv", "index.html", "con", "prn", "aux", "nul",
                          *(f"com{k}" for k in range(1, 10)), *(f"lpt{k}" for k in range(1, 10))})
_DATA_SUFFIXES = (".dx", ".jdx", ".jcamp", ".jcm", ".csv", ".tsv", ".txt", ".tab", ".peaks", ".lst")
_FID_NAMES = {"fid", "acqus", "procpar"}


@dataclass(frozen=True)
class BatchItem:
    """One spectrum of a batch and how to analyse it."""

    item_id: str
    spectrum: Path
    substrate: str | None = None
    reagent: str | None = None
    candidates: tuple[str, ...] = ()
    reaction_solvent: str | None = None
    temp_c: float = 25.0
    field_mhz: float | None = None
    spec: Path | None = None
    nmr_solvent: str | None = None
    decoupled: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "spectrum", Path(self.spectrum))
        if self.spec is not None:
            object.__setattr__(self, "spec", Path(self.spec))
        object.__setattr__(self, "candidates", tuple(self.candidates))
        object.__setattr__(self, "decoupled", tuple(self.decoupled))


def _safe_id(text: str) -> str:
    cleaned = re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("._")
    return cleaned or "item"


def _check_reserved(name: str, *, given: str) -> None:
    if name.casefold() in RESERVED_IDS:
        raise InputError(f"item id {given!r}: {name!r} is reserved for the batch's own files; "
                         "choose another id (reserved: summary.csv, components.csv, index.html and device "
                         "names)")


def _unique_ids(items: list[BatchItem]) -> list[BatchItem]:
    """Sanitised ids, unique without regard to case: the first holder of a name keeps it, a later
    duplicate gets the first free ``_2``, ``_3``... suffix (``a, a, a_2`` -> ``a, a_3, a_2``)."""
    bases = [_safe_id(item.item_id) for item in items]
    for base, item in zip(bases, items, strict=True):
        _check_reserved(base, given=item.item_id)
    first = {}
    for k, base in enumerate(bases):
        first.setdefault(base.casefold(), k)
    taken = set(first)
    out = []
    for k, (base, item) in enumerate(zip(bases, items, strict=True)):
        name = base
        if first[base.casefold()] != k:
            suffix = 2
            while f"{base}_{suffix}".casefold() in taken or f"{base}_{suffix}".casefold() in RESERVED_IDS:
                suffix += 1
            name = f"{base}_{suffix}"
            taken.add(name.casefold())
        out.append(BatchItem(**{**asdict(item), "item_id": name}))
    return out


def _optional_float(value: str | None, *, name: str, row: int) -> float | None:
    if value is None or not value.strip():
        return None
    try:
        number = float(value)
    except ValueError:
        number = math.nan
    if not math.isfinite(number):
        raise InputError(f"manifest row {row}: {name} must be a finite number, got {value!r}")
    return number


def read_manifest(path: str | Path) -> list[BatchItem]:
    """Read a manifest CSV; relative paths are taken from the manifest's folder.

    ``candidates`` holds SMILES (each optionally ``name=SMILES``) separated by spaces or
    semicolons. An empty ``temp_c`` means
    25 C; ``0`` means 0 C.

    Raises
    ------
    FileFormatError
        Unreadable file.
    InputError
        No ``spectrum`` column, unknown columns, empty rows, bad numbers or reserved ids.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        reason = getattr(exc, "strerror", None) or exc
        raise FileFormatError(f"manifest: cannot read {str(path)!r} ({reason})") from None
    reader = csv.DictReader(io.StringIO(text))
    try:
        columns = [c.strip() for c in (reader.fieldnames or [])]
    except csv.Error as exc:
        raise FileFormatError(f"manifest: {str(path)!r} is not a readable CSV file ({exc})") from None
    if "spectrum" not in columns:
        raise InputError(f"manifest: {str(path)!r} needs a 'spectrum' column; allowed columns: "
                         f"{', '.join(MANIFEST_COLUMNS)}")
    if "solvent" in columns:
        raise InputError("manifest: the column 'solvent' is ambiguous and no longer accepted; name it "
                         "'reaction_solvent' (the reaction's) or 'nmr_solvent' (the sample's)")
    unknown = sorted(set(columns) - set(MANIFEST_COLUMNS))
    if unknown:
        raise InputError(f"manifest: unknown column {unknown[0]!r}; allowed: {', '.join(MANIFEST_COLUMNS)}")
    items = []
    try:
        for row_number, raw in enumerate(reader, start=2):
            items.append(_manifest_item(path, row_number, raw))
    except csv.Error as exc:
        raise FileFormatError(f"manifest: {str(path)!r} is not a readable CSV file ({exc})") from None
    if not items:
        raise InputError(f"manifest: {str(path)!r} lists no spectra")
    return _unique_ids(items)


def _manifest_item(path: Path, row_number: int, raw: dict) -> BatchItem:
    row = {k.strip(): (v if isinstance(v, str) else "").strip() for k, v in raw.items() if k}
    if not row.get("spectrum"):
        raise InputError(f"manifest row {row_number}: the spectrum column is empty")
    spectrum = Path(row["spectrum"])
    spectrum = spectrum if spectrum.is_absolute() else path.parent / spectrum
    spec = Path(row["spec"]) if row.get("spec") else None
    temp_c = _optional_float(row.get("temp_c"), name="temp_c", row=row_number)
    decoupled = check_nuclei([n for n in re.split(r"[;\s]+", row.get("decoupled", "")) if n],
                             name=f"manifest row {row_number}: decoupled")
    return BatchItem(
        item_id=row.get("id") or spectrum.stem, spectrum=spectrum,
        substrate=row.get("substrate") or None, reagent=row.get("reagent") or None,
        candidates=tuple(c for c in re.split(r"[;\s]+", row.get("candidates", "")) if c),
        reaction_solvent=row.get("reaction_solvent") or None,
        nmr_solvent=row.get("nmr_solvent") or None,
        temp_c=25.0 if temp_c is None else temp_c,
        field_mhz=_optional_float(row.get("field_mhz"), name="field_mhz", row=row_number),
        spec=(spec if spec is None or spec.is_absolute() else path.parent / spec), decoupled=decoupled)


def _is_fid_folder(folder: Path) -> bool:
    return bool({p.name for p in folder.iterdir()} & _FID_NAMES)


def _is_data_file(entry: Path) -> bool:
    return entry.is_file() and entry.suffix.lower() in _DATA_SUFFIXES


def _is_data_folder(folder: Path) -> bool:
    return _is_fid_folder(folder) or any(_is_data_file(p) for p in folder.iterdir())


def _visible(folder: Path) -> list[Path]:
    return [p for p in sorted(folder.iterdir()) if not p.name.startswith(".")]


def scan_folder(folder: str | Path) -> tuple[list[BatchItem], list[str]]:
    """Every data set in a folder, and notes on what was passed over.

    Data files and sub-folders holding one data set are items; a sub-folder that holds none
    directly is searched one level further (``sample1/10/fid`` becomes item ``sample1_10``).
    Anything else is named in the notes.

    Raises
    ------
    InputError
        When the folder holds no data set.
    """
    folder = Path(folder)
    if _is_fid_folder(folder):
        return [BatchItem(item_id=folder.name, spectrum=folder)], []
    entries, notes, ignored = [], [], []
    for entry in _visible(folder):
        if _is_data_file(entry):
            entries.append(BatchItem(item_id=entry.stem, spectrum=entry))
        elif entry.is_dir() and _is_data_folder(entry):
            entries.append(BatchItem(item_id=entry.name, spectrum=entry))
        elif entry.is_dir():
            deeper = [BatchItem(item_id=f"{entry.name}_{sub.stem if sub.is_file() else sub.name}",
                                spectrum=sub) for sub in _visible(entry)
                      if _is_data_file(sub) or (sub.is_dir() and _is_data_folder(sub))]
            entries.extend(deeper)
            if not deeper:
                notes.append(f"folder {str(entry)!r} holds no spectra (looked one level down); skipped")
        else:
            ignored.append(entry.name)
    if ignored:
        shown = ", ".join(ignored[:5]) + (f" and {len(ignored) - 5} more" if len(ignored) > 5 else "")
        notes.append(f"{len(ignored)} file(s) in {str(folder)!r} are not spectra and were skipped: {shown}")
    if not entries:
        raise InputError(f"batch input: folder {str(folder)!r} holds no spectra (JCAMP-DX files "
                         f"{', '.join(_DATA_SUFFIXES[:4])}, peak lists or FID folders, also one folder down)")
    return _unique_ids(entries), notes


def items_from_folder(folder: str | Path) -> list[BatchItem]:
    """Every data set in a folder (see :func:`scan_folder`; its notes are dropped)."""
    return scan_folder(folder)[0]


def collect_batch(source: str | Path) -> tuple[list[BatchItem], list[str]]:
    """Items from a manifest CSV file or a folder of spectra, and notes on what was skipped."""
    source = Path(source)
    try:
        if not source.exists():
            raise FileFormatError(f"batch input: {str(source)!r} does not exist")
        return scan_folder(source) if source.is_dir() else (read_manifest(source), [])
    except PermissionError as exc:
        raise FileFormatError(f"batch input: cannot read {str(exc.filename or source)!r} "
                              f"({exc.strerror})") from None


def collect_items(source: str | Path) -> list[BatchItem]:
    """Items from a manifest CSV file or from a folder of spectra."""
    return collect_batch(source)[0]
