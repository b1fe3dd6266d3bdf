"""Explicit forms of saturated six-membered rings: both chairs and the twist-boats.

The periplanar tests of :mod:`predictors.antiperiplanar` must not depend on the
embedding happening to sample the chair they need (a ring that has to flip to
put its leaving group axial is exactly the case where it does not). Each form
is built on purpose: the ring atoms are placed on an ideal chair (or on a boat
made from it by reflecting one ring atom through the plane of four others),
the rest of the molecule is embedded around them with every stereocentre
enforced (ETKDG with a coordinate map), and the whole is minimised with
MMFF94. A boat relaxes to the neighbouring twist-boat on minimisation.
"""

from __future__ import annotations

import math

import numpy as np
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms
from rdkit.Chem import rdForceFieldHelpers as ff_helpers  # noqa: N813
from rdkit.Geometry import Point3D

__all__ = [
    "RING_FORMS", "saturated_six_rings", "ring_form", "chair_sign", "build_ring_forms", "polish_side_chains",
    "mmff_minimise", "positions_into",
]

#: Names of the ring forms a conformer can be in (anything else is ``"other"``).
RING_FORMS = ("chair", "twist-boat")
#: Ideal chair: ring atoms on a circle of this radius, alternately this far above and below
#: its plane (C-C 1.53 A, C-C-C about 111 deg; common practice for cyclohexane).
_CHAIR_RADIUS_A = 1.446
_CHAIR_PUCKER_A = 0.25
_MAX_ITERS = 2000
_POLISH_ITERS = 500


def saturated_six_rings(mol: Chem.Mol, atoms) -> tuple[tuple[int, ...], ...]:
    """Six-membered rings of sp3 atoms that contain any of ``atoms``, each in ring order."""
    wanted = set(atoms)
    out = []
    for ring in mol.GetRingInfo().AtomRings():
        if len(ring) != 6 or not wanted & set(ring):
            continue
        if all(mol.GetAtomWithIdx(i).GetHybridization() == Chem.HybridizationType.SP3 for i in ring):
            out.append(tuple(ring))
    return tuple(out)


def _ring_torsions(mol: Chem.Mol, ring, conf_id: int = -1) -> list[float]:
    conf = mol.GetConformer(conf_id)
    return [rdMolTransforms.GetDihedralDeg(conf, *(ring[(i + k) % 6] for k in range(4))) for i in range(6)]


def ring_form(mol: Chem.Mol, ring, conf_id: int = -1) -> str:
    """``"chair"``, ``"twist-boat"`` or ``"other"`` for one ring of one conformer.

    A chair has ring torsions of alternating sign, none below 30 deg; a twist-boat (or boat)
    has two opposite torsions of one sign and large, the rest smaller (common practice:
    chair +-55 deg alternating; twist-boat about 33, 33, -70, 33, 33, -70 deg).
    """
    torsions = _ring_torsions(mol, ring, conf_id)
    if all(torsions[i] * torsions[(i + 1) % 6] < 0 for i in range(6)) and min(map(abs, torsions)) > 30.0:
        return "chair"
    big = [i for i, t in enumerate(torsions) if abs(t) > 45.0]
    if len(big) == 2 and (big[1] - big[0]) == 3 and torsions[big[0]] * torsions[big[1]] > 0:
        return "twist-boat"
    if len(big) == 4 and max(map(abs, torsions)) > 45.0 and min(map(abs, torsions)) < 15.0:
        return "twist-boat"  # a true boat: two torsions near zero, four near +-50
    return "other"


def chair_sign(mol: Chem.Mol, ring, conf_id: int = -1) -> int:
    """+1 or -1: which of the two chairs (sign of the first ring torsion); 0 when not a chair."""
    if ring_form(mol, ring, conf_id) != "chair":
        return 0
    return 1 if _ring_torsions(mol, ring, conf_id)[0] > 0 else -1


