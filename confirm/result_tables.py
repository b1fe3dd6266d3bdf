"""One sample's numbers as CSV tables: its components and its ratios (for notebooks and LIMS).

``components.csv``: one row per candidate (SMILES, the user's name, label, pathways, mole fraction
and sd, detection limit, detected). ``ratios.csv``: one row per ratio (the two parts, the ratio as
printed, the first part's share of the two with its sd, the bounds when a part is only bounded,
and whether the spectrum decides it). Both are plain functions of an ``AnalysisResult``.
"""

from __future__ import annotations

import csv
import io

__all__ = ["components_csv", "ratios_csv"]


def _number(value, digits: int = 6) -> str:
    return "" if value is None else f"{float(value):.{digits}f}"


def _csv(header, rows) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    return buffer.getvalue()


def components_csv(result) -> str:
    """The components table of one analysis (text, with a header row)."""
    return _csv(["smiles", "name", "label", "pathways", "mole_fraction", "mole_fraction_sd",
                 "detection_limit", "upper_limit", "detected"],
                ([comp.candidate.smiles, comp.candidate.name or "", comp.candidate.label,
                  ";".join(comp.candidate.pathways), _number(comp.mole_fraction),
                  _number(comp.mole_fraction_sd), _number(comp.detection_limit),
                  _number(None if comp.detected else comp.upper_limit), int(comp.detected)]
                 for comp in result.fit.components))


def ratios_csv(result) -> str:
    """The ratios table of one analysis (text, with a header row; shares in percent)."""
    return _csv(["ratio", "numerator", "denominator", "ratio_text", "share_percent", "sd_percent",
                 "at_least_percent", "at_most_percent", "decided"],
                ([r.name, r.numerator, r.denominator, r.ratio_text,
                  _number(None if r.is_bound else 100 * r.share, 2),
                  _number(None if r.is_bound else 100 * r.share_sd, 2),
                  _number(None if r.low is None else 100 * r.low, 2),
                  _number(None if r.high is None else 100 * r.high, 2), int(r.decided)]
                 for r in result.verdict.ratios))
