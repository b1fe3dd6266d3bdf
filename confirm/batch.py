"""Batch runs: many spectra, in parallel processes, with a summary table and an HTML index.

Input is either a manifest (CSV with a ``spectrum`` column and, per row,
``substrate`` + ``reagent`` or ``candidates``, optional ``id``, ``solvent``,
``temp_c``, ``field_mhz``, ``spec``) or a folder whose spectra (JCAMP-DX files,
peak-list tables, FID folders, or sub-folders holding one data set) all share
one QC specification. Each item gets its own folder in the output with its
report, JSON result (and QC audit record); a file ``outcome.json`` written last
marks it finished. A bad file is reported as an error and the rest go on. A
rerun skips items already finished on identical input unless ``force``.
"""

from __future__ import annotations

import csv
import html
import io
import json
import re
import sys
import time
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field
from pathlib import Path

from confirm._files import write_text_atomic
from confirm.qc import QcSpec, read_spec
from confirm.results import sha256_of_path
from predictors.errors import ConfirmError, FileFormatError, InputError

__all__ = [
    "BatchItem",
    "ItemOutcome",
    "BatchSummary",
    "MANIFEST_COLUMNS",
    "read_manifest",
    "items_from_folder",
    "collect_items",
    "run_batch",
    "write_summary",
]

#: Columns a manifest may have (``spectrum`` is required).
MANIFEST_COLUMNS = ("id", "spectrum", "substrate", "reagent", "candidates", "solvent", "temp_c", "field_mhz",
                    "spec")
_DATA_SUFFIXES = (".dx", ".jdx", ".jcamp", ".jcm", ".csv", ".tsv", ".txt", ".tab", ".peaks", ".lst")
_FID_NAMES = {"fid", "acqus", "procpar"}
_SUMMARY_COLUMNS = ("id", "spectrum", "status", "major", "confidence", "verdict", "qc_status", "error",
                    "sha256", "report", "seconds")


@dataclass(frozen=True)
class BatchItem:
    """One spectrum of a batch and how to analyse it."""

    item_id: str
    spectrum: Path
    substrate: str | None = None
    reagent: str | None = None
    candidates: tuple[str, ...] = ()
    solvent: str | None = None
    temp_c: float = 25.0
    field_mhz: float | None = None
    spec: Path | None = None


@dataclass(frozen=True)
class ItemOutcome:
    """What happened to one item (one row of the summary)."""

    item_id: str
    spectrum: str
    status: str  # "done", "error" or "skipped"
    sha256: str = ""
    major: str = ""
    confidence: str = ""
    verdict: str = ""
    qc_status: str = ""
    error: str = ""
    report: str = ""
    seconds: float = 0.0


@dataclass(frozen=True)
class BatchSummary:
    """All outcomes in item order, and where the summary files are."""

    outcomes: tuple[ItemOutcome, ...]
    summary_csv: Path
    index_html: Path
    counts: dict = field(default_factory=dict)


# --- collecting items -----------------------------------------------------------------------------


def _safe_id(text: str) -> str:
    cleaned = re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("._")
    return cleaned or "item"


def _unique_ids(items: list[BatchItem]) -> list[BatchItem]:
    seen: dict[str, int] = {}
    out = []
    for item in items:
        base = _safe_id(item.item_id)
        seen[base] = seen.get(base, 0) + 1
        name = base if seen[base] == 1 else f"{base}_{seen[base]}"
        out.append(BatchItem(**{**asdict(item), "item_id": name}))
    return out


def _optional_float(value: str, *, name: str, row: int) -> float | None:
    if value is None or not value.strip():
        return None
    try:
        return float(value)
    except ValueError:
        raise InputError(f"manifest row {row}: {name} must be a number, got {value!r}") from None


