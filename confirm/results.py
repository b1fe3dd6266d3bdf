"""The result of one analysis, shared by the verdict, reports, QC and batch runs.

:class:`AnalysisResult` is what ``confirm analyze`` computes; reports and the
QC sign-off read it and never recompute anything. ``to_json`` produces the
stable JSON contract of ``confirm analyze --json`` (design.md).
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType

from predictors.core import Candidate, MixtureFit, Spectrum, SpinSystem, Verdict
from predictors.errors import FileFormatError

__all__ = ["InputRecord", "AnalysisResult", "sha256_of_path"]


def sha256_of_path(path: str | Path) -> str:
    """SHA-256 of a file, or of every file below a folder (sorted by relative path).

    Raises
    ------
    FileFormatError
        When the path does not exist.
    """
    path = Path(path)
    if not path.exists():
        raise FileFormatError(f"path: {str(path)!r} does not exist")
    digest = hashlib.sha256()
    files = sorted(p for p in path.rglob("*") if p.is_file()) if path.is_dir() else [path]
    for file in files:
        if path.is_dir():
            digest.update(str(file.relative_to(path)).encode())
        with open(file, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    return digest.hexdigest()


@dataclass(frozen=True)
class InputRecord:
    """A file that went into an analysis, with its SHA-256."""

    path: str
    sha256: str

    @classmethod
    def from_path(cls, path: str | Path) -> InputRecord:
        """Hash ``path`` (file or folder) and record it."""
        return cls(path=str(path), sha256=sha256_of_path(path))


@dataclass(frozen=True, eq=False)
class AnalysisResult:
    """Everything ``confirm analyze`` found for one spectrum.

    Attributes
    ----------
    spectrum : Spectrum or None
        The processed spectrum (None for peak-list input).
    candidates : tuple of Candidate
    spin_systems : tuple of SpinSystem
        Predicted spin system of each candidate, same order.
    fit : MixtureFit
    verdict : Verdict
    inputs : tuple of InputRecord
    warnings : tuple of str
        Processing and fit warnings a chemist needs to see.
    parameters : mapping
        Processing and fitting parameters actually used.
    version : str
        confirm version that produced the result.
    """

    spectrum: Spectrum | None
    candidates: tuple[Candidate, ...]
    spin_systems: tuple[SpinSystem, ...]
    fit: MixtureFit
    verdict: Verdict
    inputs: tuple[InputRecord, ...] = ()
    warnings: tuple[str, ...] = ()
    parameters: Mapping = field(default_factory=dict)
    version: str = ""

    def __post_init__(self) -> None:
        for name in ("candidates", "spin_systems", "inputs", "warnings"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        object.__setattr__(self, "parameters", MappingProxyType(dict(self.parameters)))
        if not self.version:
            from confirm import __version__

            object.__setattr__(self, "version", __version__)

    def to_json(self) -> dict:
        """The ``analyze`` JSON contract (stable field names; new fields may be added)."""
        components = []
        for comp in self.fit.components:
            evidence = [dict(e.to_json(), text=text)
                        for e, text in zip(comp.site_evidence, comp.evidence, strict=False)]
            components.append({
                "smiles": comp.candidate.smiles,
                "name": comp.candidate.name,
                "label": comp.candidate.label,
                "pathways": list(comp.candidate.pathways),
                "mole_fraction": comp.mole_fraction,
                "mole_fraction_sd": comp.mole_fraction_sd,
                "detection_limit": comp.detection_limit,
                "upper_limit": comp.upper_limit,
                "detected": comp.detected,
                "refined_shifts_ppm": list(comp.refined_shifts_ppm),
                "lookalikes": list(comp.lookalikes),
                "evidence": evidence or [{"text": text} for text in comp.evidence],
            })
        ratios = {
            r.name: {"numerator": r.numerator, "denominator": r.denominator, "share": r.share,
                     "share_sd": r.share_sd, "ratio": r.ratio_text, "decided": r.decided,
                     "low": r.low, "high": r.high}
            for r in self.verdict.ratios
        }
        verdict = {
            "summary": self.verdict.summary,
            "confidence": self.verdict.confidence,
            "major": self.verdict.major,
            "identified": list(self.verdict.identified),
            "evidence": list(self.verdict.evidence),
            "unresolved": list(self.verdict.unresolved),
            "next_steps": list(self.verdict.next_steps),
        }
        return {
            "components": components,
            "ratios": ratios,
            "verdict": verdict,
            "warnings": list(self.warnings) + [w for w in self.fit.warnings if w not in self.warnings],
            "quality": dict(self.fit.quality),
            # other fits about as good as this one (the multiplets assigned another way): the mole
            # fraction of each component in each, by SMILES
            "alternative_fits": [
                {c.candidate.smiles: x for c, x in zip(self.fit.components, row, strict=True)}
                for row in self.fit.alternative_fractions
            ],
            "line_width_hz": self.fit.line_width_hz,
            "field_mhz": self.spectrum.field_mhz if self.spectrum is not None else None,
            "parameters": dict(self.parameters),
            "inputs": [{"path": i.path, "sha256": i.sha256} for i in self.inputs],
            "version": self.version,
        }
