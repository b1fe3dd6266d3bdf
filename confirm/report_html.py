"""A self-contained HTML report of one analysis, and the plot/CSV/JSON files beside it.

The report opens offline (no external resources, no scripts): plots are
inline SVG drawn with matplotlib's Agg/SVG backends, structures inline SVG
drawn with RDKit. It starts with the verdict in plain words, then the QC
result and NMR yield when given, the input files with their SHA-256, the
whole spectrum with the fitted mixture and residual, zoomed diagnostic
regions with each candidate's model, the candidates, evidence, warnings,
processing and fit parameters and software versions. Print CSS lays it out
on A4.
"""

from __future__ import annotations

import csv
import html
import io
import json
from collections.abc import Sequence
from dataclasses import dataclass, replace
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from confirm._files import atomic_path, write_text_atomic
from confirm.qc import CAUTION, QcResult, qc_to_json, software_versions
from confirm.qnmr import ProductYield, format_yield_rows, yields_to_json
from confirm.result_tables import components_csv, ratios_csv
from predictors.errors import InputError

__all__ = [
    "REPORT_CAUTION",
    "CandidateCurves",
    "candidate_curves",
    "choose_diagnostic_regions",
    "write_html_report",
    "render_html_report",
    "export_result_files",
]

#: Caution printed in every report (the QC caution is the same sentence).
REPORT_CAUTION = CAUTION

#: Colours of candidate overlays (our own palette, colour-blind friendly order).
_PALETTE = ("#1b6e8a", "#d1495b", "#edae49", "#5a8f29", "#7b4b94", "#00798c", "#a86a3d", "#3d5a80")
_MAX_REGIONS = 4
_PLOT_POINTS = 3000


@dataclass(frozen=True, eq=False)
class CandidateCurves:
    """Each candidate's model on the fitted axis, scaled to the measured intensity.

    Attributes
    ----------
    ppm : ndarray, shape (n,)
    per_molecule : ndarray, shape (n_candidates, n)
        Model of one molecule's worth of each candidate (integrates to its
        proton count), times the common intensity scale.
    fitted : ndarray, shape (n_candidates, n)
        ``per_molecule`` times each candidate's fitted mole fraction (zero when not detected).
    labels : tuple of str
    """

    ppm: np.ndarray
    per_molecule: np.ndarray
    fitted: np.ndarray
    labels: tuple[str, ...]


def _refined_system(system, component):
    shifts = component.refined_shifts_ppm
    if len(shifts) != len(system.sites):
        return system
    sites = tuple(replace(site, shift_ppm=float(s)) for site, s in zip(system.sites, shifts, strict=True))
    return replace(system, sites=sites)


def _label(candidate) -> str:
    return candidate.label or candidate.smiles


def candidate_curves(result) -> CandidateCurves:
    """Simulate every candidate at its refined shifts on the fit's axis.

    The common intensity scale (per molecule) is the least-squares factor
    between the fitted mixture and the sum of the fitted components, with a
    constant offset for the baseline.
    """
    from predictors.spin import model_spectrum

    fit = result.fit
    field_mhz = result.spectrum.field_mhz if result.spectrum is not None else 400.0
    width = fit.line_width_hz if fit.line_width_hz > 0 else 1.0
    raw = np.array([
        model_spectrum(_refined_system(system, comp), fit.ppm, field_mhz=field_mhz, line_width_hz=width)
        for system, comp in zip(result.spin_systems, fit.components, strict=True)
    ]).reshape(len(fit.components), fit.ppm.size)
    # fractions are normalised over the detected components; an undetected one contributes nothing
    fractions = np.array([max(c.mole_fraction, 0.0) if c.detected else 0.0 for c in fit.components])
    mixture = fractions @ raw if raw.size else np.zeros_like(fit.ppm)
    design = np.column_stack([mixture, np.ones_like(mixture)])
    scale = float(np.linalg.lstsq(design, fit.model, rcond=None)[0][0]) if np.any(mixture) else 0.0
    if not np.isfinite(scale) or scale <= 0:
        scale = float(np.max(np.abs(fit.model)) / max(np.max(raw), 1e-12)) if raw.size else 1.0
    per_molecule = raw * scale
    return CandidateCurves(ppm=fit.ppm, per_molecule=per_molecule, fitted=per_molecule * fractions[:, None],
                           labels=tuple(_label(c.candidate) for c in fit.components))


