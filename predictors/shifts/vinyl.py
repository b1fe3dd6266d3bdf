"""Vinyl protons: Pascual-Meier-Simon additivity (``data/alkene_increments.csv``)."""

from __future__ import annotations

from predictors.equivalence import AlkeneRelation
from predictors.shifts.substituents import (
    _PI_KEYS,
    _double_partner,
    _is_carbonyl,
    _is_unsaturated_carbon,
    classify_substituent,
)
from predictors.shifts.tables import ShiftEstimate, _alkene_table, _with_sd


def _vinyl_shift(mol, h_atom, parent, rel: AlkeneRelation, pseudo_atoms) -> ShiftEstimate:
    table = _alkene_table()
    other_idx = rel.carbons[1] if rel.carbons[0] == parent.GetIdx() else rel.carbons[0]
    other = mol.GetAtomWithIdx(other_idx)
    subs_here = [n for n in parent.GetNeighbors() if n.GetIdx() not in (h_atom.GetIdx(), other_idx)]
    subs_there = [n for n in other.GetNeighbors() if n.GetIdx() != parent.GetIdx()]
    all_subs = [(n, parent) for n in subs_here] + [(n, other) for n in subs_there]
    keys = {n.GetIdx(): classify_substituent(mol, n.GetIdx(), c.GetIdx()) for n, c in all_subs}
    shift = table["base_ethylene"][0]
    flags = []
    for n, carbon in all_subs:
        key, fallback = keys[n.GetIdx()]
        group = _alkene_group(mol, n, carbon, other if carbon is parent else parent, key, keys)
        if fallback or group not in table:
            group = _alkene_fallback(group)
            flags.append(f"vinyl increment for {key} (atom {n.GetIdx()}) taken from {group}")
        z_gem, z_cis, z_trans = table[group]
        if carbon is parent:
            shift += z_gem
        else:
            shift += z_cis if rel.relation(h_atom.GetIdx(), n.GetIdx()) == "cis" else z_trans
    if parent.GetIdx() in pseudo_atoms and other_idx in pseudo_atoms:
        shift += table["pyrone_ring_current"][0]
        flags.append("pyranone-type ring: ring-current term added")
    if rel.assumed:
        flags.append("double-bond geometry not given: E assumed")
    return _with_sd(shift, "vinyl", "vinyl", flags)



def _alkene_fallback(group: str) -> str:
    for prefix, target in (("CH2", "alkyl"), ("CO", "COR"), ("O", "OR"), ("N", "NR2"), ("S", "SR"),
                           ("C=", "C=C"), ("C#", "C#C")):
        if group.startswith(prefix):
            return target
    return "alkyl"


def _alkene_group(mol, sub, carbon, partner, key, keys) -> str:
    """Map a substituent class to a row of the olefinic increment table."""
    if key == "H":
        return "H"
    bond_conj = any(k in _PI_KEYS for idx, (k, _) in keys.items() if idx != sub.GetIdx())
    if key == "alkyl" and _in_ring_with_bond(mol, sub, carbon, partner):
        return "alkyl_ring"
    if key == "aryl":
        return "aryl_o" if _aryl_has_ortho_substituent(sub, carbon) else "aryl"
    if key in ("C=C", "COOR", "COOH", "COR", "COAr"):
        conj = bond_conj or _substituent_further_conjugated(sub, carbon, key)
        base = "COR" if key == "COAr" else key
        return f"{base}_conj" if conj else base
    if key in ("OR", "OAr", "OH"):
        return "OR_conj" if (key == "OAr" or bond_conj) else "OR"
    if key == "NR2":
        aryl_n = any(n.GetIsAromatic() for n in sub.GetNeighbors() if n.GetIdx() != carbon.GetIdx())
        return "NR2_conj" if (aryl_n or bond_conj) else "NR2"
    return key


def _in_ring_with_bond(mol, sub, carbon, partner) -> bool:
    ring_info = mol.GetRingInfo()
    trio = {sub.GetIdx(), carbon.GetIdx(), partner.GetIdx()}
    return any(trio <= set(ring) for ring in ring_info.AtomRings())


def _aryl_has_ortho_substituent(aryl, carbon) -> bool:
    for ring_nbr in aryl.GetNeighbors():
        if ring_nbr.GetIdx() == carbon.GetIdx() or not ring_nbr.GetIsAromatic():
            continue
        if sum(1 for n in ring_nbr.GetNeighbors() if n.GetAtomicNum() > 1) >= 3:
            return True
    return False


def _substituent_further_conjugated(sub, carbon, key) -> bool:
    for nbr in sub.GetNeighbors():
        if nbr.GetIdx() == carbon.GetIdx() or nbr.GetAtomicNum() == 1:
            continue
        if key == "C=C" and _double_partner(sub, ("C",)) is nbr:
            far = [x for x in nbr.GetNeighbors() if x.GetIdx() != sub.GetIdx()]
            if any(_is_unsaturated_carbon(x) or _is_carbonyl(x) for x in far):
                return True
            continue
        if nbr.GetSymbol() == "O" and key != "C=C" and _double_partner(sub) is not nbr:
            if any(_is_unsaturated_carbon(x) for x in nbr.GetNeighbors() if x.GetIdx() != sub.GetIdx()):
                return True
        elif nbr.GetSymbol() == "C" and (_is_unsaturated_carbon(nbr) or _is_carbonyl(nbr)):
            return True
    return False
