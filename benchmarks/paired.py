"""Paired comparison of two runs of :mod:`benchmarks.quantification` on the same cases.

The corpus cases are deterministic (a case's spectrum depends only on its seed), so two runs of
the same cases differ only by the code: a paired comparison shows what a change did, case by
case, without the spread between cases that the per-run figures carry. For each run it prints

- mixtures: the summed absolute error (mole-% points, an undetected component counted as 0 %)
  over all components present, and the absent candidates claimed (detected);
- identity sets: the true compound named major;
- wrong-sample controls: cases with a candidate detected above 5 % (false claims);

then how much of each difference the spread between cases could make by chance: for the summed
error a 95 % bootstrap interval of the change (cases resampled, a fixed seed), for the counts the
cases that went each way and the two-sided sign-test probability of so lopsided a split (McNemar's
exact test) when the change did nothing; then the cases whose detected set changed or whose summed
error moved by more than 0.5 point, each with both results. A change to the predictions moves
tens of cases both ways (the fit is not a smooth function of them), so one case more or less is
no evidence either way.

    python -m benchmarks.paired BASE.json ARM.json [--fill]

Both files are ``--json`` outputs of ``python -m benchmarks.quantification`` (of one half).
``--fill`` takes the base's record for every case the arm did not run: use it only when the
change cannot touch those cases (``--matching`` selected the ones it can), and say so. Without
it, only the cases in both runs are compared.
"""

from __future__ import annotations

import argparse
import json
import sys
from dataclasses import dataclass

from benchmarks.quantification import _FALSE_CLAIM, _ours

__all__ = ["PairedFigures", "PairedChange", "FIGURE_LABELS", "load_records", "different_samples", "figures",
           "paired_change", "changed_cases", "main"]

#: A case counts as changed when its summed error moves by more than this (points).
_MOVED = 0.5


@dataclass(frozen=True)
class PairedFigures:
    """The figures of one run over the compared cases."""

    n_mixtures: int
    mixture_error: float  # summed |error| over all components present (points)
    absent_claimed: int
    n_identity: int
    identity_true: int
    n_controls: int
    controls_claimed: int


#: The paired figures as the reports label them.
FIGURE_LABELS = {
    "mixture_error": "mixtures: summed |error| (points)",
    "absent_claimed": "mixtures: absent candidates claimed",
    "identity_true": "identity: true compound named major",
    "controls_claimed": "controls: a candidate claimed > 5 %",
}


def load_records(path: str) -> dict:
    """``case id -> record`` of a saved run (ValueError when it is not one). The run's sample
    (``seed``; absent in files written before it was recorded: the corpus's own) is kept in each
    record's ``_seed``."""
    try:
        with open(path, encoding="utf-8") as fh:
            saved = json.load(fh)
    except OSError as exc:
        raise ValueError(f"cannot read {path}: {exc.strerror}") from None
    except json.JSONDecodeError as exc:
        raise ValueError(f"{path} is not JSON: {exc.msg} (line {exc.lineno})") from None
    records = saved.get("records") if isinstance(saved, dict) else None
    if not isinstance(records, list) or not all(isinstance(r, dict) and "id" in r for r in records):
        raise ValueError(f"{path} is not a benchmarks.quantification --json file")
    from benchmarks.corpus.cases import MASTER_SEED

    seed = saved.get("seed", MASTER_SEED)
    return {r["id"]: {**r, "_seed": seed} for r in records}


def different_samples(*runs) -> str | None:
    """Why runs (dicts of records from :func:`load_records`) cannot be compared case by case: they
    drew different samples of cases; None when they drew the same."""
    seeds = {r["_seed"] for run in runs for r in run.values()}
    return f"the runs drew different samples of cases (seeds {sorted(seeds)})" if len(seeds) > 1 else None


def _case_error(record) -> float:
    return sum(abs(_ours(c) - c["truth"]) * 100.0 for c in record["components"] if c["truth"] > 0)


def _detected(record) -> tuple:
    return tuple(sorted(c["key"] or c["smiles"] for c in record["components"] if c["detected"]))


