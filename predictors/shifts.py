"""1H chemical shifts from additive increment tables, each with a standard uncertainty.

* vinyl H: Pascual-Meier-Simon additivity (``data/alkene_increments.csv``);
* benzene H: substituent increments of Beeby et al. (``data/benzene_increments.csv``),
  heteroaromatic H from base values of the parent ring;
* sp3 H: Shoolery's rule as extended by Schaller et al. for CH2XY, otherwise the
  alpha/beta/gamma increments of Beauchamp & Marquez (``data/sp3_increments.csv``), with alpha
  increments by carbon type (from monosubstituted alkanes) and sub-additive sums on crowded
  carbons;
* aldehyde, alkyne and exchangeable (OH, NH, SH) H from tabulated values.

Every estimate carries ``sd_ppm``; a substituent the tables do not know is
replaced by the nearest class, flagged, and its uncertainty widened.
"""

from __future__ import annotations

import csv
import functools
import math
from dataclasses import dataclass
from importlib import resources

from rdkit import Chem

from predictors.equivalence import AlkeneRelation, map_alkene_relations

__all__ = [
    "ShiftEstimate",
    "load_increment_table",
    "prepare_model_molecule",
    "classify_substituent",
    "predict_proton_shifts",
]

_PI_KEYS = frozenset({"aryl", "C=C", "C#C", "CHO", "COR", "COAr", "COOH", "COOR", "CONR2", "COCl",
                      "CN", "NO2", "CF3"})
_ALKYL_KEYS = frozenset({"alkyl", "CH2O", "CH2I", "CH2N", "CH2S", "CH2Cl", "CH2CO", "CH2Ar"})
_CARBONYL_KEYS = frozenset({"CHO", "COR", "COAr", "COOH", "COOR", "CONR2", "COCl"})


@dataclass(frozen=True)
class ShiftEstimate:
    """Predicted shift of one proton.

    Attributes
    ----------
    shift_ppm, sd_ppm : float
        Shift and its standard uncertainty.
    label : str
        ``"vinyl"``, ``"aryl"``, ``"CH3"``, ``"CH2"``, ``"CH"``, ``"CHO"``,
        ``"alkyne"``, ``"OH"``, ``"NH"``, ``"SH"`` or ``"other"``.
    exchangeable : bool
        OH/NH/SH: broad, position depends on conditions.
    flags : tuple of str
        Fallbacks and assumptions used.
    """

    shift_ppm: float
    sd_ppm: float
    label: str
    exchangeable: bool = False
    flags: tuple[str, ...] = ()


@functools.cache
def load_increment_table(name: str) -> tuple[dict, ...]:
    """Rows of a packaged CSV table in ``predictors/data`` (``name`` without ``.csv``)."""
    text = resources.files("predictors.data").joinpath(f"{name}.csv").read_text(encoding="utf-8")
    return tuple(csv.DictReader(text.splitlines()))


@functools.cache
def _alkene_table() -> dict[str, tuple[float, float, float]]:
    return {r["group"]: (float(r["z_gem_ppm"]), float(r["z_cis_ppm"]), float(r["z_trans_ppm"]))
            for r in load_increment_table("alkene_increments") if r["used"] == "yes"}


@functools.cache
def _benzene_table() -> dict[tuple[str, str], tuple[float, ...]]:
    out = {}
    for r in load_increment_table("benzene_increments"):
        if r["table"] == "scs":
            out[("scs", r["group"])] = tuple(float(r[c]) for c in ("z_ortho_ppm", "z_meta_ppm", "z_para_ppm"))
        else:
            out[(r["table"], r["group"])] = (float(r["shift_ppm"]),)
    return out


@functools.cache
def _sp3_table() -> dict[tuple[str, str], dict]:
    return {(r["table"], r["group"]): r for r in load_increment_table("sp3_increments")}


def _sp3_value(table: str, group: str, column: str) -> float:
    return float(_sp3_table()[(table, group)][column])


