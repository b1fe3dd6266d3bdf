"""Batch runs: many spectra, in parallel processes, with a summary table and an HTML index.

Input is either a manifest (CSV with a ``spectrum`` column and, per row,
``substrate`` + ``reagent`` or ``candidates``, optional ``id``, ``solvent``,
``temp_c``, ``field_mhz``, ``spec``) or a folder whose spectra (JCAMP-DX files,
peak-list tables, FID folders, sub-folders holding one data set, and data sets one
folder further down, such as numbered experiment folders) all share one QC
specification. Each item gets its own folder in the output with its report, JSON
result (and QC audit record); a file ``outcome.json`` written last marks it
finished. A bad file is reported as an error and the rest go on.

A rerun skips an item only when it is finished on identical work: the SHA-256 of its
spectrum, its chemistry (substrate, reagent, candidates, solvent, temperature, field),
its specification's SHA-256 and the run's options all match the fingerprint in
``outcome.json``, and its ``result.json`` (and ``audit.json``, ``report.html`` when
they belong to the run) are there and read back; anything else is done again. Item
ids are unique after sanitising (a later duplicate gets the first free ``_2``,
``_3``... suffix) and may not be the name of one of the batch's own files.

Items run in worker processes when ``jobs > 1``, each with its own time budget; Ctrl-C
stops them within about two seconds, keeps what finished and writes the summary of it.
"""

from __future__ import annotations

import csv
import hashlib
import html
import inspect
import io
import json
import math
import re
import sys
import time
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field, fields
from pathlib import Path

from confirm._files import is_within, resolve_path, write_text_atomic
from confirm.budget import DEFAULT_MAX_SECONDS, Budget, watch_budget
from confirm.qc import QcSpec, read_spec
from confirm.results import sha256_of_path
from predictors.errors import ConfirmError, FileFormatError, InputError

__all__ = [
    "BatchItem",
    "ItemOutcome",
    "BatchSummary",
    "MANIFEST_COLUMNS",
    "RESERVED_IDS",
    "read_manifest",
    "items_from_folder",
    "scan_folder",
    "collect_items",
    "collect_batch",
    "item_fingerprint",
    "run_batch",
    "write_summary",
]

#: Columns a manifest may have (``spectrum`` is required).
MANIFEST_COLUMNS = ("id", "spectrum", "substrate", "reagent", "candidates", "reaction_solvent", "nmr_solvent",
                    "temp_c", "field_mhz", "spec")
#: Names an item may not have: the batch's own files (and names some systems reserve for devices).
RESERVED_IDS = frozenset({"summary.csv", "components.csv", "index.html", "con", "prn", "aux", "nul",
                          *(f"com{k}" for k in range(1, 10)), *(f"lpt{k}" for k in range(1, 10))})
_DATA_SUFFIXES = (".dx", ".jdx", ".jcamp", ".jcm", ".csv", ".tsv", ".txt", ".tab", ".peaks", ".lst")
_FID_NAMES = {"fid", "acqus", "procpar"}
_SUMMARY_COLUMNS = ("id", "spectrum", "status", "major", "confidence", "verdict", "qc_status", "error",
                    "sha256", "report", "seconds")
#: Fields ``result.json`` must have for an item to count as finished.
_RESULT_FIELDS = ("components", "verdict", "inputs")
#: A child process still running this long after its budget ran out is stopped from outside.
_KILL_GRACE_S = 30.0
#: What the summary says when a child process gives no outcome.
_FAILURES = {"died": "worker process ended without a result (crashed or killed)",
             "overdue": "time budget: no result long after the {limit:g} s budget; the worker was stopped"}


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

    def __post_init__(self) -> None:
        object.__setattr__(self, "spectrum", Path(self.spectrum))
        if self.spec is not None:
            object.__setattr__(self, "spec", Path(self.spec))
        object.__setattr__(self, "candidates", tuple(self.candidates))


@dataclass(frozen=True)
class ItemOutcome:
    """What happened to one item (one row of the summary).

    ``status`` is ``"done"``, ``"error"``, ``"skipped"`` (finished by an earlier run on identical
    work) or ``"interrupted"`` (not finished when the run was stopped).
    """

    item_id: str
    spectrum: str
    status: str
    sha256: str = ""
    major: str = ""
    confidence: str = ""
    verdict: str = ""
    qc_status: str = ""
    error: str = ""
    report: str = ""
    seconds: float = 0.0
    fingerprint: str = ""

    @property
    def passed(self) -> bool:
        """Finished without error, and passed its QC check when it had one."""
        return self.status in ("done", "skipped") and self.qc_status in ("", "PASS")


