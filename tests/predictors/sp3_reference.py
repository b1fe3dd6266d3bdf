"""Published sp3 C-H shifts (CDCl3) used to test and benchmark the sp3 shift model.

Each entry is a SMILES with atom-map numbers on the carbons whose protons are compared, and
``{map: shift_ppm}`` (the mean of the protons on that carbon; diastereotopic CH2 averaged).

``role`` says how the entry is used:

* ``"defining"``: a compound with a carbon whose shift *defines* an alpha or methyl-beta increment
  of ``predictors/data/sp3_increments.csv`` (reproduced by construction; kept to check that the
  table and the code agree, not counted as a test of accuracy);
* ``"calibration"``: used to choose the two saturation constants of the model;
* ``"test"``: never used to set any constant; the accuracy test and the benchmark report these.

Values marked ``from memory`` were recalled, not read from the source.
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

GOTTLIEB = "Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1, CDCl3 (from memory)"
MEMORY = "literature value, CDCl3 (from memory)"


@dataclass(frozen=True)
class Sp3Reference:
    name: str
    mapped_smiles: str
    shifts: dict
    source: str
    role: str


REFERENCE_SP3 = (
    # --- held-out test set: common solvents and impurities (Gottlieb 1997, Table 1) ----------
    Sp3Reference("ethanol", "[CH3:1][CH2:2]O", {1: 1.25, 2: 3.72}, GOTTLIEB, "defining"),
    Sp3Reference("diethyl ether", "[CH3:1][CH2:2]OCC", {1: 1.21, 2: 3.48}, GOTTLIEB, "defining"),
    Sp3Reference("ethyl acetate", "[CH3:1][CH2:2]OC(=O)[CH3:3]", {1: 1.26, 2: 4.12, 3: 2.05},
                 GOTTLIEB, "defining"),
    Sp3Reference("butan-2-one", "[CH3:1][CH2:2]C(=O)[CH3:3]", {1: 1.06, 2: 2.46, 3: 2.14},
                 GOTTLIEB, "defining"),
    Sp3Reference("triethylamine", "[CH3:1][CH2:2]N(CC)CC", {1: 1.03, 2: 2.53}, GOTTLIEB, "defining"),
    Sp3Reference("tetrahydrofuran", "[CH2:1]1[CH2:2]OCC1", {1: 1.85, 2: 3.76}, GOTTLIEB, "test"),
    Sp3Reference("tert-butyl methyl ether", "[CH3:1]C(C)(C)O[CH3:2]", {1: 1.19, 2: 3.22},
                 GOTTLIEB, "defining"),
    Sp3Reference("tert-butanol", "[CH3:1]C(C)(C)O", {1: 1.28}, GOTTLIEB, "test"),
    Sp3Reference("1,2-dichloroethane", "Cl[CH2:1]CCl", {1: 3.73}, GOTTLIEB, "test"),
    Sp3Reference("1,2-dimethoxyethane", "[CH3:1]O[CH2:2]COC", {1: 3.40, 2: 3.55}, GOTTLIEB, "test"),
    Sp3Reference("n-hexane", "[CH3:1][CH2:2][CH2:3]CCC", {1: 0.88, 2: 1.26, 3: 1.26}, GOTTLIEB, "test"),
    Sp3Reference("1,4-dioxane", "[CH2:1]1COCCO1", {1: 3.71}, GOTTLIEB, "test"),
    Sp3Reference("ethylene glycol", "O[CH2:1]CO", {1: 3.76}, GOTTLIEB, "test"),
    Sp3Reference("cyclohexane", "[CH2:1]1CCCCC1", {1: 1.43}, GOTTLIEB, "test"),
    Sp3Reference("dichloromethane", "Cl[CH2:1]Cl", {1: 5.30}, GOTTLIEB, "test"),
    # --- held-out test set: other compounds (from memory) -----------------------------------
    Sp3Reference("1-bromopropane", "Br[CH2:1][CH2:2][CH3:3]", {1: 3.40, 2: 1.89, 3: 1.03}, MEMORY, "test"),
    Sp3Reference("2-bromobutane", "[CH3:1][CH:2](Br)[CH2:3][CH3:4]",
                 {1: 1.71, 2: 4.11, 3: 1.84, 4: 1.03}, MEMORY, "defining"),
    Sp3Reference("butan-2-ol", "[CH3:1][CH:2](O)[CH2:3][CH3:4]",
                 {1: 1.19, 2: 3.72, 3: 1.48, 4: 0.93}, MEMORY, "defining"),
    Sp3Reference("cyclohexanol", "O[CH:1]1CCCCC1", {1: 3.61}, MEMORY, "test"),
    Sp3Reference("propan-1-ol", "O[CH2:1][CH2:2][CH3:3]", {1: 3.58, 2: 1.57, 3: 0.94}, MEMORY, "test"),
    Sp3Reference("isopropyl acetate (methyls)", "[CH3:1]C([CH3:2])OC(C)=O", {1: 1.23, 2: 1.23},
                 MEMORY, "test"),
    Sp3Reference("ethyl propanoate", "CC[CH2:1]C(=O)O[CH2:2][CH3:3]", {1: 2.32, 2: 4.12, 3: 1.25},
                 MEMORY, "defining"),
    Sp3Reference("3-phenylpropan-1-ol", "O[CH2:1][CH2:2][CH2:3]c1ccccc1",
                 {1: 3.67, 2: 1.89, 3: 2.71}, MEMORY, "test"),
    Sp3Reference("1-phenylpropan-2-one", "[CH3:1]C(=O)[CH2:2]c1ccccc1", {1: 2.15, 2: 3.70},
                 MEMORY, "test"),
    Sp3Reference("2-chlorobutane", "[CH3:1][CH:2](Cl)CC", {1: 1.50, 2: 4.02}, MEMORY, "defining"),
    Sp3Reference("1-chlorobutane", "Cl[CH2:1][CH2:2][CH2:3][CH3:4]", {1: 3.54, 2: 1.76, 3: 1.45, 4: 0.94},
                 MEMORY, "test"),
    Sp3Reference("1-bromo-2-methylpropane", "Br[CH2:1][CH:2]([CH3:3])C", {1: 3.29, 2: 1.99, 3: 1.03},
                 MEMORY, "test"),
    Sp3Reference("2-methylpropan-1-ol", "O[CH2:1][CH:2]([CH3:3])C", {1: 3.40, 2: 1.77, 3: 0.92},
                 MEMORY, "test"),
    Sp3Reference("4-phenylbutan-2-one", "[CH3:1]C(=O)[CH2:2][CH2:3]c1ccccc1", {1: 2.14, 2: 2.76, 3: 2.90},
                 MEMORY, "test"),
    Sp3Reference("methyl 3-phenylpropanoate", "[CH3:1]OC(=O)[CH2:2][CH2:3]c1ccccc1",
                 {1: 3.67, 2: 2.63, 3: 2.95}, MEMORY, "test"),
    Sp3Reference("tert-butyl acetate", "[CH3:1]C(C)(C)OC(=O)[CH3:2]", {1: 1.45, 2: 1.97}, MEMORY, "test"),
    # --- calibration set: beta and second-alpha saturation -----------------------------------
    Sp3Reference("1-phenylpropan-2-ol", "[CH3:1][CH:2](O)[CH2:3]c1ccccc1",
                 {1: 1.24, 2: 4.02, 3: 2.72}, MEMORY, "calibration"),
    Sp3Reference("2-phenylethanol", "O[CH2:1][CH2:2]c1ccccc1", {1: 3.85, 2: 2.86}, MEMORY, "calibration"),
    Sp3Reference("(2-bromoethyl)benzene", "Br[CH2:1][CH2:2]c1ccccc1", {1: 3.55, 2: 3.15}, MEMORY,
                 "calibration"),
    Sp3Reference("(2-bromopropyl)benzene", "[CH3:1][CH:2](Br)[CH2:3]c1ccccc1",
                 {1: 1.71, 2: 4.27, 3: 3.12}, MEMORY, "calibration"),
    Sp3Reference("1-phenylethanol", "[CH3:1][CH:2](O)c1ccccc1", {1: 1.49, 2: 4.89}, MEMORY, "calibration"),
    Sp3Reference("(1-bromoethyl)benzene", "[CH3:1][CH:2](Br)c1ccccc1", {1: 2.03, 2: 5.21}, MEMORY,
                 "calibration"),
    Sp3Reference("1-phenylethyl acetate", "[CH3:1][CH:2](OC(C)=O)c1ccccc1", {1: 1.54, 2: 5.88},
                 MEMORY, "calibration"),
)


def plain_smiles(mapped: str) -> str:
    """``mapped`` without its atom-map numbers."""
    mol = Chem.MolFromSmiles(mapped)
    for atom in mol.GetAtoms():
        atom.SetAtomMapNum(0)
    return Chem.MolToSmiles(mol)


def predicted_vs_observed(entry: Sp3Reference) -> list[tuple[str, float, float]]:
    """``(label, observed, predicted)`` for each mapped carbon of ``entry`` (mean over its H)."""
    from predictors.shifts import predict_proton_shifts, prepare_model_molecule

    mol_h = Chem.AddHs(Chem.MolFromSmiles(entry.mapped_smiles))
    model, pseudo = prepare_model_molecule(mol_h)
    estimates = predict_proton_shifts(model, pseudo_atoms=pseudo)
    rows = []
    for atom in mol_h.GetAtoms():
        if atom.GetAtomMapNum() in entry.shifts:
            hs = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
            pred = sum(estimates[h].shift_ppm for h in hs) / len(hs)
            rows.append((f"{entry.name} C{atom.GetAtomMapNum()}", entry.shifts[atom.GetAtomMapNum()], pred))
    return rows
