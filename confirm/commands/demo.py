"""``confirm demo``: the whole job on the bundled sample spectra (an invented scenario)."""

from __future__ import annotations

import argparse
import json
from importlib import resources
from pathlib import Path

from confirm.commands._common import add_budget_argument, budget_from_args, emit_json, to_jsonable, wrap_text

__all__ = ["register", "DEMO_SUBSTRATE", "DEMO_REAGENT", "DEMO_SOLVENT", "DEMO_TEMP_C", "sample_files"]

#: The scenario of sample_spectra/README.md: dehydrobromination of an anisyl secondary bromide.
DEMO_SUBSTRATE = "CC(Br)Cc1ccc(OC)cc1"
DEMO_REAGENT = "hydroxide"
DEMO_SOLVENT = "DMSO"
DEMO_TEMP_C = 80.0
_SAMPLES = ("anisyl_elimination_400mhz", "anisyl_elimination_60mhz.jdx")


def register(subparsers, parents) -> None:
    """Add the ``demo`` subcommand."""
    parser = subparsers.add_parser(
        "demo",
        parents=parents,
        help="run the whole analysis on the bundled sample spectra",
        description="Analyse the bundled sample spectra (400 MHz raw FID and 60 MHz JCAMP-DX of an invented "
        "dehydrobromination, see sample_spectra/README.md) from the substrate and reagent.",
        epilog="Examples: confirm demo; confirm demo --json --out demo_results/",
    )
    parser.add_argument("--out", metavar="DIR", help="also write one JSON result per sample into DIR")
    add_budget_argument(parser, per="sample")
    parser.set_defaults(handler=_run)


def sample_files() -> list[Path]:
    """Paths of the bundled sample spectra (installed package data or the source tree)."""
    try:
        base = Path(str(resources.files("confirm.sample_spectra")))
    except ModuleNotFoundError:  # running from a source tree: the folder is not a subpackage there
        base = Path(__file__).resolve().parents[2] / "sample_spectra"
    if not (base / _SAMPLES[0]).exists():
        base = Path(__file__).resolve().parents[2] / "sample_spectra"
    return [base / name for name in _SAMPLES]


def _run(args: argparse.Namespace) -> int:
    from confirm.analysis import analyze_path
    from confirm.budget import watch_budget
    from confirm.commands.analyze import format_result
    from predictors.errors import FileFormatError

    if args.out:
        _check_out(Path(args.out))
    results = {}
    for path in sample_files():
        if not path.exists():
            raise FileFormatError(
                f"sample spectra: {path} is missing; regenerate with python scripts/make_sample_spectra.py"
            )
        budget = budget_from_args(args)
        with watch_budget(budget):
            results[path.name] = analyze_path(path, substrate=DEMO_SUBSTRATE, reagent=DEMO_REAGENT,
                                              solvent=DEMO_SOLVENT, temp_c=DEMO_TEMP_C, budget=budget)
    if args.out:
        _write_results(results, Path(args.out))
    if args.json:
        emit_json(
            {
                "scenario": {
                    "substrate": DEMO_SUBSTRATE,
                    "reagent": DEMO_REAGENT,
                    "solvent": DEMO_SOLVENT,
                    "temp_c": DEMO_TEMP_C,
                },
                "results": {name: r.to_json() for name, r in results.items()},
            }
        )
        return 0
    print(wrap_text(
        f"Demo: {DEMO_SUBSTRATE} + {DEMO_REAGENT} in {DEMO_SOLVENT} at {DEMO_TEMP_C:.0f} C "
        "(invented scenario; see sample_spectra/README.md for the true composition)"
    ))
    for name, result in results.items():
        print(f"\n=== {name} ({result.spectrum.field_mhz:.0f} MHz) ===")
        print(format_result(result))
    return 0


def _result_paths(out_dir: Path) -> list[Path]:
    return [out_dir / (Path(p.name).stem + ".json") for p in sample_files()]


def _check_out(out_dir: Path) -> None:
    """Refuse ``--out`` before any work: an existing file, or a place that would hit the samples."""
    from confirm._files import check_outputs
    from predictors.errors import InputError

    try:
        if out_dir.exists() and not out_dir.is_dir():
            raise InputError(f"--out: {str(out_dir)!r} is an existing file; give a folder "
                             "(created when missing)")
    except OSError as exc:
        raise InputError(f"--out: cannot use {str(out_dir)!r} ({exc.strerror or exc})") from None
    samples = [("sample spectrum", p) for p in sample_files()]
    check_outputs([("--out", p) for p in _result_paths(out_dir)], samples, folders=[("--out", out_dir)])


def _write_results(results, out_dir: Path) -> None:
    from confirm._files import write_text_atomic
    from predictors.errors import InputError

    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"--out: cannot create folder {str(out_dir)!r} ({exc.strerror or exc})") from None
    for name, result in results.items():
        target = out_dir / (Path(name).stem + ".json")
        write_text_atomic(target, json.dumps(to_jsonable(result.to_json()), indent=2, allow_nan=False) + "\n")
