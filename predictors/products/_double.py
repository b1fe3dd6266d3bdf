"""Second eliminations with excess strong base: alkynes from vinyl halides, dienes after a second group.

* A first elimination of a 1,2- or 1,1-dihalide leaves a vinyl halide (its E/Z from the
  anti-periplanar geometry of the first step). With excess strong base it loses HX again to the
  alkyne; the H trans to the halide (anti) goes fastest, a cis one far more slowly (common
  practice; Clayden et al. 2012, alkyne synthesis, from memory).
* A first elimination that leaves a second leaving group on an sp3 carbon is followed by a
  second elimination, enumerated with the same machinery (anti-periplanar E2 and the rest):
  1,2-dihalides give 1,3-dienes this way.

How far the second step goes depends on the base: amide-class bases (conjugate acid pKa 30 or
more) take it nearly to completion, alkoxides and hydroxide only partly, more when hot (common
practice: NaNH2 makes alkynes from dihalides, KOH needs about 200 C). Every route here assumes
two or more equivalents of base and says so.
"""

from __future__ import annotations

import math
from dataclasses import replace

from rdkit import Chem
from rdkit.Chem import AllChem

from predictors.errors import ConfirmError
from predictors.products._records import _Context, _Route

#: Fraction of a first-elimination product that eliminates again at 25 C with excess base.
_STRONG_SECOND = 0.9
_ALKOXIDE_SECOND = 0.2
#: A vinyl halide whose only beta-H is cis to the halide (syn) eliminates this much more slowly.
_SYN_VINYL_FACTOR = 0.1
_HALOGENS = (9, 17, 35, 53)
_ELIMINATIONS = ("E2", "E1", "Ei", "E1cB")
_EXCESS_NOTE = "assumes excess base (two equivalents or more): second elimination"


def _second_fraction(ctx: _Context) -> float:
    """How far a second elimination goes with this base at this temperature (0 without a strong base)."""
    reagent = ctx.reagent
    if not reagent.is_strong_base:
        return 0.0
    if (reagent.pka_conj_acid or 0.0) >= 30.0:
        return _STRONG_SECOND
    return min(_STRONG_SECOND, _ALKOXIDE_SECOND * math.exp((ctx.temp_c - 25.0) / 60.0))


def _vinyl_halides(mol: Chem.Mol):
    """(halogen, C1 bearing it, C2 across the C=C) for every vinylic halide whose C2 carries H."""
    for bond in mol.GetBonds():
        if bond.GetBondType() != Chem.BondType.DOUBLE or bond.GetIsAromatic():
            continue
        for c1, c2 in ((bond.GetBeginAtom(), bond.GetEndAtom()), (bond.GetEndAtom(), bond.GetBeginAtom())):
            if c1.GetAtomicNum() != 6 or c2.GetAtomicNum() != 6 or c2.GetTotalNumHs() == 0:
                continue
            for x in c1.GetNeighbors():
                if x.GetAtomicNum() in _HALOGENS:
                    yield x.GetIdx(), c1.GetIdx(), c2.GetIdx(), bond


def _h_anti_to_halide(mol: Chem.Mol, x: int, c1: int, c2: int, bond) -> bool | None:
    """True when C2's H is trans to the halide, False when cis, None when the geometry is not given.

    Read from 2D coordinates, which keep the double bond's configuration: the heavy substituent R
    on C2 and the halide on one side of the C1=C2 line means the H on C2 is on the other (anti).
    """
    others_c2 = [n.GetIdx() for n in mol.GetAtomWithIdx(c2).GetNeighbors() if n.GetIdx() != c1]
    if not others_c2:
        return True  # =CH2: one H on each side
    if bond.GetStereo() == Chem.BondStereo.STEREONONE:
        return None
    work = Chem.Mol(mol)
    AllChem.Compute2DCoords(work)
    pos = work.GetConformer().GetPositions()[:, :2]
    axis = pos[c2] - pos[c1]

    def side(atom: int) -> float:
        rel = pos[atom] - pos[c1]
        return float(axis[0] * rel[1] - axis[1] * rel[0])

    return side(x) * side(others_c2[0]) > 0


