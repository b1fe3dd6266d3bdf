"""Accuracy of the sp3 1H shift model on the published reference set.

Run ``python -m benchmarks.sp3_shift_accuracy``: prints every compared carbon (observed,
predicted, error) with its role, then MAE, rms and max error per role. Only the ``test`` role is
a fair measure: ``defining`` compounds set table values and the ``calibration`` compounds set the
two saturation constants (see tests/predictors/sp3_reference.py).
"""

from __future__ import annotations

import numpy as np

from tests.predictors.sp3_reference import REFERENCE_SP3, predicted_vs_observed


def main() -> None:
    errors: dict[str, list[float]] = {}
    for entry in REFERENCE_SP3:
        for label, observed, predicted in predicted_vs_observed(entry):
            errors.setdefault(entry.role, []).append(predicted - observed)
            print(f"{entry.role:11s} {label:40s} obs {observed:5.2f}  pred {predicted:5.2f}  "
                  f"err {predicted - observed:+.2f}")
    for role in ("test", "calibration", "defining"):
        e = np.array(errors.get(role, []))
        if e.size:
            print(f"{role:11s} n {e.size:3d}  MAE {np.mean(np.abs(e)):.3f} ppm  "
                  f"rms {np.sqrt(np.mean(e**2)):.3f} ppm  max |err| {np.max(np.abs(e)):.2f} ppm")


if __name__ == "__main__":
    main()
