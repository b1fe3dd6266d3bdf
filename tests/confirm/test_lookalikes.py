"""Candidates the spectrum cannot tell apart (confirm.fitting.lookalikes) and what the verdict says."""

from __future__ import annotations

import dataclasses

import numpy as np

from confirm.analysis import build_candidates, predict_systems
from confirm.fitting.lookalikes import lookalike_pairs, spectra_alike
from confirm.fitting.models import build_model
from confirm.fitting.options import FitOptions
from confirm.verdict import decide
from predictors.core import ComponentFit, MixtureFit, SiteEvidence

OPTIONS = FitOptions()
WINDOWS = {"j_window_hz": OPTIONS.j_window_hz, "j_window_sd": OPTIONS.j_window_sd}

FUMARATE = "CCOC(=O)/C=C/C(=O)OCC"
MALEATE = "CCOC(=O)/C=C\\C(=O)OCC"
METHYLENEMALONATE = "C=C(C(=O)OCC)C(=O)OCC"


def models(*smiles):
    candidates, _ = build_candidates(candidates=list(smiles))
    return [build_model(system, OPTIONS) for system in predict_systems(candidates)]


def at_observed(model, observed):
    """The model's shifts moved to observed ones, matched by label (vinyl, CH2, CH3)."""
    shifts = np.array(model.shift0, dtype=float)
    for i, label in enumerate(model.labels):
        shifts[i] = observed[label]
    return shifts


# diethyl fumarate, CDCl3: 6.85 (s, 2H), 4.25 (q, 7.1 Hz, 4H), 1.31 (t, 7.1 Hz, 6H); the values
# beside benchmarks/corpus/compounds.py's entry (from memory, literature values)
FUMARATE_OBSERVED = {"vinyl": 6.85, "CH2": 4.25, "CH3": 1.31}


def test_a_fumarate_cannot_be_told_from_a_methylenemalonate_predicted_on_its_line():
    """Both show one 2H vinyl singlet and two ethyl groups; the methylenemalonate's =CH2 is predicted
    within 2 sd of the fumarate's observed singlet, so the spectrum cannot decide between them. The
    maleate, predicted 0.5 ppm upfield (4 sd), can be told apart."""
    fumarate, methylene, maleate = models(FUMARATE, METHYLENEMALONATE, MALEATE)
    shifts = at_observed(fumarate, FUMARATE_OBSERVED)
    assert spectra_alike(fumarate, shifts, fumarate.j_values0, methylene, **WINDOWS)
    assert not spectra_alike(fumarate, shifts, fumarate.j_values0, maleate, **WINDOWS)
    # the same methylenemalonate's =CH2 predicted 3 sd away from the observed singlet is told apart
    far = dataclasses.replace(methylene, shift0=np.array(methylene.shift0, dtype=float))
    vinyl = list(far.labels).index("vinyl")
    far.shift0[vinyl] = FUMARATE_OBSERVED["vinyl"] - 3 * far.sd[vinyl]
    assert not spectra_alike(fumarate, shifts, fumarate.j_values0, far, **WINDOWS)
    pairs = lookalike_pairs([fumarate, methylene, maleate], [shifts, methylene.shift0, maleate.shift0],
                            [fumarate.j_values0, methylene.j_values0, maleate.j_values0],
                            np.array([True, False, False]), **WINDOWS)
    assert pairs == {0: (1,)}


def test_couplings_tell_apart_what_shifts_alone_do_not():
    """E and Z isomers (vinyl 3J about 15 against 11 Hz; trans 12-18, cis 6-12 Hz in published
    tables), cis and trans 4-tert-butylcyclohexanol (an axial CH-O with two 11 Hz couplings against an
    equatorial one with small ones) and hexan-2-ol against hexan-3-ol (a CH3 doublet against a
    triplet) are never look-alikes, whichever is found."""
    for a, b in (("C/C=C/c1ccc(OC)cc1", "C/C=C\\c1ccc(OC)cc1"),
                 ("CC(C)(C)[C@H]1CC[C@H](O)CC1", "CC(C)(C)[C@H]1CC[C@@H](O)CC1"),
                 ("CCCCC(C)O", "CCCC(O)CC"), ("C/C=C/CCC", "C/C=C\\CCC")):
        ma, mb = models(a, b)
        assert not spectra_alike(ma, ma.shift0, ma.j_values0, mb, **WINDOWS)
        assert not spectra_alike(mb, mb.shift0, mb.j_values0, ma, **WINDOWS)


def _component(smiles, fraction, lookalikes=()):
    candidates, _ = build_candidates(candidates=[smiles])
    site = SiteEvidence(site=0, label="vinyl", n_h=2, ppm=6.85, predicted_ppm=6.8, predicted_sd_ppm=0.12,
                        amount=0.5, amount_sd=0.01, seen=fraction is not None, missing=False,
                        shape_match=0.99, overlap=0.0)
    return candidates[0], ComponentFit(
        candidate=candidates[0], mole_fraction=fraction, mole_fraction_sd=0.01 if fraction else 0.0,
        detection_limit=0.01, detected=fraction is not None, upper_limit=None if fraction else 0.02,
        evidence=("vinyl (2H) observed at 6.850 ppm",), site_evidence=(site,), lookalikes=lookalikes)


def test_the_verdict_names_no_major_product_it_cannot_tell_from_a_look_alike():
    """The fit found the methylenemalonate, and the fumarate looks alike: the verdict is undecided
    and says which candidates the spectrum cannot tell apart, and how to tell them."""
    (c1, found), (c2, alike) = (_component(METHYLENEMALONATE, 1.0, (FUMARATE,)), _component(FUMARATE, None))
    fit = MixtureFit(components=(found, alike), ppm=np.array([1.0, 0.0]), model=np.zeros(2),
                     residual=np.zeros(2), line_width_hz=1.0,
                     quality={"explained_fraction": 0.99, "unexplained_share": 0.0},
                     fraction_covariance=np.diag([1e-4, 0.0]))
    verdict = decide(fit, predict_systems([c1, c2]), [c1, c2])
    assert verdict.major is None and verdict.confidence == "undecided"
    assert "cannot be told from" in verdict.summary
    assert any("cannot tell them apart" in u for u in verdict.unresolved)
    assert any("authentic sample" in s for s in verdict.next_steps)
    # without the look-alike the same fit names it
    plain = dataclasses.replace(fit, components=(dataclasses.replace(found, lookalikes=()), alike))
    assert decide(plain, predict_systems([c1, c2]), [c1, c2]).major == METHYLENEMALONATE
