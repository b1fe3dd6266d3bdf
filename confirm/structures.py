"""Read a structure given on the command line: a molfile/SDF path or a SMILES string.

A SMILES is one word: RDKit would take text after a space as the molecule's name and drop it,
so :func:`check_smiles_text` refuses it. A structure is one molecule: fragments that are common
counter-ions (halides, metal cations, tosylate, acetate...) are allowed beside it, but two
organic molecules (``CCCBr.CC(Br)C``) are refused rather than one of them being taken for a
counter-ion.
"""

from __future__ import annotations

from pathlib import Path

from rdkit import Chem, RDLogger

from predictors.errors import ChemistryError, FileFormatError, InputError
from predictors.molecules import parse_molecule

__all__ = ["STRUCTURE_SUFFIXES", "check_smiles", "check_smiles_text", "check_single_molecule",
           "load_structure", "split_name"]

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


def check_smiles_text(text: str, *, name: str = "structure") -> str:
    """Return ``text`` stripped; raise when it holds whitespace inside (text after a space).

    Raises
    ------
    InputError
        Empty text, or a space, tab or line break inside it.
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError(f"{name}: expected a SMILES string, got {text!r}")
    stripped = text.strip()
    words = stripped.split()
    if len(words) > 1:
        raise InputError(f"{name}: {stripped!r} has text after a space ({' '.join(words[1:])!r}); a SMILES "
                         "has no spaces: give one SMILES per argument, quoted")
    return stripped


def check_single_molecule(mol: Chem.Mol, *, name: str = "structure") -> None:
    """Raise when ``mol`` holds two or more organic molecules besides common counter-ions.

    Fragments that RDKit's default salt list recognises (halides, alkali and alkaline-earth
    cations, sulfonates, carboxylates such as acetate and trifluoroacetate, ...) and fragments
    without carbon (water, ammonium) are counter-ions or solvent; more than one remaining
    fragment with carbon is a mixture, which is not one structure.

    Raises
    ------
    ChemistryError
        Naming the organic fragments.
    """
    from rdkit.Chem.SaltRemover import SaltRemover

    if len(Chem.GetMolFrags(mol)) < 2:
        return
    stripped = SaltRemover().StripMol(mol, dontRemoveEverything=True)
    organic = [Chem.MolToSmiles(f) for f in Chem.GetMolFrags(stripped, asMols=True, sanitizeFrags=False)
               if any(a.GetAtomicNum() == 6 for a in f.GetAtoms())]
    if len(organic) > 1:
        raise ChemistryError(f"{name}: {Chem.MolToSmiles(mol)!r} holds {len(organic)} separate organic "
                             f"molecules ({', '.join(organic)}); give one structure per argument (a "
                             "counter-ion must be a common inorganic or sulfonate/carboxylate ion)")


def check_smiles(text: str, *, name: str = "smiles") -> str:
    """Return the stripped SMILES after :func:`check_smiles_text` and :func:`check_single_molecule`.

    Raises
    ------
    InputError
        Empty, or text after a space.
    ChemistryError
        Not parsable, or two organic molecules.
    """
    text = check_smiles_text(text, name=name)
    RDLogger.DisableLog("rdApp.*")
    try:
        mol = Chem.MolFromSmiles(text)
    finally:
        RDLogger.EnableLog("rdApp.*")
    if mol is None:
        raise ChemistryError(f"{name}: RDKit cannot parse {text!r} (invalid SMILES or valence)")
    check_single_molecule(mol, name=name)
    return text


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
        Invalid SMILES, radicals, unsupported elements, too many atoms, two organic molecules.
    InputError
        Empty text, or text after a space in a SMILES.
    """
    if not isinstance(arg, str) or not arg.strip():
        raise InputError(f"structure: expected a SMILES string or a molfile path, got {arg!r}")
    text = arg.strip()
    path = Path(text)
    if path.suffix.lower() in STRUCTURE_SUFFIXES:
        mol = _read_file(path)
    else:
        text = check_smiles_text(text)
        RDLogger.DisableLog("rdApp.*")
        try:
            mol = Chem.MolFromSmiles(text)
        finally:
            RDLogger.EnableLog("rdApp.*")
        if mol is None:
            problem = _smiles_problem(text)
            raise ChemistryError(f"structure: {text!r} is neither a readable file nor a valid SMILES"
                                 + (f" ({problem})" if problem else ""))
    check_single_molecule(mol)
    parse_molecule(mol, strip_salts=True)
    return mol


#: Longest compound name accepted in ``name=SMILES`` (it heads table columns and plot legends).
MAX_NAME_LENGTH = 60


def split_name(arg: str) -> tuple[str | None, str]:
    """``(name, structure)`` of a ``name=SMILES`` (or ``name=file.mol``) argument; ``(None, arg)``
    when there is no name.

    A SMILES has ``=`` signs of its own (``C=CC``): text that is itself a valid SMILES or an
    existing structure file has no name; otherwise the name is what comes before the first ``=``.

    Raises
    ------
    InputError
        An empty or over-long name, or nothing after the ``=``.
    """
    if not isinstance(arg, str) or "=" not in arg:
        return None, arg
    text = arg.strip()
    path = Path(text)
    if path.suffix.lower() in STRUCTURE_SUFFIXES and path.exists():
        return None, text
    if " " not in text:
        RDLogger.DisableLog("rdApp.*")
        try:
            whole = Chem.MolFromSmiles(text)
        finally:
            RDLogger.EnableLog("rdApp.*")
        if whole is not None:
            return None, text
    name, _, structure = text.partition("=")
    name, structure = name.strip(), structure.strip()
    if not name or not structure:
        raise InputError(f"structure: expected NAME=SMILES (or a SMILES alone), got {arg!r}")
    if len(name) > MAX_NAME_LENGTH:
        raise InputError(f"structure: the name {name[:20]!r}... is longer than {MAX_NAME_LENGTH} characters")
    return name, structure


def _smiles_problem(text: str) -> str:
    """What RDKit found wrong with a SMILES, in one phrase with the character position where it
    gives one ("extra open parentheses, around character 3"; "explicit valence for atom # 0 C, 5,
    is greater than permitted"); empty when RDKit cannot say."""
    import re

    from rdkit import rdBase

    capture = getattr(rdBase, "CaptureErrorLog", None)
    if capture is None:
        return ""
    with capture() as log:
        Chem.MolFromSmiles(text)
    messages = log.messages
    lines = [re.sub(r"^\[[\d:.]+\]\s*", "", line).strip() for line in messages.splitlines()]
    reason = next((line for line in lines if line and "Failed parsing" not in line
                   and "check for mistakes" not in line and not set(line) <= set("~^ ") and line != text), "")
    reason = re.sub(r"^SMILES Parse Error:\s*", "", reason)
    reason = re.sub(r"\s*(while parsing|for input):.*$", "", reason).strip()
    reason = re.sub(r"\s+", " ", reason)
    where = re.search(r"check for mistakes around position (\d+)", messages)
    if reason and where:
        reason += f", around character {where.group(1)}"
    return reason[:1].lower() + reason[1:] if reason else ""
