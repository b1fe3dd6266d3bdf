"""What makes a batch item finished: its outcome, its fingerprint, and reading both back.

Each item's folder holds ``outcome.json``, written last; a rerun skips an item only when that
outcome says ``done`` on identical work (the SHA-256 of its spectrum, its chemistry, its
specification's SHA-256 and the run's options all match the fingerprint) and its
``result.json`` (and ``audit.json``, ``report.html`` when they belong to the run) read back.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass, fields
from pathlib import Path

from confirm.batch.manifest import BatchItem
from confirm.qc import QcSpec
from confirm.results import sha256_of_path
from predictors.errors import ConfirmError

#: Fields ``result.json`` must have for an item to count as finished.
_RESULT_FIELDS = ("components", "verdict", "inputs")


@dataclass(frozen=True)
class ItemOutcome:
    """What happened to one item (one row of the summary).

    ``status`` is ``"done"``, ``"error"``, ``"skipped"`` (finished by an earlier run on identical
    work) or ``"interrupted"`` (not finished when the run was stopped).
    """

    item_id: str
    spectrum: str
    status: str
    sha256: str = ""
    major: str = ""
    confidence: str = ""
    verdict: str = ""
    qc_status: str = ""
    error: str = ""
    report: str = ""
    seconds: float = 0.0
    fingerprint: str = ""

    @property
    def passed(self) -> bool:
        """Finished without error, and passed its QC check when it had one."""
        return self.status in ("done", "skipped") and self.qc_status in ("", "PASS")


def _spec_digest(item: BatchItem, spec: QcSpec | None) -> str:
    if item.spec is not None:
        return hash_or_empty(item.spec) or f"missing:{item.spec}"
    return spec.sha256 if spec is not None else ""


def item_fingerprint(item: BatchItem, *, spectrum_sha256: str, spec: QcSpec | None = None,
                     options: dict | None = None) -> str:
    """SHA-256 of everything that decides an item's result: the spectrum's hash, the chemistry
    (substrate, reagent, candidates, solvent, temperature, field), the specification's hash and
    the run's options. Two runs whose fingerprints agree do the same work."""
    work = {"spectrum_sha256": spectrum_sha256, "substrate": item.substrate, "reagent": item.reagent,
            "candidates": list(item.candidates), "solvent": item.reaction_solvent, "temp_c": item.temp_c,
            "field_mhz": item.field_mhz, "spec_sha256": _spec_digest(item, spec), "options": options or {}}
    if item.nmr_solvent is not None:  # only when set: earlier runs' fingerprints stay valid
        work["nmr_solvent"] = item.nmr_solvent
    if item.decoupled:
        work["decoupled"] = list(item.decoupled)
    return hashlib.sha256(json.dumps(work, sort_keys=True).encode()).hexdigest()


def read_json_object(path: Path) -> dict | None:
    """The JSON object in ``path``, or None when it cannot be read or holds something else."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return data if isinstance(data, dict) else None


def finished_outcome(item: BatchItem, item_dir: Path, fingerprint: str, *, needs_audit: bool,
                     needs_report: bool) -> ItemOutcome | None:
    """The earlier outcome when the item is finished on the same work and its files read back."""
    data = read_json_object(item_dir / "outcome.json")
    if data is None or not fingerprint:
        return None
    try:
        previous = ItemOutcome(**{k: v for k, v in data.items() if k in _OUTCOME_FIELDS})
    except TypeError:
        return None
    if previous.status != "done" or previous.fingerprint != fingerprint:
        return None
    result = read_json_object(item_dir / "result.json")
    if result is None or any(key not in result for key in _RESULT_FIELDS):
        return None
    if needs_audit and read_json_object(item_dir / "audit.json") is None:
        return None
    if needs_report and not (item_dir / "report.html").is_file():
        return None
    return ItemOutcome(**{**asdict(previous), "status": "skipped"})


_OUTCOME_FIELDS = {f.name for f in fields(ItemOutcome)}


def hash_or_empty(path: Path) -> str:
    try:
        return sha256_of_path(path)
    except (ConfirmError, OSError):
        return ""
