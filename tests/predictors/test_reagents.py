"""The reagent table: names, aliases, pKa values with their sources."""

from __future__ import annotations

import pytest

from predictors.errors import InputError
from predictors.reagents import get_reagent, list_reagents

REQUIRED = ("hydroxide", "methoxide", "ethoxide", "tert-butoxide", "LDA", "amide", "hydride", "DBU",
            "triethylamine", "Hunig's base", "cyanide", "azide", "iodide", "thiolate", "acetate", "water",
            "methanol", "ethanol", "H2SO4", "H3PO4", "TsOH", "HCl", "HBr")


@pytest.mark.parametrize("name", REQUIRED)
def test_required_reagents_are_present_with_a_sourced_pka(name):
    reagent = get_reagent(name)
    assert reagent.name == name
    assert reagent.pka_conj_acid is not None and reagent.pka_source
    assert reagent.source


@pytest.mark.parametrize("alias, name", [("KOtBu", "tert-butoxide"), ("naoet", "ethoxide"),
                                         ("DIPEA", "Hunig's base"), ("h2so4", "H2SO4"),
                                         ("Sodium Azide", "azide"), ("p-TsOH", "TsOH")])
def test_aliases_are_case_insensitive(alias, name):
    assert get_reagent(alias).name == name


def test_unknown_reagent_lists_known_names():
    with pytest.raises(InputError, match="unknown name 'grignard'.*ethoxide.*HBr"):
        get_reagent("grignard")


def test_unknown_solvent_lists_only_solvents():
    from predictors.reagents import get_solvent

    assert get_solvent("EtOH").name == "ethanol"
    with pytest.raises(InputError, match=r"^solvent: unknown name 'lava'; known solvents: ") as err:
        get_solvent("lava")
    assert "DMSO" in str(err.value) and "ethoxide" not in str(err.value) and "HBr" not in str(err.value)
    with pytest.raises(InputError, match="'ethoxide' is a reagent, not a solvent"):
        get_solvent("ethoxide")


def test_pka_order_follows_the_usual_table():
    # Conjugate-acid pKa order (Clayden et al. 2012, pKa appendix, from memory):
    # NH3 > iPr2NH > H2 > tBuOH > EtOH > H2O > Et3NH+ > HCN > AcOH > HN3 > H3O+ > HCl > HBr > HI.
    order = ["amide", "LDA", "hydride", "tert-butoxide", "ethoxide", "hydroxide", "triethylamine",
             "cyanide", "acetate", "azide", "water", "HCl", "HBr", "iodide"]
    values = [get_reagent(n).pka_conj_acid for n in order]
    assert values == sorted(values, reverse=True)


def test_roles_follow_common_practice():
    # Common practice (shared/references.md section 8).
    assert get_reagent("tert-butoxide").bulk == "large" and get_reagent("LDA").bulk == "large"
    assert get_reagent("ethoxide").is_strong_base and not get_reagent("azide").is_strong_base
    assert get_reagent("H2SO4").is_acid and get_reagent("H2SO4").counter_ion_nucleophilicity == "low"
    assert get_reagent("HBr").counter_ion_nucleophilicity == "high"
    assert not get_reagent("LDA").is_nucleophile and get_reagent("cyanide").is_nucleophile
    assert get_reagent("ethoxide").zaitsev_factor > 1 > 0.5 * get_reagent("tert-butoxide").zaitsev_factor


def test_names_and_aliases_are_unique():
    keys = [k.lower() for r in list_reagents() for k in (r.name, *r.aliases)]
    assert len(keys) == len(set(keys))


@pytest.mark.parametrize("name, kind, activation", [
    ("heat", "thermal", ""), ("H2O2", "oxidant", ""), ("mCPBA", "oxidant", ""), ("NaIO4", "oxidant", ""),
    ("POCl3", "activator", "anti"), ("Burgess reagent", "activator", "syn"),
    ("Martin sulfurane", "activator", "syn"), ("Mitsunobu", "activator", "sn2"),
    ("AgNO3", "activator", "ionise"),
])
def test_issue_18_reagents_are_present_with_a_source_and_a_caution(name, kind, activation):
    # Issue 18: oxidants, heat and activating reagents; hazardous ones carry a caution (POCl3 reacts
    # violently with water, peroxides are shock-sensitive, azodicarboxylates are toxic; common practice).
    reagent = get_reagent(name)
    assert (reagent.kind, reagent.activation) == (kind, activation)
    assert reagent.source and reagent.caution and reagent.example and reagent.negative


def test_an_unknown_activation_is_refused():
    from predictors.reagents import _row_to_reagent

    columns = ("name", "aliases", "kind", "pka_conj_acid", "pka_source", "bulk", "nucleophilicity",
               "acid_strength", "counter_ion_nucleophilicity", "nucleophile_smiles", "zaitsev_factor",
               "default_solvent", "solvent_class", "source")
    row = dict.fromkeys(columns, "")
    row.update(name="x", kind="activator", bulk="small", nucleophilicity="none", acid_strength="none",
               counter_ion_nucleophilicity="none", zaitsev_factor="1", activation="sideways")
    with pytest.raises(InputError, match="activation"):
        _row_to_reagent(row)