def choose_diagnostic_regions(result, curves: CandidateCurves, *, max_regions: int = _MAX_REGIONS,
                              pad_ppm: float = 0.08,
                              tolerance_ppm: float = 0.06) -> list[tuple[float, float]]:
    """Windows (high ppm, low ppm) that tell the candidates apart.

    Every site's multiplet gives a window (shift +- half its total coupling
    width + ``pad_ppm``); overlapping windows merge. Each candidate's model is
    normalised to unit area and smoothed over ``tolerance_ppm`` (shifts closer
    than that do not tell candidates apart). A window is characteristic of
    candidate k by the part of k's area there that no other candidate covers
    (``area_k - max_j sum(min(n_k, n_j))``), counted double between 3 and 8 ppm
    where the vinyl and CH-X protons that separate elimination from
    substitution products lie (common practice). Each detected candidate,
    then each other candidate, contributes its most characteristic window;
    the remaining places go to the windows with the largest pairwise
    difference. Where E and Z isomers are both candidates, the window of the
    vinyl multiplet whose vicinal J decides between them (about 12 vs 16 Hz)
    comes first, whatever the scores. Returned from high to low ppm.
    """
    from scipy.ndimage import uniform_filter1d

    windows = _site_windows(result, pad_ppm)
    if not windows or curves.per_molecule.size == 0:
        return []
    norm = curves.per_molecule / np.maximum(curves.per_molecule.sum(axis=1, keepdims=True), 1e-300)
    step = abs(float(curves.ppm[0] - curves.ppm[-1])) / max(curves.ppm.size - 1, 1)
    norm = uniform_filter1d(norm, max(1, int(round(tolerance_ppm / step))), axis=1)
    unique, scores, kept = [], [], []
    for low, high in windows:
        inside = (curves.ppm >= low) & (curves.ppm <= high)
        if inside.sum() < 5:
            continue
        weight = 2.0 if 3.0 <= (low + high) / 2 <= 8.0 else 1.0
        unique_k, score = _window_scores(norm[:, inside])
        unique.append(weight * unique_k)
        scores.append(weight * score)
        kept.append((high, low))
    if not kept:
        return []
    unique_arr = np.array(unique)
    detected = [k for k, c in enumerate(result.fit.components) if c.detected]
    ranked = detected + [k for k in range(norm.shape[0]) if k not in detected]
    order = _geometry_windows(result, kept)
    order += [int(np.argmax(unique_arr[:, k])) for k in ranked if unique_arr[:, k].max() > 0.02]
    order += [int(i) for i in np.argsort(scores)[::-1]]
    chosen = list(dict.fromkeys(order))[:max_regions]
    return sorted((kept[i] for i in chosen), key=lambda w: -w[0])


#: Smallest vicinal coupling (Hz) of two vinyl H that tells E from Z (cis 6-12, trans 12-18 Hz).
_MIN_EZ_J_HZ = 6.0


def _geometry_windows(result, kept) -> list[int]:
    """Indexes into ``kept`` (high, low) of the windows holding the vinyl multiplet whose vicinal J
    decides E against Z, for each candidate with a geometry whose other isomer is a candidate too."""
    geometries = {c.geometry for c in result.candidates if c.geometry}
    if not {"E", "Z"} <= geometries or not result.spin_systems:
        return []
    out = []
    for cand, system in zip(result.candidates, result.spin_systems, strict=False):
        if not cand.geometry:
            continue
        # vinyl H by label, or (systems given without labels) by shift: 4.5-8 ppm
        vinyl = [i for i, s in enumerate(system.sites) if s.n_h == 1 and (
            "vinyl" in s.label.lower() or (not s.label and 4.5 <= s.shift_ppm <= 8.0))]
        pairs = [(float(system.j_hz[a, b]), a) for a in vinyl for b in vinyl if a != b]
        best = max(pairs, default=(0.0, None))
        if best[0] < _MIN_EZ_J_HZ:
            continue
        shift = system.sites[best[1]].shift_ppm
        index = [i for i, (high, low) in enumerate(kept) if low <= shift <= high]
        if not index:  # the nearest window
            index = [int(np.argmin([min(abs(shift - h), abs(shift - lo)) for h, lo in kept]))]
        out.append(index[0])
    return list(dict.fromkeys(out))


def _window_scores(block: np.ndarray) -> tuple[np.ndarray, float]:
    """Per-candidate uncovered area and the summed pairwise difference in one window."""
    n = block.shape[0]
    overlap = np.zeros((n, n))
    score = 0.0
    for i in range(n):
        for j in range(i + 1, n):
            overlap[i, j] = overlap[j, i] = float(np.minimum(block[i], block[j]).sum())
            score += 0.5 * float(np.abs(block[i] - block[j]).sum())
    return block.sum(axis=1) - overlap.max(axis=1), score


def _site_windows(result, pad_ppm: float) -> list[tuple[float, float]]:
    field_mhz = result.spectrum.field_mhz if result.spectrum is not None else 400.0
    spans = []
    for system, comp in zip(result.spin_systems, result.fit.components, strict=True):
        refined = _refined_system(system, comp)
        for k, site in enumerate(refined.sites):
            x_hz = sum(n * abs(j) for _, n, j in system.x_couplings[k])
            half = float(np.sum(np.abs(refined.j_hz[k]) * refined.n_protons) + x_hz) / field_mhz / 2 + pad_ppm
            spans.append((site.shift_ppm - half, site.shift_ppm + half))
    return _merge_spans(spans)


