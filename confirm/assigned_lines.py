"""The measured multiplets of an analysed spectrum with the candidate sites the fit put on them.

After ``analyze``, a chemist writing up the product wants the line list with assignments: each
multiplet found in the processed spectrum (peak picking and first-order grouping, as ``process``
does), the fitted sites of the detected components whose refined shift lies inside it, and what a
line on a known solvent or impurity line may be. A multiplet with no site is unassigned (an
impurity, or a candidate the fit did not place there).
"""

from __future__ import annotations

__all__ = ["assigned_multiplets", "format_assigned"]

#: A site counts as inside a multiplet when its refined shift lies within the multiplet's range
#: widened by this much (ppm): a centre of a second-order pattern can sit just beside its lines.
_EDGE_PPM = 0.01


def assigned_multiplets(result, *, threshold_snr: float = 8.0) -> list[dict]:
    """One record per measured multiplet, highest shift first: ``ppm``, ``range_ppm``,
    ``multiplicity``, ``j_hz``, ``percent`` (of all multiplets' integral), ``assigned`` (a list of
    ``{"smiles", "name", "site", "n_h"}`` of the detected components' sites inside it) and
    ``may_be`` (a known solvent or impurity line there, else None). Empty for a peak list."""
    from confirm.peaks import group_multiplets, pick_peaks
    from confirm.processing.baseline import estimate_noise_sd
    from confirm.solvents import name_line

    spectrum = result.spectrum
    if spectrum is None:
        return []
    import numpy as np

    # the processing's own noise estimate, and only where the fit looked (the candidates' range)
    noise = float(estimate_noise_sd(np.asarray(spectrum.intensity, dtype=float)))
    fitted = np.asarray(result.fit.ppm, dtype=float)
    window = (float(fitted.min()), float(fitted.max())) if fitted.size else None
    peaks = pick_peaks(spectrum, noise_sd=noise, threshold_snr=threshold_snr, ppm_range=window)
    multiplets = group_multiplets(peaks, field_mhz=spectrum.field_mhz)
    total = sum(max(float(m.integral), 0.0) for m in multiplets) or 1.0
    sites = [(comp, e) for comp in result.fit.components if comp.detected for e in comp.site_evidence]
    out = []
    for m in sorted(multiplets, key=lambda m: -m.ppm):
        high, low = max(m.start_ppm, m.stop_ppm) + _EDGE_PPM, min(m.start_ppm, m.stop_ppm) - _EDGE_PPM
        assigned = [{"smiles": comp.candidate.smiles, "name": comp.candidate.label or comp.candidate.smiles,
                     "site": e.label, "n_h": e.n_h} for comp, e in sites if low <= e.ppm <= high]
        out.append({"ppm": float(m.ppm), "range_ppm": [float(m.start_ppm), float(m.stop_ppm)],
                    "multiplicity": m.multiplicity, "j_hz": [float(j) for j in m.j_hz],
                    "percent": 100.0 * float(m.integral) / total, "assigned": assigned,
                    "may_be": name_line(m.ppm, spectrum.solvent, multiplicity=m.multiplicity)})
    return out


def format_assigned(records: list[dict]) -> str:
    """The records as a terminal table (ppm, multiplicity, J, %, what is on it)."""
    from confirm.commands._common import TERMINAL_WIDTH, format_table

    rows = []
    for r in records:
        what = "; ".join(f"{a['name']} {a['site']} ({a['n_h']}H)" for a in r["assigned"])
        if not what:
            what = f"may be {r['may_be']}" if r["may_be"] else "unassigned"
        rows.append((f"{r['ppm']:.3f}", r["multiplicity"], ", ".join(f"{j:.1f}" for j in r["j_hz"]) or "-",
                     f"{r['percent']:.2f}", what))
    return format_table(("ppm", "mult", "J (Hz)", "%", "assigned"), rows, width=TERMINAL_WIDTH)
