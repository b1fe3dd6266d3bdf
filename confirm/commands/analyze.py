"""``confirm analyze``: which product formed, in what ratio, from one 1H spectrum."""

from __future__ import annotations

import argparse

from confirm.commands._common import (
    TERMINAL_WIDTH,
    add_budget_argument,
    add_solvent_arguments,
    budget_from_args,
    data_inputs,
    emit_json,
    existing_paths,
    format_table,
    parse_regions,
    refuse_plain_solvent,
    wrap_text,
)

__all__ = ["register", "format_result"]


def register(subparsers, parents) -> None:
    """Add the ``analyze`` subcommand."""
    parser = subparsers.add_parser(
        "analyze",
        parents=parents,
        help="decide which candidate products a 1H spectrum shows, with ratios",
        description="Fit a 1H spectrum (raw FID folder, JCAMP-DX file or peak list) as a mixture of "
        "candidate products and decide the major product, E:Z and regioisomer ratios, "
        "elimination vs substitution and the starting material left.",
        epilog="Examples: confirm analyze --spectrum crude.jdx --substrate 'CC(Br)Cc1ccc(OC)cc1' "
               "--reagent KOH --report crude.html; confirm analyze --spectrum peaks.csv --field-mhz 400 "
               "--candidates 'E=C/C=C/C(=O)OC' 'Z=C/C=C\\C(=O)OC'",
    )
    parser.add_argument(
        "--spectrum", required=True, metavar="PATH", help="raw FID folder, JCAMP-DX file or peak list"
    )
    parser.add_argument(
        "--substrate", metavar="SMILES", help="substrate SMILES (or molfile); needs --reagent"
    )
    parser.add_argument("--reagent", metavar="NAME", help="base, nucleophile or acid used")
    add_solvent_arguments(parser)
    parser.add_argument("--reference", choices=("auto", "tms", "solvent", "none"), default="auto",
                        help="how to reference the axis (default: TMS, else the NMR solvent line, else as "
                             "acquired)")
    parser.add_argument("--temp-c", type=float, default=25.0, metavar="T", help="reaction temperature, deg C")
    parser.add_argument(
        "--candidates", nargs="+", metavar="[NAME=]SMILES",
        help="candidate SMILES or molfiles (instead of --substrate), each optionally named: "
        "'anethole=C/C=C/c1ccc(OC)cc1'",
    )
    parser.add_argument(
        "--also", nargs="+", metavar="[NAME=]SMILES",
        help="with --substrate: compounds you know may be there too (an impurity, a by-product); "
        "naming an enumerated product names it",
    )
    parser.add_argument(
        "--field-mhz", type=float, metavar="F",
        help="spectrometer frequency for files that do not record it (peak lists); a value that "
        "contradicts the file's is refused unless --force-field",
    )
    parser.add_argument(
        "--force-field", action="store_true", help="use --field-mhz even where the file records another field"
    )
    parser.add_argument(
        "--decoupled", nargs="+", metavar="NUCLEUS",
        help="heteronuclei decoupled during the 1H acquisition (19F, 31P): their splittings of the 1H "
             "lines are left out of the predicted spectra (a decoupling the file records is used anyway)",
    )
    parser.add_argument("--report", metavar="OUT.html", help="also write a self-contained HTML report")
    parser.add_argument("--line-list", action="store_true",
                        help="also list the measured multiplets with the candidate sites fitted on them "
                             "(always in the JSON as line_list)")
    parser.add_argument("--regions", metavar="HIGH-LOW,...",
                        help="the report's diagnostic panels, in ppm (e.g. 6.5-5.5,2.0-1.6), instead of "
                             "those chosen by what tells the candidates apart")
    add_budget_argument(parser)
    from confirm.qnmr import add_yield_arguments

    add_yield_arguments(parser)
    parser.set_defaults(handler=_run)


