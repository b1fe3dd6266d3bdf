"""3D anti-periplanar test: reachability, strain, trans-diaxial rings, geometry of the alkene."""

from __future__ import annotations

import pytest
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms

from predictors.antiperiplanar import add_ring_forms, embed_conformers, find_periplanar, is_axial, local_model
from predictors.errors import InputError

# trans- and cis-1-chloro-2-methylcyclohexane (atom 6 = C1 bearing Cl, 7 = Cl, 1 = C2, 5 = C6)
TRANS = "C[C@@H]1CCCC[C@H]1Cl"
CIS = "C[C@H]1CCCC[C@H]1Cl"


def _confs(smiles, n=6, *, site=None):
    """Embedded conformers; with ``site=(alpha, beta, lg)`` the ring forms at that site are added."""
    confs = embed_conformers(Chem.AddHs(Chem.MolFromSmiles(smiles)), n_conformers=n, seed=7)
    if site is not None:
        confs = add_ring_forms(confs, around=site[:2], lg_idx=site[2], seed=7)
    return confs


def _hs(mol, idx):
    return [n.GetIdx() for n in mol.GetAtomWithIdx(idx).GetNeighbors() if n.GetAtomicNum() == 1]


def test_trans_isomer_is_diequatorial_and_only_c6_h_can_be_anti():
    # Common practice: trans-1,2-disubstituted cyclohexanes prefer the diequatorial chair; for E2 the
    # Cl must go axial, which puts the C2 methyl axial too, so the C2-H is equatorial (no anti H on C2).
    confs = _confs(TRANS, site=(6, 1, 7))
    mol = confs.mol
    assert is_axial(mol, ring_atom=6, substituent=7, conf_id=confs.lowest_conf_id) is False
    c2 = [find_periplanar(confs, h_idx=h, beta_idx=1, alpha_idx=6, lg_idx=7) for h in _hs(mol, 1)]
    c6 = [find_periplanar(confs, h_idx=h, beta_idx=5, alpha_idx=6, lg_idx=7) for h in _hs(mol, 5)]
    assert not any(r.reachable for r in c2)
    anti = [r for r in c6 if r.reachable]
    assert len(anti) == 1  # only the axial one of the two C6 hydrogens
    assert anti[0].lg_axial is True and abs(anti[0].dihedral_deg) > 160
    assert anti[0].conformer == "flipped chair" and anti[0].ring_flip
    # Ring flip cost: positive and of the size of a chair flip with two axial groups (a few kcal/mol).
    assert 0.5 < anti[0].strain_kcal < 6.0


def test_cis_isomer_has_chloride_axial_and_anti_hydrogens_on_both_sides():
    # A-values (from memory): CH3 1.7, Cl 0.4-0.5 kcal/mol, so cis puts Cl axial and CH3 equatorial.
    confs = _confs(CIS, site=(6, 1, 7))
    mol = confs.mol
    assert is_axial(mol, ring_atom=6, substituent=7, conf_id=confs.lowest_conf_id) is True
    c2 = [find_periplanar(confs, h_idx=h, beta_idx=1, alpha_idx=6, lg_idx=7) for h in _hs(mol, 1)]
    assert any(r.reachable and r.strain_kcal < 2.0 for r in c2)


def _rigid_reference(smiles, h_rank, beta, alpha, lg, sa, sb):
    """Slow, obvious reference: rotate about the C-C bond of one embedded conformer to 180 deg."""
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    AllChem.EmbedMolecule(mol, randomSeed=11)
    h_idx = _hs(mol, beta)[h_rank]
    conf = mol.GetConformer()
    rdMolTransforms.SetDihedralDeg(conf, h_idx, beta, alpha, lg, 180.0)
    return abs(rdMolTransforms.GetDihedralDeg(conf, sa, alpha, beta, sb)) < 90.0


