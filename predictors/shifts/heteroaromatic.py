"""Which aromatic ring system, and which position of it, each aromatic CH belongs to.

Base shifts of the parent heteroaromatics and polycyclic aromatics are tabulated per ring
position in ``data/aromatic_rings.csv`` (position numbers as in the ring's IUPAC numbering,
so thiazole H2 sits between S1 and N3, H4 next to N3 and H5 next to S1). Rings with a
pyrrole-type nitrogen have two sets of base values: ``NH`` (tautomer-averaged where the
tautomers interconvert) and ``NR`` (the N-methyl compound); other N-substituents add the
``n_substituent`` increments of ``data/ring_increments.csv``.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

from rdkit import Chem

from predictors.shifts.tables import load_increment_table

__all__ = ["RingPosition", "assign_ring_positions", "ring_base_shift", "n_substituent_effect"]

#: Ring systems, largest first: name and SMARTS whose atom-map numbers are the ring positions
#: (unnumbered atoms are ring-fusion atoms). A pyrrole-type N is written ``[nX3]``.
_RING_PATTERNS: tuple[tuple[str, str], ...] = (
    ("phenanthrene", "[c:1]1[c:2][c:3][c:4]c2c1[c:10][c:9]c1[c:8][c:7][c:6][c:5]c12"),
    ("anthracene", "[c:1]1[c:2][c:3][c:4]c2[c:10]c3[c:5][c:6][c:7][c:8]c3[c:9]c12"),
    ("quinoline", "[nX2:1]1[c:2][c:3][c:4]c2[c:5][c:6][c:7][c:8]c12"),
    ("isoquinoline", "[c:1]1[nX2:2][c:3][c:4]c2[c:5][c:6][c:7][c:8]c12"),
    ("quinoxaline", "[nX2:1]1[c:2][c:3][nX2:4]c2[c:5][c:6][c:7][c:8]c12"),
    ("quinazoline", "[nX2:1]1[c:2][nX2:3][c:4]c2[c:5][c:6][c:7][c:8]c12"),
    ("indazole", "[nX3:1]1[nX2:2][c:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("benzimidazole", "[nX3:1]1[c:2][nX2:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("benzoxazole", "[o:1]1[c:2][nX2:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("benzothiazole", "[s:1]1[c:2][nX2:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("indole", "[nX3:1]1[c:2][c:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("benzofuran", "[o:1]1[c:2][c:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("benzothiophene", "[s:1]1[c:2][c:3]c2[c:4][c:5][c:6][c:7]c12"),
    ("naphthalene", "[c:1]1[c:2][c:3][c:4]c2[c:5][c:6][c:7][c:8]c12"),
    ("pyrimidine", "[nX2:1]1[c:2][nX2:3][c:4][c:5][c:6]1"),
    ("pyrazine", "[nX2:1]1[c:2][c:3][nX2:4][c:5][c:6]1"),
    ("pyridazine", "[nX2:1]1[nX2:2][c:3][c:4][c:5][c:6]1"),
    ("pyridine", "[nX2:1]1[c:2][c:3][c:4][c:5][c:6]1"),
    ("triazole_123", "[nX3:1]1[nX2:2][nX2:3][c:4][c:5]1"),
    ("triazole_124", "[nX3:1]1[nX2:2][c:3][nX2:4][c:5]1"),
    ("thiazole", "[s:1]1[c:2][nX2:3][c:4][c:5]1"),
    ("isothiazole", "[s:1]1[nX2:2][c:3][c:4][c:5]1"),
    ("oxazole", "[o:1]1[c:2][nX2:3][c:4][c:5]1"),
    ("isoxazole", "[o:1]1[nX2:2][c:3][c:4][c:5]1"),
    ("imidazole", "[nX3:1]1[c:2][nX2:3][c:4][c:5]1"),
    ("pyrazole", "[nX3:1]1[nX2:2][c:3][c:4][c:5]1"),
    ("pyrrole", "[nX3:1]1[c:2][c:3][c:4][c:5]1"),
    ("furan", "[o:1]1[c:2][c:3][c:4][c:5]1"),
    ("thiophene", "[s:1]1[c:2][c:3][c:4][c:5]1"),
)
_CARBOCYCLES = frozenset({"phenanthrene", "anthracene", "naphthalene"})


@dataclass(frozen=True)
class RingPosition:
    """Where an aromatic carbon sits in a recognised ring system.

    Attributes
    ----------
    ring : str
        Parent ring system (a ``ring`` of ``data/aromatic_rings.csv``).
    position : int
        Ring position of the carbon.
    form : str
        ``"NH"`` / ``"NR"`` for rings with a pyrrole-type N (unsubstituted / substituted), else ``""``.
    system : frozenset of int
        All atoms of the matched ring system.
    pyrrole_n : int or None
        The pyrrole-type N of the system, if any.
    """

    ring: str
    position: int
    form: str
    system: frozenset
    pyrrole_n: int | None = None

    @property
    def hetero(self) -> bool:
        """True for a heteroaromatic system, False for a polycyclic hydrocarbon."""
        return self.ring not in _CARBOCYCLES


@functools.cache
def _patterns() -> tuple[tuple[str, Chem.Mol, tuple[int, ...], bool], ...]:
    out = []
    for name, smarts in _RING_PATTERNS:
        patt = Chem.MolFromSmarts(smarts)
        out.append((name, patt, tuple(a.GetAtomMapNum() for a in patt.GetAtoms()), "[nX3:1]" in smarts))
    return tuple(out)


@functools.cache
def _base_table() -> dict[tuple[str, int, str], float]:
    return {(r["ring"], int(r["position"]), r["form"]): float(r["shift_ppm"])
            for r in load_increment_table("aromatic_rings")}


@functools.cache
def ring_increment_table() -> dict[tuple[str, str], tuple[float, float]]:
    """``(table, group) -> (alpha_ppm, beta_ppm)`` of ``data/ring_increments.csv`` (beta 0 when blank)."""
    return {(r["table"], r["group"]): (float(r["alpha_ppm"]), float(r["beta_ppm"] or 0.0))
            for r in load_increment_table("ring_increments")}


def assign_ring_positions(mol: Chem.Mol) -> dict[int, RingPosition]:
    """Ring system and position of every aromatic carbon that belongs to a tabulated ring.

    Larger systems are matched first; an atom already placed in one system is not placed again
    (the pyridine ring of quinoline is quinoline, not pyridine). Benzene rings are not listed.
    """
    out: dict[int, RingPosition] = {}
    if not any(a.GetIsAromatic() for a in mol.GetAtoms()):
        return out
    taken: set[int] = set()
    for name, patt, maps, has_pyrrole_n in _patterns():
        for match in mol.GetSubstructMatches(patt):
            atoms = frozenset(match)
            if atoms & taken:
                continue
            taken |= atoms
            pyrrole_n = match[maps.index(1)] if has_pyrrole_n else None
            form = ""
            if pyrrole_n is not None:
                form = "NH" if mol.GetAtomWithIdx(pyrrole_n).GetTotalNumHs(includeNeighbors=True) else "NR"
            for atom_idx, pos in zip(match, maps, strict=True):
                if pos and mol.GetAtomWithIdx(atom_idx).GetSymbol() == "C":
                    out[atom_idx] = RingPosition(name, pos, form, atoms, pyrrole_n)
    return out


def ring_base_shift(where: RingPosition) -> float | None:
    """Tabulated base shift of the parent ring at ``where`` (None when not tabulated)."""
    return _base_table().get((where.ring, where.position, where.form))


def n_substituent_effect(mol: Chem.Mol, where: RingPosition, ring: tuple[int, ...], h_parent: int,
                         classify) -> tuple[float, str | None]:
    """Increment of a non-alkyl substituent on the pyrrole-type N for a CH of the same ring.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
    where : RingPosition
        Position of the CH.
    ring : tuple of int
        Smallest aromatic ring holding the CH.
    h_parent : int
        The CH carbon.
    classify : callable
        :func:`predictors.shifts.substituents.classify_substituent`.

    Returns
    -------
    shift : float
        Alpha (next to N) or beta increment; 0 for N-H, N-alkyl and CH outside the N's ring.
    flag : str or None
        Note of the group applied.
    """
    n_idx = where.pyrrole_n
    if where.form != "NR" or n_idx is None or n_idx not in ring:
        return 0.0, None
    n_atom = mol.GetAtomWithIdx(n_idx)
    sub = next((x for x in n_atom.GetNeighbors() if x.GetIdx() not in where.system and x.GetAtomicNum() > 1),
               None)
    if sub is None:
        return 0.0, None
    key, _ = classify(mol, sub.GetIdx(), n_idx)
    key = {"COAr": "COR", "CHO": "COR", "COCl": "COR"}.get(key, key)
    values = ring_increment_table().get(("n_substituent", key))
    if values is None:
        return 0.0, None
    i, j = ring.index(n_idx), ring.index(h_parent)
    dist = min(abs(i - j), len(ring) - abs(i - j))
    return (values[0] if dist == 1 else values[1]), f"N-{key} increment on the {where.ring} ring"
