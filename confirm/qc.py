"""QC sign-off of one spectrum against a specification, with an audit record.

A specification (TOML) names the expected product, the candidates the
analysis must consider (a list, or the reaction they come from) and the
acceptance limits. Each limit is decided conservatively from the 95 %
interval of the measured value (value +- 1.96 sd; a component that was not
detected counts as "up to its detection limit"):

- PASS only when the whole interval lies inside the limit,
- FAIL only when the whole interval lies outside it,
- INCONCLUSIVE otherwise, or when the value cannot be measured.

The overall status is PASS only when every check passes, FAIL when any check
fails, else INCONCLUSIVE. Identical inputs give identical decisions; the
audit record carries a digest of everything except the time and the user.

Specification file::

    name = "Lot release, (E)-alkene"          # optional
    product = "C/C=C/CC"                       # expected product (SMILES)
    candidates = ["C/C=C\\CC", "C=CCCC"]       # either the allowed candidates ...
    starting_material = "CC(Br)CCC"            # optional with candidates
    nmr_solvent = "CDCl3"                      # optional: the sample's solvent
    field_mhz = 400.0                          # optional
    decoupled = ["19F"]                        # optional: 19F and/or 31P decoupled during acquisition

    [reaction]                                 # ... or the reaction (substrate + reagent)
    substrate = "CC(Br)CCC"
    reagent = "KOtBu"
    temp_c = 25.0                              # optional
    reaction_solvent = "ethanol"               # optional

    [signoff]                                  # optional; recorded, never decides
    analyst = "A. Chemist"                     # also lot, reviewer, comment (--lot ... override)

    [limits]                                   # every limit is optional
    min_isomeric_purity_percent = 98.0
    max_other_isomer_percent = 2.0
    max_starting_material_percent = 1.0
    min_snr = 100.0
"""

from __future__ import annotations

import getpass
import hashlib
import json
import math
import os
import platform
import sys
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path

from confirm._files import write_text_atomic
from predictors.core import canonical_smiles
from predictors.errors import FileFormatError, InputError
from predictors.hetero_couplings import check_nuclei

__all__ = [
    "CAUTION",
    "SPEC_TEMPLATE",
    "STATUSES",
    "Z_95",
    "SignOff",
    "QcLimits",
    "QcSpec",
    "LimitCheck",
    "QcResult",
    "read_spec",
    "parse_spec",
    "decide_interval",
    "evaluate_qc",
    "run_qc",
    "qc_to_json",
    "software_versions",
    "audit_record",
    "write_json_atomic",
]

#: The caution printed with every QC result and report.
CAUTION = ("This result is a decision aid under the site's QA procedures and local regulations, "
           "not a release by itself; it supports, it does not replace, the analyst's judgement.")
#: Possible outcomes, most to least favourable.
STATUSES = ("PASS", "INCONCLUSIVE", "FAIL")
#: Two-sided 95 % coverage factor of a normal distribution.
Z_95 = 1.959964

_TOP_KEYS = {"name", "product", "candidates", "starting_material", "nmr_solvent", "field_mhz", "decoupled",
             "reaction", "limits", "signoff"}
_SIGNOFF_KEYS = {"lot", "analyst", "reviewer", "comment"}
#: Longest text of a sign-off field (a comment is a sentence or two, not a report).
_MAX_SIGNOFF_CHARS = 500
_REACTION_KEYS = {"substrate", "reagent", "temp_c", "reaction_solvent"}
_LIMIT_KEYS = {"min_isomeric_purity_percent", "max_other_isomer_percent", "max_starting_material_percent",
               "min_snr"}
_CONFIDENT = ("high", "moderate")


@dataclass(frozen=True)
class QcLimits:
    """Acceptance limits; None means "not part of the specification"."""

    min_isomeric_purity_percent: float | None = None
    max_other_isomer_percent: float | None = None
    max_starting_material_percent: float | None = None
    min_snr: float | None = None

    def __post_init__(self) -> None:
        for name in ("min_isomeric_purity_percent", "max_other_isomer_percent",
                     "max_starting_material_percent"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, _number(value, name=f"limits.{name}", low=0.0, high=100.0))
        if self.min_snr is not None:
            object.__setattr__(self, "min_snr", _number(self.min_snr, name="limits.min_snr", low=0.0))


