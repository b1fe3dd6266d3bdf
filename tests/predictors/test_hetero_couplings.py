"""Couplings of protons to 19F and 31P against published values (magnitudes, Hz).

Each check names its source beside it; values recalled, not looked up, are marked ``from memory``.
The target is the prediction within 2 Hz of the published value.
"""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

from predictors.core import ProtonSite, SpinSystem
from predictors.errors import InputError
from predictors.hetero_couplings import (
    check_nuclei,
    phosphorus_class,
    predict_x_couplings,
    site_x_couplings,
    without_x_couplings,
)
from predictors.prediction import first_order_multiplicity, predict_spin_system

TOL_HZ = 2.0


def _site_at(smiles: str, smarts: str) -> tuple[SpinSystem, int]:
    """The predicted system and the index of the site whose protons sit on the SMARTS's first atom."""
    system = predict_spin_system(smiles)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
    matches = mol_h.GetSubstructMatches(Chem.MolFromSmarts(smarts))
    assert matches, f"{smarts} not in {smiles}"
    carbon = matches[0][0]
    for k, site in enumerate(system.sites):
        if any(mol_h.GetAtomWithIdx(h).GetNeighbors()[0].GetIdx() == carbon for h in site.atoms):
            return system, k
    raise AssertionError(f"no site on atom {carbon}")


def _couplings(smiles: str, smarts: str, nucleus: str) -> list[tuple[int, float]]:
    system, k = _site_at(smiles, smarts)
    return [(n, j) for nuc, n, j in system.x_couplings[k] if nuc == nucleus]


# ------------------------------------------------------------------------------ 19F
def test_trifluoroethanol_ch2_is_a_quartet_of_about_8_5_hz():
    # 2,2,2-trifluoroethanol CH2: q, 3J(H,F) 8.5-8.7 Hz (from memory)
    (count, j), = _couplings("OCC(F)(F)F", "[CH2]C(F)(F)F", "19F")
    assert count == 3
    assert abs(j - 8.6) <= TOL_HZ
    system, k = _site_at("OCC(F)(F)F", "[CH2]C(F)(F)F")
    assert first_order_multiplicity(system, k) == "q"


def test_trifluoroethyl_ester_ch2_quartet_and_remote_groups_untouched():
    # 2,2,2-trifluoroethyl acetate OCH2CF3: q, 3J(H,F) 8.4 Hz (from memory); the acetyl CH3 is a singlet
    (count, j), = _couplings("CC(=O)OCC(F)(F)F", "[CH2]C(F)(F)F", "19F")
    assert count == 3 and abs(j - 8.4) <= TOL_HZ
    assert _couplings("CC(=O)OCC(F)(F)F", "[CH3]C(=O)", "19F") == []


def test_fluorobenzene_ortho_meta_para():
    # fluorobenzene: 3J(H2,F) 9.1, 4J(H3,F) 5.7, 5J(H4,F) 0.2 Hz (from memory)
    smiles = "Fc1ccccc1"
    for smarts, published in (("[cH]c(F)", 9.1), ("[cH][cH]c(F)", 5.7), ("[cH]1[cH][cH]c(F)[cH][cH]1", 0.2)):
        (count, j), = _couplings(smiles, smarts, "19F")
        assert count == 1
        assert abs(j - published) <= TOL_HZ, (smarts, j)
    ortho = _couplings(smiles, "[cH]c(F)", "19F")[0][1]
    meta = _couplings(smiles, "[cH][cH]c(F)", "19F")[0][1]
    assert ortho > meta > 1.0  # the order of the published values, not only their size


@pytest.mark.parametrize("smiles, published_2j, published_3j", [
    ("CCF", 47.5, 25.2),    # fluoroethane: 2J(H,F) 47.5, 3J(H,F) 25.2 Hz (from memory)
    ("CCCF", 47.2, 24.0),   # 1-fluoropropane: 2J(H,F) 47.2, 3J(H,F) about 24 Hz (from memory)
])
def test_geminal_and_vicinal_h_f_in_alkyl_fluorides(smiles, published_2j, published_3j):
    (n2, j2), = _couplings(smiles, "[CH2]F", "19F")
    (n3, j3), = _couplings(smiles, "[CH2,CH3][CH2]F", "19F")
    assert n2 == n3 == 1
    assert abs(j2 - published_2j) <= TOL_HZ
    assert abs(j3 - published_3j) <= TOL_HZ


