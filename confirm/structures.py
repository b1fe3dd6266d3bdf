"""Read a structure given on the command line: a molfile/SDF path or a SMILES string."""

from __future__ import annotations

from pathlib import Path

from rdkit import Chem, RDLogger

from predictors.errors import ChemistryError, FileFormatError, InputError
from predictors.molecules import parse_molecule

__all__ = ["STRUCTURE_SUFFIXES", "load_structure"]

#: File suffixes read as structure files (molfile, SD file).
STRUCTURE_SUFFIXES = (".mol", ".sdf", ".mdl", ".sd")


def _read_file(path: Path) -> Chem.Mol:
    if not path.is_file():
        raise FileFormatError(f"structure: file {str(path)!r} does not exist")
    RDLogger.DisableLog("rdApp.*")
    try:
        if path.suffix.lower() in (".sdf", ".sd"):
            supplier = Chem.SDMolSupplier(str(path), removeHs=True)
            mol = next(iter(supplier), None) if len(supplier) else None
        else:
            mol = Chem.MolFromMolFile(str(path), removeHs=True)
    except OSError as exc:
        raise FileFormatError(f"structure: cannot read {str(path)!r}: {exc}") from exc
    finally:
        RDLogger.EnableLog("rdApp.*")
    if mol is None:
        raise FileFormatError(f"structure: {str(path)!r} is not a readable molfile/SD file")
    if mol.GetNumConformers() and mol.GetConformer().Is3D():
        Chem.AssignStereochemistryFrom3D(mol)
    return mol


def load_structure(arg: str) -> Chem.Mol:
    """Return an RDKit molecule from a molfile/SDF path or a SMILES string.

    Parameters
    ----------
    arg : str
        A path ending in .mol, .mdl, .sdf or .sd (the first record of an SD
        file is used), or an isomeric SMILES string. Salts are kept; the checks
        of :func:`predictors.molecules.parse_molecule` run on the organic part.

    Raises
    ------
    FileFormatError
        Missing or unreadable structure file.
    ChemistryError
        Invalid SMILES, radicals, unsupported elements, too many atoms.
    """
    if not isinstance(arg, str) or not arg.strip():
        raise InputError(f"structure: expected a SMILES string or a molfile path, got {arg!r}")
    text = arg.strip()
    path = Path(text)
    if path.suffix.lower() in STRUCTURE_SUFFIXES:
        mol = _read_file(path)
    else:
        RDLogger.DisableLog("rdApp.*")
        try:
            mol = Chem.MolFromSmiles(text)
        finally:
            RDLogger.EnableLog("rdApp.*")
        if mol is None:
            raise ChemistryError(f"structure: {text!r} is neither a readable file nor a valid SMILES")
    parse_molecule(mol, strip_salts=True)
    return mol