@dataclass(frozen=True)
class SignOff:
    """Who measured which lot, who reviews it, and a comment: recorded in the audit, never used
    in a decision. Every field is optional."""

    lot: str | None = None
    analyst: str | None = None
    reviewer: str | None = None
    comment: str | None = None

    def __post_init__(self) -> None:
        for name in ("lot", "analyst", "reviewer", "comment"):
            value = getattr(self, name)
            if value is None:
                continue
            if not isinstance(value, str) or not value.strip():
                raise InputError(f"signoff {name}: expected a non-empty text, got {value!r}")
            if len(value) > _MAX_SIGNOFF_CHARS or any(ord(ch) < 32 and ch not in "\t\n" for ch in value):
                raise InputError(f"signoff {name}: at most {_MAX_SIGNOFF_CHARS} printable characters")
            object.__setattr__(self, name, value.strip())

    def merged(self, other: SignOff | None) -> SignOff:
        """This record with ``other``'s fields where they are given (the command line over the spec)."""
        if other is None:
            return self
        return SignOff(**{k: getattr(other, k) if getattr(other, k) is not None else getattr(self, k)
                          for k in ("lot", "analyst", "reviewer", "comment")})

    def to_json(self) -> dict:
        return {"lot": self.lot, "analyst": self.analyst, "reviewer": self.reviewer, "comment": self.comment}


@dataclass(frozen=True)
class QcSpec:
    """A parsed specification (see the module docstring for the file)."""

    product: str
    limits: QcLimits
    name: str = ""
    candidates: tuple[str, ...] = ()
    starting_material: str | None = None
    substrate: str | None = None
    reagent: str | None = None
    temp_c: float = 25.0
    reaction_solvent: str | None = None
    nmr_solvent: str | None = None
    field_mhz: float | None = None
    decoupled: tuple[str, ...] = ()
    sha256: str = ""
    source: str = ""
    signoff: SignOff = field(default_factory=SignOff)

    def analysis_kwargs(self) -> dict:
        """Keyword arguments for ``confirm.analysis.analyze_path``."""
        kwargs: dict = {"solvent": self.reaction_solvent, "temp_c": self.temp_c, "field_mhz": self.field_mhz}
        if self.nmr_solvent is not None:
            kwargs["nmr_solvent"] = self.nmr_solvent
        if self.decoupled:
            kwargs["decoupled"] = self.decoupled
        if self.substrate is not None:
            kwargs.update(substrate=self.substrate, reagent=self.reagent)
        else:
            listed = [self.product, *self.candidates]
            if self.starting_material:
                listed.append(self.starting_material)
            kwargs["candidates"] = list(dict.fromkeys(listed))
        return kwargs

    @property
    def starting_material_smiles(self) -> str | None:
        """SMILES of the starting material (the substrate in reaction mode)."""
        return self.starting_material or self.substrate


