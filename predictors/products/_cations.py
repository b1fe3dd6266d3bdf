"""E1 and SN1: the carbocation, its 1,2-shifts to more stable cations, their alkenes and adducts.

An allylic cation is delocalised: its other end is listed as a form of its own, weighted by its
substitution like any cation, and a nucleophile caught there gives the transposed product (SN1').
"""

from __future__ import annotations

from rdkit import Chem

from predictors.products._editing import (
    _TAG,
    _add_fragment,
    _alkene_outcomes,
    _finish,
    _geometry_weight,
    _index,
    _orientation_weight,
    _remove,
    _tagged,
    _with_hydrogens,
)
from predictors.products._records import _Context, _Outcome, _Route
from predictors.products._substitution import _nucleophiles
from predictors.substrate import LeavingGroup

#: Thermodynamic orientation of E1 (common practice: most substituted alkene major).
_E1_ZAITSEV_FACTOR = 7.0
#: Cation populations grow tenfold per step of stability (common practice: fast shifts
#: to the more stable cation dominate).
_CATION_STEP = 10.0
_MAX_SHIFTS = 2

# ----------------------------------------------------------------------------- carbocations


def _cation_score(mol: Chem.Mol, site: int) -> float:
    """Cation stability: carbon neighbours, +1.5 allylic/benzylic, -2 next to C=O/CN (common practice)."""
    score = 0.0
    for nbr in mol.GetAtomWithIdx(site).GetNeighbors():
        if nbr.GetAtomicNum() != 6:
            continue
        score += 1.0
        multiple = [b for b in nbr.GetBonds() if b.GetBondType() != Chem.BondType.SINGLE]
        if nbr.GetIsAromatic() or any(b.GetOtherAtom(nbr).GetAtomicNum() == 6 for b in multiple):
            score += 1.5
        elif multiple:
            score -= 2.0
    return score


def _class_name(mol: Chem.Mol, site: int) -> str:
    n = sum(1 for a in mol.GetAtomWithIdx(site).GetNeighbors() if a.GetAtomicNum() == 6)
    return ("methyl", "primary", "secondary", "tertiary")[min(n, 3)]


def _permutation_is_odd(before: list[int], after: list[int]) -> bool:
    perm = [before.index(x) for x in after]
    odd, seen = False, set()
    for start in range(len(perm)):
        length, j = 0, start
        while j not in seen:
            seen.add(j)
            j = perm[j]
            length += 1
        if length and length % 2 == 0:
            odd = not odd
    return odd


def _shift(rw: Chem.RWMol, site: int, donor: int, moving: int) -> Chem.RWMol:
    new = Chem.RWMol(rw)
    mover = new.GetAtomWithIdx(moving)
    before = [b.GetOtherAtomIdx(moving) for b in mover.GetBonds()]
    new.RemoveBond(donor, moving)
    new.AddBond(site, moving, Chem.BondType.SINGLE)
    after = [b.GetOtherAtomIdx(moving) for b in new.GetAtomWithIdx(moving).GetBonds()]
    before = [site if x == donor else x for x in before]
    if mover.GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED and _permutation_is_odd(before, after):
        new.GetAtomWithIdx(moving).InvertChirality()
    for idx, charge in ((site, 0), (donor, 1)):
        atom = new.GetAtomWithIdx(idx)
        atom.SetFormalCharge(charge)
        atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
        atom.SetNoImplicit(True)
    return new


def _cation_key(rw: Chem.RWMol) -> str | None:
    mol = rw.GetMol()
    try:
        Chem.SanitizeMol(mol)
    except (ValueError, RuntimeError):
        return None
    return Chem.MolToSmiles(Chem.RemoveHs(mol))


