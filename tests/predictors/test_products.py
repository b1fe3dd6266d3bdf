"""Product enumeration: pathways, stereochemistry from 3D geometry, priors, bad input."""

from __future__ import annotations

import math

import pytest
from rdkit import Chem
from rdkit.Chem import rdCIPLabeler

from predictors.core import PATHWAYS
from predictors.errors import ChemistryError, InputError
from predictors.products import ProductSet, enumerate_products


def _by_smiles(products: ProductSet) -> dict:
    return {c.smiles: c for c in products.candidates}


def _canon(smiles: str) -> str:
    return Chem.MolToSmiles(Chem.MolFromSmiles(smiles))


def _double_bond_cip(smiles: str) -> set[str]:
    """CIP labels (E/Z) of the stereogenic C=C bonds, read back from the output SMILES."""
    mol = Chem.MolFromSmiles(smiles)
    rdCIPLabeler.AssignCIPLabels(mol)
    return {b.GetProp("_CIPCode") for b in mol.GetBonds() if b.HasProp("_CIPCode")}


def _atom_cip(smiles: str) -> list[str]:
    mol = Chem.MolFromSmiles(smiles)
    rdCIPLabeler.AssignCIPLabels(mol)
    return [a.GetProp("_CIPCode") for a in mol.GetAtoms() if a.HasProp("_CIPCode")]


def _alkenes(products: ProductSet) -> list:
    return [c for c in products.candidates if c.regio is not None]


# ------------------------------------------------------------------ orientation (Zaitsev / Hofmann)

def test_tertiary_bromide_with_ethoxide_ranks_more_substituted_alkene_first():
    # Common practice (shared/references.md section 8): small strong base -> Zaitsev.
    products = enumerate_products("CCCCC(C)(C)Br", reagent="ethoxide")
    top = products.candidates[0]
    assert top.smiles == _canon("CCCC=C(C)C") and top.regio == "more substituted"
    assert "E2" in top.pathways


def test_tertiary_bromide_with_tert_butoxide_ranks_less_substituted_alkene_first():
    # Common practice (references.md section 8): bulky base -> Hofmann.
    products = enumerate_products("CCCCC(C)(C)Br", reagent="KOtBu")
    top = products.candidates[0]
    assert top.smiles == _canon("C=C(C)CCCC") and top.regio == "less substituted"
    assert _canon("CCCC=C(C)C") in _by_smiles(products)  # the Zaitsev alkene is kept, lower prior


def test_ammonium_leaving_group_gives_less_substituted_alkene():
    # Common practice (references.md section 8): charged leaving group -> Hofmann.
    products = enumerate_products("CCCCC(C)[N+](C)(C)C.[I-]", reagent="hydroxide", temp_c=100.0)
    top = products.candidates[0]
    assert top.smiles == _canon("C=CCCCC") and top.regio == "less substituted"
    assert any("[I-]" in n for n in products.notes)
    assert {_canon("C/C=C/CCC"), _canon("C/C=C\\CCC")} <= set(_by_smiles(products))


# ------------------------------------------------------------------ stereospecific E2

@pytest.mark.parametrize("first, second", [
    ("C[C@@H](Br)[C@@H](C)CC", "C[C@@H](Br)[C@H](C)CC"),       # 2-bromo-3-methylpentane diastereomers
    ("C[C@@H](OS(C)(=O)=O)[C@@H](C)c1ccccc1", "C[C@@H](OS(C)(=O)=O)[C@H](C)c1ccccc1"),  # mesylates
])
def test_acyclic_diastereomers_give_opposite_alkene_geometries(first, second):
    # Anti-periplanar E2 is stereospecific (common practice, references.md section 8).
    geoms = []
    for smiles in (first, second):
        products = enumerate_products(smiles, reagent="ethoxide")
        best = max((c for c in products.candidates if c.regio == "more substituted"), key=lambda c: c.prior)
        cip = _double_bond_cip(best.smiles)
        assert cip == {best.geometry}
        geoms.append(best.geometry)
        # The other geometry is listed as a minor syn path, never dropped.
        other = [c for c in products.candidates if c.regio == "more substituted" and c is not best]
        assert other and all(c.prior < 0.1 * best.prior for c in other)
        assert any("syn" in n for c in other for n in c.notes)
    assert set(geoms) == {"E", "Z"}


