"""The model molecule (pseudo-aromatic rings de-aromatised) and the substituent classes shared by
the increment tables."""

from __future__ import annotations

from rdkit import Chem

_PI_KEYS = frozenset({"aryl", "C=C", "C#C", "CHO", "COR", "COAr", "COOH", "COOR", "CONR2", "COCl",
                      "CN", "NO2", "CF3"})
_ALKYL_KEYS = frozenset({"alkyl", "CH2O", "CH2I", "CH2N", "CH2S", "CH2Cl", "CH2CO", "CH2Ar"})
_CARBONYL_KEYS = frozenset({"CHO", "COR", "COAr", "COOH", "COOR", "CONR2", "COCl"})

def prepare_model_molecule(mol_h: Chem.Mol) -> tuple[Chem.Mol, frozenset]:
    """Copy of ``mol_h`` with pseudo-aromatic rings written as their Kekule form.

    RDKit calls 2-pyranone, 2-pyridone and coumarin rings aromatic; their
    protons behave like those of a conjugated enone with a weak ring current,
    so the model sees their C=C bonds as alkenes.

    Returns
    -------
    model : rdkit.Chem.Mol
        Same atoms and indices as ``mol_h``.
    pseudo_atoms : frozenset of int
        Atoms of the rings that were de-aromatised.
    """
    ring_info = mol_h.GetRingInfo()
    aromatic_rings = [r for r in ring_info.BondRings()
                      if all(mol_h.GetBondWithIdx(b).GetIsAromatic() for b in r)]
    pseudo, true = [], []
    for bonds in aromatic_rings:
        atoms = {mol_h.GetBondWithIdx(b).GetBeginAtomIdx() for b in bonds}
        atoms |= {mol_h.GetBondWithIdx(b).GetEndAtomIdx() for b in bonds}
        (pseudo if any(_has_exocyclic_double(mol_h, a) for a in atoms) else true).append((bonds, atoms))
    if not pseudo:
        return mol_h, frozenset()
    kek = Chem.Mol(mol_h)
    Chem.Kekulize(kek, clearAromaticFlags=True)
    model = Chem.RWMol(mol_h)
    true_bonds = {b for bonds, _ in true for b in bonds}
    true_atoms = {a for _, atoms in true for a in atoms}
    pseudo_atoms = set()
    for bonds, atoms in pseudo:
        for b in bonds:
            if b not in true_bonds:
                model.GetBondWithIdx(b).SetBondType(kek.GetBondWithIdx(b).GetBondType())
                model.GetBondWithIdx(b).SetIsAromatic(False)
        for a in atoms - true_atoms:
            model.GetAtomWithIdx(a).SetIsAromatic(False)
        pseudo_atoms |= atoms
    return model.GetMol(), frozenset(pseudo_atoms)


def _has_exocyclic_double(mol, idx: int) -> bool:
    atom = mol.GetAtomWithIdx(idx)
    return any(b.GetBondType() == Chem.BondType.DOUBLE and not b.IsInRing()
               and b.GetOtherAtom(atom).GetAtomicNum() in (7, 8, 16) for b in atom.GetBonds())


# ------------------------------------------------------------------------ substituents
def classify_substituent(mol: Chem.Mol, atom_idx: int, from_idx: int) -> tuple[str, bool]:
    """Name the group that starts at ``atom_idx``, seen from ``from_idx``.

    Returns
    -------
    key : str
        Class name shared by the increment tables (``"alkyl"``, ``"CH2O"``,
        ``"aryl"``, ``"COOR"``, ``"OR"``, ``"OAr"``, ``"Cl"``...).
    fallback : bool
        True when the group is not in any table and the nearest class was used.
    """
    atom = mol.GetAtomWithIdx(atom_idx)
    symbol = atom.GetSymbol()
    far = [n for n in atom.GetNeighbors() if n.GetIdx() != from_idx]
    if symbol == "H":
        return "H", False
    if symbol in ("F", "Cl", "Br", "I"):
        return symbol, False
    if symbol == "C":
        return _classify_carbon(mol, atom, far)
    if symbol == "O":
        return _classify_oxygen(mol, far), False
    if symbol == "N":
        return _classify_nitrogen(mol, atom, far)
    if symbol == "S":
        n_oxo = sum(1 for b in atom.GetBonds() if b.GetBondType() == Chem.BondType.DOUBLE)
        return ("SO2R" if n_oxo >= 2 else "SR"), n_oxo == 1
    return "alkyl", True


