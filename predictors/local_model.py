"""Cut a large molecule down to a capped local model around a reaction site.

Conformer searches scale badly with size; the periplanar tests only need the atoms
near the alpha and beta carbons. Whole rings, both ends of multiple bonds and the
first atom of every substituent of a saturated ring are kept (a substituent's size decides which
chair a ring takes); each cut bond is capped with a methyl carbon.
"""

from __future__ import annotations

from rdkit import Chem

__all__ = ["local_model"]


def _local_atoms(mol: Chem.Mol, centre, radius: int) -> set[int]:
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    dist = Chem.GetDistanceMatrix(mol)
    keep = {i for i in heavy if min(dist[c][i] for c in centre) <= radius}
    rings = [set(r) for r in mol.GetRingInfo().AtomRings()]
    changed = True
    while changed:
        changed = False
        for ring in rings:
            if keep & ring and not ring <= keep:
                keep |= ring
                changed = True
        saturated = [i for i in keep
                     if mol.GetAtomWithIdx(i).IsInRing() and not mol.GetAtomWithIdx(i).GetIsAromatic()]
        for idx in saturated:
            # a ring substituent keeps its own neighbours, so a tert-butyl that locks a ring stays
            # a tert-butyl instead of becoming a methyl cap (its size sets the ring's conformation)
            for nbr in mol.GetAtomWithIdx(idx).GetNeighbors():
                if nbr.GetAtomicNum() > 1 and not nbr.IsInRing() and nbr.GetIdx() not in keep:
                    keep.add(nbr.GetIdx())
                    changed = True
        for bond in mol.GetBonds():
            ends = {bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()}
            if bond.GetBondType() != Chem.BondType.SINGLE and len(ends & keep) == 1:
                keep |= ends
                changed = True
    return keep


def local_model(mol: Chem.Mol, *, centre, radius: int = 3) -> tuple[Chem.Mol, dict[int, int]]:
    """Cut a molecule down to the atoms within ``radius`` bonds of ``centre``.

    Whole rings and both ends of multiple bonds are kept; each cut single bond
    is capped by turning the first atom outside into a methyl carbon, so every
    kept stereocentre keeps its neighbours (and its configuration). Hydrogens of
    kept atoms keep their identity, so diastereotopic H can be followed.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule with explicit hydrogens.
    centre : iterable of int
        Atoms the model is built around (e.g. the alpha and beta carbons).
    radius : int, keyword-only
        Bonds from ``centre`` to keep.

    Returns
    -------
    model : rdkit.Chem.Mol
        Capped fragment with explicit hydrogens.
    mapping : dict of int to int
        Original atom index -> model atom index, for every kept heavy atom and its H.
    """
    centre = list(centre)
    keep = _local_atoms(mol, centre, radius)
    caps = {n.GetIdx() for i in keep for n in mol.GetAtomWithIdx(i).GetNeighbors()
            if n.GetAtomicNum() > 1 and n.GetIdx() not in keep}
    retained = set(keep) | caps
    retained |= {n.GetIdx() for i in keep for n in mol.GetAtomWithIdx(i).GetNeighbors()
                 if n.GetAtomicNum() == 1}
    rw = Chem.RWMol(mol)
    for atom in rw.GetAtoms():
        atom.SetIntProp("_local", atom.GetIdx())
    for idx in sorted(set(range(mol.GetNumAtoms())) - retained, reverse=True):
        rw.RemoveAtom(idx)
    cap_new = []
    for atom in rw.GetAtoms():
        if atom.GetIntProp("_local") in caps:
            atom.SetAtomicNum(6)
            atom.SetFormalCharge(0)
            atom.SetIsAromatic(False)
            atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
            atom.SetNoImplicit(False)
            atom.SetNumExplicitHs(0)
            cap_new.append(atom.GetIdx())
    for bond in rw.GetBonds():
        if bond.GetBeginAtom().GetIntProp("_local") in caps or bond.GetEndAtom().GetIntProp("_local") in caps:
            bond.SetBondType(Chem.BondType.SINGLE)
            bond.SetIsAromatic(False)
    model = rw.GetMol()
    Chem.SanitizeMol(model)
    model = Chem.AddHs(model, onlyOnAtoms=tuple(cap_new))
    mapping = {a.GetIntProp("_local"): a.GetIdx() for a in model.GetAtoms()
               if a.HasProp("_local") and a.GetIntProp("_local") not in caps}
    return model, mapping