def _merge_spans(spans, max_width_ppm: float = 0.5) -> list[tuple[float, float]]:
    merged: list[list[float]] = []
    for low, high in sorted(spans):
        if merged and low <= merged[-1][1] and high - merged[-1][0] <= max_width_ppm:
            merged[-1][1] = max(merged[-1][1], high)
        else:
            merged.append([low, high])
    return [(a, b) for a, b in merged]


# --- plots --------------------------------------------------------------------------------------


def _decimate(x: np.ndarray, y: np.ndarray, n_bins: int = _PLOT_POINTS):
    """Min/max envelope per bin so narrow peaks survive thinning for plotting."""
    if x.size <= 2 * n_bins:
        return x, y
    edges = np.linspace(0, x.size, n_bins + 1).astype(int)
    xs, ys = [], []
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        seg = y[a:b]
        i, j = sorted((int(np.argmin(seg)), int(np.argmax(seg))))
        xs += [x[a + i], x[a + j]]
        ys += [seg[i], seg[j]]
    return np.array(xs), np.array(ys)


def _break_gaps(x: np.ndarray, y: np.ndarray):
    """Insert NaN where the axis jumps (between fitted regions) so no line bridges the gap."""
    if x.size < 3:
        return x, y
    step = np.abs(np.diff(x))
    jumps = np.nonzero(step > 5 * np.median(step))[0]
    if not jumps.size:
        return x, y
    return np.insert(x.astype(float), jumps + 1, np.nan), np.insert(y.astype(float), jumps + 1, np.nan)


def _figure_overview(result):
    import matplotlib.pyplot as plt

    fit = result.fit
    fig, ax = plt.subplots(figsize=(9.0, 3.6))
    if result.spectrum is not None:
        ax.plot(*_decimate(result.spectrum.ppm, result.spectrum.intensity), color="#222222", lw=0.7,
                label="measured")
    ax.plot(*_break_gaps(*_decimate(fit.ppm, fit.model)), color="#d1495b", lw=0.8, alpha=0.85,
            label="fitted mixture")
    offset = -0.12 * float(np.max(np.abs(fit.model))) if fit.model.size else 0.0
    ax.plot(*_break_gaps(*_decimate(fit.ppm, fit.residual + offset)), color="#1b6e8a", lw=0.6,
            label="residual (offset)")
    ax.set_xlim(float(fit.ppm.max()), float(fit.ppm.min()))
    ax.set_xlabel("chemical shift / ppm")
    ax.set_yticks([])
    ax.legend(loc="upper left", frameon=False, fontsize=8)
    ax.spines[["top", "right", "left"]].set_visible(False)
    fig.tight_layout()
    return fig


