"""Exchangeable (OH, NH, SH), aldehyde and alkyne protons: tabulated values.

Exchangeable protons depend on the NMR solvent: the ``special`` rows of
``data/sp3_increments.csv`` hold CDCl3 values (also used when the solvent is not known), rows
``DMSO-d6:<group>`` the values in DMSO-d6 (hydrogen-bonded to the solvent: alcohol OH 4.3-5.5,
amide NH 7.5-10 ppm), and in D2O or CD3OD the proton exchanges with the solvent deuterium and
its intensity goes into the HDO line (``exchanged:<solvent>`` rows), flagged ``"exchanged"``.
"""

from __future__ import annotations

from rdkit import Chem

from predictors.shifts.substituents import _double_partner, _is_carbonyl, _is_unsaturated_carbon
from predictors.shifts.tables import ShiftEstimate, _has_special, _special, _unknown_shift

#: Lower-case spellings of the NMR solvents with their own rows.
_SOLVENT_NAMES = {
    "cdcl3": "CDCl3", "chloroform-d": "CDCl3", "chloroform": "CDCl3",
    "dmso-d6": "DMSO-d6", "dmso": "DMSO-d6", "(cd3)2so": "DMSO-d6", "dmso-d": "DMSO-d6",
    "d2o": "D2O", "deuterium oxide": "D2O", "water-d2": "D2O",
    "cd3od": "CD3OD", "methanol-d4": "CD3OD", "meod": "CD3OD", "methanol-d": "CD3OD",
}
_EXCHANGING = ("D2O", "CD3OD")


def nmr_solvent_key(solvent: str | None) -> tuple[str | None, tuple[str, ...]]:
    """Canonical name of an NMR solvent with its own exchangeable-H rows, or None (CDCl3 values).

    Returns
    -------
    key : str or None
        ``"CDCl3"``, ``"DMSO-d6"``, ``"D2O"``, ``"CD3OD"`` or None (not given or not known).
    flags : tuple of str
        A note when a named solvent is not known.
    """
    if solvent is None or not str(solvent).strip():
        return None, ()
    key = _SOLVENT_NAMES.get(str(solvent).strip().lower())
    if key is None:
        return None, (f"NMR solvent {solvent!r} not tabulated: CDCl3 values for exchangeable H",)
    return key, ()


def _exchangeable_shift(mol, parent, solvent: str | None = None) -> ShiftEstimate:
    group, label, flags = _exchangeable_group(parent)
    key, notes = nmr_solvent_key(solvent)
    flags += notes
    if key in _EXCHANGING:
        note = f"exchanged: OH/NH/SH exchange with {key} and appear in the HDO line"
        return _special(f"exchanged:{key}", label, exchangeable=True, flags=flags + (note,))
    if key == "DMSO-d6" and _has_special(f"DMSO-d6:{group}"):
        return _special(f"DMSO-d6:{group}", label, exchangeable=True, flags=flags)
    return _special(group, label, exchangeable=True, flags=flags)


def _exchangeable_group(parent) -> tuple[str, str, tuple[str, ...]]:
    heavy = [n for n in parent.GetNeighbors() if n.GetAtomicNum() > 1]
    if parent.GetSymbol() == "S":
        return "SH", "SH", ()
    if parent.GetSymbol() == "O":
        if not heavy:
            return "OH_alcohol", "OH", ("water",)
        x = heavy[0]
        if x.GetIsAromatic() and _chelating_neighbour(x):
            return "OH_chelated", "OH", ()
        group = ("OH_acid" if _is_carbonyl(x) else "OH_phenol" if x.GetIsAromatic()
                 else "OH_enol" if _is_unsaturated_carbon(x) else "OH_alcohol")
        return group, "OH", ()
    if parent.GetIsAromatic():
        return "NH_aromatic", "NH", ()
    if _is_pyridone_nh(parent, heavy):
        return "NH_pyridone", "NH", ()
    if any(_is_carbonyl(n) for n in heavy):
        return "NH_amide", "NH", ()
    if any(n.GetIsAromatic() for n in heavy):
        if any(n.GetIsAromatic() and _chelating_neighbour(n) for n in heavy):
            return "NH_aryl_chelated", "NH", ()
        return "NH_aryl", "NH", ()
    return "NH_amine", "NH", ()


def _chelating_neighbour(ring_carbon) -> bool:
    """True when an aromatic ring atom next to ``ring_carbon`` carries a C=O group or a nitro
    group: an OH or NH on ``ring_carbon`` then forms a six-membered intramolecular hydrogen bond
    (salicylaldehyde, methyl salicylate, 2-nitrophenol, 2-nitroaniline) and resonates far
    downfield of a free one, almost independent of concentration and solvent."""
    for y in ring_carbon.GetNeighbors():
        if not (y.GetIsAromatic() and y.IsInRing()):
            continue
        for z in y.GetNeighbors():
            if z.GetIdx() == ring_carbon.GetIdx() or z.GetIsAromatic():
                continue
            oxo = _double_partner(z) if z.GetSymbol() == "C" else None
            if oxo is not None and oxo.GetSymbol() == "O":
                return True
            if z.GetSymbol() == "N" and sum(1 for o in z.GetNeighbors() if o.GetSymbol() == "O") == 2:
                return True
    return False


def _is_pyridone_nh(parent, heavy) -> bool:
    """Ring NH between a ring C=O and a ring C=C (2-pyridone, 2-quinolone, de-aromatised)."""
    ring = [n for n in heavy if parent.IsInRing() and n.IsInRing()]
    return (any(_is_carbonyl(n) for n in ring)
            and any(not _is_carbonyl(n) and _is_unsaturated_carbon(n) for n in ring))


def _aldehyde_shift(mol, parent) -> ShiftEstimate:
    oxo = _double_partner(parent)
    rest = [n for n in parent.GetNeighbors() if n.GetIdx() != oxo.GetIdx() and n.GetAtomicNum() > 1]
    if oxo.GetSymbol() != "O":
        return _unknown_shift("H on C=S: generic value used", label="CHO")
    if not rest:
        return _special("CHO_alkyl", "CHO", flags=("formaldehyde: aliphatic aldehyde value",))
    x = rest[0]
    if x.GetSymbol() == "O":
        return _special("HCOO", "CHO")
    if x.GetSymbol() == "N":
        return _special("HCON", "CHO")
    if x.GetIsAromatic():
        return _special("CHO_aryl", "CHO")
    if _is_unsaturated_carbon(x):
        return _special("CHO_conj", "CHO")
    return _special("CHO_alkyl", "CHO")


def _alkyne_shift(mol, parent) -> ShiftEstimate:
    other = next(b.GetOtherAtom(parent) for b in parent.GetBonds() if b.GetBondType() == Chem.BondType.TRIPLE)
    far = [n for n in other.GetNeighbors() if n.GetIdx() != parent.GetIdx()]
    conj = any(_is_unsaturated_carbon(n) or _is_carbonyl(n) for n in far)
    return _special("alkyne_conj" if conj else "alkyne_alkyl", "alkyne")