def _shift_moves(rw: Chem.RWMol, site: int):
    for donor in rw.GetAtomWithIdx(site).GetNeighbors():
        if donor.GetAtomicNum() != 6 or donor.GetHybridization() != Chem.HybridizationType.SP3:
            continue
        hs = [n.GetIdx() for n in donor.GetNeighbors() if n.GetAtomicNum() == 1]
        if hs:
            yield donor.GetIdx(), hs[0], "1,2-hydride shift"
        for grp in donor.GetNeighbors():
            if grp.GetAtomicNum() == 6 and grp.GetIdx() != site:
                n_h = sum(1 for n in grp.GetNeighbors() if n.GetAtomicNum() == 1)
                kind = "methyl" if n_h == 3 else "alkyl"
                yield donor.GetIdx(), grp.GetIdx(), f"1,2-{kind} shift"


def _cation_family(rw: Chem.RWMol, site: int) -> list[tuple[Chem.RWMol, int, float, str]]:
    """The cation and every more stable cation reachable by up to two 1,2-shifts."""
    family = [(rw, site, _cation_score(rw, site), "")]
    seen = {_cation_key(rw)}
    frontier = list(family)
    for _ in range(_MAX_SHIFTS):
        nxt = []
        for cat, s, score, path in frontier:
            for donor, moving, kind in _shift_moves(cat, s):
                new = _shift(cat, s, donor, moving)
                new_score = _cation_score(new, donor)
                key = _cation_key(new)
                if key is None or key in seen or new_score <= score + 0.25:
                    continue
                seen.add(key)
                desc = f"{path}, then {kind}" if path else kind
                nxt.append((new, donor, new_score, f"{desc} to a {_class_name(new, donor)} cation"))
        family.extend(nxt)
        frontier = nxt
    for cat, s, _, path in list(family):
        for new, end in _allylic_partners(cat, s):
            key = _cation_key(new)
            if key is None or key in seen:
                continue
            seen.add(key)
            desc = f"{path}, then allylic transposition" if path else "allylic transposition"
            family.append((new, end, _cation_score(new, end), desc))
    return family


def _allylic_partners(rw: Chem.RWMol, site: int):
    """The other end of an allylic cation: C(+)-C=C written as C=C-C(+) (the same delocalised cation)."""
    for mid in rw.GetAtomWithIdx(site).GetNeighbors():
        if mid.GetAtomicNum() != 6 or mid.GetIsAromatic():
            continue
        for bond in mid.GetBonds():
            end = bond.GetOtherAtom(mid)
            if bond.GetBondType() != Chem.BondType.DOUBLE or end.GetIdx() == site or end.GetAtomicNum() != 6:
                continue
            new = Chem.RWMol(rw)
            new.GetBondBetweenAtoms(site, mid.GetIdx()).SetBondType(Chem.BondType.DOUBLE)
            new.GetBondBetweenAtoms(mid.GetIdx(), end.GetIdx()).SetBondType(Chem.BondType.SINGLE)
            for b in new.GetAtomWithIdx(mid.GetIdx()).GetBonds():
                b.SetStereo(Chem.BondStereo.STEREONONE)
            for idx, charge in ((site, 0), (end.GetIdx(), 1)):
                atom = new.GetAtomWithIdx(idx)
                atom.SetFormalCharge(charge)
                atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
                atom.SetNoImplicit(True)
            yield new, end.GetIdx()


def _ionise(ctx: _Context, lg: LeavingGroup) -> tuple[Chem.RWMol, int]:
    rw = _tagged(ctx.mol_h)
    atom = rw.GetAtomWithIdx(lg.alpha_idx)
    atom.SetFormalCharge(1)
    atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
    atom.SetNoImplicit(True)
    _remove(rw, _with_hydrogens(ctx.mol_h, lg.lg_atoms))
    return rw, _index(rw, lg.alpha_idx)


def _deprotonations(cat: Chem.RWMol, site: int) -> list[_Outcome]:
    out = []
    for nbr in cat.GetAtomWithIdx(site).GetNeighbors():
        hs = [n.GetIdx() for n in nbr.GetNeighbors() if n.GetAtomicNum() == 1]
        if nbr.GetAtomicNum() != 6 or not hs or nbr.GetHybridization() != Chem.HybridizationType.SP3:
            continue
        new = Chem.RWMol(cat)
        new.GetBondBetweenAtoms(site, nbr.GetIdx()).SetBondType(Chem.BondType.DOUBLE)
        new.GetAtomWithIdx(site).SetFormalCharge(0)
        new.GetAtomWithIdx(nbr.GetIdx()).SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
        tag_site, tag_nbr = (new.GetAtomWithIdx(i).GetIntProp(_TAG) for i in (site, nbr.GetIdx()))
        new.RemoveAtom(hs[0])
        a, b = _index(new, tag_site), _index(new, tag_nbr)
        out.extend((o, len(hs)) for o in _alkene_outcomes(new, a, b))
    return out


