"""Decode JCAMP-DX data tables (AFFN, PAC, SQZ, DIF, DUP) within a memory bound.

JCAMP-DX 4.24 (McDonald and Wilks, Appl. Spectrosc. 1988, 42, 151) and 5.01 write ordinates in
ASCII squeezed difference form: each line starts with an abscissa, then ordinates as plain
numbers (AFFN, PAC) or pseudo-digits: SQZ ``@A-I a-i`` (an ordinate whose first digit carries
the sign), DIF ``%J-R j-r`` (a difference to the previous ordinate) and DUP ``S-Z s`` (the
previous token repeated, the count including it). After a line that ends in DIF form the next
line's first ordinate repeats the last one (the Y check value) and is not data.

A DUP count can expand a few bytes into millions of points, so the tokens are counted first
and a table that decodes to more points than its header declares (or than :data:`MAX_POINTS`)
is refused before anything is allocated.
"""

from __future__ import annotations

import re

import numpy as np

from predictors.errors import FileFormatError

__all__ = ["MAX_POINTS", "decode_ordinates", "decode_pairs"]

#: Largest number of points any one data table may decode to.
MAX_POINTS = 1 << 24

_SQZ = {"@": 0, **{c: i + 1 for i, c in enumerate("ABCDEFGHI")},
        **{c: -(i + 1) for i, c in enumerate("abcdefghi")}}
_DIF = {"%": 0, **{c: i + 1 for i, c in enumerate("JKLMNOPQR")},
        **{c: -(i + 1) for i, c in enumerate("jklmnopqr")}}
_DUP = {**{c: i + 1 for i, c in enumerate("STUVWXYZ")}, "s": 9}
_PSEUDO = "".join(_SQZ) + "".join(_DIF) + "".join(_DUP)
# a pseudo-digit other than E/e (which AFFN also uses, as the exponent letter)
_COMPRESSED_HINT = re.compile("[" + re.escape(_PSEUDO.replace("E", "").replace("e", "")) + "]")
_SEPARATOR = r"[\s,;]*"
_COMPRESSED_TOKEN = re.compile(_SEPARATOR + r"(?:([" + re.escape(_PSEUDO) + r"])(\d*\.?\d*)"
                               r"|([+-]?(?:\d+\.?\d*|\.\d+))|(\?)|(\S))")
_AFFN_TOKEN = re.compile(_SEPARATOR + r"(?:()()([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)|(\?)|(\S))")
# pseudo-digit -> (kind, sign, leading digit)
_LEAD = {**{c: ("abs", 1 if v >= 0 else -1, str(abs(v))) for c, v in _SQZ.items()},
         **{c: ("dif", 1 if v >= 0 else -1, str(abs(v))) for c, v in _DIF.items()},
         **{c: ("dup", 1, str(v)) for c, v in _DUP.items()}}
