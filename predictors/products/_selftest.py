"""Self-test of the reagent rows that open a path of their own: example yes, negative example no."""

from __future__ import annotations

from predictors.errors import ChemistryError
from predictors.products._assembly import enumerate_products
from predictors.reagents import Reagent, list_reagents

#: Temperature of the self-test by reagent kind: hot enough for every syn elimination in the table.
_TEST_TEMP_C = {"thermal": 450.0, "oxidant": 150.0}


def expected_pathway(reagent: Reagent) -> str | None:
    """The pathway tag a reagent's own example must show (None for reagents without one)."""
    if reagent.kind in ("thermal", "oxidant"):
        return "Ei"
    if reagent.kind == "activator":
        return {"anti": "E2", "syn": "Ei", "sn2": "SN2", "ionise": "SN1"}[reagent.activation]
    if reagent.kind == "base" and "+" in (reagent.nucleophile_smiles or ""):
        return "SN2"  # an amine or amidine that alkylates itself
    return None


def _shows(smiles: str, reagent: Reagent, pathway: str) -> bool:
    try:
        products = enumerate_products(smiles, reagent=reagent.name,
                                      temp_c=_TEST_TEMP_C.get(reagent.kind, 25.0))
    except ChemistryError:
        return False
    return any(pathway in c.pathways and c.prior > 0.02 for c in products.candidates)


def check_reagent_examples() -> tuple[str, ...]:
    """Run every reagent's example and negative example through the enumerator.

    Returns
    -------
    tuple of str
        One message per failure; empty when every example shows the reagent's path and no
        negative example does.
    """
    problems = []
    for reagent in list_reagents():
        pathway = expected_pathway(reagent)
        if pathway is None:
            continue
        if not reagent.example or not reagent.negative:
            problems.append(f"{reagent.name}: needs an example and a negative example")
            continue
        if not _shows(reagent.example, reagent, pathway):
            problems.append(f"{reagent.name}: example {reagent.example!r} shows no {pathway} product")
        if _shows(reagent.negative, reagent, pathway):
            problems.append(f"{reagent.name}: negative example {reagent.negative!r} shows a {pathway} "
                            "product")
    return tuple(problems)
