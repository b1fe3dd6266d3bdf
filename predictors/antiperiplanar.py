"""Three-dimensional test of the periplanar requirement of eliminations (anti for E2, syn for Ei).

Conformers are embedded with ETKDG and minimised with MMFF94 once per
substrate. Rings are not left to chance: :func:`add_ring_forms` builds both
chairs of every saturated six-membered ring at the site (and its twist-boats when
no chair within reach puts the leaving group axial), each at its best
side-chain rotamers (:mod:`predictors.ring_forms`). For each beta-H,
:func:`find_periplanar` then looks for the lowest-energy conformer in which the
H-C-C-LG dihedral is 180 deg (anti) or 0 deg (syn):

* bond in a six-membered ring: among the chairs and twist-boats, the lowest
  one with the dihedral within tolerance (a trans-diaxial pair in a chair);
  a conformer a little off is driven to the target by a restrained
  minimisation that must keep its ring form;
* any other bond: the staggered rotamer with that H anti (or the eclipsed one
  with it syn), reached by a restrained minimisation from the lowest
  conformer of every ring form present and from the conformer nearest to the
  target, then released.

The energy above the global minimum (every conformer seen), the conformer's
form and whether the ring had to flip are reported. The substituents that
face each other in that geometry become cis in the alkene (dihedral below
90 deg), which fixes the alkene geometry.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms
from rdkit.Chem import rdForceFieldHelpers as ff_helpers  # noqa: N813

from predictors.errors import ChemistryError, InputError
from predictors.local_model import local_model
from predictors.ring_forms import (
    RING_FORMS,
    build_ring_forms,
    chair_sign,
    mmff_minimise,
    positions_into,
    ring_form,
    saturated_six_rings,
)

__all__ = [
    "ConformerSet", "PeriplanarResult", "add_ring_forms", "embed_conformers", "find_periplanar", "is_axial",
    "local_model",
]

#: Largest strain (kcal/mol) at which a periplanar conformer still counts as reachable
#: (issue 18: a flipped menthyl chair costs about 4-6 kcal/mol and must count; the cost
#: itself enters the prior as a Boltzmann factor, so the bound only separates "costly"
#: from "not within reach").
MAX_STRAIN_KCAL = 8.0
#: Twist-boats are built when no chair within this much of the lowest conformer puts the
#: leaving group axial: a cyclohexane twist-boat lies about 5.5 kcal/mol above the chair
#: (Eliel and Wilen, Stereochemistry of Organic Compounds, 1994; from memory), so below
#: this a twist-boat cannot be the cheaper way to an axial leaving group.
TWIST_BOAT_TRIGGER_KCAL = 4.0
#: Largest deviation (deg) from the target dihedral that still counts as periplanar.
TOLERANCE_DEG = 20.0
_RESTRAINT_KCAL = 500.0
_MAX_ITERS = 600


@dataclass(frozen=True, eq=False)
class ConformerSet:
    """MMFF-minimised conformers of one molecule (explicit hydrogens).

    Attributes
    ----------
    mol : rdkit.Chem.Mol
        Molecule with explicit H and one conformer per entry of ``energies_kcal``.
    conf_ids : tuple of int
    energies_kcal : tuple of float
        MMFF94 energy of each conformer (kcal/mol).
    forms : tuple of str
        How each conformer was made: ``"embedded"`` or ``"built"`` (a ring form made on
        purpose by :func:`add_ring_forms`); empty means all embedded.
    """

    mol: Chem.Mol
    conf_ids: tuple[int, ...]
    energies_kcal: tuple[float, ...]
    forms: tuple[str, ...] = ()

    @property
    def min_energy_kcal(self) -> float:
        """Lowest conformer energy."""
        return min(self.energies_kcal)

    @property
    def lowest_conf_id(self) -> int:
        """Conformer id of the lowest-energy conformer."""
        return self.conf_ids[int(np.argmin(self.energies_kcal))]


@dataclass(frozen=True)
class PeriplanarResult:
    """Outcome of driving one beta-H periplanar to the leaving group.

    Attributes
    ----------
    h_idx, beta_idx, alpha_idx, lg_idx : int
        Atoms of the H-C(beta)-C(alpha)-LG dihedral.
    target_deg : float
        180 (anti) or 0 (syn).
    dihedral_deg : float
        Dihedral in the chosen conformer.
    strain_kcal : float
        Unconstrained energy of that geometry above the lowest conformer.
    reachable : bool
        Periplanar and strain at most :data:`MAX_STRAIN_KCAL`.
    periplanar : bool
        Dihedral within tolerance, whatever the strain; for an anti target with both
        carbons in a six-membered ring, that ring must also be a chair or a twist-boat.
    energy_kcal : float
        Unconstrained MMFF94 energy of the periplanar geometry.
    relaxed_kcal : float
        Energy after releasing the restraint and minimising again: a local
        minimum that may lie below every embedded conformer, so callers can use
        the lowest value seen as a better reference for strain.
    cis_pairs : tuple of (int, int)
        (substituent on alpha, substituent on beta) heavy-atom pairs that face
        each other and end up cis in the alkene.
    lg_axial : bool or None
        Six-membered ring only: whether the leaving group is axial in that geometry.
    conformer : str
        The conformer that makes the H periplanar: ``"chair"``, ``"flipped chair"``,
        ``"twist-boat"``, ``"distorted ring"`` or ``"rotamer"`` (open chain or exocyclic bond).
    ring_flip : bool
        True when a ring holding the alpha carbon is in the other chair (or out of the
        chair) compared with the lowest conformer.
    """

    h_idx: int
    beta_idx: int
    alpha_idx: int
    lg_idx: int
    target_deg: float
    dihedral_deg: float
    strain_kcal: float
    reachable: bool
    periplanar: bool
    energy_kcal: float
    relaxed_kcal: float
    cis_pairs: tuple[tuple[int, int], ...]
    lg_axial: bool | None
    conformer: str = "rotamer"
    ring_flip: bool = False


def embed_conformers(mol: Chem.Mol, *, n_conformers: int = 6, seed: int = 0xC0FFEE) -> ConformerSet:
    """Embed (ETKDG v3 with small-ring torsions) and MMFF-minimise a few conformers.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule; hydrogens are added when absent.
    n_conformers : int, keyword-only
        Number of conformers to embed (>= 1).
    seed : int, keyword-only
        Random seed of the embedding (results repeat for a given seed).

    Raises
    ------
    ChemistryError
        Embedding failed or MMFF94 has no parameters for the molecule.
    """
    if n_conformers < 1:
        raise InputError(f"n_conformers: must be >= 1, got {n_conformers}")
    molh = Chem.AddHs(mol) if mol.GetNumAtoms() == mol.GetNumHeavyAtoms() else Chem.Mol(mol)
    if not ff_helpers.MMFFHasAllMoleculeParams(molh):
        raise ChemistryError("structure: MMFF94 has no parameters for this molecule; 3D analysis unavailable")
    # Small-ring torsion preferences (srETKDG v3) put cyclohexanes in chairs; plain ETKDG often
    # leaves them in twist forms (seen on substituted cyclohexanes).
    params = AllChem.srETKDGv3()
    params.randomSeed = int(seed) & 0x7FFFFFFF
    params.numThreads = 1
    params.pruneRmsThresh = 0.25
    cids = list(AllChem.EmbedMultipleConfs(molh, numConfs=n_conformers, params=params))
    # A second batch from random coordinates widens the sampling of open chains.
    extra = Chem.Mol(molh)
    params = AllChem.ETKDGv3()
    params.numThreads = 1
    params.pruneRmsThresh = 0.25
    params.useRandomCoords = True
    params.randomSeed = (int(seed) + 1) & 0x7FFFFFFF
    for cid in AllChem.EmbedMultipleConfs(extra, numConfs=max(2, n_conformers // 2), params=params):
        cids.append(molh.AddConformer(extra.GetConformer(cid), assignId=True))
    if not cids:
        raise ChemistryError("structure: 3D embedding failed; cannot test anti-periplanar geometry")
    results = ff_helpers.MMFFOptimizeMoleculeConfs(molh, numThreads=1, maxIters=_MAX_ITERS)
    energies = [float(e) for _, e in results]
    kept = _align_hydrogen_labels(molh, cids)
    for cid in cids:
        if cid not in kept:
            molh.RemoveConformer(cid)
    return ConformerSet(mol=molh, conf_ids=tuple(kept),
                        energies_kcal=tuple(energies[cids.index(c)] for c in kept))


def _align_hydrogen_labels(mol: Chem.Mol, cids: list[int]) -> list[int]:
    """Give every conformer the hydrogen labelling of the first; drop conformers of another stereoisomer.

    The embedding places the two H of a CH2 either way round, so "the first H" can point to
    different faces in different conformers. Swapping their coordinates where the handedness
    differs from the first conformer makes H indices mean the same face everywhere; a
    difference at an atom with fewer than two H is a wrong configuration and drops the conformer.
    """
    ref_signs = _handedness(mol, mol.GetConformer(cids[0]))
    return [cids[0]] + [cid for cid in cids[1:] if _restore_labels(mol, mol.GetConformer(cid), ref_signs)]


def _restore_labels(mol: Chem.Mol, conf, ref_signs: tuple[bool, ...]) -> bool:
    """Swap H pairs back to the reference handedness; False when a true stereocentre differs.

    An atom with fewer than two H but two equivalent neighbours (the CH of an isopropyl, the
    quaternary carbon of a tert-butyl) is no stereocentre: its neighbours may come out either
    way round, which changes nothing that is asked later.
    """
    centres = [a for a in mol.GetAtoms() if a.GetDegree() == 4]
    ranks = None
    for atom, ref, now in zip(centres, ref_signs, _handedness(mol, conf), strict=True):
        if ref == now:
            continue
        hs = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
        if len(hs) < 2:
            if ranks is None:
                ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
            if len({ranks[n.GetIdx()] for n in atom.GetNeighbors()}) < 4:
                continue
            return False
        first, second = conf.GetAtomPosition(hs[0]), conf.GetAtomPosition(hs[1])
        conf.SetAtomPosition(hs[0], second)
        conf.SetAtomPosition(hs[1], first)
    return True


def _angle_gap(a_deg: float, b_deg: float) -> float:
    return abs((a_deg - b_deg + 180.0) % 360.0 - 180.0)


def _handedness(mol: Chem.Mol, conf) -> tuple[bool, ...]:
    """Sign of the volume spanned by three neighbours of every four-coordinate atom."""
    pos = conf.GetPositions()
    signs = []
    for atom in mol.GetAtoms():
        if atom.GetDegree() == 4:
            c = pos[atom.GetIdx()]
            n = [pos[x.GetIdx()] - c for x in atom.GetNeighbors()][:3]
            signs.append(bool(np.linalg.det(np.array(n)) > 0))
    return tuple(signs)


def _constrained_minimum(start: Chem.Mol, atoms, target_deg: float) -> tuple[Chem.Mol, float]:
    """Minimise with the dihedral restrained; energy is inf when a centre was inverted on the way."""
    mol = Chem.Mol(start)
    before = _handedness(mol, mol.GetConformer())
    props = ff_helpers.MMFFGetMoleculeProperties(mol)
    field = ff_helpers.MMFFGetMoleculeForceField(mol, props)
    field.MMFFAddTorsionConstraint(*atoms, False, target_deg - 1.0, target_deg + 1.0, _RESTRAINT_KCAL)
    field.Minimize(maxIts=_MAX_ITERS)
    positions_into(mol, field)
    if _handedness(mol, mol.GetConformer()) != before:
        return mol, float("inf")
    energy = ff_helpers.MMFFGetMoleculeForceField(mol, props).CalcEnergy()
    return mol, float(energy)


def is_axial(mol: Chem.Mol, *, ring_atom: int, substituent: int, conf_id: int = -1) -> bool | None:
    """Whether ``substituent`` is axial on a six-membered ring containing ``ring_atom``.

    Axial bonds lie within 35 deg of the ring's mean-plane normal (common practice:
    ideal chair axial bonds are parallel to it, equatorial ones about 70 deg off).
    Returns None when the atom is not in a six-membered ring.
    """
    rings = [r for r in mol.GetRingInfo().AtomRings() if ring_atom in r and len(r) == 6]
    if not rings or substituent in rings[0]:
        return None
    pos = mol.GetConformer(conf_id).GetPositions()
    ring = pos[list(rings[0])]
    centred = ring - ring.mean(axis=0)
    normal = np.linalg.svd(centred)[2][2]
    bond = pos[substituent] - pos[ring_atom]
    cos = abs(float(np.dot(bond, normal))) / float(np.linalg.norm(bond))
    return bool(cos > np.cos(np.radians(35.0)))


def _relaxed_energy(mol: Chem.Mol, energy: float) -> float:
    if not np.isfinite(energy):
        return float("inf")
    return _relax_in_place(Chem.Mol(mol))


def _cis_pairs(mol: Chem.Mol, h_idx: int, beta: int, alpha: int, lg: int) -> tuple[tuple[int, int], ...]:
    conf = mol.GetConformer()
    on_alpha = [n.GetIdx() for n in mol.GetAtomWithIdx(alpha).GetNeighbors()
                if n.GetIdx() not in (beta, lg) and n.GetAtomicNum() > 1]
    on_beta = [n.GetIdx() for n in mol.GetAtomWithIdx(beta).GetNeighbors()
               if n.GetIdx() not in (alpha, h_idx) and n.GetAtomicNum() > 1]
    return tuple(
        (sa, sb) for sa in on_alpha for sb in on_beta
        if abs(rdMolTransforms.GetDihedralDeg(conf, sa, alpha, beta, sb)) < 90.0
    )


def add_ring_forms(confs: ConformerSet, *, around, lg_idx: int, seed: int) -> ConformerSet:
    """Add both chairs of every saturated six-membered ring at the site, and twist-boats if needed.

    Parameters
    ----------
    confs : ConformerSet
        Embedded conformers; its first conformer sets the hydrogen labelling.
    around : iterable of int
        Atoms whose rings are enumerated (the alpha and beta carbons).
    lg_idx : int
        The leaving-group atom. When no chair within :data:`TWIST_BOAT_TRIGGER_KCAL` of the
        lowest conformer puts it axial on a ring holding its carbon, the twist-boats of that
        ring are built too.
    seed : int
        Seed of the constrained embeddings (results repeat).

    Returns
    -------
    ConformerSet
        The input conformers and the built ones (``forms`` says which is which).
    """
    around = list(around)
    rings = saturated_six_rings(confs.mol, around)
    if not rings:
        return confs
    mol = Chem.Mol(confs.mol)
    ref = _handedness(mol, mol.GetConformer(confs.conf_ids[0]))
    ids, energies = list(confs.conf_ids), list(confs.energies_kcal)
    forms = list(confs.forms) or ["embedded"] * len(ids)
    template = Chem.Mol(confs.mol, confId=confs.conf_ids[0])

    def add(built) -> None:
        for form_mol, energy, _ in built:
            cid = mol.AddConformer(form_mol.GetConformer(), assignId=True)
            if _restore_labels(mol, mol.GetConformer(cid), ref):
                ids.append(cid)
                energies.append(energy)
                forms.append("built")
            else:
                mol.RemoveConformer(cid)

    for n, ring in enumerate(rings):
        add(build_ring_forms(template, ring, seed=seed + 101 * n))
    alpha = next(n.GetIdx() for n in mol.GetAtomWithIdx(lg_idx).GetNeighbors() if n.GetIdx() in around)
    for n, ring in enumerate(rings):
        if alpha not in ring:
            continue
        low = min(energies)
        axial_chair = any(
            e - low <= TWIST_BOAT_TRIGGER_KCAL and ring_form(mol, ring, cid) == "chair"
            and is_axial(mol, ring_atom=alpha, substituent=lg_idx, conf_id=cid)
            for cid, e in zip(ids, energies, strict=True))
        if not axial_chair:
            add(build_ring_forms(template, ring, seed=seed + 101 * n + 53, chairs=False, twist_boats=True))
    return ConformerSet(mol=mol, conf_ids=tuple(ids), energies_kcal=tuple(energies), forms=tuple(forms))


def _shared_six_ring(mol: Chem.Mol, a: int, b: int) -> tuple[int, ...] | None:
    for ring in saturated_six_rings(mol, [a]):
        if b in ring:
            return ring
    return None


def _dihedral(mol: Chem.Mol, atoms, conf_id: int = -1) -> float:
    return rdMolTransforms.GetDihedralDeg(mol.GetConformer(conf_id), *atoms)


def _in_ring(confs: ConformerSet, atoms, target_deg: float, ring, tolerance_deg: float):
    """Lowest chair or twist-boat with the dihedral at the target (or driven there keeping its form)."""
    best, refined = None, 0
    for i in np.argsort(confs.energies_kcal, kind="stable"):
        energy = confs.energies_kcal[i]
        if best is not None and energy >= best[1]:
            break  # sorted: nothing later can be lower
        start = Chem.Mol(confs.mol, confId=confs.conf_ids[i])
        form = ring_form(start, ring)
        if form not in RING_FORMS:
            continue
        gap = _angle_gap(_dihedral(start, atoms), target_deg)
        if gap <= tolerance_deg:
            return start, energy, energy
        if gap <= tolerance_deg + 30.0 and refined < 3:
            refined += 1
            mol, driven = _constrained_minimum(start, atoms, target_deg)
            if np.isfinite(driven) and ring_form(mol, ring) == form and (best is None or driven < best[1]):
                best = (mol, driven, _relaxed_energy(mol, driven))
    return best


def _ring_key(mol: Chem.Mol, rings, conf_id: int) -> tuple:
    return tuple((ring_form(mol, ring, conf_id), chair_sign(mol, ring, conf_id)) for ring in rings)


def _rotamer(confs: ConformerSet, atoms, target_deg: float, tolerance_deg: float):
    """Drive the dihedral to the target from the lowest conformer of each ring form and the nearest one."""
    rings = saturated_six_rings(confs.mol, [atoms[1], atoms[2]])
    order = [confs.conf_ids[i] for i in np.argsort(confs.energies_kcal, kind="stable")]
    by_key: dict = {}
    for cid in order:
        by_key.setdefault(_ring_key(confs.mol, rings, cid), cid)
    gaps = [_angle_gap(_dihedral(confs.mol, atoms, cid), target_deg) for cid in confs.conf_ids]
    nearest = confs.conf_ids[int(np.argmin(gaps))]
    starts = list(dict.fromkeys([*list(by_key.values())[:3], nearest, *order[:3]]))[:5]
    best = None
    for cid in starts:
        mol, driven = _constrained_minimum(Chem.Mol(confs.mol, confId=cid), atoms, target_deg)
        if not np.isfinite(driven):
            continue
        relaxed = Chem.Mol(mol)
        relaxed_e = _relax_in_place(relaxed)
        # released, a staggered rotamer stays put (a minimum of its own); an eclipsed one drifts
        # away and its restrained energy is what the path pays
        if np.isfinite(relaxed_e) and _angle_gap(_dihedral(relaxed, atoms), target_deg) <= TOLERANCE_DEG:
            candidate = (relaxed, relaxed_e, relaxed_e)
        else:
            candidate = (mol, driven, relaxed_e)
        if best is None or candidate[1] < best[1] - 1e-6:
            best = candidate
    if best is None:
        low = Chem.Mol(confs.mol, confId=confs.lowest_conf_id)
        return low, float("inf"), float("inf")
    return best


def _relax_in_place(mol: Chem.Mol) -> float:
    """MMFF94 minimum of ``mol``'s conformer, in place; inf when a stereocentre inverted on the way."""
    before = _handedness(mol, mol.GetConformer())
    energy = mmff_minimise(mol, _MAX_ITERS)
    if _handedness(mol, mol.GetConformer()) != before:
        return float("inf")
    return energy


