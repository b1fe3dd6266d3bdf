"""Leaving-group perception and alpha-carbon classes."""

from __future__ import annotations

import pytest
from rdkit import Chem

from predictors.errors import ChemistryError
from predictors.substrate import beta_carbons, perceive_substrate


def _kinds(substrate):
    return [(g.kind, g.alpha_class) for g in substrate.leaving_groups]


@pytest.mark.parametrize("smiles, kind, alpha_class", [
    ("CCCC(C)Cl", "chloride", "secondary"),
    ("CC(C)(Br)CC", "bromide", "tertiary"),
    ("CCCCI", "iodide", "primary"),
    ("CC(F)CCC", "fluoride", "secondary"),
    ("CCC(C)OS(=O)(=O)c1ccc(C)cc1", "tosylate", "secondary"),
    ("CCC(C)OS(=O)(=O)C", "mesylate", "secondary"),
    ("CCC(C)OS(=O)(=O)C(F)(F)F", "triflate", "secondary"),
    ("CCC(C)OS(=O)(=O)c1ccc([N+](=O)[O-])cc1", "nosylate", "secondary"),
    ("CCCC(C)[N+](C)(C)C", "trialkylammonium", "secondary"),
    ("CBr", "bromide", "methyl"),
])
def test_finds_leaving_group_and_alpha_class(smiles, kind, alpha_class):
    substrate = perceive_substrate(smiles)
    assert _kinds(substrate) == [(kind, alpha_class)]


def test_leaving_group_atoms_are_the_whole_group():
    substrate = perceive_substrate("CCC(C)OS(=O)(=O)c1ccc(C)cc1")
    group = substrate.leaving_groups[0]
    mol = substrate.mol
    assert {mol.GetAtomWithIdx(i).GetSymbol() for i in group.lg_atoms} == {"O", "S", "C"}
    assert len(group.lg_atoms) == 11  # O, S, 2 O, 7 C of the toluene


def test_alcohol_leaves_only_under_acid():
    # Common practice: OH is a poor leaving group unless protonated.
    with pytest.raises(ChemistryError, match="no leaving group"):
        perceive_substrate("CCC(C)O", acid=False)
    assert _kinds(perceive_substrate("CCC(C)O", acid=True)) == [("hydroxyl (protonated)", "secondary")]


@pytest.mark.parametrize("smiles", ["CC(O)CC(C)=O", "CC(OC)CC#N", "CC(OC(C)=O)C[N+](=O)[O-]",
                                    "CC(N(C)C)CS(=O)(=O)C"])
def test_poor_leaving_group_beta_to_anion_stabiliser_needs_base(smiles):
    # Issue 3: OH, OR, OAc, NR2 beta to C=O, CN, NO2 or SO2 leave by E1cB.
    group = perceive_substrate(smiles, base=True).leaving_groups[0]
    assert group.kind == "E1cB poor leaving group" and group.quality == "poor"
    assert group.activated_betas
    with pytest.raises(ChemistryError):
        perceive_substrate(smiles, base=False)


def test_gamma_hydroxy_ketone_is_not_e1cb():
    with pytest.raises(ChemistryError):
        perceive_substrate("CC(O)CCC(C)=O", base=True)


@pytest.mark.parametrize("smiles, flag", [("C=CC(C)Br", "allylic"), ("CC(Br)c1ccccc1", "benzylic"),
                                          ("CC(C)(C)CBr", "neopentyl-like")])
def test_alpha_flags(smiles, flag):
    assert flag in perceive_substrate(smiles).leaving_groups[0].alpha_flags


def test_aryl_and_vinyl_halides_are_unreactive():
    with pytest.raises(ChemistryError, match="vinylic/aryl"):
        perceive_substrate("Brc1ccccc1")
    substrate = perceive_substrate("C=C(Br)CCCl")
    assert _kinds(substrate) == [("chloride", "primary")]
    assert any("sp2 carbon" in n for n in substrate.notes)


def test_several_leaving_groups_are_all_listed_with_a_note():
    substrate = perceive_substrate("CC(Br)CC(C)(C)Cl")
    assert sorted(_kinds(substrate)) == [("bromide", "secondary"), ("chloride", "tertiary")]
    assert any("2 leaving groups" in n for n in substrate.notes)


def test_salt_is_stripped_with_a_note():
    substrate = perceive_substrate("CCC(C)[N+](C)(C)C.[I-]")
    assert substrate.smiles == "CCC(C)[N+](C)(C)C"
    assert any("[I-]" in n for n in substrate.notes)


def test_beta_carbons_are_sp3_with_hydrogen():
    mol = Chem.MolFromSmiles("CC(Br)(C=C)C(C)(C)C")
    assert beta_carbons(mol, 1, 2) == (0,)


@pytest.mark.parametrize("smiles, message", [("C1CC", "cannot parse"), ("CC[Sn](C)(C)Br", "unsupported"),
                                             ("[CH2]CBr", "radical"), ("C" * 101 + "Br", "heavy atoms"),
                                             ("CCOCC", "no leaving group")])
def test_bad_substrates_raise_chemistry_error(smiles, message):
    with pytest.raises(ChemistryError, match=message):
        perceive_substrate(smiles)
