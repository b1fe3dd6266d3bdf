"""A specification's lots over time, read back from their QC audit records.

``confirm qc --audit`` and ``confirm batch --spec`` write one audit record (JSON) per lot. This
module finds them under a folder, keeps those of one specification (by name or by the SHA-256 of
its file) and lines them up by time: each lot's status and each check's measured value with its
95 % interval, as a table (text or CSV) and a plot of every check against its limit.
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass
from pathlib import Path

from predictors.errors import FileFormatError, InputError

__all__ = ["LotRecord", "find_lots", "trend_table", "trend_csv", "plot_trend"]

#: The ``record`` field that marks a file as a QC audit record.
_RECORD_KIND = "confirm QC audit record"
#: Files larger than this are not audit records (they are a few tens of kB).
_MAX_RECORD_BYTES = 20_000_000


@dataclass(frozen=True)
class LotRecord:
    """One lot as its audit record gives it."""

    path: str
    timestamp: str
    lot: str
    spec_name: str
    spec_sha256: str
    status: str
    checks: tuple[dict, ...]


def _read_record(path: Path) -> LotRecord | None:
    try:
        if path.stat().st_size > _MAX_RECORD_BYTES:
            return None
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        return None
    if (not isinstance(data, dict) or data.get("record") != _RECORD_KIND
            or not isinstance(data.get("qc"), dict)):
        return None
    qc = data["qc"]
    spec = qc.get("spec") or {}
    signoff = qc.get("signoff") or {}
    lot = signoff.get("lot") or Path(str((data.get("inputs") or [{}])[0].get("path", path.parent.name))).stem
    return LotRecord(path=str(path), timestamp=str(data.get("timestamp", "")), lot=str(lot),
                     spec_name=str(spec.get("name") or ""), spec_sha256=str(spec.get("sha256") or ""),
                     status=str(qc.get("status", "")), checks=tuple(c for c in qc.get("checks", [])
                                                                  if isinstance(c, dict)))


def find_lots(folder: str | Path, *, spec: str | None = None) -> list[LotRecord]:
    """Every QC audit record under ``folder`` (any depth), oldest first.

    Parameters
    ----------
    folder : path
    spec : str, optional
        Keep the records of this specification only: its name, or its SHA-256 (or a prefix of at
        least 8 hex digits). Without it the folder must hold records of one specification.

    Raises
    ------
    FileFormatError
        The folder does not exist.
    InputError
        No audit record found, or records of several specifications and no ``spec`` to choose.
    """
    root = Path(folder)
    if not root.is_dir():
        raise FileFormatError(f"folder: {str(root)!r} is not an existing folder")
    records = [r for p in sorted(root.rglob("*.json")) if p.is_file() and (r := _read_record(p)) is not None]
    if not records:
        raise InputError(f"folder: no QC audit record under {str(root)!r} (write them with confirm qc "
                         "--audit or confirm batch --spec)")
    if spec is not None:
        key = spec.strip()
        records = [r for r in records if r.spec_name == key
                   or (len(key) >= 8 and r.spec_sha256.lower().startswith(key.lower()))]
        if not records:
            raise InputError(f"--spec: no audit record of a specification named {spec!r} (or with that "
                             "SHA-256)")
    names = sorted({(r.spec_name or "unnamed", r.spec_sha256[:12]) for r in records})
    if len(names) > 1:
        listed = "; ".join(f"{n} ({sha})" for n, sha in names)
        raise InputError(f"folder: records of {len(names)} specifications ({listed}); choose one with --spec "
                         "NAME or SHA-256")
    return sorted(records, key=lambda r: (r.timestamp, r.lot, r.path))


def _value(check: dict) -> str:
    measured, sd = check.get("measured"), check.get("measured_sd")
    unit = check.get("unit") or ""
    if measured is None:
        interval = check.get("interval_95")
        if interval:
            return f"< {interval[1]:.1f}{unit}"
        return "-"
    digits = 1 if unit == "%" else 0
    return f"{measured:.{digits}f} ± {(sd or 0.0):.{digits}f}{unit}"


def _check_names(records: list[LotRecord]) -> list[str]:
    return list(dict.fromkeys(c.get("name", "") for r in records for c in r.checks))


def trend_table(records: list[LotRecord]) -> tuple[list[str], list[list[str]]]:
    """Headers and rows: time, lot, status, then each check's measured value (± sd, or a bound)."""
    names = _check_names(records)
    headers = ["time (UTC)", "lot", "status", *names]
    rows = []
    for r in records:
        by_name = {c.get("name"): c for c in r.checks}
        rows.append([r.timestamp.replace("T", " ")[:16], r.lot, r.status,
                     *[_value(by_name[n]) if n in by_name else "" for n in names]])
    return headers, rows


