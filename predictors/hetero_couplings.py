"""Couplings of protons to 19F and 31P (Hz), and the spin systems without them when decoupled.

Both nuclei are spin 1/2 at 100 % natural abundance and far from the 1H frequencies, so every
1H-X coupling is weak: each X nucleus splits the lines of the protons it couples to first order.
:func:`predict_x_couplings` gives, for every proton site, the couplings its protons see as
``(nucleus, n_equivalent, j_hz)`` groups (X nuclei with equal couplings merged into one binomial
group, e.g. the three F of a CF3 next to a CH2: ``("19F", 3, 8.8)``).

* geminal 2J(H,F) by the number of F on the carbon (CH2F, CHF2, OCHF2, =CHF) and 2J(P,H) by the
  kind of phosphorus (phosphine oxide, phosphinate, phosphonate, phosphonium, phosphine);
* vicinal 3J(H,C,C,F) and 3J(P,C,C,H) by Karplus-type relations, Boltzmann-averaged over the MMFF
  conformers of :func:`predictors.couplings.embed_conformers` across ring bonds and averaged over
  the three staggered rotamers across acyclic bonds (as the 1H-1H couplings are); a CF2 or CF3
  carbon scales the H-C-C-F relation down; 3J(P,O,C,H) by the kind of carbon (acyclic) or a
  Karplus relation (ring); 3J(P,N,C,H) of P-NMe2 groups;
* across C=C: 3J(H,F) cis and trans; beside a CF3 on an sp2 carbon;
* aromatic ortho, meta and para couplings to a ring F or a P on the ring (by the kind of P);
* a few 4J: benzylic H to an ortho F, alkyl H two carbons from F, the CH3 of P-O-CH2-CH3.

Values live in ``data/hetero_couplings.csv`` with their sources. Couplings below 0.1 Hz are
left out. Not modelled: 1J(P,H) of H on P, vinyl and allylic couplings to P, 4J(P,C,C,C,H).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np
from rdkit import Chem

from predictors.core import X_NUCLEI
from predictors.couplings import ConformerSet, _dihedral_deg, coupling_constants
from predictors.errors import InputError

__all__ = ["X_NUCLEI", "predict_x_couplings", "site_x_couplings", "phosphorus_class", "without_x_couplings",
           "check_nuclei"]

_SYMBOL = {"F": "19F", "P": "31P"}
#: Couplings smaller than this (Hz) are not kept.
_MIN_J_HZ = 0.1
#: Couplings of a site to X nuclei that differ by less than this (Hz) form one binomial group.
_GROUP_TOL_HZ = 0.25
_TURNS = (0.0, 120.0, 240.0)


def _c(name: str) -> float:
    return coupling_constants("hetero_couplings")[name][0]


# ------------------------------------------------------------------------------ classes
def phosphorus_class(atom) -> str:
    """The kind of a phosphorus atom, which sets the size of its couplings to H.

    Returns one of ``"phosphine_oxide"`` (also P=S), ``"phosphinate"``, ``"phosphonate"``,
    ``"phosphate"``, ``"phosphonium"`` (also ylides), ``"phosphine"`` or ``"phosphite"`` (trivalent
    P with O neighbours).
    """
    chalcogen_double = 0
    single_o = 0
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        if other.GetSymbol() in ("O", "S"):
            if bond.GetBondType() == Chem.BondType.DOUBLE or (
                    other.GetFormalCharge() == -1 and atom.GetFormalCharge() == 1):
                chalcogen_double += 1
            elif other.GetSymbol() == "O":
                single_o += 1
    if chalcogen_double:
        return {0: "phosphine_oxide", 1: "phosphinate", 2: "phosphonate"}.get(single_o, "phosphate")
    valence = atom.GetDegree() + atom.GetTotalNumHs()
    if atom.GetFormalCharge() == 1 or valence >= 4:
        return "phosphonium"
    return "phosphite" if single_o else "phosphine"


def _aromatic_class(p_class: str) -> str:
    return {"phosphinate": "phosphine_oxide", "phosphate": "phosphonate",
            "phosphite": "phosphine"}.get(p_class, p_class)


def _chain_class(p_class: str) -> str:
    return "phosphonate" if p_class == "phosphate" else p_class


# ------------------------------------------------------------------------------ relations
def _three_term(phi_deg, a: float, b: float, c: float) -> np.ndarray:
    phi = np.radians(np.asarray(phi_deg, dtype=float))
    return a * np.cos(phi) ** 2 + b * np.cos(phi) + c


def _averaged(values_of_phi, phi: np.ndarray, weights: np.ndarray, in_ring: bool) -> float:
    """Boltzmann mean over conformers (ring bond) or over the three staggered rotamers (acyclic)."""
    if in_ring:
        return float(np.dot(weights, values_of_phi(phi)))
    return float(np.dot(weights, np.mean([values_of_phi(phi + t) for t in _TURNS], axis=0)))


def _hf_karplus(phi_deg) -> np.ndarray:
    return _three_term(phi_deg, _c("hf_karplus_a"), _c("hf_karplus_b"), _c("hf_karplus_c"))


def _hh_shape(phi_deg) -> np.ndarray:
    """The H-C-C-H Karplus curve divided by its free-rotation mean (mean 1)."""
    from predictors.couplings import _c as hh

    phi = np.radians(np.asarray(phi_deg, dtype=float))
    curve = hh("karplus_a") + hh("karplus_b") * np.cos(phi) + hh("karplus_c") * np.cos(2 * phi)
    return curve / hh("karplus_a")


# ------------------------------------------------------------------------------ driver
def predict_x_couplings(mol_h: Chem.Mol, conformers: ConformerSet, *,
                        exchangeable: Iterable[int] = ()) -> dict[int, list[tuple[str, int, float]]]:
    """Couplings of every (non-exchangeable) H atom to the 19F and 31P atoms of a molecule.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit H (the atom order of the conformers).
    conformers : ConformerSet
        From :func:`predictors.couplings.embed_conformers` on ``mol_h`` (may be empty: the
        free-rotation means are used then).
    exchangeable : iterable of int, keyword-only
        H atoms in fast exchange (OH, NH): no couplings.

    Returns
    -------
    dict
        H atom index -> list of ``(nucleus, x_atom_index, j_hz)``, magnitudes in Hz; H atoms
        without a coupling of at least 0.1 Hz are left out.
    """
    xs = [a for a in mol_h.GetAtoms() if a.GetSymbol() in _SYMBOL]
    if not xs:
        return {}
    skip = {int(h) for h in exchangeable}
    dist = Chem.GetDistanceMatrix(mol_h)
    out: dict[int, list[tuple[str, int, float]]] = {}
    for h in mol_h.GetAtoms():
        if h.GetAtomicNum() != 1 or h.GetIdx() in skip or h.GetDegree() != 1:
            continue
        if h.GetNeighbors()[0].GetSymbol() != "C":
            continue
        for x in xs:
            if not 2 <= dist[h.GetIdx(), x.GetIdx()] <= 5:
                continue
            path = [int(i) for i in Chem.GetShortestPath(mol_h, h.GetIdx(), x.GetIdx())]
            value = _pair(mol_h, path, x, conformers)
            if value is not None and abs(value) >= _MIN_J_HZ:
                out.setdefault(h.GetIdx(), []).append((_SYMBOL[x.GetSymbol()], x.GetIdx(), round(value, 2)))
    return out


def _pair(mol, path, x, conformers) -> float | None:
    heavy = [mol.GetAtomWithIdx(i) for i in path[1:-1]]
    if x.GetSymbol() == "F":
        return _fluorine(mol, path, heavy, conformers)
    return _phosphorus(mol, path, heavy, phosphorus_class(x), conformers)


def _is_sp3(atom) -> bool:
    return atom.GetHybridization() == Chem.HybridizationType.SP3 and not atom.GetIsAromatic()


def _double_partner(atom):
    for bond in atom.GetBonds():
        if bond.GetBondType() == Chem.BondType.DOUBLE:
            return bond.GetOtherAtom(atom)
    return None


def _in_one_six_ring(mol, atoms) -> bool:
    return any(len(r) == 6 and all(a in r for a in atoms) for r in mol.GetRingInfo().AtomRings())


def _aromatic_position(mol, path, heavy) -> str | None:
    """``"ortho"``, ``"meta"`` or ``"para"`` when the H and the X sit on one aromatic six-ring."""
    if not heavy or not all(a.GetIsAromatic() for a in heavy):
        return None
    if not _in_one_six_ring(mol, [a.GetIdx() for a in heavy]):
        return None
    return {2: "ortho", 3: "meta", 4: "para"}.get(len(heavy))


def _fluorine(mol, path, heavy, conformers) -> float | None:
    position = _aromatic_position(mol, path, heavy)
    if position is not None:
        return _c(f"hf_{position}")
    if len(heavy) == 1:
        return _hf_geminal(heavy[0])
    if len(heavy) == 2:
        return _hf_vicinal(mol, path, heavy, conformers)
    if len(heavy) == 3:
        a, b, c = heavy
        if _is_sp3(a) and b.GetIsAromatic() and c.GetIsAromatic():
            return _c("hf_benzylic_ortho")
        if _is_sp3(c):
            return _c("hf_four_bond_sp3")
    return None


def _hf_geminal(carbon) -> float | None:
    if carbon.GetSymbol() != "C":
        return None
    if _double_partner(carbon) is not None:
        return _c("hf_gem_vinyl")
    n_f = sum(1 for n in carbon.GetNeighbors() if n.GetSymbol() == "F")
    if n_f >= 2:
        oxygen = any(n.GetSymbol() == "O" for n in carbon.GetNeighbors())
        return _c("hf_gem_sp3_2_o") if oxygen else _c("hf_gem_sp3_2")
    return _c("hf_gem_sp3_1")


def _hf_vicinal(mol, path, heavy, conformers) -> float | None:
    a, b = heavy  # a carries the H, b the F
    bond = mol.GetBondBetweenAtoms(a.GetIdx(), b.GetIdx())
    if bond.GetBondType() == Chem.BondType.DOUBLE:
        if conformers.n_conformers:
            phi = _dihedral_deg(conformers.coords, *path)
            cis = float(np.dot(conformers.weights, (np.abs(phi) < 90.0).astype(float)))
            return cis * _c("hf_vinyl_cis") + (1.0 - cis) * _c("hf_vinyl_trans")
        return 0.5 * (_c("hf_vinyl_cis") + _c("hf_vinyl_trans"))
    if not _is_sp3(b):
        return None
    if not _is_sp3(a):
        return _c("hf_vinyl_cf3")
    n_f = sum(1 for n in b.GetNeighbors() if n.GetSymbol() == "F")
    scale = {1: 1.0, 2: _c("hf_vicinal_scale_2")}.get(n_f, _c("hf_vicinal_scale_3"))
    if not conformers.n_conformers:
        return scale * (0.5 * _c("hf_karplus_a") + _c("hf_karplus_c"))
    phi = _dihedral_deg(conformers.coords, *path)
    return scale * _averaged(_hf_karplus, phi, conformers.weights, bond.IsInRing())


def _phosphorus(mol, path, heavy, p_class: str, conformers) -> float | None:
    position = _aromatic_position(mol, path, heavy)
    if position is not None:
        return _c(f"hp_{position}_{_aromatic_class(p_class)}")
    if len(heavy) == 1:
        carbon = heavy[0]
        if carbon.GetSymbol() != "C" or not _is_sp3(carbon) or p_class == "phosphate":
            return None
        return _c(f"hp_gem_{_chain_class(p_class)}")
    if len(heavy) == 2:
        a, b = heavy  # a carries the H, b is bonded to P
        if not _is_sp3(a):
            return None
        bond = mol.GetBondBetweenAtoms(a.GetIdx(), b.GetIdx())
        if b.GetSymbol() == "O":
            return _poch(path, a, bond, conformers)
        if b.GetSymbol() == "N":
            return _c("hp_pnch")
        if b.GetSymbol() == "C" and _is_sp3(b) and p_class != "phosphate":
            mean = _c(f"hp_pcch_{_chain_class(p_class)}")
            if not conformers.n_conformers:
                return mean
            phi = _dihedral_deg(conformers.coords, *path)
            return mean * _averaged(_hh_shape, phi, conformers.weights, bond.IsInRing())
        return None
    if len(heavy) == 3:
        a, b, c = heavy
        if _is_sp3(a) and _is_sp3(b) and c.GetSymbol() == "O" and not a.GetIsAromatic():
            return _c("hp_pocch")
    return None


def _poch(path, carbon, bond, conformers) -> float:
    if bond.IsInRing() and conformers.n_conformers:
        phi = _dihedral_deg(conformers.coords, *path)
        a, b, c = (_c(f"hp_poch_karplus_{k}") for k in "abc")
        return float(np.dot(conformers.weights, _three_term(phi, a, b, c)))
    n_h = carbon.GetTotalNumHs(includeNeighbors=True)
    return _c({3: "hp_poch_ch3", 2: "hp_poch_ch2"}.get(n_h, "hp_poch_ch"))


# ------------------------------------------------------------------------------ sites
def site_x_couplings(groups: Sequence[Sequence[int]], per_h: dict[int, list[tuple[str, int, float]]]
                     ) -> tuple:
    """The X couplings of each site as ``(nucleus, n_equivalent, j_hz)`` groups.

    The protons of a site are equivalent, so each sees the same set of couplings (in 1,3-
    difluorobenzene H4 and H6 each couple 9 Hz to one F and 0.2 Hz to the other, to different F):
    the site takes, nucleus by nucleus, the mean of its protons' sorted couplings; couplings within
    0.25 Hz of each other form one binomial group. Sorted by nucleus, then largest coupling first.
    """
    out = []
    for group in groups:
        lists = [per_h.get(int(h), []) for h in group]
        site = []
        for nucleus in X_NUCLEI:
            values = [sorted((abs(j) for nuc, _, j in lst if nuc == nucleus), reverse=True) for lst in lists]
            size = max(len(v) for v in values) if values else 0
            if size == 0:
                continue
            padded = np.array([v + [0.0] * (size - len(v)) for v in values])
            mean = padded.mean(axis=0)
            site.extend((nucleus, n, j) for n, j in _binomial_groups(mean))
        out.append(tuple(site))
    return tuple(out)


def _binomial_groups(values: np.ndarray) -> list[tuple[int, float]]:
    groups: list[list[float]] = []
    for value in sorted((float(v) for v in values if v >= _MIN_J_HZ), reverse=True):
        if groups and abs(np.mean(groups[-1]) - value) < _GROUP_TOL_HZ:
            groups[-1].append(value)
        else:
            groups.append([value])
    return [(len(g), round(float(np.mean(g)), 2)) for g in groups]


# ------------------------------------------------------------------------------ decoupling
def check_nuclei(nuclei, *, name: str = "decoupled nucleus") -> tuple[str, ...]:
    """Normalise decoupled nucleus names (``"19F"``, ``"F19"``, ``"f"``, ``"31P"``...); ``name``
    opens the error message (the option, key or column the names came from).

    Raises
    ------
    InputError
        A name that is not one of :data:`X_NUCLEI`.
    """
    if isinstance(nuclei, str):
        nuclei = [nuclei]
    out = []
    for raw in nuclei or ():
        text = str(raw).strip().upper().replace("-", "").replace("{", "").replace("}", "")
        nucleus = {"19F": "19F", "F19": "19F", "F": "19F", "31P": "31P", "P31": "31P", "P": "31P"}.get(text)
        if nucleus is None:
            raise InputError(f"{name}: expected one of {', '.join(X_NUCLEI)}, got {raw!r}")
        if nucleus not in out:
            out.append(nucleus)
    return tuple(out)


def without_x_couplings(system, nuclei):
    """``system`` with its couplings to the given X nuclei removed (a decoupled acquisition).

    Parameters
    ----------
    system : SpinSystem
    nuclei : str or iterable of str
        ``"19F"`` and/or ``"31P"`` (see :func:`check_nuclei`).

    Returns
    -------
    SpinSystem
        The same object when nothing changes.
    """
    from dataclasses import replace

    drop = set(check_nuclei(nuclei))
    if not drop or not any(c[0] in drop for site in system.x_couplings for c in site):
        return system
    kept = tuple(tuple(c for c in site if c[0] not in drop) for site in system.x_couplings)
    return replace(system, x_couplings=kept)