def test_meso_stilbene_dibromide_gives_alkene_with_phenyls_cis():
    # meso-1,2-dibromo-1,2-diphenylethane + base -> (E)-1-bromo-1,2-diphenylethene (phenyls cis);
    # the racemic isomer gives the (Z) isomer (common practice; textbook anti-E2 example, from memory).
    meso = enumerate_products("Br[C@@H](c1ccccc1)[C@H](Br)c1ccccc1", reagent="ethoxide")
    racemic = enumerate_products("Br[C@@H](c1ccccc1)[C@@H](Br)c1ccccc1", reagent="ethoxide")
    assert _canon("Br/C(=C/c1ccccc1)c1ccccc1") == meso.candidates[0].smiles
    assert meso.candidates[0].geometry == "E"
    assert racemic.candidates[0].geometry == "Z"


def test_cyclohexyl_trans_diaxial_gives_less_substituted_alkene():
    # trans-1-chloro-2-methylcyclohexane: the only H anti (trans-diaxial) to Cl is on C6, so E2 gives
    # 3-methylcyclohexene, not the Zaitsev 1-methylcyclohexene (common practice, references.md sec. 8).
    products = enumerate_products("C[C@@H]1CCCC[C@H]1Cl", reagent="ethoxide")
    alkenes = _alkenes(products)
    assert alkenes[0].smiles == _canon("C[C@H]1C=CCCC1") and alkenes[0].regio == "less substituted"
    assert products.candidates[0] is alkenes[0]
    assert any("ring flip" in n for n in alkenes[0].notes)
    zaitsev = _by_smiles(products)[_canon("CC1=CCCCC1")]
    assert zaitsev.prior < 0.05 * alkenes[0].prior  # listed, never dropped


def test_cis_cyclohexyl_isomer_follows_zaitsev():
    # cis isomer: Cl axial with anti H on both sides -> more substituted alkene (common practice).
    products = enumerate_products("C[C@H]1CCCC[C@H]1Cl", reagent="ethoxide")
    assert _alkenes(products)[0].smiles == _canon("CC1=CCCCC1")


def test_undefined_configuration_lists_both_geometries():
    products = enumerate_products("CC(Br)C(C)CC", reagent="ethoxide")
    smiles = set(_by_smiles(products))
    assert {_canon("C/C=C(/C)CC"), _canon("C/C=C(\\C)CC")} <= smiles
    assert any("both geometries" in n for c in products.candidates for n in c.notes)


def test_e_alkene_ranks_above_z_for_a_simple_secondary_bromide():
    # Common practice: E over Z (the anti conformer leading to Z has a gauche methyl-methyl contact).
    cands = _by_smiles(enumerate_products("CCC(C)Br", reagent="ethoxide"))
    assert cands[_canon("C/C=C/C")].prior > 2 * cands[_canon("C/C=C\\C")].prior


# ------------------------------------------------------------------ E1 with shifts, E1cB, SN2, SN1

def test_secondary_alcohol_next_to_quaternary_carbon_gives_methyl_shifted_alkene():
    # Common practice (references.md section 8): 1,2-methyl shift to the tertiary cation, then the
    # most substituted alkene (3,3-dimethylpentan-2-ol -> 2,3-dimethylpent-2-ene).
    products = enumerate_products("CC(O)C(C)(C)CC", reagent="H2SO4", temp_c=80.0)
    top = products.candidates[0]
    assert top.smiles == _canon("CCC(C)=C(C)C") and top.pathways == ("E1",)
    assert any("1,2-methyl shift" in n for n in top.notes)
    unshifted = _by_smiles(products)[_canon("C=CC(C)(C)CC")]
    assert unshifted.prior < top.prior and not any("shift" in n for n in unshifted.notes)


