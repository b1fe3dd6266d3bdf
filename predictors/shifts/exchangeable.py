"""Exchangeable (OH, NH, SH), aldehyde and alkyne protons: tabulated values."""

from __future__ import annotations

from rdkit import Chem

from predictors.shifts.substituents import _double_partner, _is_carbonyl, _is_unsaturated_carbon
from predictors.shifts.tables import ShiftEstimate, _special, _unknown_shift


def _exchangeable_shift(mol, parent) -> ShiftEstimate:
    heavy = [n for n in parent.GetNeighbors() if n.GetAtomicNum() > 1]
    if parent.GetSymbol() == "S":
        return _special("SH", "SH", exchangeable=True)
    if parent.GetSymbol() == "O":
        if not heavy:
            return _special("OH_alcohol", "OH", exchangeable=True, flags=("water",))
        x = heavy[0]
        group = ("OH_acid" if _is_carbonyl(x) else "OH_phenol" if x.GetIsAromatic()
                 else "OH_enol" if _is_unsaturated_carbon(x) else "OH_alcohol")
        return _special(group, "OH", exchangeable=True)
    if parent.GetIsAromatic():
        return _special("NH_aromatic", "NH", exchangeable=True)
    if any(_is_carbonyl(n) for n in heavy):
        return _special("NH_amide", "NH", exchangeable=True)
    if any(n.GetIsAromatic() for n in heavy):
        return _special("NH_aryl", "NH", exchangeable=True)
    return _special("NH_amine", "NH", exchangeable=True)


def _aldehyde_shift(mol, parent) -> ShiftEstimate:
    oxo = _double_partner(parent)
    rest = [n for n in parent.GetNeighbors() if n.GetIdx() != oxo.GetIdx() and n.GetAtomicNum() > 1]
    if oxo.GetSymbol() != "O":
        return _unknown_shift("H on C=S: generic value used", label="CHO")
    if not rest:
        return _special("CHO_alkyl", "CHO", flags=("formaldehyde: aliphatic aldehyde value",))
    x = rest[0]
    if x.GetSymbol() == "O":
        return _special("HCOO", "CHO")
    if x.GetSymbol() == "N":
        return _special("HCON", "CHO")
    if x.GetIsAromatic():
        return _special("CHO_aryl", "CHO")
    if _is_unsaturated_carbon(x):
        return _special("CHO_conj", "CHO")
    return _special("CHO_alkyl", "CHO")


def _alkyne_shift(mol, parent) -> ShiftEstimate:
    other = next(b.GetOtherAtom(parent) for b in parent.GetBonds() if b.GetBondType() == Chem.BondType.TRIPLE)
    far = [n for n in other.GetNeighbors() if n.GetIdx() != parent.GetIdx()]
    conj = any(_is_unsaturated_carbon(n) or _is_carbonyl(n) for n in far)
    return _special("alkyne_conj" if conj else "alkyne_alkyl", "alkyne")
