"""QC sign-off against a specification (confirm.qc and ``confirm qc``)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from confirm.qc import (
    CAUTION,
    QcLimits,
    QcSpec,
    audit_record,
    decide_interval,
    evaluate_qc,
    parse_spec,
    read_spec,
    run_qc,
)
from predictors.errors import FileFormatError, InputError
from tests.confirm._synthetic_results import (
    E_PENTENE,
    PENT_1_ENE,
    SUBSTRATE,
    Z_PENTENE,
    Part,
    build_result,
    pentene_mixture,
)

SPEC_TEXT = """
name = "Lot release (E)-pent-2-ene"
product = "C/C=C/CC"
candidates = ["C/C=C\\\\CC", "C=CCCC"]
starting_material = "CC(Br)CCC"
nmr_solvent = "CDCl3"

[limits]
min_isomeric_purity_percent = 98.0
max_other_isomer_percent = 2.0
max_starting_material_percent = 1.0
min_snr = 100
"""


@pytest.fixture
def spec(tmp_path):
    path = tmp_path / "spec.toml"
    path.write_text(SPEC_TEXT)
    return read_spec(path)


def _status(qc, name):
    return next(c.status for c in qc.checks if c.name.startswith(name))


def test_spec_file_is_read_and_canonicalised(spec):
    assert spec.product == E_PENTENE
    assert spec.candidates == (Z_PENTENE, PENT_1_ENE)
    assert spec.starting_material == SUBSTRATE
    assert spec.limits.max_other_isomer_percent == 2.0
    assert len(spec.sha256) == 64
    kwargs = spec.analysis_kwargs()
    assert kwargs["candidates"] == [E_PENTENE, Z_PENTENE, PENT_1_ENE, SUBSTRATE]
    assert kwargs["nmr_solvent"] == "CDCl3" and kwargs["solvent"] is None  # the sample's, not the reaction's


@pytest.mark.parametrize("table", [
    {"product": "C/C=C/CC", "candidates": ["C=CCCC"], "solvent": "CDCl3"},
    {"product": "C/C=C/CC", "reaction": {"substrate": "CC(Br)CCC", "reagent": "NaOEt", "solvent": "ethanol"}},
])
def test_a_plain_solvent_key_is_refused_with_the_two_new_names(table):
    with pytest.raises(InputError, match="nmr_solvent.*reaction_solvent"):
        parse_spec(table)


def test_the_reaction_solvent_goes_to_the_enumeration():
    spec = parse_spec({"product": "C/C=C/CC", "nmr_solvent": "DMSO-d6",
                       "reaction": {"substrate": "CC(Br)CCC", "reagent": "NaOEt",
                                    "reaction_solvent": "ethanol"}})
    kwargs = spec.analysis_kwargs()
    assert kwargs["solvent"] == "ethanol" and kwargs["nmr_solvent"] == "DMSO-d6"


def test_reaction_spec_gives_substrate_and_reagent():
    spec = parse_spec({"product": "C/C=C/CC", "reaction": {"substrate": "CC(Br)CCC", "reagent": "NaOEt"}})
    kwargs = spec.analysis_kwargs()
    assert kwargs["substrate"] == SUBSTRATE and kwargs["reagent"] == "NaOEt"
    assert "candidates" not in kwargs
    assert spec.starting_material_smiles == SUBSTRATE


@pytest.mark.parametrize("table, message", [
    ({"candidates": ["CC=CC"]}, "product"),
    ({"product": "CC=CC"}, "exactly one"),
    ({"product": "CC=CC", "candidates": ["C=CCC"], "reaction": {"substrate": "CCC(Br)C", "reagent": "x"}},
     "exactly one"),
    ({"product": "CC=CC", "candidates": ["C=CCC"], "limit": {}}, "unknown key 'limit'"),
    ({"product": "CC=CC", "candidates": ["C=CCC"], "limits": {"max_isomer": 2}}, "unknown key 'max_isomer'"),
    ({"product": "C1CC", "candidates": ["C=CCC"]}, "product"),
    ({"product": "CC=CC", "candidates": ["C=CCC"], "limits": {"max_other_isomer_percent": 120}},
     "max_other_isomer_percent"),
    ({"product": "CC=CC", "candidates": ["C=CCC"], "limits": {"min_snr": "high"}}, "min_snr"),
    ({"product": "CC=CC", "reaction": {"substrate": "CCC(Br)C"}}, "reagent"),
])
def test_bad_specs_are_rejected_with_the_key_named(table, message):
    with pytest.raises(InputError, match=message):
        parse_spec(table)


def test_unreadable_spec_files(tmp_path):
    with pytest.raises(FileFormatError, match="cannot read"):
        read_spec(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("product = [unclosed\n")
    with pytest.raises(FileFormatError, match="not valid TOML"):
        read_spec(bad)


@pytest.mark.parametrize("low, high, kwargs, expected", [
    (98.5, 99.5, {"minimum": 98.0}, "PASS"),
    (97.0, 99.0, {"minimum": 98.0}, "INCONCLUSIVE"),
    (95.0, 97.9, {"minimum": 98.0}, "FAIL"),
    (0.0, 2.0, {"maximum": 2.0}, "PASS"),
    (1.5, 2.5, {"maximum": 2.0}, "INCONCLUSIVE"),
    (2.01, 3.0, {"maximum": 2.0}, "FAIL"),
])
def test_decide_interval_is_conservative(low, high, kwargs, expected):
    assert decide_interval(low, high, **kwargs) == expected


def test_pure_product_passes(spec):
    result = pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001))
    qc = evaluate_qc(result, spec)
    assert qc.status == "PASS", [(c.name, c.status, c.reason) for c in qc.checks]
    assert all(c.status == "PASS" for c in qc.checks)
    assert {c.name for c in qc.checks} >= {"identity", "isomeric purity", "starting material",
                                          "signal-to-noise ratio"}
    assert qc.caution == CAUTION


def test_four_percent_of_the_other_isomer_fails_a_two_percent_limit(spec):
    result = pentene_mixture(0.96, 0.04, 0.0, 0.0, sds=(0.004, 0.004, 0.001, 0.001))
    qc = evaluate_qc(result, spec)
    z_check = next(c for c in qc.checks if c.name == "other isomer: (Z)-pent-2-ene")
    assert z_check.status == "FAIL"
    assert z_check.measured == pytest.approx(4.0)
    assert z_check.interval[0] > 2.0
    assert _status(qc, "isomeric purity") == "FAIL"
    assert qc.status == "FAIL"


def test_interval_straddling_the_limit_is_inconclusive(spec):
    result = pentene_mixture(0.975, 0.025, 0.0, 0.0, sds=(0.005, 0.005, 0.001, 0.001))
    qc = evaluate_qc(result, spec)
    z_check = next(c for c in qc.checks if c.name == "other isomer: (Z)-pent-2-ene")
    assert z_check.interval[0] < 2.0 < z_check.interval[1]
    assert z_check.status == "INCONCLUSIVE"
    assert qc.status == "INCONCLUSIVE"


def test_undetected_isomer_with_a_detection_limit_above_the_limit_is_inconclusive(spec):
    parts = [Part(E_PENTENE, 1.0, sd=0.002),
             Part(Z_PENTENE, 0.0, sd=0.002, detection_limit=0.05, detected=False),
             Part(PENT_1_ENE, 0.0, sd=0.001, detected=False),
             Part(SUBSTRATE, 0.0, sd=0.001, detected=False, pathways=("starting material",))]
    qc = evaluate_qc(build_result(parts, major=E_PENTENE), spec)
    assert _status(qc, "other isomer: (Z)") == "INCONCLUSIVE"
    assert qc.status == "INCONCLUSIVE"


def test_wrong_compound_never_passes(spec):
    # the spectrum shows something else: nothing fitted convincingly, the verdict cannot decide
    absent = [Part(E_PENTENE, 0.30, sd=0.2, detection_limit=0.02, detected=False),
              Part(Z_PENTENE, 0.30, sd=0.2, detection_limit=0.02, detected=False),
              Part(PENT_1_ENE, 0.20, sd=0.2, detected=False),
              Part(SUBSTRATE, 0.20, sd=0.2, detected=False, pathways=("starting material",))]
    qc = evaluate_qc(build_result(absent, major=None, confidence="undecided"), spec)
    assert qc.status in ("FAIL", "INCONCLUSIVE")
    assert _status(qc, "identity") != "PASS"
    # the product is clearly absent: identity fails outright
    gone = [Part(E_PENTENE, 0.0, sd=0.002, detection_limit=0.01, detected=False),
            Part(PENT_1_ENE, 1.0, sd=0.01)]
    qc = evaluate_qc(build_result(gone, major=PENT_1_ENE), spec)
    assert _status(qc, "identity") == "FAIL"
    assert qc.status == "FAIL"


def test_low_confidence_verdict_is_not_a_pass(spec):
    result = pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001), confidence="low")
    qc = evaluate_qc(result, spec)
    assert _status(qc, "identity") == "INCONCLUSIVE"
    assert qc.status == "INCONCLUSIVE"


def test_snr_below_the_limit_fails(spec):
    result = pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001), snr=40.0)
    qc = evaluate_qc(result, spec)
    assert _status(qc, "signal-to-noise") == "FAIL"
    assert qc.status == "FAIL"


def test_missing_starting_material_and_product(spec):
    parts = [Part(E_PENTENE, 0.99, sd=0.002), Part(Z_PENTENE, 0.01, sd=0.002)]
    qc = evaluate_qc(build_result(parts, major=E_PENTENE), spec)
    assert _status(qc, "starting material") == "INCONCLUSIVE"
    with pytest.raises(InputError, match="product"):
        evaluate_qc(build_result([Part(Z_PENTENE, 1.0)], major=Z_PENTENE), spec)


def test_identical_inputs_give_identical_audit_digests(spec, monkeypatch):
    monkeypatch.setenv("USER", "analyst7")
    result_a = pentene_mixture(0.97, 0.03, 0.0, 0.0)
    result_b = pentene_mixture(0.97, 0.03, 0.0, 0.0)
    record_a = audit_record(result_a, evaluate_qc(result_a, spec))
    record_b = audit_record(result_b, evaluate_qc(result_b, spec), timestamp="2030-01-01T00:00:00+00:00")
    assert record_a["record_sha256"] == record_b["record_sha256"]
    assert record_a["user"] == "analyst7"
    assert record_a["spec_sha256"] == spec.sha256
    assert record_a["inputs"][0]["sha256"] == "ab" * 32
    assert {"confirm", "python", "numpy", "rdkit"} <= set(record_a["versions"])
    assert record_a["qc"]["caution"] == CAUTION
    json.dumps(record_a, allow_nan=False)
    changed = pentene_mixture(0.96, 0.04, 0.0, 0.0)
    assert audit_record(changed, evaluate_qc(changed, spec))["record_sha256"] != record_a["record_sha256"]


def test_run_qc_passes_the_spec_to_the_analysis(spec, tmp_path):
    seen = {}

    def analyze(path, **kwargs):
        seen.update(kwargs, path=path)
        return pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001))

    result, qc = run_qc(spec, tmp_path / "x.jdx", analyze=analyze)
    assert qc.status == "PASS"
    assert seen["candidates"][0] == E_PENTENE and seen["nmr_solvent"] == "CDCl3"


def test_limits_are_validated():
    with pytest.raises(InputError, match="min_snr"):
        QcLimits(min_snr=-1)
    spec = QcSpec(product=E_PENTENE, limits=QcLimits(), candidates=(Z_PENTENE,))
    assert spec.analysis_kwargs()["candidates"] == [E_PENTENE, Z_PENTENE]


# --- command line -------------------------------------------------------------------------------


@pytest.fixture
def fake_analysis(monkeypatch):
    """Replace the analysis behind ``confirm qc`` by a hand-built result chosen per test."""
    from confirm.commands import qc as qc_command

    holder = {}

    def analyze(path, **kwargs):
        from confirm.results import sha256_of_path

        if not str(path).endswith(".jdx"):
            raise FileFormatError(f"spectrum: {str(path)!r} is not a supported file")
        sha256_of_path(path)
        return holder["result"]

    monkeypatch.setattr(qc_command, "_analyze", analyze)
    return holder


def test_cli_pass_fail_and_audit(run_cli, tmp_path, fake_analysis, monkeypatch):
    monkeypatch.setenv("USER", "qc-user")
    spec_path = tmp_path / "spec.toml"
    spec_path.write_text(SPEC_TEXT)
    spectrum = tmp_path / "lot42.jdx"
    spectrum.write_text("##TITLE=test\n")
    fake_analysis["result"] = pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001))
    audit = tmp_path / "audit.json"
    report = tmp_path / "lot42.html"
    out = run_cli("qc", "--spec", spec_path, "--spectrum", spectrum, "--audit", audit, "--report", report)
    assert out.exit_code == 0, out.stderr
    assert "PASS" in out.stdout and "decision aid" in out.stdout
    # the QC decision is the report's headline, in words, before the reaction verdict
    text = report.read_text()
    assert 'id="qc-status"' in text and "QC PASS: every limit is met" in text
    assert text.index('id="qc-status"') < text.index('id="verdict"')
    record = json.loads(audit.read_text())
    assert record["qc"]["status"] == "PASS" and record["user"] == "qc-user"
    fake_analysis["result"] = pentene_mixture(0.96, 0.04, 0.0, 0.0, sds=(0.004, 0.004, 0.001, 0.001))
    out = run_cli("qc", "--spec", spec_path, "--spectrum", spectrum, "--json")
    assert out.exit_code == 1
    data = json.loads(out.stdout)
    assert data["status"] == "FAIL" and data["caution"] == CAUTION
    assert data["analysis"]["verdict"]["major"] == E_PENTENE
    assert "Traceback" not in out.stderr


def test_lot_analyst_reviewer_and_comment_reach_the_record(run_cli, tmp_path, fake_analysis):
    spec_path = tmp_path / "spec.toml"
    spec_path.write_text(SPEC_TEXT + '\n[signoff]\nanalyst = "A. Chemist"\nreviewer = "Spec Reviewer"\n')
    spectrum = tmp_path / "lot42.jdx"
    spectrum.write_text("##TITLE=test\n")
    fake_analysis["result"] = pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001))
    audit, report = tmp_path / "audit.json", tmp_path / "lot42.html"
    out = run_cli("qc", "--spec", spec_path, "--spectrum", spectrum, "--audit", audit, "--report", report,
                  "--lot", "L-42", "--reviewer", "B. Reviewer", "--comment", "retest after drying")
    assert out.exit_code == 0, out.stderr
    assert "lot L-42, analyst A. Chemist, reviewer B. Reviewer" in out.stdout
    assert "Comment: retest after drying" in out.stdout
    assert max(len(line) for line in out.stdout.splitlines()) <= 100  # readable at 100 columns
    record = json.loads(audit.read_text())
    # the command line replaces the spec's reviewer, the spec's analyst stays
    assert record["qc"]["signoff"] == {"lot": "L-42", "analyst": "A. Chemist", "reviewer": "B. Reviewer",
                                       "comment": "retest after drying"}
    assert "L-42" in report.read_text() and "B. Reviewer" in report.read_text()
    other = tmp_path / "audit2.json"
    assert run_cli("qc", "--spec", spec_path, "--spectrum", spectrum, "--audit", other, "--lot", "L-43",
                   "--reviewer", "B. Reviewer", "--comment", "retest after drying").exit_code == 0
    # the record's digest covers the sign-off: another lot is another record
    assert json.loads(other.read_text())["record_sha256"] != record["record_sha256"]
    bad = run_cli("qc", "--spec", spec_path, "--spectrum", spectrum, "--lot", "  ")
    assert bad.exit_code == 2 and "signoff lot" in bad.stderr
    spec_path.write_text(SPEC_TEXT + '\n[signoff]\nbatch = "x"\n')
    bad = run_cli("qc", "--spec", spec_path, "--spectrum", spectrum)
    assert bad.exit_code == 2 and "unknown key 'batch'" in bad.stderr


def test_cli_bad_input_exits_2(run_cli, tmp_path, fake_analysis):
    spec_path = tmp_path / "spec.toml"
    spec_path.write_text(SPEC_TEXT)
    out = run_cli("qc", "--spec", tmp_path / "nope.toml", "--spectrum", tmp_path / "a.jdx")
    assert out.exit_code == 2 and out.stderr.startswith("error: spec")
    out = run_cli("qc", "--spec", spec_path, "--spectrum", tmp_path / "missing.jdx")
    assert out.exit_code == 2 and "Traceback" not in out.stderr
    assert out.stderr.count("\n") == 1


def test_fraction_covariance_is_used_when_the_fit_has_one(spec):
    sds = (0.004, 0.004, 0.001, 0.001)
    plain = evaluate_qc(pentene_mixture(0.97, 0.03, 0.0, 0.0, sds=sds), spec)
    # E and Z fractions fully anti-correlated (the fit trades one for the other)
    cov = [[0.004**2, -0.004**2, 0, 0], [-0.004**2, 0.004**2, 0, 0], [0, 0, 1e-6, 0], [0, 0, 0, 1e-6]]
    correlated = evaluate_qc(pentene_mixture(0.97, 0.03, 0.0, 0.0, sds=sds, covariance=cov), spec)
    sd_plain = next(c.measured_sd for c in plain.checks if c.name == "isomeric purity")
    sd_corr = next(c.measured_sd for c in correlated.checks if c.name == "isomeric purity")
    # purity p = E/(E+Z) (pent-1-ene is an isomer but not detected, so it is "below its LOD" and
    # not in the total); gradient (Z, -E)/S^2 with S = 1. Hand calculation:
    # independent: 0.004 * sqrt(0.03^2 + 0.97^2) = 0.38819 %; anti-correlated: 0.004 * (0.03 + 0.97) = 0.4 %
    assert sd_plain == pytest.approx(0.38819, abs=1e-4)
    assert sd_corr == pytest.approx(0.4, abs=1e-4)


def test_unexplained_signals_block_a_pass(spec):
    result = pentene_mixture(0.996, 0.0, 0.0, 0.0, sds=(0.002, 0.001, 0.001, 0.001), unexplained_ppm=(3.71,))
    qc = evaluate_qc(result, spec)
    identity = next(c for c in qc.checks if c.name == "identity")
    assert identity.status == "INCONCLUSIVE" and "3.71" in identity.reason
    assert qc.status == "INCONCLUSIVE"


# --- end to end with the real analysis ----------------------------------------------------------

ANETHOLE_SPEC = """
name = "Anethole lot release"
product = "C/C=C/c1ccc(OC)cc1"
candidates = ["C/C=C\\\\c1ccc(OC)cc1", "C=CCc1ccc(OC)cc1"]
starting_material = "CC(Br)Cc1ccc(OC)cc1"
nmr_solvent = "CDCl3"

