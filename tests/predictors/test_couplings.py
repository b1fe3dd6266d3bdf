"""Coupling models against published equations, curves and typical values."""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

from predictors.couplings import (
    embed_conformers,
    garbisch_allylic,
    garbisch_vicinal,
    karplus_hla,
    karplus_simple,
    predict_couplings,
    predict_one_bond_ch,
)
from predictors.equivalence import map_alkene_relations
from predictors.prediction import predict_spin_system
from predictors.shifts import prepare_model_molecule
from tests.predictors.alkene_reference import REFERENCE_ALKENES, locate_reference, select_proton


def _simple_karplus(phi_deg):
    # 3J = 7.8 - 1.0 cos(phi) + 5.6 cos(2 phi) (references.md section 2; published simple curve)
    phi = np.radians(phi_deg)
    return 7.8 - np.cos(phi) + 5.6 * np.cos(2 * phi)


def test_hla_without_substituents_matches_its_parameters():
    # Haasnoot, de Leeuw, Altona, Tetrahedron 1980, 36, 2783: P1 cos^2 + P2 cos + P3
    assert karplus_hla(0.0) == pytest.approx(13.70 - 0.73)
    assert karplus_hla(90.0) == pytest.approx(0.0, abs=1e-9)
    assert karplus_hla(180.0) == pytest.approx(13.70 + 0.73)


@pytest.mark.parametrize("phi, tol", [(0.0, 1.0), (90.0, 2.5), (180.0, 0.5)])
def test_hla_follows_the_published_karplus_curve(phi, tol):
    # the two curves differ most near 90 deg (0 vs 2.2 Hz), where couplings are smallest
    assert abs(float(karplus_hla(phi)) - _simple_karplus(phi)) <= tol


@pytest.mark.parametrize("xi", [1.0, -1.0])
def test_hla_substituent_term(xi):
    # Haasnoot et al. 1980: + dchi [P4 + P5 cos^2(xi phi + P6 |dchi|)], P4 0.56, P5 -2.47, P6 16.9 deg
    phi, dchi = 60.0, 1.3
    bare = 13.70 * np.cos(np.radians(phi)) ** 2 - 0.73 * np.cos(np.radians(phi))
    term = dchi * (0.56 - 2.47 * np.cos(np.radians(xi * phi + 16.9 * dchi)) ** 2)
    assert karplus_hla(phi, [(dchi, xi)]) == pytest.approx(bare + term)
    assert karplus_hla(phi, [(dchi, 1.0)]) != pytest.approx(karplus_hla(phi, [(dchi, -1.0)]))


def test_garbisch_relations():
    # Garbisch, J. Am. Chem. Soc. 1964, 86, 5561 (references.md section 2)
    assert garbisch_vicinal(0.0) == pytest.approx(6.6)
    assert garbisch_vicinal(90.0) == pytest.approx(2.6)
    assert garbisch_vicinal(180.0) == pytest.approx(11.6)
    assert garbisch_allylic(0.0) == pytest.approx(1.3)
    assert garbisch_allylic(90.0) == pytest.approx(-2.6)
    assert garbisch_allylic(180.0) == pytest.approx(0.0, abs=1e-9)


@pytest.mark.parametrize(
    ("smiles", "smarts", "published_hz"),
    [
        # allylic 4J between an sp3 H and the far vinyl H, as printed in first-order multiplets:
        # (open-chain allylic groups take the corpus tuning half's rotational averages; allylbenzene is
        # in that half, ethyl crotonate and methyl methacrylate are not)
        ("C=CCc1ccccc1", "[CH2]=C[CH2]", 1.5),  # allylbenzene, 3.38 (dt, 6.7, 1.5) (from memory)
        ("C/C=C/C(=O)OCC", "[CH3]C=C", 1.7),  # ethyl (E)-crotonate, 1.87 (dd, 6.9, 1.7) (from memory)
        # methyl methacrylate CH3, 1.94 (dd, 1.6, 1.0; both =CH2 H checked against their mean) (from memory)
        ("C=C(C)C(=O)OC", "[CH2]=C[CH3]", 1.3),
    ],
)
def test_allylic_coupling_near_published_values(smiles, smarts, published_hz):
    system = predict_spin_system(smiles, n_conformers=10)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(smiles))
    far, _, sp3 = mol_h.GetSubstructMatch(Chem.MolFromSmarts(smarts))
    site_of = {atom: k for k, site in enumerate(system.sites) for atom in site.atoms}
    h_far = [n.GetIdx() for n in mol_h.GetAtomWithIdx(far).GetNeighbors() if n.GetAtomicNum() == 1]
    h_sp3 = next(n.GetIdx() for n in mol_h.GetAtomWithIdx(sp3).GetNeighbors() if n.GetAtomicNum() == 1)
    for h in h_far:
        j = system.j_hz[site_of[h], site_of[h_sp3]]
        # allylic 4J is negative (Garbisch, J. Am. Chem. Soc. 1964, 86, 5561; Sternhell, Q. Rev. Chem.
        # Soc. 1969, 23, 236)
        assert j < 0
        assert abs(abs(j) - published_hz) <= 0.7


