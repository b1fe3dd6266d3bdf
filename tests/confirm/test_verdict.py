"""Verdict rules on hand-built fits (no fitting involved)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from confirm.verdict import alkene_facts, decide
from predictors.core import ComponentFit, MixtureFit, SiteEvidence
from tests.confirm.published_spectra import (
    ANISYL_BROMIDE,
    E_ANETHOLE,
    E_METHYLPENTENE,
    ESTRAGOLE,
    Z_ANETHOLE,
    Z_METHYLPENTENE,
    published_candidate,
    published_system,
)


def vinyl_evidence(overlap=0.05):
    """One seen vinyl multiplet, as the fit reports it."""
    return SiteEvidence(site=0, label="vinyl", n_h=1, ppm=6.0, predicted_ppm=6.0, predicted_sd_ppm=0.1,
                        amount=0.5, amount_sd=0.01, seen=True, missing=False, shape_match=0.95,
                        overlap=overlap)


def make_fit(compounds, fractions, detected, sd=0.01, evidence=None):
    comps = []
    for i, (c, x, d) in enumerate(zip(compounds, fractions, detected, strict=True)):
        site = evidence[i] if evidence else vinyl_evidence()
        comps.append(
            ComponentFit(
                candidate=published_candidate(c),
                mole_fraction=x if d else None,
                mole_fraction_sd=sd if d else 0.0,
                detection_limit=0.01,
                detected=d,
                upper_limit=None if d else 0.02,
                evidence=("vinyl (1H) observed at 6.000 ppm",),
                site_evidence=(site,),
            )
        )
    cov = np.diag([sd**2 if d else 0.0 for d in detected])
    return MixtureFit(
        components=comps,
        ppm=np.array([1.0, 0.0]),
        model=np.zeros(2),
        residual=np.zeros(2),
        line_width_hz=1.0,
        quality={"explained_fraction": 0.97, "unexplained_share": 0.0},
        fraction_covariance=cov,
    )


def test_alkene_facts_geometry_and_vicinal_coupling():
    # CIP labels of the anethole isomers (RDKit), and trisubstituted 3-methylpent-2-ene has no vinyl H-H pair
    assert alkene_facts(E_ANETHOLE.smiles).geometry == "E"
    assert alkene_facts(Z_ANETHOLE.smiles).geometry == "Z"
    assert alkene_facts(E_ANETHOLE.smiles).vicinal_vinyl_h
    assert not alkene_facts(E_METHYLPENTENE.smiles).vicinal_vinyl_h
    assert alkene_facts(E_METHYLPENTENE.smiles).substitution == 3
    assert alkene_facts(ESTRAGOLE.smiles).geometry is None
    assert alkene_facts(E_ANETHOLE.smiles).skeleton == alkene_facts(Z_ANETHOLE.smiles).skeleton


def test_major_ratios_and_starting_material():
    compounds = [E_ANETHOLE, Z_ANETHOLE, ESTRAGOLE, ANISYL_BROMIDE]
    fit = make_fit(compounds, [0.6, 0.2, 0.1, 0.1], [True] * 4)
    systems = [published_system(c) for c in compounds]
    verdict = decide(fit, systems, [published_candidate(c) for c in compounds])
    assert verdict.major == published_candidate(E_ANETHOLE).smiles
    ratios = {r.name: r for r in verdict.ratios}
    assert ratios["E:Z"].share == pytest.approx(0.75)
    # share = E/(E+Z) with independent sd 0.01: sd = sqrt((Z^2 + E^2) * 0.01^2) / (E+Z)^2
    assert ratios["E:Z"].share_sd == pytest.approx(np.sqrt(0.2**2 + 0.6**2) * 0.01 / 0.8**2)
    assert ratios["regioisomers"].share == pytest.approx(0.8 / 0.9)
    assert ratios["starting material left"].share == pytest.approx(0.1)
    assert verdict.confidence == "high"
    assert "Major alkene" in verdict.summary


def test_undetected_candidate_is_never_claimed():
    compounds = [E_ANETHOLE, Z_ANETHOLE]
    fit = make_fit(compounds, [0.9, 0.1], [False, True])
    verdict = decide(
        fit, [published_system(c) for c in compounds], [published_candidate(c) for c in compounds]
    )
    assert verdict.major == published_candidate(Z_ANETHOLE).smiles
    assert published_candidate(E_ANETHOLE).smiles not in verdict.identified


def test_nothing_detected_is_undecided():
    compounds = [E_ANETHOLE, Z_ANETHOLE]
    fit = make_fit(compounds, [0.5, 0.5], [False, False])
    verdict = decide(
        fit, [published_system(c) for c in compounds], [published_candidate(c) for c in compounds]
    )
    assert verdict.major is None and verdict.confidence == "undecided"


def test_trisubstituted_pair_is_undecided_and_names_noe():
    compounds = [E_METHYLPENTENE, Z_METHYLPENTENE]
    fit = make_fit(compounds, [0.7, 0.3], [True, True])
    verdict = decide(
        fit, [published_system(c) for c in compounds], [published_candidate(c) for c in compounds]
    )
    ez = [r for r in verdict.ratios if r.name.startswith("E:Z")][0]
    assert not ez.decided
    assert verdict.confidence != "high"
    assert any("NOE" in s for s in verdict.next_steps)


def test_overlapped_vinyl_signals_leave_e_z_undecided():
    overlapped = vinyl_evidence(overlap=0.8)
    compounds = [E_ANETHOLE, Z_ANETHOLE]
    fit = make_fit(compounds, [0.6, 0.4], [True, True], evidence=[overlapped, overlapped])
    verdict = decide(
        fit, [published_system(c) for c in compounds], [published_candidate(c) for c in compounds]
    )
    assert not [r for r in verdict.ratios if r.name == "E:Z"][0].decided
    assert any("higher field" in s for s in verdict.next_steps)


def test_internal_standard_is_never_the_major_product():
    from confirm.verdict import STANDARD_LABEL, decide
    from predictors.core import Candidate, ComponentFit, MixtureFit
    from predictors.prediction import predict_spin_system

    alkene = Candidate(smiles="C/C=C/c1ccc(OC)cc1", pathways=("user",))
    standard = Candidate(smiles="COc1cc(OC)cc(OC)c1", pathways=("user",), label=STANDARD_LABEL)
    comps = (ComponentFit(alkene, 0.3, 0.01, 0.01, True), ComponentFit(standard, 0.7, 0.01, 0.01, True))
    fit = MixtureFit(components=comps, ppm=[1.0, 0.0], model=[0.0, 0.0], residual=[0.0, 0.0],
                     line_width_hz=1.0)
    systems = [predict_spin_system(c.smiles, n_conformers=1) for c in (alkene, standard)]
    verdict = decide(fit, systems, [alkene, standard])
    assert verdict.major == alkene.smiles


def test_ratio_with_an_undetected_isomer_allows_for_its_upper_bound():
    from confirm.verdict import decide
    from predictors.core import Candidate, ComponentFit, MixtureFit
    from predictors.prediction import predict_spin_system

    e = Candidate(smiles="C/C=C/c1ccc(OC)cc1", pathways=("E2",), geometry="E")
    z = Candidate(smiles="C/C=C\\c1ccc(OC)cc1", pathways=("E2",), geometry="Z")
    systems = [predict_spin_system(c.smiles, n_conformers=1) for c in (e, z)]

    def verdict_with(z_upper):
        comps = (ComponentFit(e, 1.0, 0.0, 0.01, True),
                 ComponentFit(z, None, 0.0, 0.01, False, upper_limit=z_upper))
        fit = MixtureFit(components=comps, ppm=[1.0, 0.0], model=[0.0, 0.0], residual=[0.0, 0.0],
                         line_width_hz=1.0)
        return decide(fit, systems, [e, z])

    # a ratio with a part known only by its bound is a bound, and not decided (issue 13)
    loose = verdict_with(0.30)
    ratio = next(r for r in loose.ratios if r.name == "E:Z")
    assert not ratio.decided and ratio.low == pytest.approx(1 / 1.3) and ratio.high is None
    assert ratio.ratio_text == ">= 77:23"
    assert "E:Z >= 77:23, not decided" in loose.summary
    assert "up to 30.0 %" in loose.summary
    tight = verdict_with(0.005)
    ratio = next(r for r in tight.ratios if r.name == "E:Z")
    assert not ratio.decided and ratio.ratio_text == ">= 100:0" and ratio.low > 0.99


def test_an_almost_as_good_alternative_assignment_is_reported_and_lowers_the_confidence():
    compounds = [E_ANETHOLE, Z_ANETHOLE, ESTRAGOLE, ANISYL_BROMIDE]
    systems = [published_system(c) for c in compounds]
    cands = [published_candidate(c) for c in compounds]
    fit = make_fit(compounds, [0.6, 0.2, 0.1, 0.1], [True] * 4)
    assert decide(fit, systems, cands).confidence == "high"
    # as fitting reports it: another fit within the cost margin gives fractions 12 points apart
    fit = dataclasses.replace(fit, quality={**fit.quality, "alternative_spread": 0.12})
    verdict = decide(fit, systems, cands)
    assert verdict.confidence == "low"  # over 10 points apart
    assert any("another assignment" in u and "12 points" in u for u in verdict.unresolved)
    assert any("higher field" in s for s in verdict.next_steps)


def test_a_rival_major_product_in_an_almost_as_good_fit_is_reported():
    compounds = [E_ANETHOLE, Z_ANETHOLE, ESTRAGOLE, ANISYL_BROMIDE]
    systems = [published_system(c) for c in compounds]
    cands = [published_candidate(c) for c in compounds]
    fit = make_fit(compounds, [0.45, 0.35, 0.1, 0.1], [True] * 4)
    same = dataclasses.replace(fit, alternative_fractions=((0.5, 0.3, 0.1, 0.1),))
    assert decide(same, systems, cands).confidence == "high"  # the same major product either way
    rival = dataclasses.replace(fit, alternative_fractions=((0.3, 0.5, 0.1, 0.1),))
    verdict = decide(rival, systems, cands)
    assert verdict.major == cands[0].smiles  # the best fit still names it ...
    assert verdict.confidence == "low"  # ... but says the other isomer could be the major one
    assert any(u.startswith("the major product:") for u in verdict.unresolved)


def test_two_products_equal_within_their_sds_leave_the_major_undecided():
    """E 48 +- 5 % and Z 52 +- 5 %: the difference (4 points) is well inside two sd of it (14):
    the verdict names neither as major, says so, and asks for a better-resolved spectrum."""
    compounds = [E_ANETHOLE, Z_ANETHOLE]
    fit = make_fit(compounds, [0.48, 0.52], [True, True], sd=0.05)
    systems = [published_system(c) for c in compounds]
    verdict = decide(fit, systems, [published_candidate(c) for c in compounds])
    assert verdict.major is None
    assert verdict.confidence == "undecided"
    assert "not decided" in verdict.summary and "48.0" in verdict.summary and "52.0" in verdict.summary
    assert any("the major product" in u for u in verdict.unresolved)
    assert set(verdict.identified) == {published_candidate(c).smiles for c in compounds}


def test_a_major_clear_of_its_rival_is_named():
    """E 70 +- 3 % against Z 30 +- 3 %: 40 points apart, about 9 sd of the difference."""
    compounds = [E_ANETHOLE, Z_ANETHOLE]
    fit = make_fit(compounds, [0.7, 0.3], [True, True], sd=0.03)
    systems = [published_system(c) for c in compounds]
    verdict = decide(fit, systems, [published_candidate(c) for c in compounds])
    assert verdict.major == published_candidate(E_ANETHOLE).smiles
    assert verdict.confidence != "undecided"
