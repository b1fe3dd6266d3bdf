"""E1cB: the conjugated alkene (E and Z) and its deconjugated isomer."""

from __future__ import annotations

from predictors.products._e2 import _e2_skeleton
from predictors.products._editing import _alkene_outcomes, _geometry_weight, _hydrogens
from predictors.products._records import _Context, _Route
from predictors.substrate import LeavingGroup

#: Weight of the deconjugated E1cB isomer relative to the conjugated one (common practice).
_DECONJUGATED_FACTOR = 0.05

# ----------------------------------------------------------------------------- E1cB


def _e1cb_routes(ctx: _Context, lg: LeavingGroup, betas: tuple[int, ...]) -> list[_Route]:
    routes = []
    for beta in betas:
        conjugated = beta in lg.activated_betas
        rw, a, b = _e2_skeleton(ctx, lg, beta, _hydrogens(ctx.mol_h, beta)[0])
        for o in _alkene_outcomes(rw, a, b):
            w = _geometry_weight(o, ctx.rt_kcal) * (1.0 if conjugated else _DECONJUGATED_FACTOR)
            if conjugated:
                why = "E1cB: enolate expels the leaving group; conjugated alkene, E favoured"
                notes: tuple[str, ...] = ()
            else:
                why = "E1cB product isomerised out of conjugation (minor)"
                notes = ("deconjugated isomer",)
            routes.append(_Route(o.smiles, ("E1cB",), w, "conjugated alkene" if conjugated else
                                 "deconjugated alkene", why, o.geometry, o.n_subst, f"E1cB@{lg.alpha_idx}",
                                 notes))
    return routes


