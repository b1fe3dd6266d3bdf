"""Increment tables of the shift models, the :class:`ShiftEstimate` record and the uncertainty of
each method (``data/*.csv``)."""

from __future__ import annotations

import csv
import functools
import math
from dataclasses import dataclass
from importlib import resources


@dataclass(frozen=True)
class ShiftEstimate:
    """Predicted shift of one proton.

    Attributes
    ----------
    shift_ppm, sd_ppm : float
        Shift and its standard uncertainty.
    label : str
        ``"vinyl"``, ``"aryl"``, ``"CH3"``, ``"CH2"``, ``"CH"``, ``"CHO"``,
        ``"alkyne"``, ``"OH"``, ``"NH"``, ``"SH"`` or ``"other"``.
    exchangeable : bool
        OH/NH/SH: broad, position depends on conditions.
    flags : tuple of str
        Fallbacks and assumptions used.
    """

    shift_ppm: float
    sd_ppm: float
    label: str
    exchangeable: bool = False
    flags: tuple[str, ...] = ()


@functools.cache
def load_increment_table(name: str) -> tuple[dict, ...]:
    """Rows of a packaged CSV table in ``predictors/data`` (``name`` without ``.csv``)."""
    text = resources.files("predictors.data").joinpath(f"{name}.csv").read_text(encoding="utf-8")
    return tuple(csv.DictReader(text.splitlines()))


@functools.cache
def _alkene_table() -> dict[str, tuple[float, float, float]]:
    return {r["group"]: (float(r["z_gem_ppm"]), float(r["z_cis_ppm"]), float(r["z_trans_ppm"]))
            for r in load_increment_table("alkene_increments") if r["used"] == "yes"}


@functools.cache
def _benzene_table() -> dict[tuple[str, str], tuple[float, ...]]:
    out = {}
    for r in load_increment_table("benzene_increments"):
        if r["table"] == "scs":
            out[("scs", r["group"])] = tuple(float(r[c]) for c in ("z_ortho_ppm", "z_meta_ppm", "z_para_ppm"))
        else:
            out[(r["table"], r["group"])] = (float(r["shift_ppm"]),)
    return out


@functools.cache
def _sp3_table() -> dict[tuple[str, str], dict]:
    return {(r["table"], r["group"]): r for r in load_increment_table("sp3_increments")}


def _sp3_value(table: str, group: str, column: str) -> float:
    return float(_sp3_table()[(table, group)][column])


def _method_sd(method: str) -> float:
    return _sp3_value("method_sd", method, "sd_ppm")


def _with_sd(shift: float, label: str, method: str, flags) -> ShiftEstimate:
    sd = _method_sd(method)
    fallbacks = sum(1 for f in flags if "taken from" in f or "generic" in f)
    if fallbacks:
        sd = math.hypot(sd, _method_sd("fallback_extra") * math.sqrt(fallbacks))
    return ShiftEstimate(float(shift), float(sd), label, False, tuple(flags))



def _unknown_shift(flag: str, *, label: str = "other") -> ShiftEstimate:
    return ShiftEstimate(_sp3_value("special", "unknown", "shift_ppm"),
                         _sp3_value("special", "unknown", "sd_ppm"), label, False, (flag,))


def _has_special(group: str) -> bool:
    return ("special", group) in _sp3_table()


def _special(group: str, label: str, *, exchangeable: bool = False, flags=()) -> ShiftEstimate:
    return ShiftEstimate(_sp3_value("special", group, "shift_ppm"), _sp3_value("special", group, "sd_ppm"),
                         label, exchangeable, tuple(flags))


