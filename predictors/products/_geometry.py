"""The 3D model of one reaction site and the periplanar conformer of every beta-H.

Conformers are embedded once per leaving group (large substrates are cut to a
local model around the site), both chairs of a ring at the site are built on
purpose and its twist-boats when needed (:func:`predictors.antiperiplanar.add_ring_forms`).
Each beta-H is then placed anti (E2) or syn (Ei) to the leaving group in its
cheapest conformer; the cost of that conformer above the global minimum enters
the prior as a Boltzmann factor, both between the alkenes of one path and for
the path as a whole (:func:`path_access`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from rdkit import Chem

from predictors.antiperiplanar import (
    MAX_STRAIN_KCAL,
    ConformerSet,
    PeriplanarResult,
    add_ring_forms,
    embed_conformers,
    find_periplanar,
    is_axial,
    local_model,
)
from predictors.products._editing import _hydrogens
from predictors.products._records import BetaHydrogenReport, _Context
from predictors.ring_forms import ring_form, saturated_six_rings
from predictors.substrate import LeavingGroup, beta_carbons

#: Substrates larger than this (heavy atoms) are cut to a local model for the 3D work.
_LOCAL_MODEL_ABOVE = 20
_LOCAL_RADIUS = 2
#: Tolerance (deg) of the syn-periplanar test of Ei eliminations, by the size of the cyclic
#: transition state (common practice; March's Advanced Organic Chemistry, from memory): the
#: nearly planar five-membered rings of Cope, selenoxide and sulfoxide eliminations need the H
#: within about 30 deg of the leaving atom; the six-membered rings of ester, xanthate and
#: sulfamate (Burgess) eliminations reach a gauche H (about 60 deg) as well.
SYN_TOLERANCE_DEG = {5: 35.0, 6: 65.0}


def use_3d(ctx: _Context, lg: LeavingGroup, betas: tuple[int, ...]) -> bool:
    """Whether the configuration around the site is defined well enough for a 3D answer."""
    if ctx.undefined_bonds:
        return False
    if not ctx.undefined_atoms:
        return True
    if ctx.undefined_atoms != {lg.alpha_idx} or ctx.substrate.mol.GetAtomWithIdx(lg.alpha_idx).IsInRing():
        return False
    potential = {si.centeredOn for si in Chem.FindPotentialStereo(ctx.substrate.mol)}
    return not (set(betas) & potential)


@dataclass(frozen=True, eq=False)
class SiteModel:
    """Conformers of the substrate (or of a local model around one site) and the index map."""

    confs: ConformerSet
    mapping: dict

    def idx(self, original: int) -> int:
        return self.mapping[original]

    def original(self, model_idx: int) -> int:
        return next(k for k, v in self.mapping.items() if v == model_idx)


def site_model(ctx: _Context, lg: LeavingGroup) -> SiteModel:
    """Embed once per site, with the ring forms the periplanar tests need."""
    key = ("model", lg.alpha_idx)
    if key not in ctx.models:
        mol_3d = Chem.Mol(ctx.mol_h)
        # One undefined centre (the alpha carbon, see use_3d): either mirror image gives the same
        # answers, but every conformer must be of the same one.
        for idx in ctx.undefined_atoms:
            mol_3d.GetAtomWithIdx(idx).SetChiralTag(Chem.ChiralType.CHI_TETRAHEDRAL_CW)
        Chem.AssignStereochemistry(mol_3d, cleanIt=True, force=True)
        for atom in mol_3d.GetAtoms():
            if atom.GetAtomicNum() == 34:
                atom.SetAtomicNum(16)  # MMFF94 has no selenium: sulfur stands in for the geometry
        betas = beta_carbons(ctx.substrate.mol, lg.alpha_idx, lg.lg_atom_idx)
        if ctx.substrate.mol.GetNumHeavyAtoms() > _LOCAL_MODEL_ABOVE:
            mol_3d, mapping = local_model(mol_3d, centre=[lg.alpha_idx, *betas], radius=_LOCAL_RADIUS)
        else:
            mapping = {i: i for i in range(mol_3d.GetNumAtoms())}
        n_conf = 6 if mol_3d.GetNumHeavyAtoms() <= 20 else 4
        if saturated_six_rings(mol_3d, [mapping[lg.alpha_idx]]):
            n_conf = 3  # the chairs are built on purpose below; the embedding only adds variety
        confs = embed_conformers(mol_3d, n_conformers=n_conf, seed=ctx.seed)
        confs = add_ring_forms(confs, around=[mapping[lg.alpha_idx], *(mapping[b] for b in betas)],
                               lg_idx=mapping[lg.lg_atom_idx], seed=ctx.seed)
        ctx.models[key] = SiteModel(confs, mapping)
    return ctx.models[key]


def beta_hydrogens(ctx: _Context, beta: int) -> list[tuple[int, int]]:
    """(H index, multiplicity): a methyl's three H are one rotor, listed once."""
    hs = _hydrogens(ctx.mol_h, beta)
    return [(hs[0], 3)] if len(hs) == 3 else [(h, 1) for h in hs]