def _method_sd(method: str) -> float:
    return _sp3_value("method_sd", method, "sd_ppm")


# ----------------------------------------------------------------------------- molecule
def prepare_model_molecule(mol_h: Chem.Mol) -> tuple[Chem.Mol, frozenset]:
    """Copy of ``mol_h`` with pseudo-aromatic rings written as their Kekule form.

    RDKit calls 2-pyranone, 2-pyridone and coumarin rings aromatic; their
    protons behave like those of a conjugated enone with a weak ring current,
    so the model sees their C=C bonds as alkenes.

    Returns
    -------
    model : rdkit.Chem.Mol
        Same atoms and indices as ``mol_h``.
    pseudo_atoms : frozenset of int
        Atoms of the rings that were de-aromatised.
    """
    ring_info = mol_h.GetRingInfo()
    aromatic_rings = [r for r in ring_info.BondRings()
                      if all(mol_h.GetBondWithIdx(b).GetIsAromatic() for b in r)]
    pseudo, true = [], []
    for bonds in aromatic_rings:
        atoms = {mol_h.GetBondWithIdx(b).GetBeginAtomIdx() for b in bonds}
        atoms |= {mol_h.GetBondWithIdx(b).GetEndAtomIdx() for b in bonds}
        (pseudo if any(_has_exocyclic_double(mol_h, a) for a in atoms) else true).append((bonds, atoms))
    if not pseudo:
        return mol_h, frozenset()
    kek = Chem.Mol(mol_h)
    Chem.Kekulize(kek, clearAromaticFlags=True)
    model = Chem.RWMol(mol_h)
    true_bonds = {b for bonds, _ in true for b in bonds}
    true_atoms = {a for _, atoms in true for a in atoms}
    pseudo_atoms = set()
    for bonds, atoms in pseudo:
        for b in bonds:
            if b not in true_bonds:
                model.GetBondWithIdx(b).SetBondType(kek.GetBondWithIdx(b).GetBondType())
                model.GetBondWithIdx(b).SetIsAromatic(False)
        for a in atoms - true_atoms:
            model.GetAtomWithIdx(a).SetIsAromatic(False)
        pseudo_atoms |= atoms
    return model.GetMol(), frozenset(pseudo_atoms)


def _has_exocyclic_double(mol, idx: int) -> bool:
    atom = mol.GetAtomWithIdx(idx)
    return any(b.GetBondType() == Chem.BondType.DOUBLE and not b.IsInRing()
               and b.GetOtherAtom(atom).GetAtomicNum() in (7, 8, 16) for b in atom.GetBonds())


# ------------------------------------------------------------------------ substituents
def classify_substituent(mol: Chem.Mol, atom_idx: int, from_idx: int) -> tuple[str, bool]:
    """Name the group that starts at ``atom_idx``, seen from ``from_idx``.

    Returns
    -------
    key : str
        Class name shared by the increment tables (``"alkyl"``, ``"CH2O"``,
        ``"aryl"``, ``"COOR"``, ``"OR"``, ``"OAr"``, ``"Cl"``...).
    fallback : bool
        True when the group is not in any table and the nearest class was used.
    """
    atom = mol.GetAtomWithIdx(atom_idx)
    symbol = atom.GetSymbol()
    far = [n for n in atom.GetNeighbors() if n.GetIdx() != from_idx]
    if symbol == "H":
        return "H", False
    if symbol in ("F", "Cl", "Br", "I"):
        return symbol, False
    if symbol == "C":
        return _classify_carbon(mol, atom, far)
    if symbol == "O":
        return _classify_oxygen(mol, far), False
    if symbol == "N":
        return _classify_nitrogen(mol, atom, far)
    if symbol == "S":
        n_oxo = sum(1 for b in atom.GetBonds() if b.GetBondType() == Chem.BondType.DOUBLE)
        return ("SO2R" if n_oxo >= 2 else "SR"), n_oxo == 1
    return "alkyl", True