_X_COMPRESSED = re.compile(r"\s*[+-]?(?:\d+\.?\d*|\.\d+)")
_X_AFFN = re.compile(r"\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_ABS, _DIFF = 0, 1


def decode_ordinates(lines: list[str], *, source: str, declared: int | None = None) -> np.ndarray:
    """Ordinates of an ``(X++(Y..Y))`` table.

    Parameters
    ----------
    lines : list of str
        The data lines (after the ``(X++(Y..Y))`` line); comments already removed.
    source : str
        Named in error messages (file and table).
    declared : int, optional
        Points the header declares; a table that decodes to more (or to more than
        :data:`MAX_POINTS`) is refused before anything is allocated.

    Returns
    -------
    ndarray of float

    Raises
    ------
    FileFormatError
        Unknown characters, missing values, a DUP or DIF with nothing before it, a wrong Y check
        value, or more points than declared.
    """
    max_points = MAX_POINTS if declared is None else min(declared, MAX_POINTS)
    body = "\n".join(lines)
    compressed = bool(_COMPRESSED_HINT.search(body)) or bool(re.search(r"(?<![\d.])[Ee]", body))
    values, kinds, repeats, checks = [], [], [], []
    count = 0
    line_ends_in_dif = False
    for line_no, line in enumerate(lines, start=1):
        tokens = _line_tokens(line, compressed, source, line_no)
        if not tokens:
            continue
        first, after_check = True, False
        for kind, value in tokens:
            if kind == "dup":
                if not repeats or first:
                    raise FileFormatError(f"{source}: line {line_no}: a DUP count with no value before it")
                if value < 1 or value != int(value):
                    raise FileFormatError(f"{source}: line {line_no}: DUP count {value:g} is not a whole "
                                          "number >= 1")
                if after_check:  # the check value itself repeated: the further copies are data
                    values.append(checks[-1][1])
                    kinds.append(_ABS)
                    repeats.append(0)
                count += int(value) - 1
                repeats[-1] += int(value) - 1
                after_check = False
            else:
                after_check = False
                if first and line_ends_in_dif:
                    checks.append((count, value, line_no))  # the Y check value: not data
                    first, after_check = False, True
                    continue
                if kind == "dif" and not values:
                    raise FileFormatError(f"{source}: line {line_no}: a difference (DIF) with no value "
                                          "before it")
                values.append(value)
                kinds.append(_DIFF if kind == "dif" else _ABS)
                repeats.append(1)
                count += 1
            first = False
            if count > max_points:
                limit = (f"the {declared} points its header declares" if max_points == declared
                         else f"{MAX_POINTS} points")
                raise FileFormatError(f"{source}: data table decodes to more than {limit} (line {line_no}); "
                                      "refused before decoding")
        last_token = next((k for k, _ in reversed(tokens) if k != "dup"), None)
        line_ends_in_dif = last_token == "dif"
    if not values:
        return np.zeros(0)
    expanded = np.repeat(np.asarray(values, dtype=float), repeats)
    is_dif = np.repeat(np.asarray(kinds, dtype=bool), repeats)
    index = np.arange(expanded.size)
    last_abs = np.maximum.accumulate(np.where(is_dif, 0, index))
    steps = np.cumsum(np.where(is_dif, expanded, 0.0))
    y = expanded[last_abs] + steps - steps[last_abs]
    for position, value, line_no in checks:
        if position == 0 or abs(y[position - 1] - value) > 1e-6 * max(1.0, abs(value)):
            raise FileFormatError(f"{source}: line {line_no}: Y check value {value:g} does not repeat the "
                                  "previous line's last value (corrupt DIF data)")
    return y


def decode_pairs(lines: list[str], *, source: str,
                 declared: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Abscissas and ordinates of an ``(XY..XY)`` table of plain numbers."""
    max_points = MAX_POINTS if declared is None else min(declared, MAX_POINTS)
    numbers = []
    for line_no, line in enumerate(lines, start=1):
        tokens = _line_tokens(" 0 " + line, False, source, line_no)  # no leading abscissa on these lines
        numbers += [v for _, v in tokens]
        if len(numbers) > 2 * max_points:
            raise FileFormatError(f"{source}: data table holds more than {max_points} points; refused")
    if len(numbers) % 2:
        raise FileFormatError(f"{source}: (XY..XY) table holds an odd number of values ({len(numbers)})")
    pairs = np.asarray(numbers, dtype=float).reshape(-1, 2)
    return pairs[:, 0], pairs[:, 1]


def _line_tokens(line: str, compressed: bool, source: str, line_no: int) -> list[tuple[str, float]]:
    """(kind, value) of the ordinates on one line: kind ``abs``, ``dif`` or ``dup``."""
    stripped = line.strip()
    if not stripped:
        return []
    x_match = (_X_COMPRESSED if compressed else _X_AFFN).match(line)
    if x_match is None:
        raise FileFormatError(f"{source}: line {line_no} does not start with an abscissa: "
                              f"{_short(stripped)!r}")
    pattern = _COMPRESSED_TOKEN if compressed else _AFFN_TOKEN
    tokens = []
    for pseudo, digits, number, missing, bad in pattern.findall(line, x_match.end()):
        if number:
            tokens.append(("abs", float(number)))
        elif pseudo:
            kind, sign, lead = _LEAD[pseudo]
            tokens.append((kind, sign * float(lead + digits if digits != "." else lead)))
        elif missing:
            raise FileFormatError(f"{source}: line {line_no}: a missing value ('?') in the data")
        elif bad:
            raise FileFormatError(f"{source}: line {line_no}: unexpected character {bad!r} in the data "
                                  "(not AFFN, PAC, SQZ, DIF or DUP)")
    return tokens


def _short(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."
