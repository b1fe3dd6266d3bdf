"""Edit a tagged copy of the substrate: remove, add and rebond atoms, read back the product.

Atoms carry their original index as an integer property, so a product can be built in
several steps and its new double bond found again after sanitising.
"""

from __future__ import annotations

import math

from rdkit import Chem
from rdkit.Chem import rdCIPLabeler

from predictors.products._records import _Outcome

_TAG = "_orig"
_NEW_TAG = 100_000
#: E over Z when no 3D analysis is possible: (Z)-2-butene lies about 1.0 kcal/mol
#: above (E)-2-butene (from memory; heats of formation).
_Z_PENALTY_KCAL = 1.0
#: Extra weight of an alkene conjugated with C=C, aryl, C=O or CN (common practice).
_CONJUGATION_BONUS = 10.0

# ----------------------------------------------------------------------------- editing helpers


def _tagged(mol: Chem.Mol) -> Chem.RWMol:
    rw = Chem.RWMol(mol)
    for atom in rw.GetAtoms():
        atom.SetIntProp(_TAG, atom.GetIdx())
    return rw


def _index(mol: Chem.Mol, tag: int) -> int:
    for atom in mol.GetAtoms():
        if atom.HasProp(_TAG) and atom.GetIntProp(_TAG) == tag:
            return atom.GetIdx()
    raise KeyError(tag)


def _remove(rw: Chem.RWMol, tags) -> None:
    for idx in sorted((_index(rw, t) for t in tags), reverse=True):
        rw.RemoveAtom(idx)


def _with_hydrogens(mol: Chem.Mol, atoms) -> tuple[int, ...]:
    out = set(atoms)
    for idx in atoms:
        out.update(n.GetIdx() for n in mol.GetAtomWithIdx(idx).GetNeighbors() if n.GetAtomicNum() == 1)
    return tuple(sorted(out))


def _hydrogens(mol: Chem.Mol, idx: int) -> list[int]:
    return [n.GetIdx() for n in mol.GetAtomWithIdx(idx).GetNeighbors() if n.GetAtomicNum() == 1]


def _heavy_neighbour_tag(rw: Chem.Mol, idx: int, exclude: int) -> int | None:
    for nbr in rw.GetAtomWithIdx(idx).GetNeighbors():
        if nbr.GetIdx() != exclude and nbr.GetAtomicNum() > 1:
            return nbr.GetIntProp(_TAG)
    return None


def _add_fragment(rw: Chem.RWMol, site: int, fragment_smiles: str, *,
                  replace_atom: int | None = None) -> None:
    """Attach a ``*``-marked fragment at ``site``; with ``replace_atom`` that atom becomes its anchor."""
    frag = Chem.AddHs(Chem.MolFromSmiles(fragment_smiles))
    dummy = next(a.GetIdx() for a in frag.GetAtoms() if a.GetAtomicNum() == 0)
    anchor = frag.GetAtomWithIdx(dummy).GetNeighbors()[0].GetIdx()
    mapping = {}
    for atom in frag.GetAtoms():
        if atom.GetIdx() == dummy:
            continue
        new = Chem.Atom(atom.GetAtomicNum())
        new.SetFormalCharge(atom.GetFormalCharge())
        new.SetNoImplicit(True)
        if atom.GetIdx() == anchor and replace_atom is not None:
            new.SetIntProp(_TAG, rw.GetAtomWithIdx(replace_atom).GetIntProp(_TAG))
            rw.ReplaceAtom(replace_atom, new)
            mapping[anchor] = replace_atom
            continue
        new.SetIntProp(_TAG, _NEW_TAG + atom.GetIdx())
        mapping[atom.GetIdx()] = rw.AddAtom(new)
    for bond in frag.GetBonds():
        ends = (bond.GetBeginAtomIdx(), bond.GetEndAtomIdx())
        if dummy not in ends:
            rw.AddBond(mapping[ends[0]], mapping[ends[1]], bond.GetBondType())
    if replace_atom is None:
        rw.AddBond(site, mapping[anchor], Chem.BondType.SINGLE)


