"""Assemble the routes of every leaving group into one ranked list of candidates."""

from __future__ import annotations

import math
from dataclasses import replace

from rdkit import Chem

from predictors.core import PATHWAYS, Candidate
from predictors.errors import ChemistryError, ConfirmError, InputError
from predictors.products._allylic import one_four_eliminations, sn2_prime_routes
from predictors.products._cations import _cation_routes
from predictors.products._double import add_second_eliminations
from predictors.products._e1cb import _e1cb_routes
from predictors.products._e2 import _e2_routes
from predictors.products._ei import _ei_routes
from predictors.products._geometry import apply_conformer_costs
from predictors.products._records import ProductSet, _Context, _Route
from predictors.products._shares import _pathway_shares
from predictors.products._substitution import _sn2_routes
from predictors.reagents import Reagent, get_reagent, get_solvent
from predictors.substrate import LeavingGroup, Substrate, beta_carbons, perceive_substrate

#: Share of the prior kept for unreacted starting material (common practice).
_STARTING_MATERIAL_PRIOR = 0.1
#: Fraction of a site expected to react below the usual temperature of its syn elimination.
_TOO_COLD_FRACTION = 0.05

# ----------------------------------------------------------------------------- assembly


def _site_routes(ctx: _Context, lg: LeavingGroup) -> tuple[list[_Route], list[str], float]:
    """Routes at one leaving group, notes, and the fraction of the site expected to react."""
    shares, why = _pathway_shares(ctx, lg)
    reacts = 1.0
    betas = beta_carbons(ctx.substrate.mol, lg.alpha_idx, lg.lg_atom_idx)
    notes = []
    conjugate = "allylic" in lg.alpha_flags and bool(one_four_eliminations(ctx, lg))
    if not betas and lg.quality != "poor":
        if conjugate:
            notes.append(f"no beta-H next to atom {lg.alpha_idx} ({lg.kind}): only 1,4-elimination to a "
                         "diene")
        else:
            notes.append(f"no beta-H next to atom {lg.alpha_idx} ({lg.kind}): elimination impossible, "
                         "substitution only")
    shares, cost_notes = apply_conformer_costs(ctx, lg, betas, shares)
    notes += cost_notes
    if shares.get("Ei") and ctx.temp_c < lg.min_temp_c:
        reacts = _TOO_COLD_FRACTION
        notes.append(f"{lg.kind} at atom {lg.alpha_idx}: the syn elimination usually needs about "
                     f"{lg.min_temp_c:g} C or more (common practice); at {ctx.temp_c:g} C little reaction "
                     "expected")
    if not shares:
        notes.append(f"atom {lg.alpha_idx}: {why}")
    by_path: dict[str, list[_Route]] = {}
    if shares.get("Ei") and betas:
        by_path["Ei"] = _ei_routes(ctx, lg, betas)
    if shares.get("E1cB"):
        by_path["E1cB"] = _e1cb_routes(ctx, lg, betas)
    if shares.get("E2") and (betas or conjugate):
        by_path["E2"] = _e2_routes(ctx, lg, betas)
    if shares.get("SN2"):
        by_path["SN2"] = _sn2_routes(ctx, lg)
    if shares.get("E1") or shares.get("SN1"):
        cation = _cation_routes(ctx, lg, shares)
        by_path["E1"] = [r for r in cation if "E1" in r.pathways]
        by_path["SN1"] = [r for r in cation if "SN1" in r.pathways or "SN1'" in r.pathways]
    if shares.get("SN2'"):
        by_path["SN2'"] = sn2_prime_routes(ctx, lg)
    live = {k: v for k, v in by_path.items() if v}
    total_share = sum(shares[k] for k in live) or 1.0
    routes = []
    for tag, items in live.items():
        scale = reacts * shares[tag] / total_share / (sum(r.weight for r in items) or 1.0)
        routes += [replace(r, weight=r.weight * scale, rationale=f"{r.rationale} [{why}]") for r in items]
    return routes, notes, (1.0 - reacts) if routes else 0.0


def _label_regio(routes: list[_Route]) -> list[_Route]:
    groups: dict[str, list[int]] = {}
    for r in routes:
        if r.n_subst is not None:
            groups.setdefault(r.group, []).append(r.n_subst)
    out = []
    for r in routes:
        counts = groups.get(r.group, [])
        regio = None
        if r.n_subst is not None and counts and max(counts) > min(counts):
            regio = "more substituted" if r.n_subst == max(counts) else "less substituted"
        out.append(replace(r, regio=regio))
    return out


