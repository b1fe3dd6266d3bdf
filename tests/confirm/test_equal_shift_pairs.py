"""Candidates with two coupled protons at one predicted shift and no other partner (an A2 group
whose coupling does not show): the =CH2 of 2-methylbut-1-ene, a CH2Br on a quaternary carbon
(1-bromo-2,2-dimethylpropane) and the ring H of 2-methylthiazole. Their analysis once crashed
(issue 14, item 2); each is analysed at 60, 400 and 600 MHz on a spectrum drawn from its own
predicted system, and must be found."""

from __future__ import annotations

import numpy as np
import pytest

from confirm.analysis import analyze_spectrum, build_candidates, predict_systems
from predictors.core import Spectrum
from predictors.spin import model_spectrum

pytestmark = pytest.mark.slow

SMILES = ("C=C(C)CC", "BrCC(C)(C)C", "Cc1nccs1")


@pytest.fixture(scope="module")
def predicted():
    candidates, _ = build_candidates(candidates=list(SMILES))
    return candidates, predict_systems(candidates)


@pytest.mark.parametrize("field", [60.0, 400.0, 600.0])
def test_equal_shift_pairs_are_fitted(predicted, field):
    candidates, systems = predicted
    ppm = np.linspace(10.0, -0.5, 16384 if field < 100 else 32768)
    y = sum(model_spectrum(s, ppm, field_mhz=field, line_width_hz=1.0) for s in systems)
    y = y + np.random.default_rng(3).normal(0.0, 1e-3 * y.max(), ppm.size)
    result = analyze_spectrum(Spectrum(ppm=ppm, intensity=y, field_mhz=field, solvent="CDCl3"),
                              candidates, systems=systems)
    comps = result.fit.components
    assert all(c.detected for c in comps), [c.evidence for c in comps if not c.detected]
    assert all(abs(c.mole_fraction - 1 / 3) < 0.05 for c in comps)
