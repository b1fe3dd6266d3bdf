"""Running one batch item: its analysis, its files, and its outcome (in whichever process runs it).

:func:`process_item` never raises: an item's error (a bad file, a bug) becomes an outcome with
``status="error"`` and a one-line message that never quotes the spectrum file's contents.
"""

from __future__ import annotations

import inspect
import json
import re
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass
from pathlib import Path

from confirm._files import is_within, resolve_path, write_text_atomic
from confirm.batch.finished import ItemOutcome
from confirm.batch.manifest import BatchItem
from confirm.budget import Budget, watch_budget
from confirm.qc import QcSpec, read_spec
from predictors.errors import ConfirmError, InputError


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
    if item.decoupled:
        out["decoupled"] = item.decoupled
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
        from dataclasses import replace

        if item.nmr_solvent is not None:  # the manifest row knows this sample's solvent
            spec = replace(spec, nmr_solvent=item.nmr_solvent)
        if item.decoupled:  # ... and what was decoupled during its acquisition
            spec = replace(spec, decoupled=tuple(dict.fromkeys(spec.decoupled + item.decoupled)))
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
class Task:
    """One item to run and everything the run needs (picklable when ``analyze`` is)."""

    item: BatchItem
    out_dir: str
    spec: QcSpec | None
    analyze: Callable | None
    write_report: bool
    sha256: str
    fingerprint: str
    max_seconds: float


def item_dir_in(out_dir: Path, item_id: str) -> Path:
    """``out_dir/item_id``, refused when a symbolic link there leads out of ``out_dir``."""
    item_dir = out_dir / item_id
    if not is_within(resolve_path(item_dir, label="item folder"), resolve_path(out_dir, label="--out")):
        raise InputError(f"item folder {str(item_dir)!r} is a symbolic link that leads out of --out "
                         f"({str(resolve_path(item_dir))!r}); remove it")
    return item_dir


def process_item(task: Task) -> ItemOutcome:
    """Run one item (in this process or a child); never raises a ``ConfirmError`` or a bug."""
    item = task.item
    start = time.perf_counter()
    base = {"item_id": item.item_id, "spectrum": str(item.spectrum), "sha256": task.sha256,
            "fingerprint": task.fingerprint}
    item_dir = None
    try:
        item_dir = item_dir_in(Path(task.out_dir), item.item_id)
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
            outcome = ItemOutcome(**{**asdict(outcome), "status": "error", "error": one_line(exc)})
    return outcome


def one_line(exc: BaseException) -> str:
    return " ".join((str(exc) or type(exc).__name__).split())


_QUOTED = re.compile(r"'((?:[^'\\]|\\.){4,})'" + r'|"((?:[^"\\]|\\.){4,})"')


def _error_text(exc: BaseException, spectrum: Path) -> str:
    """The exception's one-line message, with any quoted text taken from the spectrum file's
    contents replaced: a file named as a spectrum may be anything, and the summary is shared."""
    message = one_line(exc)
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
