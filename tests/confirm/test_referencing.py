"""Referencing by validated patterns and orientation from the file first: simulated spectra of each
residual solvent isotopomer, TMS with and without its 29Si satellites, a header the data
contradict, an axis far off, and FIDs whose data contradict their metadata by one or by several
lines of evidence.

Residual lines, multiplicities and water lines: Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997,
62, 7512, Table 1. H-D couplings (CHD2 quintets 1.7-2.5 Hz, CHD 1:1:1 triplet 1.1 Hz), 1J(C,H)
and 2J(Si,H) are from memory (the solvent table's source column says so).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from confirm.processing import ProcessingOptions, process_measurement
from confirm.reading import AcquisitionParameters, RawFid, RawSpectrum
from confirm.solvents import solvent_signals

FIELD = 400.0
WIDTH_HZ = 0.8

# an invented sample: ethyl acetate-like lines and a vinyl doublet (ppm, protons, (J, partners)...)
SAMPLE = ((6.05, 1.0, ((15.6, 1),)), (4.12, 2.0, ((7.1, 3),)), (2.02, 3.0, ()), (1.26, 3.0, ((7.1, 2),)))


def _sticks(ppm, n_h, couplings=()):
    lines = [(ppm * FIELD, n_h)]
    for j_hz, partners in couplings:
        for _ in range(partners):
            lines = [(f + s * j_hz / 2, a / 2) for f, a in lines for s in (-1, 1)]
    return [(f / FIELD, a) for f, a in lines]


def _with_satellites(ppm, n_h, *, j_ch=None, j_si=None, pattern=((0.0, 1.0),), j_hd=0.0):
    """A reference line: an H-D multiplet ``pattern`` (offset in units of J(H,D), weight), 13C
    satellites (1.1 %, 2 ppb upfield: memory) and for TMS the 29Si satellites (4.7 %, memory)."""
    total = sum(w for _, w in pattern)
    core = [(ppm + o * j_hd / FIELD, n_h * w / total) for o, w in pattern]
    lines = []
    if j_si:
        lines += [(p, a * 0.047 / 2) for q, a in core for p in (q - j_si / 2 / FIELD, q + j_si / 2 / FIELD)]
        core = [(p, a * 0.953) for p, a in core]
    if j_ch:
        half = j_ch / 2 / FIELD
        lines += [(p - 0.002, a * 0.011 / 2) for q, a in core for p in (q - half, q + half)]
        core = [(p, a * 0.989) for p, a in core]
    return core + lines


QUINTET = tuple(zip((-2, -1, 0, 1, 2), (1, 2, 3, 2, 1), strict=True))
TRIPLET = tuple(zip((-1, 0, 1), (1, 1, 1), strict=True))


def residual_lines(solvent: str, amount: float = 0.3, *, temperature_k: float = 298.0):
    """Simulated residual protio-solvent line of ``solvent`` as the table describes it."""
    s = solvent_signals(solvent)
    ppm = s.residual_ppm
    if s.name == "D2O":
        ppm = 4.79 - (temperature_k - 298.0) / 96.9  # memory: Gottlieb 1997, delta = 7.83 - T/96.9
    pattern = {"quint": QUINTET, "t": TRIPLET}.get(s.residual_multiplicity, ((0.0, 1.0),))
    return _with_satellites(ppm, amount, j_ch=s.residual_j_ch_hz, pattern=pattern,
                            j_hd=s.residual_j_hd_hz or 0.0)


def tms_lines(amount: float = 1.0, *, satellites: bool = True, ppm: float = 0.0):
    return _with_satellites(ppm, amount, j_ch=118.0 if satellites else None, j_si=6.6 if satellites else None)


def sample_lines():
    return [line for ppm, n_h, couplings in SAMPLE for line in _sticks(ppm, n_h, couplings)]


def _spectrum(lines, *, offset_ppm=0.0, solvent="CDCl3", noise=2e-4, temperature_k=298.0, broad=()):
    """A processed spectrum (RawSpectrum) of Lorentzian lines on an axis displaced by ``offset_ppm``."""
    ppm = np.linspace(13.0, -2.0, 65536)
    y = np.zeros(ppm.size)
    half = WIDTH_HZ / 2 / FIELD
    for p, a in lines:
        y += a * half * half / ((ppm - p - offset_ppm) ** 2 + half * half)
    for p, a, width_hz in broad:
        h = width_hz / 2 / FIELD
        y += a * h * h / ((ppm - p - offset_ppm) ** 2 + h * h)
    y += np.random.default_rng(4).normal(0, noise, ppm.size)
    params = AcquisitionParameters(field_mhz=FIELD, nucleus="1H", solvent=solvent,
                                   temperature_k=temperature_k)
    return RawSpectrum(ppm=ppm, intensity=y, parameters=params, source_path="simulated", sha256="0" * 64,
                       format="simulated")


def _near(result, ppm, tol=0.003):
    found = [p for p in result.peaks if abs(p.ppm - ppm) <= tol]
    assert found, (ppm, [round(p.ppm, 3) for p in result.peaks if abs(p.ppm - ppm) < 0.2])
    return max(found, key=lambda p: p.height)


# ---------------------------------------------------------------------------
# each residual isotopomer pattern, on an axis 0.05 ppm off
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("solvent", ["CDCl3", "CD2Cl2", "DMSO-d6", "acetone-d6", "CD3OD", "CD3CN", "C6D6",
                                     "D2O"])
def test_each_residual_pattern_references_the_axis(solvent):
    raw = _spectrum(sample_lines() + residual_lines(solvent), offset_ppm=0.05, solvent=solvent)
    result = process_measurement(raw)
    signals = solvent_signals(solvent)
    assert result.reference_source == "solvent", result.warnings
    assert result.reference == f"residual {signals.residual_label} at {signals.residual_ppm:.2f} ppm"
    assert result.spectrum.solvent == signals.name
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.002
    assert not any("not referenced" in w for w in result.warnings)


def test_hdo_is_expected_where_the_temperature_puts_it():
    raw = _spectrum(sample_lines() + residual_lines("D2O", temperature_k=318.0), solvent="D2O",
                    temperature_k=318.0, offset_ppm=0.03)
    result = process_measurement(raw)
    assert result.reference == f"residual HDO at {4.79 - 20 / 96.9:.2f} ppm"
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.002


def test_header_contradicted_by_the_data_is_corrected_with_a_warning():
    # the file says CDCl3; the data show the DMSO-d5 quintet and no CHCl3 line
    raw = _spectrum(sample_lines() + residual_lines("DMSO-d6"), solvent="CDCl3", offset_ppm=-0.04)
    result = process_measurement(raw)
    assert result.spectrum.solvent == "DMSO-d6" and result.reference == "residual DMSO-d5 at 2.50 ppm"
    assert any("the file says the solvent is CDCl3, but the data show DMSO-d5" in w for w in result.warnings)
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.002


def test_tms_wins_when_tms_and_solvent_disagree():
    # CHCl3 moved 0.05 ppm from its table distance to TMS (a concentrated sample): TMS is used and
    # the disagreement is reported
    lines = sample_lines() + tms_lines() + [(p + 0.05, a) for p, a in residual_lines("CDCl3")]
    result = process_measurement(_spectrum(lines, offset_ppm=0.08))
    assert result.reference == "TMS at 0.00 ppm" and result.reference_source == "tms"
    assert any("disagree by +0.050 ppm" in w and "referenced to TMS" in w for w in result.warnings)
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.002


def test_tms_and_solvent_that_agree_give_no_warning():
    lines = sample_lines() + tms_lines() + residual_lines("CDCl3")
    result = process_measurement(_spectrum(lines, offset_ppm=0.08))
    assert result.reference == "TMS at 0.00 ppm"
    assert not [w for w in result.warnings if "disagree" in w or "not referenced" in w]


def test_a_singlet_without_29si_satellites_is_not_tms():
    # silicone grease-like singlet at 0.07 ppm (no Si satellites simulated): the solvent references
    lines = sample_lines() + tms_lines(satellites=False, ppm=0.07) + residual_lines("CDCl3")
    result = process_measurement(_spectrum(lines))
    assert result.reference == "residual CHCl3 at 7.26 ppm"
    assert abs(_near(result, 0.07).ppm - 0.07) < 0.002


def test_tms_with_satellites_found_far_from_zero_corrects_the_axis():
    # the axis is 5.3 ppm off (a wrong carrier in the file): TMS is found by its satellites anyway
    lines = sample_lines() + tms_lines()
    result = process_measurement(_spectrum(lines, offset_ppm=5.3, solvent="Neat"))
    assert result.reference == "TMS at 0.00 ppm"
    assert any("axis -5.30 ppm off" in w for w in result.warnings)
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.002


def test_broad_hump_is_not_chcl3_and_the_offset_is_measured():
    # a 100 Hz-wide N-H hump at 7.26 and no CHCl3 line: nothing validates; the warning gives the
    # offset the nearest candidate would imply, not a fixed 0.1 ppm
    raw = _spectrum(sample_lines(), broad=((7.22, 2.0, 100.0),), offset_ppm=0.0)
    result = process_measurement(raw)
    assert result.reference_source == "none"
    text = " ".join(result.warnings)
    assert "no TMS or residual CHCl3 line validated" in text and "0.1 ppm" not in text
    assert "the offset cannot be measured" in text and "CHCl3 candidate at 7.220 ppm" in text


def test_small_sharp_singlet_is_not_acetone_d5():
    # a singlet under 1 % of the tallest line at 2.06 with the header saying acetone-d6: acetone-d5 is a
    # quintet, so this is not it
    lines = sample_lines() + [(2.06, 0.02)]
    result = process_measurement(_spectrum(lines, solvent="acetone-d6"))
    assert result.reference_source == "none"
    assert any("acetone-d5 candidate at 2.060 ppm: not a quintet" in w for w in result.warnings)


def test_nothing_near_the_expected_shifts():
    result = process_measurement(_spectrum(sample_lines(), solvent="CDCl3"))
    assert any("no line within 0.15 ppm of the expected shifts" in w for w in result.warnings)


def test_a_tms_line_too_weak_for_its_satellites_gives_the_possible_offset():
    lines = sample_lines() + [(0.012, 0.01)]
    result = process_measurement(_spectrum(lines, solvent="CDCl3", noise=5e-4))
    assert result.reference_source == "none"
    assert any("possibly off by -0.012 ppm (the sharp singlet at 0.012 ppm, if it is TMS" in w
               for w in result.warnings)


# ---------------------------------------------------------------------------
# orientation: the file first; several lines of evidence to overrule it
# ---------------------------------------------------------------------------

CARRIER = 4.0
SW_HZ = 6000.0


def _fid(lines, *, conjugate=False, n=16384, noise=1e-4):
    t = np.arange(n) / SW_HZ
    fid = sum(a * np.exp(2j * math.pi * (p - CARRIER) * FIELD * t) for p, a in lines)
    fid = fid * np.exp(-math.pi * WIDTH_HZ * t)
    fid = fid + noise * (np.array([1, 1j]) @ np.random.default_rng(7).standard_normal((2, n)))
    return np.conj(fid) if conjugate else fid


def _raw_fid(fid, *, solvent="CDCl3", basis="test convention"):
    params = AcquisitionParameters(field_mhz=FIELD, nucleus="1H", solvent=solvent, spectral_width_hz=SW_HZ,
                                   carrier_ppm=CARRIER, relaxation_delay_s=20.0, acquisition_time_s=2.7)
    return RawFid(fid=fid, dwell_s=1 / SW_HZ, group_delay_points=0.0, frequency_sign=1, parameters=params,
                  source_path="simulated", sha256="0" * 64, format="simulated", orientation_basis=basis)


def test_mirrored_fid_with_several_lines_of_evidence_is_flipped_with_a_warning():
    lines = sample_lines() + tms_lines() + residual_lines("CDCl3")
    result = process_measurement(_raw_fid(_fid(lines, conjugate=True)))
    warning = next(w for w in result.warnings if "mirrored against the file" in w)
    assert "test convention" in warning and "TMS" in warning and "CHCl3" in warning
    assert result.reference == "TMS at 0.00 ppm"
    assert abs(_near(result, 6.05 + 15.6 / 2 / FIELD).ppm - (6.05 + 15.6 / 2 / FIELD)) < 0.002


def test_one_line_of_evidence_only_warns():
    # only a TMS line (its 13C satellites too weak to tell the isotope shift): one line does not overrule
    lines = sample_lines() + [(p, a) for p, a in tms_lines(0.3) if abs(p) < 0.05]
    result = process_measurement(_raw_fid(_fid(lines, conjugate=True)))
    assert any("one line of evidence does not overrule the file" in w for w in result.warnings)
    assert "contradicted by one line only" in result.orientation
    assert not any("mirrored against the file" in w for w in result.warnings)


def test_a_hump_and_an_arbitrary_line_do_not_flip_a_right_spectrum():
    # issue 15: a broad N-H hump and an arbitrary sharp line that land on 7.26 and 0.00 after
    # mirroring about the carrier (4.0 ppm) made an earlier check mirror a spectrum that was right
    lines = sample_lines() + [(2 * CARRIER - 0.0, 0.5)]
    t = np.arange(16384) / SW_HZ
    fid = _fid(lines)
    hump_hz = (2 * CARRIER - 7.26 - CARRIER) * FIELD
    fid = fid + 2.0 * np.exp(2j * math.pi * hump_hz * t) * np.exp(-math.pi * 60 * t)
    result = process_measurement(_raw_fid(fid))
    assert not any("mirror" in w for w in result.warnings)
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.01


def test_confirmed_orientation_names_its_evidence():
    lines = sample_lines() + tms_lines() + residual_lines("CDCl3")
    result = process_measurement(_raw_fid(_fid(lines)))
    assert result.orientation.startswith("from the file (test convention), confirmed by TMS")
    assert not any("mirror" in w for w in result.warnings)


def test_orientation_requests_are_obeyed():
    lines = sample_lines() + tms_lines() + residual_lines("CDCl3")
    raw = _raw_fid(_fid(lines, conjugate=True))
    kept = process_measurement(raw, options=ProcessingOptions(orientation="as-read", reference="none"))
    assert "not checked" in kept.orientation
    assert abs(_near(kept, 2 * CARRIER - 2.02).ppm - (2 * CARRIER - 2.02)) < 0.003
    flipped = process_measurement(raw, options=ProcessingOptions(orientation="mirrored"))
    assert abs(_near(flipped, 2.02).ppm - 2.02) < 0.002


def _overlapped_chcl3():
    # CHCl3 at 7.26 with aromatic doublets over it (an anisole-like AA'BB'): not a validated singlet
    return [(7.26, 0.3), (7.255, 1.0), (7.255 + 8.6 / FIELD, 1.0), (7.268, 0.6), (7.268 - 8.6 / FIELD, 0.6)]


def test_weak_tms_supported_by_a_line_at_the_solvent_distance():
    lines = sample_lines() + [(0.0, 0.02)] + _overlapped_chcl3()
    result = process_measurement(_spectrum(lines, offset_ppm=0.03))
    assert result.reference == "TMS at 0.00 ppm"
    assert any("too weak to show its 29Si satellites, because a line sits 7.260 ppm from it" in w
               for w in result.warnings)
    assert abs(_near(result, 2.02).ppm - 2.02) < 0.002


def test_weak_singlet_without_that_support_is_not_tms():
    lines = sample_lines() + [(0.07, 0.02)] + _overlapped_chcl3()
    result = process_measurement(_spectrum(lines))
    assert result.reference_source == "none"
    assert any("possibly off by -0.070 ppm (the sharp singlet at 0.070 ppm, if it is TMS" in w
               for w in result.warnings)


def test_line_position_is_exact_for_a_lorentzian_between_grid_points():
    # 1/y of a Lorentzian is a parabola: its vertex through three points is the centre exactly,
    # where a parabola through y itself is off by a fraction of a point
    from confirm.processing.patterns import SpectrumView, _interpolated_ppm

    ppm = np.linspace(1.0, -1.0, 2001)
    for centre in (0.00013, -0.00037, 0.0004):
        y = 1.0 / (1 + ((ppm - centre) / 0.002) ** 2)
        view = SpectrumView(ppm=ppm, y=y, noise_sd=1e-6, field_mhz=400.0, line_width_hz=1.6)
        assert _interpolated_ppm(view, int(np.argmax(y))) == pytest.approx(centre, abs=1e-9)
