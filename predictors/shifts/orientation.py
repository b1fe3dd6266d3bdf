"""Axial and equatorial ring CH next to oxygen, from the conformers.

On a six-membered saturated ring, an equatorial H on a carbon that carries an oxygen comes about
0.5 ppm downfield of an axial one (common practice; for example cis- and trans-4-tert-butyl-
cyclohexanol, CH 4.03 and 3.51 ppm, and the anomeric H of alpha- and beta-D-glucopyranose,
5.22 and 4.64 ppm in D2O; from memory). The increment tables (``ring6_CH`` correction) describe
the usual case, an axial H with an equatorial substituent; a methine H that the conformers put
equatorial gets the ``equatorial_CH_O`` correction times its Boltzmann-weighted equatorial share.
Only rings with at least two substituents are treated: a singly substituted ring flips between
chairs whose weights an MMFF energy in vacuum does not give reliably (cyclohexanol came out with
an axial OH), while more substituents hold one chair (sugars, 4-tert-butylcyclohexanol).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from rdkit import Chem

from predictors.shifts.tables import ShiftEstimate, _sp3_value

__all__ = ["orient_ring_protons", "equatorial_fraction"]

#: |cos| of the angle between a C-H bond and the ring's mean-plane normal above which it is axial.
_AXIAL_COS = 0.8


def equatorial_fraction(coords: np.ndarray, weights: np.ndarray, ring: tuple[int, ...], carbon: int,
                        h: int) -> float:
    """Boltzmann-weighted share of conformers in which ``h`` on ``carbon`` is equatorial.

    Parameters
    ----------
    coords : ndarray, shape (n_conformers, n_atoms, 3)
    weights : ndarray, shape (n_conformers,)
    ring : tuple of int
        Atoms of the six-membered ring.
    carbon, h : int
        The ring carbon and its H.
    """
    pts = coords[:, list(ring), :]
    centred = pts - pts.mean(axis=1, keepdims=True)
    share = 0.0
    for k in range(coords.shape[0]):
        normal = np.linalg.svd(centred[k])[2][-1]
        bond = coords[k, h] - coords[k, carbon]
        cos = abs(float(np.dot(bond, normal))) / max(float(np.linalg.norm(bond)), 1e-9)
        share += float(weights[k]) * (cos < _AXIAL_COS)
    return share


def orient_ring_protons(mol: Chem.Mol, shifts: dict[int, ShiftEstimate],
                        conformers) -> dict[int, ShiftEstimate]:
    """Copy of ``shifts`` with equatorial O-bearing ring methine H moved downfield.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule with explicit hydrogens (the atoms of ``conformers``).
    shifts : dict of int to ShiftEstimate
    conformers : predictors.couplings.ConformerSet
        May be empty (then nothing changes).
    """
    if conformers.n_conformers == 0:
        return shifts
    step = _sp3_value("correction", "equatorial_CH_O", "alpha_ppm")
    ring_info = mol.GetRingInfo()
    out = dict(shifts)
    for ring in ring_info.AtomRings():
        if len(ring) != 6 or any(mol.GetAtomWithIdx(a).GetIsAromatic() for a in ring):
            continue
        if any(b.GetBondType() != Chem.BondType.SINGLE for b in _ring_bonds(mol, ring)):
            continue
        if _n_substituents(mol, ring) < 2:
            continue  # a singly substituted ring flips; MMFF in vacuum does not weigh its chairs reliably
        for carbon in ring:
            atom = mol.GetAtomWithIdx(carbon)
            hs = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
            if atom.GetSymbol() != "C" or len(hs) != 1 or hs[0] not in shifts:
                continue
            if not any(n.GetSymbol() == "O" for n in atom.GetNeighbors()):
                continue
            if min(len(r) for r in ring_info.AtomRings() if carbon in r) != 6:
                continue
            f_eq = equatorial_fraction(conformers.coords, conformers.weights, ring, carbon, hs[0])
            if f_eq < 0.05:
                continue
            est = out[hs[0]]
            flag = f"equatorial H on an O-bearing ring carbon ({f_eq:.0%} of conformers)"
            out[hs[0]] = replace(est, shift_ppm=est.shift_ppm + step * f_eq, flags=est.flags + (flag,))
    return out


def _n_substituents(mol, ring) -> int:
    """Heavy atoms bonded to the ring from outside it."""
    return sum(1 for a in ring for n in mol.GetAtomWithIdx(a).GetNeighbors()
               if n.GetAtomicNum() > 1 and n.GetIdx() not in ring)


def _ring_bonds(mol, ring):
    return [mol.GetBondBetweenAtoms(ring[i], ring[(i + 1) % len(ring)]) for i in range(len(ring))]
