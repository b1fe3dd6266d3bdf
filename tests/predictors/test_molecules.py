"""Structure parsing and the checks every model relies on."""

from __future__ import annotations

import pytest
from rdkit import Chem

from predictors.errors import ChemistryError, InputError
from predictors.molecules import parse_molecule, strip_counter_ions


def test_parses_smiles_and_copies_molecules():
    mol = parse_molecule("CC(Br)C")
    assert mol.GetNumHeavyAtoms() == 4
    again = parse_molecule(mol)
    assert again is not mol


@pytest.mark.parametrize(
    "smiles, message",
    [
        ("C1CC", "cannot parse"),
        ("C(C)(C)(C)(C)C", "cannot parse"),  # pentavalent carbon
        ("[CH3]", "radicals"),
        ("CC[Sn](C)(C)C", "unsupported element"),
        ("[Na+].CC(=O)[O-]", "counter-ions"),
        ("C" * 101, "heavy atoms"),
    ],
)
def test_rejects_unsupported_structures(smiles, message):
    with pytest.raises(ChemistryError, match=message):
        parse_molecule(smiles)


def test_rejects_non_string():
    with pytest.raises(InputError):
        parse_molecule(42)


def test_strips_counter_ions():
    mol, removed = strip_counter_ions(Chem.MolFromSmiles("C[N+](C)(C)CC(C)C.[I-]"))
    assert Chem.MolToSmiles(mol) == "CC(C)C[N+](C)(C)C"
    assert removed == ("[I-]",)
    assert parse_molecule("CC(C)C[N+](C)(C)C.[Br-]", strip_salts=True).GetNumHeavyAtoms() == 8
