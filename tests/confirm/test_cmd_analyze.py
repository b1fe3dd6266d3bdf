"""``confirm analyze`` end to end through the CLI."""

from __future__ import annotations

import json

import numpy as np
import pytest

from confirm.commands.demo import sample_files
from confirm.reading import write_jcamp_spectrum
from predictors.core import Spectrum

ANETHOLES = ["C/C=C/c1ccc(OC)cc1", "C/C=C\\c1ccc(OC)cc1", "C=CCc1ccc(OC)cc1"]


@pytest.mark.slow
def test_analyze_raw_fid_json(run_cli, tmp_path):
    fid_dir = sample_files()[0]
    report = tmp_path / "out.html"
    result = run_cli(
        "analyze", "--spectrum", fid_dir, "--candidates", *ANETHOLES, "--json", "--report", report
    )
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert [c["smiles"] for c in data["components"]] == ANETHOLES
    # sample_spectra/README.md: (E)-anethole is the main product of the scenario
    assert data["verdict"]["major"] == ANETHOLES[0]
    assert data["inputs"][0]["sha256"]
    assert report.exists() and report.stat().st_size > 1000
    # the measured multiplets with the sites fitted on them: the (E) isomer's vinyl dq (J 15.8, 6.6;
    # sample_spectra/README.md) carries its vinyl H, the 1.56 ppm singlet may be water
    lines = data["line_list"]
    dq = next(r for r in lines if abs(r["ppm"] - 6.11) < 0.01)
    assert dq["multiplicity"] == "dq" and dq["j_hz"][0] == pytest.approx(15.8, abs=0.3)
    assert any(a["smiles"] == ANETHOLES[0] and a["site"] == "vinyl" for a in dq["assigned"])
    assert any(r["may_be"] == "water" for r in lines if abs(r["ppm"] - 1.56) < 0.02)


def test_analyze_text_output_has_verdict_table_and_caution(run_cli):
    result = run_cli("analyze", "--spectrum", sample_files()[0], "--candidates", *ANETHOLES[:2])
    assert result.exit_code == 0, result.stderr
    first = result.stdout.splitlines()[0]
    assert first.startswith(("Major", "None", "No product"))
    assert "mol %" in result.stdout
    assert "does not replace" in result.stdout
    assert max(len(line) for line in result.stdout.splitlines()) <= 100  # readable at 100 columns


@pytest.mark.parametrize(
    "args, message",
    [
        (["--candidates", "C1CC"], "C1CC"),
        ([], "no candidate"),
        (["--candidates", "C=C", "--substrate", "CCBr", "--reagent", "ethoxide"], "not both"),
    ],
)
def test_bad_candidates_exit_2(run_cli, args, message):
    result = run_cli("analyze", "--spectrum", sample_files()[0], *args)
    assert result.exit_code == 2
    assert message in result.stderr
    assert "Traceback" not in result.stderr


def test_wrong_nucleus_exit_2(run_cli, tmp_path):
    ppm = np.linspace(200, 0, 4096)
    path = tmp_path / "carbon.jdx"
    write_jcamp_spectrum(
        Spectrum(
            ppm=ppm,
            intensity=np.exp(-(((ppm - 77) / 0.1) ** 2)),
            field_mhz=100.6,
            nucleus="13C",
            solvent="CDCl3",
        ),
        path,
    )
    result = run_cli("analyze", "--spectrum", path, "--candidates", "C=C")
    assert result.exit_code == 2
    assert "nucleus" in result.stderr and "Traceback" not in result.stderr


def test_missing_file_exit_2(run_cli, tmp_path):
    result = run_cli("analyze", "--spectrum", tmp_path / "nothing", "--candidates", "C=C")
    assert result.exit_code == 2 and "Traceback" not in result.stderr


def test_ratio_line_names_its_parts_once_and_gives_the_share_unit():
    from confirm.commands.analyze import ratio_line
    from predictors.core import RatioEstimate

    line = ratio_line(RatioEstimate("E:Z", "E", "Z", 0.797, 0.016))
    assert line.strip() == "E:Z = 80:20 (E 79.7 +- 1.6 % of the two)"
    line = ratio_line(RatioEstimate("regioisomers", "more substituted", "less substituted", 0.92, 0.009))
    assert line.strip().startswith(
        "regioisomers, more substituted:less substituted = 92:8 (more substituted 92.0")
    bound = ratio_line(RatioEstimate("E:Z", "E", "Z", 1.0, 0.0, decided=False, low=0.83))
    assert bound.strip() == "E:Z >= 83:17, a part not detected  (not decided by this spectrum)"