def _double_partner(atom, symbols=("O", "S")):
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        if bond.GetBondType() == Chem.BondType.DOUBLE and other.GetSymbol() in symbols:
            return other
    return None


def _is_carbonyl(atom) -> bool:
    return atom.GetSymbol() == "C" and _double_partner(atom) is not None


def _classify_carbon(mol, atom, far) -> tuple[str, bool]:
    if atom.GetIsAromatic():
        return "aryl", False
    oxo = _double_partner(atom)
    if oxo is not None:
        rest = [n for n in far if n.GetIdx() != oxo.GetIdx() and n.GetAtomicNum() > 1]
        if not rest:
            return "CHO", False
        x = rest[0]
        if x.GetSymbol() == "O":
            return ("COOH" if x.GetTotalNumHs(includeNeighbors=True) else "COOR"), False
        if x.GetSymbol() == "N":
            return "CONR2", False
        if x.GetSymbol() in ("Cl", "Br"):
            return "COCl", False
        return ("COAr" if x.GetIsAromatic() else "COR"), False
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        if bond.GetBondType() == Chem.BondType.TRIPLE:
            return ("CN", False) if other.GetSymbol() == "N" else ("C#C", other.GetSymbol() != "C")
        if bond.GetBondType() == Chem.BondType.DOUBLE:
            return "C=C", other.GetSymbol() != "C"
    return _classify_sp3_carbon(far)


def _classify_sp3_carbon(far) -> tuple[str, bool]:
    symbols = [n.GetSymbol() for n in far]
    if symbols.count("F") == 3:
        return "CF3", False
    for symbol, key in (("Cl", "CH2Cl"), ("Br", "CH2Cl"), ("I", "CH2I"), ("O", "CH2O"), ("N", "CH2N"),
                        ("S", "CH2S"), ("F", "CH2Cl")):
        if symbol in symbols:
            return key, symbol == "F"
    if any(_is_carbonyl(n) or _has_triple_n(n) for n in far):
        return "CH2CO", False
    if any(n.GetIsAromatic() for n in far):
        return "CH2Ar", False
    return "alkyl", any(s not in ("C", "H") for s in symbols)


def _has_triple_n(atom) -> bool:
    return any(b.GetBondType() == Chem.BondType.TRIPLE and b.GetOtherAtom(atom).GetSymbol() == "N"
               for b in atom.GetBonds())


def _is_unsaturated_carbon(atom) -> bool:
    return atom.GetSymbol() == "C" and (atom.GetIsAromatic() or any(
        b.GetBondType() == Chem.BondType.DOUBLE for b in atom.GetBonds()))


def _classify_oxygen(mol, far) -> str:
    heavy = [n for n in far if n.GetAtomicNum() > 1]
    if not heavy:
        return "OH"
    x = heavy[0]
    if _is_carbonyl(x):
        return "OCOR"
    if _is_unsaturated_carbon(x):
        return "OAr"
    return "OR"


def _classify_nitrogen(mol, atom, far) -> tuple[str, bool]:
    if atom.GetFormalCharge() == 1 and sum(n.GetSymbol() == "O" for n in far) >= 2:
        return "NO2", False
    if any(_is_carbonyl(n) for n in far):
        return "NCOR", False
    return "NR2", any(b.GetBondType() != Chem.BondType.SINGLE for b in atom.GetBonds())


