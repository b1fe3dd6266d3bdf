"""Benchmark: is the analysis a function of the data? (issue 13, deliver 2)

Runs the demo (both sample spectra), 30 corpus cases (tune half, every field) and, where the shared
real spectra are present (``$CONFIRM_REAL_SPECTRA`` or ``../shared/real_spectra``), the measured
files of the real-data verdict tests (each alkene against its geometric and positional isomers, two
negative controls; ``REAL_CASES``) under several configurations, each in a fresh subprocess:

- OpenBLAS core types (``OPENBLAS_CORETYPE``, which only selects the BLAS kernels, so it changes
  the rounding of every matrix product): the first three this CPU can run of Haswell,
  Sandybridge, Nehalem, Prescott, Zen, SkylakeX (a type the CPU lacks dies with SIGILL and is
  reported as skipped), with 2 workers;
- 1 worker (first core type);
- the input intensities perturbed at 1e-9 relative (a different rounding of the same data; first
  core type, 2 workers).

It prints, against the first configuration, the largest change of any mole fraction (points), and
every change of a detected set or of the major product. Target: no change of detected set or
verdict, amounts within 0.1 point.

    python -m benchmarks.stability [--cases N]

Never set OPENBLAS_CORETYPE in tests or CI: it is a diagnostic for this benchmark only.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import os
import subprocess
import sys
import time

_CORE_TYPES = ("Haswell", "Sandybridge", "Nehalem", "Prescott", "Zen", "SkylakeX")

#: Real measured files and their candidates, as in tests/confirm/test_real_verdict.py: folder ->
#: candidates (the true compound first for the alkenes; alkenes only for the negative controls).
_ALKENES = ["C/C=C/c1ccc(OC)cc1", "C=CCc1ccc(OC)cc1", "C=CC(=O)OCCCC"]
REAL_CASES = {
    "butyl_acrylate": ["C=CC(=O)OCCCC", "C/C=C/C(=O)OCCC", "C/C=C\\C(=O)OCCC"],
    "estragole": ["C=CCc1ccc(OC)cc1", "C/C=C/c1ccc(OC)cc1", "C/C=C\\c1ccc(OC)cc1"],
    "coumarin": ["O=c1ccc2ccccc2o1", "C=C1C(=O)Oc2ccccc21"],
    "ipsdienol": ["CC(C)=CC(O)CC(=C)C=C", "CC(C)=CC(O)C/C(C)=C/C", "CC(C)=CC(O)C/C(C)=C\\C"],
    "menthol": _ALKENES,
    "aspirin": _ALKENES,
}


def real_spectra_folder():
    """The shared real spectra, or None when absent."""
    from pathlib import Path

    env = os.environ.get("CONFIRM_REAL_SPECTRA")
    path = Path(env) if env else Path(__file__).resolve().parents[2] / "shared" / "real_spectra"
    return path if path.is_dir() else None


def _usable_core_types() -> tuple[list[str], list[str]]:
    """Core types whose kernels run on this CPU, and the others (they die with SIGILL)."""
    probe = "import numpy as np; a = np.random.default_rng(0).random((300, 300)); (a @ a).sum()"
    usable, skipped = [], []
    for core in _CORE_TYPES:
        env = dict(os.environ, OPENBLAS_CORETYPE=core)
        done = subprocess.run([sys.executable, "-c", probe], env=env, capture_output=True, check=False)
        (usable if done.returncode == 0 else skipped).append(core)
    return usable, skipped


def _cases(n: int):
    """The first n tune cases of mixtures, identity sets and controls, alternating fields."""
    from benchmarks.corpus.cases import generate_cases, select_cases

    cases = select_cases(generate_cases(), half="tune", kinds=["mixture", "identity", "control"])
    by_kind = {kind: [c for c in cases if c.kind == kind] for kind in ("mixture", "identity", "control")}
    share = {"mixture": n // 2, "identity": n // 4, "control": n - n // 2 - n // 4}
    out = []
    for kind, count in share.items():
        out += by_kind[kind][:count]
    return out


def _worker(n_cases: int, n_workers: int, perturb: float) -> dict:
    """Analyse the demo and the corpus cases in this process; the outcome of each as plain data."""
    import confirm.analysis as analysis_module
    from benchmarks.corpus.synthesis import render_case
    from benchmarks.quantification import perturbed
    from confirm.analysis import build_candidates, predict_systems
    from confirm.commands.demo import DEMO_REAGENT, DEMO_SOLVENT, DEMO_SUBSTRATE, DEMO_TEMP_C, sample_files
    from confirm.fitting import FitOptions

    options = FitOptions(n_workers=n_workers)
    original = analysis_module.analyze_spectrum

    def with_options(*args, **kwargs):
        kwargs.setdefault("options", options)
        return original(*args, **kwargs)

    analysis_module.analyze_spectrum = with_options

    def analysed(key, path, cands):
        """Read, process and analyse ``path`` as ``analyze_path`` does (predictions for the sample's
        solvent), the processed spectrum perturbed (drawn from ``key``): every configuration takes
        this same path."""
        from confirm.processing import process_measurement
        from confirm.reading import read_measurement

        raw = read_measurement(path)
        processed = process_measurement(raw)
        solvent = getattr(raw.parameters, "solvent", None)
        systems = analysis_module._for_sample_solvent(predict_systems(cands, solvent=solvent), cands, solvent,
                                                      processed.spectrum.solvent)
        processed = dataclasses.replace(processed, spectrum=perturbed(processed.spectrum, key, perturb))
        return _outcome(with_options(processed, cands, systems=systems))

    out = {}
    demo, _ = build_candidates(substrate=DEMO_SUBSTRATE, reagent=DEMO_REAGENT, solvent=DEMO_SOLVENT,
                               temp_c=DEMO_TEMP_C)
    for path in sample_files():
        out[f"demo:{path.name}"] = analysed(f"demo:{path.name}", path, demo)
    real = real_spectra_folder()
    for folder, smiles in REAL_CASES.items() if real is not None else ():
        path = real / folder / "1h.fid.dx"
        if path.is_file():
            out[f"real:{folder}"] = analysed(f"real:{folder}", path, build_candidates(candidates=smiles)[0])
    cache: dict = {}
    for case in _cases(n_cases):
        cands, _ = build_candidates(candidates=[s for s, _ in case.candidates])
        missing = [c for c in cands if c.smiles not in cache]
        if missing:
            cache.update(zip([c.smiles for c in missing], predict_systems(missing), strict=True))
        try:
            result = with_options(perturbed(render_case(case), case.id, perturb), cands,
                                  systems=[cache[c.smiles] for c in cands])
            out[case.id] = _outcome(result)
        except Exception as exc:  # noqa: BLE001 -- an error is an outcome too, and must repeat
            out[case.id] = {"error": f"{type(exc).__name__}: {exc}"}
    return out


def _outcome(result) -> dict:
    return {
        "detected": sorted(c.candidate.smiles for c in result.fit.components if c.detected),
        "fractions": {c.candidate.smiles: c.share for c in result.fit.components},
        "major": result.verdict.major,
        "confidence": result.verdict.confidence,
    }


def _run_config(core: str | None, n_cases: int, workers: int, perturb: float) -> dict:
    env = dict(os.environ)
    if core:
        env["OPENBLAS_CORETYPE"] = core
    cmd = [sys.executable, "-m", "benchmarks.stability", "--worker", "--cases", str(n_cases),
           "--workers", str(workers), "--perturb", str(perturb)]
    done = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        raise RuntimeError(f"configuration {core}/{workers}/{perturb} failed: {done.stderr.strip()[-400:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _compare(reference: dict, other: dict) -> tuple[float, list[str], list[str]]:
    """Largest change of a mole fraction (points), the changes of detected set, major product or
    error, and every analysis whose amounts moved (so that a change can be traced to its case)."""
    worst, changes, moved = 0.0, [], []
    for key, ref in reference.items():
        got = other.get(key, {})
        if "error" in ref or "error" in got:
            if ref.get("error") != got.get("error"):
                changes.append(f"{key}: error {ref.get('error')!r} vs {got.get('error')!r}")
            continue
        if ref["detected"] != got["detected"]:
            changes.append(f"{key}: detected {ref['detected']} vs {got['detected']}")
        if ref["major"] != got["major"]:
            changes.append(f"{key}: major {ref['major']} vs {got['major']}")
        case_worst = max((abs(x - got["fractions"].get(s, 0.0)) for s, x in ref["fractions"].items()),
                         default=0.0)
        if case_worst >= 1e-3:
            moved.append(f"{key}: amounts moved by up to {100 * case_worst:.2f} points")
        worst = max(worst, case_worst)
    return 100 * worst, changes, moved


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.stability",
                                     description=__doc__.split("\n")[0])
    parser.add_argument("--cases", type=int, default=30, help="corpus cases besides the demo")
    parser.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    parser.add_argument("--workers", type=int, default=2, help=argparse.SUPPRESS)
    parser.add_argument("--perturb", type=float, default=0.0, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.worker:
        print(json.dumps(_worker(args.cases, args.workers, args.perturb)))
        return 0
    usable, skipped = _usable_core_types()
    print(f"OpenBLAS core types usable here: {', '.join(usable)}; skipped (not supported by this CPU): "
          f"{', '.join(skipped) or 'none'}")
    configs = [(core, 2, 0.0) for core in usable[:3]]
    configs += [(usable[0], 1, 0.0), (usable[0], 2, 1e-9)]
    start = time.perf_counter()
    results = {}
    for config in configs:
        t0 = time.perf_counter()
        results[config] = _run_config(config[0], args.cases, config[1], config[2])
        print(f"  ran {config[0]}, {config[1]} worker(s), perturbation {config[2]:g}: "
              f"{len(results[config])} analyses in {time.perf_counter() - t0:.0f} s", flush=True)
    reference = results[configs[0]]
    all_changes, overall = [], 0.0
    for config in configs[1:]:
        worst, changes, moved = _compare(reference, results[config])
        overall = max(overall, worst)
        print(f"{config[0]:>12s}, {config[1]} worker(s), perturbation {config[2]:g}: largest change "
              f"{worst:.3f} points; {len(changes)} change(s) of detected set or major product")
        all_changes += [f"  [{config[0]}/{config[1]}/{config[2]:g}] {c}" for c in changes + moved]
    print("\n".join(all_changes) if all_changes else "no change of any detected set, major product or amount")
    print(f"largest change of a mole fraction: {overall:.3f} points (target < 0.1); "
          f"total {time.perf_counter() - start:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