@dataclass(frozen=True)
class BatchSummary:
    """All outcomes in item order, and where the summary files are."""

    outcomes: tuple[ItemOutcome, ...]
    summary_csv: Path
    index_html: Path
    counts: dict = field(default_factory=dict)
    interrupted: bool = False

    @property
    def all_passed(self) -> bool:
        """Every item finished without error and passed its QC check when it had one."""
        return not self.interrupted and all(o.passed for o in self.outcomes)


# --- collecting items -----------------------------------------------------------------------------


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
    return BatchItem(
        item_id=row.get("id") or spectrum.stem, spectrum=spectrum,
        substrate=row.get("substrate") or None, reagent=row.get("reagent") or None,
        candidates=tuple(c for c in re.split(r"[;\s]+", row.get("candidates", "")) if c),
        reaction_solvent=row.get("reaction_solvent") or None,
        nmr_solvent=row.get("nmr_solvent") or None,
        temp_c=25.0 if temp_c is None else temp_c,
        field_mhz=_optional_float(row.get("field_mhz"), name="field_mhz", row=row_number),
        spec=(spec if spec is None or spec.is_absolute() else path.parent / spec))


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


# --- what makes an item finished ------------------------------------------------------------------


def _spec_digest(item: BatchItem, spec: QcSpec | None) -> str:
    if item.spec is not None:
        return _hash_or_empty(item.spec) or f"missing:{item.spec}"
    return spec.sha256 if spec is not None else ""


def item_fingerprint(item: BatchItem, *, spectrum_sha256: str, spec: QcSpec | None = None,
                     options: dict | None = None) -> str:
    """SHA-256 of everything that decides an item's result: the spectrum's hash, the chemistry
    (substrate, reagent, candidates, solvent, temperature, field), the specification's hash and
    the run's options. Two runs whose fingerprints agree do the same work."""
    work = {"spectrum_sha256": spectrum_sha256, "substrate": item.substrate, "reagent": item.reagent,
            "candidates": list(item.candidates), "solvent": item.reaction_solvent, "temp_c": item.temp_c,
            "field_mhz": item.field_mhz, "spec_sha256": _spec_digest(item, spec), "options": options or {}}
    if item.nmr_solvent is not None:  # only when set: earlier runs' fingerprints stay valid
        work["nmr_solvent"] = item.nmr_solvent
    return hashlib.sha256(json.dumps(work, sort_keys=True).encode()).hexdigest()


def _read_json_object(path: Path) -> dict | None:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return data if isinstance(data, dict) else None


def _finished(item: BatchItem, item_dir: Path, fingerprint: str, *, needs_audit: bool,
              needs_report: bool) -> ItemOutcome | None:
    """The earlier outcome when the item is finished on the same work and its files read back."""
    data = _read_json_object(item_dir / "outcome.json")
    if data is None or not fingerprint:
        return None
    try:
        previous = ItemOutcome(**{k: v for k, v in data.items() if k in _OUTCOME_FIELDS})
    except TypeError:
        return None
    if previous.status != "done" or previous.fingerprint != fingerprint:
        return None
    result = _read_json_object(item_dir / "result.json")
    if result is None or any(key not in result for key in _RESULT_FIELDS):
        return None
    if needs_audit and _read_json_object(item_dir / "audit.json") is None:
        return None
    if needs_report and not (item_dir / "report.html").is_file():
        return None
    return ItemOutcome(**{**asdict(previous), "status": "skipped"})


_OUTCOME_FIELDS = {f.name for f in fields(ItemOutcome)}


def _hash_or_empty(path: Path) -> str:
    try:
        return sha256_of_path(path)
    except (ConfirmError, OSError):
        return ""


# --- running one item -------------------------------------------------------------------------------


