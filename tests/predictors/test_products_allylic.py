"""Allylic transposition (SN1', SN2'), 1,4-elimination, and second eliminations with excess base."""

from __future__ import annotations

from rdkit import Chem
from rdkit.Chem import rdCIPLabeler

from tests.predictors.product_priors import canon as _canon
from tests.predictors.product_priors import prior as _prior
from tests.predictors.product_priors import products as _products

DL_STILBENE_DIBROMIDE = "Br[C@@H](c1ccccc1)[C@@H](Br)c1ccccc1"  # (S,S): one enantiomer of the racemate
MESO_STILBENE_DIBROMIDE = "Br[C@@H](c1ccccc1)[C@H](Br)c1ccccc1"  # (R,S)
DL_DIBROMOBUTANE = "C[C@@H](Br)[C@H](Br)C"  # (2R,3R)-2,3-dibromobutane


def _cip(smiles: str) -> list[str]:
    mol = Chem.MolFromSmiles(smiles)
    rdCIPLabeler.AssignCIPLabels(mol)
    return sorted(a.GetProp("_CIPCode") for a in mol.GetAtoms() if a.HasProp("_CIPCode"))


def test_stereo_descriptors_of_the_dibromides():
    assert _cip(DL_STILBENE_DIBROMIDE) == ["S", "S"] and _cip(MESO_STILBENE_DIBROMIDE) == ["R", "S"]
    assert _cip(DL_DIBROMOBUTANE) == ["R", "R"]


def test_prenyl_chloride_solvolysis_is_captured_at_both_ends_of_the_allylic_cation():
    # 1-chloro-3-methylbut-2-ene in water: one delocalised cation, water adds mostly at the tertiary end
    # (2-methylbut-3-en-2-ol, SN1') and less at the primary end (common practice; about 85:15, from memory).
    products = _products("CC(C)=CCCl", "water")
    tertiary, primary = _prior(products, "C=CC(C)(C)O"), _prior(products, "CC(C)=CCO")
    assert tertiary > primary > 0.0
    top = products.candidates[0]
    assert top.smiles == _canon("C=CC(C)(C)O") and "SN1'" in top.pathways


def test_sn2_prime_takes_over_at_a_hindered_allylic_carbon():
    # Azide cannot reach the tertiary carbon of 3-chloro-3-methylbut-1-ene from the back; it attacks
    # the CH2= end (SN2'), while prenyl chloride is substituted directly (common practice).
    hindered, open_chain = _products("C=CC(C)(C)Cl", "azide"), _products("CC(C)=CCCl", "azide")
    prenyl_azide = _canon("CC(C)=CCN=[N+]=[N-]")
    assert "SN2'" in {c.smiles: c for c in hindered.candidates}[prenyl_azide].pathways
    direct = {c.smiles: c for c in open_chain.candidates}
    assert direct[prenyl_azide].pathways == ("SN2",)
    transposed = [c for c in open_chain.candidates if "SN2'" in c.pathways]
    assert transposed and transposed[0].prior < 0.1 * direct[prenyl_azide].prior


def test_crotyl_bromide_with_a_bulky_base_gives_butadiene_by_1_4_elimination():
    # No beta-H on the CH2Br side of the C=C: the base takes an H two carbons further, 1,3-butadiene
    # (vinylogous E2, common practice).
    products = _products("C/C=C/CBr", "tert-butoxide")
    top = products.candidates[0]
    assert top.smiles == _canon("C=CC=C") and "E2" in top.pathways
    assert any("1,4-elimination" in n for n in top.notes)


def test_vicinal_dibromide_with_excess_amide_gives_alkyne_and_diene():
    # 2,3-dibromobutane + NaNH2 (excess): 2-butyne by two eliminations, 1,3-butadiene when the first goes
    # away from the second bromine; the vinyl bromide of the first step stays listed (common practice).
    products = _products(DL_DIBROMOBUTANE, "NaNH2")
    assert _prior(products, "CC#CC") > _prior(products, "C/C=C(/C)Br") > 0.0
    assert _prior(products, "C=CC=C") > 0.05
    alkyne = {c.smiles: c for c in products.candidates}[_canon("CC#CC")]
    assert any("excess base" in n for n in alkyne.notes)


def test_vinyl_bromide_geometry_from_anti_elimination_decides_how_fast_the_alkyne_forms():
    # The racemic stilbene dibromide gives (Z)-bromostilbene, whose H is anti to Br: diphenylacetylene
    # forms readily with hot KOH; the meso isomer gives (E)-bromostilbene, whose H is cis to Br, and
    # stops there (common practice; anti E2 twice).
    racemic = _products(DL_STILBENE_DIBROMIDE, "KOH", 150.0)
    meso = _products(MESO_STILBENE_DIBROMIDE, "KOH", 150.0)
    tolan = "C(#Cc1ccccc1)c1ccccc1"
    assert racemic.candidates[0].smiles == _canon(tolan)
    assert meso.candidates[0].smiles == _canon("Br/C(=C/c1ccccc1)c1ccccc1")
    assert _prior(racemic, tolan) > 5 * _prior(meso, tolan)


def test_no_second_elimination_without_a_strong_base():
    products = _products(DL_DIBROMOBUTANE, "sodium azide")
    assert _prior(products, "CC#CC") == 0.0 and _prior(products, "C=CC=C") == 0.0


def test_geminal_dibromide_with_excess_amide_gives_vinyl_bromides_and_the_alkyne():
    # 1,1-dibromobutane + NaNH2: HBr lost once to the 1-bromobut-1-enes (E over Z from the anti
    # rotamers), again to but-1-yne; SN2 at a CHBr2 carbon is slow (common practice).
    products = _products("CCCC(Br)Br", "NaNH2")
    e_vinyl, z_vinyl = _prior(products, "CC/C=C/Br"), _prior(products, "CC/C=C\\Br")
    assert e_vinyl > z_vinyl > 0.0 and _prior(products, "C#CCC") > 0.05
    assert products.candidates[0].smiles == _canon("CC/C=C/Br")
