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
