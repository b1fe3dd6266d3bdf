"""Environment classes and calibrated shift sds (predictors/shift_uncertainty.py,
predictors/data/shift_sd.csv).

The table is written by ``python -m benchmarks.shift_accuracy_real --write-table`` from the
fitting half of ``benchmarks/shift_reference``; the coverage check uses the held-out half of the
same reference set."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from rdkit import Chem

from benchmarks.shift_accuracy_real import TABLE_PATH, _provisional_table, build_table, compare_all
from benchmarks.shift_reference import reference_entries
from predictors.prediction import predict_spin_system
from predictors.shift_uncertainty import (
    CLASSES,
    FALLBACK_GENERIC,
    FALLBACK_INCREMENT,
    FALLBACK_ROWS,
    environment_class,
    environment_classes,
    load_sd_table,
)


def _class_of(smiles: str, smarts: str) -> str:
    """Class of the H on the first atom matched by ``smarts`` in ``smiles``."""
    mol_h = Chem.AddHs(Chem.MolFromSmiles(smiles))
    atom = mol_h.GetSubstructMatch(Chem.MolFromSmarts(smarts))[0]
    h = next(n.GetIdx() for n in mol_h.GetAtomWithIdx(atom).GetNeighbors() if n.GetAtomicNum() == 1)
    return environment_class(mol_h, h)


@pytest.mark.parametrize(("smiles", "smarts", "expected"), [
    ("Cc1ccccc1", "[cH]", "aryl"),
    ("Cc1ccccc1", "[CH3]", "CH3 on pi"),
    ("c1ccc2ccccc2c1", "[cH]", "aryl fused"),
    ("c1ccc2[nH]ccc2c1", "[cH]1[cH][cH][cH]cc1", "aryl fused"),
    ("c1ccncc1", "[cH]n", "heteroaryl 6-ring"),
    ("c1ccoc1", "[cH]o", "heteroaryl 5-ring"),
    ("c1ccc2[nH]ccc2c1", "[cH][nH]", "heteroaryl 5-ring"),
    ("O=c1ccc2ccccc2o1", "[cH]1[cH]c(=O)oc2ccccc12", "vinyl"),  # pyranone ring: an enone
    ("C=CC(=O)OC", "[CH2]=C", "vinyl"),
    ("CC=O", "[CH]=O", "aldehyde"),
    ("CC#C", "[CH]#C", "alkyne"),
    ("CCO", "[CH3]", "CH3 on C"),
    ("CCO", "[CH2]", "CH2 1"),
    ("CCO", "[OH]", "exchangeable"),
    ("COc1ccccc1", "[CH3]O", "CH3 on O"),
    ("CN(C)C=O", "[CH3]N", "CH3 on N, S, P or halogen"),
    ("CS(C)=O", "[CH3]S", "CH3 on N, S, P or halogen"),
    ("C1CCCCC1", "[CH2]", "CH2 0"),
    ("CC(C)C", "[CH1]", "CH 0-1"),
    ("ClCCl", "[CH2]", "CH/CH2 2+"),
    ("CO[C@H]1O[C@H](CO)[C@@H](O)[C@H](O)[C@H]1O", "[CH1](O)([CH1]O)[CH1]O", "polyol CH/CH2"),
    ("C[SiH](C)C", "[SiH]", "other"),
])
def test_environment_classes_of_small_molecules(smiles, smarts, expected):
    assert _class_of(smiles, smarts) == expected


def test_environment_class_rejects_a_heavy_atom():
    with pytest.raises(ValueError, match="not H"):
        environment_class(Chem.AddHs(Chem.MolFromSmiles("CC")), 0)


def test_every_class_has_a_row_and_every_row_a_source():
    table = load_sd_table()
    assert set(CLASSES) | set(FALLBACK_ROWS) == set(table)
    for row in table.values():
        assert row.sd_ppm >= 0.03 and row.source
        assert row.calibrated == (row.n_fitting >= 10)
    # every class the classifier returns on the reference set is in the table
    for item in reference_entries()[0][:40]:
        assert set(environment_classes(Chem.AddHs(Chem.MolFromSmiles(item.smiles))).values()) <= set(table)


def test_site_sds_come_from_the_table():
    table = load_sd_table()
    system = predict_spin_system("CCOC(C)=O", n_conformers=1)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
    classes = environment_classes(mol_h)
    for site in system.sites:
        assert not site.flags
        assert site.shift_sd_ppm == pytest.approx(max(table[classes[h]].sd_ppm for h in site.atoms))


def test_a_fallback_widens_the_sd_in_quadrature():
    table = load_sd_table()
    plain = predict_spin_system("CCC=C", n_conformers=1)
    silyl = predict_spin_system("C[Si](C)(C)C=C", n_conformers=1)
    vinyl = table["vinyl"].sd_ppm
    assert all(s.shift_sd_ppm == pytest.approx(vinyl) for s in plain.sites if s.label == "vinyl")
    flagged = [s for s in silyl.sites if s.label == "vinyl"]
    assert flagged and all(any("taken from" in f for f in s.flags) for s in flagged)
    for site in flagged:
        n = max(sum("taken from" in f for f in site.flags), 1)
        assert site.shift_sd_ppm >= math.hypot(vinyl, table[FALLBACK_INCREMENT].sd_ppm * math.sqrt(n)) - 1e-9
    # a ring the heteroaromatic tables do not know takes the generic value and its wider sd
    # (1,3,5-triazine: no base value in data/aromatic_rings.csv)
    generic = next(s for s in predict_spin_system("c1ncncn1", n_conformers=1).sites)
    assert any("generic" in f for f in generic.flags)
    assert generic.shift_sd_ppm == pytest.approx(
        math.hypot(table["heteroaryl 6-ring"].sd_ppm, table[FALLBACK_GENERIC].sd_ppm))


def test_held_out_coverage_of_two_sd():
    # source: held-out half of benchmarks/shift_reference (never used to build the table)
    entries, _ = reference_entries(half="held-out")
    comparisons = compare_all(entries)
    covered = np.array([abs(c.error_ppm) <= 2 * c.sd_ppm for c in comparisons])
    assert len({c.key for c in comparisons}) >= 35
    assert 0.85 <= covered.mean() <= 0.99


def test_write_table_reproduces_the_committed_table(real_spectra: Path):
    # the committed table was built with the NMReDATA compounds of the real spectra folder
    entries, skipped = reference_entries(real_spectra, half="fitting")
    assert not skipped
    text = build_table(compare_all(entries, table=_provisional_table()))
    assert text == TABLE_PATH.read_text(encoding="utf-8"), (
        "predictors/data/shift_sd.csv is stale: rebuild it with "
        "python -m benchmarks.shift_accuracy_real --write-table")


def test_the_fit_searches_with_the_calibrated_sd():
    from confirm.fitting import FitOptions
    from confirm.fitting.models import build_model

    table = load_sd_table()
    system = predict_spin_system("CCC=C", n_conformers=1)
    model = build_model(system, FitOptions())
    options = FitOptions()
    for s, label in enumerate(model.labels):
        site = system.sites[model.groups[s][0]]
        if label == "vinyl":
            assert site.shift_sd_ppm == pytest.approx(table["vinyl"].sd_ppm)
        # the shift window and prior follow the calibrated sd of each site
        assert model.sd[s] == pytest.approx(site.shift_sd_ppm)
        assert model.window[s] == pytest.approx(np.clip(options.shift_window_sd * site.shift_sd_ppm,
                                                        options.min_shift_window_ppm,
                                                        options.max_shift_window_ppm))
