"""Helpers shared by the subcommands: JSON output and plain-text tables."""

from __future__ import annotations

import json
import math
import sys
from collections.abc import Sequence

import numpy as np

__all__ = ["emit_json", "format_table", "to_jsonable"]


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


def format_table(headers: Sequence[str], rows: Sequence[Sequence[object]]) -> str:
    """Render rows as a plain aligned text table.

    Parameters
    ----------
    headers : sequence of str
        Column titles.
    rows : sequence of sequences
        Cell values; converted with ``str``.
    """
    cells = [[str(h) for h in headers]] + [[str(c) for c in row] for row in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(headers))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(cells[0], widths, strict=True)).rstrip()]
    lines.append("  ".join("-" * w for w in widths))
    for row in cells[1:]:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip())
    return "\n".join(lines)
