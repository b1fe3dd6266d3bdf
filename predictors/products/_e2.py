"""Anti-periplanar E2: one product per beta-H, its geometry and weight from 3D conformers."""

from __future__ import annotations

import math
from dataclasses import dataclass

from rdkit import Chem

from predictors.antiperiplanar import (
    MAX_STRAIN_KCAL,
    ConformerSet,
    embed_conformers,
    find_periplanar,
    is_axial,
    local_model,
)
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
from predictors.products._records import _Context, _Route
from predictors.substrate import LeavingGroup, beta_carbons

#: Weight of a syn-periplanar E2 relative to anti from the same H (common practice: rare).
_SYN_FACTOR = 0.02
#: Weight of an E2 whose H cannot reach anti-periplanar (common practice: negligible).
_BLOCKED_FACTOR = 1.0e-4
#: Substrates larger than this (heavy atoms) are cut to a local model for the 3D work.
_LOCAL_MODEL_ABOVE = 20
_LOCAL_RADIUS = 2

# ----------------------------------------------------------------------------- E2


def _use_3d(ctx: _Context, lg: LeavingGroup, betas: tuple[int, ...]) -> bool:
    if ctx.undefined_bonds:
        return False
    if not ctx.undefined_atoms:
        return True
    if ctx.undefined_atoms != {lg.alpha_idx} or ctx.substrate.mol.GetAtomWithIdx(lg.alpha_idx).IsInRing():
        return False
    potential = {si.centeredOn for si in Chem.FindPotentialStereo(ctx.substrate.mol)}
    return not (set(betas) & potential)


@dataclass(frozen=True, eq=False)
class _Model:
    """Conformers of the substrate (or of a local model around one site) and the index map."""

    confs: ConformerSet
    mapping: dict

    def idx(self, original: int) -> int:
        return self.mapping[original]

    def original(self, model_idx: int) -> int:
        return next(k for k, v in self.mapping.items() if v == model_idx)


def _model(ctx: _Context, lg: LeavingGroup) -> _Model:
    """Embed once per site; large substrates are cut to a local model around the site."""
    if lg.alpha_idx not in ctx.models:
        mol_3d = Chem.Mol(ctx.mol_h)
        # One undefined centre (the alpha carbon, see _use_3d): either mirror image gives the same
        # answers, but every conformer must be of the same one.
        for idx in ctx.undefined_atoms:
            mol_3d.GetAtomWithIdx(idx).SetChiralTag(Chem.ChiralType.CHI_TETRAHEDRAL_CW)
        Chem.AssignStereochemistry(mol_3d, cleanIt=True, force=True)
        if ctx.substrate.mol.GetNumHeavyAtoms() > _LOCAL_MODEL_ABOVE:
            centre = [lg.alpha_idx, *beta_carbons(ctx.substrate.mol, lg.alpha_idx, lg.lg_atom_idx)]
            mol_3d, mapping = local_model(mol_3d, centre=centre, radius=_LOCAL_RADIUS)
        else:
            mapping = {i: i for i in range(mol_3d.GetNumAtoms())}
        n_conf = 6 if mol_3d.GetNumHeavyAtoms() <= 20 else 4
        confs = embed_conformers(mol_3d, n_conformers=n_conf, seed=ctx.seed)
        ctx.models[lg.alpha_idx] = _Model(confs, mapping)
    return ctx.models[lg.alpha_idx]


def _e2_skeleton(ctx: _Context, lg: LeavingGroup, beta: int, h_idx: int) -> tuple[Chem.RWMol, int, int]:
    rw = _tagged(ctx.mol_h)
    rw.GetBondBetweenAtoms(lg.alpha_idx, beta).SetBondType(Chem.BondType.DOUBLE)
    for idx in (lg.alpha_idx, beta):
        rw.GetAtomWithIdx(idx).SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
    _remove(rw, (*_with_hydrogens(ctx.mol_h, lg.lg_atoms), h_idx))
    return rw, _index(rw, lg.alpha_idx), _index(rw, beta)


