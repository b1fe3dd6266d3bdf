"""19F / 31P couplings in the workflow: the fit's models, decoupling read from files or asked for on
the command line, and the real fluoroarene spectrum."""

from __future__ import annotations

import json

import numpy as np
import pytest

from confirm.analysis import analyze_spectrum, build_candidates
from confirm.fitting import FitOptions
from confirm.fitting.models import build_model, model_lines, model_lines_with_derivatives
from confirm.reading import read_measurement, write_jcamp_spectrum
from confirm.reading.decoupling import decoupled_nuclei
from predictors.core import Spectrum
from predictors.hetero_couplings import without_x_couplings
from predictors.prediction import predict_spin_system
from predictors.spin import model_spectrum
from tests.confirm._jcamp_text import fid_block
from tests.confirm.robustness_corpus import acqus_folder
from tests.confirm.test_processing import CARRIER_PPM, FIELD_MHZ, SW_HZ, synthetic_fid

ESTER = "CC(=O)OCC(F)(F)F"  # 2,2,2-trifluoroethyl acetate: OCH2 q, 3J(H,F) 8.4 Hz (from memory)
FIELD = 400.0


@pytest.fixture(scope="module")
def ester_system():
    return predict_spin_system(ESTER)


def _spectrum(system, *, decoupled_in_file: bool) -> Spectrum:
    ppm = np.linspace(10.0, -0.5, 32768)
    rng = np.random.default_rng(3)
    y = model_spectrum(system, ppm, field_mhz=FIELD, line_width_hz=1.0) + rng.normal(0.0, 1e-3, ppm.size)
    acquisition = {"decoupled_nuclei": ("19F",) if decoupled_in_file else ()}
    return Spectrum(ppm=ppm, intensity=y, field_mhz=FIELD, solvent="CDCl3",
                    metadata={"acquisition": acquisition})


# ------------------------------------------------------------------------------ the fit's model
def test_fit_model_splits_the_ch2_by_its_cf3(ester_system):
    model = build_model(ester_system, FitOptions())
    ch2 = next(k for k, g in enumerate(model.groups) if ester_system.x_couplings[g[0]])
    ppm, inten, site, _ = model_lines(model, model.shift0, model.j_values0, FIELD, satellites=False)
    mine = np.sort(ppm[site == ch2] * FIELD)
    assert mine.size == 4
    (_, _, j), = ester_system.x_couplings[model.groups[ch2][0]]
    assert np.allclose(np.diff(mine), j)
    assert np.sort(inten[site == ch2]) == pytest.approx([0.25, 0.25, 0.75, 0.75])
    # with satellites and derivatives: every line (and satellite) keeps a derivative row
    out = model_lines_with_derivatives(model, model.shift0, model.j_values0, FIELD)
    assert out[0].size == out[4].shape[0]
    assert decoupled_model_lines(ester_system).size == 1


@pytest.mark.parametrize("smiles", ["Fc1ccccc1", "COP(C)(=O)OC"])
def test_fit_model_lines_equal_the_simulation_at_60_mhz(smiles):
    # the fit's model and the rendered prediction treat the X couplings alike (one F / one P:
    # simulated state by state)
    from predictors.spin import render_lines, simulate_lines

    system = predict_spin_system(smiles)
    model = build_model(system, FitOptions())
    ppm_lines, inten, _, _ = model_lines(model, model.shift0, model.j_values0, 60.0, satellites=False)
    grid = np.linspace(system.shifts_ppm.max() + 0.6, system.shifts_ppm.min() - 0.6, 20001)
    width = 0.8 / 60.0

    def draw(centres, weights):
        return np.sum(weights[:, None] * (width / 2 / np.pi) / ((grid[None, :] - centres[:, None]) ** 2
                                                                + (width / 2) ** 2), axis=0)

    ours = draw(ppm_lines, inten)
    reference = render_lines(simulate_lines(system, field_mhz=60.0), grid, line_width_hz=0.8)
    assert np.max(np.abs(ours - reference)) < 0.01 * reference.max()


def decoupled_model_lines(system):
    model = build_model(without_x_couplings(system, "19F"), FitOptions())
    ch2 = next(k for k, g in enumerate(model.groups) if system.x_couplings[g[0]])
    ppm, _, site, _ = model_lines(model, model.shift0, model.j_values0, FIELD, satellites=False)
    return ppm[site == ch2]


