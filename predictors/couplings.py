"""Signed 1H-1H coupling constants (Hz), proton pair by proton pair.

* across C=C: 3J cis/trans and 2J geminal falling linearly with the
  electronegativity of the substituents; ring size sets cis 3J in small rings;
* allylic 3J and 4J from the Garbisch dihedral relations;
* sp3 vicinal 3J from the Haasnoot-de Leeuw-Altona equation, Boltzmann-averaged
  over MMFF conformers (ETKDGv3 embedding, pruned) across ring bonds, and averaged over the
  three staggered rotamers (three-term Karplus curve plus the HLA substituent terms) across
  acyclic bonds;
* sp3 geminal 2J by environment; aromatic ortho/meta/para;
* one-bond 1J(C,H) (positions of the 13C satellites) by hybridisation plus additive
  substituent terms.

Model values live in ``data/couplings.csv`` with their sources.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from rdkit import Chem, RDLogger
from rdkit.Chem import AllChem

from predictors.equivalence import AlkeneRelation
from predictors.shifts import load_increment_table

__all__ = [
    "ConformerSet",
    "embed_conformers",
    "karplus_hla",
    "karplus_simple",
    "garbisch_vicinal",
    "garbisch_allylic",
    "predict_couplings",
    "predict_one_bond_ch",
    "slow_exchange_protons",
]

_RT_KCAL = 0.0019872 * 298.15


@dataclass(frozen=True, eq=False)
class ConformerSet:
    """Conformers of one molecule with their Boltzmann weights.

    Attributes
    ----------
    coords : ndarray, shape (n_conformers, n_atoms, 3)
        Atom positions in angstrom (read-only); n_conformers may be 0.
    weights : ndarray, shape (n_conformers,)
        Boltzmann weights at 298 K from MMFF energies, summing to 1.
    """

    coords: np.ndarray
    weights: np.ndarray

    def __post_init__(self) -> None:
        for name in ("coords", "weights"):
            arr = np.array(getattr(self, name), dtype=float)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def n_conformers(self) -> int:
        """Number of conformers."""
        return int(self.weights.size)


@functools.cache
def coupling_constants(table: str = "couplings") -> dict[str, tuple[float, float]]:
    """``name -> (value, sd_hz)`` of a packaged coupling table (``predictors/data/<table>.csv``,
    columns name, value, sd_hz; an empty cell is NaN)."""
    out = {}
    for row in load_increment_table(table):
        value = float(row["value"]) if row["value"] else math.nan
        sd = float(row["sd_hz"]) if row["sd_hz"] else math.nan
        out[row["name"]] = (value, sd)
    return out


def _constants() -> dict[str, tuple[float, float]]:
    return coupling_constants("couplings")


def _c(name: str) -> float:
    return _constants()[name][0]


def _sd(name: str) -> float:
    return _constants()[name][1]


def _chi(symbol: str) -> float:
    return _c(f"chi_{symbol}") if f"chi_{symbol}" in _constants() else _c("chi_C")


# --------------------------------------------------------------------------- conformers
def embed_conformers(mol_h: Chem.Mol, *, n_conformers: int = 10, seed: int = 0xC0FFEE) -> ConformerSet:
    """Embed, MMFF-optimise and prune conformers; weight them by Boltzmann factors.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit hydrogens.
    n_conformers : int, keyword-only
        Conformers to embed before pruning (RMSD 0.5 angstrom).
    seed : int, keyword-only
        Random seed of the embedding (results repeat for a given seed).

    Returns
    -------
    ConformerSet
        Empty (0 conformers) when the molecule cannot be embedded.
    """
    params = AllChem.ETKDGv3()
    params.randomSeed = int(seed) & 0x7FFFFFFF
    params.pruneRmsThresh = 0.5
    params.numThreads = 0
    mol = _embed_heavy_then_hydrogens(mol_h, int(n_conformers), params)
    if mol is None:
        return ConformerSet(np.zeros((0, mol_h.GetNumAtoms(), 3)), np.zeros(0))
    ids = [c.GetId() for c in mol.GetConformers()]
    energies = _optimise(mol, len(ids))
    coords = np.array([mol.GetConformer(i).GetPositions() for i in ids])
    rel = (energies - energies.min()) / _RT_KCAL
    weights = np.exp(-rel)
    return ConformerSet(coords, weights / weights.sum())


def _embed_heavy_then_hydrogens(mol_h: Chem.Mol, n_conformers: int, params) -> Chem.Mol | None:
    """Embed the heavy-atom skeleton (fast), then place H; same atom order as ``mol_h``.

    Falls back to embedding ``mol_h`` itself when the atom order would differ.
    """
    RDLogger.DisableLog("rdApp.*")
    try:
        heavy = Chem.RemoveHs(mol_h)
        ids = list(AllChem.EmbedMultipleConfs(heavy, numConfs=max(1, n_conformers), params=params))
        mol = Chem.AddHs(heavy, addCoords=True) if ids else None
        if mol is not None and _same_atom_order(mol, mol_h):
            return mol
        mol = Chem.Mol(mol_h)
        ids = list(AllChem.EmbedMultipleConfs(mol, numConfs=max(1, n_conformers), params=params))
        if not ids:
            params.useRandomCoords = True
            ids = list(AllChem.EmbedMultipleConfs(mol, numConfs=1, params=params))
        return mol if ids else None
    finally:
        RDLogger.EnableLog("rdApp.*")


def _same_atom_order(mol: Chem.Mol, ref: Chem.Mol) -> bool:
    if [a.GetAtomicNum() for a in mol.GetAtoms()] != [a.GetAtomicNum() for a in ref.GetAtoms()]:
        return False
    return all(mol.GetBondBetweenAtoms(b.GetBeginAtomIdx(), b.GetEndAtomIdx()) is not None
               for b in ref.GetBonds())


def _optimise(mol: Chem.Mol, n: int) -> np.ndarray:
    if AllChem.MMFFHasAllMoleculeParams(mol):
        result = AllChem.MMFFOptimizeMoleculeConfs(mol, numThreads=0, maxIters=60)
    elif AllChem.UFFHasAllMoleculeParams(mol):
        result = AllChem.UFFOptimizeMoleculeConfs(mol, numThreads=0, maxIters=60)
    else:
        return np.zeros(n)
    energies = np.array([e for _, e in result], dtype=float)
    return energies if np.all(np.isfinite(energies)) else np.zeros(n)


def _dihedral_deg(coords: np.ndarray, a: int, b: int, c: int, d: int) -> np.ndarray:
    """Dihedral a-b-c-d in degrees for every conformer, shape (n_conformers,)."""
    p0, p1, p2, p3 = (coords[:, i, :] for i in (a, b, c, d))
    b0, b1, b2 = p0 - p1, p2 - p1, p3 - p2
    b1n = b1 / np.linalg.norm(b1, axis=1, keepdims=True)
    v = b0 - np.sum(b0 * b1n, axis=1, keepdims=True) * b1n
    w = b2 - np.sum(b2 * b1n, axis=1, keepdims=True) * b1n
    x = np.sum(v * w, axis=1)
    y = np.sum(np.cross(b1n, v) * w, axis=1)
    return np.degrees(np.arctan2(y, x))


# ------------------------------------------------------------------------------ equations
def karplus_hla(phi_deg, substituents=()) -> np.ndarray:
    """Haasnoot-de Leeuw-Altona vicinal 3J(HH) in Hz.

    Parameters
    ----------
    phi_deg : float or ndarray
        H-C-C-H dihedral angle(s) in degrees.
    substituents : sequence of (float, float)
        ``(dchi, xi)`` for each non-H substituent on the two carbons: the group
        electronegativity difference to H (beta-corrected) and the orientation
        sign +1/-1.
    """
    phi = np.radians(np.asarray(phi_deg, dtype=float))
    cos = np.cos(phi)
    j = _c("hla_p1") * cos**2 + _c("hla_p2") * cos + _c("hla_p3")
    for dchi, xi in substituents:
        arg = xi * phi + np.radians(_c("hla_p6") * abs(dchi))
        j = j + dchi * (_c("hla_p4") + _c("hla_p5") * np.cos(arg) ** 2)
    return j


def karplus_simple(phi_deg) -> np.ndarray:
    """Three-term Karplus curve 3J = A + B cos(phi) + C cos(2 phi) in Hz (no substituent terms)."""
    phi = np.radians(np.asarray(phi_deg, dtype=float))
    return _c("karplus_a") + _c("karplus_b") * np.cos(phi) + _c("karplus_c") * np.cos(2 * phi)


def garbisch_vicinal(phi_deg) -> np.ndarray:
    """Garbisch 3J between a vinyl H and an allylic H, H-C(sp2)-C(sp3)-H dihedral in degrees."""
    phi = np.abs(np.asarray(phi_deg, dtype=float))
    cos2, sin2 = np.cos(np.radians(phi)) ** 2, np.sin(np.radians(phi)) ** 2
    low = _c("garbisch_3j_a") * cos2 + _c("garbisch_3j_c") * sin2
    high = _c("garbisch_3j_b") * cos2 + _c("garbisch_3j_c") * sin2
    return np.where(phi <= 90.0, low, high)


def garbisch_allylic(phi_deg) -> np.ndarray:
    """Garbisch allylic 4J; ``phi_deg`` is the C=C-C-H dihedral in degrees."""
    phi = np.abs(np.asarray(phi_deg, dtype=float))
    cos2, sin2 = np.cos(np.radians(phi)) ** 2, np.sin(np.radians(phi)) ** 2
    low = _c("garbisch_4j_a") * cos2 + _c("garbisch_4j_b") * sin2
    high = _c("garbisch_4j_b") * sin2
    return np.where(phi <= 90.0, low, high)


# -------------------------------------------------------------------------------- driver
def predict_couplings(model: Chem.Mol, conformers: ConformerSet, relations: dict[int, AlkeneRelation],
                      *, exchangeable=frozenset(), pseudo_atoms=frozenset(),
                      slow_exchange=frozenset()) -> tuple[np.ndarray, np.ndarray]:
    """Coupling constants between every pair of H atoms.

    Parameters
    ----------
    model : rdkit.Chem.Mol
        Molecule with explicit H (pseudo-aromatic rings in Kekule form).
    conformers : ConformerSet
        From :func:`embed_conformers` on the same atoms (may be empty).
    relations : dict
        Cis/trans relations (:func:`~predictors.equivalence.map_alkene_relations`).
    exchangeable : set of int, keyword-only
        H atoms in fast exchange (OH, NH, SH): no resolved couplings.
    pseudo_atoms : set of int, keyword-only
        Atoms of de-aromatised 2-pyridone / 2-pyranone / coumarin-type rings
        (:func:`~predictors.shifts.prepare_model_molecule`): their ring 3J come from the
        ``pseudo_*`` rows of ``data/couplings.csv``, not from open-chain alkene rules.
    slow_exchange : set of int, keyword-only
        Those of ``exchangeable`` that exchange slowly in the sample's solvent (alcohol OH and
        amide NH in DMSO-d6, :func:`slow_exchange_protons`): they couple to the H on the carbon
        next to their O or N (``hcoh_slow_*`` and ``hnch_amide_*`` rows, rotational averages)
        and to nothing else.

    Returns
    -------
    j_hz, j_sd_hz : ndarray, shape (n_atoms, n_atoms)
        Symmetric signed couplings and their uncertainties (zero for heavy atoms).
    """
    n = model.GetNumAtoms()
    j = np.zeros((n, n))
    sd = np.zeros((n, n))
    hs = [a.GetIdx() for a in model.GetAtoms() if a.GetAtomicNum() == 1 and a.GetIdx() not in exchangeable]
    dist = Chem.GetDistanceMatrix(model)
    for pos, h1 in enumerate(hs):
        for h2 in hs[pos + 1:]:
            if not 2 <= dist[h1, h2] <= 5:
                continue
            path = list(Chem.GetShortestPath(model, h1, h2))
            value, err = _pair_coupling(model, path, conformers, relations, pseudo_atoms)
            j[h1, h2] = j[h2, h1] = value
            sd[h1, h2] = sd[h2, h1] = err
    for h1 in sorted(set(slow_exchange) & set(exchangeable)):
        for h2, value, err in _slow_exchange_vicinal(model, h1):
            j[h1, h2] = j[h2, h1] = value
            sd[h1, h2] = sd[h2, h1] = err
    return j, sd


def slow_exchange_protons(mol_h: Chem.Mol, exchangeable, solvent_key: str | None) -> frozenset:
    """The exchangeable H that exchange slowly enough to show their couplings: in DMSO-d6 (a strong
    hydrogen-bond acceptor that holds them) the OH of alcohols and the NH of amides; none in other
    solvents (in CDCl3 traces of acid and water average them away; D2O and CD3OD replace them)."""
    if solvent_key != "DMSO-d6":
        return frozenset()
    out = set()
    for h in exchangeable:
        parent = mol_h.GetAtomWithIdx(int(h)).GetNeighbors()[0]
        carbons = [n for n in parent.GetNeighbors() if n.GetSymbol() == "C"]
        alcohol = parent.GetSymbol() == "O" and bool(carbons) and all(_is_sp3(c) for c in carbons)
        amide = parent.GetSymbol() == "N" and not parent.GetIsAromatic() and any(_is_acyl(c) for c in carbons)
        if alcohol or amide:
            out.add(int(h))
    return frozenset(out)


def _is_acyl(carbon) -> bool:
    return any(b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(carbon).GetSymbol() in ("O", "S")
               for b in carbon.GetBonds())


def _slow_exchange_vicinal(mol, h: int) -> list:
    """(H, 3J, sd) to every H on an sp3 carbon next to the O or N that carries ``h``."""
    parent = mol.GetAtomWithIdx(h).GetNeighbors()[0]
    out = []
    for carbon in parent.GetNeighbors():
        if carbon.GetSymbol() != "C" or not _is_sp3(carbon):
            continue
        hs = [n.GetIdx() for n in carbon.GetNeighbors() if n.GetAtomicNum() == 1]
        if not hs:
            continue
        if parent.GetSymbol() == "O":
            name = "hcoh_slow_ch" if len(hs) == 1 else "hcoh_slow_ch2"
        else:
            name = {1: "hnch_amide_ch", 2: "hnch_amide_ch2"}.get(len(hs), "hnch_amide_ch3")
        out += [(x, _c(name), _sd(name)) for x in hs]
    return out


def _pair_coupling(mol, path, conformers, relations, pseudo_atoms=frozenset()) -> tuple[float, float]:
    heavy = [mol.GetAtomWithIdx(i) for i in path[1:-1]]
    if len(heavy) == 1:
        return _geminal(mol, path, heavy[0], relations)
    if len(heavy) == 2 and all(x.GetIdx() in pseudo_atoms for x in heavy):
        pseudo = _pseudo_ring_vicinal(mol, heavy, pseudo_atoms)
        if pseudo is not None:
            return pseudo
    if len(heavy) == 2:
        return _vicinal(mol, path, heavy, conformers, relations)
    if len(heavy) == 3:
        return _four_bond(mol, path, heavy, conformers, relations)
    return _five_bond(mol, heavy)


def _geminal(mol, path, carbon, relations) -> tuple[float, float]:
    if carbon.GetSymbol() != "C":
        return 0.0, 0.0
    if carbon.GetIdx() in relations:
        rel = relations[carbon.GetIdx()]
        other = mol.GetAtomWithIdx(rel.carbons[1] if rel.carbons[0] == carbon.GetIdx() else rel.carbons[0])
        subs = [n for n in other.GetNeighbors() if n.GetIdx() != carbon.GetIdx()]
        dchi = [_chi(n.GetSymbol()) - _c("chi_H") for n in subs]
        return _c("vinyl_gem_base") - _c("vinyl_gem_slope") * float(np.mean(dchi)), _sd("vinyl_gem_base")
    if carbon.GetHybridization() != Chem.HybridizationType.SP3:
        return 0.0, 0.0
    ring_info = mol.GetRingInfo()
    if ring_info.IsAtomInRingOfSize(carbon.GetIdx(), 3):
        return _c("sp3_gem_ring3"), _sd("sp3_gem_ring3")
    value = _c("sp3_gem_base")
    for nbr in carbon.GetNeighbors():
        if nbr.GetSymbol() in ("O", "N", "F", "Cl", "Br", "I"):
            value += _c("sp3_gem_electronegative")
        elif _is_carbonyl_carbon(nbr):
            value += _c("sp3_gem_carbonyl")
        elif nbr.GetSymbol() == "C" and (nbr.GetIsAromatic() or any(
                b.GetBondType() in (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE) for b in nbr.GetBonds())):
            value += _c("sp3_gem_pi")
    return value, _sd("sp3_gem_base")


def _is_sp3(atom) -> bool:
    return atom.GetHybridization() == Chem.HybridizationType.SP3


def _is_carbonyl_carbon(atom) -> bool:
    """A C=O carbon (an aldehyde's where the coupling path runs through its H)."""
    return atom.GetSymbol() == "C" and any(
        b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(atom).GetSymbol() == "O"
        for b in atom.GetBonds())


def _vicinal(mol, path, heavy, conformers, relations) -> tuple[float, float]:
    a, b = heavy
    if a.GetSymbol() != "C" or b.GetSymbol() != "C":
        return 0.0, 0.0
    bond = mol.GetBondBetweenAtoms(a.GetIdx(), b.GetIdx())
    if a.GetIsAromatic() and b.GetIsAromatic():
        return _aromatic_ortho(mol, a, b)
    if bond.GetBondType() == Chem.BondType.DOUBLE and a.GetIdx() in relations:
        return _vinyl_vicinal(mol, path, a, b, relations[a.GetIdx()])
    if _is_sp3(a) and _is_sp3(b):
        return _sp3_vicinal(mol, path, conformers)
    if _is_sp3(a) or _is_sp3(b):
        sp2 = b if _is_sp3(a) else a
        if _is_carbonyl_carbon(sp2):
            return _c("aldehyde_sp3"), _sd("aldehyde_sp3")
        if sp2.GetIdx() in relations and _open_allylic_bond(mol, a, b):
            sp3 = a if sp2 is b else b
            cis = _heavy_cis_to(mol, relations[sp2.GetIdx()], sp2, sp3)
            name = "allylic_3j_open_cis" if cis else "allylic_3j_open"
            return _c(name), _sd(name)
        if sp2.GetIdx() in relations and conformers.n_conformers:
            phi = _dihedral_deg(conformers.coords, *path)
            return float(np.dot(conformers.weights, garbisch_vicinal(phi))), _sd("garbisch_3j_a")
        return 0.0, 0.0
    if _is_carbonyl_carbon(a) or _is_carbonyl_carbon(b):
        return _c("aldehyde_sp2"), _sd("aldehyde_sp2")
    if a.GetIdx() in relations and b.GetIdx() in relations:
        return _c("diene_single"), _sd("diene_single")
    return 0.0, 0.0


def _pseudo_ring_vicinal(mol, heavy, pseudo_atoms) -> tuple[float, float] | None:
    """3J(H,H) across a ring bond of a de-aromatised pyridone/pyranone-type ring, or None.

    In 2-pyridone the Kekule C3=C4 couples like a ring cis double bond (9.3 Hz), the formal
    single bond C4-C5 gives 6.7 Hz (not the 10.5 Hz of an open s-trans diene), and the C5=C6
    bond next to the ring N 6.6 Hz (5.1 Hz next to the ring O of 2-pyranone).
    """
    a, b = heavy
    if a.GetSymbol() != "C" or b.GetSymbol() != "C":
        return None
    ring = _shared_ring(mol, a.GetIdx(), b.GetIdx())
    if ring is None or len(ring) != 6 or not all(i in pseudo_atoms for i in ring):
        return None
    bond = mol.GetBondBetweenAtoms(a.GetIdx(), b.GetIdx())
    if bond.GetBondType() != Chem.BondType.DOUBLE:
        return _c("pseudo_single"), _sd("pseudo_single")
    hetero = {n.GetSymbol() for x in heavy for n in x.GetNeighbors()
              if n.GetIdx() in ring and n.GetSymbol() != "C"}
    name = "pseudo_cis_O" if "O" in hetero else "pseudo_cis_N" if hetero else "pseudo_cis"
    return _c(name), _sd(name)


def _aromatic_ortho(mol, a, b) -> tuple[float, float]:
    ring = _shared_ring(mol, a.GetIdx(), b.GetIdx())
    if ring is not None and len(ring) == 5:
        return _c("five_ring_ortho"), _sd("five_ring_ortho")
    if any(n.GetSymbol() == "N" and n.GetIsAromatic() for x in (a, b) for n in x.GetNeighbors()):
        return _c("pyridine_ortho_n"), _sd("pyridine_ortho_n")
    return _c("aromatic_ortho"), _sd("aromatic_ortho")


def _shared_ring(mol, *atoms):
    rings = [r for r in mol.GetRingInfo().AtomRings() if all(x in r for x in atoms)]
    return min(rings, key=len) if rings else None


def _electroneg_excess(atom, reference: float) -> float:
    return _chi(atom.GetSymbol()) - reference


def _vinyl_vicinal(mol, path, a, b, rel: AlkeneRelation) -> tuple[float, float]:
    h1, h2 = path[0], path[-1]
    subs = [n for x, h in ((a, h1), (b, h2)) for n in x.GetNeighbors()
            if n.GetIdx() not in (h, a.GetIdx(), b.GetIdx())]
    heavy_subs = [n for n in subs if n.GetAtomicNum() > 1]
    cis = rel.relation(h1, h2) == "cis"
    ring = _shared_ring(mol, a.GetIdx(), b.GetIdx())
    if cis and ring is not None and len(ring) <= 7:
        name = f"ring_cis_{len(ring)}"
        return _c(name), _sd(name)
    kind = "cis" if cis else "trans"
    if len(heavy_subs) <= 1:
        dchi = sum(_electroneg_excess(n, _c("chi_H")) for n in heavy_subs)
        value = _c(f"vinyl_{kind}_mono") - _c(f"vinyl_{kind}_slope") * dchi
    else:
        dchi = sum(max(0.0, _electroneg_excess(n, _c("chi_C"))) for n in heavy_subs)
        value = _c(f"vinyl_{kind}_di") - _c(f"vinyl_{kind}_slope") * dchi
    if cis and any(n.GetIsAromatic() for n in heavy_subs):
        value += _c("vinyl_cis_aryl_bonus")
    return value, _sd(f"vinyl_{kind}_mono")


def _sp3_vicinal(mol, path, conformers) -> tuple[float, float]:
    if not conformers.n_conformers:
        return _c("sp3_vicinal_fallback"), _sd("sp3_vicinal_fallback")
    h1, c1, c2, h2 = path
    phi = _dihedral_deg(conformers.coords, h1, c1, c2, h2)
    subs = []
    for carbon, other in ((c1, c2), (c2, c1)):
        for nbr in mol.GetAtomWithIdx(carbon).GetNeighbors():
            if nbr.GetAtomicNum() == 1 or nbr.GetIdx() == other:
                continue
            if carbon == c1:
                tau = _dihedral_deg(conformers.coords, nbr.GetIdx(), c1, c2, h2)
            else:
                tau = _dihedral_deg(conformers.coords, h1, c1, c2, nbr.GetIdx())
            xi = np.where(((tau - phi + 540.0) % 360.0) - 180.0 > 0, -1.0, 1.0)
            subs.append((_group_dchi(mol, nbr, carbon), xi))
    if mol.GetBondBetweenAtoms(c1, c2).IsInRing():
        values = karplus_hla(phi, subs)
        return float(np.dot(conformers.weights, values)), _sd("sp3_vicinal")
    # Acyclic bond: the three staggered rotamers are taken as equally populated (free rotation).
    # Vacuum force-field energies overstate rotamer preferences in solution, and a Boltzmann
    # average over them put the two 3J of an ArCH2-CHX fragment at ~3 and ~10 Hz where ~5-8 Hz is
    # observed. Rotating the bond turns every dihedral alike, so the orientation signs stay. The
    # angular part is the three-term Karplus curve whose free-rotation mean is the observed 7.8 Hz
    # of unsubstituted fragments (the HLA angular part averages to 6.85 Hz and, with its
    # substituent terms, leaves ethyl groups near 6 Hz where 7.0-7.3 Hz is observed); the HLA
    # electronegativity terms are added to it.
    values = np.mean([karplus_simple(phi + turn) + karplus_hla(phi + turn, subs) - karplus_hla(phi + turn)
                      for turn in (0.0, 120.0, 240.0)], axis=0)
    return float(np.dot(conformers.weights, values)), _sd("sp3_vicinal_acyclic")


def _open_allylic_bond(mol, x, y) -> bool:
    """True for a C(sp2)-C(sp3) bond outside rings: the sp3 group rotates (nearly) freely.

    Its allylic couplings are then rotational averages, taken from published open-chain values
    (``allylic_*_open*`` rows) rather than from force-field conformer weights, which put the C-H
    bonds of an allyl CH2 near the C=C plane and gave 4J of -0.3 to -0.5 Hz where -1.2 to -1.8 Hz
    is observed.
    """
    return not mol.GetBondBetweenAtoms(x.GetIdx(), y.GetIdx()).IsInRing()


def _heavy_cis_to(mol, rel: AlkeneRelation, sp2, sp3) -> bool:
    """True when the far carbon of ``sp2``'s C=C carries a heavy atom cis to ``sp3``."""
    far = rel.carbons[1] if rel.carbons[0] == sp2.GetIdx() else rel.carbons[0]
    return any(n.GetAtomicNum() > 1 and n.GetIdx() != sp2.GetIdx()
               and rel.relation(sp3.GetIdx(), n.GetIdx()) == "cis"
               for n in mol.GetAtomWithIdx(far).GetNeighbors())


def _group_dchi(mol, atom, attached_to: int) -> float:
    """Beta-corrected electronegativity difference of a substituent (HLA)."""
    chi_h = _c("chi_H")
    alpha = _chi(atom.GetSymbol()) - chi_h
    beta = sum(_chi(n.GetSymbol()) - chi_h for n in atom.GetNeighbors() if n.GetIdx() != attached_to)
    return alpha - _c("hla_p7") * beta


def _four_bond(mol, path, heavy, conformers, relations) -> tuple[float, float]:
    a, b, c = heavy
    if all(x.GetIsAromatic() for x in heavy):
        ring = _shared_ring(mol, a.GetIdx(), b.GetIdx(), c.GetIdx())
        if ring is not None:
            name = "five_ring_meta" if len(ring) == 5 else "aromatic_meta"
            return _c(name), _sd(name)
        return 0.0, 0.0
    for vinyl, mid, sp3, h_sp3 in ((a, b, c, path[-1]), (c, b, a, path[0])):
        bond = mol.GetBondBetweenAtoms(vinyl.GetIdx(), mid.GetIdx())
        if bond.GetBondType() == Chem.BondType.DOUBLE and vinyl.GetIdx() in relations and _is_sp3(sp3):
            if _open_allylic_bond(mol, mid, sp3):
                h_vinyl = path[0] if h_sp3 == path[-1] else path[-1]
                cisoid = relations[vinyl.GetIdx()].relation(h_vinyl, sp3.GetIdx()) == "cis"
                name = "allylic_4j_open_cisoid" if cisoid else "allylic_4j_open_transoid"
                return _c(name), _sd(name)
            if not conformers.n_conformers:
                return -1.5, _sd("garbisch_4j_a")
            phi = _dihedral_deg(conformers.coords, vinyl.GetIdx(), mid.GetIdx(), sp3.GetIdx(), h_sp3)
            return float(np.dot(conformers.weights, garbisch_allylic(phi))), _sd("garbisch_4j_a")
        if bond.GetBondType() == Chem.BondType.TRIPLE and _is_sp3(sp3):
            return _c("propargylic"), _sd("propargylic")
    return 0.0, 0.0


def _five_bond(mol, heavy) -> tuple[float, float]:
    if all(x.GetIsAromatic() for x in heavy):
        ring = _shared_ring(mol, *(x.GetIdx() for x in heavy))
        if ring is not None and len(ring) == 6:
            return _c("aromatic_para"), _sd("aromatic_para")
    return 0.0, 0.0


# ------------------------------------------------------------------------------ 1J(C,H)
def predict_one_bond_ch(mol_h: Chem.Mol, h_index: int) -> float:
    """One-bond 13C-1H coupling (Hz) of the H atom ``h_index``: where its 13C satellites sit.

    sp3 carbons start from 125 Hz and add a term per O, N, halogen or pi neighbour (the additive
    scheme of tabulated 1J(C,H) values); sp2 and sp carbons take their class value.
    """
    atom = mol_h.GetAtomWithIdx(int(h_index))
    if atom.GetAtomicNum() != 1 or atom.GetDegree() != 1:
        return _c("jch_sp3")
    carbon = atom.GetNeighbors()[0]
    if carbon.GetSymbol() != "C":
        return 0.0
    if carbon.GetIsAromatic():
        return _c("jch_aryl")
    bonds = [b.GetBondType() for b in carbon.GetBonds()]
    if Chem.BondType.TRIPLE in bonds:
        return _c("jch_alkyne")
    if Chem.BondType.DOUBLE in bonds:
        return _c("jch_aldehyde") if _is_carbonyl_carbon(carbon) else _c("jch_vinyl")
    if mol_h.GetRingInfo().IsAtomInRingOfSize(carbon.GetIdx(), 3):
        return _c("jch_sp3_ring3")
    value = _c("jch_sp3")
    for nbr in carbon.GetNeighbors():
        symbol = nbr.GetSymbol()
        if symbol == "O":
            value += _c("jch_sp3_O")
        elif symbol == "N":
            value += _c("jch_sp3_N")
        elif symbol in ("Cl", "Br", "I"):
            value += _c("jch_sp3_halogen")
        elif symbol == "F":
            value += _c("jch_sp3_F")
        elif symbol == "C" and (nbr.GetIsAromatic() or any(
                b.GetBondType() != Chem.BondType.SINGLE for b in nbr.GetBonds())):
            value += _c("jch_sp3_pi")
    return value