def _analysis_kwargs(item: BatchItem) -> dict:
    if item.substrate:
        if not item.reagent:
            raise InputError(f"item {item.item_id}: substrate given without reagent")
        out = {"substrate": item.substrate, "reagent": item.reagent, "solvent": item.reaction_solvent,
               "temp_c": item.temp_c, "field_mhz": item.field_mhz}
    elif item.candidates:
        out = {"candidates": list(item.candidates), "solvent": item.reaction_solvent, "temp_c": item.temp_c,
               "field_mhz": item.field_mhz}
    else:
        raise InputError(f"item {item.item_id}: no substrate/reagent, candidates or specification given")
    if item.nmr_solvent is not None:
        out["nmr_solvent"] = item.nmr_solvent
    return out


def _default_analyze(path, **kwargs):
    from confirm.analysis import analyze_path

    return analyze_path(path, **kwargs)


def _takes_budget(func: Callable) -> bool:
    try:
        params = inspect.signature(func).parameters
    except (TypeError, ValueError):
        return False
    return "budget" in params


def _with_budget(analyze: Callable, budget: Budget) -> Callable:
    if not _takes_budget(analyze):
        return analyze

    def run(path, **kwargs):
        return analyze(path, budget=budget, **kwargs)

    return run


def _analyse_item(item: BatchItem, item_dir: Path, spec: QcSpec | None, analyze: Callable,
                  write_report: bool) -> dict:
    from confirm.qc import audit_record, qc_to_json, run_qc, write_json_atomic

    spec = read_spec(item.spec) if item.spec is not None else spec
    qc = None
    if spec is not None:
        if item.nmr_solvent is not None:  # the manifest row knows this sample's solvent
            from dataclasses import replace

            spec = replace(spec, nmr_solvent=item.nmr_solvent)
        result, qc = run_qc(spec, item.spectrum, analyze=analyze)
        write_json_atomic(audit_record(result, qc), item_dir / "audit.json")
    else:
        result = analyze(item.spectrum, **_analysis_kwargs(item))
    payload = result.to_json()
    if qc is not None:
        payload["qc"] = qc_to_json(qc)
    from confirm._files import write_text_atomic
    from confirm.result_tables import components_csv, ratios_csv

    # the tables first: result.json is what marks the item finished
    write_text_atomic(item_dir / "components.csv", components_csv(result))
    write_text_atomic(item_dir / "ratios.csv", ratios_csv(result))
    write_json_atomic(payload, item_dir / "result.json")
    report = ""
    if write_report:
        from confirm.report_html import write_html_report

        write_html_report(result, item_dir / "report.html", qc=qc)
        report = f"{item_dir.name}/report.html"
    verdict = result.verdict
    return {"major": verdict.major or "", "confidence": verdict.confidence, "verdict": verdict.summary,
            "qc_status": qc.status if qc is not None else "", "report": report}


@dataclass(frozen=True)
class _Task:
    """One item to run and everything the run needs (picklable when ``analyze`` is)."""

    item: BatchItem
    out_dir: str
    spec: QcSpec | None
    analyze: Callable | None
    write_report: bool
    sha256: str
    fingerprint: str
    max_seconds: float


def _item_dir(out_dir: Path, item_id: str) -> Path:
    """``out_dir/item_id``, refused when a symbolic link there leads out of ``out_dir``."""
    item_dir = out_dir / item_id
    if not is_within(resolve_path(item_dir, label="item folder"), resolve_path(out_dir, label="--out")):
        raise InputError(f"item folder {str(item_dir)!r} is a symbolic link that leads out of --out "
                         f"({str(resolve_path(item_dir))!r}); remove it")
    return item_dir


def _process_item(task: _Task) -> ItemOutcome:
    """Run one item (in this process or a child); never raises a ``ConfirmError`` or a bug."""
    item = task.item
    start = time.perf_counter()
    base = {"item_id": item.item_id, "spectrum": str(item.spectrum), "sha256": task.sha256,
            "fingerprint": task.fingerprint}
    item_dir = None
    try:
        item_dir = _item_dir(Path(task.out_dir), item.item_id)
        item_dir.mkdir(parents=True, exist_ok=True)
        (item_dir / "outcome.json").unlink(missing_ok=True)  # finished again only when this run says so
        budget = Budget(max_seconds=task.max_seconds)
        with watch_budget(budget):
            found = _analyse_item(item, item_dir, task.spec, _with_budget(task.analyze or _default_analyze,
                                                                         budget), task.write_report)
        outcome = ItemOutcome(status="done", seconds=time.perf_counter() - start, **base, **found)
    except ConfirmError as exc:
        outcome = ItemOutcome(status="error", error=_error_text(exc, item.spectrum), **base)
    except OSError as exc:
        outcome = ItemOutcome(status="error", error=_error_text(exc, item.spectrum), **base)
    except Exception as exc:  # a bug on one item must not stop the batch
        outcome = ItemOutcome(status="error", error=f"internal error: {type(exc).__name__}: "
                              f"{_error_text(exc, item.spectrum)}", **base)
    if item_dir is not None and item_dir.is_dir():
        try:
            write_text_atomic(item_dir / "outcome.json", json.dumps(asdict(outcome), indent=2) + "\n")
        except ConfirmError as exc:
            outcome = ItemOutcome(**{**asdict(outcome), "status": "error", "error": _one_line(exc)})
    return outcome


