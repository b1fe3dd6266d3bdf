"""NMR yield and content against an internal standard (confirm.qnmr)."""

from __future__ import annotations

import argparse
import math

import numpy as np
import pytest

from confirm.qnmr import (
    InternalStandard,
    SignalIntegral,
    add_yield_arguments,
    molar_mass_g_mol,
    nmr_yield,
    standard_from_args,
    yield_from_args,
    yield_from_result,
    yields_to_json,
)
from predictors.errors import InputError
from tests.confirm._synthetic_results import E_PENTENE, STANDARD, Z_PENTENE, Part, build_result

TMB = "COc1cc(OC)cc(OC)c1"  # 1,3,5-trimethoxybenzene, aromatic singlet 3H


def test_molar_masses_match_standard_atomic_weights():
    # Hand calculation with IUPAC conventional atomic weights (C 12.011, H 1.008, O 15.999;
    # IUPAC CIAAW 2013 abridged table): C9H12O3 = 108.099 + 12.096 + 47.997 = 168.192 g/mol;
    # C5H10 = 60.055 + 10.080 = 70.135 g/mol.
    assert molar_mass_g_mol(TMB) == pytest.approx(168.192, abs=0.002)
    assert molar_mass_g_mol("C/C=C/CC") == pytest.approx(70.135, abs=0.002)


def test_hand_calculation_of_the_qnmr_equation():
    # Hand calculation (done on paper, marked as such) of the internal-standard equation of
    # Pauli et al., J. Med. Chem. 2014, 57, 9220:
    #   n_std = m_std P_std / M_std = 16.82 mg * 0.990 / 168.192 g/mol = 0.099005 mmol
    #   n_x   = (I_x / I_std)(N_std / N_x) n_std = (1.500 / 3.000)(3 / 1) 0.099005 = 0.148507 mmol
    #   m_x   = n_x M_x = 0.148507 * 70.135 = 10.4155 mg
    #   yield = 0.148507 / 0.200 mmol = 74.25 %
    #   P_x   = (I_x/I_std)(N_std/N_x)(M_x/M_std)(m_std/m_x) P_std
    #         = 0.5 * 3 * (70.135/168.192) * (16.82/25.00) * 0.990 = 0.41662 -> 41.66 wt%
    standard = InternalStandard(smiles=TMB, n_h=3, mass_mg=16.82, purity=0.990)
    signal = SignalIntegral(smiles="C/C=C/CC", integral=1.500, n_h=1, label="(E)-pent-2-ene")
    (product,) = nmr_yield([signal], standard, standard_integral=3.000, sample_mass_mg=25.00,
                           theoretical_mmol=0.200)
    assert standard.amount_mmol == pytest.approx(0.099005, abs=1e-6)
    assert product.amount_mmol == pytest.approx(0.148507, abs=1e-6)
    assert product.mass_mg == pytest.approx(10.4155, abs=2e-4)
    assert product.yield_percent == pytest.approx(74.25, abs=0.01)
    assert product.content_percent == pytest.approx(41.66, abs=0.01)
    assert product.amount_sd_mmol == 0.0


def test_signal_of_several_protons_is_divided_by_its_proton_count():
    standard = InternalStandard(smiles=TMB, n_h=3, mass_mg=10.0)
    one = nmr_yield([SignalIntegral(smiles="CC=CCC", integral=1.0, n_h=1)], standard, standard_integral=3.0)
    three = nmr_yield([SignalIntegral(smiles="CC=CCC", integral=3.0, n_h=3)], standard, standard_integral=3.0)
    assert one[0].amount_mmol == pytest.approx(three[0].amount_mmol)