def _number(value, *, name: str, low: float | None = None, high: float | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(f"{name}: expected a number, got {value!r}")
    if (low is not None and value < low) or (high is not None and value > high):
        raise InputError(f"{name}: must lie in [{low}, {high if high is not None else 'inf'}], got {value!r}")
    return float(value)


def _check_keys(table: Mapping, allowed: set[str], *, where: str) -> None:
    unknown = sorted(set(table) - allowed)
    if unknown:
        raise InputError(f"spec {where}: unknown key {unknown[0]!r}; allowed: {', '.join(sorted(allowed))}")


def _smiles_entry(value, *, name: str) -> str:
    from confirm.structures import check_smiles
    from predictors.errors import ChemistryError

    if not isinstance(value, str):
        raise InputError(f"spec {name}: expected a SMILES string, got {value!r}")
    try:
        return canonical_smiles(check_smiles(value, name=f"spec {name}"))
    except ChemistryError as exc:
        raise InputError(str(exc)) from None


#: A commented specification to start from (``confirm qc --template``); it reads as it is, with
#: an invented example product: replace the structures and limits with the site's own.
SPEC_TEMPLATE = """\
# Specification for `confirm qc` (TOML). Lines starting with # are comments.
# Replace the example structures and limits with your own; every limit is optional.

name = "Lot release, (E)-pent-2-ene"           # shown in the report and the audit record
product = "C/C=C/CC"                           # the expected product (isomeric SMILES)

# The candidates the analysis must consider: either list them ...
candidates = ["C/C=C\\\\CC", "C=CCCC"]            # the other isomers, impurities, by-products
starting_material = "CC(Br)CCC"                # optional: counted against max_starting_material_percent
nmr_solvent = "CDCl3"                          # optional: the sample's solvent (else as the file records)
# field_mhz = 400.0                            # optional: only when the file does not record it
# decoupled = ["19F"]                          # optional: nuclei decoupled during acquisition (19F, 31P)
#                                              # when the file does not say so

# ... or give the reaction instead of the candidates list (then delete `candidates` above):
# [reaction]
# substrate = "CC(Br)CCC"
# reagent = "ethoxide"
# temp_c = 25.0
# reaction_solvent = "ethanol"                 # optional: the reaction's solvent (steers the products)

# [signoff]                                    # optional, recorded in the audit and the report;
# analyst = "A. Chemist"                       # --lot, --analyst, --reviewer, --comment on the
# reviewer = "B. Reviewer"                     # command line give or replace these
# comment = "release testing"

[limits]
min_isomeric_purity_percent = 98.0             # the product's share of its isomers, at least
max_other_isomer_percent = 2.0                 # any other isomer, at most
max_starting_material_percent = 1.0            # starting material left, at most
min_snr = 100.0                                # the spectrum's signal-to-noise, at least
"""


def read_spec(path: str | Path) -> QcSpec:
    """Read and check a specification file (TOML).

    Raises
    ------
    FileFormatError
        Missing file or invalid TOML.
    InputError
        Unknown keys, missing product, bad SMILES or limits.
    """
    if sys.version_info >= (3, 11):  # loaded here: only a specification needs it
        import tomllib
    else:  # pragma: no cover - Python 3.10
        import tomli as tomllib

    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise FileFormatError(f"spec: cannot read {str(path)!r} ({exc.strerror or exc})") from None
    try:
        table = tomllib.loads(raw.decode("utf-8-sig"))  # a byte-order mark some editors write is fine
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise FileFormatError(f"spec: {str(path)!r} is not valid TOML ({_one_line(exc)})") from None
    return parse_spec(table, sha256=hashlib.sha256(raw).hexdigest(), source=str(path))


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split())


