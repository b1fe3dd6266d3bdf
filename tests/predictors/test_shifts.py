"""Shift models against the worked examples of their tables and a published alkene set."""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

from predictors.prediction import predict_spin_system
from predictors.shifts import load_increment_table, predict_proton_shifts, prepare_model_molecule
from tests.predictors.alkene_reference import REFERENCE_ALKENES, match_reference
from tests.predictors.sp3_reference import REFERENCE_SP3, predicted_vs_observed


def _site_shift(smiles: str, h_parent_smarts: str, which: int = 0) -> float:
    system = predict_spin_system(smiles, n_conformers=1)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
    parent = mol_h.GetSubstructMatches(Chem.MolFromSmarts(h_parent_smarts))[which][0]
    h = next(n.GetIdx() for n in mol_h.GetAtomWithIdx(parent).GetNeighbors() if n.GetAtomicNum() == 1)
    return next(s.shift_ppm for s in system.sites if h in s.atoms)


def test_tables_have_a_source_on_every_row():
    for name in ("alkene_increments", "benzene_increments", "sp3_increments", "couplings"):
        rows = load_increment_table(name)
        assert rows and all(r["source"].strip() for r in rows), name


def test_pascual_meier_simon_worked_example():
    # methyl (E)-crotonate H3: 5.25 + Z_gem(alkyl) 0.45 + Z_cis(COOR) 1.18 = 6.88
    # (Pascual, Meier, Simon 1966; increments as in the Pretsch olefinic table)
    assert _site_shift("C/C=C/C(=O)OC", "[CH1](C)=C") == pytest.approx(6.88, abs=1e-6)
    # methyl methacrylate, H trans to COOR: 5.25 + Z_trans(COOR) 0.55 + Z_cis(alkyl) -0.22 = 5.58
    mmc = predict_spin_system("C=C(C)C(=O)OC", n_conformers=1)
    assert sorted(round(s.shift_ppm, 2) for s in mmc.sites if s.label == "vinyl") == [5.58, 6.15]


def test_shoolery_worked_example():
    # benzyl bromide CH2: 0.23 + S(Ph) 1.85 + S(Br) 2.33 = 4.41, found 4.43
    # (Schaller, Arnold, Pretsch 1995 constants; worked example in Silverstein, Spectrometric
    # Identification of Organic Compounds, 7th ed., appendix B)
    assert _site_shift("BrCc1ccccc1", "[CH2]Br") == pytest.approx(4.41, abs=1e-6)


def test_beauchamp_marquez_worked_example():
    # 1-bromopropane: CH2 1.2 + 0.7 (beta Br) = 1.9; CH3 0.9 + 0.2 (gamma Br) = 1.1
    # (Beauchamp & Marquez, J. Chem. Educ. 1997, 74, 1483); observed 1.89, 1.03 (from memory)
    assert _site_shift("CCCBr", "[CH2](C)CBr") == pytest.approx(1.9)
    assert _site_shift("CCCBr", "[CH3]") == pytest.approx(1.1)
    # the alpha increment of a CH2 comes from bromoethane, CH2 3.43 (from memory): 1.2 + 2.23;
    # observed for 1-bromopropane 3.40 (from memory)
    assert _site_shift("CCCBr", "[CH2]Br") == pytest.approx(3.43)


def test_alpha_increment_depends_on_carbon_type():
    # CH3Br 2.68, CH3CH2Br 3.43, (CH3)2CHBr 4.21 (CDCl3, from memory): one Beauchamp-Marquez alpha
    # increment (2.1) cannot give all three; the typed table must, within 0.06 (the CH row is the
    # mean of 2-bromopropane and 2-bromobutane)
    assert _site_shift("CBr", "[CH3]") == pytest.approx(2.68, abs=0.01)
    assert _site_shift("CCBr", "[CH2]") == pytest.approx(3.43, abs=0.01)
    assert _site_shift("CC(C)Br", "[CH1]") == pytest.approx(4.21, abs=0.06)


def test_beta_increments_saturate_next_to_a_heteroatom():
    # 1-phenylpropan-2-ol CH: 1.5 + 2.38 (alpha OH, CH) + 0.4 (beta aryl) * (1 - 0.30 * 2.38)
    # = 3.99; observed 4.02 (CDCl3, from memory); plain additivity would give 4.28
    expected = 1.5 + 2.38 + 0.4 * (1 - 0.30 * 2.38)
    assert _site_shift("CC(O)Cc1ccccc1", "[CH1]O") == pytest.approx(expected, abs=1e-3)
    # 1-phenylethanol CH: the second alpha (aryl, 1.40 on a CH) adds (1 - 0.13 * 2.38) of itself;
    # observed 4.89 (from memory)
    expected = 1.5 + 2.38 + 1.40 * (1 - 0.13 * 2.38)
    assert _site_shift("CC(O)c1ccccc1", "[CH1]O") == pytest.approx(expected, abs=1e-3)
    assert abs(expected - 4.89) < 0.15


