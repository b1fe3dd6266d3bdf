"""SN2 with inversion, and which species can act as nucleophiles (reagent, counter-ion, solvent)."""

from __future__ import annotations

from rdkit import Chem

from predictors.products._editing import _add_fragment, _finish, _index, _remove, _tagged, _with_hydrogens
from predictors.products._records import _Context, _Route
from predictors.substrate import LeavingGroup

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


