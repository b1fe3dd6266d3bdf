"""Reaction families, identity sets and the tune / held-out split of the benchmark corpus.

A family is an elimination with its competitors (starting material, E and Z alkenes, regio-
isomers, substitution products), each member with its role. An identity set is a true compound
(published data in :mod:`benchmarks.corpus.compounds`) with decoy SMILES a chemist would consider;
the tool predicts the decoys itself. The split is made once, by compound: every family and every
identity set names its half, and no compound belongs to both halves (a test checks it).
"""

from __future__ import annotations

from dataclasses import dataclass

from benchmarks.corpus.compounds import COMPOUNDS

#: Roles a family member can play.
ROLES = frozenset(
    {
        "starting material",
        "E",
        "Z",
        "less substituted",
        "more substituted",
        "elimination",
        "substitution",
    }
)


@dataclass(frozen=True)
class Family:
    """An elimination with its competitors: starting material and every product considered."""

    key: str
    reaction: str
    half: str
    members: tuple[tuple[str, str], ...]  # (compound key, role)


@dataclass(frozen=True)
class IdentitySet:
    """A true compound (published data) and decoy structures a chemist would consider."""

    key: str
    half: str
    true_key: str
    decoys: tuple[tuple[str, str], ...]  # (SMILES, relation to the true compound)


# ---------------------------------------------------------------------------------------------
# Reaction families and the split. Each family is in exactly one half.
# ---------------------------------------------------------------------------------------------

FAMILIES: tuple[Family, ...] = (
    Family(
        "phenylpropyl",
        "(2-bromopropyl)benzene + base: E2 to the styrenes/allylbenzene, SN2 to the alcohol",
        "tune",
        (
            ("phenylpropyl_bromide", "starting material"),
            ("phenylpropanol", "substitution"),
            ("e_methylstyrene", "E"),
            ("z_methylstyrene", "Z"),
            ("allylbenzene", "less substituted"),
        ),
    ),
    Family(
        "phenylethyl",
        "(1-bromoethyl)benzene in ethanol: E1/E2 to styrene, SN1 to ether and alcohol",
        "held-out",
        (
            ("phenylethyl_bromide", "starting material"),
            ("phenylethanol", "substitution"),
            ("styrene", "elimination"),
            ("phenylethyl_ethyl_ether", "substitution"),
        ),
    ),
    Family(
        "hexyl",
        "2-bromohexane + alkoxide: Zaitsev (E)/(Z)-2-hexene vs Hofmann 1-hexene, SN2 alcohol",
        "tune",
        (
            ("bromohexane", "starting material"),
            ("hexanol_2", "substitution"),
            ("hexene_1", "less substituted"),
            ("e_hexene_2", "E"),
            ("z_hexene_2", "Z"),
        ),
    ),
    Family(
        "hydroxybutanoate",
        "ethyl 3-hydroxybutanoate dehydration (E1cB): crotonates and the deconjugated ester",
        "held-out",
        (
            ("hydroxybutanoate", "starting material"),
            ("e_crotonate", "E"),
            ("z_crotonate", "Z"),
            ("butenoate", "less substituted"),
        ),
    ),
    Family(
        "cinnamate",
        "methyl 3-hydroxy-3-phenylpropanoate dehydration (E1cB): methyl cinnamates",
        "tune",
        (("hydroxy_phenylpropanoate", "starting material"), ("e_cinnamate", "E"), ("z_cinnamate", "Z")),
    ),
    Family(
        "benzalacetone",
        "aldol 4-hydroxy-4-phenylbutan-2-one dehydration (E1cB): benzalacetones",
        "held-out",
        (("aldol_ketone", "starting material"), ("e_benzalacetone", "E"), ("z_benzalacetone", "Z")),
    ),
    Family(
        "malate",
        "diethyl malate dehydration: diethyl fumarate (E) and maleate (Z)",
        "tune",
        (("diethyl_malate", "starting material"), ("diethyl_fumarate", "E"), ("diethyl_maleate", "Z")),
    ),
    Family(
        "tert_amyl",
        "2-methylbutan-2-ol + HCl / acid: E1 to both methylbutenes, SN1 to the chloride",
        "held-out",
        (
            ("tert_amyl_alcohol", "starting material"),
            ("methylbutene_2", "more substituted"),
            ("methylbutene_1", "less substituted"),
            ("tert_amyl_chloride", "substitution"),
        ),
    ),
    Family(
        "cumyl",
        "2-phenylpropan-2-ol + acid in methanol: E1 to alpha-methylstyrene, SN1 to the ether",
        "tune",
        (
            ("cumyl_alcohol", "starting material"),
            ("alpha_methylstyrene", "elimination"),
            ("cumyl_methyl_ether", "substitution"),
        ),
    ),
    Family(
        "methylcyclohexyl",
        "1-methylcyclohexanol + acid: E1 to the endo- and exocyclic alkene",
        "held-out",
        (
            ("methylcyclohexanol", "starting material"),
            ("methylcyclohexene", "more substituted"),
            ("methylenecyclohexane", "less substituted"),
        ),
    ),
    Family(
        "cyclohexyl",
        "bromocyclohexane + hydroxide: E2 to cyclohexene, SN2 to cyclohexanol",
        "tune",
        (
            ("bromocyclohexane", "starting material"),
            ("cyclohexanol", "substitution"),
            ("cyclohexene", "elimination"),
        ),
    ),
    Family(
        "phenylbutyl",
        "1-phenylbutan-1-ol + acid: E1 to (E)/(Z)-1-phenylbut-1-ene",
        "held-out",
        (("phenylbutanol", "starting material"), ("e_phenylbutene", "E"), ("z_phenylbutene", "Z")),
    ),
    Family(
        "stilbene",
        "1,2-diphenylethanol dehydration: (E)- and (Z)-stilbene",
        "tune",
        (("diphenylethanol", "starting material"), ("e_stilbene", "E"), ("z_stilbene", "Z")),
    ),
    Family(
        "anisyl",
        "1-(2-bromopropyl)-4-methoxybenzene + base: anetholes, estragole, SN2 alcohol",
        "held-out",
        (
            ("anisyl_bromide", "starting material"),
            ("anisyl_propanol", "substitution"),
            ("e_anethole", "E"),
            ("z_anethole", "Z"),
            ("estragole", "less substituted"),
        ),
    ),
)