# ------------------------------------------------------------------------------- entry
def predict_proton_shifts(model: Chem.Mol, *, pseudo_atoms: frozenset = frozenset(),
                          relations: dict[int, AlkeneRelation] | None = None) -> dict[int, ShiftEstimate]:
    """Shift estimate for every H atom of a molecule with explicit hydrogens.

    Parameters
    ----------
    model : rdkit.Chem.Mol
        Output of :func:`prepare_model_molecule`.
    pseudo_atoms : frozenset of int, keyword-only
        Atoms of de-aromatised pyranone-type rings (ring-current term).
    relations : dict, keyword-only
        Cis/trans relations from :func:`~predictors.equivalence.map_alkene_relations`.

    Returns
    -------
    dict of int to ShiftEstimate
        Keyed by H atom index.
    """
    relations = map_alkene_relations(model) if relations is None else relations
    out = {}
    for atom in model.GetAtoms():
        if atom.GetAtomicNum() == 1:
            out[atom.GetIdx()] = _predict_one(model, atom, relations, pseudo_atoms)
    return out


def _predict_one(mol, h_atom, relations, pseudo_atoms) -> ShiftEstimate:
    parent = h_atom.GetNeighbors()[0]
    symbol = parent.GetSymbol()
    if symbol in ("O", "N", "S"):
        return _exchangeable_shift(mol, parent)
    if symbol != "C":
        return _unknown_shift(f"H on {symbol}: no model, generic value used")
    if parent.GetIsAromatic():
        return _aromatic_shift(mol, parent)
    if _double_partner(parent) is not None:
        return _aldehyde_shift(mol, parent)
    if parent.GetIdx() in relations:
        return _vinyl_shift(mol, h_atom, parent, relations[parent.GetIdx()], pseudo_atoms)
    if any(b.GetBondType() == Chem.BondType.TRIPLE for b in parent.GetBonds()):
        return _alkyne_shift(mol, parent)
    if any(b.GetBondType() == Chem.BondType.DOUBLE for b in parent.GetBonds()):
        return _unknown_shift("H on C=N or cumulated C: generic value used", label="vinyl")
    return _sp3_shift(mol, parent)


def _unknown_shift(flag: str, *, label: str = "other") -> ShiftEstimate:
    return ShiftEstimate(_sp3_value("special", "unknown", "shift_ppm"),
                         _sp3_value("special", "unknown", "sd_ppm"), label, False, (flag,))


def _special(group: str, label: str, *, exchangeable: bool = False, flags=()) -> ShiftEstimate:
    return ShiftEstimate(_sp3_value("special", group, "shift_ppm"), _sp3_value("special", group, "sd_ppm"),
                         label, exchangeable, tuple(flags))


def _exchangeable_shift(mol, parent) -> ShiftEstimate:
    heavy = [n for n in parent.GetNeighbors() if n.GetAtomicNum() > 1]
    if parent.GetSymbol() == "S":
        return _special("SH", "SH", exchangeable=True)
    if parent.GetSymbol() == "O":
        if not heavy:
            return _special("OH_alcohol", "OH", exchangeable=True, flags=("water",))
        x = heavy[0]
        group = ("OH_acid" if _is_carbonyl(x) else "OH_phenol" if x.GetIsAromatic()
                 else "OH_enol" if _is_unsaturated_carbon(x) else "OH_alcohol")
        return _special(group, "OH", exchangeable=True)
    if parent.GetIsAromatic():
        return _special("NH_aromatic", "NH", exchangeable=True)
    if any(_is_carbonyl(n) for n in heavy):
        return _special("NH_amide", "NH", exchangeable=True)
    if any(n.GetIsAromatic() for n in heavy):
        return _special("NH_aryl", "NH", exchangeable=True)
    return _special("NH_amine", "NH", exchangeable=True)


def _aldehyde_shift(mol, parent) -> ShiftEstimate:
    oxo = _double_partner(parent)
    rest = [n for n in parent.GetNeighbors() if n.GetIdx() != oxo.GetIdx() and n.GetAtomicNum() > 1]
    if oxo.GetSymbol() != "O":
        return _unknown_shift("H on C=S: generic value used", label="CHO")
    if not rest:
        return _special("CHO_alkyl", "CHO", flags=("formaldehyde: aliphatic aldehyde value",))
    x = rest[0]
    if x.GetSymbol() == "O":
        return _special("HCOO", "CHO")
    if x.GetSymbol() == "N":
        return _special("HCON", "CHO")
    if x.GetIsAromatic():
        return _special("CHO_aryl", "CHO")
    if _is_unsaturated_carbon(x):
        return _special("CHO_conj", "CHO")
    return _special("CHO_alkyl", "CHO")


