"""Benchmark: accuracy and honesty of the mixture fit over noise realisations.

For synthetic mixtures built from PUBLISHED shifts and couplings (tests/confirm/published_spectra.py)
this prints, over N noise realisations each:
- 400 MHz (SNR 300) anisyl five-component mixture: largest |fraction error| (target <= 1 point);
- 60 MHz (SNR 300) same mixture: largest |fraction error| (target <= 3 points);
- 400 MHz E/Z crotonate 80:20 at SNR 150: share of (component, realisation) pairs whose truth lies
  within +-2 reported sd (target >= 90 %).

    python -m benchmarks.uncertainty_coverage [N]
"""

from __future__ import annotations

import sys
import time

import numpy as np

from confirm.fitting import fit_mixture
from tests.confirm.published_spectra import (
    E_CROTONATE,
    Z_CROTONATE,
    published_candidate,
    published_system,
)
from tests.confirm.test_fitting import ANISYL_MIX, render_mixture


def _fit(spectrum, compounds):
    return fit_mixture(
        spectrum, [published_system(c) for c in compounds], [published_candidate(c) for c in compounds]
    )


def accuracy(field_mhz: float, n_draws: int) -> tuple[float, float]:
    compounds = [c for c, _ in ANISYL_MIX]
    truth = np.array([a for _, a in ANISYL_MIX]) / sum(a for _, a in ANISYL_MIX)
    worst, sds = 0.0, []
    for seed in range(n_draws):
        spec = render_mixture(
            ANISYL_MIX,
            field_mhz=field_mhz,
            n=32768 if field_mhz > 100 else 8192,
            snr=300.0,
            roll=0.01,
            seed=seed,
        )
        fit = _fit(spec, compounds)
        x = np.array([c.mole_fraction for c in fit.components])
        worst = max(worst, float(np.max(np.abs(x - truth))))
        sds.append(np.mean([c.mole_fraction_sd for c in fit.components]))
    return worst, float(np.mean(sds))


def coverage(n_draws: int) -> tuple[float, float]:
    mix = ((E_CROTONATE, 0.8), (Z_CROTONATE, 0.2))
    hits, total, errors = 0, 0, []
    for seed in range(n_draws):
        spec = render_mixture(mix, field_mhz=400.0, n=8192, snr=150.0, seed=1000 + seed)
        fit = _fit(spec, [E_CROTONATE, Z_CROTONATE])
        for comp, true in zip(fit.components, (0.8, 0.2), strict=True):
            hits += abs(comp.mole_fraction - true) <= 2 * comp.mole_fraction_sd
            total += 1
            errors.append(comp.mole_fraction - true)
    return hits / total, float(np.std(errors))


def main(argv) -> int:
    n = int(argv[0]) if argv else 50
    start = time.perf_counter()
    cov, err_sd = coverage(n)
    print(
        f"coverage: truth within +-2 sd in {100 * cov:.1f} % of {2 * n} cases "
        f"(error sd {100 * err_sd:.2f} points; target >= 90 %)"
    )
    n_acc = max(3, n // 10)
    for field in (400.0, 60.0):
        worst, mean_sd = accuracy(field, n_acc)
        print(
            f"{field:.0f} MHz anisyl mixture over {n_acc} draws: largest |error| {100 * worst:.2f} points, "
            f"mean reported sd {100 * mean_sd:.2f} points (target <= {1 if field > 100 else 3} points)"
        )
    print(f"total {time.perf_counter() - start:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
