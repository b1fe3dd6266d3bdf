"""Processing: synthetic FIDs with known lines (written by nmrglue) and the real spectra."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from confirm.processing import (
    SNR_DEFINITION,
    ProcessingOptions,
    apply_phase,
    estimate_noise_sd,
    find_phase,
    load_spectrum,
    process_measurement,
)
from confirm.reading import RawFid, read_measurement
from predictors.errors import ConfirmError, InputError

FIELD_MHZ = 400.13
SW_HZ = 6009.6
CARRIER_PPM = 4.0

#: (ppm, n_h, couplings as (J, n_partners)...) of the synthetic sample, CDCl3 with TMS.
SYNTHETIC_SIGNALS = (
    (7.26, 0.3, ()),            # residual CHCl3
    (6.05, 1.0, ((15.6, 1),)),  # vinyl doublet
    (4.12, 2.0, ((7.1, 3),)),   # quartet
    (2.05, 3.0, ()),            # singlet
    (1.26, 3.0, ((7.1, 2),)),   # triplet
    (0.0, 1.0, ()),             # TMS
)


#: Satellites of the reference lines, as a real sample has them: (splitting J in Hz, share of the
#: line's intensity in both satellites together, shift of the satellite pair's midpoint in ppm).
#: 29Si of TMS: 2J(Si,H) 6.6 Hz, 4.7 % natural abundance, no isotope shift to speak of (memory);
#: 13C: 1.1 % of the protons sit on 13C (references.md section 5: 0.55 % each satellite),
#: 1J(C,H) 118 Hz in TMS and 209 Hz in CHCl3, shielded by about 2 ppb (memory; 1.6-2.5 ppb
#: measured in the shared real spectra).
REFERENCE_SATELLITES = {
    0.0: ((6.6, 0.047, 0.0), (118.0, 0.011, -0.002)),
    7.26: ((209.0, 0.011, -0.002),),
}


def _stick_lines(ppm: float, n_h: float, couplings, satellites=()) -> list[tuple[float, float]]:
    lines = [(ppm * FIELD_MHZ, n_h)]
    for j_hz, n_partners in couplings:
        for _ in range(n_partners):
            lines = [(f + s * j_hz / 2, a / 2) for f, a in lines for s in (-1, 1)]
    for j_hz, share, shift_ppm in satellites:
        centre = (ppm + shift_ppm) * FIELD_MHZ
        lines = [(f, a * (1 - share)) for f, a in lines]
        lines += [(centre + s * j_hz / 2, n_h * share / 2) for s in (-1, 1)]
    return [(f / FIELD_MHZ, a) for f, a in lines]


def synthetic_fid(*, n_points=16384, phase_deg=0.0, group_delay=0.0, noise=2e-4, t2_s=0.5, shift_ppm=0.0,
                  seed=1, signals=SYNTHETIC_SIGNALS, satellites=True) -> np.ndarray:
    """Complex FID of SYNTHETIC_SIGNALS (lines displaced by ``shift_ppm``), digital-filter delayed.

    With ``satellites`` the TMS and CHCl3 lines carry their 29Si and 13C satellites.
    """
    t = np.arange(n_points) / SW_HZ
    fid = np.zeros(n_points, dtype=complex)
    for ppm, n_h, couplings in signals:
        extra = REFERENCE_SATELLITES.get(ppm, ()) if satellites else ()
        for line_ppm, amp in _stick_lines(ppm + shift_ppm, n_h, couplings, extra):
            fid += amp * np.exp(2j * math.pi * (line_ppm - CARRIER_PPM) * FIELD_MHZ * t)
    fid *= np.exp(-t / t2_s) * np.exp(1j * math.radians(phase_deg))
    rng = np.random.default_rng(seed)
    fid += noise * (rng.standard_normal(n_points) + 1j * rng.standard_normal(n_points))
    if group_delay:
        k = np.fft.fftfreq(n_points) * n_points
        fid = np.fft.ifft(np.fft.fft(fid) * np.exp(-2j * math.pi * k * group_delay / n_points))
    return fid


def acqus_dict(n_points: int, *, decim=16, dspfvs=12, grpdly=-1, bytorda=0, dtypa=0, d1=13.0,
               nucleus="1H", solvent="CDCl3", carrier_ppm=CARRIER_PPM) -> dict:
    return {
        "TD": 2 * n_points, "SW_h": SW_HZ, "SFO1": FIELD_MHZ + carrier_ppm * FIELD_MHZ * 1e-6,
        "BF1": FIELD_MHZ, "O1": carrier_ppm * FIELD_MHZ, "NUC1": nucleus, "SOLVENT": solvent, "NS": 16,
        "RG": 32.0, "D": [0.0, d1] + [0.0] * 30, "TE": 298.0, "PULPROG": "onepulse", "DECIM": decim,
        "DSPFVS": dspfvs, "GRPDLY": grpdly, "BYTORDA": bytorda, "DTYPA": dtypa, "PARMODE": 0, "AQ_mod": 3,
        "_coreheader": ["##TITLE= synthetic acquisition parameters", "##JCAMPDX= 5.0"], "_comments": [],
    }


def write_fid_directory(folder: Path, fid: np.ndarray, **acqus) -> Path:
    """Write ``fid`` with nmrglue's writer as a raw FID directory (acqus + fid)."""
    import nmrglue as ng

    params = acqus_dict(fid.size, **acqus)
    scale = 2.0e8 / np.max(np.abs(fid))
    data = np.round(fid.real * scale) + 1j * np.round(fid.imag * scale)
    if params["DTYPA"] == 2:
        data = fid * scale
    folder.mkdir(parents=True, exist_ok=True)
    ng.bruker.write(str(folder), {"acqus": params}, data, overwrite=True, write_prog=False)
    return folder


