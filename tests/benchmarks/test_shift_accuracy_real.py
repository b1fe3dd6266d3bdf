"""Smoke test of the real-data shift benchmark and checks of its reference set
(benchmarks/shift_accuracy_real.py, benchmarks/shift_reference)."""

from __future__ import annotations

import json
from pathlib import Path

from rdkit import Chem

from benchmarks.shift_accuracy_real import main
from benchmarks.shift_reference import reference_entries
from benchmarks.shift_reference.nmredata import nmredata_entries
from benchmarks.shift_split import half_of


def test_reference_set_is_large_checked_and_sourced():
    entries, _ = reference_entries()
    assert len(entries) >= 70
    assert len({e.key for e in entries}) == len(entries)
    for item in entries:
        item.check()
        assert item.source and item.solvent
    halves = {half_of(e.smiles) for e in entries}
    assert halves == {"fitting", "held-out"}
    solvents = {e.solvent for e in entries}
    assert {"CDCl3", "DMSO-d6", "D2O"} <= solvents


def test_nmredata_entries_name_the_assigned_atoms(real_spectra: Path):
    entries, skipped = nmredata_entries(real_spectra)
    assert not skipped and len(entries) == 3
    anilide = next(e for e in entries if e.key == "nmredata:propananilide")
    mol = Chem.MolFromSmiles(anilide.smiles)
    # CH3 1.26, CH2 2.42, N-H 7.41 (depositors' assignment)
    by_shift = {v[0]: mol.GetAtomWithIdx(a) for a, v in anilide.assignments.items()}
    assert by_shift[1.263].GetTotalNumHs() == 3
    assert by_shift[2.422].GetTotalNumHs() == 2
    assert by_shift[7.41].GetSymbol() == "N"
    panthenol = next(e for e in entries if e.key == "nmredata:panthenol")
    assert sum(len(v) == 2 for v in panthenol.assignments.values()) == 2  # two resolved CH2


def test_nmredata_entries_skip_with_a_reason_without_the_folder(tmp_path):
    entries, skipped = nmredata_entries(tmp_path)
    assert not entries and len(skipped) == 3 and all("absent" in s for s in skipped)


def test_benchmark_prints_the_held_out_figures(tmp_path, capsys):
    out = tmp_path / "figures.json"
    assert main(["--half", "held-out", "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "HELD-OUT half" in text and "FITTING half" not in text
    assert "per environment class" in text and "10 largest held-out errors" in text
    payload = json.loads(out.read_text())
    held_out = payload["figures"]["held-out"]
    assert {"aromatic", "vinyl", "sp3"} <= set(held_out["by_type"])
    assert 0 < held_out["pooled"]["coverage_2sd_pct"] <= 100
    assert {c["half"] for c in payload["comparisons"]} == {"fitting", "held-out", "defining"}


def test_parent_rings_count_in_neither_half():
    from benchmarks.shift_accuracy_real import benchmark_half

    # the parents' shifts are the base values of predictors/data/aromatic_rings.csv
    for parent in ("c1ccncc1", "c1ccc2ccccc2c1", "c1cscn1", "c1ccc2[nH]ccc2c1"):
        assert benchmark_half(parent) == "defining"
    for substituted in ("Cc1ccncc1", "OC(=O)c1cccc2ccccc12", "CCOC(=O)C=C"):
        assert benchmark_half(substituted) == half_of(substituted)


def test_proton_shift_estimates_match_the_spin_system_sites():
    from predictors.prediction import predict_spin_system, proton_shift_estimates

    # a chiral alcohol: its CH2 protons are diastereotopic (split) and its OH depends on the solvent
    smiles = "C[C@@H](O)Cc1ccccc1"
    system = predict_spin_system(smiles, solvent="DMSO-d6")
    mol_h = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
    estimates = proton_shift_estimates(mol_h, solvent="DMSO-d6")
    for site in system.sites:
        values = [estimates[h].shift_ppm for h in site.atoms]
        assert abs(site.shift_ppm - sum(values) / len(values)) < 1e-3
        assert abs(site.shift_sd_ppm - max(estimates[h].sd_ppm for h in site.atoms)) < 1e-9
    ch2 = [site for site in system.sites if site.label == "CH2"]
    assert len(ch2) == 2 and abs(ch2[0].shift_ppm - ch2[1].shift_ppm) > 0.01


def test_coverage_intervals_follow_wilson():
    from benchmarks.shift_accuracy_real import coverage_verdict, wilson_interval

    # Wilson 1927; Newcombe, Stat. Med. 1998, 17, 857, table I: 81/263 -> 0.2553-0.3662 (from memory)
    low, high = wilson_interval(81, 263)
    assert abs(low - 0.2553) < 5e-4 and abs(high - 0.3662) < 5e-4
    # 30 of 30 covered: the interval (0.886-1) holds 95 %, so a full score is no proof of excess
    low, high = wilson_interval(30, 30)
    assert 0.88 < low < 0.89 and abs(high - 1.0) < 1e-12
    assert coverage_verdict(low, high) == "consistent"
    assert coverage_verdict(*wilson_interval(300, 300)) == "too high"
    assert coverage_verdict(*wilson_interval(70, 100)) == "too low"
    assert coverage_verdict(*wilson_interval(940, 1000)) == "within"

