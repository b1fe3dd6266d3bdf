"""Reading enumerated products in tests: canonical SMILES, one cached enumeration per input, priors."""

from __future__ import annotations

import functools

from rdkit import Chem

from predictors.products import enumerate_products


def canon(smiles: str) -> str:
    """RDKit's canonical SMILES (the form the candidates carry)."""
    return Chem.MolToSmiles(Chem.MolFromSmiles(smiles))


@functools.cache
def products(smiles: str, reagent: str, temp_c: float = 25.0):
    """The enumeration of ``smiles`` with ``reagent`` at ``temp_c``, computed once per test session."""
    return enumerate_products(smiles, reagent=reagent, temp_c=temp_c)


def prior(product_set, smiles: str) -> float:
    """Prior of the candidate ``smiles`` in ``product_set`` (0 when it is not listed)."""
    return {c.smiles: c.prior for c in product_set.candidates}.get(canon(smiles), 0.0)
