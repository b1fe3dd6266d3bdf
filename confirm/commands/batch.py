"""``confirm batch``: analyse many spectra in parallel; summary CSV and HTML index."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from confirm.commands._common import emit_json, format_table
from confirm.qc import CAUTION, read_spec


def register(subparsers, parents) -> None:
    """Add the ``batch`` subcommand."""
    parser = subparsers.add_parser(
        "batch", parents=parents, help="analyse many spectra (manifest CSV or folder) in parallel",
        description="Analyse every spectrum of a manifest CSV (columns: spectrum, substrate, reagent, "
                    "candidates, id, solvent, temp_c, field_mhz, spec) or of a folder (with --spec). "
                    "A bad file is reported and the rest go on; a rerun skips finished items.")
    parser.add_argument("source", type=Path, metavar="MANIFEST_OR_FOLDER",
                        help="manifest CSV file or folder of spectra")
    parser.add_argument("--out", required=True, type=Path, help="output folder")
    parser.add_argument("--jobs", type=int, default=1, metavar="N", help="worker processes (default 1)")
    parser.add_argument("--force", action="store_true", help="redo items a previous run finished")
    parser.add_argument("--spec", type=Path, help="shared QC specification (TOML) for every item")
    parser.add_argument("--no-reports", action="store_true", help="skip the per-item HTML reports")
    parser.set_defaults(handler=_run)


def _analyze(path, **kwargs):
    from confirm.analysis import analyze_path

    return analyze_path(path, **kwargs)


def _run(args: argparse.Namespace) -> int:
    from confirm.batch import collect_items, run_batch  # loaded here: the other commands skip it

    spec = read_spec(args.spec) if args.spec is not None else None
    items = collect_items(args.source)
    summary = run_batch(items, args.out, jobs=args.jobs, force=args.force, spec=spec, analyze=_analyze,
                        write_reports=not args.no_reports, progress=not args.json)
    if args.json:
        emit_json({"counts": summary.counts, "caution": CAUTION, "summary_csv": str(summary.summary_csv),
                   "index_html": str(summary.index_html),
                   "items": [{"id": o.item_id, "spectrum": o.spectrum, "status": o.status, "major": o.major,
                              "confidence": o.confidence, "qc_status": o.qc_status, "error": o.error,
                              "sha256": o.sha256} for o in summary.outcomes]})
        return 0
    rows = [(o.item_id, o.status, o.qc_status or "-", o.error or o.verdict) for o in summary.outcomes]
    print(format_table(("item", "status", "QC", "verdict or error"), rows))
    counts = summary.counts
    print(f"\n{len(summary.outcomes)} spectra: {counts['done']} analysed, {counts['skipped']} skipped "
          f"(finished before), {counts['error']} failed. Summary: {summary.summary_csv}; "
          f"overview: {summary.index_html}")
    print(f"Caution: {CAUTION}")
    for outcome in summary.outcomes:
        if outcome.status == "error":
            print(f"warning: {outcome.item_id}: {outcome.error}", file=sys.stderr)
    return 0
