"""Checks of the benchmark corpus (benchmarks/corpus): its data, its split, its cases, its
synthesis and its by-hand baseline. The synthesis is checked against its own truth (published
parameters in, per-site areas out); nothing here runs the fit."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from rdkit import Chem

from benchmarks.corpus.by_hand import integrate_by_hand
from benchmarks.corpus.cases import (
    FIELDS_MHZ,
    MINOR_RANGE,
    NO_FAULTS,
    SNR_RANGE,
    Case,
    generate_cases,
    select_cases,
)
from benchmarks.corpus.compounds import COMPOUND_BY_KEY, COMPOUNDS, EXCHANGEABLE_LABELS, J_CH_CLASS_HZ
from benchmarks.corpus.families import FAMILIES, HALVES, IDENTITY_SETS, ROLES, compound_halves
from benchmarks.corpus.synthesis import (
    SATELLITE_SHARE,
    TALLEST,
    case_lines,
    compound_lines,
    render_case,
)


@pytest.fixture(scope="module")
def cases():
    return generate_cases()


def _canonical(smiles: str) -> str:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, smiles
    return Chem.MolToSmiles(mol, isomericSmiles=True)


# ---------------------------------------------------------------------------------------------
# The data
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("comp", COMPOUNDS, ids=lambda c: c.key)
def test_sites_cover_every_hydrogen_of_the_smiles(comp):
    mol = Chem.AddHs(Chem.MolFromSmiles(comp.smiles))
    on_carbon = sum(
        1 for a in mol.GetAtoms() if a.GetAtomicNum() == 1 and a.GetNeighbors()[0].GetAtomicNum() == 6
    )
    on_hetero = sum(
        1 for a in mol.GetAtoms() if a.GetAtomicNum() == 1 and a.GetNeighbors()[0].GetAtomicNum() != 6
    )
    exchangeable = sum(n for (_, n, _), ex in zip(comp.sites, comp.exchangeable, strict=True) if ex)
    assert comp.n_h_counted == on_carbon
    assert exchangeable == on_hetero


@pytest.mark.parametrize("comp", COMPOUNDS, ids=lambda c: c.key)
def test_sites_and_couplings_are_well_formed(comp):
    labels = set(J_CH_CLASS_HZ) | EXCHANGEABLE_LABELS
    for shift, n_h, label in comp.sites:
        assert -0.5 < shift < 13.0 and n_h >= 1 and label in labels
    pairs = [tuple(sorted((a, b))) for a, b, _ in comp.couplings]
    assert len(pairs) == len(set(pairs)), "a coupling is listed twice"
    for a, b, j_hz in comp.couplings:
        assert 0 <= a < len(comp.sites) and 0 <= b < len(comp.sites) and a != b
        assert 0 < abs(j_hz) < 20
        assert not (comp.exchangeable[a] or comp.exchangeable[b]), "exchangeable protons are drawn uncoupled"
    assert comp.source.strip(), f"{comp.key} has no source"
    assert len(comp.j_ch_hz) == len(comp.sites)


def test_each_compound_has_a_unique_key_and_structure():
    assert len({c.key for c in COMPOUNDS}) == len(COMPOUNDS)
    assert len({_canonical(c.smiles) for c in COMPOUNDS}) == len(COMPOUNDS)


def test_corpus_size():
    assert len(COMPOUNDS) >= 45
    assert len(FAMILIES) >= 12
    assert len(IDENTITY_SETS) >= 25


def test_family_members_and_roles():
    for fam in FAMILIES:
        assert fam.half in HALVES
        assert len(fam.members) >= 3
        for key, role in fam.members:
            assert key in COMPOUND_BY_KEY and role in ROLES
        assert sum(role == "starting material" for _, role in fam.members) == 1


def test_halves_are_disjoint_by_compound_and_balanced():
    halves = compound_halves()
    for key, h in halves.items():
        assert len(h) == 1, f"{key} is in {sorted(h)}"
    counts = {h: sum(next(iter(v)) == h for v in halves.values()) for h in HALVES}
    assert min(counts.values()) >= 0.4 * len(COMPOUNDS)
    # the demo's anisyl family (tuned on before) is held out
    assert all(
        next(iter(halves[k])) == "held-out" for k, _ in next(f for f in FAMILIES if f.key == "anisyl").members
    )


def test_identity_decoys_are_other_structures_and_not_from_the_other_half():
    halves = compound_halves()
    by_smiles = {_canonical(c.smiles): c.key for c in COMPOUNDS}
    for ident in IDENTITY_SETS:
        true = _canonical(COMPOUND_BY_KEY[ident.true_key].smiles)
        decoys = [_canonical(s) for s, _ in ident.decoys]
        assert 2 <= len(decoys) <= 4 and len(set(decoys)) == len(decoys)
        assert true not in decoys
        for d in decoys:
            other = by_smiles.get(d)
            assert other is None or halves[other] == {ident.half}, (
                f"{ident.key}: decoy {other} is in the other half"
            )


# ---------------------------------------------------------------------------------------------
# The cases
# ---------------------------------------------------------------------------------------------


def test_case_generation_is_deterministic(cases):
    again = generate_cases()
    assert cases == again
    assert generate_cases(master_seed=1) != cases
    case = next(c for c in cases if c.kind == "mixture" and c.field_mhz == 400.0)
    assert render_case(case).intensity.tobytes() == render_case(case).intensity.tobytes()


def test_cases_cover_the_required_ranges(cases):
    mixtures = [c for c in cases if c.kind == "mixture"]
    controls = [c for c in cases if c.kind == "control"]
    identity = [c for c in cases if c.kind == "identity"]
    assert len(mixtures) >= 300 and len(controls) >= 30 and len({c.family for c in identity}) >= 25
    assert {c.field_mhz for c in mixtures} == set(FIELDS_MHZ)
    snr = np.array([c.snr for c in cases])
    assert snr.min() >= SNR_RANGE[0] and snr.max() <= SNR_RANGE[1]
    assert snr.min() < 40 and snr.max() > 4000
    minors = [x for c in mixtures for _, x in c.truth if x <= MINOR_RANGE[1]]
    assert min(minors) >= MINOR_RANGE[0] and min(minors) < 0.006 and max(minors) > 0.18
    for c in mixtures:
        fam = next(f for f in FAMILIES if f.key == c.family)
        assert 2 <= len(c.truth) <= 6 and abs(sum(x for _, x in c.truth) - 1) < 1e-9
        assert [k for _, k in c.candidates] == [k for k, _ in fam.members]
    for c in controls:
        present = {k for k, _ in c.truth}
        assert all(k not in present for _, k in c.candidates)
    for c in cases:
        f = c.faults
        assert abs(f.phase0_deg) <= 15 and abs(f.phase1_deg) <= 10 and abs(f.ref_offset_ppm) <= 0.05
        assert 0.3 <= f.line_width_hz <= 2.0 and f.baseline_amplitude <= 0.01
    for half in HALVES:
        n = sum(c.half == half for c in mixtures)
        assert 0.4 * len(mixtures) <= n <= 0.6 * len(mixtures)
    assert len(select_cases(cases, half="tune", kinds=["mixture"], limit=5)) == 5


# ---------------------------------------------------------------------------------------------
# The synthesis against its own truth
# ---------------------------------------------------------------------------------------------


def _clean_case(truth, field_mhz, **faults) -> Case:
    return Case(
        id="check",
        kind="mixture",
        family="check",
        half="tune",
        field_mhz=field_mhz,
        snr=2000.0,
        truth=truth,
        candidates=(),
        faults=dataclasses.replace(NO_FAULTS, **faults),
        seed=7,
    )


def _site_integrals(spectrum, key, field_mhz, pad_hz=20.0):
    """Area in a window around each multiplet (sites of equal shift and label together)."""
    comp = COMPOUND_BY_KEY[key]
    ppm, site = compound_lines(key, field_mhz)[0], compound_lines(key, field_mhz)[2]
    dx_hz = abs(spectrum.ppm[1] - spectrum.ppm[0]) * field_mhz
    groups = {}
    for i, (shift, _, label) in enumerate(comp.sites):
        groups.setdefault((shift, label), []).append(i)
    out = []
    for members in groups.values():
        p = ppm[np.isin(site, members)]
        lo, hi = p.min() - pad_hz / field_mhz, p.max() + pad_hz / field_mhz
        inside = (spectrum.ppm >= lo) & (spectrum.ppm <= hi)
        out.append((sum(comp.sites[i][1] for i in members), spectrum.intensity[inside].sum() * dx_hz))
    return out


@pytest.mark.parametrize(("key", "field_mhz"), [("e_crotonate", 400.0), ("diethyl_fumarate", 60.0)])
def test_rendered_compound_integrates_to_its_proton_counts(key, field_mhz):
    spectrum = render_case(_clean_case(((key, 1.0),), field_mhz, line_width_hz=0.5), noise=False)
    areas = _site_integrals(spectrum, key, field_mhz)
    total_area = sum(a for _, a in areas)
    total_h = sum(n for n, _ in areas)
    for n_h, area in areas:
        assert area / total_area == pytest.approx(n_h / total_h, rel=0.02)
    assert spectrum.intensity.max() == pytest.approx(TALLEST, rel=1e-6)
    assert np.all(np.diff(spectrum.ppm) < 0) and spectrum.solvent == "CDCl3"


def test_satellites_and_solvent_lines_are_where_published():
    case = _clean_case((("diethyl_maleate", 1.0),), 400.0, line_width_hz=0.5, chcl3_share=0.02)
    lines = case_lines(case)
    vinyl = (lines.owner == "diethyl_maleate") & (lines.site == 0)
    parent = lines.area[vinyl & ~lines.satellite].sum()
    sats = lines.ppm[vinyl & lines.satellite]
    # 1J(C,H) of a vinyl CH, class value 156 Hz: satellites at +-78 Hz (0.195 ppm at 400 MHz)
    assert sorted(np.round(sats - 6.23, 4)) == pytest.approx([-0.195, 0.195])
    assert lines.area[vinyl & lines.satellite].sum() / parent == pytest.approx(
        2 * SATELLITE_SHARE / (1 - 2 * SATELLITE_SHARE)
    )
    solvent = lines.ppm[(lines.owner == "solvent") & ~lines.satellite]
    assert solvent == pytest.approx([7.26])  # Gottlieb et al., J. Org. Chem. 1997, 62, 7512


def test_noise_has_the_case_snr():
    case = _clean_case((("diethyl_fumarate", 1.0),), 400.0, line_width_hz=0.8)
    noisy, clean = render_case(case), render_case(case, noise=False)
    sd = np.std(noisy.intensity - clean.intensity)
    assert TALLEST / sd == pytest.approx(case.snr, rel=0.03)


def test_by_hand_baseline_recovers_a_resolved_two_component_truth():
    case = _clean_case((("diethyl_fumarate", 0.7), ("diethyl_maleate", 0.3)), 400.0, line_width_hz=0.8)
    fractions, integrals = integrate_by_hand(render_case(case), case)
    assert fractions["diethyl_fumarate"] == pytest.approx(0.7, abs=0.01)
    assert fractions["diethyl_maleate"] == pytest.approx(0.3, abs=0.01)
    # the vinyl singlets are the cleanest multiplets of the two esters
    assert {h.shift_ppm for h in integrals} == {6.85, 6.23}


def test_a_perturbed_spectrum_is_the_same_data_rounded_differently(cases):
    """``--perturb``: every intensity moves by at most REL of itself, the same way on every run of the
    case, and not at all with REL 0 (the noise floor of a paired comparison rests on it)."""
    from benchmarks.quantification import perturbed

    case = cases[0]
    spectrum = render_case(case)
    assert perturbed(spectrum, case.id, 0.0) is spectrum
    one, again = perturbed(spectrum, case.id, 1e-9), perturbed(spectrum, case.id, 1e-9)
    y = np.asarray(spectrum.intensity)
    assert np.array_equal(one.intensity, again.intensity)
    change = np.abs(np.asarray(one.intensity) - y)
    assert np.all(change <= 1e-9 * np.abs(y) * (1 + 1e-12))
    assert np.count_nonzero(change) > 0.9 * y.size
    assert np.array_equal(one.ppm, spectrum.ppm)


@pytest.mark.parametrize("value", ["nan", "-1e-9", "0.5"])
def test_a_perturbation_that_is_not_a_rounding_level_change_is_refused(value, capsys):
    from benchmarks.quantification import main

    assert main([f"--perturb={value}", "--limit", "1"]) == 2
    assert "--perturb" in capsys.readouterr().err