@pytest.fixture(scope="module")
def synthetic_result(tmp_path_factory):
    folder = write_fid_directory(tmp_path_factory.mktemp("syn") / "exp1",
                                 synthetic_fid(phase_deg=37.0, group_delay=71.625, shift_ppm=0.05))
    return process_measurement(read_measurement(folder))


def _multiplet_near(result, ppm: float, tol: float = 0.02):
    found = [m for m in result.multiplets if abs(m.ppm - ppm) <= tol]
    assert found, f"no multiplet within {tol} ppm of {ppm}: {[round(m.ppm, 3) for m in result.multiplets]}"
    return max(found, key=lambda m: m.integral)


def test_synthetic_phase_recovered_within_2_deg(synthetic_result):
    p0, p1 = synthetic_result.phase_deg
    # the FID was rotated by +37 deg, so the correction is -37 deg at the carrier and ~0 across the width
    assert abs(((p0 + 37.0) + 180) % 360 - 180) < 2.0
    assert abs(p1) < 2.0


def test_synthetic_referenced_to_tms_and_lines_within_0_002_ppm(synthetic_result):
    assert synthetic_result.reference == "TMS at 0.00 ppm"
    for ppm, _n_h, _c in SYNTHETIC_SIGNALS:
        assert abs(_multiplet_near(synthetic_result, ppm).ppm - ppm) < 0.002


def test_synthetic_integrals_within_1_percent(synthetic_result):
    ref = _multiplet_near(synthetic_result, 2.05).integral / 3.0
    for ppm, n_h, _c in SYNTHETIC_SIGNALS:
        if ppm in (0.0, 7.26):
            continue
        ratio = _multiplet_near(synthetic_result, ppm).integral / ref / n_h
        assert abs(ratio - 1.0) < 0.01, (ppm, ratio)


def test_synthetic_multiplets_and_couplings(synthetic_result):
    quartet = _multiplet_near(synthetic_result, 4.12)
    assert quartet.multiplicity == "q" and quartet.n_lines == 4
    assert quartet.j_hz[0] == pytest.approx(7.1, abs=0.1)
    triplet = _multiplet_near(synthetic_result, 1.26)
    assert triplet.multiplicity == "t" and triplet.n_lines == 3
    doublet = _multiplet_near(synthetic_result, 6.05)
    assert doublet.multiplicity == "d" and doublet.j_hz[0] == pytest.approx(15.6, abs=0.1)


