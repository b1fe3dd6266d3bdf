"""Aromatic protons: benzene increments of Beeby et al. (``data/benzene_increments.csv``),
heteroaromatic H from base values of the parent ring."""

from __future__ import annotations

from predictors.shifts.substituents import _double_partner, _has_triple_n, _is_carbonyl, classify_substituent
from predictors.shifts.tables import ShiftEstimate, _benzene_table, _with_sd


def _aromatic_shift(mol, parent) -> ShiftEstimate:
    ring = _smallest_aromatic_ring(mol, parent.GetIdx())
    hetero = [i for i in ring if mol.GetAtomWithIdx(i).GetSymbol() != "C"]
    flags: list[str] = []
    if len(ring) == 6 and not hetero:
        base, method = _benzene_table()[("base", "benzene")][0], "aryl"
    else:
        base, flag = _hetero_base(mol, ring, hetero, parent.GetIdx())
        method = "hetero_aryl"
        flags.append(flag)
    shift = base + _ring_increments(mol, ring, parent.GetIdx(), flags)
    return _with_sd(shift, "aryl", method, flags)


def _smallest_aromatic_ring(mol, idx: int) -> tuple[int, ...]:
    rings = [r for r in mol.GetRingInfo().AtomRings()
             if idx in r and all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r)]
    return min(rings, key=len) if rings else (idx,)


def _ring_distance(ring, a: int, b: int) -> int:
    i, j = ring.index(a), ring.index(b)
    d = abs(i - j)
    return min(d, len(ring) - d)


def _ring_increments(mol, ring, h_parent: int, flags: list[str]) -> float:
    total = 0.0
    table = _benzene_table()
    for r in ring:
        if r == h_parent:
            continue
        pos = _ring_distance(ring, r, h_parent)
        if pos > 3:
            continue
        atom = mol.GetAtomWithIdx(r)
        for nbr in atom.GetNeighbors():
            if nbr.GetIdx() in ring or nbr.GetAtomicNum() == 1:
                continue
            key, fallback = classify_substituent(mol, nbr.GetIdx(), r)
            group = _benzene_group(nbr, key)
            if fallback or ("scs", group) not in table:
                flags.append(f"aromatic increment for {key} (atom {nbr.GetIdx()}) taken from alkyl")
                group = "alkyl"
            total += table[("scs", group)][pos - 1]
    return total


def _benzene_group(nbr, key: str) -> str:
    if key == "alkyl":
        return "CH3" if nbr.GetTotalNumHs(includeNeighbors=True) == 3 else "alkyl"
    if key in ("CH2S", "CH2CO", "CH2Ar"):
        return "alkyl"
    if key == "CH2I":
        return "CH2Cl"
    if key == "COAr":
        return "COR"
    if key == "C=C":
        partner = _double_partner(nbr, ("C",))
        far = [x for x in partner.GetNeighbors() if x.GetIdx() != nbr.GetIdx()] if partner else []
        return "C=C_acceptor" if any(_is_carbonyl(x) or _has_triple_n(x) for x in far) else "C=C"
    if key == "OAr":
        return "OAr"
    return key


def _hetero_base(mol, ring, hetero, h_parent: int) -> tuple[float, str]:
    table = _benzene_table()
    symbols = sorted(mol.GetAtomWithIdx(i).GetSymbol() for i in hetero)
    dist = min(_ring_distance(ring, h, h_parent) for h in hetero) if hetero else 0
    name = None
    if len(ring) == 6 and symbols == ["N"]:
        name = f"pyridine_{dist + 1}"
    elif len(ring) == 5 and len(symbols) == 1:
        parent_name = {"O": "furan", "S": "thiophene", "N": "pyrrole"}.get(symbols[0])
        if parent_name:
            name = f"{parent_name}_{dist + 1}"
    if name and ("hetero", name) in table:
        return table[("hetero", name)][0], f"heteroaromatic base {name} with benzene increments"
    return table[("hetero", "other")][0], "heteroaromatic ring without base value: generic value used"
