"""Benchmark: amounts, detection and identity on the independent corpus (issue 13).

Runs the cases of ONE half of the corpus (:mod:`benchmarks.corpus`) through the public API only
(``build_candidates``, ``predict_systems``, ``analyze_spectrum``, ``AnalysisResult.to_json``) and
prints, per field band (60-90 MHz, 300-600 MHz) and per field:

- mixtures: median and 95th-percentile absolute error (mole-% points) over the components
  present, ours beside the by-hand baseline (one resolved multiplet per compound, windows from
  the true shifts); an undetected component counts as 0 %;
- detection rate of minor components (truth <= 20 %) by amount and by SNR;
- absent candidates claimed (detected) in mixtures;
- wrong-sample controls: cases where a candidate is detected above 5 % (false claims);
- +-2 sd coverage of detected components, and truth <= upper_limit for undetected present ones;
- identity sets: true compound named major / a decoy named major / undecided;
- run time per case and the number of errors (a failing case is counted, never stops the run).

    python -m benchmarks.quantification [--half tune|held-out] [--limit N]
        [--kinds mixture,identity,control] [--ids ID,ID | --ids @FILE] [--matching SMARTS]
        [--seed N] [--perturb REL] [--json out.json]
    python -m benchmarks.quantification --from-json out.json   # the report of an earlier run

``--seed N`` draws a fresh sample of cases (mixtures, amounts, fields, faults) from the same
compounds and split: to decide a change on data not yet seen when an earlier run on the corpus's
own sample informed the rule. ``--ids`` runs only the named cases (comma-separated, or one per
line in FILE); ``--matching`` (repeatable) only the cases with a candidate that has the
substructure: a change confined to some chemistry (open-chain allylic couplings, saturated rings)
can move no other case, so a paired comparison (:mod:`benchmarks.paired`, ``--fill``) needs only
those run again. ``--perturb 1e-9`` multiplies each spectrum by 1 + 1e-9 u (u uniform in [-1, 1],
fixed per case): the unchanged code paired against such a run (:mod:`benchmarks.paired`) shows how
far rounding alone moves each figure, the noise floor a change has to beat (on the fresh sample of
December 2026 it changed the summed error of 22 of 71 cases by more than 0.5 point, of four by
46-108 points: corpus README, fourteenth section).

The held-out half is the default and the one to report; the tune half is for development.
``--limit N`` keeps the first N cases of each kind (the mixtures cycle through the families).
With ``--json`` the per-case records are rewritten after every case, so a run that is stopped
early still leaves its records.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
import traceback

import numpy as np

from benchmarks.corpus.by_hand import integrate_by_hand
from benchmarks.corpus.cases import KINDS, MASTER_SEED, generate_cases, select_cases
from benchmarks.corpus.synthesis import render_case

_AMOUNT_BINS = ((0.005, 0.01), (0.01, 0.02), (0.02, 0.05), (0.05, 0.2000001))
_SNR_BINS = ((30, 100), (100, 300), (300, 1000), (1000, 5000.1))
_BANDS = (("60-90 MHz", lambda f: f < 200), ("300-600 MHz", lambda f: f >= 200))
_FALSE_CLAIM = 0.05


def _canonical(smiles: str) -> str:
    from rdkit import Chem

    return Chem.MolToSmiles(Chem.MolFromSmiles(smiles), isomericSmiles=True)


def perturbed(spectrum, case_id: str, rel: float):
    """``spectrum`` with every intensity multiplied by ``1 + rel * u`` (u uniform in [-1, 1], drawn from
    the case id): the same data rounded differently. A paired run of the unchanged code against its
    own perturbed run shows how far rounding alone moves each figure (the noise floor a change must
    beat)."""
    import dataclasses
    import zlib

    if not rel:
        return spectrum
    rng = np.random.default_rng(zlib.crc32(case_id.encode()))
    y = np.asarray(spectrum.intensity, dtype=float)
    return dataclasses.replace(spectrum, intensity=y * (1.0 + rel * rng.uniform(-1.0, 1.0, y.size)))


def run_case(case, systems_cache: dict, perturb: float = 0.0) -> dict:
    """Analyse one case (its spectrum perturbed at ``perturb`` relative, see :func:`perturbed`); the
    record holds what the summary and a later diagnosis need."""
    from confirm.analysis import analyze_spectrum, build_candidates, predict_systems

    record = {
        "id": case.id,
        "kind": case.kind,
        "family": case.family,
        "half": case.half,
        "field_mhz": case.field_mhz,
        "snr": case.snr,
        "seed": case.seed,
        "truth": dict(case.truth),
        "faults": {
            "phase0_deg": case.faults.phase0_deg,
            "phase1_deg": case.faults.phase1_deg,
            "ref_offset_ppm": case.faults.ref_offset_ppm,
            "line_width_hz": case.faults.line_width_hz,
            "gauss_fwhm_hz": case.faults.gauss_fwhm_hz,
            "shoulder_fraction": case.faults.shoulder_fraction,
            "baseline_amplitude": case.faults.baseline_amplitude,
            "impurity": case.faults.impurity,
            "unknown": case.faults.unknown,
        },
        "error": None,
    }
    start = time.perf_counter()
    try:
        spectrum = perturbed(render_case(case), case.id, perturb)
        if case.kind == "mixture":
            record["by_hand"] = integrate_by_hand(spectrum, case)[0]
        candidates, _ = build_candidates(candidates=[s for s, _ in case.candidates])
        missing = [c for c in candidates if c.smiles not in systems_cache]
        if missing:
            systems_cache.update(zip([c.smiles for c in missing], predict_systems(missing), strict=True))
        systems = [systems_cache[c.smiles] for c in candidates]
        result = analyze_spectrum(spectrum, candidates, systems=systems)
        out = result.to_json()
    except Exception as exc:  # noqa: BLE001 -- every failure is counted, the run goes on
        record["error"] = f"{type(exc).__name__}: {exc}"
        record["traceback"] = traceback.format_exc(limit=6)
        record["time_s"] = time.perf_counter() - start
        return record
    record["time_s"] = time.perf_counter() - start
    key_of = {_canonical(s): k for s, k in case.candidates}
    truth = dict(case.truth)
    comps = []
    for comp in out["components"]:
        key = key_of.get(comp["smiles"])
        comps.append(
            {
                "smiles": comp["smiles"],
                "key": key,
                "truth": truth.get(key, 0.0) if key else 0.0,
                "detected": bool(comp["detected"]),
                "mole_fraction": comp["mole_fraction"],
                "mole_fraction_sd": comp["mole_fraction_sd"],
                "upper_limit": comp["upper_limit"],
                # per multiplet: where it was fitted against its prediction, for diagnosis
                "sites": [
                    {k: e.get(k) for k in ("label", "n_h", "ppm", "predicted_ppm", "predicted_sd_ppm",
                                           "seen", "missing", "amount", "amount_sd", "integral_amount",
                                           "integral_amount_sd", "shape_match", "overlap")}
                    for e in comp["evidence"] if "ppm" in e
                ],
            }
        )
    record["components"] = comps
    major = out["verdict"]["major"]
    record["major"] = major
    record["major_key"] = key_of.get(major) if major else None
    record["confidence"] = out["verdict"]["confidence"]
    record["quality"] = {k: v for k, v in out.get("quality", {}).items() if isinstance(v, (int, float))}
    return record


# ---------------------------------------------------------------------------------------------
# Summary
# ---------------------------------------------------------------------------------------------


def _ours(comp) -> float:
    """Our amount of a component for the error: undetected or null counts as 0."""
    x = comp["mole_fraction"]
    return float(x) if (comp["detected"] and x is not None) else 0.0


def _pct(values, q) -> str:
    return f"{np.percentile(values, q):5.2f}" if len(values) else "   - "


def _error_rows(records) -> list[str]:
    rows = [f"{'mixtures':<14}{'n comp':>7}{'ours med':>10}{'ours p95':>10}{'hand med':>10}{'hand p95':>10}"]
    groups = [(name, [r for r in records if test(r["field_mhz"])]) for name, test in _BANDS]
    fields = sorted({r["field_mhz"] for r in records})
    groups += [(f"  {f:g} MHz", [r for r in records if r["field_mhz"] == f]) for f in fields]
    for name, recs in groups:
        ours, hand = [], []
        for r in recs:
            for c in r["components"]:
                if c["truth"] > 0:
                    ours.append(100 * abs(_ours(c) - c["truth"]))
                    hand.append(100 * abs(r["by_hand"].get(c["key"], 0.0) - c["truth"]))
        cells = [_pct(ours, 50), _pct(ours, 95), _pct(hand, 50), _pct(hand, 95)]
        rows.append(f"{name:<14}{len(ours):>7}" + "".join(f"{c:>10}" for c in cells))
    return rows


def _detection_rows(records) -> list[str]:
    rows = []
    for name, test in _BANDS:
        minors = [
            (c, r["snr"])
            for r in records
            if test(r["field_mhz"])
            for c in r["components"]
            if 0 < c["truth"] <= 0.2
        ]
        if not minors:
            continue
        head = (
            f"{'minor ' + name:<22}"
            + "".join(f"{f'SNR {a}-{b:.0f}':>14}" for a, b in _SNR_BINS)
            + f"{'all':>10}"
        )
        rows.append(head)
        for lo, hi in _AMOUNT_BINS:
            cells = []
            for s_lo, s_hi in (*_SNR_BINS, (0, 1e9)):
                sel = [c["detected"] for c, snr in minors if lo <= c["truth"] < hi and s_lo <= snr < s_hi]
                cells.append(f"{sum(sel)}/{len(sel)}" if sel else "-")
            label = f"  {100 * lo:g}-{100 * min(hi, 0.2):g} %"
            rows.append(f"{label:<22}" + "".join(f"{c:>14}" for c in cells[:-1]) + f"{cells[-1]:>10}")
    return rows


def _coverage(records) -> tuple[int, int, int, int]:
    inside = n_det = below = n_und = 0
    for r in records:
        for c in r["components"]:
            if c["detected"] and c["mole_fraction"] is not None and c["mole_fraction_sd"] is not None:
                n_det += 1
                inside += abs(c["mole_fraction"] - c["truth"]) <= 2 * c["mole_fraction_sd"]
            elif not c["detected"] and c["truth"] > 0 and c["upper_limit"] is not None:
                n_und += 1
                below += c["truth"] <= c["upper_limit"]
    return inside, n_det, below, n_und


def _family_rows(records) -> list[str]:
    """Per family: error over present components (ours, by hand) and absent candidates claimed."""
    rows = [f"{'per family':<18}{'n comp':>7}{'ours med':>10}{'ours max':>10}{'hand med':>10}{'claimed':>9}"]
    for fam in sorted({r["family"] for r in records}):
        recs = [r for r in records if r["family"] == fam]
        ours = [100 * abs(_ours(c) - c["truth"]) for r in recs for c in r["components"] if c["truth"] > 0]
        hand = [
            100 * abs(r["by_hand"].get(c["key"], 0.0) - c["truth"])
            for r in recs
            for c in r["components"]
            if c["truth"] > 0
        ]
        absent = [c["detected"] for r in recs for c in r["components"] if c["truth"] == 0]
        rows.append(
            f"{fam:<18}{len(ours):>7}{_pct(ours, 50):>10}{_pct(ours, 100):>10}{_pct(hand, 50):>10}"
            f"{f'{sum(absent)}/{len(absent)}':>9}"
        )
    return rows


def _claim_rows(records) -> list[str]:
    """Controls and identity cases that went wrong: what was claimed, how sure."""
    rows = []
    for r in records:
        truth = dict(r["truth"])
        wrong = [c for c in r["components"] if c["detected"] and c["truth"] == 0]
        if r["kind"] == "control" and wrong:
            what = ", ".join(f"{c['key'] or c['smiles']} {100 * _ours(c):.0f} %" for c in wrong)
            rows.append(
                f"  {r['id']} ({r['field_mhz']:g} MHz, SNR {r['snr']:.0f}): {what}; {r['confidence']}"
            )
        if r["kind"] == "identity" and r["major"] is not None and r["major_key"] not in truth:
            rows.append(
                f"  {r['id']} ({r['field_mhz']:g} MHz, SNR {r['snr']:.0f}): decoy {r['major']} named major; "
                f"{r['confidence']}"
            )
    return (
        ["", "wrong claims (controls: detected candidates; identity: decoy named major):", *rows]
        if rows
        else []
    )


def summarise(records, *, half: str) -> str:
    """The printed report of one run."""
    ok = [r for r in records if r["error"] is None]
    mix = [r for r in ok if r["kind"] == "mixture"]
    ident = [r for r in ok if r["kind"] == "identity"]
    ctl = [r for r in ok if r["kind"] == "control"]
    out = [
        f"corpus half: {half}; cases run: {len(records)} ({len(mix)} mixtures, {len(ident)} identity, "
        f"{len(ctl)} controls ok; {len(records) - len(ok)} errors)"
    ]
    if mix:
        out += ["", *_error_rows(mix), "", *_family_rows(mix), "", *_detection_rows(mix)]
        absent = [(r["id"], c) for r in mix for c in r["components"] if c["truth"] == 0]
        claimed = [(i, c) for i, c in absent if c["detected"]]
        out.append(f"\nabsent candidates claimed in mixtures: {len(claimed)}/{len(absent)}")
        for band, test in _BANDS:
            a = [c for r in mix if test(r["field_mhz"]) for c in r["components"] if c["truth"] == 0]
            out.append(f"  {band}: {sum(c['detected'] for c in a)}/{len(a)}")
    if ctl:
        false = [r for r in ctl if any(c["detected"] and _ours(c) > _FALSE_CLAIM for c in r["components"])]
        anyd = [r for r in ctl if any(c["detected"] for c in r["components"])]
        high = [r for r in false if r["confidence"] == "high"]
        out.append(
            f"\nwrong-sample controls: false claims (a candidate detected > 5 %) {len(false)}/{len(ctl)}; "
            f"any candidate detected {len(anyd)}/{len(ctl)}; false claims with confidence high {len(high)}"
        )
    inside, n_det, below, n_und = _coverage(ok)
    if n_det or n_und:
        out.append(
            f"\n+-2 sd coverage of detected components: {inside}/{n_det}"
            + (f" = {100 * inside / n_det:.1f} %" if n_det else "")
            + f"; undetected present components with truth <= upper_limit: {below}/{n_und}"
        )
    if ident:
        true = sum(r["major_key"] in dict(r["truth"]) for r in ident if r["major_key"])
        decoy = sum(r["major"] is not None and r["major_key"] not in dict(r["truth"]) for r in ident)
        undecided = sum(r["major"] is None for r in ident)
        out.append(
            f"\nidentity sets: true compound named major {true}/{len(ident)}, a decoy named major "
            f"{decoy}/{len(ident)}, undecided {undecided}/{len(ident)}"
        )
        for band, test in _BANDS:
            sub = [r for r in ident if test(r["field_mhz"])]
            t = sum(r["major_key"] in dict(r["truth"]) for r in sub if r["major_key"])
            out.append(f"  {band}: true {t}/{len(sub)}")
    out += _claim_rows(ok)
    times = [r["time_s"] for r in records]
    if times:
        out.append(
            f"\nrun time per case: median {np.median(times):.1f} s, 95th percentile "
            f"{np.percentile(times, 95):.1f} s, max {max(times):.1f} s"
        )
    errors = [r for r in records if r["error"] is not None]
    out.append(f"errors: {len(errors)}")
    for r in errors[:10]:
        out.append(f"  {r['id']}: {r['error'][:160]}")
    return "\n".join(out)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m benchmarks.quantification", description=__doc__.split("\n")[0]
    )
    parser.add_argument("--half", choices=("tune", "held-out"), default="held-out")
    parser.add_argument("--limit", type=int, default=None, help="first N cases of each kind")
    parser.add_argument("--kinds", default=",".join(KINDS), help="comma-separated: mixture,identity,control")
    parser.add_argument("--ids", default=None, help="only these case ids: ID,ID,... or @FILE (one per line)")
    parser.add_argument("--matching", action="append", default=[], metavar="SMARTS",
                        help="only cases with a candidate matching this SMARTS (repeatable: any of them)")
    parser.add_argument("--seed", type=int, default=None,
                        help="master seed of the cases (default: the corpus's own); another seed draws a "
                             "fresh sample of mixtures and conditions from the same compounds and split")
    parser.add_argument("--perturb", type=float, default=0.0, metavar="REL",
                        help="multiply every spectrum by 1 + REL*u (u uniform in [-1, 1], fixed per case): "
                             "run against the unperturbed run, the noise floor of a paired comparison")
    parser.add_argument("--json", dest="json_path", default=None, help="write per-case results here")
    parser.add_argument(
        "--from-json", dest="from_json", default=None, help="print the report of an earlier run"
    )
    args = parser.parse_args(argv)
    if args.from_json:
        with open(args.from_json, encoding="utf-8") as fh:
            saved = json.load(fh)
        print(summarise(saved["records"], half=saved["half"]))
        return 0
    kinds = [k.strip() for k in args.kinds.split(",") if k.strip()]
    if not (np.isfinite(args.perturb) and 0.0 <= args.perturb <= 1e-3):
        print(f"error: --perturb: must be between 0 and 1e-3 (a rounding-level change), got {args.perturb}",
              file=sys.stderr)
        return 2
    try:
        ids = _read_ids(args.ids)
        seed = MASTER_SEED if args.seed is None else args.seed
        drawn = generate_cases(master_seed=seed)
        cases = select_cases(drawn, half=args.half, kinds=kinds, limit=args.limit, ids=ids,
                             matching=args.matching)
    except ValueError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    cache: dict = {}
    records = []
    for i, case in enumerate(cases, 1):
        rec = run_case(case, cache, args.perturb)
        records.append(rec)
        note = rec["error"] or f"major {rec['major_key'] or rec['major']} ({rec['confidence']})"
        print(
            f"[{i}/{len(cases)}] {case.id} {case.field_mhz:g} MHz SNR {case.snr:.0f}: "
            f"{rec['time_s']:.1f} s; {note}",
            file=sys.stderr,
            flush=True,
        )
        if args.json_path:
            _write_json(args.json_path, args.half, records, None, seed, args.perturb)
    report = summarise(records, half=args.half)
    print(report)
    if args.json_path:
        _write_json(args.json_path, args.half, records, report, seed, args.perturb)
    return 0


def _read_ids(spec: str | None):
    """Case ids from ``ID,ID`` or ``@FILE`` (one per line, blank lines and ``#`` comments ignored)."""
    if spec is None:
        return None
    if spec.startswith("@"):
        try:
            with open(spec[1:], encoding="utf-8") as fh:
                lines = [line.split("#", 1)[0].strip() for line in fh]
        except OSError as exc:
            raise ValueError(f"--ids: cannot read {spec[1:]}: {exc.strerror}") from None
        return [x for x in lines if x]
    return [x.strip() for x in spec.split(",") if x.strip()]


def _write_json(path, half: str, records, report, seed: int = MASTER_SEED, perturb: float = 0.0) -> None:
    from confirm._files import write_text_atomic

    text = json.dumps({"half": half, "seed": seed, "perturb": perturb, "records": records, "report": report},
                      indent=1, default=str)
    write_text_atomic(path, text)


if __name__ == "__main__":
    sys.exit(main())