@pytest.mark.parametrize("smiles", ["C[C@@H](Br)[C@@H](C)CC", "C[C@@H](Br)[C@H](C)CC"])
def test_alkene_geometry_agrees_with_rigid_rotation(smiles):
    # 2-bromo-3-methylpentane: alpha C1, Br 2, beta C3; substituents C0 (on alpha), C4 methyl (on beta).
    confs = _confs(smiles)
    h_idx = _hs(confs.mol, 3)[0]
    result = find_periplanar(confs, h_idx=h_idx, beta_idx=3, alpha_idx=1, lg_idx=2)
    assert result.reachable and result.strain_kcal < 3.0
    assert ((0, 4) in result.cis_pairs) == _rigid_reference(smiles, 0, 3, 1, 2, 0, 4)


def test_syn_target_is_reached_for_an_open_chain():
    confs = _confs("CC(Br)CC")
    h_idx = _hs(confs.mol, 3)[0]
    result = find_periplanar(confs, h_idx=h_idx, beta_idx=3, alpha_idx=1, lg_idx=2, target_deg=0.0)
    assert abs(result.dihedral_deg) < 20 and result.strain_kcal > 0.5  # eclipsed costs energy


def test_results_repeat_for_a_seed():
    a, b = _confs(TRANS), _confs(TRANS)
    assert a.energies_kcal == pytest.approx(b.energies_kcal)


@pytest.mark.slow
def test_local_model_keeps_stereocentres_and_hydrogen_identity():
    smiles = "CC(C)(C)c1ccc(cc1)C[C@H](C)[C@@H](Br)[C@H](C)CCc1ccc(OCC(=O)OCCc2ccccc2)cc1"
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    model, mapping = local_model(mol, centre=[13, 11, 15], radius=2)
    assert model.GetNumHeavyAtoms() < mol.GetNumHeavyAtoms()
    for orig in (11, 13, 15):
        assert model.GetAtomWithIdx(mapping[orig]).GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED
    for h in _hs(mol, 15):
        assert mapping[h] in _hs(model, mapping[15])
    # The local model and the whole molecule agree on which substituents end up cis.
    full = embed_conformers(mol, n_conformers=2, seed=3)
    part = embed_conformers(model, n_conformers=4, seed=3)
    h = _hs(mol, 15)[0]
    r_full = find_periplanar(full, h_idx=h, beta_idx=15, alpha_idx=13, lg_idx=14)
    r_part = find_periplanar(part, h_idx=mapping[h], beta_idx=mapping[15], alpha_idx=mapping[13],
                             lg_idx=mapping[14])
    inverse = {v: k for k, v in mapping.items()}
    assert set(r_full.cis_pairs) == {(inverse[a], inverse[b]) for a, b in r_part.cis_pairs}


def test_bad_conformer_count():
    with pytest.raises(InputError, match="n_conformers"):
        embed_conformers(Chem.MolFromSmiles("CCBr"), n_conformers=0)


@pytest.mark.parametrize("seed", [1, 7])
def test_tert_butyl_lock_decides_which_isomer_eliminates_easily(seed):
    # cis-4-tert-butylcyclohexyl bromide has Br axial with two anti H (fast E2); the trans isomer must
    # put tert-butyl axial (A-value ~5 kcal/mol, from memory) or twist the ring (common practice).
    for smiles, easy in (("CC(C)(C)[C@H]1CC[C@@H](Br)CC1", True), ("CC(C)(C)[C@H]1CC[C@H](Br)CC1", False)):
        confs = embed_conformers(Chem.AddHs(Chem.MolFromSmiles(smiles)), n_conformers=6, seed=seed)
        results = [find_periplanar(confs, h_idx=h, beta_idx=b, alpha_idx=7, lg_idx=8)
                   for b in (6, 9) for h in _hs(confs.mol, b)]
        best = sorted(r.strain_kcal for r in results if r.reachable)
        if easy:
            assert len(best) == 2 and best[1] < 2.5  # one axial H on each side
        else:
            assert not best or best[0] > 4.0
