"""Calibrated uncertainty of predicted 1H shifts, by the local environment of each H.

Every H falls in one coarse environment class (:func:`environment_class`); the packaged table
``data/shift_sd.csv`` gives each class the standard uncertainty that makes +-2 sd cover about
95 % of the errors of our shift model on the fitting half of a reference set of real compounds
(``benchmarks/shift_reference``; the table is written by
``python -m benchmarks.shift_accuracy_real --write-table``). :func:`calibrated_estimates` puts
those sds on the shift estimates: an estimate that used a fallback (a substituent the increment
tables do not know, a generic value) is widened in quadrature, and classes without enough data
(``uncalibrated`` rows) and exchangeable H keep their own, wider, sd when it is larger.
"""

from __future__ import annotations

import csv
import dataclasses
import functools
import math
from importlib import resources

from rdkit import Chem

__all__ = [
    "CLASSES",
    "SdRow",
    "environment_class",
    "environment_classes",
    "load_sd_table",
    "FALLBACK_ROWS",
    "fallback_counts",
    "calibrated_estimates",
]

#: Every class :func:`environment_class` can return, with what it holds.
CLASSES: dict[str, str] = {
    "aryl": "H on a benzene ring not fused to another aromatic ring",
    "aryl fused": "H on a benzenoid ring fused to another aromatic ring (naphthalene, indole, quinoline)",
    "heteroaryl 5-ring": "H on an aromatic five-membered ring with a heteroatom",
    "heteroaryl 6-ring": "H on an aromatic six-membered ring with a heteroatom",
    "vinyl": "H on a C=C or C=N carbon (pyridone and pyranone rings count as alkenes)",
    "aldehyde": "H on a C=O carbon (aldehydes, formates, formamides)",
    "alkyne": "H on a C#C carbon",
    "CH3 on C": "CH3 on an sp3 carbon",
    "CH3 on O": "CH3 on oxygen",
    "CH3 on N, S, P or halogen": "CH3 on nitrogen, sulfur, phosphorus or a halogen",
    "CH3 on pi": "CH3 on an aromatic, C=C, C=O or C#N carbon",
    "CH2 0": "CH2 with only sp3-carbon neighbours",
    "CH2 1": "CH2 with one heteroatom or pi neighbour",
    "CH 0-1": "CH with at most one heteroatom or pi neighbour",
    "CH/CH2 2+": "CH or CH2 with two or more heteroatom or pi neighbours",
    "polyol CH/CH2": "CH or CH2 bearing O with two or more single-bonded O within two bonds (sugars)",
    "exchangeable": "H on O, N or S",
    "other": "H on any other atom",
}

#: Table rows (not classes) of the extra sd, added in quadrature, of an estimate that used a fallback.
FALLBACK_INCREMENT = "fallback: increment"
FALLBACK_GENERIC = "fallback: generic value"
FALLBACK_ROWS = {FALLBACK_INCREMENT: "a substituent increment taken from another class",
                 FALLBACK_GENERIC: "a generic base value (a ring or group the tables do not know)"}

_HETERO = frozenset({"N", "O", "S", "P", "F", "Cl", "Br", "I", "Si", "B", "Se"})


@dataclasses.dataclass(frozen=True)
class SdRow:
    """One row of ``data/shift_sd.csv``."""

    env_class: str
    n_fitting: int
    sd_ppm: float
    source: str

    @property
    def calibrated(self) -> bool:
        return not self.source.startswith("uncalibrated")


@functools.cache
def load_sd_table() -> dict[str, SdRow]:
    """Rows of ``predictors/data/shift_sd.csv`` by class."""
    text = resources.files("predictors.data").joinpath("shift_sd.csv").read_text(encoding="utf-8")
    return {r["class"]: SdRow(r["class"], int(r["n_fitting"]), float(r["sd_ppm"]), r["source"])
            for r in csv.DictReader(text.splitlines())}


def environment_class(mol_h: Chem.Mol, h_atom_idx: int) -> str:
    """Environment class (a key of :data:`CLASSES`) of H atom ``h_atom_idx`` of ``mol_h``.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit hydrogens.
    h_atom_idx : int
        Index of a hydrogen atom.
    """
    atom = mol_h.GetAtomWithIdx(int(h_atom_idx))
    if atom.GetAtomicNum() != 1:
        raise ValueError(f"h_atom_idx: atom {h_atom_idx} is {atom.GetSymbol()}, not H")
    return environment_classes(mol_h)[int(h_atom_idx)]


def environment_classes(mol_h: Chem.Mol) -> dict[int, str]:
    """Environment class of every H atom of ``mol_h`` (explicit hydrogens), keyed by atom index."""
    from predictors.shifts import prepare_model_molecule

    model, _ = prepare_model_molecule(mol_h)
    return _model_classes(model)


def _model_classes(model: Chem.Mol) -> dict[int, str]:
    """Classes on the model molecule of :func:`predictors.shifts.prepare_model_molecule`."""
    fused = _fused_aromatic_atoms(model)
    distances = Chem.GetDistanceMatrix(model)
    return {a.GetIdx(): _classify(model, a.GetNeighbors()[0], fused, distances) if a.GetDegree() else "other"
            for a in model.GetAtoms() if a.GetAtomicNum() == 1}


