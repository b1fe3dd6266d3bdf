"""The coupling benchmark: predicted 1H-1H couplings against the corpus compounds' published ones.

The published values are those of ``benchmarks/corpus/compounds.py`` (each compound with its
source, or marked from memory there); the tolerances below are what the predictor meets on them
today, with room for a conformer embedding that differs between machines.
"""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

from benchmarks.coupling_accuracy import compare_all, coupling_kind, summarise

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def rows():
    return compare_all()


def test_every_compared_coupling_is_between_near_protons(rows):
    # a published coupling between protons five or more bonds apart is a mapping error of the
    # benchmark (1-methylcyclohexene's two homoallylic CH2 were crossed once), not a coupling
    assert rows
    assert not [r for r in rows if r.kind == "other"]
    assert {r.half for r in rows} == {"tune", "held-out"}


def test_couplings_across_the_double_bond_match_the_published_values(rows):
    # cis and trans vinyl couplings of the corpus alkenes (styrenes, crotonates, cinnamates,
    # hexenes, acrylates: published values in benchmarks/corpus/compounds.py)
    err = np.array([r.error_hz for r in rows if r.kind == "across C=C"])
    assert err.size >= 20
    assert np.abs(err).mean() < 0.6
    assert np.abs(err).max() < 1.6


def test_aromatic_couplings_match_the_published_values(rows):
    err = np.array([r.error_hz for r in rows if r.kind in ("aryl ortho", "aryl meta", "aryl para")])
    assert err.size >= 100
    assert np.abs(err).mean() < 0.4
    assert np.abs(err).max() < 1.5


def test_ring_couplings_are_compared_through_mirror_related_sites(rows):
    # the axial and equatorial H next to the CH-OH of trans-4-tert-butylcyclohexanol are each one
    # site over two mirror-related carbons; their couplings to H-1 (11.1 and 4.3 Hz published) are
    # compared between neighbouring carbons, as ring sp3 3J
    ring = [r for r in rows if r.compound == "trans_tbu_cyclohexanol" and r.kind == "ring sp3 3J"]
    published = sorted(r.published_hz for r in ring if 7 in r.atoms)
    assert published == pytest.approx([4.3, 11.1])
    mol = Chem.MolFromSmiles("CC(C)(C)[C@H]1CC[C@H](O)CC1")
    assert all(mol.GetBondBetweenAtoms(*r.atoms) is not None for r in ring)


def test_open_chain_allylic_couplings_match_the_held_out_half(rows):
    # open-chain allylic 3J and 4J take rotational averages fitted to the tuning half's published
    # values (predictors/data/couplings.csv, allylic_*_open* rows); the held-out half (crotonates,
    # anetholes, phenylbutenes, methylbutenes, estragole, butenoate: benchmarks/corpus/compounds.py)
    # must agree as well. Before, with force-field rotamer weights, the 4J came out about 0.7 Hz
    # too small in magnitude (MAE 0.73 Hz) and the 3J had an MAE of 0.57 Hz.
    for kind, limit in (("allylic 4J", 0.45), ("vinyl-sp3 3J", 0.4)):
        err = np.array([r.error_hz for r in rows if r.kind == kind and r.half == "held-out"])
        assert err.size >= 10
        assert np.abs(err).mean() < limit
        assert abs(err.mean()) < 0.3


def test_the_summary_gives_bias_and_mae_per_half_and_class(rows):
    summary = summarise(rows)
    for half in ("tune", "held-out"):
        allylic = summary[half]["allylic 4J"]
        assert allylic["n"] > 0 and allylic["mae_hz"] >= abs(allylic["bias_hz"])


@pytest.mark.parametrize(
    ("smiles", "a", "b", "kind"),
    [
        ("C=CC", 0, 1, "across C=C"),
        ("C=CC", 1, 2, "vinyl-sp3 3J"),
        ("C=CC", 0, 2, "allylic 4J"),
        ("CCO", 0, 1, "sp3 3J"),
        ("OC1CCCCC1", 1, 2, "ring sp3 3J"),
        ("c1ccccc1", 0, 1, "aryl ortho"),
        ("c1ccccc1", 0, 2, "aryl meta"),
        ("c1ccccc1", 0, 3, "aryl para"),
        ("CCCC", 0, 3, "other"),
        ("CC", 1, 1, "geminal"),
    ],
)
def test_coupling_classes(smiles, a, b, kind):
    assert coupling_kind(Chem.MolFromSmiles(smiles), a, b) == kind