def test_synthetic_quality_warnings_absent_for_good_data(synthetic_result):
    text = " ".join(synthetic_result.warnings)
    assert "truncated" not in text and "clipped" not in text and "repetition" not in text
    assert synthetic_result.snr > 100


def test_metadata_records_source_and_processing(synthetic_result):
    meta = synthetic_result.spectrum.metadata
    assert len(meta["sha256"]) == 64 and meta["format"] == "fid-directory-acqus"
    assert meta["processing"]["snr_definition"] == SNR_DEFINITION
    assert meta["processing"]["group_delay_points"] == pytest.approx(71.625)
    assert np.all(np.diff(synthetic_result.spectrum.ppm) < 0)


def test_mirrored_data_detected_by_solvent_line(tmp_path):
    # conjugating the FID mirrors the spectrum about the carrier: the reader's convention is now wrong
    fid = np.conj(synthetic_fid(group_delay=71.625))
    result = load_spectrum(write_fid_directory(tmp_path / "mirrored", fid))
    assert any("mirrored" in w for w in result.warnings)
    assert abs(_multiplet_near(result, 2.05).ppm - 2.05) < 0.002


def test_short_repetition_low_snr_truncation_and_clipping_warned(tmp_path):
    fid = synthetic_fid(n_points=2048, noise=0.02, t2_s=2.0)
    fid = np.clip(fid.real, -4.0, 4.0) + 1j * np.clip(fid.imag, -4.0, 4.0)
    result = load_spectrum(write_fid_directory(tmp_path / "poor", fid, d1=1.0, grpdly=0, decim=1, dspfvs=0))
    text = " | ".join(result.warnings)
    assert "repetition time" in text
    assert "truncated FID" in text
    assert "clipped FID" in text


def test_low_snr_warned(tmp_path):
    result = load_spectrum(write_fid_directory(tmp_path / "noisy", synthetic_fid(noise=1.0)))
    assert result.snr < 100
    assert any("SNR" in w for w in result.warnings)


def test_wrong_nucleus_warned(tmp_path):
    result = load_spectrum(write_fid_directory(tmp_path / "c13", synthetic_fid(), nucleus="13C"))
    assert any("wrong nucleus" in w for w in result.warnings)


def test_options_are_checked():
    with pytest.raises(InputError, match="lb_hz"):
        ProcessingOptions(lb_hz=-1)
    with pytest.raises(InputError, match="baseline"):
        ProcessingOptions(baseline="polynomial")
    with pytest.raises(InputError, match="zero_fill_factor"):
        ProcessingOptions(zero_fill_factor=3.5)


def test_fixed_phase_and_no_reference_are_honoured(tmp_path):
    folder = write_fid_directory(tmp_path / "fixed", synthetic_fid(phase_deg=37.0, group_delay=71.625,
                                                                   shift_ppm=0.05))
    result = load_spectrum(folder, options=ProcessingOptions(phase_deg=(-37.0, 0.0), reference="none"))
    assert result.phase_deg == (-37.0, 0.0)
    assert result.reference.startswith("as acquired")
    assert abs(_multiplet_near(result, 2.10).ppm - 2.10) < 0.002


def test_find_phase_matches_known_rotation():
    n = 8192
    x = np.linspace(-1, 1, n)
    lines = sum(1.0 / (1 + 1j * (x - c) / 0.002) for c in (-0.5, -0.1, 0.3, 0.6))
    for p0 in (-150.0, -20.0, 75.0):
        rotated = apply_phase(lines, (p0, 0.0))
        q0, q1 = find_phase(rotated)
        assert abs(((q0 + p0) + 180) % 360 - 180) < 2.0 and abs(q1) < 2.0


def test_noise_estimate_matches_known_sd():
    rng = np.random.default_rng(3)
    y = rng.normal(0, 2.5, 65536)
    y[30000:30050] += 1e4  # a line must not inflate the estimate
    assert estimate_noise_sd(y) == pytest.approx(2.5, rel=0.05)


