"""Syn (Ei) eliminations, alcohol-activating reagents, silver, and amines that alkylate."""

from __future__ import annotations

import pytest
from rdkit import Chem
from rdkit.Chem import rdCIPLabeler

from predictors.errors import ChemistryError, InputError
from predictors.products import check_reagent_examples, enumerate_products
from tests.predictors.product_priors import canon as _canon
from tests.predictors.product_priors import prior as _prior
from tests.predictors.product_priors import products as _products
from tests.predictors.stereo_checks import same_face

CIS_OXIDE = "C[C@H]1CCCC[C@H]1[N+](C)(C)[O-]"  # cis-2-methylcyclohexyl dimethylamine N-oxide
TRANS_OXIDE = "C[C@@H]1CCCC[C@H]1[N+](C)(C)[O-]"
MENTHOL = "CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O"  # (1R,2S,5R)
NEOMENTHOL = "CC(C)[C@@H]1CC[C@@H](C)C[C@@H]1O"  # (1S,2S,5R)
MENTH_2_ENE = "CC(C)[C@H]1C=C[C@H](C)CC1"
MENTH_3_ENE = "CC(C)C1=CC[C@H](C)CC1"


def test_the_ring_test_molecules_are_cis_and_trans():
    assert same_face(CIS_OXIDE, 1, 6) and not same_face(TRANS_OXIDE, 1, 6)


def test_cope_elimination_needs_a_cis_beta_hydrogen():
    # Syn elimination in a cyclohexane removes only a beta-H cis to the leaving group (common practice;
    # the stereospecificity opposite to E2): cis-2-methyl has no cis H on C2, so only
    # 3-methylcyclohexene; trans-2-methyl has one on C2 and on C6, so both alkenes.
    cis, trans = _products(CIS_OXIDE, "heat", 130.0), _products(TRANS_OXIDE, "heat", 130.0)
    assert _prior(cis, "CC1=CCCCC1") < 0.02 * _prior(cis, "C[C@@H]1C=CCCC1")
    assert cis.candidates[0].pathways == ("Ei",)
    assert _prior(trans, "CC1=CCCCC1") > 0.1 and _prior(trans, "C[C@H]1C=CCCC1") > 0.1
    assert all(r.mode == "syn" for r in cis.beta_hydrogens)


def test_syn_and_anti_eliminations_of_one_diastereomer_give_opposite_geometries():
    # Same relative configuration, E2 of the bromide versus Cope elimination of the N-oxide: the
    # substituents that face each other differ by 180 deg of rotation (common practice).
    e2 = _products("C[C@@H](Br)[C@@H](C)CC", "ethoxide")
    ei = _products("C[C@@H]([N+](C)(C)[O-])[C@@H](C)CC", "heat", 130.0)

    def geometry(products, tag):
        return max((c for c in products.candidates if tag in c.pathways and c.regio == "more substituted"),
                   key=lambda c: c.prior).geometry

    assert {geometry(e2, "E2"), geometry(ei, "Ei")} == {"E", "Z"}
    assert geometry(ei, "Ei") == "E"


def test_cope_favours_the_less_substituted_alkene_in_an_open_chain():
    # Hofmann-like orientation of amine oxide pyrolysis (common practice).
    products = _products("C[C@@H]([N+](C)(C)[O-])[C@@H](C)CC", "heat", 130.0)
    alkenes = [c for c in products.candidates if "Ei" in c.pathways]
    assert alkenes[0].regio == "less substituted"


def test_sec_butyl_acetate_pyrolysis_order():
    # 2-butyl acetate at about 450 C: 1-butene > (E)-2-butene > (Z)-2-butene (DePuy and King,
    # Chem. Rev. 1960, review of pyrolytic cis eliminations; about 57:28:15, from memory).
    products = _products("CCC(C)OC(C)=O", "heat", 450.0)
    one, trans, cis = (_prior(products, s) for s in ("C=CCC", "C/C=C/C", "C/C=C\\C"))
    assert one > trans > cis > 0.0


def test_a_pyrolysis_too_cold_leaves_starting_material():
    products = _products("CCC(C)OC(C)=O", "heat", 25.0)
    assert products.candidates[0].pathways == ("starting material",)
    assert any("little reaction expected" in n for n in products.notes)


def test_selenide_with_an_oxidant_eliminates_at_room_temperature():
    # Selenide -> selenoxide (H2O2) -> syn elimination below room temperature; E over Z
    # (common practice). MMFF94 has no selenium: sulfur stands in for the 3D work.
    products = _products("CCC(C)[Se]c1ccccc1", "H2O2")
    assert _prior(products, "C/C=C/C") > _prior(products, "C/C=C\\C")
    assert all(c.pathways in (("Ei",), ("starting material",)) for c in products.candidates)
    assert any(n.startswith("caution (H2O2)") for n in products.notes)