def parse_spec(table: Mapping, *, sha256: str = "", source: str = "") -> QcSpec:
    """Build a :class:`QcSpec` from a parsed TOML table.

    Parameters
    ----------
    table : mapping
        The TOML document as a dictionary.
    sha256 : str, keyword-only
        SHA-256 of the file's bytes (the audit record keeps it); computed
        from a canonical JSON dump of ``table`` when empty.
    source : str, keyword-only
        Where the table came from (path), for messages and the audit record.
    """
    if "solvent" in table or (isinstance(table.get("reaction"), Mapping) and "solvent" in table["reaction"]):
        raise InputError("spec solvent: ambiguous and no longer accepted; write nmr_solvent = \"...\" (the "
                         "sample's, top level) or reaction_solvent = \"...\" (in [reaction])")
    _check_keys(table, _TOP_KEYS, where="top level")
    if "product" not in table:
        raise InputError("spec product: missing; give the expected product as a SMILES string")
    reaction = table.get("reaction", {})
    limits = table.get("limits", {})
    if not isinstance(reaction, Mapping) or not isinstance(limits, Mapping):
        raise InputError("spec: [reaction] and [limits] must be tables")
    _check_keys(reaction, _REACTION_KEYS, where="[reaction]")
    signoff = table.get("signoff", {})
    if not isinstance(signoff, Mapping):
        raise InputError("spec: [signoff] must be a table (lot, analyst, reviewer, comment)")
    _check_keys(signoff, _SIGNOFF_KEYS, where="[signoff]")
    _check_keys(limits, _LIMIT_KEYS, where="[limits]")
    candidates = table.get("candidates", [])
    if not isinstance(candidates, list):
        raise InputError(f"spec candidates: expected a list of SMILES, got {candidates!r}")
    if bool(candidates) == bool(reaction):
        raise InputError("spec: give either candidates = [...] or a [reaction] table (substrate, reagent), "
                         "exactly one of them")
    if reaction and not all(isinstance(reaction.get(k), str) for k in ("substrate", "reagent")):
        raise InputError("spec [reaction]: substrate (SMILES) and reagent (name) are both required")
    name = table.get("name", "")
    nmr_solvent = table.get("nmr_solvent")
    reaction_solvent = reaction.get("reaction_solvent") if reaction else None
    if not isinstance(name, str) or any(v is not None and not isinstance(v, str)
                                        for v in (nmr_solvent, reaction_solvent)):
        raise InputError("spec: name, nmr_solvent and reaction_solvent must be strings")
    field_mhz = table.get("field_mhz")
    decoupled = table.get("decoupled", [])
    if not isinstance(decoupled, list):
        raise InputError(f"spec decoupled: expected a list such as [\"19F\"], got {decoupled!r}")
    decoupled = check_nuclei(decoupled, name="spec decoupled")
    return QcSpec(
        product=_smiles_entry(table["product"], name="product"),
        limits=QcLimits(**dict(limits)),
        name=name,
        candidates=tuple(_smiles_entry(c, name="candidates") for c in candidates),
        starting_material=(_smiles_entry(table["starting_material"], name="starting_material")
                           if "starting_material" in table else None),
        substrate=_smiles_entry(reaction["substrate"], name="reaction.substrate") if reaction else None,
        reagent=reaction.get("reagent") if reaction else None,
        temp_c=_number(reaction.get("temp_c", 25.0), name="reaction.temp_c", low=-150.0, high=400.0),
        reaction_solvent=reaction_solvent,
        nmr_solvent=nmr_solvent,
        field_mhz=None if field_mhz is None else _number(field_mhz, name="field_mhz", low=1.0, high=2000.0),
        decoupled=decoupled,
        sha256=sha256 or hashlib.sha256(json.dumps(dict(table), sort_keys=True).encode()).hexdigest(),
        source=source,
        signoff=SignOff(**dict(signoff)),
    )


@dataclass(frozen=True)
class LimitCheck:
    """One acceptance check: the limit, the measured value with its 95 % interval, the decision.

    Values are in the check's ``unit`` (``"%"`` or ``""`` for SNR); ``measured``
    is None when the value could not be measured, or when the component was
    not detected (then ``interval`` is ``(0, detection limit)``).
    """

    name: str
    limit_text: str
    status: str
    reason: str
    measured: float | None = None
    measured_sd: float | None = None
    interval: tuple[float, float] | None = None
    unit: str = ""

    def measured_text(self) -> str:
        """``"96.0 ± 0.8 %"``, ``"not detected (< 0.5 %)"`` or ``"not measured"``."""
        if self.measured is None:
            if self.interval is not None:
                return f"not detected (< {self.interval[1]:.1f} {self.unit})".replace(" )", ")")
            return "not measured"
        digits = 1 if self.unit == "%" else 0
        text = f"{self.measured:.{digits}f} ± {(self.measured_sd or 0.0):.{digits}f}"
        return f"{text} {self.unit}".rstrip()


@dataclass(frozen=True)
class QcResult:
    """The outcome of a QC evaluation."""

    status: str
    checks: tuple[LimitCheck, ...]
    spec: QcSpec
    summary: str
    caution: str = CAUTION
    notes: tuple[str, ...] = field(default_factory=tuple)
    signoff: SignOff = field(default_factory=SignOff)


