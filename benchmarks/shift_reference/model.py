"""The record of one shift-reference compound and its checks."""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

#: Sources recalled rather than re-read are marked with this prefix.
MEMORY = "from memory: "
#: Gottlieb's table of solvent and impurity shifts (recalled).
GOTTLIEB = "from memory: Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1"


@dataclass(frozen=True)
class ShiftEntry:
    """Assigned 1H shifts of one real compound.

    Attributes
    ----------
    key : str
        Short unique identifier.
    smiles : str
        Isomeric SMILES; atom indices refer to ``Chem.MolFromSmiles(smiles)``.
    solvent : str
        ``"CDCl3"``, ``"DMSO-d6"``, ``"D2O"``...
    assignments : dict of int to tuple of float
        Heavy-atom index of each assigned H-bearing atom to its shift(s): one value (the mean of its
        equivalent H) or two (the two H of a CH2 whose signals are resolved).
    source : str
        Author, year, journal and table; or ``"from memory: <what>"``.
    """

    key: str
    smiles: str
    solvent: str
    assignments: dict[int, tuple[float, ...]]
    source: str

    def check(self) -> None:
        """Raise ValueError when the SMILES does not parse or an assignment names an atom without H."""
        mol = Chem.MolFromSmiles(self.smiles)
        if mol is None:
            raise ValueError(f"{self.key}: unparsable SMILES {self.smiles!r}")
        for idx, values in self.assignments.items():
            if not 0 <= idx < mol.GetNumAtoms():
                raise ValueError(f"{self.key}: atom {idx} out of range")
            n_h = mol.GetAtomWithIdx(idx).GetTotalNumHs()
            if n_h == 0 or len(values) > n_h or not values:
                raise ValueError(
                    f"{self.key}: atom {idx} ({mol.GetAtomWithIdx(idx).GetSymbol()}, {n_h} H) "
                    f"cannot carry {len(values)} shift(s)"
                )


def entry(key: str, smiles: str, solvent: str, assignments: dict, source: str) -> ShiftEntry:
    """A :class:`ShiftEntry`; a single shift may be given as a float."""
    values = {
        int(k): (tuple(float(x) for x in v) if isinstance(v, (tuple, list)) else (float(v),))
        for k, v in assignments.items()
    }
    return ShiftEntry(key, smiles, solvent, values, source)