def test_beta_hydroxy_ketone_with_hydroxide_gives_e_enone_first():
    # Common practice (references.md section 8): E1cB to the conjugated enone, E major.
    products = enumerate_products("CC(C)C(O)CC(C)=O", reagent="NaOH")
    top = products.candidates[0]
    assert top.smiles == _canon("CC(=O)/C=C/C(C)C") and _double_bond_cip(top.smiles) == {"E"}
    assert top.pathways == ("E1cB",)
    cands = _by_smiles(products)
    assert cands[_canon("CC(=O)/C=C\\C(C)C")].geometry == "Z"
    deconjugated = cands[_canon("CC(=O)CC=C(C)C")]
    assert "E1cB" in deconjugated.pathways and "deconjugated isomer" in deconjugated.notes


def test_sn2_of_secondary_bromide_by_azide_inverts():
    # (S)-2-bromopentane -> (R)-2-azidopentane: Walden inversion; Br and N3 both rank first by CIP,
    # so the descriptor flips (common practice).
    assert _atom_cip("C[C@H](Br)CCC") == ["S"]
    products = enumerate_products("C[C@H](Br)CCC", reagent="sodium azide")
    top = products.candidates[0]
    assert top.pathways == ("SN2",) and "N=[N+]=[N-]" in top.smiles
    assert _atom_cip(top.smiles) == ["R"]
    assert top.label.endswith("inversion")


def test_sn2_label_names_inversion_only_for_a_configured_carbon():
    # a racemic (unspecified) or achiral carbon has no configuration to invert (common practice)
    for smiles in ("CC(Br)CCC", "BrCCCC"):
        products = enumerate_products(smiles, reagent="sodium azide").candidates
        sn2 = [c for c in products if c.pathways == ("SN2",)]
        assert sn2 and all("inversion" not in c.label and "inversion" not in c.rationale for c in sn2), smiles


def test_sn1_solvolysis_gives_both_configurations():
    # Tertiary bromide in water: SN1 through the planar cation, both configurations (common practice).
    products = enumerate_products("CCC[C@](C)(Br)CC", reagent="water")
    sn1 = [c for c in products.candidates if "SN1" in c.pathways]
    assert {c.smiles for c in sn1} == {_canon("CCC[C@](C)(O)CC"), _canon("CCC[C@@](C)(O)CC")}
    assert all("solvolysis by water" in c.notes for c in sn1)
    assert any("E1" in c.pathways for c in products.candidates)


def test_hydrogen_bromide_on_tertiary_alcohol_gives_the_bromide():
    products = enumerate_products("CCC(C)(C)O", reagent="HBr")
    assert products.candidates[0].smiles == _canon("CCC(C)(C)Br")
    assert products.candidates[0].pathways == ("SN1",)


def test_product_reachable_by_several_paths_appears_once_with_all_tags():
    products = enumerate_products("CCC(C)(C)Br", reagent="ethoxide", solvent="ethanol")
    smiles = [c.smiles for c in products.candidates]
    assert len(smiles) == len(set(smiles))
    assert _by_smiles(products)[_canon("CC=C(C)C")].pathways == ("E2", "E1")


# ------------------------------------------------------------------ bookkeeping and priors

def test_starting_material_is_a_component_and_priors_are_a_distribution():
    products = enumerate_products("CCC(C)Br", reagent="ethoxide")
    priors = [c.prior for c in products.candidates]
    assert priors == sorted(priors, reverse=True)
    assert all(0.0 <= p <= 1.0 for p in priors) and math.isclose(sum(priors), 1.0, abs_tol=1e-4)
    sm = _by_smiles(products)[_canon("CCC(C)Br")]
    assert sm.pathways == ("starting material",)
    for cand in products.candidates:
        assert cand.rationale and "\n" not in cand.rationale
        assert set(cand.pathways) <= set(PATHWAYS)


def test_higher_temperature_favours_elimination():
    # Common practice (references.md section 8).
    def share(temp_c):
        products = enumerate_products("CCC(C)Br", reagent="ethoxide", temp_c=temp_c)
        return sum(c.prior for c in products.candidates if "E2" in c.pathways)

    assert share(80.0) > share(25.0)