def decide_interval(low: float, high: float, *, minimum: float | None = None,
                    maximum: float | None = None) -> str:
    """Decide one limit from a 95 % interval ``[low, high]``.

    Parameters
    ----------
    low, high : float
        Interval bounds, ``low <= high``.
    minimum, maximum : float, keyword-only
        Exactly one: the value must be >= ``minimum`` or <= ``maximum``.

    Returns
    -------
    str
        ``"PASS"`` when the whole interval satisfies the limit, ``"FAIL"``
        when none of it does, else ``"INCONCLUSIVE"``.
    """
    if (minimum is None) == (maximum is None) or not low <= high:
        raise InputError("decide_interval: give exactly one of minimum/maximum and low <= high")
    if minimum is not None:
        inside, outside = low >= minimum, high < minimum
    else:
        inside, outside = high <= maximum, low > maximum
    return "PASS" if inside else "FAIL" if outside else "INCONCLUSIVE"


def _formula(smiles: str) -> str:
    from rdkit import Chem
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    return CalcMolFormula(Chem.MolFromSmiles(smiles))


def _amount(comp) -> float:
    """A component's fraction for totals: its fitted value when detected, else 0 (below detection).

    The analysis normalises the fractions over the detected components; the
    fraction of an undetected one only says how much of the shared signal its
    model could take, so it counts as "below its detection limit".
    """
    return comp.share


def _hidden_upper(comp) -> float:
    """Upper end of an undetected component's fraction.

    The fit's 95 % upper bound from the component's own multiplets; never below its detection
    limit. A component whose diagnostic signals may be present must not pass as absent.
    """
    return max(comp.detection_limit, comp.upper_limit if comp.upper_limit is not None else 1.0)


def _below_detection(name: str, limit_text: str, lod: float, limit: float) -> LimitCheck:
    """Check of a maximum for a component that was not detected: it lies in [0, upper end]."""
    status = decide_interval(0.0, 100 * lod, maximum=limit)
    reason = ("not detected; its upper bound is within the limit" if status == "PASS" else
              "not detected, but the spectrum cannot exclude it down to the limit")
    return LimitCheck(name=name, limit_text=limit_text, status=status, reason=reason,
                      interval=(0.0, 100 * lod), unit="%")


def _percent_check(name: str, limit_text: str, value: float, sd: float, low: float, high: float, *,
                   minimum=None, maximum=None) -> LimitCheck:
    low, high = max(0.0, min(low, value)), min(1.0, max(high, value))
    status = decide_interval(100 * low, 100 * high, minimum=minimum, maximum=maximum)
    reason = {"PASS": "the whole 95 % interval meets the limit",
              "FAIL": "the whole 95 % interval is outside the limit",
              "INCONCLUSIVE": "the 95 % interval straddles the limit"}[status]
    return LimitCheck(name=name, limit_text=limit_text, status=status, reason=reason,
                      measured=100 * value, measured_sd=100 * sd, interval=(100 * low, 100 * high), unit="%")


def _not_measured(name: str, limit_text: str, reason: str, unit: str = "%") -> LimitCheck:
    return LimitCheck(name=name, limit_text=limit_text, status="INCONCLUSIVE", reason=reason, unit=unit)