def test_vinyl_fluoride_gem_cis_trans():
    # vinyl fluoride: 2J(H,F) 84.7, 3J(H,F) trans 52.4, cis 20.1 Hz (from memory)
    system = predict_spin_system("C=CF")
    values = sorted(j for site in system.x_couplings for _, _, j in site)
    assert np.allclose(values, [20.1, 52.4, 84.7], atol=TOL_HZ)
    (_, gem), = _couplings("C=CF", "[CH1]F", "19F")
    assert abs(gem - 84.7) <= TOL_HZ


def test_equivalent_protons_with_different_fluorine_partners_keep_both_couplings():
    # 1,3-difluorobenzene: H4/H6 each ortho to one F and para to the other (9 and about 0.2 Hz,
    # from memory); H2 between the two F is a triplet of the ortho coupling
    system, k = _site_at("Fc1cccc(F)c1", "[cH]1[cH][cH]c(F)[cH]c1F")
    assert [(n, round(j)) for _, n, j in system.x_couplings[k]] == [(1, 9), (1, 0)]
    (count, j), = _couplings("Fc1cccc(F)c1", "[cH](c(F))c(F)", "19F")
    assert count == 2 and abs(j - 9.0) <= TOL_HZ


# ------------------------------------------------------------------------------ 31P
def test_trimethylphosphine_oxide_doublet():
    # trimethylphosphine oxide: 2J(P,H) 13.0-13.4 Hz (from memory)
    (count, j), = _couplings("CP(C)(C)=O", "[CH3]P", "31P")
    assert count == 1 and abs(j - 13.2) <= TOL_HZ


def test_dimethyl_methylphosphonate():
    # dimethyl methylphosphonate: P-CH3 d, 2J(P,H) 17.5 Hz; P-OCH3 d, 3J(P,O,C,H) 10.8-11 Hz (from memory)
    (_, j_pch3), = _couplings("COP(C)(=O)OC", "[CH3]P", "31P")
    (_, j_poch3), = _couplings("COP(C)(=O)OC", "[CH3]OP", "31P")
    assert abs(j_pch3 - 17.5) <= TOL_HZ
    assert abs(j_poch3 - 11.0) <= TOL_HZ


def test_triphenylphosphine_oxide_ring_protons():
    # triphenylphosphine oxide (CDCl3): ortho H dd 12.0 and 7.5 Hz, 3J(P,H) 12.0; meta td 7.6 and
    # 3.0 Hz, 4J(P,H) about 3 (from memory)
    smiles = "O=P(c1ccccc1)(c1ccccc1)c1ccccc1"
    (_, ortho), = _couplings(smiles, "[cH]cP", "31P")
    (_, meta), = _couplings(smiles, "[cH][cH]cP", "31P")
    assert abs(ortho - 12.0) <= TOL_HZ
    assert abs(meta - 3.0) <= TOL_HZ


@pytest.mark.parametrize("smiles, published", [
    ("CP(C)C", 2.7),                                     # trimethylphosphine 2J(P,H) 2.7 Hz (from memory)
    ("C[P+](c1ccccc1)(c1ccccc1)c1ccccc1", 13.5),        # methyltriphenylphosphonium 13.5 Hz (from memory)
])
def test_two_bond_p_h_by_kind_of_phosphorus(smiles, published):
    (_, j), = _couplings(smiles, "[CH3]P", "31P")
    assert abs(j - published) <= TOL_HZ


def test_diethyl_ethylphosphonate_ethyl_on_p():
    # diethyl ethylphosphonate P-CH2CH3: CH3 dt with 3J(P,H) 20 Hz (from memory)
    (_, j), = _couplings("CCP(=O)(OCC)OCC", "[CH3][CH2]P", "31P")
    assert abs(j - 20.0) <= TOL_HZ


