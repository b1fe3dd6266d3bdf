"""Syn (Ei) eliminations: Cope, selenoxide, sulfoxide, Chugaev, ester pyrolysis, Burgess and Martin.

The leaving group takes the beta-H itself through a cyclic transition state, so
the H must be syn-periplanar to it: each beta-H is brought syn in its cheapest
conformer (:func:`predictors.products._geometry.periplanar_results` with
``mode="syn"``), the substituents that face each other there end up cis in the
alkene, and the cost weighs the H. Stereospecific the other way from E2: from
one diastereomer, syn and anti give opposite alkene geometries, and in a
cyclohexane only a cis beta-H can leave.

Orientation (common practice; March's Advanced Organic Chemistry, elimination
chapter, from memory): roughly statistical by the number of syn H, with a
preference for the less substituted, less hindered side (Cope most strongly),
and towards conjugation.
"""

from __future__ import annotations

from predictors.products._e2 import _e2_skeleton
from predictors.products._editing import _alkene_outcomes, _geometry_weight, _hydrogens, _orientation_weight
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


def _from_3d(ctx: _Context, lg: LeavingGroup, beta: int, h_idx: int, mult: int, res, reference: float):
    model = site_model(ctx, lg)
    strain = strain_of(res, reference)
    rw, a, b = _e2_skeleton(ctx, lg, beta, h_idx)
    cis = {(model.original(sa), model.original(sb)) for sa, sb in res.cis_pairs}
    weight, why, notes = periplanar_weight(ctx, res, strain, mult, "syn")
    return [(o, weight, why, notes) for o in _alkene_outcomes(rw, a, b, cis_pairs=cis)]


def _topological(ctx: _Context, lg: LeavingGroup, beta: int, mult: int):
    rw, a, b = _e2_skeleton(ctx, lg, beta, _hydrogens(ctx.mol_h, beta)[0])
    note = ("configuration not fully defined: both geometries listed",)
    return [(o, mult * _geometry_weight(o, ctx.rt_kcal), "E over Z by alkene stability", note)
            for o in _alkene_outcomes(rw, a, b)]


def _ei_routes(ctx: _Context, lg: LeavingGroup, betas: tuple[int, ...]) -> list[_Route]:
    """One route per beta-H (per alkene geometry) of a syn elimination at ``lg``."""
    factor = max(ctx.reagent.zaitsev_factor * lg.zaitsev_multiplier, 0.05)
    in_3d = use_3d(ctx, lg, betas)
    results, reference = periplanar_results(ctx, lg, betas, mode="syn") if in_3d else ({}, 0.0)
    made = []
    for beta in betas:
        if in_3d:
            for h_idx, mult in beta_hydrogens(ctx, beta):
                made += _from_3d(ctx, lg, beta, h_idx, mult, results[h_idx], reference)
        else:
            made += _topological(ctx, lg, beta, len(_hydrogens(ctx.mol_h, beta)))
    side = "less substituted side favoured" if factor < 1.0 else "more substituted side favoured" \
        if factor > 1.0 else "statistical by the count of syn H"
    routes = []
    for outcome, weight, why, notes in made:
        rationale = (f"Ei of the {lg.kind} by {ctx.reagent.name}: syn elimination through a cyclic "
                     f"transition state, {side} (x{factor:.2g} per alkyl on C=C); {why}")
        routes.append(_Route(outcome.smiles, ("Ei",), weight * _orientation_weight(outcome, factor), "alkene",
                             rationale, outcome.geometry, outcome.n_subst, f"Ei@{lg.alpha_idx}", notes))
    return routes
