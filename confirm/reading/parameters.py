"""Acquisition and processing parameter files (``acqus``, ``procs``): parsing and typed access.

A parameter file holds ``##$KEY= value`` lines. :func:`read_parameter_file` parses them into a
dict; :func:`number` fetches one value as a number of the expected kind and range, so a file
whose TD is text, whose SW_h is an array or whose SFO1 is zero fails with one line naming the
file, the key, the value and what is allowed (never a Python exception from deep inside).
"""

from __future__ import annotations

import math
from pathlib import Path

from predictors.errors import FileFormatError

__all__ = ["read_parameter_file", "number", "text_value", "first_line"]


def first_line(exc: BaseException) -> str:
    """The first line of an exception's message (its type name when empty), at most 200 characters."""
    text = str(exc).strip() or type(exc).__name__
    return text.splitlines()[0][:200]


def read_parameter_file(path: Path) -> dict:
    """Parameters of a JCAMP-DX style parameter file (acqus, procs): ``##$KEY= value`` lines.

    Values are int, float, str (``<...>``, may span lines), bool (``yes``/``no``) or, for
    ``(0..n)`` arrays, lists continued on the following lines. Read here rather than through a
    general reader so that opening a FID folder does not load a signal-processing stack.
    """
    try:
        text = path.read_bytes().decode("latin-1")
    except OSError as exc:
        raise FileFormatError(f"{path}: cannot read parameter file ({first_line(exc)})") from exc
    lines = text.splitlines()
    dic, i = {}, 0
    while i < len(lines):
        line = lines[i]
        i += 1
        if not line.startswith("##$") or "=" not in line:
            continue
        key = line[3 : line.index("=")].strip()
        value = line[line.index("=") + 1 :].strip()
        if value.startswith("<"):
            while ">" not in value and i < len(lines) and not lines[i].startswith("##"):
                value += "\n" + lines[i].rstrip()
                i += 1
            dic[key] = value[1 : value.rindex(">")] if ">" in value else value[1:]
        elif value.startswith("(") and ".." in value and ")" in value:
            try:
                count = int(value[value.index("..") + 2 : value.index(")")]) + 1
            except ValueError:
                raise FileFormatError(f"{path}: cannot parse parameter file (bad array size of {key})") \
                    from None
            if not 0 < count <= 1 << 16:
                raise FileFormatError(f"{path}: array size of {key} is {count - 1}; expected 0-65535")
            items = [_scalar(t) for t in value[value.index(")") + 1 :].split()]
            while len(items) < count and i < len(lines) and not lines[i].startswith("##"):
                items += [_scalar(t) for t in lines[i].split()]
                i += 1
            dic[key] = items
        elif value in ("yes", "no"):
            dic[key] = value == "yes"
        else:
            dic[key] = _scalar(value)
    if not dic:
        raise FileFormatError(f"{path}: parameter file is empty or unreadable")
    return dic


def _scalar(text: str):
    for kind in (int, float):
        try:
            return kind(text)
        except ValueError:
            pass
    return text


def number(dic: dict, key: str, source: Path | str, *, kind=float, required: bool = False,
           positive: bool = False, allowed: tuple | None = None, low: float | None = None,
           high: float | None = None, default=None):
    """One parameter as a number, checked.

    Parameters
    ----------
    dic : dict
        From :func:`read_parameter_file`.
    key : str
        Parameter name, e.g. ``"TD"``.
    source : path or str
        File named in the message.
    kind : type
        ``int`` or ``float``. An int parameter must hold a whole number.
    required : bool
        Missing (or empty) is an error instead of ``default``.
    positive : bool
        The value must be > 0.
    allowed : tuple, optional
        The only values allowed (e.g. ``(0, 1)`` for BYTORDA).
    low, high : float, optional
        Inclusive bounds.

    Raises
    ------
    FileFormatError
        Text, an array, a boolean, a non-finite value or one outside the range.
    """
    value = dic.get(key)
    if value is None or value == "":
        if required:
            raise FileFormatError(f"{source}: required parameter {key} is missing")
        return default
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        shown = f"an array of {len(value)} values" if isinstance(value, list) else repr(value)
        raise FileFormatError(f"{source}: parameter {key} = {_short(shown)} is not a number")
    if not math.isfinite(value):
        raise FileFormatError(f"{source}: parameter {key} = {value!r} is not a finite number")
    if kind is int:
        if float(value) != int(value):
            raise FileFormatError(f"{source}: parameter {key} = {value!r} is not a whole number")
        value = int(value)
    else:
        value = float(value)
    if allowed is not None and value not in allowed:
        raise FileFormatError(f"{source}: parameter {key} = {value!r}; allowed: "
                              f"{', '.join(str(a) for a in allowed)}")
    if positive and not value > 0:
        raise FileFormatError(f"{source}: parameter {key} = {value!r} must be > 0")
    if (low is not None and value < low) or (high is not None and value > high):
        raise FileFormatError(f"{source}: parameter {key} = {value!r} is outside {low:g}..{high:g}")
    return value


def text_value(dic: dict, key: str) -> str | None:
    """A parameter as text (None when missing or empty); numbers are written back as text."""
    value = dic.get(key)
    if value is None or value == "" or isinstance(value, list):
        return None
    return str(value)


def _short(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."