def test_hexamethylphosphoramide_n_methyls():
    # hexamethylphosphoramide N(CH3)2: d, 3J(P,N,C,H) 9.5 Hz (from memory)
    (count, j), = _couplings("CN(C)P(=O)(N(C)C)N(C)C", "[CH3]NP", "31P")
    assert count == 1 and abs(j - 9.5) <= TOL_HZ


def test_phosphorus_classes():
    cases = {"CP(C)(C)=O": "phosphine_oxide", "COP(C)(=O)OC": "phosphonate", "CP(C)C": "phosphine",
             "C[P+](C)(C)C": "phosphonium", "COP(=O)(OC)OC": "phosphate", "COP(C)(=O)C": "phosphinate",
             "COP(OC)OC": "phosphite", "C[P+](C)(C)[O-]": "phosphine_oxide"}
    for smiles, kind in cases.items():
        mol = Chem.MolFromSmiles(smiles)
        p = next(a for a in mol.GetAtoms() if a.GetSymbol() == "P")
        assert phosphorus_class(p) == kind, smiles


# ------------------------------------------------------------------------------ mechanics
def test_molecules_without_f_or_p_have_none():
    system = predict_spin_system("CCOC(=O)C")
    assert all(site == () for site in system.x_couplings)
    assert predict_x_couplings(Chem.AddHs(Chem.MolFromSmiles("CCO")), None) == {}


def test_exchangeable_protons_get_no_x_coupling():
    system = predict_spin_system("OCC(F)(F)F")
    for site, x in zip(system.sites, system.x_couplings, strict=True):
        if site.exchangeable:
            assert x == ()


def test_site_couplings_group_equal_values_binomially():
    per_h = {1: [("19F", 9, 8.8), ("19F", 10, 8.7), ("19F", 11, 8.9), ("31P", 12, 2.0)],
             2: [("19F", 9, 8.8), ("19F", 10, 8.8), ("19F", 11, 8.8), ("31P", 12, 2.0)]}
    assert site_x_couplings([(1, 2)], per_h) == ((("19F", 3, 8.8), ("31P", 1, 2.0)),)


def test_decoupling_drops_only_the_named_nucleus():
    sites = (ProtonSite(atoms=(0, 1), shift_ppm=4.0, shift_sd_ppm=0.1),)
    system = SpinSystem(smiles="OCC(F)(F)F", sites=sites, j_hz=np.zeros((1, 1)),
                        x_couplings=((("19F", 3, 8.8), ("31P", 1, 5.0)),))
    assert without_x_couplings(system, "19F").x_couplings == ((("31P", 1, 5.0),),)
    assert without_x_couplings(system, ["F19", "31p"]).x_couplings == ((),)
    assert without_x_couplings(system, ()) is system
    assert check_nuclei(["19F", "f", "{19F}", "P31"]) == ("19F", "31P")
    with pytest.raises(InputError, match="13C"):
        check_nuclei("13C")


@pytest.mark.parametrize("bad, message", [
    (((("19F", 3, 8.8),), ()), "expected 1 entries"),
    (((("13C", 1, 8.8),),), "nucleus"),
    (((("19F", 0, 8.8),),), "n_equivalent"),
    (((("19F", 1, float("nan")),),), "finite"),
    (((("19F", 1),),), "expected \\(nucleus"),
])
def test_spin_system_checks_its_x_couplings(bad, message):
    sites = (ProtonSite(atoms=(0, 1), shift_ppm=4.0, shift_sd_ppm=0.1),)
    with pytest.raises(InputError, match=message):
        SpinSystem(smiles="OCC(F)(F)F", sites=sites, j_hz=np.zeros((1, 1)), x_couplings=bad)


def test_spin_system_without_x_couplings_has_empty_sites():
    sites = (ProtonSite(atoms=(0,), shift_ppm=4.0, shift_sd_ppm=0.1),
             ProtonSite(atoms=(1,), shift_ppm=2.0, shift_sd_ppm=0.1))
    system = SpinSystem(smiles="CC", sites=sites, j_hz=np.zeros((2, 2)))
    assert system.x_couplings == ((), ())