def _identity_check(result, product_fit, spec: QcSpec) -> LimitCheck:
    verdict = result.verdict
    limit = "expected product detected and identified as the major component"
    value, sd = product_fit.share, product_fit.mole_fraction_sd
    common = {"measured": 100 * value, "measured_sd": 100 * sd, "unit": "%", "name": "identity",
              "limit_text": limit}
    unexplained = tuple(getattr(result.fit, "unexplained_ppm", ()))
    if not product_fit.detected and product_fit.detection_limit < 0.5:
        reason = ("expected product not detected (detection limit "
                  f"{100 * product_fit.detection_limit:.1f} %): it cannot be the major component")
        return LimitCheck(status="FAIL", reason=reason, **common)
    if verdict.major not in (None, spec.product) and verdict.confidence in _CONFIDENT:
        return LimitCheck(status="FAIL", reason=f"another component ({verdict.major}) is the major "
                          f"product with {verdict.confidence} confidence", **common)
    if unexplained:
        where = ", ".join(f"{ppm:.2f}" for ppm in unexplained[:6])
        return LimitCheck(status="INCONCLUSIVE", reason=f"{len(unexplained)} signal(s) above the noise "
                          f"that no candidate explains (at {where} ppm)", **common)
    if product_fit.detected and verdict.major == spec.product and verdict.confidence in _CONFIDENT:
        reason = f"detected; verdict confidence {verdict.confidence}"
        return LimitCheck(status="PASS", reason=reason, **common)
    why = "not detected" if not product_fit.detected else f"verdict confidence {verdict.confidence}"
    return LimitCheck(status="INCONCLUSIVE", reason=f"identity not established ({why})", **common)


def _isomer_indices(result, spec: QcSpec, product_index: int) -> list[int]:
    formula = _formula(spec.product)
    sm = spec.starting_material_smiles
    return [k for k, c in enumerate(result.fit.components)
            if k != product_index and c.candidate.smiles != sm
            and "starting material" not in c.candidate.pathways and _formula(c.candidate.smiles) == formula]


def _sd_of(fit, gradient: Mapping[int, float]) -> float:
    """Standard deviation of a function of the fractions from its gradient (first order).

    Uses the fit's covariance of the fractions when it has one, else the
    individual standard deviations as independent.
    """
    cov = getattr(fit, "fraction_covariance", None)
    idx = list(gradient)
    g = [gradient[k] for k in idx]
    if cov is not None:
        sub = [[float(cov[i][j]) for j in idx] for i in idx]
        var = sum(g[a] * sub[a][b] * g[b] for a in range(len(idx)) for b in range(len(idx)))
    else:
        var = sum((g[a] * fit.components[k].mole_fraction_sd) ** 2 for a, k in enumerate(idx))
    return math.sqrt(max(var, 0.0))


def _share_gradient(fit, k: int, group: list[int]) -> tuple[float, dict[int, float]]:
    """Share x_k / sum(x_group) and its gradient with respect to the fractions of the group."""
    total = sum(_amount(fit.components[j]) for j in group)
    x_k = _amount(fit.components[k])
    grad = {j: ((total - x_k) if j == k else -x_k) / total**2 for j in group}
    return x_k / total, grad


def _purity_check(fit, product_index: int, isomers: list[int], limit: float) -> LimitCheck:
    name, text = "isomeric purity", f">= {limit:g} %"
    seen = [j for j in isomers if fit.components[j].detected]
    group = [product_index, *seen]
    x_p = _amount(fit.components[product_index])
    if x_p <= 0:
        return _not_measured(name, text, "the expected product was not detected")
    purity, grad = _share_gradient(fit, product_index, group)
    sd = _sd_of(fit, grad)
    hidden = sum(_hidden_upper(fit.components[j]) for j in isomers if j not in seen)
    total = sum(_amount(fit.components[j]) for j in group)
    worst = x_p / (total + hidden)
    return _percent_check(name, text, purity, sd, min(purity - Z_95 * sd, worst), purity + Z_95 * sd,
                          minimum=limit)


def _other_isomer_checks(fit, product_index: int, isomers: list[int], limit: float) -> list[LimitCheck]:
    text = f"<= {limit:g} %"
    if not isomers:
        return [_not_measured("any other isomer", text, "no other isomer among the candidates; "
                              "list them in the specification")]
    group = [product_index, *[j for j in isomers if fit.components[j].detected]]
    total = sum(_amount(fit.components[j]) for j in group)
    if total <= 0:
        return [_not_measured("any other isomer", text, "neither the product nor an isomer was detected")]
    checks = []
    for k in isomers:
        comp = fit.components[k]
        name = f"other isomer: {comp.candidate.label or comp.candidate.smiles}"
        if not comp.detected:
            checks.append(_below_detection(name, text, _hidden_upper(comp) / total, limit))
            continue
        share, grad = _share_gradient(fit, k, group)
        sd = _sd_of(fit, grad)
        checks.append(_percent_check(name, text, share, sd, share - Z_95 * sd, share + Z_95 * sd,
                                     maximum=limit))
    return checks