def periplanar_results(ctx: _Context, lg: LeavingGroup, betas, *, mode: str = "anti"
                       ) -> tuple[dict[int, PeriplanarResult], float]:
    """Periplanar result for every beta-H (``mode`` ``"anti"`` or ``"syn"``) and the strain reference.

    The reference is the lowest energy seen (every conformer and every relaxed geometry).
    Each result is also recorded as a :class:`BetaHydrogenReport` in ``ctx.reports``.
    """
    key = ("periplanar", lg.alpha_idx, mode, tuple(betas))
    if key in ctx.models:
        return ctx.models[key]
    model = site_model(ctx, lg)
    if mode == "anti":
        target, tolerance = 180.0, {}
    else:
        target, tolerance = 0.0, {"tolerance_deg": SYN_TOLERANCE_DEG[lg.ts_ring or 5]}
    results = {}
    for beta in betas:
        for h_idx, _ in beta_hydrogens(ctx, beta):
            results[h_idx] = find_periplanar(
                model.confs, h_idx=model.idx(h_idx), beta_idx=model.idx(beta),
                alpha_idx=model.idx(lg.alpha_idx), lg_idx=model.idx(lg.lg_atom_idx), target_deg=target,
                **tolerance)
    finite = [r.relaxed_kcal for r in results.values() if math.isfinite(r.relaxed_kcal)]
    reference = min([model.confs.min_energy_kcal, *finite])
    for beta in betas:
        for h_idx, _ in beta_hydrogens(ctx, beta):
            res = results[h_idx]
            ctx.reports.append(BetaHydrogenReport(
                alpha_idx=lg.alpha_idx, beta_idx=beta, h_idx=h_idx, mode=mode, conformer=res.conformer,
                energy_above_min_kcal=round(strain_of(res, reference), 2), ring_flip=res.ring_flip,
                reachable=res.periplanar and strain_of(res, reference) <= MAX_STRAIN_KCAL,
                dihedral_deg=round(res.dihedral_deg, 1)))
    ctx.models[key] = (results, reference)
    return results, reference


def strain_of(result: PeriplanarResult, reference_kcal: float) -> float:
    """Energy of the periplanar conformer above the reference (kcal/mol), at most 99."""
    if not math.isfinite(result.energy_kcal):
        return 99.0
    return min(max(0.0, result.energy_kcal - reference_kcal), 99.0)


def conformer_note(result: PeriplanarResult, strain_kcal: float, mode: str) -> str:
    """One line: which conformer puts this H periplanar and what it costs."""
    where = {
        "chair": "in the lowest chair",
        "flipped chair": "only after a ring flip (the other chair)",
        "twist-boat": "only in a twist-boat (neither chair)",
        "distorted ring": "only with the ring distorted out of its chair",
        "rotamer": "in a staggered rotamer" if mode == "anti" else "in an eclipsed rotamer",
    }[result.conformer]
    return f"H {mode}-periplanar {where}, {strain_kcal:.1f} kcal/mol above the global minimum (MMFF94)"


#: An H that cannot reach periplanar within MAX_STRAIN_KCAL is weighted as if it cost at least this
#: much (its own cost when higher): below every reachable H, listed but negligible.
BLOCKED_KCAL = 12.0


