"""Orientation and chemical-shift referencing, decided from the file first and the data second.

Orientation (FIDs): the file's metadata set it (format convention, reverse flags, page labels:
see :mod:`confirm.reading`). The data may confirm it: a validated TMS line near 0 ppm, a
validated residual-solvent pattern at its shift, and the 13C isotope shift of their satellites
(midpoint upfield of the line) are each one line of evidence. The spectrum is flipped against
the metadata only when at least two independent lines say so and none supports the metadata;
a single contradicting line only raises a warning. Every decision names its evidence.

Referencing: TMS (a sharp singlet with its 29Si satellites) first; else the residual line of
the solvent the data support (the header's solvent when its pattern is there, otherwise a
solvent whose pattern is plainly there, with a warning that the header is contradicted); if
TMS and the solvent disagree by more than 0.02 ppm, TMS is used and the warning says so. When
nothing validates near its expected shift, a TMS line anywhere on the axis (its satellites
make it certain) corrects an axis that is far off; otherwise the axis stays as acquired and the
warning gives the offset the nearest candidate line would imply.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from confirm.processing.patterns import (
    LineCheck,
    SpectrumView,
    check_residual,
    check_tms,
    find_candidates,
    isotope_direction,
)
from confirm.solvents import TMS_CH_J_HZ, TMS_PPM, hdo_shift_ppm, known_solvents, solvent_signals

__all__ = ["Orientation", "Reference", "decide_orientation", "decide_reference", "mirror_view"]

#: TMS and the residual solvent line may differ from their table distance by this much (ppm).
TMS_SOLVENT_TOLERANCE_PPM = 0.02
#: Lines of evidence needed to flip a spectrum against its metadata.
_FLIP_EVIDENCE = 2


@dataclass(frozen=True)
class Orientation:
    """How the orientation was decided.

    Attributes
    ----------
    mirrored : bool
        True when the spectrum must be mirrored about the carrier (against the metadata, or
        on request).
    text : str
        One line for the report: basis and evidence.
    warnings : tuple of str
    record : dict
        The evidence found in each orientation.
    """

    mirrored: bool
    text: str
    warnings: tuple[str, ...] = ()
    record: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Reference:
    """How the axis was referenced.

    Attributes
    ----------
    shift_ppm : float
        Added to the axis.
    label : str
        e.g. ``"TMS at 0.00 ppm"``, ``"residual CHCl3 at 7.26 ppm"``, ``"as acquired (...)"``.
    source : str
        ``"tms"``, ``"solvent"`` or ``"none"``.
    solvent : str or None
        Canonical name of the solvent the data support (may differ from the header's).
    warnings : tuple of str
    record : dict
    """

    shift_ppm: float
    label: str
    source: str
    solvent: str | None
    warnings: tuple[str, ...] = ()
    record: dict = field(default_factory=dict)


def mirror_view(view: SpectrumView, carrier_ppm: float) -> SpectrumView:
    """The spectrum mirrored about the carrier (what the opposite sign convention would give)."""
    return SpectrumView(ppm=(2.0 * carrier_ppm - view.ppm)[::-1], y=view.y[::-1], noise_sd=view.noise_sd,
                        field_mhz=view.field_mhz, line_width_hz=view.line_width_hz)


# ---------------------------------------------------------------------------
# evidence
# ---------------------------------------------------------------------------

def _best(checks: list[LineCheck]) -> LineCheck | None:
    """The first strong check, else the first weak one (candidates come tallest first)."""
    for status in ("strong", "weak"):
        for check in checks:
            if check.status == status:
                return check
    return None


def _tms_checks(view: SpectrumView, window: float) -> list[LineCheck]:
    return [check_tms(view, i) for i in find_candidates(view, TMS_PPM, window, limit=3)]


def _residual_checks(view: SpectrumView, solvent: str, window: float, temperature_k: float | None,
                     limit: int = 3) -> list[LineCheck]:
    signals = solvent_signals(solvent)
    expected = hdo_shift_ppm(solvent, temperature_k) if signals.name == "D2O" else signals.residual_ppm
    return [check_residual(view, i, signals) for i in find_candidates(view, expected, window, limit=limit)]


def _evidence(view: SpectrumView, solvents: list[str], window: float, temperature_k) -> list[str]:
    """Independent lines of evidence that ``view`` is oriented right: validated TMS near 0 ppm, a
    validated residual pattern at its shift, the isotope shift of their 13C satellites."""
    lines, directions = [], []
    tms = next((c for c in _tms_checks(view, window) if c.status == "strong"), None)
    if tms is not None:
        lines.append(f"TMS: {tms.detail}")
        directions.append(isotope_direction(view, tms.ppm, TMS_CH_J_HZ))
    for solvent in solvents:
        found = next((c for c in _residual_checks(view, solvent, window, temperature_k, limit=2)
                      if c.status == "strong"), None)
        if found is not None:
            lines.append(f"residual {solvent_signals(solvent).residual_label}: {found.detail}")
            j_ch = solvent_signals(solvent).residual_j_ch_hz
            if j_ch:
                directions.append(isotope_direction(view, found.ppm, j_ch))
            break
    upfield = [text for sign, text in directions if sign > 0]
    if upfield:
        lines.append(upfield[0])
    return lines


def decide_orientation(view: SpectrumView, *, carrier_ppm: float, basis: str, solvent: str | None,
                       window_ppm: float, temperature_k: float | None, request: str) -> Orientation:
    """Keep, confirm or (on strong evidence only) overrule the orientation the metadata gave.

    Parameters
    ----------
    view : SpectrumView
        The spectrum as transformed with the metadata's sign convention.
    carrier_ppm : float
        The mirror axis.
    basis : str
        What in the file set the orientation.
    solvent : str or None
        Canonical header solvent (all known solvents are tried when None).
    request : str
        ``"auto"``, ``"as-read"`` or ``"mirrored"``.
    """
    if request == "as-read":
        return Orientation(False, f"from the file ({basis}); not checked (as-read requested)")
    if request == "mirrored":
        return Orientation(True, f"mirrored on request (the file says: {basis})",
                           ("spectrum mirrored about the carrier on request",))
    solvents = [solvent] if solvent else []
    solvents += [s for s in known_solvents() if s not in solvents]
    here = _evidence(view, solvents, window_ppm, temperature_k)
    record = {"basis": basis, "evidence_as_read": here}
    if here:
        return Orientation(False, f"from the file ({basis}), confirmed by {'; '.join(here)}", record=record)
    # after mirroring, the header's solvent (all of them when there is none) and TMS are looked for
    there = _evidence(mirror_view(view, carrier_ppm), [solvent] if solvent else solvents, window_ppm,
                      temperature_k)
    record["evidence_mirrored"] = there
    if len(there) >= _FLIP_EVIDENCE:
        text = (f"mirrored against the file ({basis}): {len(there)} independent lines of evidence are found "
                f"only after mirroring about {carrier_ppm:.2f} ppm: {'; '.join(there)}")
        return Orientation(True, text, (f"spectrum {text}",), record)
    if there:
        warning = (f"the data hint that the spectrum is mirrored ({there[0]}, found only after mirroring "
                   f"about {carrier_ppm:.2f} ppm), but one line of evidence does not overrule the file "
                   f"({basis}): kept as the file says; check it, or process with orientation 'mirrored'")
        return Orientation(False, f"from the file ({basis}); contradicted by one line only", (warning,),
                           record)
    return Orientation(False, f"from the file ({basis}); nothing in the data to confirm or contradict it",
                       record=record)


# ---------------------------------------------------------------------------
# referencing
# ---------------------------------------------------------------------------

def _solvent_line(view: SpectrumView, header: str | None, window: float, temperature_k):
    """(solvent, check, contradiction note) for the solvent the data support."""
    header_check = _best(_residual_checks(view, header, window, temperature_k)) if header else None
    if header_check is not None:
        return header, header_check, None
    strong = []
    for solvent in known_solvents():
        if solvent == header:
            continue
        check = next((c for c in _residual_checks(view, solvent, window, temperature_k, limit=2)
                      if c.status == "strong"), None)
        if check is not None:
            strong.append((solvent, check))
    if len(strong) != 1:
        return header, None, None
    solvent, check = strong[0]
    label = solvent_signals(solvent).residual_label
    if header:
        note = (f"the file says the solvent is {header}, but the data show {label} ({check.detail}) and "
                f"no residual {solvent_signals(header).residual_label} line: referenced and reported as "
                f"{solvent}")
    else:
        note = (f"no (known) solvent in the file; the data show {label} ({check.detail}): referenced as "
                f"{solvent}")
    return solvent, check, note


def _far_tms(view: SpectrumView) -> LineCheck | None:
    """A TMS line (validated by its 29Si satellites) anywhere on the axis, the most upfield one."""
    from confirm.peaks import find_peak_indices

    idx = find_peak_indices(view.y, height=200 * view.noise_sd, prominence=100 * view.noise_sd)
    idx = idx[np.argsort(view.y[idx])[::-1][:20]]
    found = [c for c in (check_tms(view, int(i)) for i in idx) if c.status == "strong"]
    if not found:
        return None
    tms = min(found, key=lambda c: c.ppm)
    height = float(view.y[view.index(tms.ppm)])
    upfield = view.y[view.ppm < tms.ppm - 0.3]
    if upfield.size and float(np.max(upfield)) > 0.1 * height:
        return None  # strong lines well upfield of it: TMS sits at the upfield end of 1H spectra
    return tms


def decide_reference(view: SpectrumView, *, header_solvent: str | None, request: str, window_ppm: float,
                     temperature_k: float | None) -> Reference:
    """Reference the axis (see the module docstring).

    Parameters
    ----------
    view : SpectrumView
        The oriented spectrum on its acquired axis.
    header_solvent : str or None
        Canonical name of the solvent the file (or the user) gives.
    request : str
        ``"auto"``, ``"tms"``, ``"solvent"`` or ``"none"``.
    """
    if request == "none":
        return Reference(0.0, "as acquired (referencing switched off)", "none", header_solvent)
    tms_checks = _tms_checks(view, window_ppm) if request in ("auto", "tms") else []
    tms = next((c for c in tms_checks if c.status == "strong"), None)
    if tms is None and request == "tms":
        tms = next((c for c in tms_checks if c.status == "untestable"), None)
    solvent, line, note = (_solvent_line(view, header_solvent, window_ppm, temperature_k)
                           if request in ("auto", "solvent") else (header_solvent, None, None))
    warnings = [note] if note else []
    record = {"tms": [c.detail for c in tms_checks], "solvent_line": line.detail if line else None,
              "header_solvent": header_solvent, "solvent": solvent}
    if tms is not None:
        if line is not None:
            expected = _expected_shift(solvent, temperature_k)
            gap = (line.ppm - tms.ppm) - expected
            if abs(gap) > TMS_SOLVENT_TOLERANCE_PPM:
                warnings.append(f"TMS and the residual {solvent_signals(solvent).residual_label} line "
                                f"disagree by {gap:+.3f} ppm ({line.ppm - tms.ppm:.3f} ppm apart, "
                                f"{expected:.2f} expected): referenced to TMS")
        return Reference(TMS_PPM - tms.ppm, "TMS at 0.00 ppm", "tms", solvent, tuple(warnings),
                         {**record, "used": tms.detail})
    if line is not None:
        expected = _expected_shift(solvent, temperature_k)
        label = f"residual {solvent_signals(solvent).residual_label} at {expected:.2f} ppm"
        return Reference(expected - line.ppm, label, "solvent", solvent, tuple(warnings),
                         {**record, "used": line.detail})
    if request == "auto" and solvent:
        supported = _supported_tms(view, tms_checks, solvent, temperature_k)
        if supported is not None:
            tms, line_ppm = supported
            label = solvent_signals(solvent).residual_label
            warnings.append(f"TMS taken from the sharp singlet at {tms.ppm:.3f} ppm, too weak to show its "
                            f"29Si satellites, because a line sits {line_ppm - tms.ppm:.3f} ppm from it, "
                            f"where residual {label} belongs")
            return Reference(TMS_PPM - tms.ppm, "TMS at 0.00 ppm", "tms", solvent, tuple(warnings),
                             {**record, "used": f"{tms.detail}; supported by a line at {line_ppm:.3f} ppm"})
    if request == "auto":
        far = _far_tms(view)
        if far is not None:
            warnings.append(f"axis {-far.ppm:+.2f} ppm off as acquired: TMS ({far.detail}) is far from "
                            "0 ppm; referenced to it")
            return Reference(TMS_PPM - far.ppm, "TMS at 0.00 ppm", "tms", solvent, tuple(warnings),
                             {**record, "used": far.detail, "far_from_expected": True})
    reason, offset = _unreferenced(view, solvent, tms_checks, window_ppm, temperature_k, request)
    warnings.append(f"axis not referenced ({reason}): shifts as acquired{offset}")
    return Reference(0.0, f"as acquired ({reason})", "none", solvent, tuple(warnings), record)


def _supported_tms(view: SpectrumView, tms_checks: list[LineCheck], solvent: str, temperature_k):
    """An unverifiable TMS candidate with a line at the solvent's table distance from it (within
    0.005 ppm or 2 Hz): two lines at their expected mutual distance support each other."""
    expected = _expected_shift(solvent, temperature_k)
    tolerance = max(0.005, 2.0 / view.field_mhz)
    for check in tms_checks:
        if check.status != "untestable":
            continue
        found = find_candidates(view, check.ppm + expected, tolerance, limit=1)
        if found:
            i = found[0]
            return check, float(view.ppm[i])
    return None


def _expected_shift(solvent: str, temperature_k: float | None) -> float:
    signals = solvent_signals(solvent)
    return hdo_shift_ppm(solvent, temperature_k) if signals.name == "D2O" else signals.residual_ppm


def _unreferenced(view, solvent, tms_checks, window, temperature_k, request) -> tuple[str, str]:
    """Why nothing validated, and the offset a plausible candidate line would imply (if any)."""
    if solvent:
        label = solvent_signals(solvent).residual_label
        reason = f"no TMS or residual {label} line validated"
    else:
        label, reason = None, "no TMS line validated and no solvent known"
    if request == "tms":
        reason = "TMS requested but no TMS line found"
    plausible = [c for c in tms_checks if c.status == "untestable"]
    if plausible:
        best = min(plausible, key=lambda c: abs(c.ppm))
        return reason, (f"; possibly off by {TMS_PPM - best.ppm:+.3f} ppm (the sharp singlet at "
                        f"{best.ppm:.3f} ppm, if it is TMS: too weak or broad to show its 29Si satellites)")
    rejected = list(tms_checks)
    if solvent:
        rejected += _residual_checks(view, solvent, window, temperature_k)
    if rejected:
        expected = [TMS_PPM] + ([_expected_shift(solvent, temperature_k)] if solvent else [])
        nearest = min(rejected, key=lambda c: min(abs(c.ppm - e) for e in expected))
        return reason, (f"; the offset cannot be measured from the data: the nearest candidate is no "
                        f"reference line ({nearest.detail})")
    return reason, (f"; the offset cannot be measured from the data: no line within {window:g} ppm of the "
                    "expected shifts")
