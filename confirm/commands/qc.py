"""``confirm qc``: sign one spectrum off against a specification.

Exit code 0 for PASS, 1 for FAIL or INCONCLUSIVE, 2 for bad input.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from confirm.commands._common import (
    TERMINAL_WIDTH,
    add_budget_argument,
    budget_from_args,
    data_inputs,
    emit_json,
    format_table,
    wrap_text,
)
from confirm.qc import (
    CAUTION,
    SignOff,
    audit_record,
    qc_to_json,
    read_spec,
    run_qc,
    write_json_atomic,
)
from predictors.errors import FileFormatError, InputError


def register(subparsers, parents) -> None:
    """Add the ``qc`` subcommand."""
    parser = subparsers.add_parser(
        "qc", parents=parents, help="check a spectrum against a specification (PASS/FAIL/INCONCLUSIVE)",
        description="Analyse a spectrum as a specification says and decide each acceptance limit "
                    "from its 95 % interval. " + CAUTION,
        epilog="The specification (TOML): product = SMILES; either candidates = [SMILES, ...] (with an "
               "optional starting_material) or a [reaction] table (substrate, reagent, optional temp_c and "
               "reaction_solvent); optional nmr_solvent, field_mhz and name; a [limits] table "
               "(min_isomeric_purity_percent, max_other_isomer_percent, max_starting_material_percent, "
               "min_snr); an optional [signoff] table (lot, analyst, reviewer, comment). "
               "`confirm qc --template spec.toml` writes a commented example. Example: confirm qc --spec "
               "spec.toml --spectrum lot17.jdx --lot L-17 --analyst 'A. Chemist' --audit lot17_audit.json "
               "--report lot17.html")
    parser.add_argument("--spec", type=Path, help="specification file (TOML; see --template)")
    parser.add_argument("--spectrum", type=Path, help="spectrum file or FID folder")
    parser.add_argument("--template", type=Path, metavar="SPEC.toml",
                        help="write a commented specification to start from, and stop (the file must "
                             "not exist yet)")
    parser.add_argument("--report", type=Path, metavar="OUT.html", help="write an HTML report")
    parser.add_argument("--audit", type=Path, metavar="AUDIT.json", help="write the audit record (JSON)")
    parser.add_argument("--lot", metavar="ID", help="lot or sample ID, recorded in the audit and the report")
    parser.add_argument("--analyst", metavar="NAME", help="who measured the sample (recorded)")
    parser.add_argument("--reviewer", metavar="NAME", help="who reviews the decision (recorded)")
    parser.add_argument("--comment", metavar="TEXT", help="a comment for the record")
    add_budget_argument(parser)
    parser.set_defaults(handler=_run)


def _analyze(path, **kwargs):
    from confirm.analysis import analyze_path

    return analyze_path(path, **kwargs)


def _run(args: argparse.Namespace) -> int:
    from confirm._files import check_file_targets, check_outputs
    from confirm.budget import watch_budget

    if args.template is not None:
        return _write_template(args.template)
    for flag, value in (("--spec", args.spec), ("--spectrum", args.spectrum)):
        if value is None:
            raise InputError(f"{flag}: required (or --template SPEC.toml to write a specification to "
                             "start from)")
    outputs = [("--report", args.report), ("--audit", args.audit)]
    check_outputs(outputs, [("--spec", args.spec), *data_inputs("--spectrum", args.spectrum)])
    spec = read_spec(args.spec)
    if not args.spectrum.exists():
        raise FileFormatError(f"--spectrum: {str(args.spectrum)!r} does not exist")
    check_file_targets(outputs)
    budget = budget_from_args(args)
    signoff = SignOff(lot=args.lot, analyst=args.analyst, reviewer=args.reviewer, comment=args.comment)
    with watch_budget(budget):
        result, qc = run_qc(spec, args.spectrum, analyze=_analyze, budget=budget, signoff=signoff)
    if args.audit is not None:
        write_json_atomic(audit_record(result, qc), args.audit)
    if args.report is not None:
        from confirm.report_html import write_html_report

        write_html_report(result, args.report, qc=qc)
    if args.json:
        emit_json({**qc_to_json(qc), "analysis": result.to_json()})
    else:
        print(_format_text(qc, result))
    return 0 if qc.status == "PASS" else 1


def _write_template(path: Path) -> int:
    from confirm._files import check_file_targets, write_text_atomic
    from confirm.qc import SPEC_TEMPLATE

    if path.exists() or path.is_symlink():
        raise InputError(f"--template: {str(path)!r} exists; give a new file name (nothing was overwritten)")
    check_file_targets([("--template", path)])
    write_text_atomic(path, SPEC_TEMPLATE)
    print(f"wrote {path}: edit the structures and limits, then run confirm qc --spec {path} --spectrum ...")
    return 0


def _format_text(qc, result) -> str:
    """The QC decision for the terminal, within 100 columns: the checks as a table (the limit
    wrapping in the last column), then why each check came out as it did."""
    rows = [(c.name, c.status, c.measured_text(),
             f"{c.interval[0]:.1f} - {c.interval[1]:.1f}" if c.interval else "-", c.limit_text)
            for c in qc.checks]
    table = format_table(("check", "result", "measured", "95 % interval", "limit"), rows,
                         width=TERMINAL_WIDTH)
    title = f"QC result: {qc.status}" + (f" ({qc.spec.name})" if qc.spec.name else "")
    sign = qc.signoff
    who = ", ".join(f"{k} {v}" for k, v in (("lot", sign.lot), ("analyst", sign.analyst),
                                            ("reviewer", sign.reviewer)) if v)
    lines = [title] + ([who] if who else []) + [qc.summary, "", table, "", "Why:"]
    lines += [f"  {c.name}: {c.reason}" for c in qc.checks]
    lines.append("")
    if sign.comment:
        lines += [f"Comment: {sign.comment}", ""]
    lines += [f"Verdict: {result.verdict.summary}", "", f"Caution: {qc.caution}"]
    return wrap_text("\n".join(lines))  # long lines wrap: readable at 100 columns
