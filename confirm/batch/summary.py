"""The batch's own files: ``summary.csv``, ``components.csv`` and ``index.html``.

The tables are read back from each finished item's ``result.json``; only the few fields they
show are kept while the tables are written, so a batch of many thousands of items never holds
their results in memory.
"""

from __future__ import annotations

import csv
import html
import io
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from confirm._files import write_text_atomic
from confirm.batch.finished import ItemOutcome, read_json_object

_SUMMARY_COLUMNS = ("id", "spectrum", "status", "major", "confidence", "verdict", "qc_status", "error",
                    "sha256", "report", "seconds")


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


#: The fields of a component in ``result.json`` that the summary tables show.
_COMPONENT_FIELDS = ("smiles", "name", "label", "detected", "mole_fraction", "mole_fraction_sd",
                     "upper_limit")


def _table_fields(result: dict) -> dict:
    """The part of one ``result.json`` the summary tables show (its ratios and its components'
    amounts), so that many thousands of items never hold their whole results in memory at once."""
    ratios = result.get("ratios")
    ratios = ratios if isinstance(ratios, dict) else {}
    components = result.get("components")
    return {"ratios": {name: {key: ratio[key] for key in ("ratio", "decided") if key in ratio}
                       for name, ratio in ratios.items() if isinstance(ratio, dict)},
            "components": [{key: comp[key] for key in _COMPONENT_FIELDS if key in comp}
                           for comp in (components if isinstance(components, list) else [])
                           if isinstance(comp, dict)]}


def _finished_results(outcomes: Sequence[ItemOutcome], out: Path) -> dict[str, dict]:
    """What the summary tables show of each finished item's ``result.json``, read once for all the
    tables ({} where none)."""
    found = {}
    for o in outcomes:
        finished = o.status in ("done", "skipped")
        result = read_json_object(out / o.item_id / "result.json") if finished else None
        found[o.item_id] = _table_fields(result) if result else {}
    return found


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
