"""Conformers that E2 needs: both chairs built on purpose, twist-boats, staggered rotamers, their cost."""

from __future__ import annotations

import pytest
from rdkit import Chem
from rdkit.Chem import rdCIPLabeler

from predictors.antiperiplanar import add_ring_forms, embed_conformers, find_periplanar
from predictors.products import enumerate_products
from predictors.ring_forms import build_ring_forms, chair_sign, ring_form, saturated_six_rings
from tests.predictors.product_priors import canon as _canon
from tests.predictors.product_priors import prior as _prior
from tests.predictors.product_priors import products as _products
from tests.predictors.stereo_checks import same_face

# (1R,2S,5R)-menthyl chloride and its C1 epimer (1S,2S,5R)-neomenthyl chloride: the chlorides of
# menthol and neomenthol, (1R,2S,5R)- and (1S,2S,5R)-2-isopropyl-5-methylcyclohexanol (common
# practice; the descriptors are checked below with RDKit's CIP labeller).
MENTHYL = "CC(C)[C@@H]1CC[C@@H](C)C[C@H]1Cl"
NEOMENTHYL = "CC(C)[C@@H]1CC[C@@H](C)C[C@@H]1Cl"
MENTH_2_ENE = "CC(C)[C@H]1C=C[C@H](C)CC1"  # less substituted: C=C away from the isopropyl
MENTH_3_ENE = "CC(C)C1=CC[C@H](C)CC1"  # more substituted: C=C towards the isopropyl
TRANS_BROMIDE = "C[C@@H]1CCCC[C@H]1Br"  # trans-1-bromo-2-methylcyclohexane
CIS_BROMIDE = "C[C@H]1CCCC[C@H]1Br"
CIS_TOSYLATE = "CC(C)(C)[C@H]1CC[C@@H](OS(=O)(=O)c2ccc(C)cc2)CC1"  # cis-4-tert-butylcyclohexyl tosylate
TRANS_TOSYLATE = "CC(C)(C)[C@H]1CC[C@H](OS(=O)(=O)c2ccc(C)cc2)CC1"


def _ring_labels(smiles: str) -> dict[str, str]:
    """CIP label of the ring carbon bearing Cl (C1), isopropyl (C2) and methyl (C5)."""
    mol = Chem.MolFromSmiles(smiles)
    rdCIPLabeler.AssignCIPLabels(mol)
    out = {}
    for atom in mol.GetAtoms():
        if not atom.HasProp("_CIPCode"):
            continue
        outside = [n for n in atom.GetNeighbors() if not n.IsInRing()]
        if outside[0].GetSymbol() == "Cl":
            out["C1"] = atom.GetProp("_CIPCode")
        elif outside[0].GetDegree() == 3:
            out["C2"] = atom.GetProp("_CIPCode")
        else:
            out["C5"] = atom.GetProp("_CIPCode")
    return out


def test_stereo_descriptors_of_the_menthyl_test_molecules():
    assert _ring_labels(MENTHYL) == {"C1": "R", "C2": "S", "C5": "R"}
    assert _ring_labels(NEOMENTHYL) == {"C1": "S", "C2": "S", "C5": "R"}


def test_cis_and_trans_of_the_ring_test_molecules():
    # trans-/cis-1-bromo-2-methylcyclohexane: C2 is atom 1, C1 atom 6; 4-tert-butylcyclohexyl
    # tosylates: C4 atom 4, C1 atom 7 (read from RDKit 3D coordinates).
    assert not same_face(TRANS_BROMIDE, 1, 6) and same_face(CIS_BROMIDE, 1, 6)
    assert same_face(CIS_TOSYLATE, 4, 7) and not same_face(TRANS_TOSYLATE, 4, 7)


def test_both_chairs_are_built_and_the_flipped_menthyl_chair_costs_a_few_kcal():
    # Both chairs of menthyl chloride, each at its best side-chain rotamers. The flipped chair puts
    # Cl, isopropyl and methyl axial: A-values about 0.5 + 2.2 + 1.7 kcal/mol (from memory), and the
    # issue's estimate is 4-6 kcal/mol.
    mol = Chem.AddHs(Chem.MolFromSmiles(MENTHYL))
    ring = saturated_six_rings(mol, [9])[0]
    forms = build_ring_forms(mol, ring, seed=3)
    assert [f for _, _, f in forms] == ["chair", "chair"]
    assert {chair_sign(m, ring) for m, _, _ in forms} == {1, -1}
    energies = sorted(e for _, e, _ in forms)
    assert 3.0 < energies[1] - energies[0] < 7.0


def test_menthyl_chloride_gives_only_the_less_substituted_alkene_by_anti_e2():
    # Menthyl chloride + ethoxide: 2-menthene only; the single trans-diaxial H appears after the ring
    # flip that puts Cl, isopropyl and methyl axial (Hughes, Ingold et al., J. Chem. Soc. 1948;
    # textbook case, from memory). The more substituted alkene stays listed, negligible.
    products = _products(MENTHYL, "ethoxide")
    alkenes = [c for c in products.candidates if "E2" in c.pathways]
    assert alkenes[0].smiles == _canon(MENTH_2_ENE)
    assert _prior(products, MENTH_3_ENE) < 1e-3 * _prior(products, MENTH_2_ENE)
    anti = [r for r in products.beta_hydrogens if r.reachable]
    assert len(anti) == 1 and anti[0].conformer == "flipped chair" and anti[0].ring_flip
    assert 3.0 < anti[0].energy_above_min_kcal < 7.0
    assert any("ring flip" in n for n in alkenes[0].notes)