def test_uncertainty_propagation_matches_monte_carlo():
    # Slow obvious reference: draw every input from its normal distribution and take the sd.
    standard = InternalStandard(smiles=TMB, n_h=3, mass_mg=16.82, purity=0.990, mass_sd_mg=0.01,
                                purity_sd=0.002)
    signal = SignalIntegral(smiles="CC=CCC", integral=1.5, n_h=1, integral_sd=0.015)
    (product,) = nmr_yield([signal], standard, standard_integral=3.0, standard_integral_sd=0.015,
                           theoretical_mmol=0.2)
    rng = np.random.default_rng(11)
    n = 200_000
    i_x = rng.normal(1.5, 0.015, n)
    i_s = rng.normal(3.0, 0.015, n)
    m_s = rng.normal(16.82, 0.01, n)
    p_s = rng.normal(0.990, 0.002, n)
    amounts = i_x / i_s * 3 * m_s * p_s / standard.molar_mass_g_mol
    assert product.amount_mmol == pytest.approx(amounts.mean(), rel=1e-3)
    assert product.amount_sd_mmol == pytest.approx(amounts.std(), rel=0.03)
    # relative sd by hand: sqrt(0.01^2 + 0.005^2 + (0.01/16.82)^2 + (0.002/0.99)^2) = 1.138 %
    assert product.amount_sd_mmol / product.amount_mmol == pytest.approx(0.01138, abs=1e-4)
    assert product.yield_sd_percent == pytest.approx(product.yield_percent * 0.01138, rel=1e-2)


def test_method_uncertainty_adds_in_quadrature():
    standard = InternalStandard(smiles=TMB, n_h=3, mass_mg=10.0)
    signal = SignalIntegral(smiles="CC=CCC", integral=1.0, n_h=1, integral_sd=0.01)
    (plain,) = nmr_yield([signal], standard, standard_integral=3.0)
    (method,) = nmr_yield([signal], standard, standard_integral=3.0, method_rel_sd=0.0075)
    rel_plain = plain.amount_sd_mmol / plain.amount_mmol
    rel_method = method.amount_sd_mmol / method.amount_mmol
    assert rel_method == pytest.approx(math.hypot(rel_plain, 0.0075))


def test_yield_from_a_fitted_standard_uses_the_mole_fraction_ratio():
    result = build_result([Part(STANDARD, 0.40, sd=0.004, pathways=("user",)),
                           Part(E_PENTENE, 0.45, sd=0.005, geometry="E"),
                           Part(Z_PENTENE, 0.15, sd=0.003, geometry="Z")], major=E_PENTENE)
    standard = InternalStandard(smiles=TMB, n_h=3, mass_mg=16.82, purity=0.99)
    yields = yield_from_result(result, standard, theoretical_mmol=0.25)
    assert [y.smiles for y in yields] == [E_PENTENE, Z_PENTENE]
    assert yields[0].amount_mmol == pytest.approx(0.45 / 0.40 * standard.amount_mmol)
    assert yields[1].yield_percent == pytest.approx(100 * 0.15 / 0.40 * standard.amount_mmol / 0.25)
    rel = math.hypot(0.005 / 0.45, 0.004 / 0.40)
    assert yields[0].amount_sd_mmol == pytest.approx(rel * yields[0].amount_mmol)
    data = yields_to_json(yields, standard)
    assert data["standard"]["n_h"] == 3 and len(data["products"]) == 2


def test_standard_missing_from_the_fit_is_bad_input():
    result = build_result([Part(E_PENTENE, 1.0)], major=E_PENTENE)
    with pytest.raises(InputError, match="standard smiles"):
        yield_from_result(result, InternalStandard(smiles=TMB, n_h=3, mass_mg=10.0))


@pytest.mark.parametrize("kwargs, message", [
    ({"n_h": 0}, "n_h"),
    ({"n_h": 2.5}, "n_h"),
    ({"mass_mg": -1.0}, "mass_mg"),
    ({"mass_mg": float("nan")}, "mass_mg"),
    ({"purity": 1.2}, "purity"),
    ({"smiles": "C1CC"}, "smiles"),
])
def test_bad_standard_is_rejected(kwargs, message):
    values = {"smiles": TMB, "n_h": 3, "mass_mg": 10.0} | kwargs
    with pytest.raises(InputError, match=message):
        InternalStandard(**values)