def trend_csv(records: list[LotRecord]) -> str:
    """One row per lot and check: the numbers (not text) for a spreadsheet or LIMS."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["timestamp", "lot", "status", "check", "limit", "check_status", "measured",
                     "measured_sd", "low_95", "high_95", "unit", "record"])
    for r in records:
        for c in r.checks:
            interval = c.get("interval_95") or [None, None]
            writer.writerow([r.timestamp, r.lot, r.status, c.get("name", ""), c.get("limit", ""),
                             c.get("status", ""), "" if c.get("measured") is None else c["measured"],
                             "" if c.get("measured_sd") is None else c["measured_sd"],
                             "" if interval[0] is None else interval[0],
                             "" if interval[1] is None else interval[1],
                             c.get("unit", ""), r.path])
    return buffer.getvalue()


def plot_trend(records: list[LotRecord], path: str | Path) -> Path:
    """Each check's measured value and 95 % interval by lot (in time order), one panel per check,
    with its limit as a line; the colour of a point is its check's decision."""
    import re

    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    from confirm._files import atomic_path

    target = Path(path)
    if target.suffix.lower() not in (".png", ".svg", ".pdf"):
        raise InputError(f"--plot: {str(target)!r} must end in .png, .svg or .pdf")
    names = _check_names(records)
    colours = {"PASS": "#2b8a3e", "FAIL": "#c92a2a", "INCONCLUSIVE": "#b7791f"}
    fig, axes = plt.subplots(len(names), 1, figsize=(8, 1.9 * len(names) + 0.6), squeeze=False, sharex=True)
    try:
        x = list(range(len(records)))
        for ax, name in zip(axes[:, 0], names, strict=True):
            for i, r in enumerate(records):
                check = next((c for c in r.checks if c.get("name") == name), None)
                if check is None or not check.get("interval_95"):
                    continue
                low, high = check["interval_95"]
                value = check.get("measured")
                colour = colours.get(check.get("status"), "#555555")
                ax.plot([i, i], [low, high], color=colour, lw=2)
                if value is not None:
                    ax.plot([i], [value], "o", color=colour, ms=4)
            limit = next((c.get("limit", "") for r in records for c in r.checks if c.get("name") == name), "")
            number = re.search(r"[-+]?\d+(?:\.\d+)?", str(limit))
            if number:
                ax.axhline(float(number.group()), color="#333333", lw=0.8, ls="--")
            ax.set_ylabel(name, fontsize=7)
            ax.tick_params(labelsize=7)
        axes[-1, 0].set_xticks(x, [r.lot for r in records], rotation=60, fontsize=7, ha="right")
        axes[0, 0].set_title(f"{records[0].spec_name or 'unnamed specification'}: {len(records)} lots "
                             "(bars: 95 % intervals; dashed: the limit)", fontsize=9)
        fig.tight_layout()
        with atomic_path(target) as tmp:
            fig.savefig(tmp, format=target.suffix.lstrip(".").lower(), dpi=120)
    finally:
        plt.close(fig)
    return target