def test_peak_list_cannot_be_processed(tmp_path):
    table = tmp_path / "peaks.csv"
    table.write_text("ppm,intensity\n7.26,10\n2.05,30\n")
    with pytest.raises(ConfirmError, match="peak list"):
        load_spectrum(table)


# ---------------------------------------------------------------------------
# real spectra (../shared/real_spectra); tolerance 0.02 ppm for the measured values of the README,
# 0.04 ppm for the values the README marks "memory" (sample-to-literature spread, README)
# ---------------------------------------------------------------------------

REAL_EXPECTED = {
    # README of real_spectra, "measured": multiplet centres after referencing to CHCl3 at 7.26 ppm
    "butyl_acrylate": [(6.39, "dd", (17.3, 1.4)), (6.11, "dd", (17.3, 10.4)), (5.80, "dd", (10.4, 1.4)),
                       (4.15, "t", (6.7,)), (1.66, None, ()), (1.40, None, ()), (0.94, "t", (7.4,))],
    "estragole": [(7.14, "d", (8.6,)), (6.87, None, ()), (5.98, "ddt", (16.9, 10.1, 6.7)),
                  (5.09, None, ()), (3.81, "s", ()), (3.36, "d", (6.7,))],
}
REAL_MEMORY = {
    # README, "memory" values (literature recalled, not read): checked within 0.04 ppm
    "coumarin": [(7.72, "d", (9.5,)), (6.43, "d", (9.5,))],
    "ipsdienol": [(6.39, "dd", (17.6, 10.8)), (4.47, None, ()), (1.75, "s", ()), (1.70, "s", ())],
    "ibuprofen_60mhz": [(3.71, "q", ()), (2.45, "d", ()), (1.50, None, ()), (0.90, None, ())],
}


def _check_signals(result, expected, tol):
    for ppm, mult, j_hz in expected:
        m = _multiplet_near(result, ppm, tol)
        if mult is not None:
            assert m.multiplicity == mult, (ppm, m)
            assert m.n_lines >= {"s": 1, "d": 2, "t": 3, "q": 4, "dd": 4, "ddt": 10}[mult]
        for j_expected, j_found in zip(j_hz, m.j_hz, strict=False):
            assert j_found == pytest.approx(j_expected, abs=0.3), (ppm, m.j_hz)


@pytest.mark.real_data
@pytest.mark.parametrize("name", sorted(REAL_EXPECTED))
def test_real_measured_signals(real_spectra, name):
    result = load_spectrum(real_spectra / name / "1h.fid.dx")
    assert result.reference == "residual CHCl3 at 7.26 ppm"
    _check_signals(result, REAL_EXPECTED[name], 0.02)


@pytest.mark.real_data
@pytest.mark.parametrize("name", sorted(REAL_MEMORY))
def test_real_memory_signals(real_spectra, name):
    result = load_spectrum(real_spectra / name)
    _check_signals(result, REAL_MEMORY[name], 0.04)


@pytest.mark.real_data
def test_butyl_acrylate_dd_lines_and_integrals(real_spectra):
    result = load_spectrum(real_spectra / "butyl_acrylate" / "1h.fid.dx")
    vinyl = [_multiplet_near(result, p) for p in (6.39, 6.11, 5.80)]
    assert [m.n_lines for m in vinyl] == [4, 4, 4]
    one_h = np.mean([m.integral for m in vinyl])
    for ppm, n_h in ((4.15, 2), (1.66, 2), (1.40, 2), (0.94, 3)):
        assert _multiplet_near(result, ppm).integral / one_h == pytest.approx(n_h, rel=0.03)


@pytest.mark.real_data
def test_menthol_is_in_dmso_and_has_no_vinyl_signal(real_spectra):
    # the file's own header says DMSO; the residual DMSO-d5 quintet sits at 2.50 ppm (Gottlieb 1997)
    result = load_spectrum(real_spectra / "menthol" / "1h.fid.dx")
    assert result.spectrum.solvent == "DMSO-d6"
    assert result.reference in ("TMS at 0.00 ppm", "residual DMSO-d5 at 2.50 ppm")
    assert abs(_multiplet_near(result, 2.50).ppm - 2.50) < 0.01
    big = max(m.integral for m in result.multiplets)
    assert not [m for m in result.multiplets if 4.5 < m.ppm < 7.0 and m.integral > 0.02 * big]