def _figure_regions(result, curves: CandidateCurves, regions):
    import matplotlib.pyplot as plt

    n = max(len(regions), 1)
    fig, axes = plt.subplots(1, n, figsize=(min(3.2 * n, 10.0), 4.4), squeeze=False)
    noise_sd = _noise_sd(result)  # one estimate for every panel
    for ax, (high, low) in zip(axes[0], regions, strict=False):
        _draw_region(ax, result, curves, high, low, noise_sd=noise_sd)
    if not regions:
        empty = axes[0][0]
        empty.text(0.5, 0.5, "no diagnostic region", ha="center", va="center", transform=empty.transAxes)
        empty.set_axis_off()
    handles, labels = axes[0][0].get_legend_handles_labels()
    if handles:
        # names are never cut: long ones get fewer legend columns (and the legend more rows)
        longest = max(len(label) for label in labels)
        ncol = min(len(labels), 3 if longest <= 40 else 2 if longest <= 62 else 1)
        rows = -(-len(labels) // ncol)
        fig.legend(handles, labels, loc="lower center", ncol=ncol, frameon=False, fontsize=7.5)
        fig.set_size_inches(fig.get_size_inches()[0], 3.6 + 0.16 * rows)
        fig.tight_layout(rect=(0, min(0.5, 0.045 * rows + 0.02), 1, 1))
    else:
        fig.tight_layout()
    return fig


#: A panel's height is at least this many noise sd: a region with no line shows flat noise, never
#: noise scaled up to look like signal.
_MIN_PANEL_NOISE_SD = 25.0


def _noise_sd(result) -> float:
    from confirm.fitting.noise import estimate_noise_sd

    if result.spectrum is None:
        return float(result.fit.quality.get("noise_sd", 0.0) or 0.0)
    return float(estimate_noise_sd(np.asarray(result.spectrum.intensity, dtype=float)))


def _draw_region(ax, result, curves, high, low, *, noise_sd: float | None = None):
    fit = result.fit
    inside = (fit.ppm <= high) & (fit.ppm >= low)
    floor = _MIN_PANEL_NOISE_SD * (_noise_sd(result) if noise_sd is None else noise_sd)
    top = max(float(np.max(fit.model[inside])) if inside.any() else 1.0, floor)
    measured_top = top
    if result.spectrum is not None:
        sel = (result.spectrum.ppm <= high) & (result.spectrum.ppm >= low)
        ax.plot(result.spectrum.ppm[sel], result.spectrum.intensity[sel], color="#222222", lw=0.8,
                label="measured")
        if sel.any():
            measured_top = max(top, float(np.max(result.spectrum.intensity[sel])))
    ax.plot(*_break_gaps(fit.ppm[inside], fit.model[inside]), color="#888888", lw=0.8, ls="--",
            label="fitted mixture")
    peak = max(float(np.max(curves.per_molecule[:, inside])) if inside.any() else 1.0, 1e-300)
    step = 0.55 * max(top, 1e-300)
    for k, comp in enumerate(fit.components):
        base = -(k + 1) * step
        trace = curves.per_molecule[k, inside] / peak * 0.9 * step
        colour = _PALETTE[k % len(_PALETTE)]
        ax.plot(*_break_gaps(fit.ppm[inside], base + trace), color=colour, lw=0.9,
                label=f"{k + 1}. {_component_legend(comp)}")
        ax.plot(*_break_gaps(fit.ppm[inside], curves.fitted[k, inside]), color=colour, lw=0.6, alpha=0.7)
        ax.text(low, base + 0.15 * step, f" {k + 1}", color=colour, fontsize=7, ha="left", va="bottom")
    ax.set_ylim(-(len(fit.components) + 0.2) * step, 1.08 * measured_top)
    ax.set_xlim(high, low)
    ax.set_yticks([])
    ax.set_xlabel("ppm")
    ax.spines[["top", "right", "left"]].set_visible(False)


def _component_legend(comp) -> str:
    name = _label(comp.candidate)
    if comp.detected:
        return f"{name}: {100 * comp.mole_fraction:.1f} ± {100 * comp.mole_fraction_sd:.1f} %"
    return f"{name}: not detected (< {100 * (comp.upper_limit or comp.detection_limit):.1f} %)"


def _svg_of(fig, *, salt: str) -> str:
    import matplotlib
    import matplotlib.pyplot as plt

    buffer = io.StringIO()
    with matplotlib.rc_context({"svg.hashsalt": salt, "svg.fonttype": "none"}):
        fig.savefig(buffer, format="svg", metadata={"Date": None})
    plt.close(fig)
    text = buffer.getvalue()
    return text[text.index("<svg"):]


def _save_figure(fig, stem: Path, *, salt: str) -> list[Path]:
    import matplotlib
    import matplotlib.pyplot as plt

    written = []
    with matplotlib.rc_context({"svg.hashsalt": salt, "svg.fonttype": "none"}):
        for suffix, options in ((".png", {"dpi": 150}), (".svg", {"metadata": {"Date": None}})):
            target = stem.with_suffix(suffix)
            with atomic_path(target) as tmp:
                fig.savefig(tmp, format=suffix[1:], **options)
            written.append(target)
    plt.close(fig)
    return written


def _structure_svg(smiles: str, *, size: tuple[int, int] = (220, 160)) -> str:
    from rdkit import Chem
    from rdkit.Chem.Draw import rdMolDraw2D

    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return ""
    drawer = rdMolDraw2D.MolDraw2DSVG(*size)
    drawer.drawOptions().clearBackground = False
    rdMolDraw2D.PrepareAndDrawMolecule(drawer, mol)
    drawer.FinishDrawing()
    text = drawer.GetDrawingText()
    return text[text.index("<svg"):]


# --- HTML ---------------------------------------------------------------------------------------

_CSS = """
:root { --ink:#1d2a33; --muted:#5b6b75; --line:#d5dde2; --head:#0f4c5c; --accent:#e36414;
        --pass:#2b8a3e; --fail:#c92a2a; --unsure:#b7791f; --paper:#fbfaf7; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; color: var(--ink);
       background: var(--paper); margin: 0; line-height: 1.45; font-size: 14px; }
main { max-width: 1020px; margin: 0 auto; padding: 24px 28px 48px; }
header.top { background: var(--head); color: #fff; padding: 18px 28px; }
header.top h1 { margin: 0; font-size: 22px; letter-spacing: .3px; }
header.top p { margin: 4px 0 0; opacity: .85; font-size: 13px; }
h2 { color: var(--head); border-bottom: 2px solid var(--accent); padding-bottom: 3px; margin-top: 30px;
     font-size: 17px; }
.verdict { border-left: 6px solid var(--head); background: #fff; padding: 14px 18px; margin: 18px 0;
           box-shadow: 0 1px 3px rgba(0,0,0,.08); }
.verdict p.summary { font-size: 18px; margin: 0 0 6px; font-weight: 600; }
.badge { display: inline-block; padding: 2px 10px; border-radius: 12px; font-weight: 700; color: #fff;
         font-size: 13px; }
.PASS { background: var(--pass); } .FAIL { background: var(--fail); }
.INCONCLUSIVE { background: var(--unsure); }
.conf-high { background: #1c5d99; } .conf-moderate { background: #5b7fa6; }
.conf-low { background: #8a8f94; } .conf-undecided { background: #4a4f54; }
.qc-head { background: #fff; padding: 14px 18px; margin: 18px 0; border-left: 10px solid var(--unsure);
           box-shadow: 0 1px 3px rgba(0,0,0,.08); }
.qc-head.PASS-edge { border-left-color: var(--pass); } .qc-head.FAIL-edge { border-left-color: var(--fail); }
.qc-head p.status { font-size: 22px; font-weight: 700; margin: 0 0 4px; }
.signoff td { width: 25%; }
.caution { background: #fff4e6; border: 1px solid #f5c38b; padding: 10px 14px; font-size: 13px; }
table { border-collapse: collapse; width: 100%; margin: 8px 0; font-size: 13px; background: #fff; }
th, td { border-bottom: 1px solid var(--line); padding: 5px 8px; text-align: left; vertical-align: top; }
th { background: #eef3f5; color: var(--head); font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
code, .mono { font-family: "DejaVu Sans Mono", Consolas, monospace; font-size: 12px; word-break: break-all; }
figure { margin: 10px 0; background: #fff; padding: 6px; border: 1px solid var(--line); }
figure svg { width: 100%; height: auto; }
figcaption { color: var(--muted); font-size: 12px; }
.structure svg { width: 150px; height: auto; }
ul { margin: 6px 0; padding-left: 20px; }
.muted { color: var(--muted); }
.two-col { display: grid; grid-template-columns: 1fr 1fr; gap: 0 14px; }
@page { size: A4; margin: 12mm 11mm 13mm; }
@media print {
  body { background: #fff; font-size: 9pt; line-height: 1.3; }
  main { max-width: none; padding: 0; }
  header.top { background: #fff; color: var(--ink); border-bottom: 3px solid var(--head); padding: 0 0 4px; }
  h2 { break-after: avoid; margin-top: 12px; font-size: 11.5pt; }
  figure, .verdict, .qc-head, .caution, tr { break-inside: avoid; }
  figure { margin: 4px 0; padding: 2px; }
  figure svg { max-height: 92mm; }
  .structure svg { width: 64px; }
  #evidence ul, #warnings ul { columns: 2; column-gap: 16px; }
  #evidence li, #warnings li { break-inside: avoid; }
  table { font-size: 8pt; margin: 4px 0; }
  th, td { padding: 2px 5px; }
  #evidence li, #warnings li { font-size: 8pt; }
  #parameters table, #software table { font-size: 7pt; }
  a { color: inherit; text-decoration: none; }
}
"""


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def _table(headers: Sequence[str], rows: Sequence[Sequence[str]], *, raw_columns: Sequence[int] = (),
           num_columns: Sequence[int] = ()) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = []
        for i, cell in enumerate(row):
            text = cell if i in raw_columns else _e(cell)
            css = ' class="num"' if i in num_columns else ""
            cells.append(f"<td{css}>{text}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _list(items: Sequence[str], *, empty: str) -> str:
    if not items:
        return f'<p class="muted">{_e(empty)}</p>'
    return "<ul>" + "".join(f"<li>{_e(item)}</li>" for item in items) + "</ul>"


def _section(title: str, body: str, *, anchor: str) -> str:
    return f'<section id="{anchor}"><h2>{_e(title)}</h2>{body}</section>'


def _qc_headline(qc: QcResult) -> str:
    """The QC decision in plain words, first on a QC report: status, specification, lot."""
    words = {"PASS": "PASS: every limit is met", "FAIL": "FAIL: a limit is not met",
             "INCONCLUSIVE": "INCONCLUSIVE: the spectrum cannot decide every limit"}[qc.status]
    lot = f" &middot; lot {_e(qc.signoff.lot)}" if qc.signoff.lot else ""
    return (f'<div class="qc-head {_e(qc.status)}-edge" id="qc-status"><p class="status">QC {_e(words)}</p>'
            f"<p>{_e(qc.spec.name or 'unnamed specification')}{lot}</p><p>{_e(qc.summary)}</p></div>")


def _verdict_block(result, qc: QcResult | None) -> str:
    verdict = result.verdict
    badge = f'<span class="badge conf-{_e(verdict.confidence)}">confidence: {_e(verdict.confidence)}</span>'
    qc_line = _qc_headline(qc) if qc is not None else ""
    unresolved = ""
    if verdict.unresolved or verdict.next_steps:
        unresolved = ("<p><strong>Not decided by this spectrum:</strong></p>"
                      + _list(verdict.unresolved, empty="-")
                      + "<p><strong>What would settle it:</strong></p>"
                      + _list(verdict.next_steps, empty="-"))
    what = "<p class=\"muted\">What the spectrum shows:</p>" if qc is not None else ""
    return (f'{qc_line}<div class="verdict" id="verdict">{what}<p class="summary">{_e(verdict.summary)}</p>'
            f"<p>{badge}</p>{unresolved}</div>"
            f'<p class="caution"><strong>Caution.</strong> {_e(REPORT_CAUTION)}</p>')


def _ratios_table(result) -> str:
    rows = [(r.name, r.ratio_text, f"{100 * r.share:.1f} ± {100 * r.share_sd:.1f} %",
             "yes" if r.decided else "no (cannot be decided from this spectrum)")
            for r in result.verdict.ratios]
    if not rows:
        return ""
    return "<h3>Ratios</h3>" + _table(("ratio", "as a:b", "share of the first", "decided"), rows,
                                      num_columns=(1, 2))


def _candidates_section(result) -> str:
    rows = []
    for comp in result.fit.components:
        cand = comp.candidate
        amount = (f"{100 * comp.mole_fraction:.1f} ± {100 * comp.mole_fraction_sd:.1f} %" if comp.detected
                  else f"< {100 * (comp.upper_limit or comp.detection_limit):.1f} % (not detected)")
        rows.append((f'<div class="structure">{_structure_svg(cand.smiles)}</div>', _e(_label(cand)),
                     f"<code>{_e(cand.smiles)}</code>", _e(", ".join(cand.pathways)), _e(amount),
                     _e(f"{100 * comp.detection_limit:.1f} %"), "yes" if comp.detected else "no"))
    headers = ("structure", "candidate", "SMILES", "pathways", "mole fraction", "detection limit", "detected")
    return _table(headers, rows, raw_columns=range(7), num_columns=(4, 5)) + _ratios_table(result)


def _evidence_section(result) -> str:
    lines = list(result.verdict.evidence)
    for comp in result.fit.components:
        name = _label(comp.candidate)
        lines += [text if text.startswith(name) else f"{name}: {text}" for text in comp.evidence]
    return _list(list(dict.fromkeys(lines)), empty="No evidence lines were recorded.")


def _warnings(result) -> list[str]:
    found = list(result.warnings) + [w for w in result.fit.warnings if w not in result.warnings]
    unexplained = tuple(getattr(result.fit, "unexplained_ppm", ()))
    if unexplained:
        where = ", ".join(f"{ppm:.2f}" for ppm in unexplained)
        found.append("Signals above the noise that no candidate explains (unknown components) "
                     f"at {where} ppm.")
    return found


def _inputs_section(result) -> str:
    rows = [(record.path, f'<span class="mono">{_e(record.sha256)}</span>') for record in result.inputs]
    spectrum = result.spectrum
    facts = []
    if spectrum is not None:
        facts = [("field", f"{spectrum.field_mhz:.2f} MHz"), ("nucleus", spectrum.nucleus),
                 ("solvent", spectrum.solvent or "not recorded"), ("points", str(spectrum.ppm.size))]
    table = _table(("file", "SHA-256"), [(_e(p), h) for p, h in rows], raw_columns=(0, 1))
    return table + _table(("property", "value"), facts) if facts else table


#: Key endings that carry a unit (the name is shown without them, the unit after the value).
_UNITS = (("_hz", "Hz"), ("_ppm", "ppm"), ("_deg", "deg"), ("_mhz", "MHz"), ("_s", "s"), ("_c", "C"),
          ("_mg", "mg"), ("_points", "points"))


#: Parameter values longer than this are left to the JSON result (a table cell is no paragraph).
_MAX_PARAMETER_CHARS = 60


def _parameters_section(result) -> str:
    """Processing and fit parameters, rounded, with units, each value once (no cautions: the report
    gives its caution at the top)."""
    fit = result.fit
    rows = [("fit", "line width", f"{fit.line_width_hz:.3g} Hz")]
    rows += [("fit", k, v) for k, v in fit.quality.items()]
    rows += [("analysis", k, v) for k, v in result.parameters.items()]
    metadata = result.spectrum.metadata if result.spectrum is not None else {}
    for group in ("processing", "acquisition"):
        rows += [(group, k, v) for k, v in _flatten(metadata.get(group, {})) if v is not None]
    out, shown = [], set()
    for group, key, value in rows:
        name, unit = _name_and_unit(key)
        text = value if isinstance(value, str) and key == "line width" else _fmt(value)
        if "caution" in name or not text or text == "None" or len(text) > _MAX_PARAMETER_CHARS:
            continue  # long texts (definitions, notes) are in the JSON result and among the warnings
        if unit and not text.endswith(unit):
            text = f"{text} {unit}"
        seen_key = (name.split(".")[-1].replace("fitted ", ""), text.split(" ")[0])
        if seen_key in shown:  # the same quantity with the same value under another heading
            continue
        shown.add(seen_key)
        out.append((f"{group}: {name}", text))
    note = '<p class="muted">Every parameter, in full, is in the JSON result (confirm analyze --json).</p>'
    if len(out) <= 12:
        return _table(("parameter", "value"), out) + note
    half = (len(out) + 1) // 2  # two tables side by side: half the length on screen and on paper
    return (f'<div class="two-col">{_table(("parameter", "value"), out[:half])}'
            f'{_table(("parameter", "value"), out[half:])}</div>' + note)


def _name_and_unit(key: str) -> tuple[str, str]:
    for ending, unit in _UNITS:
        if key.endswith(ending):
            return key[: -len(ending)].replace("_", " "), unit
    return key.replace("_", " "), ""


def _flatten(record, prefix: str = ""):
    """(key, value) pairs of a nested mapping, keys joined with dots."""
    if not hasattr(record, "items"):
        return []
    pairs = []
    for key, value in record.items():
        name = f"{prefix}{key}"
        pairs += _flatten(value, f"{name}.") if hasattr(value, "items") else [(name, value)]
    return pairs


def _fmt(value) -> str:
    """A value as a reader wants it: 4 significant digits, lists rounded alike."""
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (float, np.floating)):
        return f"{float(value):.4g}"
    if isinstance(value, (list, tuple)):
        return ", ".join(_fmt(v) for v in value)
    if isinstance(value, dict):
        return json.dumps(value, default=str)
    return str(value)


def _qc_section(qc: QcResult) -> str:
    rows = [(c.name, c.limit_text, c.measured_text(),
             f"{c.interval[0]:.2f} to {c.interval[1]:.2f}" if c.interval else "-",
             f'<span class="badge {_e(c.status)}">{_e(c.status)}</span>', c.reason) for c in qc.checks]
    rows = [tuple(_e(x) if i != 4 else x for i, x in enumerate(r)) for r in rows]
    spec = qc.spec
    about = (f"<p>Specification: <strong>{_e(spec.name or 'unnamed')}</strong>, expected product "
             f"<code>{_e(spec.product)}</code>, file SHA-256 "
             f'<span class="mono">{_e(spec.sha256)}</span>.</p>'
             '<p class="muted">Each limit is decided from the 95 % interval of the measured value: '
             "PASS only when the whole interval meets the limit, FAIL only when none of it does.</p>")
    table = _table(("check", "limit", "measured", "95 % interval", "result", "why"), rows,
                   raw_columns=range(6), num_columns=(2, 3))
    sign = qc.signoff
    people = ('<table class="signoff"><tr><th>lot</th><th>analyst</th><th>reviewer</th><th>comment</th></tr>'
              f"<tr><td>{_e(sign.lot or '-')}</td><td>{_e(sign.analyst or '-')}</td>"
              f"<td>{_e(sign.reviewer or '-')}</td><td>{_e(sign.comment or '-')}</td></tr></table>"
              '<p class="muted">Reviewed and released by: ______________________ '
              "date: ____________ (the site's own procedure decides who signs)</p>")
    return about + table + people


def _yield_section(yields: Sequence[ProductYield]) -> str:
    headers, rows = format_yield_rows(yields)
    return _table(headers, rows, num_columns=(2, 3, 4, 5)) + (
        '<p class="muted">Amounts against the internal standard: n = (I/I<sub>std</sub>)'
        "(N<sub>std</sub>/N) n<sub>std</sub> (Pauli et al., J. Med. Chem. 2014, 57, 9220); "
        "uncertainties are standard uncertainties (1 sd).</p>")


def _figure(svg: str, caption: str) -> str:
    return f"<figure>{svg}<figcaption>{_e(caption)}</figcaption></figure>"


def render_html_report(result, *, qc: QcResult | None = None,
                       nmr_yield: Sequence[ProductYield] | None = None, regions=None) -> str:
    """The report as one HTML string (see :func:`write_html_report`)."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    curves = candidate_curves(result)
    regions = choose_diagnostic_regions(result, curves) if not regions else sorted(
        ((max(a, b), min(a, b)) for a, b in regions), key=lambda w: -w[0])
    overview = _svg_of(_figure_overview(result), salt="confirm-overview")
    region_svg = _svg_of(_figure_regions(result, curves, regions), salt="confirm-regions")
    versions = software_versions()
    title = "Reaction outcome report" if qc is None else "QC sign-off report"
    parts = [
        _verdict_block(result, qc),
        _section("QC sign-off", _qc_section(qc), anchor="qc") if qc is not None else "",
        _section("NMR yield", _yield_section(nmr_yield), anchor="yield") if nmr_yield else "",
        _section("Sample and files", _inputs_section(result), anchor="inputs"),
        _section("Spectrum and fitted mixture", _figure(
            overview, "Measured spectrum (black), fitted mixture (red) and residual (blue, shifted down)."),
            anchor="spectrum"),
        _section("Diagnostic regions", _figure(
            region_svg, "Top: measured and fitted. Below: each candidate's model at its refined shifts "
            "(one molecule's worth, stacked), labelled with its fitted mole fraction; thin coloured lines "
            "are each candidate's fitted share."), anchor="regions"),
        _section("Candidates", _candidates_section(result), anchor="candidates"),
        _section("Evidence", _evidence_section(result), anchor="evidence"),
        _section("Points to watch", _list(_warnings(result), empty="No warnings."), anchor="warnings"),
        _section("How it was processed and fitted", _parameters_section(result), anchor="parameters"),
        _section("Software", _table([k for k, _ in sorted(versions.items())],
                                    [[v for _, v in sorted(versions.items())]]), anchor="software"),
    ]
    generated = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    source = result.inputs[0].path if result.inputs else "peak list"
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
        f"<title>{_e(title)}: {_e(Path(source).name)}</title><style>{_CSS}</style></head><body>"
        f'<header class="top"><h1>{_e(title)}</h1><p>{_e(source)} &middot; confirm {_e(result.version)} '
        f"&middot; generated {_e(generated)}</p></header><main>{''.join(parts)}</main></body></html>\n"
    )


def _check_target(path: Path) -> Path:
    path = Path(path)
    if not path.parent.resolve().is_dir():
        raise InputError(f"report path: folder {str(path.parent)!r} does not exist")
    if path.is_dir():
        raise InputError(f"report path: {str(path)!r} is a folder; give a file name ending in .html")
    return path


def write_html_report(result, path, *, qc: QcResult | None = None,
                      nmr_yield: Sequence[ProductYield] | None = None, regions=None) -> Path:
    """Write the self-contained HTML report of ``result`` to ``path``.

    Parameters
    ----------
    result : confirm.results.AnalysisResult
    path : str or Path
        Target file; written through a temporary file and a rename.
    qc : QcResult, keyword-only
        Adds the QC sign-off section and the QC status to the verdict.
    nmr_yield : sequence of ProductYield, keyword-only
        Adds the NMR-yield section.
    regions : sequence of (float, float), keyword-only
        The diagnostic panels the user wants (ppm pairs, either order) instead of those chosen
        by what tells the candidates apart.

    Returns
    -------
    Path
        The written file.
    """
    path = _check_target(Path(path))
    return write_text_atomic(path, render_html_report(result, qc=qc, nmr_yield=nmr_yield, regions=regions))


def _spectrum_csv(result, curves: CandidateCurves) -> str:
    fit = result.fit
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    measured = fit.model + fit.residual
    writer.writerow(["ppm", "measured", "fitted_mixture", "residual",
                     *[f"model:{c.candidate.smiles}" for c in fit.components]])
    for i in range(fit.ppm.size):
        writer.writerow([f"{fit.ppm[i]:.6f}", f"{measured[i]:.6g}", f"{fit.model[i]:.6g}",
                         f"{fit.residual[i]:.6g}", *[f"{v:.6g}" for v in curves.fitted[:, i]]])
    return buffer.getvalue()


def export_result_files(result, out_dir, *, qc: QcResult | None = None,
                        nmr_yield: Sequence[ProductYield] | None = None) -> dict[str, Path]:
    """Write the plots (PNG and SVG), CSV tables and the JSON result into ``out_dir``.

    Files: ``spectrum.png/.svg`` (whole spectrum, fit, residual),
    ``regions.png/.svg`` (diagnostic regions), ``components.csv``, ``ratios.csv``,
    ``fitted_spectrum.csv`` (ppm, measured, fitted, residual, each component)
    and ``result.json`` (the analyze JSON plus QC and yield when given).

    Returns
    -------
    dict of str to Path
        Name of each file to its path.
    """
    import matplotlib

    matplotlib.use("Agg", force=False)
    out = Path(out_dir)
    if not out.is_dir():
        raise InputError(f"out_dir: {str(out)!r} is not an existing folder")
    curves = candidate_curves(result)
    regions = choose_diagnostic_regions(result, curves)
    written = _save_figure(_figure_overview(result), out / "spectrum", salt="confirm-overview")
    written += _save_figure(_figure_regions(result, curves, regions), out / "regions", salt="confirm-regions")
    written.append(write_text_atomic(out / "components.csv", components_csv(result)))
    written.append(write_text_atomic(out / "ratios.csv", ratios_csv(result)))
    written.append(write_text_atomic(out / "fitted_spectrum.csv", _spectrum_csv(result, curves)))
    payload = result.to_json()
    if qc is not None:
        payload["qc"] = qc_to_json(qc)
    if nmr_yield:
        payload["nmr_yield"] = yields_to_json(nmr_yield)
    from confirm.commands._common import to_jsonable

    written.append(write_text_atomic(out / "result.json",
                                      json.dumps(to_jsonable(payload), indent=2, allow_nan=False) + "\n"))
    return {p.name: p for p in written}