def _claimed(record) -> int:
    """Absent candidates (truth 0) the case detected."""
    return sum(1 for c in record["components"] if c["detected"] and c["truth"] == 0)


def _control_claimed(record) -> bool:
    """A candidate detected above the report's false-claim line."""
    return any(c["detected"] and _ours(c) > _FALSE_CLAIM for c in record["components"])


def _named_right(record) -> bool:
    """The true compound named major."""
    return record.get("major_key") in record["truth"]


def figures(records) -> PairedFigures:
    """The paired figures of ``records`` (an iterable of case records; failed cases left out)."""
    ok = [r for r in records if not r.get("error")]
    mix = [r for r in ok if r["kind"] == "mixture"]
    ident = [r for r in ok if r["kind"] == "identity"]
    ctl = [r for r in ok if r["kind"] == "control"]
    return PairedFigures(
        n_mixtures=len(mix),
        mixture_error=float(sum(_case_error(r) for r in mix)),
        absent_claimed=sum(_claimed(r) for r in mix),
        n_identity=len(ident),
        identity_true=sum(_named_right(r) for r in ident),
        n_controls=len(ctl),
        controls_claimed=sum(_control_claimed(r) for r in ctl),
    )


def changed_cases(base: dict, arm: dict) -> list:
    """Ids (in the base's order) whose detected set changed or whose summed error moved."""
    out = []
    for key, rb in base.items():
        ra = arm.get(key)
        if ra is None or rb.get("error") or ra.get("error"):
            continue
        if _detected(rb) != _detected(ra) or abs(_case_error(rb) - _case_error(ra)) > _MOVED:
            out.append(key)
    return out


#: Bootstrap resamples of the summed-error change, and their seed (the report repeats exactly).
_RESAMPLES, _SEED = 4000, 20261204


@dataclass(frozen=True)
class PairedChange:
    """How the arm differs from the base, case by case."""

    error_change: float  # summed |error| over mixtures, arm - base (points)
    error_interval: tuple  # 95 % bootstrap interval of that change
    mixtures_better: int  # mixtures whose summed error fell by more than 0.5 point
    mixtures_worse: int
    claims: tuple  # (cases with fewer absent candidates claimed, with more, sign-test p)
    identity: tuple  # (identity sets the arm gets right and the base wrong, the reverse, p)
    controls: tuple  # (controls the arm clears and the base claims in, the reverse, p)


def _sign_test(better: int, worse: int) -> float:
    from scipy.stats import binomtest

    n = better + worse
    return 1.0 if n == 0 else float(binomtest(better, n, 0.5).pvalue)




def paired_change(base: dict, arm: dict) -> PairedChange:
    """The case-by-case change from ``base`` to ``arm`` (dicts of records by case id, same keys)."""
    import numpy as np

    pairs = [(base[k], arm[k]) for k in base
             if k in arm and not base[k].get("error") and not arm[k].get("error")]
    mix = [(b, a) for b, a in pairs if b["kind"] == "mixture"]
    d = np.array([_case_error(a) - _case_error(b) for b, a in mix])
    if d.size:
        rng = np.random.default_rng(_SEED)
        sums = d[rng.integers(0, d.size, size=(_RESAMPLES, d.size))].sum(axis=1)
        interval = (float(np.percentile(sums, 2.5)), float(np.percentile(sums, 97.5)))
    else:
        interval = (0.0, 0.0)
    fewer = sum(1 for b, a in mix if _claimed(a) < _claimed(b))
    more = sum(1 for b, a in mix if _claimed(a) > _claimed(b))
    ident = [(_named_right(b), _named_right(a)) for b, a in pairs if b["kind"] == "identity"]
    gained = sum(1 for rb, ra in ident if ra and not rb)
    lost = sum(1 for rb, ra in ident if rb and not ra)
    ctl = [(_control_claimed(b), _control_claimed(a)) for b, a in pairs if b["kind"] == "control"]
    cleared = sum(1 for cb, ca in ctl if cb and not ca)
    claimed = sum(1 for cb, ca in ctl if ca and not cb)
    return PairedChange(
        error_change=float(d.sum()), error_interval=interval,
        mixtures_better=int(np.sum(d < -_MOVED)), mixtures_worse=int(np.sum(d > _MOVED)),
        claims=(fewer, more, _sign_test(fewer, more)),
        identity=(gained, lost, _sign_test(gained, lost)),
        controls=(cleared, claimed, _sign_test(cleared, claimed)),
    )