def _alkyne_shift(mol, parent) -> ShiftEstimate:
    other = next(b.GetOtherAtom(parent) for b in parent.GetBonds() if b.GetBondType() == Chem.BondType.TRIPLE)
    far = [n for n in other.GetNeighbors() if n.GetIdx() != parent.GetIdx()]
    conj = any(_is_unsaturated_carbon(n) or _is_carbonyl(n) for n in far)
    return _special("alkyne_conj" if conj else "alkyne_alkyl", "alkyne")


# ------------------------------------------------------------------------------- vinyl
def _vinyl_shift(mol, h_atom, parent, rel: AlkeneRelation, pseudo_atoms) -> ShiftEstimate:
    table = _alkene_table()
    other_idx = rel.carbons[1] if rel.carbons[0] == parent.GetIdx() else rel.carbons[0]
    other = mol.GetAtomWithIdx(other_idx)
    subs_here = [n for n in parent.GetNeighbors() if n.GetIdx() not in (h_atom.GetIdx(), other_idx)]
    subs_there = [n for n in other.GetNeighbors() if n.GetIdx() != parent.GetIdx()]
    all_subs = [(n, parent) for n in subs_here] + [(n, other) for n in subs_there]
    keys = {n.GetIdx(): classify_substituent(mol, n.GetIdx(), c.GetIdx()) for n, c in all_subs}
    shift = table["base_ethylene"][0]
    flags = []
    for n, carbon in all_subs:
        key, fallback = keys[n.GetIdx()]
        group = _alkene_group(mol, n, carbon, other if carbon is parent else parent, key, keys)
        if fallback or group not in table:
            group = _alkene_fallback(group)
            flags.append(f"vinyl increment for {key} (atom {n.GetIdx()}) taken from {group}")
        z_gem, z_cis, z_trans = table[group]
        if carbon is parent:
            shift += z_gem
        else:
            shift += z_cis if rel.relation(h_atom.GetIdx(), n.GetIdx()) == "cis" else z_trans
    if parent.GetIdx() in pseudo_atoms and other_idx in pseudo_atoms:
        shift += table["pyrone_ring_current"][0]
        flags.append("pyranone-type ring: ring-current term added")
    if rel.assumed:
        flags.append("double-bond geometry not given: E assumed")
    return _with_sd(shift, "vinyl", "vinyl", flags)


def _with_sd(shift: float, label: str, method: str, flags) -> ShiftEstimate:
    sd = _method_sd(method)
    fallbacks = sum(1 for f in flags if "taken from" in f or "generic" in f)
    if fallbacks:
        sd = math.hypot(sd, _method_sd("fallback_extra") * math.sqrt(fallbacks))
    return ShiftEstimate(float(shift), float(sd), label, False, tuple(flags))


def _alkene_fallback(group: str) -> str:
    for prefix, target in (("CH2", "alkyl"), ("CO", "COR"), ("O", "OR"), ("N", "NR2"), ("S", "SR"),
                           ("C=", "C=C"), ("C#", "C#C")):
        if group.startswith(prefix):
            return target
    return "alkyl"


