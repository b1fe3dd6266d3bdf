"""Proton equivalence: symmetry classes split by stereo (homotopic / enantiotopic / diastereotopic)."""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

from predictors.equivalence import check_magnetic_equivalence, find_equivalent_protons, map_alkene_relations


def _sizes(smiles: str) -> list[int]:
    return sorted(len(g) for g in find_equivalent_protons(Chem.AddHs(Chem.MolFromSmiles(smiles))))


@pytest.mark.parametrize("smiles, sizes", [
    ("CCO", [1, 2, 3]),                      # enantiotopic CH2 H are equivalent (textbook)
    ("CC(O)CC", [1, 1, 1, 1, 3, 3]),         # CH2 next to a stereocentre: diastereotopic (racemate too)
    ("C[C@H](O)CC", [1, 1, 1, 1, 3, 3]),
    ("C=CC", [1, 1, 1, 3]),                  # the two =CH2 protons differ (cis / trans to CH3)
    ("C=C", [4]),                            # ethylene: chemically equivalent
    ("CC(C)=C", [2, 6]),                     # isobutene: =CH2 equivalent, the two CH3 equivalent
    ("C=CCC=C", [2, 2, 2, 2]),               # 1,4-pentadiene: cis-H pair, trans-H pair, CH, CH2
    ("CC(C)=CC", [1, 3, 3, 3]),              # 2-methyl-2-butene: CH3 cis and trans to H differ
    ("CC(C)C(C)O", [1, 1, 1, 3, 3, 3]),      # isopropyl CH3 next to a stereocentre: diastereotopic
    ("Cc1ccc(C)cc1", [4, 6]),
    ("C1CCCCC1", [12]),                      # fast ring flip: one site
    ("C/C=C\\C", [2, 6]),
])
def test_equivalence_classes(smiles, sizes):
    # expected classes from the substitution test as taught in NMR textbooks (common practice)
    assert _sizes(smiles) == sizes


def test_groups_cover_every_hydrogen_once():
    mol = Chem.AddHs(Chem.MolFromSmiles("CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O"))
    atoms = [h for g in find_equivalent_protons(mol) for h in g]
    assert sorted(atoms) == [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]


def test_alkene_relations_follow_stereo_and_rings():
    mol = Chem.AddHs(Chem.MolFromSmiles("C/C=C/C(=O)OC"))  # E: CH3 trans to the ester carbon
    rel = map_alkene_relations(mol)[1]
    assert rel.relation(0, 3) == "trans"
    assert not rel.assumed
    ring = Chem.AddHs(Chem.MolFromSmiles("C1CC=CCC1"))
    rel = map_alkene_relations(ring)[2]
    assert rel.relation(1, 4) == "cis"
    unspecified = map_alkene_relations(Chem.AddHs(Chem.MolFromSmiles("CC=CC")))[1]
    assert unspecified.assumed


def test_magnetic_equivalence_flag():
    # para-disubstituted benzene: H2/H6 couple differently to H3 (ortho) and H5 (para)
    j = np.zeros((4, 4))
    j[0, 2] = j[2, 0] = j[1, 3] = j[3, 1] = 8.0
    j[0, 3] = j[3, 0] = j[1, 2] = j[2, 1] = 0.5
    assert check_magnetic_equivalence([(0, 1), (2, 3)], j) == (False, False)
    j[0, 3] = j[3, 0] = j[1, 2] = j[2, 1] = 8.0
    assert check_magnetic_equivalence([(0, 1), (2, 3)], j) == (True, True)
