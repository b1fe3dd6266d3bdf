"""Reagents and solvents as data: basicity, bulk, nucleophilicity, acidity.

The values live in ``predictors/data/reagents.csv`` (one row per reagent, a
``pka_source`` for each pKa and a ``source`` for the qualitative columns) and
are read once with :func:`importlib.resources`. Look a reagent up by name or
alias with :func:`get_reagent`.
"""

from __future__ import annotations

import csv
import functools
import io
import math
from dataclasses import dataclass
from importlib import resources

from rdkit import Chem

from predictors.errors import InputError

__all__ = [
    "ACTIVATIONS",
    "REAGENT_KINDS",
    "BULK_LEVELS",
    "NUCLEOPHILICITY_LEVELS",
    "ACID_STRENGTHS",
    "Reagent",
    "get_reagent",
    "get_solvent",
    "list_reagents",
]

REAGENT_KINDS = ("base", "nucleophile", "acid", "solvent", "thermal", "oxidant", "activator")
#: What an activator does to the substrate: ``anti`` (activates an alcohol, then anti E2),
#: ``syn`` (activates an alcohol, then syn Ei), ``sn2`` (activates an alcohol, then SN2 with
#: inversion by the pronucleophile), ``ionise`` (pulls a halide off: E1/SN1 with shifts).
ACTIVATIONS = ("", "anti", "syn", "sn2", "ionise")
BULK_LEVELS = ("small", "medium", "large")
NUCLEOPHILICITY_LEVELS = ("none", "low", "medium", "high")
ACID_STRENGTHS = ("none", "weak", "moderate", "strong")
_COUNTER_ION_LEVELS = ("none", "low", "high")
_SOLVENT_CLASSES = ("", "protic", "aprotic", "nonpolar")
#: Conjugate-acid pKa from which a reagent counts as a strong base (common practice:
#: alkoxides and stronger; amines and the weakly basic nucleophiles fall below).
_STRONG_BASE_PKA = 13.0


@dataclass(frozen=True)
class Reagent:
    """One reagent or solvent.

    Attributes
    ----------
    name : str
        Canonical name, e.g. ``"tert-butoxide"``.
    aliases : tuple of str
        Other accepted names (formulae, salts, abbreviations).
    kind : str
        One of :data:`REAGENT_KINDS`.
    pka_conj_acid : float or None
        pKa of the conjugate acid of the reagent's basic form (for an acid HX,
        the pKa of HX itself); None for aprotic solvents.
    pka_source : str
        Where the pKa comes from.
    bulk : str
        Steric bulk, one of :data:`BULK_LEVELS`.
    nucleophilicity : str
        One of :data:`NUCLEOPHILICITY_LEVELS`.
    acid_strength : str
        One of :data:`ACID_STRENGTHS`.
    counter_ion_nucleophilicity : str
        For acids: how well the conjugate base traps a cation (``"none"``,
        ``"low"``, ``"high"``).
    nucleophile_smiles : str or None
        The group the reagent delivers in a substitution, written with a dummy
        atom ``*`` at the point of attachment; None when it does not substitute.
    zaitsev_factor : float
        Weight per extra alkyl substituent on the alkene in E2 (above 1 favours
        the more substituted alkene).
    default_solvent : str or None
        Solvent assumed when the user names none.
    solvent_class : str
        ``"protic"``, ``"aprotic"``, ``"nonpolar"`` or ``""`` (not a solvent).
    source : str
        Source of the qualitative columns.
    activation : str
        Activators only: one of :data:`ACTIVATIONS`.
    caution : str
        Hazard note printed with the candidates (empty when the general cautions suffice).
    example, negative : str
        For reagents that open a path of their own (heat, oxidants, activators, amines that
        alkylate): a substrate on which the path must appear and one on which it must not
        (run by :func:`predictors.products.check_reagent_examples`).
    """

    name: str
    aliases: tuple[str, ...]
    kind: str
    pka_conj_acid: float | None
    pka_source: str
    bulk: str
    nucleophilicity: str
    acid_strength: str
    counter_ion_nucleophilicity: str
    nucleophile_smiles: str | None
    zaitsev_factor: float
    default_solvent: str | None
    solvent_class: str
    source: str
    activation: str = ""
    caution: str = ""
    example: str = ""
    negative: str = ""

    @property
    def is_strong_base(self) -> bool:
        """True for alkoxides, amides, hydride, DBU (conjugate-acid pKa >= 13)."""
        pka = self.pka_conj_acid
        return self.kind == "base" and pka is not None and pka >= _STRONG_BASE_PKA

    @property
    def is_base(self) -> bool:
        """True for any reagent of kind ``"base"`` (amines included)."""
        return self.kind == "base"

    @property
    def is_acid(self) -> bool:
        """True for moderate and strong acids (they protonate alcohols)."""
        return self.acid_strength in ("moderate", "strong")

    @property
    def is_nucleophile(self) -> bool:
        """True when the reagent delivers a group in substitution."""
        return self.nucleophile_smiles is not None and (
            self.nucleophilicity != "none" or self.counter_ion_nucleophilicity == "high"
        )