def _alkene_group(mol, sub, carbon, partner, key, keys) -> str:
    """Map a substituent class to a row of the olefinic increment table."""
    if key == "H":
        return "H"
    bond_conj = any(k in _PI_KEYS for idx, (k, _) in keys.items() if idx != sub.GetIdx())
    if key == "alkyl" and _in_ring_with_bond(mol, sub, carbon, partner):
        return "alkyl_ring"
    if key == "aryl":
        return "aryl_o" if _aryl_has_ortho_substituent(sub, carbon) else "aryl"
    if key in ("C=C", "COOR", "COOH", "COR", "COAr"):
        conj = bond_conj or _substituent_further_conjugated(sub, carbon, key)
        base = "COR" if key == "COAr" else key
        return f"{base}_conj" if conj else base
    if key in ("OR", "OAr", "OH"):
        return "OR_conj" if (key == "OAr" or bond_conj) else "OR"
    if key == "NR2":
        aryl_n = any(n.GetIsAromatic() for n in sub.GetNeighbors() if n.GetIdx() != carbon.GetIdx())
        return "NR2_conj" if (aryl_n or bond_conj) else "NR2"
    return key


def _in_ring_with_bond(mol, sub, carbon, partner) -> bool:
    ring_info = mol.GetRingInfo()
    trio = {sub.GetIdx(), carbon.GetIdx(), partner.GetIdx()}
    return any(trio <= set(ring) for ring in ring_info.AtomRings())


def _aryl_has_ortho_substituent(aryl, carbon) -> bool:
    for ring_nbr in aryl.GetNeighbors():
        if ring_nbr.GetIdx() == carbon.GetIdx() or not ring_nbr.GetIsAromatic():
            continue
        if sum(1 for n in ring_nbr.GetNeighbors() if n.GetAtomicNum() > 1) >= 3:
            return True
    return False


def _substituent_further_conjugated(sub, carbon, key) -> bool:
    for nbr in sub.GetNeighbors():
        if nbr.GetIdx() == carbon.GetIdx() or nbr.GetAtomicNum() == 1:
            continue
        if key == "C=C" and _double_partner(sub, ("C",)) is nbr:
            far = [x for x in nbr.GetNeighbors() if x.GetIdx() != sub.GetIdx()]
            if any(_is_unsaturated_carbon(x) or _is_carbonyl(x) for x in far):
                return True
            continue
        if nbr.GetSymbol() == "O" and key != "C=C" and _double_partner(sub) is not nbr:
            if any(_is_unsaturated_carbon(x) for x in nbr.GetNeighbors() if x.GetIdx() != sub.GetIdx()):
                return True
        elif nbr.GetSymbol() == "C" and (_is_unsaturated_carbon(nbr) or _is_carbonyl(nbr)):
            return True
    return False


# ---------------------------------------------------------------------------- aromatic
def _aromatic_shift(mol, parent) -> ShiftEstimate:
    ring = _smallest_aromatic_ring(mol, parent.GetIdx())
    hetero = [i for i in ring if mol.GetAtomWithIdx(i).GetSymbol() != "C"]
    flags: list[str] = []
    if len(ring) == 6 and not hetero:
        base, method = _benzene_table()[("base", "benzene")][0], "aryl"
    else:
        base, flag = _hetero_base(mol, ring, hetero, parent.GetIdx())
        method = "hetero_aryl"
        flags.append(flag)
    shift = base + _ring_increments(mol, ring, parent.GetIdx(), flags)
    return _with_sd(shift, "aryl", method, flags)


def _smallest_aromatic_ring(mol, idx: int) -> tuple[int, ...]:
    rings = [r for r in mol.GetRingInfo().AtomRings()
             if idx in r and all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r)]
    return min(rings, key=len) if rings else (idx,)


def _ring_distance(ring, a: int, b: int) -> int:
    i, j = ring.index(a), ring.index(b)
    d = abs(i - j)
    return min(d, len(ring) - d)