def _captures(ctx: _Context, cat: Chem.RWMol, site: int, frag: str) -> list[_Outcome]:
    new = Chem.RWMol(cat)
    new.GetAtomWithIdx(site).SetFormalCharge(0)
    _add_fragment(new, site, frag)
    tags = [Chem.ChiralType.CHI_TETRAHEDRAL_CW, Chem.ChiralType.CHI_TETRAHEDRAL_CCW] if ctx.any_defined \
        else [Chem.ChiralType.CHI_UNSPECIFIED]
    outcomes = {}
    for tag in tags:
        new.GetAtomWithIdx(site).SetChiralTag(tag)
        outcome = _finish(new)
        if outcome is not None:
            outcomes[outcome.smiles] = outcome
    return list(outcomes.values())


def _cation_routes(ctx: _Context, lg: LeavingGroup, shares: dict[str, float]) -> list[_Route]:
    rw, site = _ionise(ctx, lg)
    family = _cation_family(rw, site)
    top = max(score for _, _, score, _ in family)
    pops = [_CATION_STEP ** (score - top) for _, _, score, _ in family]
    total = sum(pops)
    routes = []
    for (cat, s, _, path), pop in zip(family, pops, strict=True):
        share = pop / total
        notes = (f"via {path}",) if path else ()
        label_tail = f", after {path.split(' to ')[0].split(', then ')[-1]}" if path else ""
        group = f"cation@{_cation_key(cat)}"
        if shares.get("E1"):
            routes += _e1_from_cation(ctx, cat, s, share * shares["E1"], notes, label_tail, group)
        if shares.get("SN1"):
            tag = "SN1'" if "allylic transposition" in path else "SN1"
            routes += _sn1_from_cation(ctx, cat, s, share * shares["SN1"], notes, label_tail, group, tag)
    return routes


def _e1_from_cation(ctx, cat, site, share, notes, label_tail, group) -> list[_Route]:
    items = [(o, n_h * _geometry_weight(o, ctx.rt_kcal) * _orientation_weight(o, _E1_ZAITSEV_FACTOR))
             for o, n_h in _deprotonations(cat, site)]
    total = sum(w for _, w in items) or 1.0
    why = (f"E1 via the {_class_name(cat, site)} cation: thermodynamic mixture, more substituted and E "
           "alkenes favoured")
    return [_Route(o.smiles, ("E1",), share * w / total, "alkene" + label_tail, why, o.geometry, o.n_subst,
                   group, notes) for o, w in items]


def _sn1_from_cation(ctx, cat, site, share, notes, label_tail, group, tag="SN1") -> list[_Route]:
    nucs = _nucleophiles(ctx, for_cation=True)
    # An added nucleophile outcompetes the solvent (common practice): solvent weight 0.25 beside it.
    weights = [0.25 if solv and any(not other for _, _, other in nucs) else 1.0 for _, _, solv in nucs]
    routes = []
    for (frag, name, solvolysis), nuc_weight in zip(nucs, weights, strict=True):
        outcomes = _captures(ctx, cat, site, frag)
        extra = (f"solvolysis by {name}",) if solvolysis else ()
        config = "both configurations" if len(outcomes) > 1 else "configuration lost"
        for o in outcomes:
            why = f"{tag}: {name} traps the {_class_name(cat, site)} cation ({config})"
            weight = share * nuc_weight / (sum(weights) * len(outcomes))
            routes.append(_Route(o.smiles, (tag,), weight,
                                 f"substitution ({name}){label_tail}", why, group=group, notes=notes + extra))
    return routes