def test_several_leaving_groups_are_each_enumerated():
    products = enumerate_products("CC(Br)CCCCl", reagent="NaI")
    smiles = set(_by_smiles(products))
    assert {_canon("CC(I)CCCCl"), _canon("CC(Br)CCCI")} <= smiles
    assert any("2 leaving groups" in n for n in products.notes)


def test_no_beta_hydrogen_gives_substitution_only_with_a_note():
    products = enumerate_products("CC(C)(C)CBr", reagent="azide")
    paths = {p for c in products.candidates for p in c.pathways}
    assert paths == {"SN2", "starting material"}
    assert any("no beta-H" in n for n in products.notes)
    assert any("neopentyl" in n for c in products.candidates for n in c.notes)


def test_results_repeat_and_mol_input_is_accepted():
    first = enumerate_products("C[C@@H](Br)[C@@H](C)CC", reagent="ethoxide", seed=5)
    again = enumerate_products(Chem.MolFromSmiles("C[C@@H](Br)[C@@H](C)CC"), reagent="ethoxide", seed=5)
    assert [(c.smiles, c.prior) for c in first.candidates] == [(c.smiles, c.prior) for c in again.candidates]


# ------------------------------------------------------------------ bad input

@pytest.mark.parametrize("smiles, message", [
    ("CC(Br", "cannot parse"),
    ("CCCCO", "no leaving group"),
    ("CC[Sn](C)(C)CBr", "unsupported element"),
    ("[CH2]C(C)Br", "radicals"),
    ("C" * 101 + "Br", "heavy atoms"),
])
def test_bad_substrates_raise_a_clear_chemistry_error(smiles, message):
    with pytest.raises(ChemistryError, match=message):
        enumerate_products(smiles, reagent="ethoxide")


def test_no_beta_hydrogen_and_no_nucleophile_is_an_error():
    with pytest.raises(ChemistryError, match="no elimination or substitution path"):
        enumerate_products("CI", reagent="LDA")


@pytest.mark.parametrize("kwargs, message", [
    ({"reagent": "unobtainium"}, "unknown name"),
    ({"reagent": "ethoxide", "solvent": "lava"}, "unknown name"),
    ({"reagent": "ethoxide", "temp_c": 900.0}, "temp_c"),
    ({"reagent": "ethoxide", "temp_c": float("nan")}, "temp_c"),
])
def test_bad_conditions_raise_input_error(kwargs, message):
    with pytest.raises(InputError, match=message):
        enumerate_products("CCC(C)Br", **kwargs)


def test_achiral_substrate_lists_a_racemic_product_once():
    # cis-4-tert-butylcyclohexyl bromide is achiral; the two anti H give mirror-image alkenes, which
    # have one NMR spectrum and are listed once as the racemate (common practice).
    products = enumerate_products("CC(C)(C)[C@H]1CC[C@@H](Br)CC1", reagent="ethoxide")
    alkenes = [c for c in products.candidates if "E2" in c.pathways]
    assert len(alkenes) == 1
    assert any("racemate" in n for n in alkenes[0].notes)


def test_orientation_rationale_speaks_of_each_alkene():
    # under a Zaitsev rule the less substituted alkene is the disfavoured one, under the Hofmann
    # rule of a charged leaving group the more substituted one (common practice)
    def rationale(smiles, reagent, n_subst):
        alkenes = [c for c in enumerate_products(smiles, reagent=reagent).candidates if "E2" in c.pathways]
        return [c.rationale for c in alkenes if c.regio == n_subst]

    assert all("Zaitsev orientation disfavours this less substituted alkene" in r
               for r in rationale("CC(Br)CC", "ethoxide", "less substituted"))
    assert all("favours this more substituted alkene" in r
               for r in rationale("CC(Br)CC", "ethoxide", "more substituted"))
    assert all("Hofmann orientation favours this less substituted alkene" in r
               for r in rationale("CC([N+](C)(C)C)CC", "hydroxide", "less substituted"))
