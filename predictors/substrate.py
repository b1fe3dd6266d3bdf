"""Perceive a substrate: its leaving groups and the class of each alpha carbon.

The patterns come from the rule table in :mod:`predictors.reaction_rules`.
The *alpha carbon* bears the leaving group; a *beta carbon* is a neighbour of
it whose hydrogens can be removed in an elimination.
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

from predictors.errors import ChemistryError
from predictors.molecules import parse_molecule, read_structure, strip_counter_ions
from predictors.reaction_rules import rules_of_kind

__all__ = ["ALPHA_CLASSES", "LeavingGroup", "Substrate", "perceive_substrate", "beta_carbons"]

#: Classes of the carbon bearing the leaving group.
ALPHA_CLASSES = ("methyl", "primary", "secondary", "tertiary")
_FLAG_RULES = ("allylic", "benzylic", "neopentyl-like")


@dataclass(frozen=True)
class LeavingGroup:
    """One leaving group on one alpha carbon.

    Attributes
    ----------
    kind : str
        Name of the rule that found it (e.g. ``"bromide"``, ``"tosylate"``).
    alpha_idx : int
        Atom index of the alpha carbon (in the substrate's heavy-atom molecule;
        the same index in ``Chem.AddHs`` of it).
    lg_atom_idx : int
        Index of the leaving-group atom bonded to the alpha carbon.
    lg_atoms : tuple of int
        Every heavy atom that leaves.
    quality : str
        ``"good"``, ``"poor"`` (E1cB only) or ``"charged"``.
    needs : str
        ``"any"``, ``"acid"`` or ``"base"``.
    alpha_class : str
        One of :data:`ALPHA_CLASSES`.
    alpha_flags : tuple of str
        Any of ``"allylic"``, ``"benzylic"``, ``"neopentyl-like"``.
    zaitsev_multiplier : float
        From the rule table (below 1: Hofmann-like orientation).
    activated_betas : tuple of int
        Beta carbons carrying H next to a carbonyl, nitrile, nitro or sulfonyl
        group (E1cB gives the conjugated alkene towards them).
    min_temp_c : float
        Syn (Ei) groups: below this the elimination is too slow to expect.
    ts_ring : int
        Size of the cyclic transition state of a syn elimination (0 when not one).
    caution : str
        The rule's hazard note (empty when none).
    description : str
        The rule's one-line description.
    """

    kind: str
    alpha_idx: int
    lg_atom_idx: int
    lg_atoms: tuple[int, ...]
    quality: str
    needs: str
    alpha_class: str
    alpha_flags: tuple[str, ...]
    zaitsev_multiplier: float
    activated_betas: tuple[int, ...]
    min_temp_c: float = -100.0
    description: str = ""
    ts_ring: int = 0
    caution: str = ""

    @property
    def stabilised(self) -> bool:
        """True for allylic and benzylic alpha carbons."""
        return "allylic" in self.alpha_flags or "benzylic" in self.alpha_flags


@dataclass(frozen=True, eq=False)
class Substrate:
    """A checked substrate with its leaving groups.

    Attributes
    ----------
    mol : rdkit.Chem.Mol
        The organic part, counter-ions removed, hydrogens implicit.
    smiles : str
        Canonical isomeric SMILES of ``mol``.
    leaving_groups : tuple of LeavingGroup
    notes : tuple of str
        Stripped counter-ions, unreactive halides, several leaving groups...
    """

    mol: Chem.Mol
    smiles: str
    leaving_groups: tuple[LeavingGroup, ...]
    notes: tuple[str, ...]


def _to_mol(structure) -> Chem.Mol:
    return read_structure(structure, name="substrate")


def _fragment(mol: Chem.Mol, start: int, exclude: int) -> tuple[int, ...] | None:
    """Atoms reachable from ``start`` without passing ``exclude``; None when they form a ring with it."""
    seen, stack = {start}, [start]
    while stack:
        for nbr in mol.GetAtomWithIdx(stack.pop()).GetNeighbors():
            idx = nbr.GetIdx()
            if idx == exclude:
                continue
            if idx not in seen:
                seen.add(idx)
                stack.append(idx)
    if any(i != start and mol.GetBondBetweenAtoms(i, exclude) is not None for i in seen):
        return None
    return tuple(sorted(seen))


def _classify_alpha(mol: Chem.Mol, alpha: int) -> tuple[str, tuple[str, ...]]:
    cls = None
    for rule in rules_of_kind("alpha class"):
        name = rule.rule.name
        if name in ALPHA_CLASSES and cls is None and any(m[0] == alpha for m in rule.match(mol)):
            cls = name
    if cls is None:
        n_carbon = sum(1 for n in mol.GetAtomWithIdx(alpha).GetNeighbors() if n.GetAtomicNum() == 6)
        cls = ALPHA_CLASSES[min(n_carbon, 3)]
    flags = tuple(
        r.rule.name for r in rules_of_kind("alpha class")
        if r.rule.name in _FLAG_RULES and any(m[0] == alpha for m in r.match(mol))
    )
    return cls, flags


def beta_carbons(mol: Chem.Mol, alpha: int, lg_atom: int) -> tuple[int, ...]:
    """sp3 carbons next to ``alpha`` (not the leaving group) that carry hydrogen."""
    atom = mol.GetAtomWithIdx(alpha)
    return tuple(
        n.GetIdx() for n in atom.GetNeighbors()
        if n.GetIdx() != lg_atom and n.GetAtomicNum() == 6
        and n.GetHybridization() == Chem.HybridizationType.SP3 and n.GetTotalNumHs() > 0
    )


def _activated_betas(mol: Chem.Mol, alpha: int, lg_atom: int) -> tuple[int, ...]:
    acidic = {m[0] for r in rules_of_kind("activating group") for m in r.match(mol)}
    return tuple(b for b in beta_carbons(mol, alpha, lg_atom) if b in acidic)


def _needs_met(needs: str, conditions: frozenset[str]) -> bool:
    if needs == "any":
        return True
    if needs == "heat":
        return bool({"heat", "oxidant"} & conditions)
    return needs in conditions


def _find_leaving_groups(mol: Chem.Mol, *, conditions: frozenset[str]
                         ) -> tuple[list[LeavingGroup], list[str]]:
    groups: list[LeavingGroup] = []
    notes: list[str] = []
    claimed: set[tuple[int, int]] = set()
    for compiled in rules_of_kind("leaving group"):
        rule = compiled.rule
        for alpha, lg_atom in compiled.match(mol):
            if (alpha, lg_atom) in claimed or any(alpha in g.lg_atoms for g in groups):
                continue
            if not _needs_met(rule.needs, conditions):
                continue
            claimed.add((alpha, lg_atom))
            lg_atoms = _fragment(mol, lg_atom, alpha)
            if lg_atoms is None:
                notes.append(f"{rule.name} on atom {alpha} is part of a ring with its carbon: ring opening "
                             "is not modelled")
                continue
            cls, flags = _classify_alpha(mol, alpha)
            groups.append(LeavingGroup(
                kind=rule.name, alpha_idx=alpha, lg_atom_idx=lg_atom, lg_atoms=lg_atoms,
                quality=rule.quality, needs=rule.needs, alpha_class=cls, alpha_flags=flags,
                zaitsev_multiplier=rule.zaitsev_multiplier,
                activated_betas=_activated_betas(mol, alpha, lg_atom),
                min_temp_c=rule.min_temp_c, description=rule.description, ts_ring=rule.ts_ring,
                caution=rule.caution,
            ))
    return groups, notes


def perceive_substrate(structure, *, acid: bool = False, base: bool = True, heat: bool = False,
                       oxidant: bool = False, activator: bool = False) -> Substrate:
    """Check a substrate and find every leaving group on an sp3 carbon.

    Parameters
    ----------
    structure : str or rdkit.Chem.Mol
        SMILES or molecule; counter-ions are stripped (with a note).
    acid : bool, keyword-only
        Strong or moderate acid present: alcohols leave as water.
    base : bool, keyword-only
        Base present: OH, OR, OAc, NR2 beta to an anion-stabilising group leave by E1cB.
    heat : bool, keyword-only
        Pyrolysis conditions: amine oxides, sulfoxides, xanthates and esters leave by Ei.
    oxidant : bool, keyword-only
        Oxidant present: tertiary amines, selenides and sulfides are oxidised, then leave by Ei
        (implies ``heat``).
    activator : bool, keyword-only
        An alcohol-activating reagent (POCl3, Burgess, Martin, Mitsunobu) is present.

    Raises
    ------
    ChemistryError
        Unparsable or unsupported structure, or no leaving group.
    """
    raw = _to_mol(structure)
    mol, removed = strip_counter_ions(raw)
    mol = parse_molecule(mol)
    notes = []
    if removed:
        notes.append(f"counter-ion(s) removed: {', '.join(removed)}")
    flags = {"acid": acid, "base": base, "heat": heat, "oxidant": oxidant, "activator": activator}
    groups, more_notes = _find_leaving_groups(mol, conditions=frozenset(k for k, v in flags.items() if v))
    notes.extend(more_notes)
    unreactive = [m[0] for r in rules_of_kind("alpha class") if r.rule.name == "vinylic or aryl halide"
                  for m in r.match(mol)]
    if unreactive:
        notes.append(f"halogen on sp2 carbon (atom(s) {sorted(set(unreactive))}) is unreactive: ignored")
    if not groups:
        hint = " (only vinylic/aryl halides, which do not react)" if unreactive else ""
        raise ChemistryError(
            f"substrate: no leaving group found in {Chem.MolToSmiles(mol)!r}{hint}; looked for alkyl "
            "halides, sulfonates, trialkylammonium, alcohols under acid or an activating reagent, "
            "OH/OR/OAc/NR2 beta to C=O, CN, NO2 or SO2 under base, selenoxides, and (with heat or an "
            "oxidant) amine oxides, sulfoxides, xanthates, esters, amines, selenides and sulfides"
        )
    if len(groups) > 1:
        names = ", ".join(f"{g.kind} on atom {g.alpha_idx}" for g in groups)
        notes.append(f"{len(groups)} leaving groups ({names}): products are enumerated for each")
    return Substrate(mol=mol, smiles=Chem.MolToSmiles(mol), leaving_groups=tuple(groups), notes=tuple(notes))
