"""Aromatic protons: benzene increments of Beeby et al. (``data/benzene_increments.csv``) on the
base value of the ring: benzene, or the tabulated position of a heteroaromatic or fused ring
(:mod:`predictors.shifts.heteroaromatic`, :mod:`predictors.shifts.fused`)."""

from __future__ import annotations

from predictors.shifts.fused import peri_effect
from predictors.shifts.heteroaromatic import RingPosition, n_substituent_effect, ring_base_shift
from predictors.shifts.substituents import _double_partner, _has_triple_n, _is_carbonyl, classify_substituent
from predictors.shifts.tables import ShiftEstimate, _benzene_table, _with_sd


def _aromatic_shift(mol, parent, positions: dict[int, RingPosition] | None = None) -> ShiftEstimate:
    """Aromatic CH: base value of its ring (benzene, or a tabulated heteroaromatic / fused ring
    position) plus the benzene increments of the substituents on the same ring, the N-substituent
    increment of azoles and the peri effect across a ring fusion."""
    idx = parent.GetIdx()
    ring = _smallest_aromatic_ring(mol, idx)
    where = (positions or {}).get(idx)
    base = ring_base_shift(where) if where is not None else None
    flags: list[str] = []
    if base is not None:
        kind = "heteroaromatic" if where.hetero else "fused aromatic"
        form = f" ({where.form})" if where.form else ""
        flags.append(f"{kind} base {where.ring}{form} H{where.position} with benzene increments")
        method = "hetero_aryl" if where.hetero else "aryl"
        # the substituent of a pyrrole-type N is in the NR base values and the n_substituent rows
        carriers = frozenset({where.pyrrole_n}) - {None}
        shift = base + _ring_increments(mol, ring, idx, flags, skip=where.system, skip_carriers=carriers)
        n_shift, n_flag = n_substituent_effect(mol, where, ring, idx, classify_substituent)
        peri, peri_flags = peri_effect(mol, where, idx, classify_substituent)
        flags += ([n_flag] if n_flag else []) + peri_flags
        return _with_sd(shift + n_shift + peri, "aryl", method, flags)
    hetero = [i for i in ring if mol.GetAtomWithIdx(i).GetSymbol() != "C"]
    if len(ring) == 6 and not hetero:
        base, method = _benzene_table()[("base", "benzene")][0], "aryl"
        if _in_fused_aromatic_system(mol, ring):
            flags.append("fused aromatic system not tabulated: benzene base, the fused ring as substituents")
    else:
        base, method = _benzene_table()[("hetero", "other")][0], "hetero_aryl"
        flags.append("heteroaromatic ring without base value: generic value used")
    shift = base + _ring_increments(mol, ring, idx, flags)
    return _with_sd(shift, "aryl", method, flags)


def _in_fused_aromatic_system(mol, ring) -> bool:
    """True when an atom of ``ring`` also belongs to another aromatic ring."""
    others = [r for r in mol.GetRingInfo().AtomRings() if set(r) != set(ring)
              and all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r)]
    return any(set(r) & set(ring) for r in others)


def _smallest_aromatic_ring(mol, idx: int) -> tuple[int, ...]:
    rings = [r for r in mol.GetRingInfo().AtomRings()
             if idx in r and all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r)]
    return min(rings, key=len) if rings else (idx,)


def _ring_distance(ring, a: int, b: int) -> int:
    i, j = ring.index(a), ring.index(b)
    d = abs(i - j)
    return min(d, len(ring) - d)


def _ring_increments(mol, ring, h_parent: int, flags: list[str], *, skip=frozenset(),
                     skip_carriers=frozenset()) -> float:
    """Benzene increments of the substituents on ``ring`` (ortho/meta/para by ring distance);
    atoms in ``skip`` (the rest of a tabulated ring system) are not substituents, and ring atoms
    in ``skip_carriers`` carry none."""
    total = 0.0
    table = _benzene_table()
    for r in ring:
        if r == h_parent or r in skip_carriers:
            continue
        pos = _ring_distance(ring, r, h_parent)
        if pos > 3:
            continue
        atom = mol.GetAtomWithIdx(r)
        for nbr in atom.GetNeighbors():
            if nbr.GetIdx() in ring or nbr.GetIdx() in skip or nbr.GetAtomicNum() == 1:
                continue
            key, fallback = classify_substituent(mol, nbr.GetIdx(), r)
            group = _benzene_group(nbr, key)
            if key == "NR2" and nbr.GetIsAromatic():
                group, fallback = "aryl", False  # azol-1-yl: taken as aryl (common practice)
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