def _describe(confs: ConformerSet, mol: Chem.Mol, alpha_idx: int) -> tuple[str, bool]:
    """Name of the conformer's shape and whether the ring holding the alpha carbon left its lowest chair."""
    rings = saturated_six_rings(confs.mol, [alpha_idx])
    if not rings:
        return "rotamer", False
    lowest = Chem.Mol(confs.mol, confId=confs.lowest_conf_id)
    form, ring = ring_form(mol, rings[0]), rings[0]
    if form == "chair":
        flipped = chair_sign(mol, ring) != chair_sign(lowest, ring)
        return ("flipped chair" if flipped else "chair"), flipped
    return ("twist-boat" if form == "twist-boat" else "distorted ring"), True


def find_periplanar(confs: ConformerSet, *, h_idx: int, beta_idx: int, alpha_idx: int, lg_idx: int,
                    target_deg: float = 180.0, tolerance_deg: float = TOLERANCE_DEG) -> PeriplanarResult:
    """The lowest-energy conformer with H-C(beta)-C(alpha)-LG at ``target_deg``, and its cost.

    Parameters
    ----------
    confs : ConformerSet
        Conformers of the substrate (reused for every beta-H), ideally with
        :func:`add_ring_forms` applied.
    h_idx, beta_idx, alpha_idx, lg_idx : int, keyword-only
        Atom indices in ``confs.mol``.
    target_deg : float, keyword-only
        180 for anti-periplanar, 0 for syn-periplanar.
    tolerance_deg : float, keyword-only
        Largest deviation from the target that counts as periplanar.
    """
    atoms = (h_idx, beta_idx, alpha_idx, lg_idx)
    ring = _shared_six_ring(confs.mol, alpha_idx, beta_idx)
    found = _in_ring(confs, atoms, target_deg, ring, tolerance_deg) if ring is not None else None
    if found is None and ring is not None and abs(target_deg) > 90.0:
        # anti in a six-membered ring: the chairs and twist-boats were all looked at; forcing the
        # dihedral through a distorted ring would only report a cost far beyond reach
        low = Chem.Mol(confs.mol, confId=confs.lowest_conf_id)
        found = (low, float("inf"), float("inf"))
    elif found is None:
        found = _rotamer(confs, atoms, target_deg, tolerance_deg)
    mol, energy, relaxed = found
    dihedral = _dihedral(mol, atoms)
    strain = max(0.0, energy - confs.min_energy_kcal) if np.isfinite(energy) else 99.0
    conformer, ring_flip = _describe(confs, mol, alpha_idx)
    periplanar = bool(np.isfinite(energy) and _angle_gap(dihedral, target_deg) <= tolerance_deg)
    if ring is not None and abs(target_deg) > 90.0:
        periplanar = periplanar and ring_form(mol, ring) in RING_FORMS
    return PeriplanarResult(
        h_idx=h_idx, beta_idx=beta_idx, alpha_idx=alpha_idx, lg_idx=lg_idx, target_deg=float(target_deg),
        dihedral_deg=float(dihedral), strain_kcal=float(strain), energy_kcal=float(energy),
        relaxed_kcal=float(relaxed), periplanar=periplanar,
        reachable=periplanar and strain <= MAX_STRAIN_KCAL,
        cis_pairs=_cis_pairs(mol, h_idx, beta_idx, alpha_idx, lg_idx),
        lg_axial=is_axial(mol, ring_atom=alpha_idx, substituent=lg_idx),
        conformer=conformer, ring_flip=ring_flip,
    )