def _one_line(exc: BaseException) -> str:
    return " ".join((str(exc) or type(exc).__name__).split())


_QUOTED = re.compile(r"'((?:[^'\\]|\\.){4,})'" + r'|"((?:[^"\\]|\\.){4,})"')


def _error_text(exc: BaseException, spectrum: Path) -> str:
    """The exception's one-line message, with any quoted text taken from the spectrum file's
    contents replaced: a file named as a spectrum may be anything, and the summary is shared."""
    message = _one_line(exc)
    spectrum = Path(spectrum)
    try:
        if not spectrum.is_file():
            return message
        with open(spectrum, "rb") as handle:
            head = handle.read(1 << 16).decode("utf-8", errors="replace")
    except OSError:
        return message
    if not head:
        return message

    def hide(match: re.Match) -> str:
        quoted = match.group(1) if match.group(1) is not None else match.group(2)
        inner = quoted.replace("\\'", "'").replace('\\"', '"')
        return "<text from the file>" if inner in head or quoted in head else match.group(0)

    return _QUOTED.sub(hide, message)


# --- running many ------------------------------------------------------------------------------------


def run_batch(items: Sequence[BatchItem], out_dir: str | Path, *, jobs: int = 1, force: bool = False,
              spec: QcSpec | None = None, analyze: Callable | None = None, write_reports: bool = True,
              progress: bool = True, max_seconds: float = DEFAULT_MAX_SECONDS) -> BatchSummary:
    """Analyse every item, in ``jobs`` child processes, and write the summary files.

    Parameters
    ----------
    items : sequence of BatchItem
    out_dir : path
        Created when missing; one sub-folder per item plus ``summary.csv`` and ``index.html``.
    jobs : int, keyword-only
        Child processes (1 runs in this process).
    force : bool, keyword-only
        Redo items that a previous run finished on identical work.
    spec : QcSpec, keyword-only
        Shared specification: every item without its own is QC-checked against it.
    analyze : callable, keyword-only
        ``analyze(path, **kwargs) -> AnalysisResult``; given ``budget=`` too when it names that
        parameter.
        ``confirm.analysis.analyze_path`` by default. Must be picklable (module-level) where
        child processes are started without fork.
    write_reports : bool, keyword-only
        Write an HTML report per item.
    progress : bool, keyword-only
        Show a progress bar on stderr.
    max_seconds : float, keyword-only
        Time budget of each item's analysis.

    Returns
    -------
    BatchSummary
        ``interrupted`` is True when Ctrl-C stopped the run: finished items are kept and the
        summary lists the others as ``"interrupted"``.
    """
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"jobs: expected a whole number >= 1, got {jobs!r}")
    Budget(max_seconds=max_seconds)  # checked before anything runs
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"out: cannot create folder {str(out)!r} ({exc.strerror or exc})") from None
    options = {"write_reports": bool(write_reports)}
    outcomes: dict[str, ItemOutcome] = {}
    tasks = []
    for item in items:
        sha256 = _hash_or_empty(item.spectrum)
        fingerprint = (item_fingerprint(item, spectrum_sha256=sha256, spec=spec, options=options)
                       if sha256 else "")
        previous = None if force else _finished(
            item, out / item.item_id, fingerprint, needs_audit=item.spec is not None or spec is not None,
            needs_report=write_reports)
        if previous is not None:
            outcomes[item.item_id] = previous
        else:
            tasks.append(_Task(item, str(out), spec, analyze, write_reports, sha256, fingerprint,
                               max_seconds))
    interrupted = False
    bar = _progress_bar(len(tasks), enabled=progress)
    stream = _execute(tasks, jobs)
    try:
        for outcome in stream:
            outcomes[outcome.item_id] = outcome
            bar.update(1)
    except KeyboardInterrupt:
        interrupted = True
    finally:
        stream.close()  # stops the children still running
        bar.close()
    ordered = tuple(outcomes.get(item.item_id)
                    or ItemOutcome(item_id=item.item_id, spectrum=str(item.spectrum), status="interrupted")
                    for item in items)
    summary = write_summary(ordered, out)
    return BatchSummary(outcomes=summary.outcomes, summary_csv=summary.summary_csv,
                        index_html=summary.index_html, counts=summary.counts, interrupted=interrupted)