def _alkyne(smiles: str, x: int, c1: int, c2: int) -> str | None:
    mol = Chem.RWMol(Chem.AddHs(Chem.MolFromSmiles(smiles)))
    h = next(n.GetIdx() for n in mol.GetAtomWithIdx(c2).GetNeighbors() if n.GetAtomicNum() == 1)
    mol.GetBondBetweenAtoms(c1, c2).SetBondType(Chem.BondType.TRIPLE)
    for idx in (c1, c2):
        mol.GetAtomWithIdx(idx).SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
    for idx in sorted((x, h), reverse=True):
        mol.RemoveAtom(idx)
    try:
        out = mol.GetMol()
        Chem.SanitizeMol(out)
        return Chem.MolToSmiles(Chem.RemoveHs(out))
    except (ValueError, RuntimeError):
        return None


def _alkyne_routes(route: _Route, fraction: float) -> tuple[list[_Route], float]:
    mol = Chem.MolFromSmiles(route.smiles)
    made, converted = [], 0.0
    for x, c1, c2, bond in _vinyl_halides(mol):
        anti = _h_anti_to_halide(mol, x, c1, c2, bond)
        rate = _SYN_VINYL_FACTOR if anti is False else 1.0
        smiles = _alkyne(route.smiles, x, c1, c2)
        if smiles is None:
            continue
        share = fraction * rate
        how = "anti H" if anti else ("only a syn H: slower" if anti is False else "geometry not given")
        made.append(replace(route, smiles=smiles, weight=route.weight * share,
                            label="alkyne, double elimination",
                            rationale=f"second E2 of the vinyl halide ({how}), alkyne; {route.rationale}",
                            geometry=None, n_subst=None, regio=None, group=f"second@{route.group}",
                            notes=(_EXCESS_NOTE + " to the alkyne",)))
        converted = max(converted, share)
        break  # one vinylic halogen per product is enough
    return made, converted


def _diene_routes(ctx: _Context, route: _Route, fraction: float) -> tuple[list[_Route], float]:
    from predictors.products._assembly import _collect_routes, _make_context  # the enumerator itself
    from predictors.substrate import perceive_substrate

    try:
        child = perceive_substrate(route.smiles, base=True)
        child_ctx = _make_context(child, ctx.reagent, ctx.solvent, ctx.temp_c, ctx.seed)
        routes, _, _ = _collect_routes(child_ctx, second=False)
    except ConfirmError:
        return [], 0.0
    eliminations = [r for r in routes if set(r.pathways) & set(_ELIMINATIONS)]
    total = sum(r.weight for r in eliminations)
    if total <= 0.0:
        return [], 0.0
    made = [replace(r, weight=route.weight * fraction * r.weight / total,
                    label="diene, double elimination" if r.n_subst is not None else r.label,
                    rationale=f"second elimination: {r.rationale}", group=f"second@{route.group}",
                    notes=tuple(dict.fromkeys(r.notes + (_EXCESS_NOTE,))))
            for r in eliminations]
    return made, fraction


def add_second_eliminations(ctx: _Context, routes: list[_Route]) -> list[_Route]:
    """Follow each elimination product that can eliminate again (strong base only)."""
    fraction = _second_fraction(ctx)
    if fraction <= 0.0:
        return routes
    out = []
    for route in routes:
        if not set(route.pathways) & set(_ELIMINATIONS):
            out.append(route)
            continue
        made, converted = _alkyne_routes(route, fraction)
        if not made:
            made, converted = _diene_routes(ctx, route, fraction)
        out.append(replace(route, weight=route.weight * (1.0 - converted)))
        out.extend(made)
    return out
