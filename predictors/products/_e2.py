"""Anti-periplanar E2: one product per beta-H, its geometry and weight from 3D conformers."""

from __future__ import annotations

import math

from rdkit import Chem

from predictors.products._allylic import one_four_eliminations
from predictors.products._editing import (
    _alkene_outcomes,
    _geometry_weight,
    _hydrogens,
    _index,
    _orientation_weight,
    _remove,
    _tagged,
    _with_hydrogens,
)
from predictors.products._geometry import (
    beta_hydrogens,
    periplanar_results,
    periplanar_weight,
    site_model,
    strain_of,
    use_3d,
)
from predictors.products._records import _Context, _Route
from predictors.substrate import LeavingGroup

#: Weight of a syn-periplanar E2 relative to anti from the same H (common practice: rare).
_SYN_FACTOR = 0.02

# ----------------------------------------------------------------------------- E2


def _e2_skeleton(ctx: _Context, lg: LeavingGroup, beta: int, h_idx: int) -> tuple[Chem.RWMol, int, int]:
    rw = _tagged(ctx.mol_h)
    rw.GetBondBetweenAtoms(lg.alpha_idx, beta).SetBondType(Chem.BondType.DOUBLE)
    for idx in (lg.alpha_idx, beta):
        rw.GetAtomWithIdx(idx).SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
    _remove(rw, (*_with_hydrogens(ctx.mol_h, lg.lg_atoms), h_idx))
    return rw, _index(rw, lg.alpha_idx), _index(rw, beta)


def _e2_from_3d(ctx: _Context, lg: LeavingGroup, beta: int, h_idx: int, mult: int, res,
                reference_kcal: float) -> list[tuple]:
    model = site_model(ctx, lg)
    strain = strain_of(res, reference_kcal)
    rw, a, b = _e2_skeleton(ctx, lg, beta, h_idx)
    anti = {(model.original(sa), model.original(sb)) for sa, sb in res.cis_pairs}
    every = {(sa, sb) for sa in _sub_tags(ctx.mol_h, lg.alpha_idx, (beta, lg.lg_atom_idx))
             for sb in _sub_tags(ctx.mol_h, beta, (lg.alpha_idx, h_idx))}
    out = []
    weight, why, notes = periplanar_weight(ctx, res, strain, mult, "anti")
    for o in _alkene_outcomes(rw, a, b, cis_pairs=anti):
        out.append((o, weight, why, notes))
    if ctx.mol_h.GetBondBetweenAtoms(lg.alpha_idx, beta).IsInRing():
        return out  # in a ring the syn path gives the same alkene as the anti path
    syn_weight = mult * _SYN_FACTOR * math.exp(-min(strain, 10.0) / ctx.rt_kcal)
    for o in _alkene_outcomes(rw, a, b, cis_pairs=every - anti):
        out.append((o, syn_weight, "syn-periplanar elimination (minor path)",
                    ("syn elimination (minor path): geometry opposite to the anti path from the same H",)))
    return out


def _sub_tags(mol: Chem.Mol, idx: int, exclude) -> list[int]:
    return [n.GetIdx() for n in mol.GetAtomWithIdx(idx).GetNeighbors()
            if n.GetIdx() not in exclude and n.GetAtomicNum() > 1]


def _e2_topological(ctx: _Context, lg: LeavingGroup, beta: int, h_idx: int, mult: int) -> list[tuple]:
    rw, a, b = _e2_skeleton(ctx, lg, beta, h_idx)
    note = ("configuration not fully defined: both geometries listed",)
    return [(o, mult * _geometry_weight(o, ctx.rt_kcal), "E over Z by alkene stability", note)
            for o in _alkene_outcomes(rw, a, b)]


def _e2_routes(ctx: _Context, lg: LeavingGroup, betas: tuple[int, ...]) -> list[_Route]:
    factor = max(ctx.reagent.zaitsev_factor * lg.zaitsev_multiplier, 0.05)
    if factor >= 3.0:
        orient = "Zaitsev orientation"
    elif factor > 1.0:
        orient = "weak Zaitsev preference, the count of H decides"
    else:
        orient = "Hofmann orientation"
    in_3d = use_3d(ctx, lg, betas)
    results, reference = periplanar_results(ctx, lg, betas, mode="anti") if in_3d else ({}, 0.0)
    routes, made_here = [], []
    for beta in betas:
        tags = ("E2", "E1cB") if beta in lg.activated_betas else ("E2",)
        hydrogens = _hydrogens(ctx.mol_h, beta)
        for h_idx, mult in (beta_hydrogens(ctx, beta) if in_3d else [(hydrogens[0], len(hydrogens))]):
            if in_3d:
                made = _e2_from_3d(ctx, lg, beta, h_idx, mult, results[h_idx], reference)
            else:
                made = _e2_topological(ctx, lg, beta, h_idx, mult)
            made_here.extend((outcome, weight, why, notes, tags) for outcome, weight, why, notes in made)
    if lg.alpha_flags and "allylic" in lg.alpha_flags:
        made_here.extend((o, w, why, notes, ("E2",)) for o, w, why, notes in one_four_eliminations(ctx, lg))
    most = max((o.n_subst or 0 for o, *_ in made_here), default=0)
    least = min((o.n_subst or 0 for o, *_ in made_here), default=0)
    for outcome, weight, why, notes, tags in made_here:
        w = weight * _orientation_weight(outcome, factor)
        rationale = (f"E2 by {ctx.reagent.name} ({ctx.reagent.bulk}): "
                     f"{_orientation_text(orient, factor, outcome.n_subst or 0, most, least)}; {why}")
        syn = any(n.startswith("syn") for n in notes)
        label = "alkene" + (", syn path" if syn else "")
        if any(n.startswith("1,4-elimination") for n in notes):
            label = "conjugated diene, 1,4-elimination"
        routes.append(_Route(outcome.smiles, tags, w, label, rationale, outcome.geometry,
                             outcome.n_subst, f"E2@{lg.alpha_idx}", notes))
    return routes


def _orientation_text(orient: str, factor: float, n_subst: int, most: int, least: int) -> str:
    """How the orientation rule weighs this alkene, said of this alkene (under a Zaitsev rule the
    less substituted alkene is the one it disfavours, under a Hofmann rule the more substituted)."""
    per = f"x{factor:.2g} per alkyl on C=C, {n_subst} on this one"
    if most == least or 1.0 <= factor < 3.0:  # nothing to choose between, or a weak preference
        return f"{orient} ({per})"
    more = n_subst >= most
    side = "favours" if more == (factor >= 3.0) else "disfavours"
    return f"{orient} {side} this {'more' if more else 'less'} substituted alkene ({per})"


