"""``confirm candidates``: list the products a substrate can give under given conditions."""

from __future__ import annotations

from confirm.commands._common import (
    add_solvent_arguments,
    emit_json,
    format_table,
    refuse_plain_solvent,
    wrap_text,
)

__all__ = ["register"]


def register(subparsers, parents) -> None:
    """Add the ``candidates`` subcommand."""
    parser = subparsers.add_parser(
        "candidates", parents=parents,
        help="list elimination/substitution products with pathway tags and priors",
        description="Enumerate every elimination and substitution product of a substrate under the "
                    "given conditions, ranked by a soft prior with a one-line rationale.",
        epilog="Example: confirm candidates 'CC(Br)Cc1ccc(OC)cc1' --reagent KOH --reaction-solvent DMSO "
               "--temp-c 80",
    )
    parser.add_argument("structure", metavar="SMILES_OR_MOLFILE", help="substrate SMILES or a .mol/.sdf file")
    parser.add_argument("--reagent", required=True, help="reagent name or alias, e.g. ethoxide, KOtBu, H2SO4")
    add_solvent_arguments(parser, nmr=False)
    parser.add_argument("--temp-c", type=float, default=25.0, dest="temp_c",
                        help="reaction temperature in C (default 25)")
    parser.set_defaults(handler=_run)


def _candidate_record(cand) -> dict:
    return {
        "smiles": cand.smiles,
        "pathways": list(cand.pathways),
        "label": cand.label,
        "prior": cand.prior,
        "rationale": cand.rationale,
        "regio": cand.regio,
        "geometry": cand.geometry,
        "notes": list(cand.notes),
    }


def _beta_record(report) -> dict:
    return {
        "alpha_atom": report.alpha_idx,
        "beta_atom": report.beta_idx,
        "h_atom": report.h_idx,
        "mode": report.mode,
        "conformer": report.conformer,
        "energy_above_min_kcal": report.energy_above_min_kcal,
        "ring_flip": report.ring_flip,
        "reachable": report.reachable,
    }


def _beta_line(report) -> str:
    head = (f"  H{report.h_idx} on C{report.beta_idx} "
            f"({report.mode} to the leaving group on C{report.alpha_idx})")
    if not report.reachable:
        return f"{head}: no {report.mode}-periplanar conformer within 8 kcal/mol"
    flip = ", ring flip needed" if report.ring_flip else ""
    cost = f"{report.energy_above_min_kcal:.1f} kcal/mol above the minimum"
    return f"{head}: {report.conformer}, {cost}{flip}"


def _run(args) -> int:
    from confirm.structures import load_structure
    from predictors.products import enumerate_products

    refuse_plain_solvent(args)
    mol = load_structure(args.structure)
    products = enumerate_products(mol, reagent=args.reagent, solvent=args.reaction_solvent,
                                  temp_c=args.temp_c)
    if args.json:
        emit_json({
            "substrate": products.substrate_smiles,
            "reagent": products.reagent.name,
            "candidates": [_candidate_record(c) for c in products.candidates],
            "notes": list(products.notes),
            "beta_hydrogens": [_beta_record(r) for r in products.beta_hydrogens],
        })
        return 0
    rows = [(i + 1, f"{c.prior:.3f}", "+".join(c.pathways), c.label, c.smiles)
            for i, c in enumerate(products.candidates)]
    print(f"substrate: {products.substrate_smiles}   reagent: {products.reagent.name}")
    print(format_table(("rank", "prior", "pathways", "label", "smiles"), rows))
    for i, c in enumerate(products.candidates):
        print(wrap_text(f"  {i + 1}. {c.rationale}" + (f" ({'; '.join(c.notes)})" if c.notes else "")))
    for note in products.notes:
        print(wrap_text(f"note: {note}"))
    if products.beta_hydrogens:
        print("periplanar conformers (atoms numbered as in the substrate with explicit H, MMFF94):")
        for report in products.beta_hydrogens:
            print(wrap_text(_beta_line(report)))
    return 0