def test_sp3_reference_set_accuracy():
    # held-out compounds (Gottlieb et al., J. Org. Chem. 1997, 62, 7512, Table 1, and literature
    # values from memory; tests/predictors/sp3_reference.py): none of them set a table value or a
    # saturation constant
    errors = {"test": [], "calibration": [], "defining": []}
    for entry in REFERENCE_SP3:
        assert entry.source
        errors[entry.role] += [p - o for _, o, p in predicted_vs_observed(entry)]
    test = np.array(errors["test"])
    assert test.size >= 40
    assert np.mean(np.abs(test)) <= 0.10
    assert np.max(np.abs(test)) <= 0.35
    # the calibration set is fitted with two constants; the defining compounds reproduce the table
    assert np.mean(np.abs(errors["calibration"])) <= 0.08
    assert np.mean(np.abs(errors["defining"])) <= 0.05
    # the stated uncertainty of the sp3 model covers the held-out scatter
    sd = next(float(r["sd_ppm"]) for r in load_increment_table("sp3_increments")
              if r["table"] == "method_sd" and r["group"] == "bm")
    assert float(np.sqrt(np.mean(test**2))) <= sd


def test_benzene_increment_worked_example():
    # 4-nitroanisole, H ortho to NO2: 7.27 + 0.95 (o-NO2) - 0.09 (m-OCH3) = 8.13; obs 8.19
    # (Beeby et al., Anal. Chem. 1973, 45, 1571 increments, from memory)
    assert _site_shift("COc1ccc(cc1)[N+](=O)[O-]", "[cH]c[N+]") == pytest.approx(8.13)
    assert _site_shift("COc1ccc(cc1)[N+](=O)[O-]", "[cH]cOC") == pytest.approx(7.27 - 0.48 + 0.26)


def test_reference_alkenes_mae_within_target():
    # target: MAE <= 0.15 ppm (issue 4; Abraham et al., Magn. Reson. Chem. 2005, 43, 3 reach rms 0.11)
    errors = []
    kinds = set()
    for entry in REFERENCE_ALKENES:
        system = predict_spin_system(Chem.MolToSmiles(_unmapped(entry.mapped_smiles)), n_conformers=1)
        errors += [m.predicted_ppm - m.observed_ppm for m in match_reference(entry, system)]
        kinds.add(entry.kind)
        assert entry.source
    errors = np.array(errors)
    assert len(REFERENCE_ALKENES) >= 20
    assert {"enoate", "enone", "styrene", "enol ether", "vinyl ester", "terminal"} <= kinds
    assert np.mean(np.abs(errors)) <= 0.15
    rms = float(np.sqrt(np.mean(errors**2)))
    # the vinyl sd in the table is calibrated on this scatter
    sd = next(float(r["sd_ppm"]) for r in load_increment_table("sp3_increments")
              if r["table"] == "method_sd" and r["group"] == "vinyl")
    assert rms <= sd <= 1.5 * rms


def _unmapped(mapped: str):
    mol = Chem.MolFromSmiles(mapped)
    for atom in mol.GetAtoms():
        atom.SetAtomMapNum(0)
    return mol


def test_aldehyde_and_exchangeable_sites():
    system = predict_spin_system("OCCC=O", n_conformers=1)
    cho = next(s for s in system.sites if s.label == "CHO")
    oh = next(s for s in system.sites if s.label == "OH")
    assert 9.4 <= cho.shift_ppm <= 10.1  # aliphatic aldehyde 9.5-10 ppm (common practice)
    assert oh.exchangeable and oh.shift_sd_ppm >= 0.5
    acid = next(s for s in predict_spin_system("CC(=O)O", n_conformers=1).sites if s.label == "OH")
    assert acid.shift_ppm > 10


def test_unknown_groups_fall_back_with_flag_and_wider_sd():
    plain = predict_spin_system("CCC=C", n_conformers=1)
    silyl = predict_spin_system("C[Si](C)(C)C=C", n_conformers=1)
    vinyl_plain = max(s.shift_sd_ppm for s in plain.sites if s.label == "vinyl")
    flagged = [s for s in silyl.sites if s.label == "vinyl"]
    assert all(s.flags for s in flagged)
    assert all(s.shift_sd_ppm > vinyl_plain for s in flagged)
    hydride = predict_spin_system("C[SiH](C)C", n_conformers=1)
    si_h = next(s for s in hydride.sites if s.label == "other")
    assert si_h.flags and si_h.shift_sd_ppm >= 1.0


def test_pyranone_ring_is_treated_as_enone():
    mol_h = Chem.AddHs(Chem.MolFromSmiles("O=c1ccc2ccccc2o1"))
    model, pseudo = prepare_model_molecule(mol_h)
    assert pseudo and model.GetBondBetweenAtoms(2, 3).GetBondType() == Chem.BondType.DOUBLE
    shifts = predict_proton_shifts(model, pseudo_atoms=pseudo)
    assert {e.label for e in shifts.values()} == {"vinyl", "aryl"}