FAMILY_BY_KEY: dict[str, Family] = {f.key: f for f in FAMILIES}

# ---------------------------------------------------------------------------------------------
# Identity sets: the true compound among decoys (SMILES only; the tool predicts them itself)
# ---------------------------------------------------------------------------------------------

IDENTITY_SETS: tuple[IdentitySet, ...] = (
    # tune half
    IdentitySet(
        "id_e_methylstyrene",
        "tune",
        "e_methylstyrene",
        (
            ("C/C=C\\c1ccccc1", "other E/Z isomer"),
            ("C=CCc1ccccc1", "positional isomer"),
            ("C=C(C)c1ccccc1", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_z_methylstyrene",
        "tune",
        "z_methylstyrene",
        (("C/C=C/c1ccccc1", "other E/Z isomer"), ("C=CCc1ccccc1", "positional isomer")),
    ),
    IdentitySet(
        "id_allylbenzene",
        "tune",
        "allylbenzene",
        (
            ("C/C=C/c1ccccc1", "positional isomer"),
            ("C=CCCc1ccccc1", "homologue"),
            ("C=CCc1ccc(C)cc1", "homologue"),
        ),
    ),
    IdentitySet(
        "id_phenylpropanol",
        "tune",
        "phenylpropanol",
        (
            ("CCC(O)c1ccccc1", "positional isomer"),
            ("OCCCc1ccccc1", "positional isomer"),
            ("CC(O)CCc1ccccc1", "homologue"),
        ),
    ),
    IdentitySet(
        "id_hexene_1",
        "tune",
        "hexene_1",
        (("C/C=C/CCC", "positional isomer"), ("C=CCCCCC", "homologue"), ("C=C(C)CCC", "branched isomer")),
    ),
    IdentitySet(
        "id_hexanol_2",
        "tune",
        "hexanol_2",
        (("CCCC(O)CC", "positional isomer"), ("OCCCCCC", "positional isomer"), ("CCCCCC(C)O", "homologue")),
    ),
    IdentitySet(
        "id_e_hexene_2",
        "tune",
        "e_hexene_2",
        (
            ("C/C=C\\CCC", "other E/Z isomer"),
            ("CC/C=C/CC", "positional isomer"),
            ("C=CCCCC", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_e_cinnamate",
        "tune",
        "e_cinnamate",
        (
            ("COC(=O)/C=C\\c1ccccc1", "other E/Z isomer"),
            ("CCOC(=O)/C=C/c1ccccc1", "homologue"),
            ("C=C(C(=O)OC)c1ccccc1", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_z_cinnamate",
        "tune",
        "z_cinnamate",
        (("COC(=O)/C=C/c1ccccc1", "other E/Z isomer"), ("C=C(C(=O)OC)c1ccccc1", "positional isomer")),
    ),
    IdentitySet(
        "id_diethyl_fumarate",
        "tune",
        "diethyl_fumarate",
        (
            ("CCOC(=O)/C=C\\C(=O)OCC", "other E/Z isomer"),
            ("COC(=O)/C=C/C(=O)OC", "homologue"),
            ("C=C(C(=O)OCC)C(=O)OCC", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_diethyl_maleate",
        "tune",
        "diethyl_maleate",
        (("CCOC(=O)/C=C/C(=O)OCC", "other E/Z isomer"), ("COC(=O)/C=C\\C(=O)OC", "homologue")),
    ),
    IdentitySet(
        "id_alpha_methylstyrene",
        "tune",
        "alpha_methylstyrene",
        (
            ("C/C=C/c1ccccc1", "positional isomer"),
            ("C=CCc1ccccc1", "positional isomer"),
            ("C=Cc1ccc(C)cc1", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_cumyl_alcohol",
        "tune",
        "cumyl_alcohol",
        (
            ("CC(CO)c1ccccc1", "positional isomer"),
            ("CCC(O)c1ccccc1", "positional isomer"),
            ("CC(O)Cc1ccccc1", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_cyclohexene",
        "tune",
        "cyclohexene",
        (("C1=CCCC1", "homologue"), ("C1=CCCCCC1", "homologue"), ("C=C1CCCC1", "positional isomer")),
    ),
    IdentitySet(
        "id_cyclohexanol",
        "tune",
        "cyclohexanol",
        (("OC1CCCC1", "homologue"), ("OC1CCCCCC1", "homologue"), ("CC1(O)CCCC1", "positional isomer")),
    ),
    IdentitySet(
        "id_bromocyclohexane",
        "tune",
        "bromocyclohexane",
        (("BrC1CCCC1", "homologue"), ("BrCC1CCCC1", "positional isomer"), ("ClC1CCCCC1", "other halide")),
    ),
    IdentitySet(
        "id_e_stilbene",
        "tune",
        "e_stilbene",
        (("C(=C\\c1ccccc1)\\c1ccccc1", "other E/Z isomer"), ("C=C(c1ccccc1)c1ccccc1", "positional isomer")),
    ),
    IdentitySet(
        "id_z_stilbene",
        "tune",
        "z_stilbene",
        (("C(=C/c1ccccc1)\\c1ccccc1", "other E/Z isomer"), ("C=C(c1ccccc1)c1ccccc1", "positional isomer")),
    ),
    IdentitySet(
        "id_trans_tbu_cyclohexanol",
        "tune",
        "trans_tbu_cyclohexanol",
        (
            ("CC(C)(C)[C@H]1CC[C@@H](O)CC1", "epimer"),
            ("CC(C)(C)C1CCCCC1O", "positional isomer"),
            ("CC(C)[C@H]1CC[C@H](O)CC1", "homologue"),
        ),
    ),
    IdentitySet(
        "id_cis_tbu_cyclohexanol",
        "tune",
        "cis_tbu_cyclohexanol",
        (("CC(C)(C)[C@H]1CC[C@H](O)CC1", "epimer"), ("CC(C)[C@H]1CC[C@@H](O)CC1", "homologue")),
    ),
    # held-out half
    IdentitySet(
        "id_styrene",
        "held-out",
        "styrene",
        (("C=Cc1ccc(C)cc1", "homologue"), ("C=Cc1ccccc1C", "homologue"), ("C=Cc1cccc(C)c1", "homologue")),
    ),
    IdentitySet(
        "id_phenylethanol",
        "held-out",
        "phenylethanol",
        (
            ("OCCc1ccccc1", "positional isomer"),
            ("CCC(O)c1ccccc1", "homologue"),
            ("CC(O)c1ccc(C)cc1", "homologue"),
        ),
    ),
    IdentitySet(
        "id_phenylethyl_bromide",
        "held-out",
        "phenylethyl_bromide",
        (("BrCCc1ccccc1", "positional isomer"), ("CCc1ccc(Br)cc1", "positional isomer")),
    ),
    IdentitySet(
        "id_e_crotonate",
        "held-out",
        "e_crotonate",
        (
            ("C/C=C\\C(=O)OCC", "other E/Z isomer"),
            ("C=CCC(=O)OCC", "positional isomer"),
            ("C=C(C)C(=O)OCC", "positional isomer"),
            ("C/C=C/C(=O)OC", "homologue"),
        ),
    ),
    IdentitySet(
        "id_z_crotonate",
        "held-out",
        "z_crotonate",
        (("C/C=C/C(=O)OCC", "other E/Z isomer"), ("C=C(C)C(=O)OCC", "positional isomer")),
    ),
    IdentitySet(
        "id_butenoate",
        "held-out",
        "butenoate",
        (("C/C=C/C(=O)OCC", "positional isomer"), ("C=CCOC(C)=O", "isomer"), ("C=CCC(=O)OC", "homologue")),
    ),
    IdentitySet(
        "id_hydroxybutanoate",
        "held-out",
        "hydroxybutanoate",
        (
            ("CCC(O)C(=O)OCC", "positional isomer"),
            ("OCCCC(=O)OCC", "positional isomer"),
            ("CC(O)CC(=O)OC", "homologue"),
        ),
    ),
    IdentitySet(
        "id_e_benzalacetone",
        "held-out",
        "e_benzalacetone",
        (("CC(=O)/C=C\\c1ccccc1", "other E/Z isomer"), ("C/C=C/C(=O)c1ccccc1", "positional isomer")),
    ),
    IdentitySet(
        "id_methylbutene_2",
        "held-out",
        "methylbutene_2",
        (
            ("C=C(C)CC", "positional isomer"),
            ("C=CC(C)C", "positional isomer"),
            ("C/C=C/CC", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_methylbutene_1",
        "held-out",
        "methylbutene_1",
        (
            ("CC=C(C)C", "positional isomer"),
            ("C=CC(C)C", "positional isomer"),
            ("C=CCCC", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_methylcyclohexene",
        "held-out",
        "methylcyclohexene",
        (
            ("C=C1CCCCC1", "positional isomer"),
            ("CC1C=CCCC1", "positional isomer"),
            ("CC1CC=CCC1", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_methylenecyclohexane",
        "held-out",
        "methylenecyclohexane",
        (("CC1=CCCCC1", "positional isomer"), ("C=CC1CCCC1", "positional isomer")),
    ),
    IdentitySet(
        "id_e_phenylbutene",
        "held-out",
        "e_phenylbutene",
        (
            ("CC/C=C\\c1ccccc1", "other E/Z isomer"),
            ("C=CCCc1ccccc1", "positional isomer"),
            ("CCC/C=C/c1ccccc1", "homologue"),
        ),
    ),
    IdentitySet(
        "id_e_anethole",
        "held-out",
        "e_anethole",
        (
            ("C/C=C\\c1ccc(OC)cc1", "other E/Z isomer"),
            ("C=CCc1ccc(OC)cc1", "positional isomer"),
            ("C/C=C/c1ccccc1OC", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_estragole",
        "held-out",
        "estragole",
        (
            ("C/C=C/c1ccc(OC)cc1", "positional isomer"),
            ("C=CCc1ccccc1OC", "positional isomer"),
            ("C=CCc1cccc(OC)c1", "positional isomer"),
        ),
    ),
    IdentitySet(
        "id_butyl_acrylate",
        "held-out",
        "butyl_acrylate",
        (("C=C(C)C(=O)OCCCC", "homologue"), ("C/C=C/C(=O)OCCCC", "homologue"), ("C=CC(=O)OCCC", "homologue")),
    ),
    IdentitySet(
        "id_aspirin",
        "held-out",
        "aspirin",
        (
            ("CC(=O)Oc1cccc(C(=O)O)c1", "positional isomer"),
            ("CC(=O)Oc1ccc(C(=O)O)cc1", "positional isomer"),
            ("COC(=O)c1ccccc1O", "isomer"),
        ),
    ),
)

HALVES = ("tune", "held-out")


def compound_halves() -> dict[str, set[str]]:
    """The halves each compound belongs to (through its family or its identity set)."""
    out: dict[str, set[str]] = {c.key: set() for c in COMPOUNDS}
    for fam in FAMILIES:
        for key, _ in fam.members:
            out[key].add(fam.half)
    for ident in IDENTITY_SETS:
        out[ident.true_key].add(ident.half)
    return out


def compound_half(key: str) -> str:
    """The one half a compound belongs to."""
    halves = compound_halves()[key]
    if len(halves) != 1:
        raise ValueError(f"compound {key!r} belongs to halves {sorted(halves)}, expected exactly one")
    return next(iter(halves))