def _run(args: argparse.Namespace) -> int:
    from confirm.analysis import analyze_path
    from predictors.errors import InputError

    refuse_plain_solvent(args)
    regions = parse_regions(args.regions, flag="--regions")
    if regions and not args.report:
        raise InputError("--regions: chooses the report's panels; give --report OUT.html too")
    if args.candidates and (args.substrate or args.reagent):
        raise InputError("--candidates: give either --candidates or --substrate with --reagent, not both")
    if not args.candidates and not (args.substrate and args.reagent):
        raise InputError(
            "--candidates: no candidate given; pass --candidates SMILES [SMILES ...] or "
            "--substrate SMILES with --reagent NAME"
        )
    import math

    from confirm._files import check_file_targets, check_outputs

    if not math.isfinite(args.temp_c) or not -100.0 <= args.temp_c <= 300.0:
        raise InputError(f"--temp-c: expected a reaction temperature between -100 and 300 C, "
                         f"got {args.temp_c!r}")
    from confirm.budget import watch_budget
    from confirm.qnmr import analyze_with_standard, standard_from_args, yield_from_args, yields_to_json

    if args.also and not args.substrate:
        raise InputError("--also: adds compounds to the products of --substrate; with --candidates list them "
                         "there")
    from confirm.structures import split_name

    named = [split_name(v)[1] for v in [*(args.candidates or ()), *(args.also or ())]]
    inputs = [*data_inputs("--spectrum", args.spectrum), *existing_paths("--substrate", [args.substrate]),
              *existing_paths("--candidates", named)]
    check_outputs([("--report", args.report)], inputs)
    check_file_targets([("--report", args.report)])
    from predictors.hetero_couplings import check_nuclei

    decoupled = check_nuclei(args.decoupled or (), name="--decoupled")
    standard = standard_from_args(args)
    budget = budget_from_args(args)
    options = {"substrate": args.substrate, "reagent": args.reagent, "candidates": args.candidates,
               "solvent": args.reaction_solvent, "temp_c": args.temp_c, "field_mhz": args.field_mhz,
               "force_field": args.force_field, "budget": budget, "also": args.also,
               "nmr_solvent": args.nmr_solvent, "reference": args.reference, "decoupled": decoupled}
    with watch_budget(budget):
        if standard is None:
            result = analyze_path(args.spectrum, **options)
        else:
            result = analyze_with_standard(args.spectrum, standard, **options)
    yields = yield_from_args(args, result)
    if args.report:
        from confirm.report_html import write_html_report

        write_html_report(result, args.report, nmr_yield=yields, regions=regions)
    if args.json:
        from confirm.assigned_lines import assigned_multiplets

        payload = dict(result.to_json(), line_list=assigned_multiplets(result))
        if yields is not None:
            payload["nmr_yield"] = yields_to_json(yields, standard)
        emit_json(payload)
    else:
        print(format_result(result))
        if args.line_list:
            from confirm.assigned_lines import assigned_multiplets, format_assigned

            print("\nMeasured multiplets and the sites fitted on them:\n"
                  + format_assigned(assigned_multiplets(result)))
        if yields is not None:
            from confirm.qnmr import format_yield_rows

            headers, rows = format_yield_rows(yields)
            print("\nNMR yield (internal standard):\n" + format_table(headers, rows))
        if args.report:
            print(f"\nreport written to {args.report}")
    return 0


def ratio_line(r) -> str:
    """One ratio for the terminal: its parts named once, the first part's share of the two with its
    sd in percent."""
    pair = f"{r.numerator}:{r.denominator}"
    head = pair if r.name == pair else f"{r.name}, {pair}"
    note = "" if r.decided else "  (not decided by this spectrum)"
    if r.is_bound:  # a part is only bounded: its share would be the value with that part at zero
        return f"  {head} {r.ratio_text}, a part not detected{note}"
    return (f"  {head} = {r.ratio_text} ({r.numerator} {100 * r.share:.1f} +- {100 * r.share_sd:.1f} % "
            f"of the two){note}")


def format_result(result) -> str:
    """Readable terminal summary of an AnalysisResult: verdict first, then the details."""
    from confirm.analysis import CAUTION, decoupling_note

    v = result.verdict
    lines = [v.summary, ""]
    note = decoupling_note(result.parameters)
    if note:
        lines += [note[0].upper() + note[1:], ""]
    rows = []
    for c in result.fit.components:
        rows.append(
            [
                c.candidate.label or c.candidate.smiles,
                ",".join(c.candidate.pathways),
                (f"{100 * c.mole_fraction:.1f} +- {100 * c.mole_fraction_sd:.1f}" if c.detected
                 else f"< {100 * (c.upper_limit or c.detection_limit):.1f} (not detected)"),
                f"{100 * c.detection_limit:.1f}",
                "yes" if c.detected else "no",
            ]
        )
    lines.append(format_table(["component", "pathway", "mol %", "LOD %", "detected"], rows,
                              width=TERMINAL_WIDTH))
    if v.ratios:
        lines += ["", "Ratios:"]
        for r in v.ratios:
            lines.append(ratio_line(r))
    for title, items in (("Evidence:", v.evidence), ("Not decided:", v.unresolved),
                         ("Would settle it:", v.next_steps), ("Warnings:", result.warnings)):
        if items:
            lines += ["", title] + [f"  {item}" for item in items]
    lines += ["", CAUTION]
    return wrap_text("\n".join(lines))  # long lines wrap: readable at 100 columns
