"""``confirm batch``: analyse many spectra in parallel (here or on a Dask cluster); summary CSV and
HTML index.

Exit code 0 when every item was analysed (and passed its QC check, when it had one), 1 when
any item failed or did not pass, 2 for bad input, 130 after Ctrl-C (finished items are kept and
the summary lists what finished). The last line of the text output says which.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from confirm.commands._common import TERMINAL_WIDTH, add_budget_argument, data_inputs, emit_json, format_table
from confirm.qc import CAUTION, read_spec


def register(subparsers, parents) -> None:
    """Add the ``batch`` subcommand."""
    parser = subparsers.add_parser(
        "batch", parents=parents, help="analyse many spectra (manifest CSV or folder) in parallel",
        description="Analyse every spectrum of a manifest CSV (columns: spectrum, substrate, reagent, "
                    "candidates, id, reaction_solvent, nmr_solvent, temp_c, field_mhz, spec, decoupled) or "
                    "of a folder (with --spec; data sets one folder down are found too). A bad file is "
                    "reported and the rest go on. A rerun skips an item only when its spectrum, chemistry, "
                    "specification and options are unchanged and its result reads back. Exit 1 when any item "
                    "failed or did not pass its QC check.",
        epilog="Examples: confirm batch plate.csv --out results/ --jobs 2; confirm batch lots/ --spec "
               "spec.toml --out release/ (plate.csv: spectrum,candidates,nmr_solvent / "
               "a1.jdx,E=C/C=C/CC Z=C/C=C\\CC,CDCl3); confirm batch plate.csv --out results/ "
               "--scheduler tcp://head-node:8786")
    parser.add_argument("source", type=Path, metavar="MANIFEST_OR_FOLDER",
                        help="manifest CSV file or folder of spectra")
    parser.add_argument("--out", required=True, type=Path,
                        help="output folder (not inside the input folder)")
    parser.add_argument("--jobs", type=int, default=1, metavar="N",
                        help="worker processes (default 1); with --scheduler local, the local "
                             "cluster's workers")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="run the items on a Dask cluster: the address of a running scheduler "
                             "(tcp://host:8786), or 'local' to start one here with --jobs workers; needs "
                             "the optional extra: pip install \"confirm-nmr[cluster]\"")
    parser.add_argument("--force", action="store_true", help="redo items a previous run finished")
    parser.add_argument("--spec", type=Path, help="shared QC specification (TOML) for every item")
    parser.add_argument("--no-reports", action="store_true", help="skip the per-item HTML reports")
    add_budget_argument(parser, per="item")
    parser.set_defaults(handler=_run)


def _analyze(path, budget=None, **kwargs):
    from confirm.analysis import analyze_path

    return analyze_path(path, budget=budget, **kwargs)


def _check_paths(args: argparse.Namespace, items) -> None:
    """Refuse an --out that is, or lies inside, an input, or whose files would land on one."""
    from confirm._files import check_outputs

    inputs = [("MANIFEST_OR_FOLDER", args.source), ("--spec", args.spec)]
    for item in items:
        inputs += [*data_inputs(f"spectrum of item {item.item_id}", item.spectrum),
                   (f"spec of item {item.item_id}", item.spec)]
    from confirm.batch.lock import LOCK_NAME

    outputs = [("--out summary", args.out / "summary.csv"), ("--out index", args.out / "index.html"),
               ("--out lock", args.out / LOCK_NAME)]
    outputs += [(f"--out folder of item {item.item_id}", args.out / item.item_id) for item in items]
    check_outputs(outputs, inputs, folders=[("--out", args.out)])


def _run(args: argparse.Namespace) -> int:
    from confirm.batch import collect_batch, run_batch  # loaded here: the other commands skip it
    from confirm.budget import Budget
    from predictors.errors import InputError

    if args.jobs < 1:
        raise InputError(f"--jobs: expected a whole number >= 1, got {args.jobs}")
    Budget(max_seconds=args.max_seconds)  # a bad --max-seconds is refused before any work
    if args.scheduler is not None:
        from confirm.batch.dask_runner import require_dask

        require_dask()  # a missing optional dependency is said before any work
    items, notes = collect_batch(args.source)
    _check_paths(args, items)
    spec = read_spec(args.spec) if args.spec is not None else None
    for note in notes:
        print(f"warning: {note}", file=sys.stderr)
    summary = run_batch(items, args.out, jobs=args.jobs, force=args.force, spec=spec, analyze=_analyze,
                        write_reports=not args.no_reports, progress=not args.json,
                        max_seconds=args.max_seconds, scheduler=args.scheduler)
    code = 130 if summary.interrupted else (0 if summary.all_passed else 1)
    if args.json:
        emit_json({"counts": summary.counts, "caution": CAUTION, "summary_csv": str(summary.summary_csv),
                   "index_html": str(summary.index_html), "interrupted": summary.interrupted,
                   "exit_code": code, "notes": notes,
                   "items": [{"id": o.item_id, "spectrum": o.spectrum, "status": o.status, "major": o.major,
                              "confidence": o.confidence, "qc_status": o.qc_status, "error": o.error,
                              "sha256": o.sha256} for o in summary.outcomes]})
        return code
    rows = [(o.item_id, o.status, o.qc_status or "-", o.error or o.verdict) for o in summary.outcomes]
    print(format_table(("item", "status", "QC", "verdict or error"), rows, width=TERMINAL_WIDTH))
    counts = summary.counts
    print(f"\n{len(summary.outcomes)} spectra: {counts['done']} analysed, {counts['skipped']} skipped "
          f"(finished before), {counts['error']} failed. Summary: {summary.summary_csv}; "
          f"overview: {summary.index_html}")
    print(f"Caution: {CAUTION}")
    for outcome in summary.outcomes:
        if outcome.status == "error":
            print(f"warning: {outcome.item_id}: {outcome.error}", file=sys.stderr)
    print(_last_line(summary, code))
    return code


def _last_line(summary, code: int) -> str:
    """The final line: what the exit code means for this run."""
    outcomes = summary.outcomes
    if code == 130:
        finished = sum(1 for o in outcomes if o.status in ("done", "skipped", "error"))
        return (f"Interrupted: {finished} of {len(outcomes)} items finished and are kept; run the same "
                "command again to do the rest (exit 130).")
    failed = sum(1 for o in outcomes if o.status == "error")
    not_passed = sum(1 for o in outcomes if o.status != "error" and not o.passed)
    if code == 0:
        checked = " and passed their QC checks" if any(o.qc_status for o in outcomes) else ""
        return f"All {len(outcomes)} items analysed{checked} (exit 0)."
    parts = ([f"{failed} item(s) failed"] if failed else []) + (
        [f"{not_passed} did not pass their QC check"] if not_passed else [])
    return f"Not all items passed: {' and '.join(parts)} (exit 1)."