def periplanar_weight(ctx: _Context, result: PeriplanarResult, strain_kcal: float, mult: int,
                      mode: str) -> tuple[float, str, tuple]:
    """Weight of one H's elimination (``mode`` "anti" or "syn"), the reason and the note: its
    Boltzmann factor when it reaches periplanar within MAX_STRAIN_KCAL, else that of BLOCKED_KCAL."""
    if result.periplanar and strain_kcal <= MAX_STRAIN_KCAL:
        return (mult * math.exp(-strain_kcal / ctx.rt_kcal),
                f"H {mode}-periplanar at {strain_kcal:.1f} kcal/mol strain",
                (conformer_note(result, strain_kcal, mode),))
    return (mult * math.exp(-max(strain_kcal, BLOCKED_KCAL) / ctx.rt_kcal),
            f"no {mode}-periplanar arrangement for this H within reach",
            (f"H cannot reach {mode}-periplanar: minor at best",))


def path_access(ctx: _Context, lg: LeavingGroup, betas, *, mode: str) -> float:
    """Boltzmann factor of the ring change the path needs (1 when some H is periplanar without one).

    Only a ring that has to leave its lowest chair slows the whole path: open-chain rotamer
    costs, which vacuum MMFF94 overstates and which a competing path pays in its own way,
    only rank the alkenes of the path against each other.
    """
    results, reference = periplanar_results(ctx, lg, betas, mode=mode)
    costs = [strain_of(r, reference) if r.ring_flip else 0.0 for r in results.values() if r.periplanar]
    if not costs:
        return 0.0
    return math.exp(-min(costs) / ctx.rt_kcal)


def axial_access(ctx: _Context, lg: LeavingGroup) -> float:
    """Boltzmann factor of the lowest chair with the leaving group axial, for a ring carbon.

    Backside attack on a cyclohexyl carbon runs through the chair with the leaving group
    axial (the nucleophile comes in equatorially; axial approach meets the syn-axial H): axial
    leaving groups are substituted faster (common practice; e.g. cis- over
    trans-4-tert-butylcyclohexyl sulfonates). 1 when the carbon is not in such a ring.
    """
    model = site_model(ctx, lg)
    alpha, leaving = model.idx(lg.alpha_idx), model.idx(lg.lg_atom_idx)
    rings = saturated_six_rings(model.confs.mol, [alpha])
    if not rings:
        return 1.0
    confs = model.confs
    energies = [e for cid, e in zip(confs.conf_ids, confs.energies_kcal, strict=True)
                if ring_form(confs.mol, rings[0], cid) == "chair"
                and is_axial(confs.mol, ring_atom=alpha, substituent=leaving, conf_id=cid)]
    if not energies:
        return math.exp(-MAX_STRAIN_KCAL / ctx.rt_kcal)
    return math.exp(-max(0.0, min(energies) - confs.min_energy_kcal) / ctx.rt_kcal)


def apply_conformer_costs(ctx: _Context, lg: LeavingGroup, betas, shares: dict[str, float]
                          ) -> tuple[dict[str, float], list[str]]:
    """Scale the shares of the paths that need a particular conformer by its Boltzmann factor.

    E2 pays for its cheapest anti-periplanar conformer, Ei for its cheapest syn one, SN2 at a
    six-membered-ring carbon for the chair with the leaving group axial; a cost above
    :data:`MAX_STRAIN_KCAL` counts as that bound (the path stays listed). Paths that need no
    particular conformer (E1, SN1, E1cB) are unchanged, so a costly conformer hands share to them.
    """
    if not betas or not use_3d(ctx, lg, tuple(betas)):
        return shares, []
    floor = math.exp(-MAX_STRAIN_KCAL / ctx.rt_kcal)
    out, notes = dict(shares), []
    for path, mode in (("E2", "anti"), ("Ei", "syn")):
        if not out.get(path):
            continue
        access = max(path_access(ctx, lg, betas, mode=mode), floor)
        out[path] *= access
        cost = -math.log(access) * ctx.rt_kcal
        if cost > 1.0:
            slower = "more than 3000" if access <= floor else f"about {1.0 / access:.2g}"
            notes.append(f"{path} at atom {lg.alpha_idx} needs a conformer {cost:.1f} kcal/mol above the "
                         f"minimum (MMFF94): {slower}-fold slower at {ctx.temp_c:g} C than if an H were "
                         f"{mode}-periplanar in the lowest conformer")
    if out.get("SN2"):
        out["SN2"] *= max(axial_access(ctx, lg), floor)
    return out, notes