def _merge(routes: list[_Route], scale: float) -> list[Candidate]:
    by_smiles: dict[str, list[_Route]] = {}
    for r in routes:
        by_smiles.setdefault(r.smiles, []).append(r)
    candidates = []
    for smiles, items in by_smiles.items():
        items.sort(key=lambda r: -r.weight)
        top = items[0]
        tags = {t for r in items for t in r.pathways}
        pathways = tuple(t for t in PATHWAYS if t in tags)
        notes = list(top.notes)
        for r in items[1:]:
            notes += [n for n in r.notes if n not in notes and not n.startswith(("syn", "H cannot"))]
        others = sorted(tags - set(top.pathways), key=PATHWAYS.index)
        rationale = top.rationale + (f"; also formed by {', '.join(others)}" if others else "")
        label = _label(top)
        prior = min(1.0, max(0.0, scale * sum(r.weight for r in items)))
        candidates.append(Candidate(smiles, pathways, label, round(prior, 6), rationale, top.regio,
                                    top.geometry, tuple(notes)))
    return candidates


def _mirror_smiles(smiles: str) -> str:
    mol = Chem.MolFromSmiles(smiles)
    for atom in mol.GetAtoms():
        atom.InvertChirality()
    return Chem.MolToSmiles(mol)


def _merge_mirror_images(routes: list[_Route]) -> list[_Route]:
    """An achiral substrate gives chiral products as racemates: list each mirror pair once."""
    present = {r.smiles for r in routes}
    out = []
    for r in routes:
        mirror = _mirror_smiles(r.smiles)
        if mirror != r.smiles and mirror in present:
            keep = min(r.smiles, mirror)
            note = "formed as the racemate with its mirror image (same NMR spectrum)"
            r = replace(r, smiles=keep, notes=r.notes + (note,))
        out.append(r)
    return out


def _label(route: _Route) -> str:
    if route.n_subst is None:
        return route.label
    geometry = f"({route.geometry})-" if route.geometry else ""
    regio = f", {route.regio}" if route.regio else ""
    return f"{geometry}{route.label}{regio}"


def _resolve_solvent(reagent: Reagent, solvent: str | None) -> Reagent | None:
    if solvent is not None:
        return get_solvent(solvent)
    return get_reagent(reagent.default_solvent) if reagent.default_solvent else None


def _check_temperature(temp_c: float) -> float:
    if isinstance(temp_c, bool) or not isinstance(temp_c, (int, float)) or not math.isfinite(temp_c) \
            or not -100.0 <= temp_c <= 600.0:
        raise InputError(f"temp_c: expected a temperature between -100 and 600 C, got {temp_c!r}")
    return float(temp_c)


def _make_context(substrate: Substrate, reagent: Reagent, solvent: Reagent | None, temp_c: float,
                  seed: int) -> _Context:
    stereo = Chem.FindPotentialStereo(substrate.mol)
    unspecified = [s for s in stereo if s.specified == Chem.StereoSpecified.Unspecified]
    return _Context(
        substrate=substrate, mol_h=Chem.AddHs(substrate.mol), reagent=reagent, solvent=solvent,
        temp_c=temp_c, seed=seed,
        undefined_atoms=frozenset(s.centeredOn for s in unspecified
                                  if s.type == Chem.StereoType.Atom_Tetrahedral),
        undefined_bonds=any(s.type == Chem.StereoType.Bond_Double for s in unspecified),
        any_defined=any(s.specified == Chem.StereoSpecified.Specified for s in stereo),
    )


def _collect_routes(ctx: _Context, *, second: bool = True) -> tuple[list[_Route], list[str], float]:
    """Routes of every site, their notes, and the weight of starting material left unreacted.

    With ``second``, products that can eliminate again under excess strong base are followed
    (:mod:`predictors.products._double`, one level deep).
    """
    routes, notes, unreacted = [], [], 0.0
    n_sites = len(ctx.substrate.leaving_groups)
    for lg in ctx.substrate.leaving_groups:
        try:
            site_routes, site_notes, left = _site_routes(ctx, lg)
        except ConfirmError as exc:
            msg = f"substrate: cannot enumerate products at atom {lg.alpha_idx}: {exc}"
            raise ChemistryError(msg) from exc
        routes += [replace(r, weight=r.weight / n_sites) for r in site_routes]
        notes += site_notes
        unreacted += left / n_sites
    if second:
        routes = add_second_eliminations(ctx, routes)
    return routes, notes, unreacted