# ------------------------------------------------------------------------------ analysis
def test_decoupling_recorded_in_the_file_is_used_and_reported(ester_system):
    decoupled = without_x_couplings(ester_system, "19F")
    cands, _ = build_candidates(candidates=[ESTER])
    result = analyze_spectrum(_spectrum(decoupled, decoupled_in_file=True), cands)
    assert result.parameters["decoupled_nuclei"] == ["19F"]
    assert result.parameters["decoupled_source"] == {"19F": "the file"}
    assert all(site == () for site in result.spin_systems[0].x_couplings)
    good = result.fit.quality["explained_fraction"]
    # the same singlet data without the file's flag: the quartet model explains it far worse
    blind = analyze_spectrum(_spectrum(decoupled, decoupled_in_file=False), cands)
    assert "decoupled_nuclei" not in blind.parameters
    assert good > 0.9 > blind.fit.quality["explained_fraction"]


def test_coupled_spectrum_is_fitted_with_its_quartet(ester_system):
    cands, _ = build_candidates(candidates=[ESTER])
    result = analyze_spectrum(_spectrum(ester_system, decoupled_in_file=False), cands)
    assert result.fit.quality["explained_fraction"] > 0.9
    assert any(result.spin_systems[0].x_couplings)


def test_fluorinated_mixture_at_60_mhz_recovers_its_fractions():
    # four candidates, three with F (CF3 ester, two fluoroarenes: one F each, state by state), drawn
    # with their couplings at 60 MHz and fitted back: the fit's models must carry the same patterns
    smiles = ["CCCC(=O)OCC(F)(F)F", "CCCC(=O)OCC", "Fc1ccc(CCBr)cc1", "Fc1ccc(C=C)cc1"]
    truth = np.array([0.5, 0.2, 0.2, 0.1])
    cands, _ = build_candidates(candidates=smiles)
    systems = [predict_spin_system(s) for s in smiles]
    ppm = np.linspace(10.0, -0.5, 65536)
    y = sum(w * model_spectrum(s, ppm, field_mhz=60.0, line_width_hz=1.0) for s, w in zip(systems, truth,
                                                                                            strict=True))
    y = y + np.random.default_rng(1).normal(0.0, 1e-3 * y.max(), ppm.size)
    result = analyze_spectrum(Spectrum(ppm=ppm, intensity=y, field_mhz=60.0, solvent="CDCl3"), cands,
                              systems=systems)
    found = np.array([c.mole_fraction if c.detected else 0.0 for c in result.fit.components])
    assert np.allclose(found, truth, atol=0.03), found


# ------------------------------------------------------------------------------ readers
@pytest.mark.parametrize("params, expected", [
    ({"NUC2": "<19F>", "PULPROG": "<zgf19dec>"}, ("19F",)),
    ({"NUC2": "<19F>", "PULPROG": "<zg30>"}, ()),             # channel set, pulse program does not decouple
    ({"NUC2": "<31P>", "PULPROG": "<zgpdec>"}, ("31P",)),
    ({"NUC2": "<off>", "PULPROG": "<zgf19dec>"}, ()),
])
def test_acqus_folder_decoupling(tmp_path, params, expected):
    folder = tmp_path / "exp"
    for name, data in acqus_folder(params):
        (folder / name).parent.mkdir(parents=True, exist_ok=True)
        (folder / name).write_bytes(data)
    assert read_measurement(folder).parameters.decoupled_nuclei == expected


@pytest.mark.parametrize("labels, title, expected", [
    (("##.DECOUPLER= 19F",), "synthetic FID", ("19F",)),
    (("##$DECOUPLER= <31P>",), "synthetic FID", ("31P",)),
    (("##$NUC2= <19F>", "##$PULPROG= <zg_{19F}>"), "synthetic FID", ("19F",)),
    ((), "crude 1H{19F}", ("19F",)),
    ((), "crude 1H", ()),
])
def test_jcamp_decoupling_and_processing_keeps_it(tmp_path, labels, title, expected):
    path = tmp_path / "fid.jdx"
    fid = synthetic_fid(n_points=4096)
    path.write_text(fid_block(fid, field_mhz=FIELD_MHZ, sw_hz=SW_HZ, carrier_ppm=CARRIER_PPM, labels=labels,
                              title=title) + "\n")
    raw = read_measurement(path)
    assert raw.parameters.decoupled_nuclei == expected
    from confirm.processing import process_measurement

    processed = process_measurement(raw)
    assert tuple(processed.spectrum.metadata["acquisition"]["decoupled_nuclei"]) == expected


def test_decoupling_words():
    assert decoupled_nuclei(channels=("<19F>", "<31P>"), pulse_program="zgdec") == ()  # which one?
    assert decoupled_nuclei(channels=("<19F>",), pulse_program="zgfdec") == ("19F",)
    assert decoupled_nuclei(titles=("1H{19F,31P}",)) == ("19F", "31P")