[limits]
min_isomeric_purity_percent = 97.0
max_other_isomer_percent = 2.0
max_starting_material_percent = 2.0
min_snr = 50
"""


def _published_jcamp(mixture, path, *, seed=3, field_mhz=400.0, n_points=32768, snr=400.0):
    """A processed spectrum of published shifts/J (tests/confirm/published_spectra.py), as JCAMP-DX."""
    from confirm.reading import write_jcamp_spectrum
    from predictors.core import Spectrum
    from tests.confirm.published_spectra import mixture_lines

    rng = np.random.default_rng(seed)
    ppm = np.linspace(11.0, -1.0, n_points)
    centres, heights, widths = mixture_lines(mixture, field_mhz=field_mhz)
    intensity = np.zeros(n_points)
    for centre, height, extra in zip(centres, heights, widths, strict=True):
        half = (1.0 + extra) / field_mhz / 2
        near = np.abs(ppm - centre) < 400 * half
        intensity[near] += height * half / np.pi / ((ppm[near] - centre) ** 2 + half**2)
    intensity += rng.normal(0.0, intensity.max() / snr, n_points)
    return write_jcamp_spectrum(Spectrum(ppm=ppm, intensity=intensity, field_mhz=field_mhz, solvent="CDCl3"),
                                path)


def _details(result, qc) -> list:
    return [(c.name, c.status, c.measured_text(), c.reason) for c in qc.checks] + [
        (c.candidate.smiles, round(c.share, 3), c.upper_limit, c.detected) for c in result.fit.components]


def _anethole_lots(tmp_path_factory, snr: float):
    pytest.importorskip("confirm.analysis", reason="the analysis module (issue 7) is not in this tree yet")
    from tests.confirm.published_spectra import BUTYL_ACRYLATE, E_ANETHOLE, Z_ANETHOLE

    folder = tmp_path_factory.mktemp(f"lots{int(snr)}")
    spec_path = folder / "spec.toml"
    spec_path.write_text(ANETHOLE_SPEC)
    return read_spec(spec_path), {
        "pure": _published_jcamp([(E_ANETHOLE, 1.0)], folder / "pure.jdx", snr=snr),
        "four": _published_jcamp([(E_ANETHOLE, 0.96), (Z_ANETHOLE, 0.04)], folder / "four.jdx", snr=snr),
        "wrong": _published_jcamp([(BUTYL_ACRYLATE, 1.0)], folder / "wrong.jdx", snr=snr),
    }


@pytest.fixture(scope="module")
def anethole_lots(tmp_path_factory):
    return _anethole_lots(tmp_path_factory, 400.0)


@pytest.fixture(scope="module")
def anethole_lots_high_snr(tmp_path_factory):
    return _anethole_lots(tmp_path_factory, 2000.0)


@pytest.mark.slow
def test_qc_end_to_end_never_passes_a_bad_lot(anethole_lots):
    spec, lots = anethole_lots
    for name in ("four", "wrong"):
        result, qc = run_qc(spec, lots[name])
        assert qc.status in ("FAIL", "INCONCLUSIVE"), (name, _details(result, qc))
    # identical inputs, identical decision and digest
    first, qc_first = run_qc(spec, lots["wrong"])
    again, qc_again = run_qc(spec, lots["wrong"])
    assert audit_record(first, qc_first)["record_sha256"] == audit_record(again, qc_again)["record_sha256"]


@pytest.mark.slow
def test_qc_end_to_end_decides_clear_lots_at_release_snr(anethole_lots_high_snr):
    # The whole chain (reading, processing, fitting, verdict, QC) on lots whose answer is clear, at
    # a signal-to-noise ratio fit for a release test (2000 on the tallest line): pure (E)-anethole
    # passes; 4 % of (Z)-anethole against a 2 % limit fails on that check.
    spec, lots = anethole_lots_high_snr
    result, qc_pure = run_qc(spec, lots["pure"])
    assert qc_pure.status == "PASS", _details(result, qc_pure)
    result, qc_four = run_qc(spec, lots["four"])
    failing = [c for c in qc_four.checks if c.name.startswith("other isomer") and c.status == "FAIL"]
    assert len(failing) == 1 and "c/c=c\\c1ccc(oc)cc1" in failing[0].name.lower(), _details(result, qc_four)
    assert qc_four.status == "FAIL"


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason=(
    "known gap (issue 8): at SNR 400 the pure lot's absent (Z) isomer is bounded only by its one 1H "
    "vinyl multiplet, whose fitted position is chosen on noise: 95 % bound 2.9 % against the 2 % limit, "
    "so the lot is INCONCLUSIVE (PASS at SNR 2000, see the test above); and the 4 % Z isomer is not "
    "detected at SNR 400 (bound 4.0 %, so INCONCLUSIVE), while at SNR 2000 it is biased high (6.2 +- 1.1 "
    "%; a fit almost as good gives 4.1 %) because its sites that overlap the E isomer absorb the E "
    "model's misfit. Strict, so this test reports when the gap closes"))
def test_qc_end_to_end_decides_clear_lots(anethole_lots):
    # At SNR 400: pure (E)-anethole passes; 4 % of (Z)-anethole is measured as 4 +- 1.5 % and fails.
    spec, lots = anethole_lots
    result, qc_pure = run_qc(spec, lots["pure"])
    assert qc_pure.status == "PASS", _details(result, qc_pure)
    result, qc_four = run_qc(spec, lots["four"])
    failing = [c for c in qc_four.checks if c.name.startswith("other isomer") and c.status == "FAIL"]
    assert len(failing) == 1 and failing[0].measured == pytest.approx(4.0, abs=1.5), _details(result, qc_four)
    assert qc_four.status == "FAIL"


def test_undetected_isomer_whose_upper_bound_exceeds_the_limit_never_passes(spec):
    # A candidate not detected (its diagnostic multiplet not confirmed) with a small detection
    # limit, but whose own signals allow up to 5 %: the 2 % limit can be neither passed nor failed.
    from dataclasses import replace

    result = pentene_mixture(0.99, 0.0, 0.0, 0.0)
    comps = list(result.fit.components)
    comps[1] = replace(comps[1], detected=False, detection_limit=0.004, upper_limit=0.05)
    fit = replace(result.fit, components=tuple(comps))
    qc = evaluate_qc(replace(result, fit=fit), spec)
    assert _status(qc, "other isomer: " + (comps[1].candidate.label or comps[1].candidate.smiles)) \
        == "INCONCLUSIVE"
    assert qc.status != "PASS"
    # the same candidate bounded by 1 % passes that check
    comps[1] = replace(comps[1], upper_limit=0.01)
    qc = evaluate_qc(replace(result, fit=replace(result.fit, components=tuple(comps))), spec)
    assert _status(qc, "other isomer: " + (comps[1].candidate.label or comps[1].candidate.smiles)) == "PASS"


def test_template_is_a_readable_commented_spec_and_never_overwrites(run_cli, tmp_path):
    from confirm.qc import read_spec

    path = tmp_path / "spec.toml"
    result = run_cli("qc", "--template", str(path))
    assert result.exit_code == 0, result.stderr
    text = path.read_text()
    assert text.count("#") > 10 and "[limits]" in text and "[reaction]" in text
    spec = read_spec(path)  # reads as written: the example values are a valid specification
    assert spec.limits.min_isomeric_purity_percent == 98.0 and len(spec.candidates) == 2
    again = run_cli("qc", "--template", str(path))
    assert again.exit_code == 2 and "exists" in again.stderr and path.read_text() == text
    missing = run_cli("qc", "--spectrum", str(path))
    assert missing.exit_code == 2 and "--spec: required" in missing.stderr and "--template" in missing.stderr


def test_decoupled_nuclei_from_the_spec_reach_the_analysis():
    spec = parse_spec({"product": "FC/C=C/C", "candidates": ["FC/C=C\\C"], "decoupled": ["19F", "P"]})
    assert spec.decoupled == ("19F", "31P")
    assert spec.analysis_kwargs()["decoupled"] == ("19F", "31P")
    plain = parse_spec({"product": "C/C=C/CC", "candidates": ["C=CCCC"]})
    assert plain.decoupled == () and "decoupled" not in plain.analysis_kwargs()
    with pytest.raises(InputError, match="spec decoupled: expected one of 19F, 31P"):
        parse_spec({"product": "C/C=C/CC", "candidates": ["C=CCCC"], "decoupled": ["13C"]})
    with pytest.raises(InputError, match="spec decoupled: expected a list"):
        parse_spec({"product": "C/C=C/CC", "candidates": ["C=CCCC"], "decoupled": "19F"})
