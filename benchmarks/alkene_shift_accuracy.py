"""Accuracy of the olefinic 1H shift model on the published reference set.

Run ``python -m benchmarks.alkene_shift_accuracy``: prints every vinyl proton
(observed, predicted, error), then MAE and rms over the set.
"""

from __future__ import annotations

import numpy as np

from predictors.prediction import predict_spin_system
from tests.predictors.alkene_reference import REFERENCE_ALKENES, match_reference


def collect_errors(*, n_conformers: int = 2) -> list:
    """Matched (observed, predicted) vinyl shifts of every reference compound."""
    rows = []
    for entry in REFERENCE_ALKENES:
        smiles = entry.mapped_smiles
        system = predict_spin_system(_plain(smiles), n_conformers=n_conformers)
        rows.extend(match_reference(entry, system))
    return rows


def _plain(mapped: str) -> str:
    from rdkit import Chem

    mol = Chem.MolFromSmiles(mapped)
    for atom in mol.GetAtoms():
        atom.SetAtomMapNum(0)
    return Chem.MolToSmiles(mol)


def main() -> None:
    rows = collect_errors()
    errors = np.array([r.predicted_ppm - r.observed_ppm for r in rows])
    for r, e in zip(rows, errors, strict=True):
        print(f"{r.name:28s} obs {r.observed_ppm:5.2f}  pred {r.predicted_ppm:5.2f}  err {e:+.2f}")
    print(f"compounds: {len(REFERENCE_ALKENES)}  vinyl shifts: {errors.size}")
    print(f"MAE {np.mean(np.abs(errors)):.3f} ppm  rms {np.sqrt(np.mean(errors**2)):.3f} ppm  "
          f"max |err| {np.max(np.abs(errors)):.2f} ppm")


if __name__ == "__main__":
    main()