# ------------------------------------------------------------------------------ command line
@pytest.fixture(scope="module")
def decoupled_file(tmp_path_factory, ester_system):
    path = tmp_path_factory.mktemp("hx") / "ester_f_decoupled.jdx"
    write_jcamp_spectrum(_spectrum(without_x_couplings(ester_system, "19F"), decoupled_in_file=False), path)
    return path


def test_cli_decoupled_option_in_json_and_text(run_cli, decoupled_file):
    result = run_cli("analyze", "--spectrum", decoupled_file, "--candidates", ESTER, "--decoupled", "19F",
                     "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["parameters"]["decoupled_nuclei"] == ["19F"]
    assert data["parameters"]["decoupled_source"] == {"19F": "the user"}
    assert data["quality"]["explained_fraction"] > 0.9
    text = run_cli("analyze", "--spectrum", decoupled_file, "--candidates", ESTER, "--decoupled", "F19")
    assert text.exit_code == 0, text.stderr
    assert "Heteronuclear decoupling: 19F (from the user)" in text.stdout
    plain = run_cli("analyze", "--spectrum", decoupled_file, "--candidates", ESTER)
    assert "decoupling" not in plain.stdout


def test_cli_decoupled_option_refuses_other_nuclei(run_cli, decoupled_file):
    result = run_cli("analyze", "--spectrum", decoupled_file, "--candidates", ESTER, "--decoupled", "13C")
    assert result.exit_code == 2
    assert "--decoupled" in result.stderr and "13C" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1 and "Traceback" not in result.stderr


def test_predict_json_lists_x_couplings(run_cli):
    result = run_cli("predict", "OCC(F)(F)F", "--json")
    assert result.exit_code == 0, result.stderr
    sites = json.loads(result.stdout)["sites"]
    ch2 = next(s for s in sites if s["label"] == "CH2")
    assert ch2["multiplicity"] == "q"
    (coupling,) = ch2["x_couplings"]
    # 2,2,2-trifluoroethanol CH2: 3J(H,F) 8.5-8.7 Hz (from memory)
    assert coupling["nucleus"] == "19F" and coupling["n_equivalent"] == 3
    assert abs(coupling["j_hz"] - 8.6) <= 2.0


def test_predict_decoupled_option(run_cli):
    result = run_cli("predict", "OCC(F)(F)F", "--decoupled", "19F", "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["decoupled_nuclei"] == ["19F"]
    ch2 = next(s for s in data["sites"] if s["label"] == "CH2")
    assert ch2["x_couplings"] == [] and ch2["multiplicity"] == "s"
    text = run_cli("predict", "OCC(F)(F)F", "--decoupled", "19F")
    assert "19F decoupled" in text.stdout.splitlines()[0]
    bad = run_cli("predict", "OCC(F)(F)F", "--decoupled", "2H")
    assert bad.exit_code == 2 and "--decoupled" in bad.stderr and "Traceback" not in bad.stderr


# ------------------------------------------------------------------------------ real fluoroarene
@pytest.mark.real_data
def test_bromofluoronitroaniline_h_next_to_f_carries_its_coupling(real_spectra):
    # Nc1c(F)cc(Br)cc1[N+](=O)[O-] in DMSO-d6: H3 (between F and Br) is a dd, 3J(H,F) and 4J(H,H)
    # measured here 10.8 and 2.1 Hz (confirm process on the shared FID); H5 shows no large J(H,F)
    folder = real_spectra / "bromofluoronitroaniline"
    if not folder.is_dir():
        pytest.skip("bromofluoronitroaniline absent from the real spectra folder")
    system = predict_spin_system("Nc1c(F)cc(Br)cc1[N+](=O)[O-]")
    aromatic = [k for k, s in enumerate(system.sites) if s.label == "aryl"]
    largest = {k: max((j for _, _, j in system.x_couplings[k]), default=0.0) for k in aromatic}
    h3 = max(largest, key=largest.get)
    assert largest[h3] > 5.0 and min(largest.values()) < 2.0
    from confirm.processing import ProcessingOptions, process_measurement

    processed = process_measurement(read_measurement(folder / "1h.fid.dx"),
                                    options=ProcessingOptions(solvent="DMSO-d6"))
    dd = [m for m in processed.multiplets if 7.6 < m.ppm < 7.85 and m.multiplicity == "dd"]
    assert len(dd) == 1
    assert abs(max(dd[0].j_hz) - largest[h3]) <= 2.0
