"""Solvent table against the published values (Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512)."""

from __future__ import annotations

import pytest

from confirm.solvents import (
    TMS_PPM,
    impurity_signals,
    known_solvents,
    normalise_solvent_name,
    solvent_signals,
)
from predictors.errors import InputError

# Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1 (residual 1H / H2O), as copied in
# references.md section 6; Fulmer et al., Organometallics 2010, 29, 2176 lists the same values.
PUBLISHED = {
    "CDCl3": (7.26, 1.56),
    "acetone-d6": (2.05, 2.84),
    "DMSO-d6": (2.50, 3.33),
    "C6D6": (7.16, 0.40),
    "CD3CN": (1.94, 2.13),
    "CD3OD": (3.31, 4.87),
    "D2O": (4.79, 4.79),
}


@pytest.mark.parametrize("name", sorted(PUBLISHED))
def test_residual_and_water_lines_match_gottlieb_1997(name):
    signals = solvent_signals(name)
    assert (signals.residual_ppm, signals.water_ppm) == PUBLISHED[name]
    assert "Gottlieb" in signals.source


def test_carbon_lines_match_gottlieb_1997():
    # Gottlieb 1997 Table 2 (references.md section 6): CDCl3 77.16, DMSO-d6 39.52
    assert solvent_signals("CDCl3").carbon_ppm == (77.16,)
    assert solvent_signals("DMSO-d6").carbon_ppm == (39.52,)


def test_impurities_in_cdcl3_match_gottlieb_1997():
    # Gottlieb 1997 Table 1, CDCl3 column (references.md section 6)
    lines = {s.name: s.ppm for s in impurity_signals("CDCl3")}
    assert lines["TMS"] == TMS_PPM == 0.0
    assert lines["dichloromethane"] == 5.30
    assert lines["acetone"] == 2.17
    assert lines["diethyl ether CH3"] == 1.21 and lines["diethyl ether CH2"] == 3.48
    assert lines["benzene"] == 7.36 and lines["cyclohexane"] == 1.43


@pytest.mark.parametrize("label, expected", [
    ("Chloroform-d", "CDCl3"), ("<CDCl3>", "CDCl3"), ("cdcl3", "CDCl3"), ("DMSO", "DMSO-d6"),
    ("dmso-d6", "DMSO-d6"), ("Methanol-d4", "CD3OD"), ("benzene-d6", "C6D6"), ("Acetone-d6", "acetone-d6"),
    ("toluene-d8", None), ("", None), (None, None),
])
def test_normalise_solvent_name(label, expected):
    assert normalise_solvent_name(label) == expected


def test_unknown_solvent_raises_with_the_allowed_names():
    with pytest.raises(InputError, match="known: CDCl3"):
        solvent_signals("toluene-d8")


def test_every_solvent_has_a_residual_line_and_every_row_a_source():
    from confirm.solvents import _read_rows

    assert all(row["source"].strip() for row in _read_rows())
    for name in known_solvents():
        assert solvent_signals(name).residual_ppm > 0
        assert all(s.n_h > 0 for s in impurity_signals(name))


