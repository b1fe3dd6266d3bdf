"""Which protons of a molecule are chemically (and magnetically) equivalent.

Protons are grouped in two steps. RDKit's symmetry classes
(``CanonicalRankAtoms(breakTies=False)`` on the molecule with explicit H and
stereo) give the topologically equivalent atoms. Each class is then split by a
substitution test: one proton at a time is replaced by deuterium with its
position in space fixed, and two protons are equivalent only when the two
labelled molecules are identical or mirror images (homotopic or enantiotopic).
Diastereotopic protons (a CH2 next to a stereocentre, the two H of ``=CH2``)
give diastereomers and become separate sites.

The cis/trans relation of the substituents across every C=C double bond, which
the shift and coupling models need, is worked out here too
(:func:`map_alkene_relations`).
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass

import numpy as np
from rdkit import Chem

__all__ = [
    "AlkeneRelation",
    "map_alkene_relations",
    "find_equivalent_protons",
    "check_magnetic_equivalence",
    "amide_rotamer_branches",
    "split_amide_rotamers",
]

_DOUBLE = Chem.BondType.DOUBLE
_CIS_STEREO = (Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOZ)
_TRANS_STEREO = (Chem.BondStereo.STEREOTRANS, Chem.BondStereo.STEREOE)
#: Largest ring in which a double bond is taken as cis without a stereo label.
_MAX_CIS_RING = 7


@dataclass(frozen=True)
class AlkeneRelation:
    """Geometry of one C=C double bond.

    Attributes
    ----------
    carbons : tuple of int
        The two double-bonded carbons.
    cis_pairs : frozenset of tuple
        Ordered pairs ``(u, v)`` (both orders present) of atoms on opposite
        carbons that are cis to each other; all other cross pairs are trans.
    assumed : bool
        True when the bond is stereogenic but its geometry was not given and
        E was assumed (highest-ranked substituents trans).
    """

    carbons: tuple[int, int]
    cis_pairs: frozenset
    assumed: bool = False

    def relation(self, u: int, v: int) -> str:
        """``"cis"`` or ``"trans"`` for substituents ``u`` and ``v`` on opposite carbons."""
        return "cis" if (u, v) in self.cis_pairs else "trans"


def map_alkene_relations(mol_h: Chem.Mol) -> dict[int, AlkeneRelation]:
    """Cis/trans relations across every non-aromatic C=C of a molecule with explicit H.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit hydrogens, parsed from isomeric SMILES (bond
        directions present) so that specified E/Z geometry is known.

    Returns
    -------
    dict of int to AlkeneRelation
        Keyed by each double-bonded carbon (both carbons map to the same object).
    """
    mol = Chem.Mol(mol_h)
    Chem.SetBondStereoFromDirections(mol)
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=True))
    sym = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    out: dict[int, AlkeneRelation] = {}
    for bond in mol.GetBonds():
        if bond.GetBondType() != _DOUBLE or bond.GetIsAromatic():
            continue
        a, b = bond.GetBeginAtom(), bond.GetEndAtom()
        if a.GetSymbol() != "C" or b.GetSymbol() != "C":
            continue
        na = sorted(n.GetIdx() for n in a.GetNeighbors() if n.GetIdx() != b.GetIdx())
        nb = sorted(n.GetIdx() for n in b.GetNeighbors() if n.GetIdx() != a.GetIdx())
        if len(na) != 2 or len(nb) != 2:
            continue  # cumulated double bonds have no cis/trans relation
        ref_a, ref_b, ref_cis, assumed = _reference_pair(mol, bond, na, nb, ranks, sym)
        cis = set()
        for u in na:
            for v in nb:
                if ((u == ref_a) == (v == ref_b)) == ref_cis:
                    cis.update({(u, v), (v, u)})
        rel = AlkeneRelation((a.GetIdx(), b.GetIdx()), frozenset(cis), assumed)
        out[a.GetIdx()] = out[b.GetIdx()] = rel
    return out


def _reference_pair(mol, bond, na, nb, ranks, sym):
    """One substituent pair of known relation: (u, v, is_cis, assumed)."""
    ring_info = mol.GetRingInfo()
    a, b = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
    for ring in sorted(ring_info.AtomRings(), key=len):
        if len(ring) <= _MAX_CIS_RING and a in ring and b in ring:
            u = next(x for x in na if x in ring)
            v = next(x for x in nb if x in ring)
            return u, v, True, False
    stereo = bond.GetStereo()
    if stereo in _CIS_STEREO + _TRANS_STEREO and len(bond.GetStereoAtoms()) == 2:
        u, v = bond.GetStereoAtoms()
        if u not in na:
            u, v = v, u
        return u, v, stereo in _CIS_STEREO, False
    u = max(na, key=lambda x: ranks[x])
    v = max(nb, key=lambda x: ranks[x])
    stereogenic = sym[na[0]] != sym[na[1]] and sym[nb[0]] != sym[nb[1]]
    return u, v, False, stereogenic


def find_equivalent_protons(mol_h: Chem.Mol,
                            relations: dict[int, AlkeneRelation] | None = None) -> tuple:
    """Group the H atoms of ``mol_h`` into chemically equivalent sets.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit hydrogens and stereo from isomeric SMILES.
    relations : dict, optional
        Output of :func:`map_alkene_relations` (computed when None).

    Returns
    -------
    tuple of tuple of int
        H atom indices of each group, groups ordered by their first heavy
        neighbour's index, atoms ascending.
    """
    relations = map_alkene_relations(mol_h) if relations is None else relations
    ranks = list(Chem.CanonicalRankAtoms(mol_h, breakTies=False, includeChirality=True))
    by_rank: dict[int, list[int]] = defaultdict(list)
    for atom in mol_h.GetAtoms():
        if atom.GetAtomicNum() == 1:
            by_rank[ranks[atom.GetIdx()]].append(atom.GetIdx())
    frame = _fix_prochiral_centres(mol_h, ranks)
    _fix_alkene_geometry(frame, relations)
    groups: list[tuple[int, ...]] = []
    for members in by_rank.values():
        keys = {h: _substitution_key(frame, h) for h in members}
        for part in _split_by_key(members, keys):
            groups.append(tuple(sorted(part)))
    return tuple(sorted(groups, key=lambda g: (_parent(mol_h, g[0]), g[0])))


def _parent(mol_h, h_idx: int) -> int:
    return mol_h.GetAtomWithIdx(h_idx).GetNeighbors()[0].GetIdx()


def _fix_prochiral_centres(mol_h: Chem.Mol, ranks) -> Chem.RWMol:
    """Copy of ``mol_h`` with every prochiral or unspecified sp3 centre given a fixed arrangement.

    A racemate has the spectrum of either enantiomer, so an unspecified
    stereocentre is fixed arbitrarily.
    """
    frame = Chem.RWMol(mol_h)
    for atom in frame.GetAtoms():
        if atom.GetDegree() != 4 or atom.GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED:
            continue
        nbr_ranks = [ranks[n.GetIdx()] for n in atom.GetNeighbors()]
        if len(set(nbr_ranks)) >= 3:
            atom.SetChiralTag(Chem.ChiralType.CHI_TETRAHEDRAL_CW)
    return frame


def _fix_alkene_geometry(frame: Chem.RWMol, relations) -> None:
    """Write every C=C geometry of ``relations`` into ``frame`` as explicit stereo."""
    for bond in frame.GetBonds():
        if bond.GetBondDir() != Chem.BondDir.NONE:
            bond.SetBondDir(Chem.BondDir.NONE)
    for rel in {id(r): r for r in relations.values()}.values():
        a, b = rel.carbons
        bond = frame.GetBondBetweenAtoms(a, b)
        begin, end = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        u = min(n.GetIdx() for n in frame.GetAtomWithIdx(begin).GetNeighbors() if n.GetIdx() != end)
        v = min(n.GetIdx() for n in frame.GetAtomWithIdx(end).GetNeighbors() if n.GetIdx() != begin)
        bond.SetStereoAtoms(u, v)
        cis = rel.relation(u, v) == "cis"
        bond.SetStereo(Chem.BondStereo.STEREOCIS if cis else Chem.BondStereo.STEREOTRANS)
    Chem.SetDoubleBondNeighborDirections(frame)


def _substitution_key(frame: Chem.Mol, h_idx: int) -> tuple[str, str]:
    """Canonical SMILES of the molecule with ``h_idx`` labelled, and of its mirror image."""
    mol = Chem.RWMol(frame)
    mol.GetAtomWithIdx(h_idx).SetIsotope(2)
    smiles = _canonical(Chem.MolToSmiles(mol))
    mirror = _canonical(smiles.replace("@@", "\0").replace("@", "@@").replace("\0", "@")) or smiles
    return smiles, mirror


def _canonical(smiles: str) -> str | None:
    """Re-parse (drops unlabelled H, cleans stereo on non-stereocentres) and canonicalise."""
    mol = Chem.MolFromSmiles(smiles)
    return Chem.MolToSmiles(mol) if mol is not None else None


def _split_by_key(members, keys):
    parts: list[list[int]] = []
    for h in members:
        for part in parts:
            ref = keys[part[0]]
            if keys[h][0] in ref:
                part.append(h)
                break
        else:
            parts.append([h])
    return parts


def check_magnetic_equivalence(groups, j_hz_by_atom: np.ndarray, *, tol_hz: float = 0.5) -> tuple[bool, ...]:
    """Whether each group couples equally, proton by proton, to every other proton.

    Parameters
    ----------
    groups : sequence of sequence of int
        H atom indices per group (from :func:`find_equivalent_protons`).
    j_hz_by_atom : ndarray, shape (n_atoms, n_atoms)
        Couplings between individual atoms (rotation-averaged where groups
        rotate freely).
    tol_hz : float, keyword-only
        Largest spread of couplings still counted as equal.

    Returns
    -------
    tuple of bool
        One flag per group; single protons are trivially equivalent.
    """
    j = np.asarray(j_hz_by_atom, dtype=float)
    flags = []
    all_h = sorted({h for g in groups for h in g})
    for group in groups:
        members = list(group)
        outside = [h for h in all_h if h not in group]
        if len(members) < 2 or not outside:
            flags.append(True)
            continue
        block = j[np.ix_(members, outside)]
        flags.append(bool(np.all(np.ptp(block, axis=0) <= tol_hz)))
    return tuple(flags)


def amide_rotamer_branches(mol_h: Chem.Mol) -> tuple[tuple[frozenset, frozenset], ...]:
    """The two N-substituent branches of every tertiary amide whose substituents are alike.

    Rotation about the amide C-N bond is slow on the NMR time scale at room temperature, so the
    two N-alkyl groups of N,N-dimethylacetamide (3.02 and 2.94 ppm, Gottlieb, Kotlyar, Nudelman,
    J. Org. Chem. 1997, 62, 7512, Table 1; from memory) are two sites although they are
    topologically equivalent. Only acyclic branches count (a ring through N is already fixed).

    Returns
    -------
    tuple of (frozenset, frozenset)
        Per amide N, the H atoms of its two substituent branches.
    """
    out = []
    for atom in mol_h.GetAtoms():
        if atom.GetSymbol() != "N" or atom.GetIsAromatic() or atom.GetDegree() != 3:
            continue
        heavy = [n for n in atom.GetNeighbors() if n.GetAtomicNum() > 1]
        acyl = [n for n in heavy if n.GetSymbol() == "C" and any(
            b.GetBondType() == _DOUBLE and b.GetOtherAtom(n).GetSymbol() in ("O", "S") for b in n.GetBonds())]
        if len(heavy) != 3 or len(acyl) != 1:
            continue
        subs = [n for n in heavy if n.GetIdx() != acyl[0].GetIdx()]
        if any(mol_h.GetBondBetweenAtoms(atom.GetIdx(), n.GetIdx()).IsInRing() for n in subs):
            continue
        branches = [_branch(mol_h, n.GetIdx(), atom.GetIdx()) for n in subs]
        if branches[0] & branches[1]:
            continue
        hs = [frozenset(i for i in b if mol_h.GetAtomWithIdx(i).GetAtomicNum() == 1) for b in branches]
        out.append((hs[0], hs[1]))
    return tuple(out)


def _branch(mol_h, start: int, block: int) -> set[int]:
    seen, stack = {start}, [start]
    while stack:
        for nbr in mol_h.GetAtomWithIdx(stack.pop()).GetNeighbors():
            if nbr.GetIdx() != block and nbr.GetIdx() not in seen:
                seen.add(nbr.GetIdx())
                stack.append(nbr.GetIdx())
    return seen


def split_amide_rotamers(mol_h: Chem.Mol, groups, branches) -> tuple:
    """``groups`` with every group that spans both branches of an amide N split in two.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
    groups : sequence of tuple of int
        From :func:`find_equivalent_protons`.
    branches : sequence of (frozenset, frozenset)
        From :func:`amide_rotamer_branches`.
    """
    out = [tuple(g) for g in groups]
    for first, second in branches:
        split = []
        for group in out:
            a = tuple(h for h in group if h in first)
            b = tuple(h for h in group if h in second)
            if a and b:
                rest = tuple(h for h in group if h not in first and h not in second)
                split += [p for p in (a, b, rest) if p]
            else:
                split.append(group)
        out = split
    return tuple(sorted(out, key=lambda g: (_parent(mol_h, g[0]), g[0])))