def read_manifest(path: str | Path) -> list[BatchItem]:
    """Read a manifest CSV; relative paths are taken from the manifest's folder.

    ``candidates`` holds SMILES separated by spaces or semicolons.

    Raises
    ------
    FileFormatError
        Unreadable file.
    InputError
        No ``spectrum`` column, unknown columns, empty rows or bad numbers.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise FileFormatError(f"manifest: cannot read {str(path)!r} ({exc})") from None
    reader = csv.DictReader(io.StringIO(text))
    columns = [c.strip() for c in (reader.fieldnames or [])]
    if "spectrum" not in columns:
        raise InputError(f"manifest: {str(path)!r} needs a 'spectrum' column; allowed columns: "
                         f"{', '.join(MANIFEST_COLUMNS)}")
    unknown = sorted(set(columns) - set(MANIFEST_COLUMNS))
    if unknown:
        raise InputError(f"manifest: unknown column {unknown[0]!r}; allowed: {', '.join(MANIFEST_COLUMNS)}")
    items = []
    for row_number, raw in enumerate(reader, start=2):
        row = {k.strip(): (v or "").strip() for k, v in raw.items() if k}
        if not row.get("spectrum"):
            raise InputError(f"manifest row {row_number}: the spectrum column is empty")
        spectrum = Path(row["spectrum"])
        spectrum = spectrum if spectrum.is_absolute() else path.parent / spectrum
        spec = Path(row["spec"]) if row.get("spec") else None
        items.append(BatchItem(
            item_id=row.get("id") or spectrum.stem, spectrum=spectrum,
            substrate=row.get("substrate") or None, reagent=row.get("reagent") or None,
            candidates=tuple(c for c in re.split(r"[;\s]+", row.get("candidates", "")) if c),
            solvent=row.get("solvent") or None,
            temp_c=_optional_float(row.get("temp_c"), name="temp_c", row=row_number) or 25.0,
            field_mhz=_optional_float(row.get("field_mhz"), name="field_mhz", row=row_number),
            spec=(spec if spec is None or spec.is_absolute() else path.parent / spec)))
    if not items:
        raise InputError(f"manifest: {str(path)!r} lists no spectra")
    return _unique_ids(items)


def _is_data_folder(folder: Path) -> bool:
    names = {p.name for p in folder.iterdir()}
    return bool(names & _FID_NAMES) or any(
        p.suffix.lower() in _DATA_SUFFIXES for p in folder.iterdir() if p.is_file())


def items_from_folder(folder: str | Path) -> list[BatchItem]:
    """Every data set in a folder: data files and sub-folders holding one data set each.

    Raises
    ------
    InputError
        When the folder holds no data set.
    """
    folder = Path(folder)
    if _is_fid_folder(folder):
        return [BatchItem(item_id=folder.name, spectrum=folder)]
    entries = []
    for entry in sorted(folder.iterdir()):
        if entry.name.startswith("."):
            continue
        if (entry.is_file() and entry.suffix.lower() in _DATA_SUFFIXES) or (
                entry.is_dir() and _is_data_folder(entry)):
            stem = entry.name if entry.is_dir() else entry.stem
            entries.append(BatchItem(item_id=stem, spectrum=entry))
    if not entries:
        raise InputError(f"batch input: folder {str(folder)!r} holds no spectra (JCAMP-DX files "
                         f"{', '.join(_DATA_SUFFIXES[:4])}, peak lists or FID folders)")
    return _unique_ids(entries)


def _is_fid_folder(folder: Path) -> bool:
    return bool({p.name for p in folder.iterdir()} & _FID_NAMES)


def collect_items(source: str | Path) -> list[BatchItem]:
    """Items from a manifest CSV file or from a folder of spectra."""
    source = Path(source)
    if not source.exists():
        raise FileFormatError(f"batch input: {str(source)!r} does not exist")
    return items_from_folder(source) if source.is_dir() else read_manifest(source)


# --- running ---------------------------------------------------------------------------------------


def _analysis_kwargs(item: BatchItem) -> dict:
    if item.substrate:
        if not item.reagent:
            raise InputError(f"item {item.item_id}: substrate given without reagent")
        return {"substrate": item.substrate, "reagent": item.reagent, "solvent": item.solvent,
                "temp_c": item.temp_c, "field_mhz": item.field_mhz}
    if item.candidates:
        return {"candidates": list(item.candidates), "solvent": item.solvent, "temp_c": item.temp_c,
                "field_mhz": item.field_mhz}
    raise InputError(f"item {item.item_id}: no substrate/reagent, candidates or specification given")


def _default_analyze(path, **kwargs):
    from confirm.analysis import analyze_path

    return analyze_path(path, **kwargs)


def _analyse_item(item: BatchItem, item_dir: Path, spec: QcSpec | None, analyze: Callable,
                  write_report: bool) -> dict:
    from confirm.qc import audit_record, qc_to_json, run_qc, write_json_atomic

    spec = read_spec(item.spec) if item.spec is not None else spec
    qc = None
    if spec is not None:
        result, qc = run_qc(spec, item.spectrum, analyze=analyze)
        write_json_atomic(audit_record(result, qc), item_dir / "audit.json")
    else:
        result = analyze(item.spectrum, **_analysis_kwargs(item))
    payload = result.to_json()
    if qc is not None:
        payload["qc"] = qc_to_json(qc)
    write_json_atomic(payload, item_dir / "result.json")
    report = ""
    if write_report:
        from confirm.report_html import write_html_report

        write_html_report(result, item_dir / "report.html", qc=qc)
        report = f"{item_dir.name}/report.html"
    verdict = result.verdict
    return {"major": verdict.major or "", "confidence": verdict.confidence, "verdict": verdict.summary,
            "qc_status": qc.status if qc is not None else "", "report": report}


def _process_item(task: tuple) -> ItemOutcome:
    """Run one item (in a worker process); never raises."""
    item, out_dir, spec, analyze, write_report, sha256 = task
    start = time.perf_counter()
    item_dir = Path(out_dir) / item.item_id
    base = {"item_id": item.item_id, "spectrum": str(item.spectrum), "sha256": sha256}
    try:
        item_dir.mkdir(parents=True, exist_ok=True)
        found = _analyse_item(item, item_dir, spec, analyze or _default_analyze, write_report)
        outcome = ItemOutcome(status="done", seconds=time.perf_counter() - start, **base, **found)
    except ConfirmError as exc:
        outcome = ItemOutcome(status="error", error=_one_line(exc), **base)
    except Exception as exc:  # a bug on one item must not stop the batch
        outcome = ItemOutcome(status="error", error=f"internal error: {type(exc).__name__}: {_one_line(exc)}",
                              **base)
    if item_dir.is_dir():
        write_text_atomic(item_dir / "outcome.json", json.dumps(asdict(outcome), indent=2) + "\n")
    return outcome


def _one_line(exc: BaseException) -> str:
    return " ".join((str(exc) or type(exc).__name__).split())


def _finished(item: BatchItem, out_dir: Path, sha256: str) -> ItemOutcome | None:
    marker = out_dir / item.item_id / "outcome.json"
    if not marker.is_file():
        return None
    try:
        data = json.loads(marker.read_text(encoding="utf-8"))
        previous = ItemOutcome(**data)
    except (OSError, ValueError, TypeError):
        return None
    if previous.status != "done" or previous.sha256 != sha256 or not sha256:
        return None
    return ItemOutcome(**{**data, "status": "skipped"})


def _hash_or_empty(path: Path) -> str:
    try:
        return sha256_of_path(path)
    except (ConfirmError, OSError):
        return ""


def run_batch(items: Sequence[BatchItem], out_dir: str | Path, *, jobs: int = 1, force: bool = False,
              spec: QcSpec | None = None, analyze: Callable | None = None, write_reports: bool = True,
              progress: bool = True) -> BatchSummary:
    """Analyse every item, in ``jobs`` worker processes, and write the summary files.

    Parameters
    ----------
    items : sequence of BatchItem
    out_dir : path
        Created when missing; one sub-folder per item plus ``summary.csv`` and ``index.html``.
    jobs : int, keyword-only
        Worker processes (1 runs in this process).
    force : bool, keyword-only
        Redo items that a previous run finished on identical input.
    spec : QcSpec, keyword-only
        Shared specification: every item without its own is QC-checked against it.
    analyze : callable, keyword-only
        ``analyze(path, **kwargs) -> AnalysisResult``; must be picklable (a
        module-level function) when ``jobs > 1``. ``confirm.analysis.analyze_path`` by default.
    write_reports : bool, keyword-only
        Write an HTML report per item.
    progress : bool, keyword-only
        Show a progress bar on stderr.
    """
    from tqdm import tqdm

    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"jobs: expected a whole number >= 1, got {jobs!r}")
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"out: cannot create folder {str(out)!r} ({exc.strerror or exc})") from None
    outcomes: dict[str, ItemOutcome] = {}
    tasks = []
    for item in items:
        sha256 = _hash_or_empty(item.spectrum)
        previous = None if force else _finished(item, out, sha256)
        if previous is not None:
            outcomes[item.item_id] = previous
        else:
            tasks.append((item, str(out), spec, analyze, write_reports, sha256))
    with tqdm(total=len(tasks), file=sys.stderr, disable=not progress, unit="spectrum",
              desc="analysing") as bar:
        for outcome in _execute(tasks, jobs):
            outcomes[outcome.item_id] = outcome
            bar.update(1)
    ordered = tuple(outcomes[item.item_id] for item in items)
    return write_summary(ordered, out)


def _execute(tasks: list[tuple], jobs: int):
    if jobs == 1 or len(tasks) <= 1:
        for task in tasks:
            yield _process_item(task)
        return
    from concurrent.futures import ProcessPoolExecutor, as_completed

    with ProcessPoolExecutor(max_workers=min(jobs, len(tasks))) as pool:
        futures = {pool.submit(_process_item, task): task for task in tasks}
        for future in as_completed(futures):
            try:
                yield future.result()
            except Exception as exc:  # the worker process itself died
                item = futures[future][0]
                yield ItemOutcome(item_id=item.item_id, spectrum=str(item.spectrum), status="error",
                                  error=f"worker failed: {type(exc).__name__}: {_one_line(exc)}")


# --- summary ---------------------------------------------------------------------------------------


def _summary_csv(outcomes: Sequence[ItemOutcome]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(_SUMMARY_COLUMNS)
    for o in outcomes:
        writer.writerow([o.item_id, o.spectrum, o.status, o.major, o.confidence, o.verdict, o.qc_status,
                         o.error, o.sha256, o.report, f"{o.seconds:.2f}"])
    return buffer.getvalue()


def _index_html(outcomes: Sequence[ItemOutcome], counts: dict) -> str:
    from confirm.qc import CAUTION

    def cell(text) -> str:
        return html.escape(str(text), quote=True)

    rows = []
    for o in outcomes:
        link = f'<a href="{cell(o.report)}">report</a>' if o.report else ""
        state = "error" if o.status == "error" else "ok"
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
    """Write ``summary.csv`` and ``index.html`` for the outcomes into ``out_dir``."""
    out = Path(out_dir)
    counts = {status: sum(1 for o in outcomes if o.status == status)
              for status in ("done", "skipped", "error")}
    write_text_atomic(out / "summary.csv", _summary_csv(outcomes))
    write_text_atomic(out / "index.html", _index_html(outcomes, counts))
    return BatchSummary(outcomes=tuple(outcomes), summary_csv=out / "summary.csv",
                        index_html=out / "index.html", counts=counts)
