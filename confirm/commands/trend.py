"""``confirm trend``: a specification's lots over time, from their QC audit records."""

from __future__ import annotations

from pathlib import Path

from confirm.commands._common import TERMINAL_WIDTH, emit_json, format_table

__all__ = ["register"]


def register(subparsers, parents) -> None:
    """Add the ``trend`` subcommand."""
    parser = subparsers.add_parser(
        "trend", parents=parents,
        help="tabulate and plot a specification's lots over time from their QC audit records",
        description="Find the QC audit records (written by confirm qc --audit or confirm batch --spec) "
                    "under a folder and line up one specification's lots by time: status and every "
                    "check's measured value with its 95 % interval; optionally as CSV and as a plot "
                    "against the limits.",
        epilog="Examples: confirm trend release/; confirm trend audits/ --spec 'Lot release, (E)-anethole' "
               "--csv trend.csv --plot trend.png")
    parser.add_argument("folder", type=Path, metavar="FOLDER",
                        help="folder holding audit records (any depth)")
    parser.add_argument("--spec", metavar="NAME_OR_SHA256",
                        help="the specification to follow, by name or SHA-256 (needed when the folder "
                             "holds records of several)")
    parser.add_argument("--csv", type=Path, metavar="OUT.csv", help="also write one row per lot and check")
    parser.add_argument("--plot", type=Path, metavar="OUT.png",
                        help="also plot every check against its limit")
    parser.set_defaults(handler=_run)


def _run(args) -> int:
    from confirm._files import check_file_targets, check_outputs, write_text_atomic
    from confirm.trend import find_lots, plot_trend, trend_csv, trend_table

    outputs = [("--csv", args.csv), ("--plot", args.plot)]
    check_outputs(outputs, [("FOLDER", args.folder)])
    check_file_targets(outputs)
    records = find_lots(args.folder, spec=args.spec)
    if args.csv is not None:
        write_text_atomic(args.csv, trend_csv(records))
    if args.plot is not None:
        plot_trend(records, args.plot)
    headers, rows = trend_table(records)
    if args.json:
        emit_json({"specification": records[0].spec_name, "spec_sha256": records[0].spec_sha256,
                   "lots": [dict(zip(headers, row, strict=True)) | {"record": r.path}
                            for row, r in zip(rows, records, strict=True)]})
        return 0
    counts = {s: sum(r.status == s for r in records) for s in ("PASS", "FAIL", "INCONCLUSIVE")}
    print(f"{records[0].spec_name or 'unnamed specification'} (spec SHA-256 {records[0].spec_sha256[:12]}): "
          f"{len(records)} lots, {counts['PASS']} PASS, {counts['FAIL']} FAIL, "
          f"{counts['INCONCLUSIVE']} INCONCLUSIVE")
    table = format_table(headers, rows)
    legend = []
    if max(len(line) for line in table.splitlines()) > TERMINAL_WIDTH:  # checks by number, named below
        short = headers[:3] + [f"#{k}" for k in range(1, len(headers) - 2)]
        legend = [f"#{k}: {name}" for k, name in enumerate(headers[3:], start=1)]
        table = format_table(short, rows, width=TERMINAL_WIDTH)
    print(table)
    for line in legend:
        print(line)
    for flag, path in outputs:
        if path is not None:
            print(f"{flag.lstrip('-')} written to {path}")
    return 0