def enumerate_products(substrate, *, reagent: str, solvent: str | None = None, temp_c: float = 25.0,
                       seed: int = 0xC0FFEE) -> ProductSet:
    """List every elimination and substitution product with a soft prior.

    Parameters
    ----------
    substrate : str or rdkit.Chem.Mol
        Isomeric SMILES or molecule; counter-ions are stripped with a note.
    reagent : str, keyword-only
        Reagent name or alias (see :func:`predictors.reagents.list_reagents`).
    solvent : str or None, keyword-only
        Solvent name; None uses the reagent's usual solvent.
    temp_c : float, keyword-only
        Reaction temperature (C), -100 to 600 (ester pyrolyses run at 300-500 C).
    seed : int, keyword-only
        Seed of the conformer embedding (results repeat for a given seed).

    Returns
    -------
    ProductSet
        Candidates sorted by prior (highest first), starting material included.

    Raises
    ------
    InputError
        Unknown reagent or solvent, temperature out of range.
    ChemistryError
        Unusable structure, no leaving group, or no path to any product.
    """
    reagent_obj = get_reagent(reagent)
    solvent_obj = _resolve_solvent(reagent_obj, solvent)
    temp = _check_temperature(temp_c)
    base = reagent_obj.is_base or (reagent_obj.pka_conj_acid or -99.0) >= 9.0
    perceived = perceive_substrate(
        substrate, acid=reagent_obj.is_acid, base=base and reagent_obj.kind != "activator",
        heat=reagent_obj.kind == "thermal", oxidant=reagent_obj.kind == "oxidant",
        activator=reagent_obj.activation in ("anti", "syn", "sn2"))
    ctx = _make_context(perceived, reagent_obj, solvent_obj, temp, seed)
    notes = list(perceived.notes)
    if solvent is None and solvent_obj is not None:
        notes.append(f"solvent not given: assumed {solvent_obj.name}")
    if reagent_obj.caution:
        notes.append(f"caution ({reagent_obj.name}): {reagent_obj.caution}")
    notes += [f"caution ({lg.kind}): {lg.caution}" for lg in perceived.leaving_groups if lg.caution]
    try:
        routes, site_notes, unreacted = _collect_routes(ctx)
    except ChemistryError as exc:
        if "MMFF" not in str(exc) and "embedding" not in str(exc):
            raise
        notes.append(f"3D analysis unavailable ({exc}); geometries listed without it")
        ctx = replace(ctx, undefined_bonds=True, models={}, reports=[])
        routes, site_notes, unreacted = _collect_routes(ctx)
    notes += site_notes
    if not routes:
        why = [n.split(": ", 1)[1] for n in site_notes if n.startswith("atom ")]
        reason = "; ".join(dict.fromkeys(why)) if why else "no beta-H and the reagent is not a nucleophile"
        raise ChemistryError(f"substrate: no elimination or substitution path with reagent "
                             f"{reagent_obj.name!r} for {perceived.smiles!r} ({reason})")
    total = sum(r.weight for r in routes) or 1.0
    sm_why = "unreacted starting material (incomplete conversion is common)"
    if unreacted > 0.0:
        sm_why = "unreacted starting material (the conditions are too mild for the path it needs)"
    sm = _Route(perceived.smiles, ("starting material",), _STARTING_MATERIAL_PRIOR * total / (
        1.0 - _STARTING_MATERIAL_PRIOR) + unreacted, "starting material", sm_why)
    scale = 1.0 / (total + sm.weight)
    routes = _label_regio(routes)
    if _mirror_smiles(perceived.smiles) == perceived.smiles:
        routes = _merge_mirror_images(routes)
    candidates = _merge(routes + [sm], scale)
    candidates.sort(key=lambda c: (-c.prior, c.smiles))
    return ProductSet(perceived.smiles, reagent_obj, tuple(candidates), tuple(dict.fromkeys(notes)),
                      beta_hydrogens=tuple(ctx.reports))