def _ring_increments(mol, ring, h_parent: int, flags: list[str]) -> float:
    total = 0.0
    table = _benzene_table()
    for r in ring:
        if r == h_parent:
            continue
        pos = _ring_distance(ring, r, h_parent)
        if pos > 3:
            continue
        atom = mol.GetAtomWithIdx(r)
        for nbr in atom.GetNeighbors():
            if nbr.GetIdx() in ring or nbr.GetAtomicNum() == 1:
                continue
            key, fallback = classify_substituent(mol, nbr.GetIdx(), r)
            group = _benzene_group(nbr, key)
            if fallback or ("scs", group) not in table:
                flags.append(f"aromatic increment for {key} (atom {nbr.GetIdx()}) taken from alkyl")
                group = "alkyl"
            total += table[("scs", group)][pos - 1]
    return total


def _benzene_group(nbr, key: str) -> str:
    if key == "alkyl":
        return "CH3" if nbr.GetTotalNumHs(includeNeighbors=True) == 3 else "alkyl"
    if key in ("CH2S", "CH2CO", "CH2Ar"):
        return "alkyl"
    if key == "CH2I":
        return "CH2Cl"
    if key == "COAr":
        return "COR"
    if key == "C=C":
        partner = _double_partner(nbr, ("C",))
        far = [x for x in partner.GetNeighbors() if x.GetIdx() != nbr.GetIdx()] if partner else []
        return "C=C_acceptor" if any(_is_carbonyl(x) or _has_triple_n(x) for x in far) else "C=C"
    if key == "OAr":
        return "OAr"
    return key


def _hetero_base(mol, ring, hetero, h_parent: int) -> tuple[float, str]:
    table = _benzene_table()
    symbols = sorted(mol.GetAtomWithIdx(i).GetSymbol() for i in hetero)
    dist = min(_ring_distance(ring, h, h_parent) for h in hetero) if hetero else 0
    name = None
    if len(ring) == 6 and symbols == ["N"]:
        name = f"pyridine_{dist + 1}"
    elif len(ring) == 5 and len(symbols) == 1:
        parent_name = {"O": "furan", "S": "thiophene", "N": "pyrrole"}.get(symbols[0])
        if parent_name:
            name = f"{parent_name}_{dist + 1}"
    if name and ("hetero", name) in table:
        return table[("hetero", name)][0], f"heteroaromatic base {name} with benzene increments"
    return table[("hetero", "other")][0], "heteroaromatic ring without base value: generic value used"


# --------------------------------------------------------------------------------- sp3
def _sp3_shift(mol, parent) -> ShiftEstimate:
    n_h = parent.GetTotalNumHs(includeNeighbors=True)
    label = {3: "CH3", 2: "CH2"}.get(n_h, "CH" if n_h == 1 else "CH4")
    heavy = [n for n in parent.GetNeighbors() if n.GetAtomicNum() > 1]
    flags: list[str] = []
    if n_h == 2 and len(heavy) == 2:
        keys = [classify_substituent(mol, n.GetIdx(), parent.GetIdx()) for n in heavy]
        groups = [_shoolery_group(k) for k, _ in keys]
        usable = all(g != "alkyl" and ("shoolery", g) in _sp3_table() for g in groups)
        if usable and not any(f for _, f in keys):
            shift = _sp3_value("shoolery", "base", "alpha_ppm")
            shift += sum(_sp3_value("shoolery", g, "alpha_ppm") for g in groups)
            return _with_sd(shift, label, "shoolery", flags)
    base_group = label if label in ("CH3", "CH2", "CH") else "CH3"
    shift = _sp3_value("base", base_group, "shift_ppm")
    shift += _bm_increments(mol, parent, base_group, flags)
    return _with_sd(shift, label, "bm", flags)


def _shoolery_group(key: str) -> str:
    if key in _ALKYL_KEYS:
        return "alkyl"
    return {"CHO": "COR", "COCl": "COR"}.get(key, key)


def _is_sp3_carbon(atom) -> bool:
    return (atom.GetSymbol() == "C" and not atom.GetIsAromatic()
            and all(b.GetBondType() == Chem.BondType.SINGLE for b in atom.GetBonds())
            and sum(1 for n in atom.GetNeighbors() if n.GetSymbol() == "F") < 3)


