"""The depositors' NMReDATA assignments of three real spectra, read at run time.

``<real_spectra>/<name>/assignment.nmredata.sdf`` holds the structure (molblock) and an
``NMR_ASSIGNMENT`` tag whose 1H lines read ``h<k>, <shift>, H<atom>``: the H on molblock atom
``<atom>`` (1-based). Two lines on one atom are the two H of a resolved CH2. The files are never
copied into the repository; without the folder these entries are skipped.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

from rdkit import Chem

from benchmarks.shift_reference.model import ShiftEntry, entry

#: Folder name -> solvent the data show (README of the folder: the headers of panthenol and
#: bromofluoronitroaniline say CDCl3, their spectra show DMSO-d5 and water lines).
NMREDATA = {"propananilide": "CDCl3", "panthenol": "DMSO-d6", "bromofluoronitroaniline": "DMSO-d6"}
_LINE = re.compile(r"^h\d+\s*,\s*(-?\d+\.\d+)\s*,\s*H(\d+)\s*$")


def real_spectra_folder() -> Path | None:
    """``$CONFIRM_REAL_SPECTRA``, else ``../shared/real_spectra`` beside the project; None when absent."""
    env = os.environ.get("CONFIRM_REAL_SPECTRA")
    path = Path(env) if env else Path(__file__).resolve().parents[3] / "shared" / "real_spectra"
    return path if path.is_dir() else None


def read_nmredata_assignment(path: Path) -> tuple[Chem.Mol, dict[int, list[float]]]:
    """Structure and 1H assignments (molblock atom index, 0-based -> shifts) of an NMReDATA SD file."""
    text = path.read_text(encoding="utf-8", errors="replace")
    mol = Chem.MolFromMolBlock(text.split("M  END")[0] + "M  END\n")
    if mol is None:
        raise ValueError(f"{path}: unreadable molblock")
    block = text.split("> <NMR_ASSIGNMENT>")[1].split("> <")[0]
    shifts: dict[int, list[float]] = {}
    for line in block.splitlines():
        match = _LINE.match(line.strip().rstrip("\\").strip())
        if match:
            shifts.setdefault(int(match.group(2)) - 1, []).append(float(match.group(1)))
    return mol, shifts


def nmredata_entries(folder: Path | None = None) -> tuple[list[ShiftEntry], list[str]]:
    """Entries read from ``folder`` (default :func:`real_spectra_folder`) and reasons for any skipped."""
    folder = folder if folder is not None else real_spectra_folder()
    if folder is None:
        return [], ["real spectra folder absent (set CONFIRM_REAL_SPECTRA): NMReDATA entries skipped"]
    out, skipped = [], []
    for name, solvent in NMREDATA.items():
        path = folder / name / "assignment.nmredata.sdf"
        if not path.is_file():
            skipped.append(f"{path} absent: skipped")
            continue
        mol, shifts = read_nmredata_assignment(path)
        smiles = Chem.MolToSmiles(mol)
        order = [int(x) for x in mol.GetProp("_smilesAtomOutputOrder").strip("[],").split(",") if x]
        new_index = {old: new for new, old in enumerate(order)}
        out.append(
            entry(
                f"nmredata:{name}",
                smiles,
                solvent,
                {new_index[a]: v for a, v in shifts.items()},
                f"depositors' NMReDATA assignment, {name}/assignment.nmredata.sdf (read at run time)",
            )
        )
    return out, skipped
