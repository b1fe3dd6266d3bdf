"""``confirm predict SMILES``: predicted 1H sites, shifts +- sd, multiplicities and couplings."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from confirm._files import atomic_path, check_file_targets
from confirm.commands._common import (
    add_solvent_arguments,
    emit_json,
    format_table,
    refuse_plain_solvent,
    wrap_text,
)
from predictors.errors import InputError

__all__ = ["register", "spin_system_to_json"]

_PLOT_MARGIN_PPM = 0.5
_PLOT_POINTS = 16384
_LINE_WIDTH_HZ = 1.0


def register(subparsers, parents) -> None:
    """Add the ``predict`` subcommand."""
    parser = subparsers.add_parser(
        "predict", parents=parents,
        help="predict the 1H spectrum (shifts, couplings) of a structure",
        description="Predict every proton site's shift with its uncertainty, the couplings and first-order "
                    "multiplicities, the pairs that are second order at the chosen field, and optionally the "
                    "exact simulated spectrum.",
        epilog="Example: confirm predict 'C/C=C/c1ccc(OC)cc1' --field-mhz 60 --plot anethole_60mhz.png")
    parser.add_argument("smiles", help="isomeric SMILES of the structure")
    parser.add_argument("--nmr-solvent", metavar="S", dest="nmr_solvent",
                        help="deuterated solvent of the sample (CDCl3 when not given): sets the shifts of "
                             "OH/NH/SH protons (DMSO-d6 has its own values; in D2O and CD3OD they exchange)")
    add_solvent_arguments(parser, reaction=False, nmr=False)
    parser.add_argument("--field-mhz", type=float, default=400.0, help="1H frequency in MHz (default 400)")
    parser.add_argument("--plot", metavar="PNG", help="write the simulated spectrum to this PNG file")
    parser.add_argument("--decoupled", nargs="+", metavar="NUCLEUS",
                        help="predict a 19F- and/or 31P-decoupled spectrum: leave out the couplings to "
                             "these nuclei (19F, 31P)")
    parser.set_defaults(handler=_run)


def spin_system_to_json(system, *, field_mhz: float) -> dict:
    """The ``predict`` JSON contract (design.md) for a spin system."""
    from predictors.prediction import first_order_multiplicity, second_order_pairs

    sites = []
    for i, site in enumerate(system.sites):
        couplings = [{"to_site": k, "j_hz": float(system.j_hz[i, k])}
                     for k in range(len(system.sites)) if k != i and system.j_hz[i, k] != 0.0]
        sites.append({
            "atoms": list(site.atoms), "n_h": site.n_h, "label": site.label,
            "shift_ppm": site.shift_ppm, "shift_sd_ppm": site.shift_sd_ppm,
            "multiplicity": first_order_multiplicity(system, i), "couplings": couplings,
            "exchangeable": site.exchangeable, "magnetically_equivalent": site.magnetically_equivalent,
            "flags": list(site.flags),
            "x_couplings": [{"nucleus": nucleus, "n_equivalent": count, "j_hz": j}
                            for nucleus, count, j in system.x_couplings[i]],
        })
    second = [{"sites": [i, k], "delta_nu_over_j": r} for i, k, r in second_order_pairs(system, field_mhz)]
    return {"smiles": system.smiles, "field_mhz": field_mhz, "sites": sites, "second_order": second}


def _run(args) -> int:
    from predictors.prediction import FIRST_ORDER_RATIO, predict_spin_system, second_order_pairs

    refuse_plain_solvent(args)
    solvent = _nmr_solvent(args.nmr_solvent)
    field = args.field_mhz
    if not math.isfinite(field) or not 40.0 <= field <= 1200.0:
        raise InputError(f"--field-mhz: expected a frequency between 40 and 1200 MHz, got {field!r}")
    if args.plot is not None and not str(args.plot).lower().endswith(".png"):
        raise InputError(f"--plot: expected a .png file name, got {args.plot!r}")
    check_file_targets([("--plot", args.plot)])
    from confirm.structures import check_smiles
    from predictors.hetero_couplings import check_nuclei, without_x_couplings

    decoupled = check_nuclei(args.decoupled or (), name="--decoupled")
    predicted = predict_spin_system(check_smiles(args.smiles, name="smiles"), solvent=solvent)
    system = without_x_couplings(predicted, decoupled)
    if args.plot is not None:
        _write_plot(system, Path(args.plot), field_mhz=field)
    if args.json:
        emit_json(dict(spin_system_to_json(system, field_mhz=field), decoupled_nuclei=list(decoupled),
                       nmr_solvent=solvent))
        return 0
    heading = f"{system.smiles}  ({system.n_h} H, {field:g} MHz" + (f", in {solvent}" if solvent else "")
    print(heading + (f", {' and '.join(decoupled)} decoupled)" if decoupled else ")"))
    headers = ["site", "label", "nH", "shift ppm", "mult", "J Hz (to site)", "notes"]
    print(format_table(headers, _rows(system)))
    pairs = second_order_pairs(system, field)
    if pairs:
        listed = ", ".join(f"{i}-{k} (dnu/J {r:.1f})" for i, k, r in pairs)
        print(wrap_text(f"\nsecond order at {field:g} MHz: the multiplicities above are first-order names; "
                        f"coupled sites closer than {FIRST_ORDER_RATIO:g} J lean and split further: sites "
                        f"{listed}"))
    return 0


def _nmr_solvent(text: str | None) -> str | None:
    """Canonical name of ``--nmr-solvent`` (None when not given); an unknown name is an error."""
    from confirm.solvents import known_solvents, normalise_solvent_name

    if text is None:
        return None
    name = normalise_solvent_name(text)
    if name is None:
        raise InputError(f"--nmr-solvent: unknown solvent {text!r}; known: {', '.join(known_solvents())}")
    return name


def _rows(system) -> list[list[str]]:
    from predictors.prediction import first_order_multiplicity

    rows = []
    for i, site in enumerate(system.sites):
        j = [f"{abs(system.j_hz[i, k]):.1f}({k})" for k in np.argsort(-np.abs(system.j_hz[i]))
             if k != i and abs(system.j_hz[i, k]) >= 0.5]
        j += [f"{abs(value):.1f}({_x_partner(nucleus, count)})"
              for nucleus, count, value in system.x_couplings[i] if abs(value) >= 0.5]
        notes = "exchangeable" if site.exchangeable else ("; ".join(site.flags) if site.flags else "")
        rows.append([str(i), site.label, str(site.n_h), f"{site.shift_ppm:.2f} +- {site.shift_sd_ppm:.2f}",
                     first_order_multiplicity(system, i), ", ".join(j), notes])
    return rows


def _x_partner(nucleus: str, count: int) -> str:
    """``"F"``, ``"3F"``, ``"P"``: the X nuclei a coupling goes to, for the couplings column."""
    symbol = nucleus.lstrip("0123456789")
    return symbol if count == 1 else f"{count}{symbol}"


def _write_plot(system, path: Path, *, field_mhz: float) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from predictors.spin import render_lines, simulate_lines

    if not path.parent.exists():
        raise InputError(f"--plot: folder {str(path.parent)!r} does not exist")
    lines = simulate_lines(system, field_mhz=field_mhz)
    low = min(-0.5, float(np.min(system.shifts_ppm)) - _PLOT_MARGIN_PPM)
    high = max(10.0, float(np.max(system.shifts_ppm)) + _PLOT_MARGIN_PPM)
    ppm = np.linspace(high, low, _PLOT_POINTS)
    spectrum = render_lines(lines, ppm, line_width_hz=_LINE_WIDTH_HZ)
    fig, ax = plt.subplots(figsize=(10, 4))
    ax.plot(ppm, spectrum, color="black", linewidth=0.7)
    ax.set_xlim(high, low)
    ax.set_xlabel("chemical shift (ppm)")
    ax.set_yticks([])
    ax.set_title(f"{system.smiles} - predicted 1H, {field_mhz:g} MHz")
    try:
        with atomic_path(path) as tmp:
            fig.savefig(tmp, dpi=120, format="png")
    finally:
        plt.close(fig)