def _chair_points(sign: int) -> list[np.ndarray]:
    angles = [k * math.pi / 3 for k in range(6)]
    radius, pucker = _CHAIR_RADIUS_A, sign * _CHAIR_PUCKER_A
    return [np.array([radius * math.cos(a), radius * math.sin(a), pucker * (-1) ** k])
            for k, a in enumerate(angles)]


def _boat_points(sign: int, tip: int) -> list[np.ndarray]:
    """Reflect ring atom ``tip`` of a chair through the plane of the four atoms beside the two tips."""
    pts = _chair_points(sign)
    plane = [pts[(tip + k) % 6] for k in (1, 2, 4, 5)]
    centre = np.mean(plane, axis=0)
    normal = np.linalg.svd(np.array(plane) - centre)[2][2]
    pts[tip] = pts[tip] - 2.0 * np.dot(pts[tip] - centre, normal) * normal
    return pts


def _embed_around(mol_h: Chem.Mol, ring, points, seed: int) -> tuple[Chem.Mol, float] | None:
    """Embed with the ring atoms held at ``points``; MMFF-minimise; None when it fails."""
    coord_map = {atom: Point3D(*map(float, p)) for atom, p in zip(ring, points, strict=True)}
    mol = Chem.Mol(mol_h)
    mol.RemoveAllConformers()
    cid = AllChem.EmbedMolecule(mol, coordMap=coord_map, randomSeed=int(seed) & 0x7FFFFFFF,
                                useRandomCoords=True, enforceChirality=True, maxAttempts=20)
    if cid < 0 or not _same_configuration(mol, mol_h):
        return None
    return mol, mmff_minimise(mol)


def mmff_minimise(mol: Chem.Mol, max_iters: int = _MAX_ITERS) -> float:
    """Minimise ``mol``'s conformer with MMFF94 in place (at most ``max_iters`` steps); its energy."""
    props = ff_helpers.MMFFGetMoleculeProperties(mol)
    field = ff_helpers.MMFFGetMoleculeForceField(mol, props)
    field.Minimize(maxIts=max_iters)
    positions_into(mol, field)
    return float(field.CalcEnergy())


def positions_into(mol: Chem.Mol, field) -> None:
    """Copy a force field's atom positions into ``mol``'s conformer."""
    conf = mol.GetConformer()
    for i, xyz in enumerate(np.asarray(field.Positions()).reshape(-1, 3)):
        conf.SetAtomPosition(i, xyz.tolist())


def _side_chain_torsions(mol: Chem.Mol, ring) -> list[tuple[int, int, int, int]]:
    """One heavy-atom torsion per rotatable chain bond within two bonds of ``ring``.

    Neither end may be terminal or in a ring; the side chains next to the ring decide how a
    ring form compares with the others.

    A bond whose far end carries three equivalent groups (tert-butyl, CF3) is skipped: a turn
    of 120 deg gives the same rotamer.
    """
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    near = set(ring)
    for _ in range(2):
        near |= {n.GetIdx() for i in near for n in mol.GetAtomWithIdx(i).GetNeighbors()
                 if n.GetAtomicNum() > 1}
    out = []
    for bond in mol.GetBonds():
        if bond.GetBondType() != Chem.BondType.SINGLE or bond.IsInRing():
            continue
        if bond.GetBeginAtomIdx() not in near or bond.GetEndAtomIdx() not in near:
            continue
        a, b = bond.GetBeginAtom(), bond.GetEndAtom()
        na = [n.GetIdx() for n in a.GetNeighbors() if n.GetAtomicNum() > 1 and n.GetIdx() != b.GetIdx()]
        nb = [n.GetIdx() for n in b.GetNeighbors() if n.GetAtomicNum() > 1 and n.GetIdx() != a.GetIdx()]
        symmetric = any(len(ends) == 3 and len({ranks[i] for i in ends}) == 1 for ends in (na, nb))
        if na and nb and not symmetric:
            out.append((min(na), a.GetIdx(), b.GetIdx(), min(nb)))
    return out


