"""Helpers shared by the subcommands: JSON output, plain-text tables, time budgets."""

from __future__ import annotations

import contextlib
import json
import math
import sys
from collections.abc import Sequence

import numpy as np

__all__ = ["emit_json", "format_table", "to_jsonable", "add_budget_argument", "budget_from_args",
           "existing_paths", "data_inputs", "add_solvent_arguments", "refuse_plain_solvent", "wrap_text",
           "parse_regions", "TERMINAL_WIDTH"]

#: Files that stand for the FID folder holding them (``read_measurement`` reads the folder).
_FOLDER_FILES = ("fid", "ser", "acqus", "acqu", "procpar")


def to_jsonable(obj):
    """Convert numpy scalars/arrays, tuples and mappings into plain JSON types.

    Non-finite floats become None so the output is strict JSON.
    """
    if isinstance(obj, dict) or hasattr(obj, "items"):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [to_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        value = float(obj)
        return value if math.isfinite(value) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj


def emit_json(obj, *, stream=None) -> None:
    """Write ``obj`` as indented strict JSON followed by a newline."""
    stream = stream or sys.stdout
    json.dump(to_jsonable(obj), stream, indent=2, allow_nan=False)
    stream.write("\n")


def format_table(headers: Sequence[str], rows: Sequence[Sequence[object]], *,
                 width: int | None = None) -> str:
    """Render rows as a plain aligned text table.

    Parameters
    ----------
    headers : sequence of str
        Column titles.
    rows : sequence of sequences
        Cell values; converted with ``str``.
    width : int, optional
        Widest line wanted: the last column's text wraps onto indented lines to keep within it
        (as long as the other columns leave it 20 characters).
    """
    import textwrap

    cells = [[str(h) for h in headers]] + [[str(c) for c in row] for row in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(headers))]
    indent = sum(widths[:-1]) + 2 * (len(widths) - 1)
    room = None if width is None else max(20, width - indent)
    if room is not None and widths[-1] > room:
        widths[-1] = room
    lines = ["  ".join(c.ljust(w) for c, w in zip(cells[0], widths, strict=True)).rstrip()]
    lines.append("  ".join("-" * w for w in widths))
    for row in cells[1:]:
        last = textwrap.wrap(row[-1], room) if room is not None and len(row[-1]) > room else [row[-1]]
        last = last or [""]
        head = "  ".join(c.ljust(w) for c, w in zip(row[:-1], widths[:-1], strict=True))
        lines.append(((head + "  ") if head else "") + last[0])
        lines.extend(" " * indent + more for more in last[1:])
        lines[-1 - (len(last) - 1)] = lines[-1 - (len(last) - 1)].rstrip()
    return "\n".join(lines)


def add_budget_argument(parser, *, per: str = "analysis") -> None:
    """Add ``--max-seconds`` (default 60) to a subcommand parser."""
    from confirm.budget import DEFAULT_MAX_SECONDS

    parser.add_argument(
        "--max-seconds", type=float, default=DEFAULT_MAX_SECONDS, metavar="S",
        help=f"time allowed per {per} (default {DEFAULT_MAX_SECONDS:g} s); past it the analysis stops with "
             "exit 2 and says which stage ran out. Progress lines go to stderr after 5 s (with --json only "
             "when stderr is a terminal)")


def budget_from_args(args):
    """A fresh :class:`~confirm.budget.Budget` from ``--max-seconds``, with progress lines on stderr.

    Progress is printed unless ``--json`` was given and stderr is not a terminal (a program reading
    the JSON then keeps its log free of them).
    """
    from confirm.budget import Budget, ProgressLines

    show = not getattr(args, "json", False) or _is_terminal(sys.stderr)
    return Budget(max_seconds=args.max_seconds, progress=ProgressLines(enabled=show))


def _is_terminal(stream) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


def existing_paths(label: str, values) -> list[tuple[str, str]]:
    """``(label, value)`` for each value that names an existing file or folder (structure files
    given in place of SMILES, for the output checks)."""
    from pathlib import Path

    out = []
    for value in values or ():
        try:
            if isinstance(value, str) and Path(value).exists():
                out.append((label, value))
        except (OSError, ValueError):
            continue
    return out


