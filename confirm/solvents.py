"""Residual solvent, water, TMS and common impurity signals of NMR solvents.

Values live in ``confirm/data/solvent_signals.csv`` (one row per signal, each
with its ``source``): residual 1H and water lines from Gottlieb, Kotlyar and
Nudelman, J. Org. Chem. 1997, 62, 7512 (reprinted by Fulmer et al.,
Organometallics 2010, 29, 2176), with the residual line's H-D coupling (its
multiplet) and the 1J(C,H) of its 13C satellites. Processing uses them to
recognise and reference a spectrum; the mixture fitter uses them to mask lines
that belong to no candidate.

:func:`normalise_solvent_name` reads solvent labels as people and instruments
write them: any case, in English, German, French, Spanish or Italian, with
isotope marks (``-d``, ``-d6``, ``d6-``, ``[D6]``), purity or volume percentages
and added TMS (``"Chloroform-d 90vol%"``, ``"Aceton"``, ``"CDCl3 + 0.03% TMS"``).
"""

from __future__ import annotations

import csv
import functools
import re
import unicodedata
from dataclasses import dataclass
from importlib import resources

from predictors.errors import InputError

__all__ = [
    "TMS_PPM",
    "TMS_SI_SATELLITE_J_HZ",
    "TMS_SI_SATELLITE_SHARE",
    "TMS_CH_J_HZ",
    "hdo_shift_ppm",
    "SolventSignals",
    "ImpuritySignal",
    "solvent_signals",
    "impurity_signals",
    "normalise_solvent_name",
    "known_solvents",
    "name_line",
]

#: Tetramethylsilane, the 1H shift origin (by definition).
TMS_PPM = 0.0
#: 2J(29Si,1H) of TMS: its 29Si satellites sit +-3.3 Hz from the line (memory; 6.4-6.5 Hz measured
#: in the shared real spectra).
TMS_SI_SATELLITE_J_HZ = 6.6
#: Share of TMS molecules with a 29Si (natural abundance 4.685 %, memory): both satellites together.
TMS_SI_SATELLITE_SHARE = 0.047
#: 1J(13C,1H) of TMS (memory; 118.3 Hz measured in the shared real spectra).
TMS_CH_J_HZ = 118.0
#: HDO moves upfield as the temperature rises (memory: Gottlieb et al. 1997 give
#: delta = 7.83 - T/96.9 for HDO in D2O); anchored at the table value at 298 K.
_HDO_PPM_PER_K = -1.0 / 96.9


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
        ``"s"``, ``"br s"``, ``"t"`` (CHD groups: 1:1:1) or ``"quint"`` (CHD2 groups:
        1:2:3:2:1, coupled to two deuterons).
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
    residual_j_hd_hz : float or None
        H-D coupling that splits the residual line (None for singlets).
    residual_j_ch_hz : float or None
        1J(13C,1H) of the residual species: its 13C satellites sit +-J/2 from it.
    """

    name: str
    residual_ppm: float
    residual_multiplicity: str
    residual_label: str
    water_ppm: float | None
    carbon_ppm: tuple[float, ...]
    aliases: tuple[str, ...]
    source: str
    residual_j_hd_hz: float | None = None
    residual_j_ch_hz: float | None = None


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
    plain = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode("ascii")
    return re.sub(r"[\s_\-()\[\]{}<>.,;:+&'\"]+", "", plain.strip().lower())


# purity, volume or isotope percentages and added TMS: "99.8 atom % D", "90vol%", "+ 0.03 % v/v TMS"
_DECORATION = re.compile(
    r"(?:\b(?:w/|with|mit|avec|con|and)\s*)?(?:\d+(?:[.,]\d+)?\s*(?:%|vol\s*%?|v/v|atom\s*%?)\s*)*"
    r"(?:v/v\s*)?\b(?:tms|tetramethylsilane)\b"
    r"|\d+(?:[.,]\d+)?\s*(?:%|vol\s*%?|v/v|atom\s*%?)(?:\s*(?:atom|at\.|d\b|v/v|vol))*\s*%?"
    r"|\b(?:dry|anhydrous|stabili[sz]ed|trocken)\b",
    flags=re.IGNORECASE)
# isotope marks: "-d6", "-d", " d6", "d6-", "[D6]", "deutero", "deuterated"
_ISOTOPE = re.compile(r"\[d\d*\]|\b\(?d\d*\)?-(?=[a-z])|-d\d*\b|\sd\d*\b|\bdeutero-?|\bdeuterated\s+|"
                      r"\bdeuteriert(?:es)?\s+|\bdeutéré\b|\bdeuterado\b", flags=re.IGNORECASE)


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
    table = _alias_table()
    cleaned = str(text).strip().strip("<>").strip()
    for candidate in (cleaned, _DECORATION.sub(" ", cleaned)):
        found = table.get(_alias_key(candidate)) or table.get(_alias_key(_ISOTOPE.sub(" ", candidate)))
        if found:
            return found
    return None


def hdo_shift_ppm(solvent: str, temperature_k: float | None) -> float | None:
    """Where water (HOD/H2O) is expected in ``solvent`` at ``temperature_k`` (table value at 298 K).

    Only the D2O line is moved with temperature (slope -1/96.9 ppm per K, memory); the water
    lines of organic solvents also depend on concentration, so they stay at the table value.
    """
    signals = solvent_signals(solvent)
    if signals.water_ppm is None:
        return None
    if signals.name == "D2O" and temperature_k is not None and 250.0 <= temperature_k <= 380.0:
        return signals.water_ppm + _HDO_PPM_PER_K * (temperature_k - 298.0)
    return signals.water_ppm


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
        residual_j_hd_hz=float(residual["j_hd_hz"]) if residual.get("j_hd_hz") else None,
        residual_j_ch_hz=float(residual["j_ch_hz"]) if residual.get("j_ch_hz") else None,
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


#: How far (ppm) a measured line may sit from a tabulated solvent or impurity line and still be
#: named after it: the tables' values move by 0.01-0.02 ppm with concentration and temperature.
# common practice
LINE_NAME_TOLERANCE_PPM = 0.02


def name_line(ppm: float, solvent: str | None, *, multiplicity: str | None = None,
              tolerance_ppm: float = LINE_NAME_TOLERANCE_PPM) -> str | None:
    """What a measured line may be when it sits on a known solvent, water, TMS or impurity line
    of ``solvent`` (within ``tolerance_ppm``); None otherwise, or when the solvent is unknown.

    A product line can sit there too: the name is a hint ("may be"), never a removal. Where the
    multiplicity is given, an impurity line of another multiplicity is not named (a singlet is not
    the quartet of diethyl ether).
    """
    canonical = normalise_solvent_name(solvent) if solvent else None
    if canonical is None:
        return None
    signals = solvent_signals(canonical)
    options = [(signals.residual_ppm, f"residual {signals.residual_label}", signals.residual_multiplicity)]
    if signals.water_ppm is not None:
        options.append((signals.water_ppm, "water", "s"))
    options += [(s.ppm, s.name, s.multiplicity) for s in impurity_signals(canonical)]
    close = [(abs(ppm - at), name, mult) for at, name, mult in options if abs(ppm - at) <= tolerance_ppm]
    if multiplicity and multiplicity not in ("m", "br s"):
        close = [c for c in close if c[2] in ("m", "br s") or c[2][:1] == multiplicity[:1]
                 or "water" in c[1] or "residual" in c[1]]
    if not close:
        return None
    return min(close)[1]