def test_chugaev_of_menthyl_xanthate_gives_both_menthenes():
    # The six-membered transition state reaches a gauche H, so menthyl xanthate gives 2-menthene and
    # 3-menthene, 2-menthene major (about 70:30; Chugaev's menthyl xanthate, textbook case, from memory).
    products = _products("CC(C)[C@@H]1CC[C@@H](C)C[C@H]1OC(=S)SC", "heat", 200.0)
    assert _prior(products, MENTH_2_ENE) > _prior(products, MENTH_3_ENE) > 0.1


def test_pocl3_dehydration_is_anti_e2_without_rearrangement():
    # POCl3/pyridine on 3,3-dimethylbutan-2-ol: E2 of the activated alcohol, no cation, so no methyl
    # shift; the acid gives the shifted 2,3-dimethylbut-2-ene (common practice).
    pocl3 = _products("CC(O)C(C)(C)C", "POCl3")
    acid = _products("CC(O)C(C)(C)C", "H2SO4", 80.0)
    assert pocl3.candidates[0].smiles == _canon("C=CC(C)(C)C") and pocl3.candidates[0].pathways == ("E2",)
    assert _prior(pocl3, "CC(C)=C(C)C") == 0.0
    assert acid.candidates[0].smiles == _canon("CC(C)=C(C)C")
    assert any(n.startswith("caution (POCl3)") for n in pocl3.notes)


def test_pocl3_dehydration_of_menthol_and_neomenthol_follows_the_trans_diaxial_rule():
    # Like the chlorides (anti-periplanar E2; common practice): menthol -> 2-menthene only,
    # neomenthol -> 3-menthene first.
    menthol, neomenthol = _products(MENTHOL, "POCl3"), _products(NEOMENTHOL, "POCl3")
    assert _prior(menthol, MENTH_3_ENE) < 1e-3 * _prior(menthol, MENTH_2_ENE)
    assert _prior(neomenthol, MENTH_3_ENE) > _prior(neomenthol, MENTH_2_ENE) > 0.0


def test_burgess_dehydration_is_syn():
    products = _products("CCC(C)(C)O", "Burgess reagent", 50.0)
    alkenes = [c for c in products.candidates if c.pathways != ("starting material",)]
    assert alkenes and all(c.pathways == ("Ei",) for c in alkenes)


def test_mitsunobu_inverts_the_carbinol_carbon():
    # (S)-octan-2-ol -> (R)-octan-2-yl 4-nitrobenzoate: SN2 with inversion; O stays the top CIP
    # priority, so the descriptor flips (Mitsunobu, Synthesis 1981; common practice).
    def cip(smiles):
        mol = Chem.MolFromSmiles(smiles)
        rdCIPLabeler.AssignCIPLabels(mol)
        return [a.GetProp("_CIPCode") for a in mol.GetAtoms() if a.HasProp("_CIPCode")]

    assert cip("CCCCCC[C@H](C)O") == ["S"]
    top = _products("CCCCCC[C@H](C)O", "Mitsunobu").candidates[0]
    assert top.pathways == ("SN2",) and "[N+](=O)[O-]" in top.smiles and cip(top.smiles) == ["R"]


def test_silver_ionises_a_neopentyl_bromide_with_methyl_shift():
    # AgNO3 in ethanol: the primary cation is not formed freely; a 1,2-methyl shift gives the
    # tert-amyl cation, trapped by ethanol or deprotonated (common practice).
    products = _products("CC(C)(C)CBr", "AgNO3")
    top = products.candidates[0]
    assert top.smiles == _canon("CCOC(C)(C)CC") and "SN1" in top.pathways
    assert _prior(products, "CC=C(C)C") > 0.05
    assert any("1,2-methyl shift" in n for n in top.notes)


@pytest.mark.parametrize("reagent", ["triethylamine", "DBU"])
def test_amines_alkylate_a_primary_unhindered_carbon_as_a_minor_path(reagent):
    # Tertiary amines and DBU quaternise primary alkyl halides (Menshutkin reaction; common practice),
    # listed beside the elimination; not at a secondary or neopentyl-like carbon.
    primary = _products("CCCCBr", reagent)
    salts = [c for c in primary.candidates if c.pathways == ("SN2",)]
    assert len(salts) == 1 and "+" in salts[0].smiles
    assert 0.0 < salts[0].prior < max(c.prior for c in primary.candidates if "E2" in c.pathways)
    for hindered in ("CCC(C)Br", "CC(C)(C)CBr"):
        try:
            products = _products(hindered, reagent)
        except ChemistryError:
            continue
        assert not any("SN2" in c.pathways for c in products.candidates), hindered


def test_every_reagent_example_shows_its_path_and_no_negative_does():
    assert check_reagent_examples() == ()


def test_heat_alone_does_not_remove_a_halide_and_the_range_is_checked():
    with pytest.raises(ChemistryError, match="heat alone does not remove a bromide"):
        enumerate_products("CCC(C)Br", reagent="heat", temp_c=200.0)
    with pytest.raises(InputError, match="temp_c"):
        enumerate_products("CCC(C)OC(C)=O", reagent="heat", temp_c=700.0)


def test_selenium_substrates_carry_a_caution():
    products = _products("CCC(C)[Se]c1ccccc1", "H2O2")
    assert any(n.startswith("caution (selenide") and "toxic" in n for n in products.notes)
