"""Residual solvent, water, TMS and common impurity signals of NMR solvents.

Values live in ``confirm/data/solvent_signals.csv`` (one row per signal, each
with its ``source``): residual 1H and water lines from Gottlieb, Kotlyar and
Nudelman, J. Org. Chem. 1997, 62, 7512 (reprinted by Fulmer et al.,
Organometallics 2010, 29, 2176). Processing uses them to reference a spectrum;
the mixture fitter uses them to mask lines that belong to no candidate.
"""

from __future__ import annotations

import csv
import functools
import re
from dataclasses import dataclass
from importlib import resources

from predictors.errors import InputError

__all__ = [
    "TMS_PPM",
    "SolventSignals",
    "ImpuritySignal",
    "solvent_signals",
    "impurity_signals",
    "normalise_solvent_name",
    "known_solvents",
]

#: Tetramethylsilane, the 1H shift origin (by definition).
TMS_PPM = 0.0


@dataclass(frozen=True)
class SolventSignals:
    """The lines a deuterated solvent itself puts into a 1H spectrum.

    Attributes
    ----------
    name : str
        Canonical name, e.g. ``"CDCl3"``.
    residual_ppm : float
        Residual protio-solvent line (e.g. CHCl3 in CDCl3).
    residual_multiplicity : str
        ``"s"`` or ``"quint"`` (CHD2 groups couple to two deuterons).
    residual_label : str
        Chemical name of the residual species, e.g. ``"CHCl3"``.
    water_ppm : float or None
        Dissolved water (HOD/H2O); moves with temperature and concentration.
    carbon_ppm : tuple of float
        13C lines of the solvent.
    aliases : tuple of str
        Names recognised by :func:`normalise_solvent_name`.
    source : str
        Where the residual value comes from.
    """

    name: str
    residual_ppm: float
    residual_multiplicity: str
    residual_label: str
    water_ppm: float | None
    carbon_ppm: tuple[float, ...]
    aliases: tuple[str, ...]
    source: str


@dataclass(frozen=True)
class ImpuritySignal:
    """A line of a common impurity (or the TMS standard) in a given solvent.

    Attributes
    ----------
    name : str
        e.g. ``"diethyl ether CH2"``, ``"TMS"``.
    ppm : float
    multiplicity : str
        ``"s"``, ``"t"``, ``"q"``, ``"m"``...
    n_h : int
        Protons behind the line.
    source : str
    """

    name: str
    ppm: float
    multiplicity: str
    n_h: int
    source: str


@functools.lru_cache(maxsize=1)
def _read_rows() -> tuple[dict, ...]:
    text = resources.files("confirm.data").joinpath("solvent_signals.csv").read_text(encoding="utf-8")
    return tuple(csv.DictReader(text.splitlines()))


def _alias_key(text: str) -> str:
    return re.sub(r"[\s_\-]+", "", text.strip().lower())


@functools.lru_cache(maxsize=1)
def _alias_table() -> dict[str, str]:
    table = {}
    for row in _read_rows():
        if row["kind"] != "residual":
            continue
        for alias in [row["solvent"], *row["aliases"].split("|")]:
            if alias:
                table[_alias_key(alias)] = row["solvent"]
    return table


def known_solvents() -> tuple[str, ...]:
    """Canonical names of every solvent in the table."""
    return tuple(dict.fromkeys(row["solvent"] for row in _read_rows()))


def normalise_solvent_name(text: str | None) -> str | None:
    """Map a solvent label as written in a data file to its canonical name.

    Parameters
    ----------
    text : str or None
        e.g. ``"Chloroform-d"``, ``"<CDCl3>"``, ``"DMSO"``.

    Returns
    -------
    str or None
        Canonical name (``"CDCl3"``, ``"DMSO-d6"``...) or None when unknown.
    """
    if not text:
        return None
    cleaned = str(text).strip().strip("<>").strip()
    return _alias_table().get(_alias_key(cleaned))


def solvent_signals(name: str) -> SolventSignals:
    """Residual, water and 13C lines of a solvent.

    Parameters
    ----------
    name : str
        Any name :func:`normalise_solvent_name` recognises.

    Raises
    ------
    InputError
        When the solvent is not in the table.
    """
    canonical = normalise_solvent_name(name)
    if canonical is None:
        raise InputError(f"solvent: unknown solvent {name!r}; known: {', '.join(known_solvents())}")
    rows = [r for r in _read_rows() if r["solvent"] == canonical]
    residual = next(r for r in rows if r["kind"] == "residual")
    water = [float(r["ppm"]) for r in rows if r["kind"] == "water"]
    aliases = tuple(a for a in residual["aliases"].split("|") if a)
    return SolventSignals(
        name=canonical,
        residual_ppm=float(residual["ppm"]),
        residual_multiplicity=residual["multiplicity"],
        residual_label=residual["name"],
        water_ppm=water[0] if water else (float(residual["ppm"]) if canonical == "D2O" else None),
        carbon_ppm=tuple(float(r["ppm"]) for r in rows if r["kind"] == "carbon"),
        aliases=aliases,
        source=residual["source"],
    )


def impurity_signals(solvent: str) -> tuple[ImpuritySignal, ...]:
    """Lines of TMS and common impurities in ``solvent``.

    Parameters
    ----------
    solvent : str
        Any name :func:`normalise_solvent_name` recognises.

    Raises
    ------
    InputError
        When the solvent is not in the table.
    """
    canonical = solvent_signals(solvent).name
    return tuple(
        ImpuritySignal(name=r["name"], ppm=float(r["ppm"]), multiplicity=r["multiplicity"],
                       n_h=int(r["n_h"]), source=r["source"])
        for r in _read_rows() if r["solvent"] == canonical and r["kind"] == "impurity"
    )