@pytest.mark.real_data
def test_aspirin_unreferenced_but_consistent(real_spectra):
    # no CHCl3 or TMS line in this sample: referencing stays as acquired and says so; the raw directory
    # and the JCAMP-DX copy of the same FID agree, and the pattern matches the literature (memory)
    # once aligned on the acetyl singlet (2.36 ppm, memory)
    a = load_spectrum(real_spectra / "aspirin" / "1h.fid.dx")
    b = load_spectrum(real_spectra / "aspirin_300mhz_raw")
    assert a.reference.startswith("as acquired") and any("not referenced" in w for w in a.warnings)
    acetyl = max((m for m in a.multiplets if 2.0 < m.ppm < 2.6), key=lambda m: m.integral)
    shift = 2.36 - acetyl.ppm
    assert abs(shift) < 0.1
    for ppm in (8.12, 7.62, 7.35, 7.14):
        assert _multiplet_near(a, ppm - shift, 0.04)
    assert abs(_multiplet_near(b, acetyl.ppm, 0.005).ppm - acetyl.ppm) < 0.002


@pytest.mark.real_data
def test_stored_processed_spectrum_referenced_like_the_fid(real_spectra):
    stored = load_spectrum(real_spectra / "butyl_acrylate" / "1h.dx")
    assert stored.reference == "residual CHCl3 at 7.26 ppm"
    _check_signals(stored, REAL_EXPECTED["butyl_acrylate"][:4], 0.02)


@pytest.mark.real_data
def test_every_real_file_processes(real_spectra):
    paths = [p for p in sorted(real_spectra.rglob("*")) if p.suffix in (".dx", ".jdx")]
    paths.append(real_spectra / "aspirin_300mhz_raw")
    for path in paths:
        raw = read_measurement(path)
        result = process_measurement(raw)
        assert result.snr > 100, path
        assert result.spectrum.field_mhz > 50
        if isinstance(raw, RawFid):
            assert raw.parameters.relaxation_delay_s is not None


@pytest.mark.parametrize("lam", [1e5, 1e7, 1e9])
def test_arpls_baseline_equals_the_pybaselines_reference(lam):
    # Baek et al., Analyst 2015, 140, 250 (arPLS), as implemented by the pybaselines package
    from pybaselines import Baseline

    from confirm.processing import arpls_baseline

    rng = np.random.default_rng(0)
    x = np.arange(4600.0)
    y = 50 * np.cos(x / 900) + rng.normal(0, 1, x.size)
    for centre in (500, 1200, 3000):
        y += 400 / (1 + ((x - centre) / 4) ** 2)
    expected, _ = Baseline(x_data=x).arpls(y, lam=lam)
    assert np.max(np.abs(arpls_baseline(y, lam=lam) - expected)) < 1e-4


def test_noise_free_fid_is_flagged_as_not_physical(tmp_path):
    # issue 14: a FID without noise gives SNR and detection limits that mean nothing
    fid = synthetic_fid(noise=0.0, t2_s=0.2)  # decayed within the acquisition: no truncation wiggles
    raw = read_measurement(write_fid_directory(tmp_path / "clean", fid, dtypa=2, grpdly=0, decim=1, dspfvs=0))
    result = process_measurement(raw)
    assert any("not physical" in w and "times the noise" in w for w in result.warnings), result.warnings
    noisy = load_spectrum(write_fid_directory(tmp_path / "noisy", synthetic_fid()))
    assert not any("not physical" in w for w in noisy.warnings)


def test_pure_noise_is_no_signal(tmp_path):
    # issue 14: a pure-noise FID must read as "no signal", not as a spectrum with lines in it
    rng = np.random.default_rng(11)
    noise = rng.standard_normal(16384) + 1j * rng.standard_normal(16384)
    result = load_spectrum(write_fid_directory(tmp_path / "noise", noise))
    assert any(w.startswith("no signal") for w in result.warnings), result.warnings