@pytest.mark.parametrize("label, expected", [
    # spellings met in instrument files and lab notebooks (issue 15): vendor forms, languages,
    # isotope marks, purity and volume percentages, added TMS
    ("CD2Cl2", "CD2Cl2"), ("Dichloromethane-d2", "CD2Cl2"), ("Dichlormethan-d2", "CD2Cl2"),
    ("Aceton", "acetone-d6"), ("Aceton-d6", "acetone-d6"), ("acétone-d6", "acetone-d6"),
    ("Chloroform-d 90vol%", "CDCl3"), ("CDCl3 + 0.03% TMS", "CDCl3"),
    ("chloroform-d, 99.8%, +0.03% v/v TMS", "CDCl3"), ("Chloroform-d (99.8 atom % D)", "CDCl3"),
    ("Chloroforme-d", "CDCl3"), ("Cloroformo deuterado", "CDCl3"), ("CDCL3", "CDCl3"), ("CdCl3", "CDCl3"),
    ("d6-DMSO", "DMSO-d6"), ("[D6]DMSO", "DMSO-d6"), ("DMSO-D6", "DMSO-d6"),
    ("Dimethylsulfoxid-d6", "DMSO-d6"),
    ("DMSO-d6 + TMS", "DMSO-d6"), ("Benzol-d6", "C6D6"), ("Acetonitril-d3", "CD3CN"), ("MeOD", "CD3OD"),
    ("Deuteriumoxid", "D2O"), ("D2O 99.9 atom % D", "D2O"), ("H2O/D2O", "D2O"),
    ("Neat", None), ("water", None), ("D", None),
])
def test_normaliser_reads_the_spellings_files_use(label, expected):
    assert normalise_solvent_name(label) == expected


def test_residual_multiplets_carry_their_couplings():
    # residual CHD2 groups are 1:2:3:2:1 quintets, CHD a 1:1:1 triplet (Gottlieb 1997 Table 1
    # multiplicities); J(H,D) and 1J(C,H) from memory (the table's source column says so)
    assert solvent_signals("DMSO-d6").residual_multiplicity == "quint"
    assert 1.5 <= solvent_signals("DMSO-d6").residual_j_hd_hz <= 2.4
    assert solvent_signals("CD2Cl2").residual_multiplicity == "t"
    assert (solvent_signals("CD2Cl2").residual_ppm, solvent_signals("CD2Cl2").water_ppm) == (5.32, 1.52)
    # CHCl3: 1J(C,H) 209 Hz, measured 209.3-209.5 Hz between the satellites in the shared real files
    assert solvent_signals("CDCl3").residual_j_ch_hz == 209.0
    assert solvent_signals("CDCl3").residual_j_hd_hz is None


def test_hdo_moves_with_temperature_in_d2o_only():
    from confirm.solvents import hdo_shift_ppm

    # slope -1/96.9 ppm per K (memory, Gottlieb 1997): 10 K warmer, about 0.10 ppm upfield
    assert hdo_shift_ppm("D2O", 298.0) == pytest.approx(4.79)
    assert hdo_shift_ppm("D2O", 308.0) == pytest.approx(4.79 - 10 / 96.9)
    assert hdo_shift_ppm("D2O", None) == pytest.approx(4.79)
    assert hdo_shift_ppm("CDCl3", 320.0) == 1.56


@pytest.mark.parametrize("ppm, solvent, mult, expected", [
    # Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1 (CDCl3)
    (7.26, "CDCl3", "s", "residual CHCl3"),
    (1.565, "CDCl3", "s", "water"),
    (2.17, "CDCl3", "s", "acetone"),
    (5.30, "CDCl3", None, "dichloromethane"),
    (3.48, "CDCl3", "q", "diethyl ether CH2"),
    (3.48, "CDCl3", "s", "methanol"),  # a singlet is not ether's quartet, but methanol's 3.49 s
    (4.50, "CDCl3", "s", None),
    (2.17, None, "s", None),  # solvent unknown: nothing to name
])
def test_lines_on_known_solvent_and_impurity_lines_are_named(ppm, solvent, mult, expected):
    from confirm.solvents import name_line

    assert name_line(ppm, solvent, multiplicity=mult) == expected


def test_process_names_the_solvent_lines_and_leaves_them_out_of_the_line_list(run_cli):
    import json

    from confirm.commands.demo import sample_files

    data = json.loads(run_cli("process", str(sample_files()[0]), "--json").stdout)
    named = {m["may_be"] for m in data["multiplets"] if m["may_be"]}
    assert {"residual CHCl3", "water"} <= named
    assert "7.26" not in data["line_list"] and "1.56 (s" not in data["line_list"]