def _starting_material_check(result, spec: QcSpec, limit: float) -> LimitCheck:
    name, text = "starting material", f"<= {limit:g} %"
    sm = spec.starting_material_smiles
    fit = result.fit
    indices = [k for k, c in enumerate(fit.components)
               if (sm and c.candidate.smiles == sm) or "starting material" in c.candidate.pathways]
    if not indices:
        return _not_measured(name, text, "the starting material was not among the fitted candidates")
    seen = [k for k in indices if fit.components[k].detected]
    hidden = sum(_hidden_upper(fit.components[k]) for k in indices if k not in seen)
    if not seen:
        return _below_detection(name, text, hidden, limit)
    value = sum(fit.components[k].share for k in seen)
    sd = _sd_of(fit, dict.fromkeys(seen, 1.0))
    return _percent_check(name, text, value, sd, value - Z_95 * sd, value + Z_95 * sd + hidden, maximum=limit)


def _snr_check(result, limit: float) -> LimitCheck:
    name, text = "signal-to-noise ratio", f">= {limit:g}"
    snr = result.fit.quality.get("snr")
    if snr is None or not math.isfinite(float(snr)):
        return _not_measured(name, text, "the fit reports no signal-to-noise ratio", unit="")
    snr, sd = float(snr), float(result.fit.quality.get("snr_sd", 0.0))
    status = decide_interval(snr - Z_95 * sd, snr + Z_95 * sd, minimum=limit)
    return LimitCheck(name=name, limit_text=text, status=status, reason="measured on the processed spectrum",
                      measured=snr, measured_sd=sd, interval=(snr - Z_95 * sd, snr + Z_95 * sd), unit="")


def evaluate_qc(result, spec: QcSpec) -> QcResult:
    """Decide every limit of ``spec`` from an analysis result.

    Parameters
    ----------
    result : confirm.results.AnalysisResult
        The analysis of the spectrum; its candidates must include the product.
    spec : QcSpec

    Raises
    ------
    InputError
        When the expected product is not among the fitted components.
    """
    fit = result.fit
    smiles = [c.candidate.smiles for c in fit.components]
    product_index = smiles.index(spec.product) if spec.product in smiles else None
    if product_index is None:
        raise InputError(f"spec product: {spec.product!r} is not among the fitted candidates; "
                         "list it under candidates or check the reaction")
    isomers = _isomer_indices(result, spec, product_index)
    limits = spec.limits
    checks = [_identity_check(result, fit.components[product_index], spec)]
    if limits.min_isomeric_purity_percent is not None:
        checks.append(_purity_check(fit, product_index, isomers, limits.min_isomeric_purity_percent))
    if limits.max_other_isomer_percent is not None:
        checks.extend(_other_isomer_checks(fit, product_index, isomers, limits.max_other_isomer_percent))
    if limits.max_starting_material_percent is not None:
        checks.append(_starting_material_check(result, spec, limits.max_starting_material_percent))
    if limits.min_snr is not None:
        checks.append(_snr_check(result, limits.min_snr))
    statuses = {c.status for c in checks}
    status = "FAIL" if "FAIL" in statuses else "PASS" if statuses == {"PASS"} else "INCONCLUSIVE"
    return QcResult(status=status, checks=tuple(checks), spec=spec, summary=_summary(status, checks),
                    signoff=spec.signoff)


def _summary(status: str, checks) -> str:
    if status == "PASS":
        return f"PASS: all {len(checks)} checks meet the specification with 95 % confidence."
    failed = [c.name for c in checks if c.status == status]
    return f"{status}: {', '.join(failed)}."


