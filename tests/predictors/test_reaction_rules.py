"""The rule table of the product enumerator checks itself."""

from __future__ import annotations

import pytest
from rdkit import Chem

from predictors.errors import InputError
from predictors.reaction_rules import (
    NEEDS,
    QUALITIES,
    RULE_KINDS,
    RULES,
    check_rules,
    compiled_rules,
    rules_of_kind,
)


def test_rule_table_self_test_passes():
    assert check_rules() == ()


@pytest.mark.parametrize("compiled", compiled_rules(), ids=lambda c: c.rule.name)
def test_every_rule_matches_its_example_and_not_its_negative(compiled):
    rule = compiled.rule
    assert compiled.match(Chem.MolFromSmiles(rule.example)), rule.example
    assert not compiled.match(Chem.MolFromSmiles(rule.negative)), rule.negative
    assert rule.description and rule.kind in RULE_KINDS


def test_leaving_group_rules_map_alpha_carbon_and_leaving_atom():
    for compiled in rules_of_kind("leaving group"):
        hits = compiled.match(Chem.MolFromSmiles(compiled.rule.example))
        alpha, leaving = hits[0]
        mol = Chem.MolFromSmiles(compiled.rule.example)
        assert mol.GetAtomWithIdx(alpha).GetSymbol() == "C"
        assert mol.GetBondBetweenAtoms(alpha, leaving) is not None
        assert compiled.rule.quality in QUALITIES
        assert compiled.rule.needs in NEEDS
        if compiled.rule.quality == "syn":  # a syn group says how it eliminates
            assert compiled.rule.ts_ring in (5, 6) and compiled.rule.min_temp_c > -100.0


def test_self_test_catches_a_rule_that_misbehaves(monkeypatch):
    import predictors.reaction_rules as rr

    broken = rr.Rule("broken", "alpha class", "[CX4:1]-[Br]", "CCCl", "CCBr", "matches the wrong thing")
    monkeypatch.setattr(rr, "RULES", RULES + (broken,))
    rr.compiled_rules.cache_clear()
    try:
        problems = rr.check_rules()
    finally:
        monkeypatch.undo()
        rr.compiled_rules.cache_clear()
    assert any(p.startswith("broken: 'CCCl' should match") for p in problems)
    assert any(p.startswith("broken: 'CCBr' should not match") for p in problems)


def test_unknown_kind_is_rejected():
    with pytest.raises(InputError, match="kind"):
        rules_of_kind("oxidation")


def test_rule_table_covers_the_required_leaving_groups():
    names = {r.name for r in RULES if r.kind == "leaving group"}
    # Issue 3, deliverable 1: halides, sulfonates, protonated OH, ammonium, E1cB poor groups.
    for required in ("chloride", "bromide", "iodide", "fluoride", "tosylate", "mesylate", "triflate",
                     "nosylate", "hydroxyl (protonated)", "trialkylammonium", "E1cB poor leaving group"):
        assert required in names
    # Issue 18, deliverables 2-3: syn (Ei) groups and activated alcohols.
    for required in ("amine oxide", "tertiary amine (oxidised in situ)", "selenoxide",
                     "selenide (oxidised in situ)", "sulfoxide", "sulfide (oxidised in situ)", "xanthate",
                     "carboxylate ester (pyrolysis)", "hydroxyl (activated)"):
        assert required in names