@pytest.mark.parametrize("smiles", ["CCc1ccccc1", "CCBr", "CCCl"])
def test_ethyl_vicinal_coupling_about_7_hz(smiles):
    # ethyl groups: 3J about 7 Hz (sp3 vicinal 7-8 Hz, references.md section 2; common practice)
    system = predict_spin_system(smiles, n_conformers=4)
    ch3 = next(i for i, s in enumerate(system.sites) if s.label == "CH3")
    ch2 = next(i for i, s in enumerate(system.sites) if s.label == "CH2")
    assert 6.0 <= system.j_hz[ch3, ch2] <= 8.0


@pytest.mark.parametrize("entry", [e for e in REFERENCE_ALKENES if e.geometry], ids=lambda e: e.name)
def test_vinyl_3j_classifies_geometry(entry):
    # trans 12-18 Hz, cis 6-12 Hz (published tables; references.md section 2). Checked proton by
    # proton so that symmetric alkenes (one site for both vinyl H) are covered too.
    smiles, index = locate_reference(entry)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(smiles))
    model, _ = prepare_model_molecule(mol_h)
    relations = map_alkene_relations(model)
    j, _ = predict_couplings(model, embed_conformers(mol_h, n_conformers=1), relations)
    c1 = index[1]
    c2 = next(c for c in relations[c1].carbons if c != c1)
    h1, h2 = select_proton(mol_h, c1, None, None), select_proton(mol_h, c2, None, None)
    if entry.geometry == "trans":
        assert 12.0 <= j[h1, h2] <= 18.0
    else:
        assert 6.0 <= j[h1, h2] < 12.0


def test_terminal_vinyl_couplings_match_measured_butyl_acrylate():
    # measured: 17.3 (trans), 10.4 (cis), 1.4 (gem) Hz (../shared/real_spectra/README.md)
    system = predict_spin_system("C=CC(=O)OCCCC", n_conformers=2)
    vinyl = [i for i, s in enumerate(system.sites) if s.label == "vinyl"]
    values = sorted(abs(system.j_hz[a, b]) for a in vinyl for b in vinyl if a < b)
    for predicted, measured in zip(values, [1.4, 10.4, 17.3], strict=True):
        assert abs(predicted - measured) <= 1.0


def test_aromatic_couplings_of_toluene():
    # benzene: ortho 7.5, meta 1.4, para 0.7 Hz (Pretsch coupling table; from memory)
    system = predict_spin_system("Cc1ccccc1", n_conformers=1)
    para = next(i for i, s in enumerate(system.sites) if s.label == "aryl" and s.n_h == 1)
    others = [i for i, s in enumerate(system.sites) if s.label == "aryl" and i != para]
    assert sorted(round(system.j_hz[para, k], 1) for k in others) == [1.5, 7.6]  # meta, ortho
    # ortho-H site to meta-H site: each H has one ortho (7.6) and one para (0.7) partner
    assert system.j_hz[others[0], others[1]] == pytest.approx((7.6 + 0.7) / 2, abs=0.01)
    assert system.j_sd_hz is not None and np.all(system.j_sd_hz >= 0)


def test_diastereotopic_ch2_has_geminal_coupling():
    system = predict_spin_system("CC(O)CC", n_conformers=2)
    ch2 = [i for i, s in enumerate(system.sites) if s.label == "CH2"]
    assert len(ch2) == 2
    assert -15.0 <= system.j_hz[ch2[0], ch2[1]] <= -10.0  # sp3 2J -10 to -15 Hz (common practice)