def polish_side_chains(mol: Chem.Mol, energy_kcal: float, *, ring, passes: int = 2) -> tuple[Chem.Mol, float]:
    """Greedy rotamer search: turn each chain bond by +-120 deg, minimise, keep what is lower.

    A few random embeddings rarely find the best rotamer of every side chain (an isopropyl
    next to a ring costs up to 5 kcal/mol in the wrong one), and a ring form must be compared
    with the others at its own best rotamers.
    """
    best, best_e = mol, energy_kcal
    torsions = _side_chain_torsions(mol, ring)
    for _ in range(passes):
        improved = False
        for quad in torsions:
            start = rdMolTransforms.GetDihedralDeg(best.GetConformer(), *quad)
            for turn in (120.0, -120.0):
                trial = Chem.Mol(best)
                rdMolTransforms.SetDihedralDeg(trial.GetConformer(), *quad, start + turn)
                energy = mmff_minimise(trial, _POLISH_ITERS)
                if energy < best_e - 0.05:
                    best, best_e, improved = trial, energy, True
                    break
        if not improved:
            break
    return best, best_e


def _same_configuration(mol: Chem.Mol, reference: Chem.Mol) -> bool:
    """The embedded geometry has the configuration the reference's stereo tags ask for.

    A coordinate map can override the chirality constraints of the embedding, so every form is
    checked: configurations read back from 3D must give the reference's isomeric SMILES.
    """
    from_3d = Chem.Mol(mol)
    Chem.AssignStereochemistryFrom3D(from_3d)
    return Chem.MolToSmiles(Chem.RemoveHs(from_3d)) == Chem.MolToSmiles(Chem.RemoveHs(reference))


def build_ring_forms(mol_h: Chem.Mol, ring, *, seed: int, chairs: bool = True, twist_boats: bool = False,
                     tries: int = 2) -> list[tuple[Chem.Mol, float, str]]:
    """Both chairs of ``ring`` (and, on request, its twist-boats), each MMFF-minimised.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit hydrogens and defined stereocentres.
    ring : tuple of int
        Atoms of a saturated six-membered ring, in ring order.
    seed : int, keyword-only
        Base seed; form ``k`` try ``t`` uses ``seed + 17 k + t`` (results repeat).
    chairs : bool, keyword-only
        Build the two chairs.
    twist_boats : bool, keyword-only
        Also build the six boats (three tip pairs, two orientations) and let them relax.
    tries : int, keyword-only
        Embeddings per chair; the lowest energy is kept (side chains find their rotamers).
        Each boat is embedded once.

    Returns
    -------
    list of (molecule, energy in kcal/mol, form)
        One entry per form that embedded and kept its shape; ``form`` is the relaxed
        shape (:func:`ring_form`), so a boat that fell back into a chair says so.
    """
    shapes = [(_chair_points(+1), tries), (_chair_points(-1), tries)] if chairs else []
    if twist_boats:
        shapes += [(_boat_points(sign, tip), 1) for sign in (+1, -1) for tip in range(3)]
    made = []
    for k, (points, n_tries) in enumerate(shapes):
        best = None
        for t in range(n_tries):
            trial = _embed_around(mol_h, ring, points, seed + 17 * k + t)
            if trial is not None and (best is None or trial[1] < best[1] - 1e-6):
                best = trial
        if best is not None:
            made.append(best)
    # Side chains are polished on every chair and on the two lowest distinct twist-boats (the
    # boats relax pairwise into the same twist-boats; polishing all six costs three times more).
    n_chairs = 2 if chairs else 0
    boats = sorted(made[n_chairs:], key=lambda m: m[1])
    distinct = [b for i, b in enumerate(boats) if i == 0 or b[1] - boats[i - 1][1] > 0.05]
    out = []
    for mol, energy in made[:n_chairs] + distinct[:2]:
        mol, energy = polish_side_chains(mol, energy, ring=ring)
        out.append((mol, energy, ring_form(mol, ring)))
    return out
