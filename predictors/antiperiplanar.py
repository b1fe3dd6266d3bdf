"""Three-dimensional test of the anti-periplanar requirement of E2.

Conformers are embedded with ETKDG and minimised with MMFF94 once per
substrate; each beta-H is then driven to an H-C-C-LG dihedral of 180 deg (anti)
or 0 deg (syn) by a constrained minimisation started from the conformer
closest to that dihedral. The strain energy is the unconstrained MMFF energy of
the constrained geometry minus the lowest conformer energy. The substituents
that face each other in that geometry become cis in the alkene (dihedral
below 90 deg), which fixes the alkene geometry. In cyclohexanes the anti
geometry is only reached with both groups axial; :func:`is_axial` tells which
chair a geometry is in, so the cost of a ring flip can be reported.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms
from rdkit.Chem import rdForceFieldHelpers as ff_helpers  # noqa: N813

from predictors.errors import ChemistryError, InputError

__all__ = [
    "ConformerSet", "PeriplanarResult", "embed_conformers", "find_periplanar", "is_axial", "local_model",
]

#: Largest strain (kcal/mol) at which a periplanar conformer still counts as
#: reachable at room temperature (common practice: a few kcal/mol are paid
#: routinely, e.g. a cyclohexane ring flip to an axial group; 10 is a generous bound).
MAX_STRAIN_KCAL = 10.0
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
    """

    mol: Chem.Mol
    conf_ids: tuple[int, ...]
    energies_kcal: tuple[float, ...]

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
        Dihedral reached by the constrained minimisation.
    strain_kcal : float
        Unconstrained energy of that geometry above the lowest conformer.
    reachable : bool
        Dihedral within :data:`TOLERANCE_DEG`, strain below :data:`MAX_STRAIN_KCAL`
        and, when both carbons are in a six-membered ring, that ring a chair
        (so the H and the leaving group are trans-diaxial).
    periplanar : bool
        Dihedral within tolerance (and chair, in a six-membered ring), whatever the strain.
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
    """Swap H pairs back to the reference handedness; False when a true stereocentre differs."""
    centres = [a for a in mol.GetAtoms() if a.GetDegree() == 4]
    for atom, ref, now in zip(centres, ref_signs, _handedness(mol, conf), strict=True):
        if ref == now:
            continue
        hs = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
        if len(hs) < 2:
            return False
        first, second = conf.GetAtomPosition(hs[0]), conf.GetAtomPosition(hs[1])
        conf.SetAtomPosition(hs[0], second)
        conf.SetAtomPosition(hs[1], first)
    return True


def _local_atoms(mol: Chem.Mol, centre, radius: int) -> set[int]:
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    dist = Chem.GetDistanceMatrix(mol)
    keep = {i for i in heavy if min(dist[c][i] for c in centre) <= radius}
    rings = [set(r) for r in mol.GetRingInfo().AtomRings()]
    changed = True
    while changed:
        changed = False
        for ring in rings:
            if keep & ring and not ring <= keep:
                keep |= ring
                changed = True
        for bond in mol.GetBonds():
            ends = {bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()}
            if bond.GetBondType() != Chem.BondType.SINGLE and len(ends & keep) == 1:
                keep |= ends
                changed = True
    return keep


def local_model(mol: Chem.Mol, *, centre, radius: int = 3) -> tuple[Chem.Mol, dict[int, int]]:
    """Cut a molecule down to the atoms within ``radius`` bonds of ``centre``.

    Whole rings and both ends of multiple bonds are kept; each cut single bond
    is capped by turning the first atom outside into a methyl carbon, so every
    kept stereocentre keeps its neighbours (and its configuration). Hydrogens of
    kept atoms keep their identity, so diastereotopic H can be followed.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule with explicit hydrogens.
    centre : iterable of int
        Atoms the model is built around (e.g. the alpha and beta carbons).
    radius : int, keyword-only
        Bonds from ``centre`` to keep.

    Returns
    -------
    model : rdkit.Chem.Mol
        Capped fragment with explicit hydrogens.
    mapping : dict of int to int
        Original atom index -> model atom index, for every kept heavy atom and its H.
    """
    centre = list(centre)
    keep = _local_atoms(mol, centre, radius)
    caps = {n.GetIdx() for i in keep for n in mol.GetAtomWithIdx(i).GetNeighbors()
            if n.GetAtomicNum() > 1 and n.GetIdx() not in keep}
    retained = set(keep) | caps
    retained |= {n.GetIdx() for i in keep for n in mol.GetAtomWithIdx(i).GetNeighbors()
                 if n.GetAtomicNum() == 1}
    rw = Chem.RWMol(mol)
    for atom in rw.GetAtoms():
        atom.SetIntProp("_local", atom.GetIdx())
    for idx in sorted(set(range(mol.GetNumAtoms())) - retained, reverse=True):
        rw.RemoveAtom(idx)
    cap_new = []
    for atom in rw.GetAtoms():
        if atom.GetIntProp("_local") in caps:
            atom.SetAtomicNum(6)
            atom.SetFormalCharge(0)
            atom.SetIsAromatic(False)
            atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
            atom.SetNoImplicit(False)
            atom.SetNumExplicitHs(0)
            cap_new.append(atom.GetIdx())
    for bond in rw.GetBonds():
        if bond.GetBeginAtom().GetIntProp("_local") in caps or bond.GetEndAtom().GetIntProp("_local") in caps:
            bond.SetBondType(Chem.BondType.SINGLE)
            bond.SetIsAromatic(False)
    model = rw.GetMol()
    Chem.SanitizeMol(model)
    model = Chem.AddHs(model, onlyOnAtoms=tuple(cap_new))
    mapping = {a.GetIntProp("_local"): a.GetIdx() for a in model.GetAtoms()
               if a.HasProp("_local") and a.GetIntProp("_local") not in caps}
    return model, mapping


