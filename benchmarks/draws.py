"""Judge a change to the fit against several rounding draws of the unchanged code.

On today's fit a 1e-9 change of the data moves many corpus cases (a different rounding of the same
method is a different draw), so one run of the unchanged code is no baseline: the figures of a
change are compared with the spread of several draws of the base on the same sample, each a
``python -m benchmarks.quantification --json`` run with ``--perturb 0``, ``1e-9``, ``2e-9``, ...
(DEVELOPERS.md, "judge a change against several draws").

For each draw and the arm it prints the paired figures (:func:`benchmarks.paired.figures`): summed
mixture error, absent candidates claimed, controls with a false claim, identity sets with the true
compound named major. Then, for each figure, the draws' mean and sd and the limit the arm must keep:
at most mean + 2 sd for the error and the claims, at least mean - 2 sd for the identity count (the
sd of a count floored at 1, its granularity: five draws that agree do not make one more claim
significant), and whether the arm keeps it. How far the draws differ from each other (cases whose
detected set, major product or an amount by more than 0.1 point changed) is printed as the base's
own noise; with ``--arm-perturbed`` the same count between the arm and its own perturbed run shows
whether the arm's answer is a function of the data.

    python -m benchmarks.draws --base M0.json M1.json M2.json ... --arm ARM.json
                               [--arm-perturbed ARM_P.json]

The limits are a rule for landing only when written down before the runs (DEVELOPERS.md).
"""

from __future__ import annotations

import argparse
import itertools
import sys
from dataclasses import dataclass

import numpy as np

from benchmarks.paired import FIGURE_LABELS, _detected, different_samples, figures, load_records
from benchmarks.quantification import _ours

__all__ = ["Limit", "limits", "reproducibility_changes", "main"]

#: A case's answer counts as changed when an amount moves by more than this (mole-% points), the
#: target of issue 13's deliver 2.
AMOUNT_TOLERANCE_POINTS = 0.1
#: Figures judged, whether lower is better, and whether they are counts (sd floored at 1).
_FIGURES = (
    ("mixture_error", True, False),
    ("absent_claimed", True, True),
    ("controls_claimed", True, True),
    ("identity_true", False, True),
)


@dataclass(frozen=True)
class Limit:
    """What the draws allow a change on one figure."""

    name: str
    mean: float
    sd: float
    bound: float
    lower_is_better: bool

    def keeps(self, value: float) -> bool:
        return value <= self.bound if self.lower_is_better else value >= self.bound


def limits(draws) -> list[Limit]:
    """The limit of each figure from the draws' figures (two or more ``PairedFigures``)."""
    if len(draws) < 2:
        raise ValueError("at least two draws of the base are needed for a spread")
    out = []
    for name, lower, count in _FIGURES:
        values = np.array([getattr(f, name) for f in draws], dtype=float)
        mean, sd = float(values.mean()), float(values.std(ddof=1))
        spread = max(sd, 1.0) if count else sd
        out.append(Limit(name, mean, sd, mean + 2 * spread if lower else mean - 2 * spread, lower))
    return out


def _answer(record) -> tuple:
    amounts = {c["key"] or c["smiles"]: 100.0 * _ours(c) for c in record["components"]}
    return _detected(record), record.get("major"), amounts


def reproducibility_changes(a: dict, b: dict) -> list[tuple[str, bool, bool, float]]:
    """Cases (in ``a``'s order, both runs without error) whose answer differs between two runs of the
    same cases: (id, detected set changed, major changed, largest amount change in points), for
    those with a changed set or major or an amount moved by more than
    :data:`AMOUNT_TOLERANCE_POINTS`."""
    out = []
    for key, ra in a.items():
        rb = b.get(key)
        if rb is None or ra.get("error") or rb.get("error"):
            continue
        (set_a, major_a, am_a), (set_b, major_b, am_b) = _answer(ra), _answer(rb)
        move = max((abs(am_a[k] - am_b[k]) for k in am_a if k in am_b), default=0.0)
        if set_a != set_b or major_a != major_b or move > AMOUNT_TOLERANCE_POINTS:
            out.append((key, set_a != set_b, major_a != major_b, move))
    return out


def _changes_line(label: str, changes) -> str:
    largest = max((c[3] for c in changes), default=0.0)
    return (f"{label}: {len(changes)} cases changed ({sum(c[1] for c in changes)} detected sets, "
            f"{sum(c[2] for c in changes)} majors, largest amount change {largest:.2f} points)")


def report(draws: dict, arm: dict | None, arm_perturbed: dict | None) -> str:
    """The report of the draws (name -> records by id), the arm and its perturbed run."""
    names = list(draws)
    shown = dict(draws)
    if arm is not None:
        shown["arm"] = arm
    if arm_perturbed is not None:
        shown["arm perturbed"] = arm_perturbed
    figs = {name: figures(recs.values()) for name, recs in shown.items()}
    width = max(len(n) for n in shown) + 2
    rows = [f"{'run':<{width}}{'error':>10}{'absent':>8}{'controls':>10}{'identity':>10}"]
    for name, f in figs.items():
        rows.append(f"{name:<{width}}{f.mixture_error:10.1f}{f.absent_claimed:8d}"
                    f"{f'{f.controls_claimed}/{f.n_controls}':>10}{f'{f.identity_true}/{f.n_identity}':>10}")
    rows.append("")
    for lim in limits([figs[n] for n in names]):
        op = "<=" if lim.lower_is_better else ">="
        line = (f"{FIGURE_LABELS[lim.name]:38s} draws {lim.mean:8.2f} +- {lim.sd:6.2f}; "
                f"limit {op} {lim.bound:8.2f}")
        if arm is not None:
            value = getattr(figs["arm"], lim.name)
            line += f"; arm {value:g}: {'kept' if lim.keeps(value) else 'NOT kept'}"
        rows.append(line)
    rows.append("")
    for x, y in itertools.combinations(names, 2):
        rows.append(_changes_line(f"{x} / {y}", reproducibility_changes(draws[x], draws[y])))
    if arm is not None and arm_perturbed is not None:
        rows.append(_changes_line("arm / arm perturbed", reproducibility_changes(arm, arm_perturbed)))
    return "\n".join(rows)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.draws", description=__doc__.split("\n")[0])
    parser.add_argument("--base", nargs="+", required=True, metavar="JSON",
                        help="runs of the unchanged code on one sample (--perturb 0, 1e-9, 2e-9, ...)")
    parser.add_argument("--arm", default=None, metavar="JSON", help="run of the changed code")
    parser.add_argument("--arm-perturbed", default=None, metavar="JSON",
                        help="run of the changed code with --perturb (its own reproducibility)")
    args = parser.parse_args(argv)
    try:
        draws = {f"draw {i}": load_records(p) for i, p in enumerate(args.base)}
        arm = load_records(args.arm) if args.arm else None
        arm_p = load_records(args.arm_perturbed) if args.arm_perturbed else None
        runs = list(draws.values()) + [r for r in (arm, arm_p) if r is not None]
        mismatch = different_samples(*runs)
        if mismatch:
            raise ValueError(mismatch)
        ids = set(next(iter(draws.values())))
        if any(set(recs) != ids for recs in runs):
            raise ValueError("the runs did not run the same cases")
        text = report(draws, arm, arm_p)  # ValueError with fewer than two draws (limits)
    except ValueError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    print(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
