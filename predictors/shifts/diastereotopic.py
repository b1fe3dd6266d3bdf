"""Shift differences between protons the increment tables cannot tell apart: the two
diastereotopic protons of an sp3 CH2, and the two N-substituents of a tertiary amide (slow
rotation about the C-N bond).

:func:`predictors.equivalence.find_equivalent_protons` puts the two H of a CH2 next to a
stereocentre (or on a ring whose faces differ) into two sites; the increment tables give both
the same shift. Here the pair is pulled apart symmetrically (the mean is kept) by a rule of
thumb (common practice: diastereotopic CH2 protons differ by roughly 0.05-0.3 ppm, more next to
the stereocentre, more when the CH2 carries an aryl or carbonyl group, most on a ring):

* 0.10 ppm for a CH2 one bond from a stereocentre (or with no stereocentre: a ring face effect),
  0.05 ppm when the nearest stereocentre is further away;
* plus 0.10 ppm when the CH2 carries an aryl, C=C or C=O group;
* 0.25 ppm for a CH2 in a five- to seven-membered ring.

Which proton is the downfield one is not predicted (the one in the lower-numbered site is put
downfield); each estimate carries a ``"diastereotopic"`` flag so that the uncertainty layer can
widen it.
"""

from __future__ import annotations

from dataclasses import replace

from rdkit import Chem

from predictors.shifts.tables import ShiftEstimate

__all__ = ["split_diastereotopic", "DIASTEREOTOPIC_FLAG", "diastereotopic_delta",
           "split_amide_rotamer_shifts", "AMIDE_ROTAMER_FLAG"]

#: Flag carried by each proton of a split CH2.
DIASTEREOTOPIC_FLAG = "diastereotopic CH2: shift difference from a rule of thumb (common practice)"
_NEAR, _FAR, _PI_EXTRA, _RING = 0.10, 0.05, 0.10, 0.25
#: Flag carried by the H of the two N-substituents of a tertiary amide.
AMIDE_ROTAMER_FLAG = ("amide rotamers: the N-substituents cis and trans to O differ; "
                      "which is downfield not predicted")
#: Shift difference of the N-CH (alpha) and further H of the two amide N-substituents: N,N-dimethylacetamide
#: 3.02/2.94 and DMF 2.96/2.88 ppm (Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1; from
#: memory); further along the chain about 0.05 ppm (common practice).
_AMIDE_ALPHA, _AMIDE_FAR = 0.08, 0.05


def diastereotopic_delta(mol: Chem.Mol, carbon: int) -> float:
    """Rule-of-thumb shift difference (ppm) between the two H of the CH2 ``carbon``."""
    atom = mol.GetAtomWithIdx(carbon)
    sizes = [len(r) for r in mol.GetRingInfo().AtomRings() if carbon in r]
    if sizes and 5 <= min(sizes) <= 7:
        return _RING
    centres = [c for c, _ in Chem.FindMolChiralCenters(mol, includeUnassigned=True,
                                                        useLegacyImplementation=False)]
    dist = Chem.GetDistanceMatrix(mol)
    near = min((dist[carbon, c] for c in centres), default=1.0)
    delta = _NEAR if near <= 1 else _FAR
    if any(n.GetIsAromatic() or any(b.GetBondType() == Chem.BondType.DOUBLE for b in n.GetBonds())
           for n in atom.GetNeighbors() if n.GetAtomicNum() == 6):
        delta += _PI_EXTRA
    return delta


def split_diastereotopic(mol: Chem.Mol, shifts: dict[int, ShiftEstimate],
                         groups) -> dict[int, ShiftEstimate]:
    """Copy of ``shifts`` with the two H of every diastereotopic sp3 CH2 pulled apart.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule with explicit hydrogens (same indices as ``shifts``).
    shifts : dict of int to ShiftEstimate
        From :func:`predictors.shifts.predict_proton_shifts`.
    groups : sequence of sequence of int
        Equivalent-proton groups (:func:`predictors.equivalence.find_equivalent_protons`).

    Returns
    -------
    dict of int to ShiftEstimate
        The H in the lower-numbered group gets ``+delta/2``, the other ``-delta/2``; both get
        :data:`DIASTEREOTOPIC_FLAG`. Methylene protons in one group (achiral CH2) are unchanged.
    """
    group_of = {h: k for k, g in enumerate(groups) for h in g}
    out = dict(shifts)
    for atom in mol.GetAtoms():
        if atom.GetSymbol() != "C" or atom.GetHybridization() != Chem.HybridizationType.SP3:
            continue
        hs = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
        if len(hs) != 2 or any(h not in group_of or h not in shifts for h in hs):
            continue
        if group_of[hs[0]] == group_of[hs[1]] or shifts[hs[0]].exchangeable:
            continue
        delta = diastereotopic_delta(mol, atom.GetIdx())
        first, second = sorted(hs, key=lambda h: group_of[h])
        for h, sign in ((first, 0.5), (second, -0.5)):
            est = shifts[h]
            out[h] = replace(est, shift_ppm=est.shift_ppm + sign * delta,
                             flags=est.flags + (DIASTEREOTOPIC_FLAG,))
    return out


def split_amide_rotamer_shifts(mol: Chem.Mol, shifts: dict[int, ShiftEstimate],
                               branches) -> dict[int, ShiftEstimate]:
    """Copy of ``shifts`` with the two N-substituents of each tertiary amide pulled apart.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule with explicit hydrogens.
    shifts : dict of int to ShiftEstimate
    branches : sequence of (frozenset, frozenset)
        H atoms of the two branches (:func:`predictors.equivalence.amide_rotamer_branches`); the
        first branch is put downfield by half the difference, the second upfield.
    """
    out = dict(shifts)
    for first, second in branches:
        for hs, sign in ((first, 0.5), (second, -0.5)):
            for h in hs:
                if h not in shifts or shifts[h].exchangeable:
                    continue
                carbon = mol.GetAtomWithIdx(h).GetNeighbors()[0]
                alpha = any(n.GetSymbol() == "N" for n in carbon.GetNeighbors())
                delta = _AMIDE_ALPHA if alpha else _AMIDE_FAR
                est = out[h]
                out[h] = replace(est, shift_ppm=est.shift_ppm + sign * delta,
                                 flags=est.flags + (AMIDE_ROTAMER_FLAG,))
    return out