@pytest.mark.parametrize(
    ("smiles", "smarts", "published_hz"),
    [
        # 1J(C,H), Pretsch et al. 1J(C,H) table / any 13C NMR text (from memory)
        ("C", "[CH4]", 125.0),  # methane
        ("CO", "[CH3]O", 141.0),  # methanol
        ("COc1ccccc1", "[CH3]O", 143.0),  # anisole OCH3
        ("CBr", "[CH3]Br", 152.0),  # bromomethane
        ("ClCCl", "[CH2](Cl)Cl", 178.0),  # dichloromethane
        ("Cc1ccccc1", "[CH3]c", 126.0),  # toluene CH3
        ("C=C", "[CH2]=C", 156.0),  # ethylene
        ("c1ccccc1", "[cH]", 159.0),  # benzene
        ("CC=O", "[CH1]=O", 172.0),  # acetaldehyde CHO
        ("C#C", "[CH1]#C", 249.0),  # acetylene
    ],
)
def test_one_bond_ch_coupling_matches_tabulated_values(smiles, smarts, published_hz):
    mol_h = Chem.AddHs(Chem.MolFromSmiles(smiles))
    carbon = mol_h.GetSubstructMatch(Chem.MolFromSmarts(smarts))[0]
    h = next(n.GetIdx() for n in mol_h.GetAtomWithIdx(carbon).GetNeighbors() if n.GetAtomicNum() == 1)
    assert predict_one_bond_ch(mol_h, h) == pytest.approx(published_hz, abs=3.0)


@pytest.mark.parametrize(
    ("smiles", "observed_hz"),
    [
        # vicinal 3J of freely rotating fragments, CDCl3 (literature values, from memory)
        ("CCO", 7.0),  # ethanol
        ("CCOC(C)=O", 7.1),  # ethyl acetate
        ("CCBr", 7.3),  # bromoethane
        ("CCC", 7.3),  # propane
        ("CC(C)Br", 6.6),  # 2-bromopropane
        ("CC(C)O", 6.1),  # 2-propanol
    ],
)
def test_acyclic_vicinal_coupling_is_the_free_rotation_average(smiles, observed_hz):
    system = predict_spin_system(smiles, n_conformers=4)
    n = len(system.sites)
    values = [abs(system.j_hz[i][j]) for i in range(n) for j in range(i + 1, n) if abs(system.j_hz[i][j]) > 3]
    assert values and all(abs(v - observed_hz) <= 0.8 for v in values)
    # the curve behind it: 7.8 Hz mean over the three staggered rotamers (references.md section 2)
    assert np.mean(karplus_simple(np.array([60.0, 180.0, 300.0]))) == pytest.approx(7.8)


def _partner_couplings(system, label):
    """Couplings (Hz) of the first site labelled ``label`` to every other site, largest first."""
    k = next(i for i, s in enumerate(system.sites) if s.label == label)
    return sorted((float(v) for v in np.abs(system.j_hz[k]) if v > 0.1), reverse=True)


@pytest.mark.parametrize(("smiles", "label", "published_hz"), [
    # DMSO-d6 (slow exchange): Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, DMSO-d6
    # column (from memory): ethanol OH t 5.1 Hz, methanol OH q 5.2 Hz, 2-propanol OH d about 4.2 Hz
    ("CCO", "OH", 5.1),
    ("CO", "OH", 5.2),
    ("CC(C)O", "OH", 4.2),
    # N-methylacetamide NH-CH3 about 4.6 Hz in DMSO-d6 (from memory)
    ("CNC(C)=O", "NH", 4.6),
])
def test_oh_and_amide_nh_couple_in_dmso(smiles, label, published_hz):
    system = predict_spin_system(smiles, n_conformers=2, solvent="DMSO-d6")
    couplings = _partner_couplings(system, label)
    assert couplings, f"{smiles}: no {label} coupling predicted in DMSO-d6"
    assert couplings[0] == pytest.approx(published_hz, abs=1.0)


@pytest.mark.parametrize("solvent", ["CDCl3", "D2O", None])
def test_oh_and_nh_do_not_couple_in_fast_exchange(solvent):
    # in CDCl3 traces of acid and water average the OH/NH couplings away (common practice)
    for smiles, label in (("CCO", "OH"), ("CNC(C)=O", "NH")):
        system = predict_spin_system(smiles, n_conformers=2, solvent=solvent)
        assert _partner_couplings(system, label) == []


def test_amine_nh_and_acid_oh_stay_uncoupled_in_dmso():
    # amine NH exchange fast even in DMSO-d6; a COOH has no vicinal H (common practice)
    for smiles, label in (("CCNCC", "NH"), ("CC(=O)O", "OH")):
        system = predict_spin_system(smiles, n_conformers=2, solvent="DMSO-d6")
        assert _partner_couplings(system, label) == []