def _beta_hydrogens(ctx: _Context, beta: int) -> list[tuple[int, int]]:
    """(H index, multiplicity): a methyl's three H are one rotor, listed once."""
    hs = _hydrogens(ctx.mol_h, beta)
    return [(hs[0], 3)] if len(hs) == 3 else [(h, 1) for h in hs]


def _ring_note(ctx: _Context, lg: LeavingGroup, result, strain_kcal: float) -> tuple[str, ...]:
    if result.lg_axial is None:
        return ()
    model = _model(ctx, lg)
    at_min = is_axial(model.confs.mol, ring_atom=model.idx(lg.alpha_idx),
                      substituent=model.idx(lg.lg_atom_idx), conf_id=model.confs.lowest_conf_id)
    if at_min is False:
        return (f"trans-diaxial H: the ring must flip to put the leaving group axial "
                f"(cost {strain_kcal:.1f} kcal/mol, MMFF94)",)
    return ("trans-diaxial H (leaving group axial in the lowest chair)",)


def _periplanar_results(ctx: _Context, lg: LeavingGroup, betas) -> tuple[dict, float]:
    """Anti-periplanar result for every beta-H, and the lowest energy seen (strain reference)."""
    model = _model(ctx, lg)
    results = {}
    for beta in betas:
        for h_idx, _ in _beta_hydrogens(ctx, beta):
            results[h_idx] = find_periplanar(
                model.confs, h_idx=model.idx(h_idx), beta_idx=model.idx(beta),
                alpha_idx=model.idx(lg.alpha_idx), lg_idx=model.idx(lg.lg_atom_idx))
    reference = min([model.confs.min_energy_kcal, *(r.relaxed_kcal for r in results.values())])
    return results, reference


def _e2_from_3d(ctx: _Context, lg: LeavingGroup, beta: int, h_idx: int, mult: int, res,
                reference_kcal: float) -> list[tuple]:
    model = _model(ctx, lg)
    strain = min(res.energy_kcal - reference_kcal, 99.0)
    rw, a, b = _e2_skeleton(ctx, lg, beta, h_idx)
    anti = {(model.original(sa), model.original(sb)) for sa, sb in res.cis_pairs}
    every = {(sa, sb) for sa in _sub_tags(ctx.mol_h, lg.alpha_idx, (beta, lg.lg_atom_idx))
             for sb in _sub_tags(ctx.mol_h, beta, (lg.alpha_idx, h_idx))}
    out = []
    if res.periplanar and strain <= MAX_STRAIN_KCAL:
        why = f"H anti-periplanar at {strain:.1f} kcal/mol strain"
        weight = mult * math.exp(-strain / ctx.rt_kcal)
        notes = _ring_note(ctx, lg, res, strain)
    else:
        why = "no anti-periplanar arrangement for this H within reach"
        weight, notes = mult * _BLOCKED_FACTOR, ("H cannot reach anti-periplanar: minor at best",)
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
    use_3d = _use_3d(ctx, lg, betas)
    results, reference = _periplanar_results(ctx, lg, betas) if use_3d else ({}, 0.0)
    routes, made_here = [], []
    for beta in betas:
        tags = ("E2", "E1cB") if beta in lg.activated_betas else ("E2",)
        hydrogens = _hydrogens(ctx.mol_h, beta)
        for h_idx, mult in (_beta_hydrogens(ctx, beta) if use_3d else [(hydrogens[0], len(hydrogens))]):
            if use_3d:
                made = _e2_from_3d(ctx, lg, beta, h_idx, mult, results[h_idx], reference)
            else:
                made = _e2_topological(ctx, lg, beta, h_idx, mult)
            made_here.extend((outcome, weight, why, notes, tags) for outcome, weight, why, notes in made)
    most = max((o.n_subst or 0 for o, *_ in made_here), default=0)
    least = min((o.n_subst or 0 for o, *_ in made_here), default=0)
    for outcome, weight, why, notes, tags in made_here:
        w = weight * _orientation_weight(outcome, factor)
        rationale = (f"E2 by {ctx.reagent.name} ({ctx.reagent.bulk}): "
                     f"{_orientation_text(orient, factor, outcome.n_subst or 0, most, least)}; {why}")
        syn = any(n.startswith("syn") for n in notes)
        label = "alkene" + (", syn path" if syn else "")
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


