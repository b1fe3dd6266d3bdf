"""Stereo checks of test molecules, read from RDKit 3D coordinates (not from how the SMILES looks)."""

from __future__ import annotations

import numpy as np
from rdkit import Chem
from rdkit.Chem import AllChem


def same_face(smiles: str, a: int, b: int) -> bool:
    """Whether the heavy substituents on ring atoms ``a`` and ``b`` sit on one face of the ring (cis).

    Each ring atom must carry one heavy substituent and one H outside the ring; "up" is the side of
    the ring's mean plane towards which the heavy substituent points relative to the H.
    """
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    AllChem.EmbedMolecule(mol, randomSeed=1)
    pos = mol.GetConformer().GetPositions()
    ring = next(list(r) for r in mol.GetRingInfo().AtomRings() if a in r and b in r)
    normal = np.linalg.svd(pos[ring] - pos[ring].mean(axis=0))[2][2]

    def face(atom: int) -> float:
        outside = [n for n in mol.GetAtomWithIdx(atom).GetNeighbors() if n.GetIdx() not in ring]
        heavy = next(n.GetIdx() for n in outside if n.GetAtomicNum() > 1)
        hydrogen = next(n.GetIdx() for n in outside if n.GetAtomicNum() == 1)
        return float(np.dot(pos[heavy] - pos[hydrogen], normal))

    return face(a) * face(b) > 0