def _line(record) -> str:
    parts = []
    for c in record["components"]:
        name = (c["key"] or c["smiles"])[:22]
        found = f"{c['mole_fraction'] * 100:.0f}" if c["detected"] and c["mole_fraction"] is not None else "-"
        parts.append(f"{name} {c['truth'] * 100:.0f}/{found}")
    return "; ".join(parts)


def report(base: dict, arm: dict) -> str:
    """The paired report of two runs over the same cases."""
    fb, fa = figures(base.values()), figures(arm.values())
    rows = [
        f"cases compared: {len(base)} ({fb.n_mixtures} mixtures, {fb.n_identity} identity, "
        f"{fb.n_controls} controls)",
        f"{'':38s}{'base':>10s}{'arm':>10s}",
        f"{FIGURE_LABELS['mixture_error']:38s}{fb.mixture_error:10.1f}{fa.mixture_error:10.1f}",
        f"{FIGURE_LABELS['absent_claimed']:38s}{fb.absent_claimed:10d}{fa.absent_claimed:10d}",
        f"{FIGURE_LABELS['identity_true']:38s}{fb.identity_true:10d}{fa.identity_true:10d}",
        f"{FIGURE_LABELS['controls_claimed']:38s}{fb.controls_claimed:10d}{fa.controls_claimed:10d}",
    ]
    ch = paired_change(base, arm)
    lo, hi = ch.error_interval
    rows += [
        f"summed error change {ch.error_change:+.1f} points (95 % bootstrap interval {lo:+.1f} to "
        f"{hi:+.1f}); mixtures better / worse by > {_MOVED} point: {ch.mixtures_better} / "
        f"{ch.mixtures_worse}",
        f"mixtures with fewer / more absent candidates claimed: {ch.claims[0]} / {ch.claims[1]} "
        f"(sign test p = {ch.claims[2]:.2g})",
        f"identity sets gained / lost: {ch.identity[0]} / {ch.identity[1]} (p = {ch.identity[2]:.2g}); "
        f"controls cleared / newly claimed: {ch.controls[0]} / {ch.controls[1]} (p = {ch.controls[2]:.2g})",
    ]
    changed = changed_cases(base, arm)
    rows.append(f"changed cases: {len(changed)} (truth/found, mole-%)")
    for key in changed:
        rb, ra = base[key], arm[key]
        moved = f"error {_case_error(rb):.1f} -> {_case_error(ra):.1f}"
        rows.append(f"  {key} ({rb['field_mhz']:g} MHz): {moved}")
        rows.append(f"    base: {_line(rb)}")
        rows.append(f"    arm:  {_line(ra)}")
    return "\n".join(rows)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.paired", description=__doc__.split("\n")[0])
    parser.add_argument("base", help="--json file of the base run")
    parser.add_argument("arm", help="--json file of the run with the change")
    parser.add_argument("--fill", action="store_true",
                        help="take the base's record for cases the arm did not run")
    args = parser.parse_args(argv)
    try:
        base, arm = load_records(args.base), load_records(args.arm)
    except ValueError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    mismatch = different_samples(base, arm)
    if mismatch:
        print(f"error: {mismatch}: nothing to pair", file=sys.stderr)
        return 2
    extra = sorted(set(arm) - set(base))
    if extra:
        print(f"error: the arm ran cases the base did not: {', '.join(extra[:5])}", file=sys.stderr)
        return 2
    if args.fill:
        arm = {key: arm.get(key, record) for key, record in base.items()}
    else:
        base = {key: record for key, record in base.items() if key in arm}
    if not base:
        print("error: no case in both runs", file=sys.stderr)
        return 2
    print(report(base, arm))
    return 0


if __name__ == "__main__":
    sys.exit(main())
