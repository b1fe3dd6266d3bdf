"""Soft shares of each pathway at one leaving group (references.md section 8, common practice)."""

from __future__ import annotations

import math

from predictors.products._allylic import sn2_prime_factor
from predictors.products._records import _Context
from predictors.reagents import Reagent
from predictors.substrate import LeavingGroup

#: Elimination gains exp((T - 25 C) / this) over substitution (common practice).
_TEMP_SCALE_C = 60.0

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


_HALIDES = ("iodide", "bromide", "chloride")
#: Share of the amine's own alkylation (quaternisation) at a primary, unhindered carbon: a minor
#: path beside elimination (issue 18; common practice: tertiary amines and DBU alkylate primary
#: alkyl halides, the Menshutkin reaction).
_AMINE_ALKYLATION = 0.1
#: SN2 at a carbon that carries a second halogen, relative to a plain one: geminal dihalides are
#: poor SN2 substrates and with strong base eliminate instead (common practice).
_GEMINAL_SN2_FACTOR = 0.1


def _geminal_halide(ctx: _Context, lg: LeavingGroup) -> bool:
    """The alpha carbon carries another halogen besides the leaving group (a 1,1-dihalide)."""
    return any(n.GetAtomicNum() in (9, 17, 35, 53) and n.GetIdx() != lg.lg_atom_idx
               for n in ctx.substrate.mol.GetAtomWithIdx(lg.alpha_idx).GetNeighbors())


def _is_amine_base(reagent: Reagent) -> bool:
    """An amine or amidine base whose substitution product is its own alkylated (charged) form."""
    return reagent.kind == "base" and bool(reagent.nucleophile_smiles) and "+" in reagent.nucleophile_smiles


def _amine_alkylation(shares: dict[str, float], lg: LeavingGroup, why: str) -> tuple[dict[str, float], str]:
    others = {k: v for k, v in shares.items() if k != "SN2"}
    unhindered = lg.alpha_class in ("methyl", "primary") and "neopentyl-like" not in lg.alpha_flags
    if not unhindered:
        return others, why
    total = sum(others.values())
    if total <= 0.0:
        return {"SN2": 1.0}, why + "; the amine alkylates the carbon"
    out = {k: v * (1.0 - _AMINE_ALKYLATION) / total for k, v in others.items()}
    out["SN2"] = _AMINE_ALKYLATION
    return out, why + "; the amine itself alkylates a primary unhindered carbon (minor path)"


def _activated_shares(lg: LeavingGroup, reagent: Reagent) -> tuple[dict[str, float], str]:
    """Shares under a reagent that activates an alcohol or pulls off a halide (common practice)."""
    if reagent.activation == "ionise":
        if lg.kind not in _HALIDES:
            return {}, f"{reagent.name} pulls off halides, not a {lg.kind}"
        why = f"{reagent.name} pulls off the halide: carbocation, 1,2-shifts possible"
        return {"SN1": 0.6, "E1": 0.4}, why
    if lg.kind != "hydroxyl (activated)":
        return {}, f"{reagent.name} activates alcohols; the {lg.kind} is left alone"
    if reagent.activation == "anti":
        return {"E2": 1.0}, f"{reagent.name}: activated alcohol, anti E2 by the amine (no cation, no shifts)"
    if reagent.activation == "syn":
        return {"Ei": 1.0}, f"{reagent.name}: activated alcohol eliminates syn (Ei)"
    if lg.alpha_class == "tertiary":
        return {}, f"{reagent.name} needs an SN2, which a tertiary carbon does not undergo"
    return {"SN2": 1.0}, f"{reagent.name}: activated alcohol displaced with inversion (SN2)"


def _pathway_shares(ctx: _Context, lg: LeavingGroup) -> tuple[dict[str, float], str]:
    """Soft shares of each pathway at one site (references.md section 8, common practice)."""
    reagent, cls = ctx.reagent, lg.alpha_class
    cation_ok = cls in ("secondary", "tertiary") or lg.stabilised
    if lg.quality == "syn":
        shares, why = {"Ei": 1.0}, f"{lg.description}"
    elif reagent.kind in ("thermal", "oxidant"):
        shares, why = {}, f"{reagent.name} alone does not remove a {lg.kind}"
    elif reagent.kind == "activator":
        shares, why = _activated_shares(lg, reagent)
    elif lg.quality == "poor":
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
    if shares.get("SN2") and _geminal_halide(ctx, lg):
        shares = {**shares, "SN2": shares["SN2"] * _GEMINAL_SN2_FACTOR}
        why += "; a second halogen on the same carbon slows SN2"
    if _is_amine_base(reagent) and shares.get("SN2"):
        shares, why = _amine_alkylation(shares, lg, why)
    if "allylic" in lg.alpha_flags and reagent.is_nucleophile and reagent.activation != "sn2":
        base = shares.get("SN2") or (0.2 if cls == "tertiary" else 0.0)
        prime = base * sn2_prime_factor(ctx, lg)
        if prime > 0.0:
            shares = {**shares, "SN2'": prime}
            why += "; allylic: SN2' at the far end of the C=C competes"
    tilt = math.exp((ctx.temp_c - 25.0) / _TEMP_SCALE_C)
    shares = {k: v * (tilt if k.startswith("E") else 1.0) for k, v in shares.items()}
    if not math.isclose(tilt, 1.0):
        why += f", {ctx.temp_c:g} C tilts towards elimination"
    return shares, why