def _angle_gap(a_deg: float, b_deg: float) -> float:
    return abs((a_deg - b_deg + 180.0) % 360.0 - 180.0)


def _starts(confs: ConformerSet, atoms, target_deg: float, ring):
    """Start geometries, best first; in a six-membered ring the flipped lowest chair comes third."""
    cids = _start_conformers(confs, atoms, target_deg)
    for n, cid in enumerate(cids):
        if n == 2 and ring is not None:
            flipped = _flipped_chair(Chem.Mol(confs.mol, confId=confs.lowest_conf_id), ring)
            if flipped is not None:
                yield flipped
        yield Chem.Mol(confs.mol, confId=cid)


def _start_conformers(confs: ConformerSet, atoms: tuple[int, int, int, int], target_deg: float) -> list[int]:
    """Closest conformer to the target dihedral, the lowest one, then up to three more by closeness.

    The caller stops after the first two when they already give a periplanar geometry, so the
    extra starts are only paid for hydrogens that are hard to bring anti (e.g. a ring flip).
    """
    gaps = [
        _angle_gap(rdMolTransforms.GetDihedralDeg(confs.mol.GetConformer(cid), *atoms), target_deg)
        for cid in confs.conf_ids
    ]
    by_gap = [confs.conf_ids[i] for i in np.argsort(gaps, kind="stable")]
    order = [by_gap[0]] + [confs.lowest_conf_id] + by_gap[1:]
    return list(dict.fromkeys(order))[:5]


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


def _positions_into(mol: Chem.Mol, field) -> None:
    conf = mol.GetConformer()
    for i, xyz in enumerate(np.asarray(field.Positions()).reshape(-1, 3)):
        conf.SetAtomPosition(i, xyz.tolist())


def _constrained_minimum(start: Chem.Mol, atoms, target_deg: float) -> tuple[Chem.Mol, float]:
    """Minimise with the dihedral restrained; energy is inf when a centre was inverted on the way."""
    mol = Chem.Mol(start)
    before = _handedness(mol, mol.GetConformer())
    props = ff_helpers.MMFFGetMoleculeProperties(mol)
    field = ff_helpers.MMFFGetMoleculeForceField(mol, props)
    field.MMFFAddTorsionConstraint(*atoms, False, target_deg - 1.0, target_deg + 1.0, _RESTRAINT_KCAL)
    field.Minimize(maxIts=_MAX_ITERS)
    _positions_into(mol, field)
    if _handedness(mol, mol.GetConformer()) != before:
        return mol, float("inf")
    energy = ff_helpers.MMFFGetMoleculeForceField(mol, props).CalcEnergy()
    return mol, float(energy)