def data_inputs(label: str, path) -> list[tuple[str, object]]:
    """``(label, path)``, plus the FID folder when ``path`` is its ``fid``/``acqus``/... file (the
    reader then reads the whole folder, so outputs must stay out of all of it)."""
    from pathlib import Path

    out = [(label, path)]
    if path is None:
        return out
    path = Path(path)
    with contextlib.suppress(OSError):
        partners = [n for n in _FOLDER_FILES if n != path.name]
        beside = any((path.parent / n).exists() for n in partners)
        if path.name in _FOLDER_FILES and path.is_file() and beside:
            out.append((f"{label} (its folder)", path.parent))
    return out


#: What the retired ``--solvent`` is told: it meant the reaction's solvent in some commands and the
#: sample's in others.
SOLVENT_WORDS = ("--solvent is ambiguous and no longer accepted; use --reaction-solvent for the reaction's "
                 "solvent (it steers the products) or --nmr-solvent for the sample's (it steers referencing "
                 "and the solvent lines)")


def add_solvent_arguments(parser, *, reaction: bool = True, nmr: bool = True) -> None:
    """``--reaction-solvent`` and/or ``--nmr-solvent``, and the retired ``--solvent`` (refused by
    :func:`refuse_plain_solvent` with a message naming both)."""
    import argparse

    if reaction:
        parser.add_argument("--reaction-solvent", metavar="S", dest="reaction_solvent",
                            help="solvent of the reaction (steers the products; default: the reagent's "
                                 "usual)")
    if nmr:
        parser.add_argument("--nmr-solvent", metavar="S", dest="nmr_solvent",
                            help="deuterated solvent of the NMR sample, overriding the one the file records")
    parser.add_argument("--solvent", dest="retired_solvent", default=None, help=argparse.SUPPRESS)


def refuse_plain_solvent(args) -> None:
    """Raise InputError when the retired ``--solvent`` was given."""
    from predictors.errors import InputError

    if getattr(args, "retired_solvent", None) is not None:
        raise InputError(SOLVENT_WORDS)


#: Widest line the commands print (terminal output stays readable at this width).
TERMINAL_WIDTH = 100


def wrap_text(text: str, width: int = TERMINAL_WIDTH) -> str:
    """``text`` with every line longer than ``width`` wrapped at word boundaries; continuation
    lines keep the line's indentation plus four spaces."""
    import textwrap

    out = []
    for line in text.splitlines():
        if len(line) <= width:
            out.append(line)
            continue
        indent = line[: len(line) - len(line.lstrip())]
        out += textwrap.wrap(line.strip(), width, initial_indent=indent, subsequent_indent=indent + "    ",
                             break_on_hyphens=False) or [line]
    return "\n".join(out)


#: Most ppm regions a user may give (panels side by side, integrals in one table).
MAX_REGIONS = 8


def parse_regions(text: str | None, *, flag: str) -> list[tuple[float, float]]:
    """``"6.5-5.5,2.0-1.6"`` as [(6.5, 5.5), (2.0, 1.6)] (high, low); empty for None.

    Raises
    ------
    InputError
        Naming the flag, the bad piece and the form expected.
    """
    import re

    from predictors.errors import InputError

    if text is None:
        return []
    out = []
    for piece in (p.strip() for p in text.split(",")):
        match = re.fullmatch(r"(-?\d+(?:\.\d+)?)\s*(?:-|:|to)\s*(-?\d+(?:\.\d+)?)", piece)
        if not match:
            raise InputError(f"{flag}: {piece!r} is not a ppm range; write HIGH-LOW pairs separated by "
                             "commas, e.g. 6.5-5.5,2.0-1.6")
        a, b = float(match.group(1)), float(match.group(2))
        high, low = max(a, b), min(a, b)
        if high - low < 0.01 or high > 20 or low < -5:
            raise InputError(f"{flag}: {piece!r} must span at least 0.01 ppm within -5 to 20 ppm")
        out.append((high, low))
    if not out or len(out) > MAX_REGIONS:
        raise InputError(f"{flag}: give 1 to {MAX_REGIONS} ranges, got {len(out)}")
    return out