def test_bad_integrals_are_rejected():
    standard = InternalStandard(smiles=TMB, n_h=3, mass_mg=10.0)
    signal = SignalIntegral(smiles="CC=CCC", integral=1.0, n_h=1)
    with pytest.raises(InputError, match="standard_integral"):
        nmr_yield([signal], standard, standard_integral=0.0)
    with pytest.raises(InputError, match="theoretical_mmol"):
        nmr_yield([signal], standard, standard_integral=1.0, theoretical_mmol=-2)
    with pytest.raises(InputError, match="integral"):
        SignalIntegral(smiles="CC=CCC", integral=-1.0, n_h=1)


def test_command_line_options_build_the_standard():
    parser = argparse.ArgumentParser()
    add_yield_arguments(parser)
    assert standard_from_args(parser.parse_args([])) is None
    args = parser.parse_args(["--std-smiles", TMB, "--std-protons", "3", "--std-mass-mg", "16.82",
                              "--std-purity-percent", "99", "--theoretical-mmol", "0.25"])
    standard = standard_from_args(args)
    assert standard.purity == pytest.approx(0.99) and standard.smiles == STANDARD
    result = build_result([Part(STANDARD, 0.5, pathways=("user",)), Part(E_PENTENE, 0.5)], major=E_PENTENE)
    (product,) = yield_from_args(args, result)
    assert product.yield_percent == pytest.approx(100 * standard.amount_mmol / 0.25)
    with pytest.raises(InputError, match="--std-mass-mg"):
        standard_from_args(parser.parse_args(["--std-smiles", TMB, "--std-protons", "3"]))
    with pytest.raises(InputError, match="--std-purity-percent"):
        standard_from_args(parser.parse_args(["--std-smiles", TMB, "--std-protons", "3",
                                              "--std-mass-mg", "5", "--std-purity-percent", "120"]))


@pytest.mark.slow
def test_yield_end_to_end_through_analyze(tmp_path, run_cli):
    import json

    from tests.confirm.published_spectra import E_ANETHOLE, ESTRAGOLE, Z_ANETHOLE, PublishedCompound
    from tests.confirm.test_qc import _published_jcamp

    # 1,3,5-trimethoxybenzene in CDCl3: 6.09 (s, 3H), 3.77 (s, 9H) -- from memory
    tmb = PublishedCompound(name="1,3,5-trimethoxybenzene", smiles=TMB, sites=((6.09, 3, "aryl"),
                            (3.77, 9, "OCH3")), couplings=(), source="from memory")
    # 0.18 mmol (E)- and 0.02 mmol (Z)-anethole with 0.100 mmol standard (16.82 mg, 168.19 g/mol)
    path = _published_jcamp([(E_ANETHOLE, 0.18), (Z_ANETHOLE, 0.02), (tmb, 0.10)], tmp_path / "crude.jdx")
    report = tmp_path / "crude.html"
    out = run_cli("analyze", "--spectrum", path, "--candidates", E_ANETHOLE.smiles, Z_ANETHOLE.smiles,
                  ESTRAGOLE.smiles, "--std-smiles", TMB, "--std-protons", "3", "--std-mass-mg", "16.82",
                  "--theoretical-mmol", "0.25", "--report", report, "--json")
    assert out.exit_code == 0, out.stderr
    payload = json.loads(out.stdout)
    fitted = {c["smiles"]: c for c in payload["components"]}
    assert fitted[STANDARD]["label"] == "internal standard" and fitted[STANDARD]["detected"]
    assert payload["parameters"]["internal_standard"] == STANDARD
    yields = {y["smiles"]: y for y in payload["nmr_yield"]["products"]}
    e_smiles = E_ANETHOLE.smiles
    # tolerance: the mixture fit's present accuracy on a crude with overlapping aryl/OCH3 signals
    assert yields[e_smiles]["amount_mmol"] == pytest.approx(0.18, rel=0.10)
    assert yields[e_smiles]["yield_percent"] == pytest.approx(100 * yields[e_smiles]["amount_mmol"] / 0.25)
    assert 'id="yield"' in report.read_text(encoding="utf-8")
