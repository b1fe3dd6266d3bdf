"""Enumerate every elimination and substitution product a substrate can give.

For each leaving group the enumerator builds products by editing a copy of
the substrate (explicit hydrogens, atoms tracked by their original index):

* **E2**: each distinct beta-H; its alkene geometry comes from the
  anti-periplanar conformer (:mod:`predictors.antiperiplanar`) when the
  substrate's configuration is defined, otherwise both geometries are listed.
  Syn elimination appears only as a noted minor path.
* **E1 / SN1**: the carbocation, its 1,2-hydride and 1,2-alkyl shifts to more
  stable cations, and the alkenes and substitution products of each cation.
* **E1cB**: the conjugated alkene (E and Z) and the deconjugated isomer.
* **SN2** with inversion; solvolysis by a nucleophilic solvent.
* The starting material as a component.

Products are deduplicated by canonical SMILES and keep every pathway tag.
Priors are soft shares from the rules of thumb in ``shared/references.md``
section 8 (common practice); each candidate has a one-line rationale.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

from rdkit import Chem
from rdkit.Chem import rdCIPLabeler

from predictors.antiperiplanar import (
    MAX_STRAIN_KCAL,
    ConformerSet,
    embed_conformers,
    find_periplanar,
    is_axial,
    local_model,
)
from predictors.core import PATHWAYS, Candidate
from predictors.errors import ChemistryError, ConfirmError, InputError
from predictors.reagents import Reagent, get_reagent, get_solvent
from predictors.substrate import LeavingGroup, Substrate, beta_carbons, perceive_substrate

__all__ = ["ProductSet", "enumerate_products"]

_GAS_CONSTANT_KCAL = 1.987204e-3  # kcal/(mol K)
_TAG = "_orig"
_NEW_TAG = 100_000
#: E over Z when no 3D analysis is possible: (Z)-2-butene lies about 1.0 kcal/mol
#: above (E)-2-butene (from memory; heats of formation).
_Z_PENALTY_KCAL = 1.0
#: Weight of a syn-periplanar E2 relative to anti from the same H (common practice: rare).
_SYN_FACTOR = 0.02
#: Weight of an E2 whose H cannot reach anti-periplanar (common practice: negligible).
_BLOCKED_FACTOR = 1.0e-4
#: Extra weight of an alkene conjugated with C=C, aryl, C=O or CN (common practice).
_CONJUGATION_BONUS = 10.0
#: Thermodynamic orientation of E1 (common practice: most substituted alkene major).
_E1_ZAITSEV_FACTOR = 7.0
#: Cation populations grow tenfold per step of stability (common practice: fast shifts
#: to the more stable cation dominate).
_CATION_STEP = 10.0
#: Weight of the deconjugated E1cB isomer relative to the conjugated one (common practice).
_DECONJUGATED_FACTOR = 0.05
#: Share of the prior kept for unreacted starting material (common practice).
_STARTING_MATERIAL_PRIOR = 0.1
#: Elimination gains exp((T - 25 C) / this) over substitution (common practice).
_TEMP_SCALE_C = 60.0
_MAX_SHIFTS = 2
#: Substrates larger than this (heavy atoms) are cut to a local model for the 3D work.
_LOCAL_MODEL_ABOVE = 20
_LOCAL_RADIUS = 2


@dataclass(frozen=True, eq=False)
class ProductSet:
    """Candidates for one substrate under one set of conditions.

    Attributes
    ----------
    substrate_smiles : str
        Canonical SMILES of the substrate (counter-ions removed).
    reagent : Reagent
    candidates : tuple of Candidate
        Sorted by prior, highest first; the starting material is included.
    notes : tuple of str
        What was assumed or could not be modelled.
    """

    substrate_smiles: str
    reagent: Reagent
    candidates: tuple[Candidate, ...]
    notes: tuple[str, ...]


@dataclass(frozen=True)
class _Outcome:
    smiles: str
    geometry: str | None = None
    n_subst: int | None = None
    conjugated: bool = False


@dataclass(frozen=True)
class _Route:
    smiles: str
    pathways: tuple[str, ...]
    weight: float
    label: str
    rationale: str
    geometry: str | None = None
    n_subst: int | None = None
    group: str = ""
    notes: tuple[str, ...] = ()
    regio: str | None = None


@dataclass(frozen=True, eq=False)
class _Context:
    substrate: Substrate
    mol_h: Chem.Mol
    reagent: Reagent
    solvent: Reagent | None
    temp_c: float
    seed: int
    undefined_atoms: frozenset[int]
    undefined_bonds: bool
    any_defined: bool
    models: dict = field(default_factory=dict)

    @property
    def rt_kcal(self) -> float:
        return _GAS_CONSTANT_KCAL * (self.temp_c + 273.15)


# ----------------------------------------------------------------------------- editing helpers


def _tagged(mol: Chem.Mol) -> Chem.RWMol:
    rw = Chem.RWMol(mol)
    for atom in rw.GetAtoms():
        atom.SetIntProp(_TAG, atom.GetIdx())
    return rw


def _index(mol: Chem.Mol, tag: int) -> int:
    for atom in mol.GetAtoms():
        if atom.HasProp(_TAG) and atom.GetIntProp(_TAG) == tag:
            return atom.GetIdx()
    raise KeyError(tag)


def _remove(rw: Chem.RWMol, tags) -> None:
    for idx in sorted((_index(rw, t) for t in tags), reverse=True):
        rw.RemoveAtom(idx)


def _with_hydrogens(mol: Chem.Mol, atoms) -> tuple[int, ...]:
    out = set(atoms)
    for idx in atoms:
        out.update(n.GetIdx() for n in mol.GetAtomWithIdx(idx).GetNeighbors() if n.GetAtomicNum() == 1)
    return tuple(sorted(out))


def _hydrogens(mol: Chem.Mol, idx: int) -> list[int]:
    return [n.GetIdx() for n in mol.GetAtomWithIdx(idx).GetNeighbors() if n.GetAtomicNum() == 1]


def _heavy_neighbour_tag(rw: Chem.Mol, idx: int, exclude: int) -> int | None:
    for nbr in rw.GetAtomWithIdx(idx).GetNeighbors():
        if nbr.GetIdx() != exclude and nbr.GetAtomicNum() > 1:
            return nbr.GetIntProp(_TAG)
    return None


def _add_fragment(rw: Chem.RWMol, site: int, fragment_smiles: str, *,
                  replace_atom: int | None = None) -> None:
    """Attach a ``*``-marked fragment at ``site``; with ``replace_atom`` that atom becomes its anchor."""
    frag = Chem.AddHs(Chem.MolFromSmiles(fragment_smiles))
    dummy = next(a.GetIdx() for a in frag.GetAtoms() if a.GetAtomicNum() == 0)
    anchor = frag.GetAtomWithIdx(dummy).GetNeighbors()[0].GetIdx()
    mapping = {}
    for atom in frag.GetAtoms():
        if atom.GetIdx() == dummy:
            continue
        new = Chem.Atom(atom.GetAtomicNum())
        new.SetFormalCharge(atom.GetFormalCharge())
        new.SetNoImplicit(True)
        if atom.GetIdx() == anchor and replace_atom is not None:
            new.SetIntProp(_TAG, rw.GetAtomWithIdx(replace_atom).GetIntProp(_TAG))
            rw.ReplaceAtom(replace_atom, new)
            mapping[anchor] = replace_atom
            continue
        new.SetIntProp(_TAG, _NEW_TAG + atom.GetIdx())
        mapping[atom.GetIdx()] = rw.AddAtom(new)
    for bond in frag.GetBonds():
        ends = (bond.GetBeginAtomIdx(), bond.GetEndAtomIdx())
        if dummy not in ends:
            rw.AddBond(mapping[ends[0]], mapping[ends[1]], bond.GetBondType())
    if replace_atom is None:
        rw.AddBond(site, mapping[anchor], Chem.BondType.SINGLE)


def _is_conjugated(mol: Chem.Mol, a: int, b: int) -> bool:
    for idx, other in ((a, b), (b, a)):
        for nbr in mol.GetAtomWithIdx(idx).GetNeighbors():
            if nbr.GetIdx() == other:
                continue
            if nbr.GetIsAromatic() or any(
                bd.GetBondType() in (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE) for bd in nbr.GetBonds()
            ):
                return True
    return False


def _finish(rw: Chem.RWMol, *, bond_tags: tuple[int, int] | None = None,
            stereo: tuple[int, int, bool] | None = None) -> _Outcome | None:
    """Sanitise an edited molecule; set the new C=C geometry; return SMILES and CIP label."""
    mol = rw.GetMol()
    try:
        Chem.SanitizeMol(mol)
        mol = Chem.RemoveHs(mol)
    except (ValueError, RuntimeError):
        return None
    if bond_tags is None:
        return _Outcome(Chem.MolToSmiles(mol))
    a, b = (_index(mol, t) for t in bond_tags)
    n_subst = sum(mol.GetAtomWithIdx(i).GetDegree() - 1 for i in (a, b))
    conjugated = _is_conjugated(mol, a, b)
    if stereo is not None:
        bond = mol.GetBondBetweenAtoms(a, b)
        ends = (_index(mol, stereo[0]), _index(mol, stereo[1]))
        bond.SetStereoAtoms(*(ends if bond.GetBeginAtomIdx() == a else ends[::-1]))
        bond.SetStereo(Chem.BondStereo.STEREOCIS if stereo[2] else Chem.BondStereo.STEREOTRANS)
        Chem.SetDoubleBondNeighborDirections(mol)
    mol.GetAtomWithIdx(a).SetAtomMapNum(1)
    mol.GetAtomWithIdx(b).SetAtomMapNum(2)
    again = Chem.MolFromSmiles(Chem.MolToSmiles(mol))
    mapped = {atom.GetAtomMapNum(): atom.GetIdx() for atom in again.GetAtoms() if atom.GetAtomMapNum()}
    rdCIPLabeler.AssignCIPLabels(again)
    new_bond = again.GetBondBetweenAtoms(mapped[1], mapped[2])
    geometry = new_bond.GetProp("_CIPCode") if new_bond.HasProp("_CIPCode") else None
    for atom in again.GetAtoms():
        atom.SetAtomMapNum(0)
    geometry = geometry if geometry in ("E", "Z") else None
    return _Outcome(Chem.MolToSmiles(again), geometry, n_subst, conjugated)


def _alkene_outcomes(rw: Chem.RWMol, a: int, b: int, *, cis_pairs=None) -> list[_Outcome]:
    """Outcomes for a new C=C between atoms ``a`` and ``b`` (indices in ``rw``).

    ``cis_pairs`` (original indices) fixes the geometry; None lists both.
    """
    ta, tb = rw.GetAtomWithIdx(a).GetIntProp(_TAG), rw.GetAtomWithIdx(b).GetIntProp(_TAG)
    sa, sb = _heavy_neighbour_tag(rw, a, b), _heavy_neighbour_tag(rw, b, a)
    if sa is None or sb is None:
        choices = [None]
    elif cis_pairs is not None:
        choices = [(sa, sb, (sa, sb) in cis_pairs)]
    else:
        choices = [(sa, sb, True), (sa, sb, False)]
    outcomes = [_finish(rw, bond_tags=(ta, tb), stereo=c) for c in choices]
    unique = {o.smiles: o for o in outcomes if o is not None}
    return list(unique.values())


def _geometry_weight(outcome: _Outcome, rt_kcal: float) -> float:
    return math.exp(-_Z_PENALTY_KCAL / rt_kcal) if outcome.geometry == "Z" else 1.0


def _orientation_weight(outcome: _Outcome, factor: float) -> float:
    weight = factor ** (outcome.n_subst or 0)
    return weight * (_CONJUGATION_BONUS if outcome.conjugated else 1.0)


# ----------------------------------------------------------------------------- pathway shares


def _is_protic(ctx: _Context) -> bool:
    return any(r is not None and r.solvent_class == "protic" for r in (ctx.solvent, ctx.reagent))


def _base_shares(lg: LeavingGroup, reagent: Reagent, protic: bool) -> tuple[dict[str, float], str]:
    cls, bulky = lg.alpha_class, reagent.bulk == "large"
    if reagent.is_strong_base:
        kind = f"{'bulky' if bulky else 'small'} strong base"
        table = {
            "methyl": {"SN2": 1.0},
            "primary": {"E2": 0.85, "SN2": 0.15} if bulky else {"SN2": 0.8, "E2": 0.2},
            "secondary": {"E2": 0.95, "SN2": 0.05} if bulky else {"E2": 0.75, "SN2": 0.25},
            "tertiary": {"E2": 0.9, "SN1": 0.05, "E1": 0.05} if protic else {"E2": 1.0},
        }
        return table[cls], f"{kind} on a {cls} carbon"
    kind = "good nucleophile, weak base" if reagent.is_nucleophile else "weak base"
    if cls in ("methyl", "primary"):
        shares = {"SN2": 0.95, "E2": 0.05}
    elif cls == "secondary":
        shares = {"SN2": 0.8, "E2": 0.2} if reagent.is_nucleophile else {"E2": 0.9, "SN2": 0.1}
        if lg.stabilised and protic:
            shares.update({"SN1": 0.2, "E1": 0.05})
    else:
        shares = {"SN1": 0.5, "E1": 0.3, "E2": 0.2} if protic else {"E2": 0.8, "E1": 0.1, "SN1": 0.1}
    return shares, f"{kind} on a {cls} carbon"


def _pathway_shares(ctx: _Context, lg: LeavingGroup) -> tuple[dict[str, float], str]:
    """Soft shares of each pathway at one site (references.md section 8, common practice)."""
    reagent, cls = ctx.reagent, lg.alpha_class
    cation_ok = cls in ("secondary", "tertiary") or lg.stabilised
    if lg.quality == "poor":
        shares, why = {"E1cB": 1.0}, "poor leaving group beta to an anion-stabilising group: E1cB"
    elif lg.quality == "charged" and reagent.is_base:
        shares, why = {"E2": 0.95, "SN2": 0.05}, "charged leaving group with base: Hofmann elimination"
    elif reagent.is_acid:
        trap = reagent.counter_ion_nucleophilicity == "high"
        if cation_ok:
            shares = {"SN1": 0.7, "E1": 0.3} if trap else {"E1": 0.85, "SN1": 0.15}
            why = f"acid ionises the {cls} carbon: carbocation (E1/SN1)"
        else:
            shares = {"SN2": 0.8, "E2": 0.2} if trap else {"E2": 0.7, "SN2": 0.3}
            why = f"acid on a {cls} carbon: no free cation, concerted loss of the leaving group"
    elif reagent.kind == "solvent" or (reagent.kind == "acid" and not reagent.is_acid):
        shares = {"SN1": 0.7, "E1": 0.3} if cation_ok else {"SN2": 0.9, "E2": 0.1}
        why = f"solvolysis of a {cls} carbon"
    else:
        shares, why = _base_shares(lg, reagent, _is_protic(ctx))
    tilt = math.exp((ctx.temp_c - 25.0) / _TEMP_SCALE_C)
    shares = {k: v * (tilt if k.startswith("E") else 1.0) for k, v in shares.items()}
    if not math.isclose(tilt, 1.0):
        why += f", {ctx.temp_c:g} C tilts towards elimination"
    return shares, why


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


# ----------------------------------------------------------------------------- substitution


def _nucleophiles(ctx: _Context, *, for_cation: bool) -> list[tuple[str, str, bool]]:
    """(fragment SMILES, name, is solvolysis) of each species that can substitute."""
    out = []
    reagent, solvent = ctx.reagent, ctx.solvent
    if reagent.is_nucleophile and reagent.nucleophile_smiles:
        out.append((reagent.nucleophile_smiles, reagent.name, reagent.kind == "solvent"))
    elif reagent.is_acid and reagent.counter_ion_nucleophilicity == "high" and reagent.nucleophile_smiles:
        out.append((reagent.nucleophile_smiles, f"{reagent.name} counter-ion", False))
    if (for_cation or not out) and solvent is not None and solvent.solvent_class == "protic" \
            and solvent.nucleophile_smiles and solvent is not reagent:
        out.append((solvent.nucleophile_smiles, solvent.name, True))
    if for_cation and reagent.is_acid and not out:
        out.append(("*O", "water", True))
    seen, unique = set(), []
    for item in out:
        if item[0] not in seen:
            seen.add(item[0])
            unique.append(item)
    return unique


def _sn2_routes(ctx: _Context, lg: LeavingGroup) -> list[_Route]:
    if lg.alpha_class == "tertiary":
        return []
    routes = []
    neopentyl = "neopentyl-like" in lg.alpha_flags
    for frag, name, solvolysis in _nucleophiles(ctx, for_cation=False):
        rw = _tagged(ctx.mol_h)
        _add_fragment(rw, lg.alpha_idx, frag, replace_atom=lg.lg_atom_idx)
        rest = [i for i in _with_hydrogens(ctx.mol_h, lg.lg_atoms) if i != lg.lg_atom_idx]
        _remove(rw, rest)
        rw.GetAtomWithIdx(_index(rw, lg.alpha_idx)).InvertChirality()
        outcome = _finish(rw)
        if outcome is None:
            continue
        notes = [f"solvolysis by {name}"] if solvolysis else []
        if neopentyl:
            notes.append("neopentyl-like carbon: SN2 very slow")
        weight = 0.05 if neopentyl else 1.0
        # inversion is a statement about a configuration: only where the substrate gives one
        configured = ctx.mol_h.GetAtomWithIdx(lg.alpha_idx).GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED
        if configured:
            why = f"SN2 by {name} with inversion at the {lg.alpha_class} carbon"
            label = f"substitution ({name}), inversion"
        else:
            why = (f"SN2 by {name} at the {lg.alpha_class} carbon (no configuration given there, "
                   "so none is implied for the product)")
            label = f"substitution ({name})"
        routes.append(_Route(outcome.smiles, ("SN2",), weight, label, why,
                             group=f"SN2@{lg.alpha_idx}", notes=tuple(notes)))
    return routes


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
    return family


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
            routes += _sn1_from_cation(ctx, cat, s, share * shares["SN1"], notes, label_tail, group)
    return routes


def _e1_from_cation(ctx, cat, site, share, notes, label_tail, group) -> list[_Route]:
    items = [(o, n_h * _geometry_weight(o, ctx.rt_kcal) * _orientation_weight(o, _E1_ZAITSEV_FACTOR))
             for o, n_h in _deprotonations(cat, site)]
    total = sum(w for _, w in items) or 1.0
    why = (f"E1 via the {_class_name(cat, site)} cation: thermodynamic mixture, more substituted and E "
           "alkenes favoured")
    return [_Route(o.smiles, ("E1",), share * w / total, "alkene" + label_tail, why, o.geometry, o.n_subst,
                   group, notes) for o, w in items]


def _sn1_from_cation(ctx, cat, site, share, notes, label_tail, group) -> list[_Route]:
    nucs = _nucleophiles(ctx, for_cation=True)
    # An added nucleophile outcompetes the solvent (common practice): solvent weight 0.25 beside it.
    weights = [0.25 if solv and any(not other for _, _, other in nucs) else 1.0 for _, _, solv in nucs]
    routes = []
    for (frag, name, solvolysis), nuc_weight in zip(nucs, weights, strict=True):
        outcomes = _captures(ctx, cat, site, frag)
        extra = (f"solvolysis by {name}",) if solvolysis else ()
        config = "both configurations" if len(outcomes) > 1 else "configuration lost"
        for o in outcomes:
            why = f"SN1: {name} traps the {_class_name(cat, site)} cation ({config})"
            weight = share * nuc_weight / (sum(weights) * len(outcomes))
            routes.append(_Route(o.smiles, ("SN1",), weight,
                                 f"substitution ({name}){label_tail}", why, group=group, notes=notes + extra))
    return routes


# ----------------------------------------------------------------------------- assembly


def _site_routes(ctx: _Context, lg: LeavingGroup) -> tuple[list[_Route], list[str]]:
    shares, why = _pathway_shares(ctx, lg)
    betas = beta_carbons(ctx.substrate.mol, lg.alpha_idx, lg.lg_atom_idx)
    notes = []
    if not betas and lg.quality != "poor":
        notes.append(f"no beta-H next to atom {lg.alpha_idx} ({lg.kind}): elimination impossible, "
                     "substitution only")
    by_path: dict[str, list[_Route]] = {}
    if shares.get("E1cB"):
        by_path["E1cB"] = _e1cb_routes(ctx, lg, betas)
    if shares.get("E2") and betas:
        by_path["E2"] = _e2_routes(ctx, lg, betas)
    if shares.get("SN2"):
        by_path["SN2"] = _sn2_routes(ctx, lg)
    if shares.get("E1") or shares.get("SN1"):
        cation = _cation_routes(ctx, lg, shares)
        for tag in ("E1", "SN1"):
            by_path[tag] = [r for r in cation if tag in r.pathways]
    live = {k: v for k, v in by_path.items() if v}
    total_share = sum(shares[k] for k in live) or 1.0
    routes = []
    for tag, items in live.items():
        scale = shares[tag] / total_share / (sum(r.weight for r in items) or 1.0)
        routes += [replace(r, weight=r.weight * scale, rationale=f"{r.rationale} [{why}]") for r in items]
    return routes, notes


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
            or not -100.0 <= temp_c <= 300.0:
        raise InputError(f"temp_c: expected a temperature between -100 and 300 C, got {temp_c!r}")
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


def _collect_routes(ctx: _Context) -> tuple[list[_Route], list[str]]:
    routes, notes = [], []
    n_sites = len(ctx.substrate.leaving_groups)
    for lg in ctx.substrate.leaving_groups:
        try:
            site_routes, site_notes = _site_routes(ctx, lg)
        except ConfirmError as exc:
            msg = f"substrate: cannot enumerate products at atom {lg.alpha_idx}: {exc}"
            raise ChemistryError(msg) from exc
        routes += [replace(r, weight=r.weight / n_sites) for r in site_routes]
        notes += site_notes
    return routes, notes


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
        Reaction temperature (C), -100 to 300.
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
    perceived = perceive_substrate(substrate, acid=reagent_obj.is_acid, base=base)
    ctx = _make_context(perceived, reagent_obj, solvent_obj, temp, seed)
    notes = list(perceived.notes)
    if solvent is None and solvent_obj is not None:
        notes.append(f"solvent not given: assumed {solvent_obj.name}")
    try:
        routes, site_notes = _collect_routes(ctx)
    except ChemistryError as exc:
        if "MMFF" not in str(exc) and "embedding" not in str(exc):
            raise
        notes.append(f"3D analysis unavailable ({exc}); geometries listed without it")
        ctx = replace(ctx, undefined_bonds=True, models={})
        routes, site_notes = _collect_routes(ctx)
    notes += site_notes
    if not routes:
        raise ChemistryError(f"substrate: no elimination or substitution path with reagent "
                             f"{reagent_obj.name!r} for {perceived.smiles!r} (no beta-H and the reagent "
                             "is not a nucleophile)")
    total = sum(r.weight for r in routes) or 1.0
    sm = _Route(perceived.smiles, ("starting material",), _STARTING_MATERIAL_PRIOR * total / (
        1.0 - _STARTING_MATERIAL_PRIOR), "starting material", "unreacted starting material (incomplete "
        "conversion is common)")
    scale = 1.0 / (total + sm.weight)
    routes = _label_regio(routes)
    if _mirror_smiles(perceived.smiles) == perceived.smiles:
        routes = _merge_mirror_images(routes)
    candidates = _merge(routes + [sm], scale)
    candidates.sort(key=lambda c: (-c.prior, c.smiles))
    return ProductSet(perceived.smiles, reagent_obj, tuple(candidates), tuple(dict.fromkeys(notes)))
