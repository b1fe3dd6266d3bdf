"""Parse and check structures before any model sees them.

Every model in :mod:`predictors` takes a SMILES string or an RDKit molecule;
:func:`parse_molecule` turns either into a sanitised molecule and rejects what
the models cannot handle (radicals, metals, unsupported elements, very large
molecules) with a :class:`~predictors.errors.ChemistryError`.
"""

from __future__ import annotations

from rdkit import Chem, RDLogger
from rdkit.Chem.SaltRemover import SaltRemover

from predictors.errors import ChemistryError, InputError

__all__ = [
    "SUPPORTED_ELEMENTS",
    "COUNTER_ION_ELEMENTS",
    "MAX_HEAVY_ATOMS",
    "parse_molecule",
    "read_structure",
    "check_molecule",
    "strip_counter_ions",
]

#: Elements the shift and product models know.
SUPPORTED_ELEMENTS = frozenset({"H", "C", "N", "O", "F", "Si", "P", "S", "Se", "Cl", "Br", "I"})
#: Elements accepted only as separate counter-ions (stripped before modelling).
COUNTER_ION_ELEMENTS = frozenset({"Li", "Na", "K", "Cs", "Mg", "Ca", "Zn", "B"})
#: Largest substrate the models accept.
MAX_HEAVY_ATOMS = 100


def parse_molecule(structure, *, max_heavy_atoms: int = MAX_HEAVY_ATOMS,
                   strip_salts: bool = False) -> Chem.Mol:
    """Return a checked RDKit molecule from a SMILES string or a molecule.

    Parameters
    ----------
    structure : str or rdkit.Chem.Mol
        Isomeric SMILES, or a molecule (e.g. read from a molfile by the caller).
    max_heavy_atoms : int, keyword-only
        Upper limit on heavy atoms.
    strip_salts : bool, keyword-only
        Remove counter-ion fragments first (see :func:`strip_counter_ions`).

    Raises
    ------
    ChemistryError
        Unparsable SMILES, radicals, unsupported elements or too many atoms.
    """
    mol = read_structure(structure, name="smiles")
    if strip_salts:
        mol, _ = strip_counter_ions(mol)
    check_molecule(mol, max_heavy_atoms=max_heavy_atoms)
    return mol


def read_structure(structure, *, name: str = "structure") -> Chem.Mol:
    """A copy of an RDKit molecule, or one parsed from SMILES, without further checks.

    Parameters
    ----------
    structure : str or rdkit.Chem.Mol
    name : str, keyword-only
        What the structure is, for error messages (e.g. ``"substrate"``).

    Raises
    ------
    ChemistryError
        When RDKit cannot parse the SMILES.
    InputError
        When ``structure`` is neither a non-empty string nor a molecule.
    """
    if isinstance(structure, Chem.Mol):
        return Chem.Mol(structure)
    if not isinstance(structure, str) or not structure.strip():
        raise InputError(f"{name}: expected a SMILES string or an RDKit molecule, got {structure!r}")
    RDLogger.DisableLog("rdApp.*")
    try:
        mol = Chem.MolFromSmiles(structure.strip())
    finally:
        RDLogger.EnableLog("rdApp.*")
    if mol is None:
        raise ChemistryError(f"{name}: RDKit cannot parse {structure!r} (invalid SMILES or valence)")
    return mol


def strip_counter_ions(mol: Chem.Mol) -> tuple[Chem.Mol, tuple[str, ...]]:
    """Keep the largest organic fragment; return it and the SMILES of what was removed.

    Parameters
    ----------
    mol : rdkit.Chem.Mol

    Returns
    -------
    mol : rdkit.Chem.Mol
        The largest fragment by heavy-atom count.
    removed : tuple of str
        SMILES of the removed fragments (empty when there was only one).
    """
    frags = Chem.GetMolFrags(mol, asMols=True, sanitizeFrags=True)
    if len(frags) == 1:
        return mol, ()
    remover = SaltRemover()
    stripped = remover.StripMol(mol, dontRemoveEverything=True)
    frags = sorted(Chem.GetMolFrags(stripped, asMols=True), key=lambda m: m.GetNumHeavyAtoms(), reverse=True)
    kept = frags[0]
    kept_smiles = Chem.MolToSmiles(kept)
    all_frags = Chem.GetMolFrags(mol, asMols=True)
    removed = tuple(Chem.MolToSmiles(f) for f in all_frags if Chem.MolToSmiles(f) != kept_smiles)
    return kept, removed


def check_molecule(mol: Chem.Mol, *, max_heavy_atoms: int = MAX_HEAVY_ATOMS) -> None:
    """Raise :class:`ChemistryError` when the models cannot handle ``mol``."""
    elements = {atom.GetSymbol() for atom in mol.GetAtoms()}
    unsupported = sorted(elements - SUPPORTED_ELEMENTS)
    if unsupported:
        hint = " (strip counter-ions first)" if set(unsupported) <= COUNTER_ION_ELEMENTS else ""
        raise ChemistryError(
            f"structure: unsupported element(s) {', '.join(unsupported)}{hint}; "
            f"supported: {', '.join(sorted(SUPPORTED_ELEMENTS))}"
        )
    radicals = [a.GetIdx() for a in mol.GetAtoms() if a.GetNumRadicalElectrons()]
    if radicals:
        raise ChemistryError(f"structure: radicals are not supported (unpaired electrons on {radicals})")
    n_heavy = mol.GetNumHeavyAtoms()
    if n_heavy == 0:
        raise ChemistryError("structure: no heavy atoms")
    if n_heavy > max_heavy_atoms:
        raise ChemistryError(f"structure: {n_heavy} heavy atoms; at most {max_heavy_atoms} are supported")