def test_neomenthyl_chloride_gives_both_alkenes_more_substituted_first():
    # Neomenthyl chloride: Cl axial in the stable chair, trans-diaxial H on both sides, about 3:1
    # 3-menthene : 2-menthene with ethoxide (Hughes, Ingold et al. 1948; from memory).
    products = _products(NEOMENTHYL, "ethoxide")
    more, less = _prior(products, MENTH_3_ENE), _prior(products, MENTH_2_ENE)
    assert more > less > 0.02
    anti = [r for r in products.beta_hydrogens if r.reachable]
    assert len(anti) == 2 and all(r.conformer == "chair" and not r.ring_flip for r in anti)


def test_trans_and_cis_1_bromo_2_methylcyclohexane():
    # trans: the C2-H is never anti to Br (trans-diaxial needs CH3 axial and then C2-H equatorial), so
    # only 3-methylcyclohexene, through the flipped chair; cis: Br axial in the stable chair with anti
    # H on both sides, 1-methylcyclohexene first (common practice, shared/references.md section 8).
    trans, cis = _products(TRANS_BROMIDE, "ethoxide"), _products(CIS_BROMIDE, "ethoxide")
    assert _prior(trans, "CC1=CCCCC1") < 1e-3 * _prior(trans, "C[C@H]1C=CCCC1")
    assert [r.conformer for r in trans.beta_hydrogens if r.reachable] == ["flipped chair"]
    assert _prior(cis, "CC1=CCCCC1") > _prior(cis, "C[C@@H]1C=CCCC1") > 0.0
    assert all(not r.ring_flip for r in cis.beta_hydrogens if r.reachable)


def test_locked_tert_butyl_tosylates_cis_fast_trans_pays_a_cost_it_cannot_afford():
    # cis-4-tert-butylcyclohexyl tosylate: OTs axial in the locked chair, anti H on both sides; the
    # trans isomer has OTs equatorial and must put tert-butyl axial or twist the ring (Winstein and
    # Holness, J. Am. Chem. Soc. 1955; cis eliminates far faster; from memory).
    cis, trans = _products(CIS_TOSYLATE, "ethoxide"), _products(TRANS_TOSYLATE, "ethoxide")
    cis_anti = [r for r in cis.beta_hydrogens if r.reachable]
    assert len(cis_anti) == 2 and all(r.energy_above_min_kcal < 0.5 and not r.ring_flip for r in cis_anti)
    trans_anti = [r for r in trans.beta_hydrogens if r.reachable]
    assert trans_anti and all(r.ring_flip for r in trans.beta_hydrogens if r.reachable)
    cost = min(r.energy_above_min_kcal for r in trans_anti)
    assert cost > 5.0  # exp(-5 / RT) < 2e-4 at 25 C: not paid at a useful rate
    assert any("E2 at atom" in n and "fold slower" in n for n in trans.notes)
    assert not any("E2 at atom" in n for n in cis.notes)


def test_twist_boats_are_built_only_when_no_chair_puts_the_leaving_group_axial():
    for smiles, expect_boats in ((TRANS_TOSYLATE, True), (CIS_TOSYLATE, False)):
        mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
        lg = next(a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() == "O" and a.GetDegree() == 2)
        alpha = next(n.GetIdx() for n in mol.GetAtomWithIdx(lg).GetNeighbors() if n.GetSymbol() == "C")
        embedded = embed_conformers(mol, n_conformers=2, seed=5)
        confs = add_ring_forms(embedded, around=[alpha], lg_idx=lg, seed=5)
        ring = saturated_six_rings(confs.mol, [alpha])[0]
        built = [cid for cid, how in zip(confs.conf_ids, confs.forms, strict=True) if how == "built"]
        boats = [cid for cid in built if ring_form(confs.mol, ring, cid) == "twist-boat"]
        assert bool(boats) == expect_boats, smiles


def test_every_staggered_rotamer_of_an_open_chain_is_reached():
    # 2-bromobutane: each C3-H has its own staggered rotamer anti to Br, both cheap (common practice:
    # gauche/anti differences are about 1 kcal/mol).
    mol = Chem.AddHs(Chem.MolFromSmiles("C[C@@H](Br)CC"))
    confs = embed_conformers(mol, n_conformers=4, seed=2)
    hs = [n.GetIdx() for n in confs.mol.GetAtomWithIdx(3).GetNeighbors() if n.GetAtomicNum() == 1]
    results = [find_periplanar(confs, h_idx=h, beta_idx=3, alpha_idx=1, lg_idx=2) for h in hs]
    assert all(r.reachable and r.conformer == "rotamer" and abs(r.dihedral_deg) > 160 for r in results)
    assert all(r.strain_kcal < 3.0 for r in results)
    assert results[0].cis_pairs != results[1].cis_pairs  # the two rotamers give (E) and (Z)


def test_reports_repeat_for_a_seed():
    first = enumerate_products(MENTHYL, reagent="ethoxide", seed=11).beta_hydrogens
    again = enumerate_products(MENTHYL, reagent="ethoxide", seed=11).beta_hydrogens
    def key(report):
        return report.h_idx, report.conformer, report.reachable

    assert [key(r) for r in first] == [key(r) for r in again]
    assert [r.energy_above_min_kcal for r in first] == pytest.approx([r.energy_above_min_kcal for r in again],
                                                                     abs=0.05)
