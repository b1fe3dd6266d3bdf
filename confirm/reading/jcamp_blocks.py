"""Split a JCAMP-DX file into its blocks, labels and data tables.

A block runs from ``##TITLE=`` to ``##END=``; a compound file (``##DATA TYPE= LINK``,
``##BLOCKS= n``) holds its blocks inside an outer one. Labels are compared the JCAMP-DX way:
upper case, without blanks, dashes, slashes and underscores (``##.OBSERVE FREQUENCY`` ->
``.OBSERVEFREQUENCY``); ``$$`` starts a comment. The data lines of ``##XYDATA``,
``##DATA TABLE``, ``##XYPOINTS`` and ``##PEAK TABLE`` are kept apart, undecoded.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from predictors.errors import FileFormatError

__all__ = ["JcampTable", "JcampBlock", "split_blocks", "label_key"]

_TABLE_LABELS = ("XYDATA", "DATATABLE", "XYPOINTS", "PEAKTABLE")


def label_key(label: str) -> str:
    """A label as JCAMP-DX compares it: upper case, no blanks, dashes, slashes or underscores."""
    return re.sub(r"[\s\-/_]", "", label).upper()


@dataclass
class JcampTable:
    """One data table, undecoded.

    Attributes
    ----------
    label : str
        ``"XYDATA"``, ``"DATATABLE"``, ``"XYPOINTS"`` or ``"PEAKTABLE"``.
    variables : str
        The text after the label, e.g. ``"(X++(R..R)), XYDATA"``.
    lines : list of str
        Data lines, comments removed.
    page : str or None
        The ``##PAGE=`` value before the table (NTUPLES).
    line : int
        Line number of the label in the file.
    """

    label: str
    variables: str
    lines: list[str]
    page: str | None
    line: int


@dataclass
class JcampBlock:
    """A ``##TITLE= ... ##END=`` block: its labels, data tables and inner blocks."""

    labels: dict[str, list[str]] = field(default_factory=dict)
    tables: list[JcampTable] = field(default_factory=list)
    children: list[JcampBlock] = field(default_factory=list)
    line: int = 0

    def text(self, key: str, default: str | None = None) -> str | None:
        """First value of label ``key`` (already normalised) stripped, or ``default``."""
        values = self.labels.get(key)
        if not values:
            return default
        value = values[0].strip()
        return value if value else default

    @property
    def data_type(self) -> str:
        """``DATA TYPE`` in upper case with single blanks (``""`` when absent)."""
        return " ".join((self.text("DATATYPE") or "").upper().split())


def split_blocks(text: str, *, source: str) -> list[JcampBlock]:
    """Top-level blocks of a JCAMP-DX text (inner blocks of a LINK block are its ``children``).

    Raises
    ------
    FileFormatError
        No ``##TITLE=`` block, or a block without ``##END=`` (a truncated file).
    """
    roots: list[JcampBlock] = []
    stack: list[JcampBlock] = []
    key: str | None = None
    value_lines: list[str] = []
    table: JcampTable | None = None
    page: str | None = None

    def flush() -> None:
        nonlocal key, value_lines
        if key is not None and stack:
            stack[-1].labels.setdefault(key, []).append("\n".join(value_lines).strip())
        key, value_lines = None, []

    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("$$", 1)[0]
        stripped = line.lstrip()
        if not stripped.startswith("##"):
            if table is not None:
                if stripped:
                    table.lines.append(line)
            elif key is not None:
                value_lines.append(line.rstrip())
            continue
        flush()
        table = None
        label, _, value = stripped[2:].partition("=")
        name = label_key(label)
        if name == "TITLE":
            block = JcampBlock(line=number)
            (stack[-1].children if stack else roots).append(block)
            stack.append(block)
            page = None
        elif not stack:
            continue  # text outside any block (JCAMP-DX allows comments there)
        if name == "END":
            stack.pop()
            continue
        if name == "PAGE":
            page = value.strip()
        if name in _TABLE_LABELS:
            table = JcampTable(label=name, variables=value.strip(), lines=[], page=page, line=number)
            stack[-1].tables.append(table)
            continue
        key, value_lines = name, [value.rstrip()]
    flush()
    if stack:
        raise FileFormatError(f"{source}: JCAMP-DX block opened on line {stack[-1].line} has no ##END= label "
                              "(truncated file?)")
    if not roots:
        raise FileFormatError(f"{source}: no JCAMP-DX block (no ##TITLE= label)")
    return roots