def _bm_increments(mol, start, carbon_type: str, flags: list[str]) -> float:
    """Alpha/beta/gamma increments along sp3-carbon paths from ``start``, saturated.

    Alpha increments depend on the carbon type (``alpha_CH3`` / ``alpha_CH2`` / ``alpha_CH``
    rows, from monosubstituted alkanes), and so do the beta increments of methyl groups
    (``beta_CH3`` rows), where the table has them; otherwise the Beauchamp-Marquez value is
    used. The sum is then made sub-additive by :func:`_saturate`.
    """
    columns = ("alpha_ppm", "beta_ppm", "gamma_ppm")
    alphas: list[float] = []
    distant = 0.0
    frontier = [start]
    seen = {start.GetIdx()}
    for depth in range(3):
        next_frontier = []
        for atom in frontier:
            for nbr in atom.GetNeighbors():
                if nbr.GetAtomicNum() == 1 or nbr.GetIdx() in seen:
                    continue
                if _is_sp3_carbon(nbr):
                    next_frontier.append(nbr)
                    continue
                term = _bm_term(mol, nbr, atom, columns[depth], carbon_type, flags)
                if depth == 0:
                    alphas.append(term)
                else:
                    distant += term
        seen.update(a.GetIdx() for a in next_frontier)
        frontier = next_frontier
    return _saturate(alphas, distant)


def _saturate(alphas: list[float], distant: float) -> float:
    """Sum of increments with the sub-additivity of crowded carbons.

    A second (third) alpha substituent adds ``1 - k_alpha * a1`` of its increment, where ``a1``
    is the largest alpha increment; beta and gamma increments add ``1 - k_far * A`` of theirs,
    where ``A`` is the saturated alpha sum (never below zero). Both constants are calibrated
    (see the ``saturation`` rows of ``data/sp3_increments.csv``).
    """
    if not alphas:
        return distant
    k_alpha = _sp3_value("saturation", "second_alpha", "alpha_ppm")
    k_far = _sp3_value("saturation", "beta_gamma", "alpha_ppm")
    ordered = sorted(alphas, reverse=True)
    lead = ordered[0]
    alpha_sum = lead + sum(ordered[1:]) * max(0.0, 1.0 - k_alpha * max(lead, 0.0))
    return alpha_sum + distant * max(0.0, 1.0 - k_far * max(alpha_sum, 0.0))


def _bm_term(mol, nbr, atom, column: str, carbon_type: str, flags: list[str]) -> float:
    key, fallback = classify_substituent(mol, nbr.GetIdx(), atom.GetIdx())
    group = {"COAr": "COR", "COCl": "COR"}.get(key, key)
    if group == "C=C" and not fallback and _conjugated_alkene(mol, nbr, atom):
        group = "C=C_conj"
    if ("bm", group) not in _sp3_table() or fallback:
        if column == "alpha_ppm":
            flags.append(f"sp3 increment for {key} (atom {nbr.GetIdx()}) taken from generic")
        group = "C=C" if group not in _sp3_table() else group
        if ("bm", group) not in _sp3_table():
            return 0.0
    typed = f"{column.removesuffix('_ppm')}_{carbon_type}"
    if (typed, group) in _sp3_table():
        return _sp3_value(typed, group, column)
    return _sp3_value("bm", group, column)


def _conjugated_alkene(mol, carbon, from_atom) -> bool:
    """True when the alkene starting at ``carbon`` carries an aryl, C=C or C=O on its far carbon."""
    for bond in carbon.GetBonds():
        if bond.GetBondType() != Chem.BondType.DOUBLE:
            continue
        far = bond.GetOtherAtom(carbon)
        return any(n.GetIdx() != carbon.GetIdx() and (n.GetIsAromatic() or _is_carbonyl(n) or any(
            b.GetBondType() == Chem.BondType.DOUBLE for b in n.GetBonds())) for n in far.GetNeighbors())
    return False
