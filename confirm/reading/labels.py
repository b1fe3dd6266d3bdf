"""Labels as files write them: nucleus (``^1H``, ``<1H>``, ``H1``) and solvent names."""

from __future__ import annotations

import re

from confirm.solvents import normalise_solvent_name

__all__ = ["clean_label", "nucleus_label", "solvent_label"]


def clean_label(text: str | None) -> str | None:
    """Strip blanks and ``<...>`` brackets; None when nothing is left."""
    if text is None:
        return None
    text = str(text).strip().strip("<>").strip()
    return text or None


def nucleus_label(text: str | None) -> str | None:
    """``"1H"`` from ``^1H``, ``<1H>``, ``H1``, ``1h``; the cleaned text when not recognised."""
    text = clean_label(text)
    if text is None:
        return None
    match = re.search(r"\^?(\d+)\s*([A-Za-z]{1,2})", text)
    if match:
        return f"{match.group(1)}{match.group(2).capitalize()}"
    match = re.fullmatch(r"([A-Za-z]{1,2})(\d+)", text)
    if match:
        return f"{match.group(2)}{match.group(1).capitalize()}"
    return text


def solvent_label(text: str | None) -> str | None:
    """Canonical solvent name when recognised, else the label as written."""
    label = clean_label(text)
    return normalise_solvent_name(label) or label
