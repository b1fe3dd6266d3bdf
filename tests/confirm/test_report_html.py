"""The self-contained HTML report and the files exported beside it."""

from __future__ import annotations

import csv
import json
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import numpy as np
import pytest

from confirm.qc import CAUTION, evaluate_qc, parse_spec
from confirm.qnmr import InternalStandard, yield_from_result
from confirm.report_html import (
    candidate_curves,
    choose_diagnostic_regions,
    export_result_files,
    render_html_report,
    write_html_report,
)
from confirm.results import AnalysisResult
from predictors.errors import InputError
from tests.confirm._synthetic_results import (
    E_PENTENE,
    PENT_1_ENE,
    STANDARD,
    Z_PENTENE,
    Part,
    build_result,
    pentene_mixture,
)

_VOID = {"meta", "br", "img", "hr", "input", "link", "area", "base", "col", "embed", "source", "track", "wbr"}


class _Checker(HTMLParser):
    """Collects visible text and checks that every element that is opened is closed."""

    def __init__(self):
        super().__init__()
        self.stack: list[str] = []
        self.text: list[str] = []
        self.errors: list[str] = []
        self.tags: list[tuple[str, dict]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag not in _VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        if self.stack and self.stack[-1] not in ("style",):
            self.text.append(data)


def _parse(text: str) -> _Checker:
    checker = _Checker()
    checker.feed(text)
    checker.close()
    return checker


@pytest.fixture(scope="module")
def mixture():
    return pentene_mixture(0.80, 0.15, 0.05, 0.0, summary="The major product is (E)-pent-2-ene (80 %).")


@pytest.fixture(scope="module")
def report_text(mixture):
    return render_html_report(mixture)


def test_report_is_well_formed_and_self_contained(report_text):
    checker = _parse(report_text)
    assert checker.errors == [] and checker.stack == []
    assert report_text.startswith("<!DOCTYPE html>")
    assert "<script" not in report_text
    for _tag, attrs in checker.tags:
        for key in ("src", "href"):
            value = attrs.get(key) or ""
            assert not re.match(r"^(https?:)?//", value), f"external resource {value}"
    assert "@page" in report_text and "A4" in report_text


def test_verdict_comes_first_and_caution_is_stated(report_text, mixture):
    text = " ".join(" ".join(_parse(report_text).text).split())
    assert text.index(mixture.verdict.summary) < text.index("Candidates")
    assert CAUTION in text
    assert "decision aid" in text and "analyst's judgement" in text


def test_report_lists_inputs_candidates_and_versions(report_text, mixture):
    assert mixture.inputs[0].sha256 in report_text
    for smiles in (E_PENTENE, Z_PENTENE, PENT_1_ENE):
        assert smiles in report_text
    assert "80.0 ± 0.3 %" in report_text
    assert "not detected" in report_text  # the starting material
    assert report_text.count("<svg") >= 2 + len(mixture.candidates)  # two plots and every structure
    for name in ("rdkit", "numpy", "matplotlib", "confirm"):
        assert f"<th>{name}</th>" in report_text  # the software table: one column per package
    assert "analysis: lb" in report_text and "0.3 Hz" in report_text and "E:Z pent-2-ene" in report_text
    assert "<td>processing: options.phasing</td><td>entropy</td>" in report_text
    assert "<td>acquisition: n scans</td><td>16</td>" in report_text


@pytest.fixture(scope="module")
def small():
    return build_result([Part(E_PENTENE, 1.0, label="<b>bold</b> & co")], major=E_PENTENE,
                        summary='Major: "<script>alert(1)</script>"')


def test_text_is_escaped(small):
    text = render_html_report(small)
    assert "<script>" not in text and "&lt;script&gt;" in text
    assert "&lt;b&gt;bold&lt;/b&gt; &amp; co" in text


def test_qc_and_yield_sections(mixture):
    spec = parse_spec({"product": "C/C=C/CC", "candidates": ["C/C=C\\CC", "C=CCCC"],
                       "limits": {"max_other_isomer_percent": 2.0}})
    qc = evaluate_qc(mixture, spec)
    with_standard = build_result([Part(STANDARD, 0.4, pathways=("user",)), Part(E_PENTENE, 0.6)],
                                 major=E_PENTENE)
    yields = yield_from_result(with_standard, InternalStandard(smiles=STANDARD, n_h=3, mass_mg=16.82),
                               theoretical_mmol=0.2)
    text = render_html_report(mixture, qc=qc, nmr_yield=yields)
    assert qc.status == "FAIL"
    assert 'class="badge FAIL"' in text and "QC sign-off" in text
    assert "other isomer: (Z)-pent-2-ene" in text
    assert "NMR yield" in text and f"{yields[0].yield_percent:.1f} ±" in text
    assert spec.sha256 in text


def test_candidate_curves_reproduce_the_fitted_mixture(mixture):
    # the hand-built fit model is the sum of fraction * model_spectrum: the curves must add up to it
    curves = candidate_curves(mixture)
    assert curves.fitted.shape == (4, mixture.fit.ppm.size)
    scale = mixture.fit.model.max()
    np.testing.assert_allclose(curves.fitted.sum(axis=0), mixture.fit.model, atol=1e-6 * scale)


def test_diagnostic_regions_include_each_detected_candidates_own_signals(mixture):
    regions = choose_diagnostic_regions(mixture, candidate_curves(mixture))
    assert 1 <= len(regions) <= 4
    assert all(high > low for high, low in regions)
    assert [r[0] for r in regions] == sorted((r[0] for r in regions), reverse=True)
    # pent-1-ene's =CH2 (4.97 ppm) is its own; the pent-2-ene vinyl region (5.3-5.5 ppm) tells E from Z
    assert any(low < 4.97 < high for high, low in regions)
    assert any(low < 5.42 < high for high, low in regions)


@pytest.mark.parametrize("fractions", [(0.80, 0.15, 0.05, 0.0), (0.004, 0.002, 0.95, 0.044)])
def test_the_vinyl_window_that_decides_e_from_z_always_comes_first(fractions):
    # with room for one panel only, it is the pent-2-ene vinyl region (3J 15.5 vs 10.8 Hz decides
    # E/Z), also when the terminal alkene is the major product and owns the most characteristic window
    result = pentene_mixture(*fractions)
    regions = choose_diagnostic_regions(result, candidate_curves(result), max_regions=1)
    assert len(regions) == 1 and regions[0][1] < 5.42 < regions[0][0]


def test_write_report_is_atomic_and_checks_the_folder(tmp_path, small):
    target = write_html_report(small, tmp_path / "report.html")
    assert target.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    assert [p.name for p in tmp_path.iterdir()] == ["report.html"]
    with pytest.raises(InputError, match="report path"):
        write_html_report(small, tmp_path / "missing" / "report.html")
    with pytest.raises(InputError, match="folder"):
        write_html_report(small, tmp_path)


def test_reports_repeat_except_the_generation_time(mixture, report_text):
    first, second = report_text, render_html_report(mixture)
    strip = re.compile(r"generated [0-9-]+ [0-9:]+ UTC")
    assert strip.sub("", first) == strip.sub("", second)


def test_export_writes_plots_tables_and_json(tmp_path, mixture):
    files = export_result_files(mixture, tmp_path)
    assert set(files) == {"spectrum.png", "spectrum.svg", "regions.png", "regions.svg", "components.csv",
                          "ratios.csv", "fitted_spectrum.csv", "result.json"}
    for name in ("spectrum.png", "regions.png"):
        assert files[name].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    for name in ("spectrum.svg", "regions.svg"):
        assert ET.parse(files[name]).getroot().tag.endswith("svg")
    with open(files["components.csv"], newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert [r["smiles"] for r in rows] == [c.candidate.smiles for c in mixture.fit.components]
    assert float(rows[0]["mole_fraction"]) == pytest.approx(0.80)
    with open(files["ratios.csv"], newline="") as handle:
        ratios = list(csv.DictReader(handle))
    assert [r["ratio"] for r in ratios] == [r.name for r in mixture.verdict.ratios]
    for row, ratio in zip(ratios, mixture.verdict.ratios, strict=True):
        assert row["ratio_text"] == ratio.ratio_text and row["decided"] == str(int(ratio.decided))
        if not ratio.is_bound:
            assert float(row["share_percent"]) == pytest.approx(100 * ratio.share, abs=0.01)
    with open(files["fitted_spectrum.csv"], newline="") as handle:
        header = next(csv.reader(handle))
        n_rows = sum(1 for _ in handle)
    assert header[:4] == ["ppm", "measured", "fitted_mixture", "residual"] and n_rows == mixture.fit.ppm.size
    data = json.loads(files["result.json"].read_text())
    assert data["verdict"]["major"] == E_PENTENE
    assert not any(p.name.endswith(".tmp") for p in tmp_path.iterdir())
    with pytest.raises(InputError, match="out_dir"):
        export_result_files(mixture, tmp_path / "absent")


def test_unexplained_signals_are_listed_as_points_to_watch():
    result = build_result([Part(E_PENTENE, 1.0)], major=E_PENTENE, unexplained_ppm=(3.71, 2.17),
                          warnings=("baseline roll corrected",))
    text = render_html_report(result)
    assert "no candidate explains (unknown components) at 3.71, 2.17 ppm" in text
    assert "baseline roll corrected" in text


def test_report_without_a_measured_spectrum(tmp_path):
    # peak-list input: no processed spectrum, only the fit on its own axis
    full = build_result([Part(E_PENTENE, 0.9), Part(Z_PENTENE, 0.1)], major=E_PENTENE)
    result = AnalysisResult(spectrum=None, candidates=full.candidates, spin_systems=full.spin_systems,
                            fit=full.fit, verdict=full.verdict, inputs=full.inputs)
    text = write_html_report(result, tmp_path / "peaks.html").read_text()
    assert full.verdict.summary in text and "<svg" in text


def test_the_parameter_table_is_rounded_with_units_and_says_each_thing_once(mixture):
    from dataclasses import replace

    from confirm.report_html import _parameters_section

    metadata = dict(mixture.spectrum.metadata)
    metadata["processing"] = {"phase_deg": [-36.48224957640548, 2.0000000001], "lb_hz": 0.3,
                              "caution": "a decision aid"}
    result = replace(mixture, spectrum=replace(mixture.spectrum, metadata=metadata),
                     parameters={**mixture.parameters, "line_width_hz": mixture.fit.line_width_hz})
    html = _parameters_section(result)
    assert "-36.48, 2 deg" in html and "36.48224957" not in html
    assert "caution" not in html
    assert html.count("0.3 Hz") == 1  # the analysis and the processing both give the line broadening
    assert html.count(">2 Hz<") == 1  # the fitted line width, once


def test_an_empty_region_shows_flat_noise_not_noise_scaled_to_fill_the_panel(mixture):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from confirm.fitting.noise import estimate_noise_sd
    from confirm.report_html import _draw_region

    noise = estimate_noise_sd(np.asarray(mixture.spectrum.intensity))
    fig, ax = plt.subplots()
    try:
        _draw_region(ax, mixture, candidate_curves(mixture), 8.2, 7.4)  # no pentene line there
        assert ax.get_ylim()[1] >= 20 * noise
        fig2, ax2 = plt.subplots()
        _draw_region(ax2, mixture, candidate_curves(mixture), 5.6, 5.3)  # the vinyl lines: their own scale
        top = float(np.max(mixture.fit.model[(mixture.fit.ppm <= 5.6) & (mixture.fit.ppm >= 5.3)]))
        assert ax2.get_ylim()[1] == pytest.approx(1.08 * top, rel=0.2)
        plt.close(fig2)
    finally:
        plt.close(fig)


def test_the_users_regions_replace_the_chosen_panels(mixture, monkeypatch, tmp_path):
    import confirm.report_html as report_html

    def refuse(*args, **kwargs):
        raise AssertionError("the panels were chosen although the user gave them")

    monkeypatch.setattr(report_html, "choose_diagnostic_regions", refuse)
    path = write_html_report(mixture, tmp_path / "r.html", regions=[(1.5, 2.2), (5.6, 5.2)])
    assert path.read_text(encoding="utf-8").count("<svg") >= 2


def test_regions_need_a_report(run_cli):
    from confirm.commands.demo import sample_files

    result = run_cli("analyze", "--spectrum", str(sample_files()[1]), "--candidates", "C/C=C/c1ccc(OC)cc1",
                     "--regions", "6.5-6.0")
    assert result.exit_code == 2 and "--report" in result.stderr