def _optional_float(text: str, *, column: str, name: str) -> float | None:
    if not text.strip():
        return None
    value = float(text)
    if not math.isfinite(value):
        raise InputError(f"reagents.csv: {column} of {name!r} is not finite")
    return value


def _check_level(value: str, allowed: tuple[str, ...], *, column: str, name: str) -> str:
    if value not in allowed:
        raise InputError(f"reagents.csv: {column} of {name!r} is {value!r}; allowed: {allowed}")
    return value


def _row_to_reagent(row: dict[str, str]) -> Reagent:
    name = row["name"].strip()
    nucleophile = row["nucleophile_smiles"].strip() or None
    if nucleophile is not None:
        frag = Chem.MolFromSmiles(nucleophile)
        if frag is None or sum(a.GetAtomicNum() == 0 for a in frag.GetAtoms()) != 1:
            raise InputError(f"reagents.csv: nucleophile_smiles of {name!r} needs exactly one '*'")
    return Reagent(
        name=name,
        aliases=tuple(a.strip() for a in row["aliases"].split(";") if a.strip()),
        kind=_check_level(row["kind"], REAGENT_KINDS, column="kind", name=name),
        pka_conj_acid=_optional_float(row["pka_conj_acid"], column="pka_conj_acid", name=name),
        pka_source=row["pka_source"].strip(),
        bulk=_check_level(row["bulk"], BULK_LEVELS, column="bulk", name=name),
        nucleophilicity=_check_level(row["nucleophilicity"], NUCLEOPHILICITY_LEVELS,
                                     column="nucleophilicity", name=name),
        acid_strength=_check_level(row["acid_strength"], ACID_STRENGTHS, column="acid_strength", name=name),
        counter_ion_nucleophilicity=_check_level(row["counter_ion_nucleophilicity"], _COUNTER_ION_LEVELS,
                                                 column="counter_ion_nucleophilicity", name=name),
        nucleophile_smiles=nucleophile,
        zaitsev_factor=float(row["zaitsev_factor"]),
        default_solvent=row["default_solvent"].strip() or None,
        solvent_class=_check_level(row["solvent_class"], _SOLVENT_CLASSES, column="solvent_class", name=name),
        source=row["source"].strip(),
        activation=_check_level((row.get("activation") or "").strip(), ACTIVATIONS, column="activation",
                                name=name),
        caution=(row.get("caution") or "").strip(),
        example=(row.get("example") or "").strip(),
        negative=(row.get("negative") or "").strip(),
    )


@functools.lru_cache(maxsize=1)
def list_reagents() -> tuple[Reagent, ...]:
    """Every reagent and solvent of the packaged table, in table order."""
    text = resources.files("predictors.data").joinpath("reagents.csv").read_text(encoding="utf-8")
    return tuple(_row_to_reagent(row) for row in csv.DictReader(io.StringIO(text)))


def _normalise(name: str) -> str:
    return " ".join(name.lower().replace("_", " ").split())


@functools.lru_cache(maxsize=1)
def _name_index() -> dict[str, Reagent]:
    index: dict[str, Reagent] = {}
    for reagent in list_reagents():
        for key in (reagent.name, *reagent.aliases):
            norm = _normalise(key)
            if norm in index and index[norm] is not reagent:
                raise InputError(f"reagents.csv: name or alias {key!r} is used twice")
            index[norm] = reagent
    return index


def get_solvent(name: str) -> Reagent:
    """Look up a reaction solvent by name or alias (an entry with a solvent class).

    Raises
    ------
    InputError
        Unknown name, or a reagent that is not a solvent; the message lists the known solvents.
    """
    if isinstance(name, Reagent):
        return name
    solvents = ", ".join(r.name for r in list_reagents() if r.solvent_class)
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"solvent: expected a solvent name, got {name!r}; known solvents: {solvents}")
    entry = _name_index().get(_normalise(name))
    if entry is None:
        raise InputError(f"solvent: unknown name {name!r}; known solvents: {solvents}")
    if not entry.solvent_class:
        raise InputError(f"solvent: {name!r} is a reagent, not a solvent; known solvents: {solvents}")
    return entry


def get_reagent(name: str) -> Reagent:
    """Look up a reagent or solvent by name or alias (case-insensitive).

    Parameters
    ----------
    name : str
        e.g. ``"KOtBu"``, ``"tert-butoxide"``, ``"h2so4"``.

    Raises
    ------
    InputError
        Unknown name; the message lists the known names.
    """
    if isinstance(name, Reagent):
        return name
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"reagent: expected a reagent name, got {name!r}")
    reagent = _name_index().get(_normalise(name))
    if reagent is None:
        known = ", ".join(r.name for r in list_reagents())
        raise InputError(f"reagent: unknown name {name!r}; known: {known}")
    return reagent