def run_qc(spec: QcSpec, spectrum_path: str | Path, *, analyze: Callable | None = None, budget=None,
           signoff: SignOff | None = None):
    """Analyse a spectrum as the specification says and evaluate it.

    Parameters
    ----------
    spec : QcSpec
    spectrum_path : path
    analyze : callable, keyword-only
        ``analyze(path, **spec.analysis_kwargs()) -> AnalysisResult``;
        ``confirm.analysis.analyze_path`` by default.
    budget : confirm.budget.Budget, keyword-only
        Time allowed for the analysis; passed on as ``budget=`` when given.
    signoff : SignOff, keyword-only
        Lot, analyst, reviewer and comment for the record; given fields replace the spec's.

    Returns
    -------
    (AnalysisResult, QcResult)
    """
    if signoff is not None:
        from dataclasses import replace

        spec = replace(spec, signoff=spec.signoff.merged(signoff))
    if analyze is None:
        from confirm.analysis import analyze_path as analyze
    kwargs = spec.analysis_kwargs()
    if budget is not None:
        kwargs["budget"] = budget
    result = analyze(spectrum_path, **kwargs)
    return result, evaluate_qc(result, spec)


def qc_to_json(qc: QcResult) -> dict:
    """Plain-JSON form of a QC result (stable field names)."""
    return {
        "status": qc.status,
        "summary": qc.summary,
        "checks": [{"name": c.name, "limit": c.limit_text, "status": c.status, "reason": c.reason,
                    "measured": c.measured, "measured_sd": c.measured_sd,
                    "interval_95": list(c.interval) if c.interval else None, "unit": c.unit}
                   for c in qc.checks],
        "spec": {"name": qc.spec.name, "product": qc.spec.product, "source": qc.spec.source,
                 "sha256": qc.spec.sha256},
        "signoff": qc.signoff.to_json(),
        "caution": qc.caution,
    }


def software_versions() -> dict[str, str]:
    """Versions of confirm, Python and the scientific packages it relies on."""
    from importlib import metadata

    from confirm import __version__

    versions = {"confirm": __version__, "python": platform.python_version()}
    for package in ("numpy", "scipy", "rdkit", "nmrglue", "matplotlib", "pybaselines"):
        try:
            versions[package] = metadata.version(package)
        except metadata.PackageNotFoundError:
            versions[package] = "not installed"
    return versions


def _current_user() -> str:
    for name in ("USER", "LOGNAME", "USERNAME"):
        if os.environ.get(name):
            return os.environ[name]
    try:
        return getpass.getuser()
    except (KeyError, OSError):
        return "unknown"


def audit_record(result, qc: QcResult, *, timestamp: str | None = None, user: str | None = None) -> dict:
    """The audit record of one QC evaluation (plain JSON).

    Everything but ``timestamp`` and ``user`` is a function of the inputs;
    ``record_sha256`` is the SHA-256 of that part, so reruns on identical
    inputs give the identical digest.
    """
    from confirm.commands._common import to_jsonable

    body = to_jsonable({
        "qc": qc_to_json(qc),
        "inputs": [{"path": i.path, "sha256": i.sha256} for i in result.inputs],
        "spec_sha256": qc.spec.sha256,
        "parameters": {"analysis": dict(result.parameters), "spec": qc.spec.analysis_kwargs(),
                       "coverage_factor": Z_95},
        "versions": software_versions(),
        "analysis": result.to_json(),
    })
    hashed = {k: v for k, v in body.items() if k != "inputs"}
    hashed["input_sha256"] = [i["sha256"] for i in body["inputs"]]
    digest = hashlib.sha256(json.dumps(hashed, sort_keys=True, allow_nan=False).encode()).hexdigest()
    return {
        "record": "confirm QC audit record",
        **body,
        "record_sha256": digest,
        "timestamp": timestamp or datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "user": user or _current_user(),
    }


def write_json_atomic(obj, path: str | Path) -> Path:
    """Write strict, indented JSON to ``path`` via a temporary file and a rename."""
    from confirm.commands._common import to_jsonable

    return write_text_atomic(path, json.dumps(to_jsonable(obj), indent=2, allow_nan=False) + "\n")
