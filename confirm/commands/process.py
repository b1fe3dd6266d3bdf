"""``confirm process PATH``: read and process a measured 1H data set.

Prints the acquisition summary, SNR, multiplets and warnings (or JSON with
``--json``); ``--out`` writes the processed spectrum as CSV (ppm, intensity, with a
``# field_mhz=...; nucleus=...; solvent=...`` comment line, so that the file reads back as a
spectrum) and ``--plot`` a PNG. A peak list is printed as read (no processing).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from confirm._files import atomic_path, check_outputs
from confirm.commands._common import (
    add_solvent_arguments,
    data_inputs,
    emit_json,
    format_table,
    parse_regions,
    refuse_plain_solvent,
    wrap_text,
)
from predictors.errors import InputError

if TYPE_CHECKING:
    from confirm.processing import ProcessedSpectrum
    from confirm.reading import PeakList

__all__ = ["register"]


def register(subparsers, parents) -> None:
    """Add the ``process`` subcommand."""
    parser = subparsers.add_parser(
        "process", parents=parents,
        help="read a FID, JCAMP-DX spectrum or peak list and process it (phase, baseline, reference, peaks)",
        description="Read a raw FID folder, a JCAMP-DX spectrum or a peak list; process it (apodization, "
                    "Fourier transform, phase, baseline, referencing) and list its peaks, multiplets with J, "
                    "the signal-to-noise, the warnings that matter for quantitation and a journal-style line "
                    "list.",
        epilog="Examples: confirm process path/to/fid_folder --out spectrum.csv --plot spectrum.png; "
               "confirm process crude.jdx --nmr-solvent DMSO-d6 --protons 12")
    parser.add_argument("path", metavar="PATH", help="FID directory, JCAMP-DX file or peak-list table")
    parser.add_argument("--out", metavar="CSV", help="write the processed spectrum (ppm, intensity) as CSV")
    parser.add_argument("--plot", metavar="PNG", help="write a plot of the processed spectrum")
    parser.add_argument("--lb-hz", type=float, default=0.3, help="exponential line broadening (default 0.3)")
    add_solvent_arguments(parser, reaction=False)
    parser.add_argument("--field-mhz", type=float,
                        help="spectrometer frequency when the file lacks it (a value that contradicts the "
                             "file's is refused unless --force-field)")
    parser.add_argument("--force-field", action="store_true",
                        help="use --field-mhz even where the file records another field")
    parser.add_argument("--orientation", choices=("auto", "as-read", "mirrored"), default="auto",
                        help="auto: as the file's metadata say, checked against the data (default); as-read: "
                             "the metadata unchecked; mirrored: the opposite")
    parser.add_argument("--reference", choices=("auto", "tms", "solvent", "none"), default="auto",
                        help="how to reference the axis (default: TMS, else solvent, else as acquired)")
    parser.add_argument("--baseline", choices=("arpls", "asls", "iarpls", "none"), default="arpls",
                        help="baseline method (default arpls)")
    parser.add_argument("--line-list", action="store_true",
                        help="print only the journal-style line list (to paste into an experimental section)")
    parser.add_argument("--integrate", metavar="HIGH-LOW,...",
                        help="integrate these ppm ranges (e.g. 6.5-5.5,2.0-1.6): each as %% of their sum, "
                             "and as nH with --protons N (the ranges then hold N protons together)")
    parser.add_argument("--protons", type=int, default=None, metavar="N",
                        help="proton count of the compound: the line list gives each multiplet's nH "
                             "(integrals scaled to sum to N); without it, %% of the total")
    parser.add_argument("--threshold-snr", type=float, default=8.0,
                        help="pick lines higher than this many noise standard deviations (default 8)")
    parser.set_defaults(handler=_run)


def _run(args) -> int:
    from confirm.processing import ProcessingOptions, process_measurement
    from confirm.reading import PeakList, read_measurement

    refuse_plain_solvent(args)
    check_outputs([("--out", args.out), ("--plot", args.plot)], data_inputs("PATH", args.path))
    for name in ("out", "plot"):
        value = getattr(args, name)
        if value and Path(value).is_dir():
            raise InputError(f"--{name}: {value!r} is a directory; give a file name")
    if args.plot and Path(args.plot).suffix.lower() not in (".png", ".pdf", ".svg"):
        raise InputError(f"--plot: {args.plot!r} must end in .png, .pdf or .svg")
    raw = read_measurement(args.path)
    if isinstance(raw, PeakList):
        if args.out or args.plot:
            raise InputError(f"--out/--plot: {args.path} is a peak list, not a spectrum; nothing to write")
        _print_peak_list(raw, as_json=args.json)
        return 0
    options = ProcessingOptions(lb_hz=args.lb_hz, solvent=args.nmr_solvent, field_mhz=args.field_mhz,
                                force_field=args.force_field, reference=args.reference,
                                baseline=args.baseline, threshold_snr=args.threshold_snr,
                                orientation=args.orientation)
    if args.protons is not None and not 1 <= args.protons <= 500:
        raise InputError(f"--protons: expected a proton count between 1 and 500, got {args.protons}")
    ranges = parse_regions(args.integrate, flag="--integrate")
    result = process_measurement(raw, options=options)
    if args.out:
        _write_csv(result, Path(args.out))
    if args.plot:
        _write_plot(result, Path(args.plot))
    integrals = integrate_ranges(result.spectrum, ranges, protons=args.protons) if ranges else []
    names = _line_names(result)
    if args.json:
        emit_json(dict(_to_json(result, names), line_list=_line_list(result, args.protons, names),
                       integrals=[{"high_ppm": h, "low_ppm": lo, "area": a, "percent": p, "n_h": n}
                                  for h, lo, a, p, n in integrals]))
    elif args.line_list:
        print(_line_list(result, args.protons, names))  # one line, as a paper wants it
    else:
        print(wrap_text(_to_text(result, names)))
        print(wrap_text(f"\nline list: {_line_list(result, args.protons, names)}"))
        if integrals:
            rows = [(f"{h:.2f} - {lo:.2f}", f"{a:.4g}", f"{p:.2f}", "-" if n is None else f"{n:.2f}")
                    for h, lo, a, p, n in integrals]
            print("\nintegrals:\n" + format_table(("range (ppm)", "area", "% of ranges", "nH"), rows))
    return 0


def _line_names(result: ProcessedSpectrum) -> list[str | None]:
    """What each multiplet may be (a known solvent, water, TMS or impurity line), else None."""
    from confirm.solvents import name_line

    solvent = result.spectrum.solvent
    return [name_line(m.ppm, solvent, multiplicity=m.multiplicity) for m in result.multiplets]


def _line_list(result: ProcessedSpectrum, protons, names: list[str | None]) -> str:
    from confirm.line_list import journal_line

    spectrum = result.spectrum
    exclude = [0.0] if "TMS" in str(result.reference) else []
    # the solvent's own lines are no part of the compound's line list (impurities stay: "may be")
    for m, name in zip(result.multiplets, names, strict=True):
        if name and (name.startswith("residual") or name in ("water", "TMS")):
            exclude.append(m.ppm)
    return journal_line(result.multiplets, field_mhz=spectrum.field_mhz, solvent=spectrum.solvent,
                        protons=protons, exclude_ppm=exclude)


def _to_json(result: ProcessedSpectrum, names: list[str | None]) -> dict:
    from confirm.processing import SNR_DEFINITION

    spectrum = result.spectrum
    return {
        "source": spectrum.metadata.get("source_path"),
        "sha256": spectrum.metadata.get("sha256"),
        "format": spectrum.metadata.get("format"),
        "field_mhz": spectrum.field_mhz,
        "nucleus": spectrum.nucleus,
        "solvent": spectrum.solvent,
        "snr": result.snr,
        "snr_definition": SNR_DEFINITION,
        "noise_sd": result.noise_sd,
        "reference": result.reference,
        "reference_source": result.reference_source,
        "orientation": result.orientation,
        "phase_deg": list(result.phase_deg),
        "acquisition": dict(spectrum.metadata.get("acquisition", {})),
        "peaks": [{"ppm": p.ppm, "height": p.height, "integral": p.integral, "width_hz": p.width_hz}
                  for p in result.peaks],
        "multiplets": [{"ppm": m.ppm, "integral": m.integral, "j_hz": list(m.j_hz),
                        "multiplicity": m.multiplicity, "n_lines": m.n_lines,
                        "range_ppm": [m.start_ppm, m.stop_ppm],
                        "may_be": name}
                       for m, name in zip(result.multiplets, names, strict=True)],
        "warnings": list(result.warnings),
    }


def _to_text(result: ProcessedSpectrum, names: list[str | None]) -> str:
    spectrum = result.spectrum
    meta = spectrum.metadata
    total = sum(max(m.integral, 0.0) for m in result.multiplets) or 1.0
    rows = [(f"{m.ppm:.3f}", m.multiplicity, ", ".join(f"{j:.1f}" for j in m.j_hz) or "-", m.n_lines,
             f"{100.0 * m.integral / total:.2f}", name or "")
            for m, name in zip(result.multiplets, names, strict=True)]
    lines = [
        f"source:    {meta.get('source_path')} ({meta.get('format')})",
        f"field:     {spectrum.field_mhz:.2f} MHz {spectrum.nucleus}, "
        f"solvent {spectrum.solvent or 'unknown'}",
        f"reference: {result.reference}",
        f"orientation: {result.orientation}",
        f"phase:     {result.phase_deg[0]:.1f} deg (zero order), {result.phase_deg[1]:.1f} deg (first order)",
        f"SNR:       {result.snr:.0f} (tallest non-solvent line / 2 x noise sd)",
        "",
        format_table(["ppm", "mult", "J (Hz)", "lines", "integral %", "may be"], rows),
    ]
    lines += [f"warning: {w}" for w in result.warnings]
    return "\n".join(lines)


def _print_peak_list(peaks: PeakList, *, as_json: bool) -> None:
    note = "peak list: printed as read, no processing"
    if as_json:
        emit_json({
            "source": peaks.source_path, "sha256": peaks.sha256, "format": peaks.format,
            "field_mhz": None, "nucleus": None, "solvent": None, "snr": None,
            "peaks": [{"ppm": e.ppm, "height": e.intensity, "integral": e.integral, "width_hz": e.width_hz,
                       "multiplicity": e.multiplicity, "j_hz": list(e.j_hz)} for e in peaks.entries],
            "multiplets": [{"ppm": e.ppm, "integral": e.integral, "j_hz": list(e.j_hz)}
                           for e in peaks.entries if e.multiplicity or e.j_hz],
            "warnings": [note],
        })
        return
    rows = [(f"{e.ppm:.4f}", _fmt(e.intensity), _fmt(e.integral), e.multiplicity or "-",
             ", ".join(f"{j:.1f}" for j in e.j_hz) or "-") for e in peaks.entries]
    print(f"source: {peaks.source_path} ({note})")
    print(format_table(["ppm", "intensity", "integral", "mult", "J (Hz)"], rows))


def _fmt(value) -> str:
    return "-" if value is None else f"{value:.4g}"


def _write_csv(result: ProcessedSpectrum, path: Path) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    spectrum = result.spectrum
    with atomic_path(path) as tmp, open(tmp, "w", encoding="utf-8", newline="\n") as out:
        out.write(f"# processed spectrum: field_mhz={spectrum.field_mhz!r}; nucleus={spectrum.nucleus}; "
                  f"solvent={spectrum.solvent or 'unknown'}; reference={result.reference}\n")
        out.write("ppm,intensity\n")
        for ppm, value in zip(spectrum.ppm.tolist(), spectrum.intensity.tolist(), strict=True):
            out.write(f"{ppm!r},{value!r}\n")


def _write_plot(result: ProcessedSpectrum, path: Path) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    spectrum = result.spectrum
    path.parent.mkdir(parents=True, exist_ok=True)
    fig, ax = plt.subplots(figsize=(11, 4))
    try:
        ax.plot(spectrum.ppm, spectrum.intensity, lw=0.6, color="black")
        for m in result.multiplets:
            top = max(result.peaks[i].height for i in m.peak_indices)
            ax.annotate(f"{m.ppm:.2f}", (m.ppm, top), fontsize=6, ha="center", va="bottom", rotation=90)
        ax.set_xlim(spectrum.ppm[0], spectrum.ppm[-1])
        ax.set_xlabel("chemical shift (ppm)")
        ax.set_yticks([])
        ax.set_title(f"{Path(str(spectrum.metadata.get('source_path'))).name}: {spectrum.field_mhz:.0f} MHz, "
                     f"{result.reference}, SNR {result.snr:.0f}", fontsize=9)
        fig.tight_layout()
        with atomic_path(path) as tmp:
            fig.savefig(tmp, format=path.suffix.lstrip(".").lower() or "png", dpi=120)
    finally:
        plt.close(fig)


def integrate_ranges(spectrum, ranges, *, protons: int | None = None) -> list[tuple]:
    """(high, low, area, % of all ranges, nH or None) of each ppm range of a processed spectrum:
    the area is the sum of the intensities times the point spacing (the baseline already taken
    out); with ``protons`` the ranges are scaled to hold that many protons together."""
    import numpy as np

    ppm = np.asarray(spectrum.ppm, dtype=float)
    y = np.asarray(spectrum.intensity, dtype=float)
    step = abs(float(ppm[0] - ppm[-1])) / max(ppm.size - 1, 1)
    areas = [float(np.sum(y[(ppm <= high) & (ppm >= low)]) * step) for high, low in ranges]
    total = sum(a for a in areas if a > 0) or 1.0
    return [(high, low, a, 100.0 * a / total, None if protons is None else protons * a / total)
            for (high, low), a in zip(ranges, areas, strict=True)]
