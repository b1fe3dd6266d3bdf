"""1H chemical shifts from additive increment tables, each with a standard uncertainty.

One module per job:

* :mod:`~predictors.shifts.vinyl`: Pascual-Meier-Simon additivity (``data/alkene_increments.csv``);
* :mod:`~predictors.shifts.benzenoid`: aromatic CH, substituent increments of Beeby et al.
  (``data/benzene_increments.csv``) on the base value of the ring;
* :mod:`~predictors.shifts.heteroaromatic`: which tabulated ring system and position an aromatic
  CH is in (``data/aromatic_rings.csv``), N-substituent increments of azoles;
* :mod:`~predictors.shifts.fused`: the peri effect across a ring fusion
  (``data/ring_increments.csv``);
* :mod:`~predictors.shifts.sp3`: Shoolery's rule as extended by Schaller et al. for CH2XY,
  otherwise the alpha/beta/gamma increments of Beauchamp & Marquez (``data/sp3_increments.csv``)
  with carbon-type alpha increments, sub-additive sums, and ring, polyol and acetal corrections;
* :mod:`~predictors.shifts.diastereotopic`: the two H of a diastereotopic CH2 and the two
  N-substituents of a tertiary amide pulled apart;
* :mod:`~predictors.shifts.exchangeable`: aldehyde, alkyne and exchangeable (OH, NH, SH) H
  from tabulated values, the latter by NMR solvent;
* :mod:`~predictors.shifts.substituents` and :mod:`~predictors.shifts.tables`: the substituent
  classes and table access shared by all.

Every estimate carries ``sd_ppm``; a substituent the tables do not know is
replaced by the nearest class, flagged, and its uncertainty widened.
"""

from __future__ import annotations

import dataclasses

from rdkit import Chem

from predictors.equivalence import AlkeneRelation, map_alkene_relations
from predictors.shifts.benzenoid import _aromatic_shift
from predictors.shifts.diastereotopic import (
    AMIDE_ROTAMER_FLAG,
    DIASTEREOTOPIC_FLAG,
    split_amide_rotamer_shifts,
    split_diastereotopic,
)
from predictors.shifts.exchangeable import (
    _aldehyde_shift,
    _alkyne_shift,
    _exchangeable_shift,
    nmr_solvent_key,
)
from predictors.shifts.heteroaromatic import assign_ring_positions
from predictors.shifts.sp3 import _sp3_shift
from predictors.shifts.substituents import _double_partner, classify_substituent, prepare_model_molecule
from predictors.shifts.tables import ShiftEstimate, _sp3_value, _unknown_shift, load_increment_table
from predictors.shifts.vinyl import _vinyl_shift

__all__ = [
    "ShiftEstimate",
    "load_increment_table",
    "prepare_model_molecule",
    "classify_substituent",
    "predict_proton_shifts",
    "split_diastereotopic",
    "DIASTEREOTOPIC_FLAG",
    "split_amide_rotamer_shifts",
    "AMIDE_ROTAMER_FLAG",
]


def predict_proton_shifts(model: Chem.Mol, *, pseudo_atoms: frozenset = frozenset(),
                          relations: dict[int, AlkeneRelation] | None = None,
                          solvent: str | None = None) -> dict[int, ShiftEstimate]:
    """Shift estimate for every H atom of a molecule with explicit hydrogens.

    Parameters
    ----------
    model : rdkit.Chem.Mol
        Output of :func:`prepare_model_molecule`.
    pseudo_atoms : frozenset of int, keyword-only
        Atoms of de-aromatised pyranone-type rings (ring-current term).
    relations : dict, keyword-only
        Cis/trans relations from :func:`~predictors.equivalence.map_alkene_relations`.
    solvent : str, keyword-only
        NMR solvent (``"CDCl3"``, ``"DMSO-d6"``, ``"D2O"``, ``"CD3OD"``; None: CDCl3 values).
        Exchangeable H (OH, NH, SH) depend on it, and in DMSO-d6 the C-H on and next to a
        carbinol carbon.

    Returns
    -------
    dict of int to ShiftEstimate
        Keyed by H atom index.
    """
    relations = map_alkene_relations(model) if relations is None else relations
    positions = assign_ring_positions(model)
    out = {}
    for atom in model.GetAtoms():
        if atom.GetAtomicNum() == 1:
            out[atom.GetIdx()] = _predict_one(model, atom, relations, pseudo_atoms, positions, solvent)
    return out


def _predict_one(mol, h_atom, relations, pseudo_atoms, positions, solvent=None) -> ShiftEstimate:
    parent = h_atom.GetNeighbors()[0]
    symbol = parent.GetSymbol()
    if symbol in ("O", "N", "S"):
        return _exchangeable_shift(mol, parent, solvent)
    if symbol != "C":
        return _unknown_shift(f"H on {symbol}: no model, generic value used")
    if parent.GetIsAromatic():
        return _aromatic_shift(mol, parent, positions)
    if _double_partner(parent) is not None:
        return _aldehyde_shift(mol, parent)
    if parent.GetIdx() in relations:
        return _vinyl_shift(mol, h_atom, parent, relations[parent.GetIdx()], pseudo_atoms)
    if any(b.GetBondType() == Chem.BondType.TRIPLE for b in parent.GetBonds()):
        return _alkyne_shift(mol, parent)
    if any(b.GetBondType() == Chem.BondType.DOUBLE for b in parent.GetBonds()):
        return _unknown_shift("H on C=N or cumulated C: generic value used", label="vinyl")
    return _in_solvent(_sp3_shift(mol, parent), mol, parent, solvent)


def _alcohol_carbon(atom) -> bool:
    """An sp3 carbon bearing an OH (an alcohol, not a hemiacetal's ring O or an acid)."""
    return atom.GetSymbol() == "C" and atom.GetHybridization() == Chem.HybridizationType.SP3 and any(
        n.GetSymbol() == "O" and n.GetTotalNumHs(includeNeighbors=True) == 1 for n in atom.GetNeighbors())


def _in_solvent(estimate: ShiftEstimate, mol, carbon, solvent) -> ShiftEstimate:
    """An sp3 C-H estimate (tables in CDCl3) moved to the sample's solvent where a known solvent
    effect applies: in DMSO-d6 the H on and next to a carbinol carbon lie upfield (``solvent`` rows
    of ``data/sp3_increments.csv``)."""
    if nmr_solvent_key(solvent)[0] != "DMSO-d6":
        return estimate
    if _alcohol_carbon(carbon):
        group = "DMSO-d6:alpha_OH"
    elif any(_alcohol_carbon(n) for n in carbon.GetNeighbors()):
        group = "DMSO-d6:beta_OH"
    else:
        return estimate
    shift = estimate.shift_ppm + _sp3_value("solvent", group, "shift_ppm")
    return dataclasses.replace(estimate, shift_ppm=shift,
                               flags=estimate.flags + (f"DMSO-d6 shift of an alcohol's C-H ({group})",))