def _flipped_chair(start: Chem.Mol, ring: tuple[int, ...]) -> Chem.Mol | None:
    """The other chair: every ring torsion driven to minus its value, then released."""
    mol = Chem.Mol(start)
    before = _handedness(mol, mol.GetConformer())
    quads = [tuple(ring[(i + k) % 6] for k in range(4)) for i in range(6)]
    props = ff_helpers.MMFFGetMoleculeProperties(mol)
    field = ff_helpers.MMFFGetMoleculeForceField(mol, props)
    for quad in quads:
        flipped = -rdMolTransforms.GetDihedralDeg(mol.GetConformer(), *quad)
        field.MMFFAddTorsionConstraint(*quad, False, flipped - 5.0, flipped + 5.0, 100.0)
    field.Minimize(maxIts=_MAX_ITERS)
    _positions_into(mol, field)
    if not _restore_labels(mol, mol.GetConformer(), before):
        return None
    field = ff_helpers.MMFFGetMoleculeForceField(mol, props)
    field.Minimize(maxIts=_MAX_ITERS)
    _positions_into(mol, field)
    if _handedness(mol, mol.GetConformer()) != before or not _is_chair(mol, ring):
        return None
    return mol


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
    relaxed = Chem.Mol(mol)
    before = _handedness(relaxed, relaxed.GetConformer())
    props = ff_helpers.MMFFGetMoleculeProperties(relaxed)
    field = ff_helpers.MMFFGetMoleculeForceField(relaxed, props)
    field.Minimize(maxIts=_MAX_ITERS)
    conf = relaxed.GetConformer()
    for i, xyz in enumerate(np.asarray(field.Positions()).reshape(-1, 3)):
        conf.SetAtomPosition(i, xyz.tolist())
    if _handedness(relaxed, conf) != before:
        return float("inf")
    return float(field.CalcEnergy())


def _shared_six_ring(mol: Chem.Mol, a: int, b: int) -> tuple[int, ...] | None:
    for ring in mol.GetRingInfo().AtomRings():
        if len(ring) == 6 and a in ring and b in ring:
            return ring
    return None


def _is_chair(mol: Chem.Mol, ring: tuple[int, ...]) -> bool:
    """Chair: ring torsions alternate in sign and none is near zero (twist and boat forms fail)."""
    conf = mol.GetConformer()
    quads = [tuple(ring[(i + k) % 6] for k in range(4)) for i in range(6)]
    torsions = [rdMolTransforms.GetDihedralDeg(conf, *quad) for quad in quads]
    alternating = all(torsions[i] * torsions[(i + 1) % 6] < 0 for i in range(6))
    return alternating and min(abs(t) for t in torsions) > 30.0


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


def find_periplanar(confs: ConformerSet, *, h_idx: int, beta_idx: int, alpha_idx: int, lg_idx: int,
                    target_deg: float = 180.0) -> PeriplanarResult:
    """Drive H-C(beta)-C(alpha)-LG to ``target_deg`` and report reachability and strain.

    Parameters
    ----------
    confs : ConformerSet
        Conformers of the substrate (reused for every beta-H).
    h_idx, beta_idx, alpha_idx, lg_idx : int, keyword-only
        Atom indices in ``confs.mol``.
    target_deg : float, keyword-only
        180 for anti-periplanar, 0 for syn-periplanar.
    """
    atoms = (h_idx, beta_idx, alpha_idx, lg_idx)
    ring = _shared_six_ring(confs.mol, alpha_idx, beta_idx)
    best = None
    for n_tried, start in enumerate(_starts(confs, atoms, target_deg, ring)):
        if n_tried >= 2 and not best[0][0]:
            break  # a periplanar geometry was found from the first two starts
        mol, energy = _constrained_minimum(start, atoms, target_deg)
        dihedral = rdMolTransforms.GetDihedralDeg(mol.GetConformer(), *atoms)
        bad = _angle_gap(dihedral, target_deg) > TOLERANCE_DEG or not np.isfinite(energy) or (
            ring is not None and not _is_chair(mol, ring))
        score = (bad, energy)
        if best is None or score < best[0]:
            best = (score, mol, energy, dihedral)
    _, mol, energy, dihedral = best
    strain = max(0.0, energy - confs.min_energy_kcal)
    if not np.isfinite(strain):
        strain = 99.0  # every start inverted a centre: not reachable
    chair_ok = ring is None or _is_chair(mol, ring)
    periplanar = chair_ok and _angle_gap(dihedral, target_deg) <= TOLERANCE_DEG and np.isfinite(energy)
    return PeriplanarResult(
        h_idx=h_idx, beta_idx=beta_idx, alpha_idx=alpha_idx, lg_idx=lg_idx, target_deg=float(target_deg),
        dihedral_deg=float(dihedral), strain_kcal=float(strain), energy_kcal=float(energy),
        relaxed_kcal=_relaxed_energy(mol, energy), periplanar=periplanar,
        reachable=periplanar and strain <= MAX_STRAIN_KCAL,
        cis_pairs=_cis_pairs(mol, h_idx, beta_idx, alpha_idx, lg_idx),
        lg_axial=is_axial(mol, ring_atom=alpha_idx, substituent=lg_idx),
    )