def _double_partner(atom, symbols=("O", "S")):
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        if bond.GetBondType() == Chem.BondType.DOUBLE and other.GetSymbol() in symbols:
            return other
    return None


def _is_carbonyl(atom) -> bool:
    return atom.GetSymbol() == "C" and _double_partner(atom) is not None


def _classify_carbon(mol, atom, far) -> tuple[str, bool]:
    if atom.GetIsAromatic():
        return "aryl", False
    oxo = _double_partner(atom)
    if oxo is not None:
        rest = [n for n in far if n.GetIdx() != oxo.GetIdx() and n.GetAtomicNum() > 1]
        if not rest:
            return "CHO", False
        x = rest[0]
        if x.GetSymbol() == "O":
            return ("COOH" if x.GetTotalNumHs(includeNeighbors=True) else "COOR"), False
        if x.GetSymbol() == "N":
            return "CONR2", False
        if x.GetSymbol() in ("Cl", "Br"):
            return "COCl", False
        return ("COAr" if x.GetIsAromatic() else "COR"), False
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        if bond.GetBondType() == Chem.BondType.TRIPLE:
            return ("CN", False) if other.GetSymbol() == "N" else ("C#C", other.GetSymbol() != "C")
        if bond.GetBondType() == Chem.BondType.DOUBLE:
            return "C=C", other.GetSymbol() != "C"
    return _classify_sp3_carbon(far)


def _classify_sp3_carbon(far) -> tuple[str, bool]:
    symbols = [n.GetSymbol() for n in far]
    if symbols.count("F") == 3:
        return "CF3", False
    for symbol, key in (("Cl", "CH2Cl"), ("Br", "CH2Cl"), ("I", "CH2I"), ("O", "CH2O"), ("N", "CH2N"),
                        ("S", "CH2S"), ("F", "CH2Cl")):
        if symbol in symbols:
            return key, symbol == "F"
    if any(_is_carbonyl(n) or _has_triple_n(n) for n in far):
        return "CH2CO", False
    if any(n.GetIsAromatic() for n in far):
        return "CH2Ar", False
    return "alkyl", any(s not in ("C", "H") for s in symbols)


def _has_triple_n(atom) -> bool:
    return any(b.GetBondType() == Chem.BondType.TRIPLE and b.GetOtherAtom(atom).GetSymbol() == "N"
               for b in atom.GetBonds())


def _is_unsaturated_carbon(atom) -> bool:
    return atom.GetSymbol() == "C" and (atom.GetIsAromatic() or any(
        b.GetBondType() == Chem.BondType.DOUBLE for b in atom.GetBonds()))


def _classify_oxygen(mol, far) -> str:
    heavy = [n for n in far if n.GetAtomicNum() > 1]
    if not heavy:
        return "OH"
    x = heavy[0]
    if _is_carbonyl(x):
        return "OCOR"
    if _is_unsaturated_carbon(x):
        return "OAr"
    return "OR"


def _classify_nitrogen(mol, atom, far) -> tuple[str, bool]:
    if atom.GetFormalCharge() == 1 and sum(n.GetSymbol() == "O" for n in far) >= 2:
        return "NO2", False
    if any(_is_carbonyl(n) for n in far):
        return "NCOR", False
    return "NR2", any(b.GetBondType() != Chem.BondType.SINGLE for b in atom.GetBonds())