def _progress_bar(total: int, *, enabled: bool):
    from tqdm import tqdm

    class _Bar(tqdm):
        monitor_interval = 0  # no monitor thread: child processes are forked while the bar is open

    return _Bar(total=total, file=sys.stderr, disable=not enabled, unit="spectrum", desc="analysing")


def _execute(tasks: list[_Task], jobs: int):
    """Outcomes of the tasks as they finish: here one by one, or in up to ``jobs`` children."""
    if jobs == 1 or len(tasks) <= 1:
        for task in tasks:
            yield _process_item(task)
        return
    from confirm._children import run_in_workers

    yield from run_in_workers(
        _process_item, tasks, jobs=jobs, overdue_s=lambda task: task.max_seconds + _KILL_GRACE_S,
        on_failure=lambda task, why: _failed(task, _FAILURES[why].format(limit=task.max_seconds)))


def _failed(task: _Task, error: str) -> ItemOutcome:
    return ItemOutcome(item_id=task.item.item_id, spectrum=str(task.item.spectrum), status="error",
                       sha256=task.sha256, error=error, fingerprint=task.fingerprint)


# --- summary ---------------------------------------------------------------------------------------


def _finished_results(outcomes: Sequence[ItemOutcome], out: Path) -> dict[str, dict]:
    """Each finished item's ``result.json``, read once for all the summary tables ({} where none)."""
    return {o.item_id: (_read_json_object(out / o.item_id / "result.json") or {})
            if o.status in ("done", "skipped") else {} for o in outcomes}


def _summary_csv(outcomes: Sequence[ItemOutcome], results: dict[str, dict]) -> str:
    """One row per item; after the fixed columns, one column per ratio (``ratio: NAME``, as printed)
    and one per candidate (``mol %: NAME``: the amount, or ``< bound`` when not detected), from each
    finished item's ``result.json`` (empty where an item has no such ratio or candidate)."""
    ratio_names, component_names = [], []
    cells: dict[str, dict[str, str]] = {}
    for o in outcomes:
        row = cells.setdefault(o.item_id, {})
        result = results[o.item_id]
        for name, ratio in (result.get("ratios") or {}).items():
            column = f"ratio: {name}"
            ratio_names.append(column)
            row[column] = str(ratio.get("ratio", ""))
        for comp in result.get("components", []):
            column = f"mol %: {comp.get('name') or comp.get('label') or comp.get('smiles', '')}"
            component_names.append(column)
            if comp.get("detected") and comp.get("mole_fraction") is not None:
                row[column] = f"{100.0 * float(comp['mole_fraction']):.2f}"
            elif comp.get("upper_limit") is not None:
                row[column] = f"< {100.0 * float(comp['upper_limit']):.2f}"
    extra = list(dict.fromkeys(ratio_names)) + list(dict.fromkeys(component_names))
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow([*_SUMMARY_COLUMNS, *extra])
    for o in outcomes:
        writer.writerow([o.item_id, o.spectrum, o.status, o.major, o.confidence, o.verdict, o.qc_status,
                         o.error, o.sha256, o.report, f"{o.seconds:.2f}",
                         *[cells[o.item_id].get(c, "") for c in extra]])
    return buffer.getvalue()


#: Columns of ``components.csv``: one row per finished item and candidate, then one per ratio.
_COMPONENT_COLUMNS = ("id", "row", "smiles", "name", "label", "detected", "mole_percent", "sd_percent",
                      "upper_limit_percent", "ratio", "ratio_decided")


