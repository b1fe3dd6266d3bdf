"""Substructure rules of the product enumerator, kept as data.

Each rule is one row: a name, what kind of rule it is, a SMARTS pattern, an
example that must match, a negative example that must not, and a one-line
description. Leaving-group rules carry atom maps ``:1`` (the alpha carbon, which
bears the leaving group) and ``:2`` (the leaving-group atom bonded to it), plus
the conditions under which the group leaves. The table is compiled once
(:func:`compiled_rules`) and checks itself (:func:`check_rules`).

Sources: the leaving-group and alpha-carbon classes follow the rules of thumb in
``shared/references.md`` section 8 (common practice, textbook level).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

from rdkit import Chem

from predictors.errors import InputError

__all__ = [
    "NEEDS",
    "QUALITIES",
    "RULE_KINDS",
    "Rule",
    "CompiledRule",
    "RULES",
    "compiled_rules",
    "rules_of_kind",
    "check_rules",
]

#: Kinds of rule in the table.
RULE_KINDS = ("leaving group", "alpha class", "activating group")
#: What a leaving group needs before it leaves.
NEEDS = ("any", "acid", "base", "heat", "oxidant", "activator")
#: Qualities of leaving group.
QUALITIES = ("good", "poor", "charged", "syn")


@dataclass(frozen=True)
class Rule:
    """One row of the rule table.

    Attributes
    ----------
    name : str
        Short unique name, e.g. ``"bromide"``.
    kind : str
        One of :data:`RULE_KINDS`.
    smarts : str
        Pattern; leaving-group rules map the alpha carbon ``:1`` and the
        leaving-group atom ``:2``; other kinds map the atom they classify ``:1``.
    example : str
        SMILES that must match.
    negative : str
        SMILES that must not match.
    description : str
        One line for people.
    quality : str
        Leaving groups only: ``"good"``, ``"poor"`` (leaves only by E1cB),
        ``"charged"`` (neutral amine leaves; Hofmann orientation) or ``"syn"``
        (leaves by a thermal syn elimination, Ei, through a cyclic transition state).
    needs : str
        Leaving groups only: one of :data:`NEEDS`: ``"any"``, ``"acid"`` (leaves
        when protonated), ``"base"`` (E1cB, needs a base), ``"heat"`` (Ei on heating),
        ``"oxidant"`` (oxidised in situ, then Ei) or ``"activator"`` (an alcohol
        activated by a reagent).
    zaitsev_multiplier : float
        Leaving groups only: factor on the reagent's Zaitsev factor (below 1
        shifts towards the less substituted alkene; common practice). For syn
        (Ei) groups under heat alone it is the orientation factor itself.
    min_temp_c : float
        Syn (Ei) groups: temperature below which the elimination is too slow to
        expect (common practice); the site then mostly stays unreacted.
    ts_ring : int
        Syn (Ei) groups and activated alcohols: size of the cyclic transition
        state (5 or 6), which sets how far from syn-periplanar the H may be.
    caution : str
        Hazard of the group or of what it releases, printed with the candidates.
    """

    name: str
    kind: str
    smarts: str
    example: str
    negative: str
    description: str
    quality: str = ""
    needs: str = "any"
    zaitsev_multiplier: float = 1.0
    min_temp_c: float = -100.0
    ts_ring: int = 0
    caution: str = ""


@dataclass(frozen=True)
class CompiledRule:
    """A :class:`Rule` with its compiled query and mapped atom positions."""

    rule: Rule
    query: Chem.Mol
    map_positions: tuple[int, ...]

    def match(self, mol: Chem.Mol) -> tuple[tuple[int, ...], ...]:
        """Return, for every match, the molecule atoms of map numbers 1, 2, ... in order."""
        hits = mol.GetSubstructMatches(self.query, uniquify=False, useChirality=False)
        seen: list[tuple[int, ...]] = []
        for hit in hits:
            mapped = tuple(hit[p] for p in self.map_positions)
            if mapped not in seen:
                seen.append(mapped)
        return tuple(seen)


_EWG = "$([CX3]=[OX1]),$([CX2]#[NX1]),$([NX3+](=O)[O-]),$([SX4](=O)(=O))"
_POOR_LG = "$([OX2H1]),$([OX2][CX4]),$([OX2]C(=O)[#6]),$([NX3;!$(N-C=O);!$(N-a);!$(N=*)])"

_SELENIUM_CAUTION = ("organoselenium compounds and the areneselenenic acid released are toxic and "
                     "malodorous: fume hood, gloves, collect selenium waste separately")

#: The rule table. Order matters within a kind: the first leaving-group rule
#: that claims an (alpha, leaving atom) pair wins.
RULES: tuple[Rule, ...] = (
    Rule("triflate", "leaving group", "[CX4:1]-[OX2:2]S(=O)(=O)C(F)(F)F",
         "CC(C)OS(=O)(=O)C(F)(F)F", "CC(C)OS(=O)(=O)C", "trifluoromethanesulfonate ester", "good"),
    Rule("nosylate", "leaving group", "[CX4:1]-[OX2:2]S(=O)(=O)c1ccc(cc1)[N+](=O)[O-]",
         "CCOS(=O)(=O)c1ccc([N+](=O)[O-])cc1", "CCOS(=O)(=O)c1ccc(C)cc1",
         "4-nitrobenzenesulfonate ester", "good"),
    Rule("tosylate", "leaving group", "[CX4:1]-[OX2:2]S(=O)(=O)c1ccc([CH3])cc1",
         "CCC(C)OS(=O)(=O)c1ccc(C)cc1", "CCC(C)OS(=O)(=O)c1ccccc1", "4-toluenesulfonate ester", "good"),
    Rule("mesylate", "leaving group", "[CX4:1]-[OX2:2]S(=O)(=O)[CH3]",
         "CCC(C)OS(=O)(=O)C", "CCC(C)OS(=O)(=O)CC", "methanesulfonate ester", "good"),
    Rule("sulfonate", "leaving group", "[CX4:1]-[OX2:2]S(=O)(=O)[#6]",
         "CCOS(=O)(=O)c1ccccc1", "CCOS(=O)(=O)O", "other sulfonate ester", "good"),
    Rule("iodide", "leaving group", "[CX4:1]-[IX1:2]", "CCI", "C=CI", "alkyl iodide", "good"),
    Rule("bromide", "leaving group", "[CX4:1]-[BrX1:2]", "CC(Br)C", "c1ccccc1Br", "alkyl bromide", "good"),
    Rule("chloride", "leaving group", "[CX4:1]-[ClX1:2]", "CC(Cl)CC", "ClC(=O)C", "alkyl chloride", "good"),
    Rule("fluoride", "leaving group", "[CX4;!$(C(F)F):1]-[FX1:2]", "CC(F)CC", "CC(F)(F)F",
         "alkyl fluoride (not CF2/CF3, which are inert): Hofmann-like orientation", "good", "any", 0.1),
    Rule("trialkylammonium", "leaving group", "[CX4;!H3:1]-[NX4+:2]([#6])([#6])[#6]",
         "CCC(C)[N+](C)(C)C", "C[N+](C)(C)C", "quaternary ammonium: neutral amine leaves (Hofmann)",
         "charged", "any", 0.05),
    # Syn (Ei) eliminations: temperatures and orientations are common practice (March's Advanced
    # Organic Chemistry, elimination chapter, and Clayden et al. 2012; from memory): Cope about
    # 100-150 C, less substituted side favoured; sulfoxides about 100-150 C; selenoxides below room
    # temperature; Chugaev (xanthates) 150-250 C; carboxylate esters 300-500 C, roughly statistical
    # with a slight preference for the less substituted side.
    Rule("amine oxide", "leaving group", "[CX4;!H3:1]-[NX4+:2]([OX1-])([#6])[#6]",
         "CCC(C)[N+](C)(C)[O-]", "CCC(C)[N+](C)(C)C",
         "tertiary amine N-oxide: Cope elimination (syn) on heating", "syn", "heat", 0.5, 100.0, 5),
    Rule("tertiary amine (oxidised in situ)", "leaving group",
         "[CX4;!H3:1]-[NX3;H0;!$(N-C=O);!$(N-a);!$(N-[!#6]);!$(N=*):2](-[CX4])-[CX4]",
         "CCC(C)N(C)C", "CCC(C)NC",
         "tertiary amine: N-oxide with an oxidant, then Cope elimination (syn) on heating",
         "syn", "oxidant", 0.5, 100.0, 5),
    Rule("selenoxide", "leaving group", "[CX4:1]-[$([SeX3]=O),$([Se+][O-]):2]-[#6]",
         "CCC(C)[Se](=O)c1ccccc1", "CCC(C)[Se]c1ccccc1",
         "selenoxide: syn elimination at or below room temperature", "syn", "any", 0.8, -20.0, 5,
         caution=_SELENIUM_CAUTION),
    Rule("selenide (oxidised in situ)", "leaving group", "[CX4:1]-[SeX2:2]-[#6]",
         "CCC(C)[Se]c1ccccc1", "CCC(C)Sc1ccccc1",
         "selenide: selenoxide with an oxidant, then syn elimination", "syn", "oxidant", 0.8, -20.0,
         5, caution=_SELENIUM_CAUTION),
    Rule("sulfoxide", "leaving group", "[CX4:1]-[$([SX3]=O),$([S+][O-]):2]-[#6]",
         "CCC(C)S(=O)c1ccccc1", "CCC(C)S(=O)(=O)c1ccccc1",
         "sulfoxide: syn elimination on heating", "syn", "heat", 0.8, 100.0, 5),
    Rule("sulfide (oxidised in situ)", "leaving group", "[CX4:1]-[SX2:2]-[#6]",
         "CCC(C)Sc1ccccc1", "CCC(C)S(=O)c1ccccc1",
         "sulfide: sulfoxide with one equivalent of oxidant, then syn elimination on heating",
         "syn", "oxidant", 0.8, 100.0, 5),
    Rule("xanthate", "leaving group", "[CX4:1]-[OX2:2]C(=S)S[#6]",
         "CCC(C)OC(=S)SC", "CCC(C)OC(=O)SC",
         "S-alkyl xanthate: Chugaev elimination (syn) on heating", "syn", "heat", 0.8, 150.0, 6),
    Rule("carboxylate ester (pyrolysis)", "leaving group", "[CX4:1]-[OX2:2]C(=O)[#6]",
         "CCC(C)OC(C)=O", "CCC(C)OC(=O)OC",
         "carboxylate ester: syn pyrolytic elimination at high temperature", "syn", "heat", 0.8, 300.0, 6),
    Rule("hydroxyl (protonated)", "leaving group", "[CX4:1]-[OX2H1:2]",
         "CC(O)CC", "CC(=O)O", "alcohol: leaves as water under strong acid", "good", "acid"),
    Rule("hydroxyl (activated)", "leaving group", "[CX4:1]-[OX2H1:2]",
         "CC(O)CC", "CC(=O)O",
         "alcohol activated by a reagent (POCl3, Burgess, Martin, Mitsunobu): leaves as the activated oxygen",
         "good", "activator", ts_ring=6),
    Rule("E1cB poor leaving group", "leaving group",
         f"[CX4:1](-[{_POOR_LG}:2])-[CX4;!H0]-[{_EWG}]",
         "CC(O)CC(C)=O", "CC(O)CCC(C)=O",
         "OH, OR, OAc or NR2 beta to a carbonyl, nitrile, nitro or sulfonyl group (E1cB with base)",
         "poor", "base"),
    Rule("vinylic or aryl halide", "alpha class", "[$([c]),$([CX3]=*):1]-[F,Cl,Br,I]",
         "C=CBr", "CCBr", "halogen on sp2 carbon: unreactive to SN1, SN2 and E2"),
    Rule("methyl", "alpha class", "[CH3X4:1]-[!#6;!#1]", "CBr", "CCBr", "methyl carbon"),
    Rule("primary", "alpha class", "[CH2X4:1](-[#6])-[!#6;!#1]", "CCBr", "CC(C)Br",
         "carbon with one carbon neighbour"),
    Rule("secondary", "alpha class", "[CH1X4:1](-[#6])(-[#6])-[!#6;!#1]", "CC(C)Br", "CC(C)(C)Br",
         "carbon with two carbon neighbours"),
    Rule("tertiary", "alpha class", "[CH0X4:1](-[#6])(-[#6])(-[#6])-[!#6;!#1]", "CC(C)(C)Br", "CC(C)Br",
         "carbon with three carbon neighbours"),
    Rule("allylic", "alpha class", "[CX4:1](-[!#6;!#1])-[CX3]=[CX3]", "C=CCBr", "C=CCCBr",
         "next to a C=C: cation stabilised, SN1/SN2 faster"),
    Rule("benzylic", "alpha class", "[CX4:1](-[!#6;!#1])-a", "BrCc1ccccc1", "BrCCc1ccccc1",
         "next to an aromatic ring: cation stabilised"),
    Rule("neopentyl-like", "alpha class", "[CH2X4:1](-[!#6;!#1])-[CX4H0](-[#6])(-[#6])-[#6]", "CC(C)(C)CBr",
         "CC(C)CCBr", "primary carbon next to a quaternary carbon: SN2 very slow"),
    Rule("anion-stabilising group", "activating group", f"[CX4;!H0:1]-[{_EWG}]", "CC(C)=O", "CCO",
         "sp3 C-H next to a carbonyl, nitrile, nitro or sulfonyl: acidic (E1cB, conjugated alkene)"),
)


@functools.lru_cache(maxsize=1)
def compiled_rules() -> tuple[CompiledRule, ...]:
    """Compile every rule once; raise :class:`InputError` on a bad pattern."""
    out = []
    for rule in RULES:
        if rule.kind not in RULE_KINDS:
            raise InputError(f"rule {rule.name!r}: kind {rule.kind!r} not in {RULE_KINDS}")
        query = Chem.MolFromSmarts(rule.smarts)
        if query is None:
            raise InputError(f"rule {rule.name!r}: invalid SMARTS {rule.smarts!r}")
        maps = {a.GetAtomMapNum(): a.GetIdx() for a in query.GetAtoms() if a.GetAtomMapNum()}
        positions = tuple(maps[k] for k in sorted(maps))
        out.append(CompiledRule(rule, query, positions))
    return tuple(out)


def rules_of_kind(kind: str) -> tuple[CompiledRule, ...]:
    """Compiled rules of one kind, in table order."""
    if kind not in RULE_KINDS:
        raise InputError(f"kind: {kind!r} is not a rule kind; allowed: {', '.join(RULE_KINDS)}")
    return tuple(r for r in compiled_rules() if r.rule.kind == kind)


def check_rules() -> tuple[str, ...]:
    """Self-test of the table: every example matches, every negative example does not.

    Returns
    -------
    tuple of str
        One message per failing rule; empty when the table is consistent.
    """
    problems = []
    names = [r.name for r in RULES]
    for dup in sorted({n for n in names if names.count(n) > 1}):
        problems.append(f"{dup}: duplicate rule name")
    for compiled in compiled_rules():
        rule = compiled.rule
        expected_maps = 2 if rule.kind == "leaving group" else 1
        if len(compiled.map_positions) != expected_maps:
            problems.append(f"{rule.name}: expected {expected_maps} mapped atom(s)")
        if rule.kind == "leaving group" and (rule.quality not in QUALITIES or rule.needs not in NEEDS):
            problems.append(f"{rule.name}: quality {rule.quality!r} or needs {rule.needs!r} not allowed")
        for smiles, want in ((rule.example, True), (rule.negative, False)):
            mol = Chem.MolFromSmiles(smiles)
            if mol is None:
                problems.append(f"{rule.name}: cannot parse {smiles!r}")
            elif bool(compiled.match(mol)) != want:
                problems.append(f"{rule.name}: {smiles!r} should {'' if want else 'not '}match")
    return tuple(problems)