def _fused_aromatic_atoms(mol: Chem.Mol) -> frozenset:
    """Atoms of aromatic rings that share a bond with another aromatic ring."""
    rings = [set(r) for r in mol.GetRingInfo().AtomRings()
             if all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r)]
    out: set[int] = set()
    for i, ring in enumerate(rings):
        if any(len(ring & other) >= 2 for j, other in enumerate(rings) if j != i):
            out |= ring
    return frozenset(out)


def _classify(mol: Chem.Mol, parent, fused: frozenset, distances) -> str:
    symbol = parent.GetSymbol()
    if symbol in ("O", "N", "S"):
        return "exchangeable"
    if symbol != "C":
        return "other"
    if parent.GetIsAromatic():
        return _aromatic_class(mol, parent, fused)
    bonds = [b.GetBondType() for b in parent.GetBonds()]
    if Chem.BondType.TRIPLE in bonds:
        return "alkyne"
    if Chem.BondType.DOUBLE in bonds:
        oxo = any(b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(parent).GetSymbol() in ("O", "S")
                  for b in parent.GetBonds())
        return "aldehyde" if oxo else "vinyl"
    return _sp3_class(mol, parent, distances)


def _aromatic_class(mol: Chem.Mol, parent, fused: frozenset) -> str:
    rings = [r for r in mol.GetRingInfo().AtomRings()
             if parent.GetIdx() in r and all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r)]
    ring = min(rings, key=len) if rings else (parent.GetIdx(),)
    if any(mol.GetAtomWithIdx(a).GetSymbol() != "C" for a in ring):
        return "heteroaryl 5-ring" if len(ring) == 5 else "heteroaryl 6-ring"
    return "aryl fused" if parent.GetIdx() in fused else "aryl"


def _is_pi_carbon(atom) -> bool:
    return atom.GetSymbol() == "C" and (atom.GetIsAromatic() or any(
        b.GetBondType() in (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE) for b in atom.GetBonds()))


def _single_bonded_oxygens_near(mol: Chem.Mol, carbon, distances) -> int:
    """Single-bonded O atoms within two bonds of ``carbon`` (``distances``: topological matrix)."""
    row = distances[carbon.GetIdx()]
    return sum(1 for a in mol.GetAtoms()
               if a.GetSymbol() == "O" and row[a.GetIdx()] <= 2
               and all(b.GetBondType() == Chem.BondType.SINGLE for b in a.GetBonds()))


def _sp3_class(mol: Chem.Mol, carbon, distances) -> str:
    heavy = [n for n in carbon.GetNeighbors() if n.GetAtomicNum() > 1]
    n_h = carbon.GetTotalNumHs(includeNeighbors=True)
    if n_h >= 3:
        if not heavy:
            return "CH3 on C"
        x = heavy[0]
        if x.GetSymbol() == "O":
            return "CH3 on O"
        if x.GetSymbol() in _HETERO:
            return "CH3 on N, S, P or halogen"
        return "CH3 on pi" if _is_pi_carbon(x) else "CH3 on C"
    bears_o = any(n.GetSymbol() == "O" for n in heavy)
    if bears_o and _single_bonded_oxygens_near(mol, carbon, distances) >= 2:
        return "polyol CH/CH2"
    k = sum(1 for n in heavy if n.GetSymbol() in _HETERO or _is_pi_carbon(n))
    if k >= 2:
        return "CH/CH2 2+"
    return f"CH2 {k}" if n_h == 2 else "CH 0-1"


def fallback_counts(flags) -> tuple[int, int]:
    """Numbers of ``(increment, generic-value)`` fallbacks among the flags of one estimate."""
    increments = sum(1 for f in flags if "taken from" in f)
    generic = sum(1 for f in flags if "generic" in f and "taken from" not in f)
    return increments, generic


def calibrated_estimates(model: Chem.Mol, estimates: dict, *, table: dict[str, SdRow] | None = None) -> dict:
    """``estimates`` with each sd replaced by its class sd (widened for fallbacks).

    Parameters
    ----------
    model : rdkit.Chem.Mol
        The model molecule the estimates were made on
        (:func:`predictors.shifts.prepare_model_molecule`).
    estimates : dict of int to ShiftEstimate
        Output of :func:`predictors.shifts.predict_proton_shifts`.
    table : dict of str to SdRow, keyword-only, optional
        Class sds; default :func:`load_sd_table` (the benchmark passes the table it is building).

    Returns
    -------
    dict of int to ShiftEstimate
        Same keys; ``sd_ppm`` is the class sd of ``data/shift_sd.csv`` combined in quadrature with
        the ``fallback: increment`` sd once per substituent increment taken from another class and
        the ``fallback: generic value`` sd once per generic value used; for exchangeable H and
        classes the table marks ``uncalibrated``, the estimate's own sd when that is larger.
    """
    table = load_sd_table() if table is None else table
    classes = _model_classes(model)
    out = {}
    for h, est in estimates.items():
        row = table[classes[h]]
        increments, generic = fallback_counts(est.flags)
        sd = math.sqrt(row.sd_ppm**2 + increments * table[FALLBACK_INCREMENT].sd_ppm**2
                       + generic * table[FALLBACK_GENERIC].sd_ppm**2)
        if not row.calibrated or classes[h] == "exchangeable":
            sd = max(sd, est.sd_ppm)
        out[h] = dataclasses.replace(est, sd_ppm=float(sd))
    return out