def _components_csv(outcomes: Sequence[ItemOutcome], results: dict[str, dict]) -> str:
    """Per finished item, each candidate's amount (mol %, sd; an upper limit when not detected) and
    each ratio, read back from the item's ``result.json`` (the numbers a process chemist tabulates)."""
    def pct(value) -> str:
        return "" if value is None else f"{100.0 * float(value):.2f}"

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(_COMPONENT_COLUMNS)
    for o in outcomes:
        result = results.get(o.item_id)
        if not result:
            continue
        for comp in result.get("components", []):
            found = bool(comp.get("detected"))
            writer.writerow([o.item_id, "component", comp.get("smiles", ""), comp.get("name") or "",
                             comp.get("label") or "",
                             "yes" if found else "no", pct(comp.get("mole_fraction") if found else None),
                             pct(comp.get("mole_fraction_sd") if found else None),
                             pct(None if found else comp.get("upper_limit")), "", ""])
        for name, ratio in (result.get("ratios") or {}).items():
            writer.writerow([o.item_id, "ratio", "", "", name, "", "", "", "", ratio.get("ratio", ""),
                             "yes" if ratio.get("decided") else "no"])
    return buffer.getvalue()


def _index_html(outcomes: Sequence[ItemOutcome], counts: dict) -> str:
    from confirm.qc import CAUTION

    def cell(text) -> str:
        return html.escape(str(text), quote=True)

    rows = []
    for o in outcomes:
        link = f'<a href="{cell(o.report)}">report</a>' if o.report else ""
        state = "error" if o.status in ("error", "interrupted") else "ok"
        qc = f'<span class="qc {cell(o.qc_status)}">{cell(o.qc_status)}</span>' if o.qc_status else ""
        detail = cell(o.error) if o.status == "error" else cell(o.verdict)
        rows.append(f'<tr class="{state}"><td>{cell(o.item_id)}</td><td>{cell(o.status)}</td>'
                    f"<td>{qc}</td><td>{detail}</td><td><code>{cell(o.major)}</code></td>"
                    f"<td>{cell(o.confidence)}</td><td>{link}</td></tr>")
    counted = ", ".join(f"{v} {k}" for k, v in counts.items())
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>Batch overview</title>"
        "<style>body{font-family:'DejaVu Sans',Helvetica,Arial,sans-serif;margin:24px;color:#1d2a33}"
        "h1{color:#0f4c5c}table{border-collapse:collapse;width:100%;font-size:13px}"
        "th,td{border-bottom:1px solid #d5dde2;padding:4px 8px;text-align:left;vertical-align:top}"
        "th{background:#eef3f5}tr.error td{background:#fdecec}.qc{padding:1px 8px;border-radius:10px;"
        "color:#fff;font-weight:700}.PASS{background:#2b8a3e}.FAIL{background:#c92a2a}"
        ".INCONCLUSIVE{background:#b7791f}.caution{background:#fff4e6;border:1px solid #f5c38b;padding:8px}"
        "@page{size:A4;margin:14mm}</style></head><body>"
        f"<h1>Batch overview</h1><p>{cell(counted)}.</p>"
        f'<p class="caution">{cell(CAUTION)}</p>'
        "<table><thead><tr><th>item</th><th>status</th><th>QC</th><th>verdict or error</th><th>major</th>"
        f"<th>confidence</th><th>report</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"
        "</body></html>\n")


def write_summary(outcomes: Sequence[ItemOutcome], out_dir: str | Path) -> BatchSummary:
    """Write ``summary.csv``, ``components.csv`` and ``index.html`` for the outcomes into ``out_dir``."""
    out = Path(out_dir)
    counts = {status: sum(1 for o in outcomes if o.status == status)
              for status in ("done", "skipped", "error")}
    interrupted = sum(1 for o in outcomes if o.status == "interrupted")
    if interrupted:
        counts["interrupted"] = interrupted
    results = _finished_results(outcomes, out)
    write_text_atomic(out / "summary.csv", _summary_csv(outcomes, results))
    write_text_atomic(out / "components.csv", _components_csv(outcomes, results))
    write_text_atomic(out / "index.html", _index_html(outcomes, counts))
    return BatchSummary(outcomes=tuple(outcomes), summary_csv=out / "summary.csv",
                        index_html=out / "index.html", counts=counts)
