"""A measured spectrum's multiplets as the one-line list a journal's experimental section asks for:

``1H NMR (400 MHz, CDCl3) δ 7.12 (t, J = 8.3 Hz, 2H), 3.80 (s, 3H), 1.68 (d, J = 6.6 Hz, 3H).``

Multiplets named ``m`` are given by their range, the others by their centre; couplings largest
first. Proton counts come from the integrals scaled so the multiplets listed sum to the compound's
proton count when it is given (rounded to whole protons where the scaled integral is within 0.15 of
one, else to 0.1), otherwise the integrals are given in % of the listed total.
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["journal_line"]

#: A scaled integral this close to a whole number is written as that number of protons.
_WHOLE_WITHIN = 0.15


def journal_line(multiplets: Sequence, *, field_mhz: float, solvent: str | None,
                 protons: int | None = None, exclude_ppm: Sequence[float] = ()) -> str:
    """The multiplets (objects with ``ppm``, ``start_ppm``, ``stop_ppm``, ``multiplicity``,
    ``j_hz``, ``integral``) as one journal-style line, highest shift first; multiplets within
    0.01 ppm of a shift in ``exclude_ppm`` (the reference line) are left out."""
    kept = [m for m in multiplets if not any(abs(m.ppm - x) <= 0.01 for x in exclude_ppm)]
    kept.sort(key=lambda m: -m.ppm)
    total = sum(max(float(m.integral), 0.0) for m in kept)
    head = f"1H NMR ({field_mhz:.0f} MHz, {solvent or 'solvent not recorded'}) δ"
    if not kept or total <= 0:
        return f"{head} (no multiplets)."
    parts = []
    for m in kept:
        where = (f"{max(m.start_ppm, m.stop_ppm):.2f}–{min(m.start_ppm, m.stop_ppm):.2f}"
                 if m.multiplicity == "m" else f"{m.ppm:.2f}")
        inside = [m.multiplicity]
        if m.multiplicity != "m" and len(m.j_hz):
            inside.append("J = " + ", ".join(f"{j:.1f}" for j in sorted(m.j_hz, reverse=True)) + " Hz")
        inside.append(_amount(max(float(m.integral), 0.0) / total, protons))
        parts.append(f"{where} ({', '.join(inside)})")
    return f"{head} {', '.join(parts)}."


def _amount(share: float, protons: int | None) -> str:
    if protons is None:
        return f"{100.0 * share:.1f} %"
    n = share * protons
    if n < 0.05:
        return "<0.1H"
    return f"{round(n):d}H" if abs(n - round(n)) <= _WHOLE_WITHIN and round(n) > 0 else f"{n:.1f}H"