def _is_conjugated(mol: Chem.Mol, a: int, b: int) -> bool:
    for idx, other in ((a, b), (b, a)):
        for nbr in mol.GetAtomWithIdx(idx).GetNeighbors():
            if nbr.GetIdx() == other:
                continue
            if nbr.GetIsAromatic() or any(
                bd.GetBondType() in (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE) for bd in nbr.GetBonds()
            ):
                return True
    return False


def _finish(rw: Chem.RWMol, *, bond_tags: tuple[int, int] | None = None,
            stereo: tuple[int, int, bool] | None = None) -> _Outcome | None:
    """Sanitise an edited molecule; set the new C=C geometry; return SMILES and CIP label."""
    mol = rw.GetMol()
    try:
        Chem.SanitizeMol(mol)
        mol = Chem.RemoveHs(mol)
    except (ValueError, RuntimeError):
        return None
    if bond_tags is None:
        return _Outcome(Chem.MolToSmiles(mol))
    a, b = (_index(mol, t) for t in bond_tags)
    n_subst = sum(mol.GetAtomWithIdx(i).GetDegree() - 1 for i in (a, b))
    conjugated = _is_conjugated(mol, a, b)
    if stereo is not None:
        bond = mol.GetBondBetweenAtoms(a, b)
        ends = (_index(mol, stereo[0]), _index(mol, stereo[1]))
        bond.SetStereoAtoms(*(ends if bond.GetBeginAtomIdx() == a else ends[::-1]))
        bond.SetStereo(Chem.BondStereo.STEREOCIS if stereo[2] else Chem.BondStereo.STEREOTRANS)
        Chem.SetDoubleBondNeighborDirections(mol)
    mol.GetAtomWithIdx(a).SetAtomMapNum(1)
    mol.GetAtomWithIdx(b).SetAtomMapNum(2)
    again = Chem.MolFromSmiles(Chem.MolToSmiles(mol))
    mapped = {atom.GetAtomMapNum(): atom.GetIdx() for atom in again.GetAtoms() if atom.GetAtomMapNum()}
    rdCIPLabeler.AssignCIPLabels(again)
    new_bond = again.GetBondBetweenAtoms(mapped[1], mapped[2])
    geometry = new_bond.GetProp("_CIPCode") if new_bond.HasProp("_CIPCode") else None
    for atom in again.GetAtoms():
        atom.SetAtomMapNum(0)
    geometry = geometry if geometry in ("E", "Z") else None
    return _Outcome(Chem.MolToSmiles(again), geometry, n_subst, conjugated)


def _alkene_outcomes(rw: Chem.RWMol, a: int, b: int, *, cis_pairs=None) -> list[_Outcome]:
    """Outcomes for a new C=C between atoms ``a`` and ``b`` (indices in ``rw``).

    ``cis_pairs`` (original indices) fixes the geometry; None lists both.
    """
    ta, tb = rw.GetAtomWithIdx(a).GetIntProp(_TAG), rw.GetAtomWithIdx(b).GetIntProp(_TAG)
    sa, sb = _heavy_neighbour_tag(rw, a, b), _heavy_neighbour_tag(rw, b, a)
    if sa is None or sb is None:
        choices = [None]
    elif cis_pairs is not None:
        choices = [(sa, sb, (sa, sb) in cis_pairs)]
    else:
        choices = [(sa, sb, True), (sa, sb, False)]
    outcomes = [_finish(rw, bond_tags=(ta, tb), stereo=c) for c in choices]
    unique = {o.smiles: o for o in outcomes if o is not None}
    return list(unique.values())


def _geometry_weight(outcome: _Outcome, rt_kcal: float) -> float:
    return math.exp(-_Z_PENALTY_KCAL / rt_kcal) if outcome.geometry == "Z" else 1.0


def _orientation_weight(outcome: _Outcome, factor: float) -> float:
    weight = factor ** (outcome.n_subst or 0)
    return weight * (_CONJUGATION_BONUS if outcome.conjugated else 1.0)


