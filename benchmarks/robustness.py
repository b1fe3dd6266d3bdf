"""Robustness: the generated input corpus through the command line, counting what went wrong.

Every case of ``tests.confirm.robustness_corpus.corpus`` (JCAMP-DX spectra and FIDs in every
compression form, raw FID folders with odd parameter files, peak lists, QC specifications, batch
manifests, SMILES; about a third of them damaged) is written into a fresh folder and run through
``confirm.cli.main`` in this process. Printed counts:

- inputs tried;
- exit 3 (an internal error: a bug), and exit codes other than 0, 1, 2 (130/141 do not belong here);
- hangs (no exit within ``--timeout`` seconds);
- data loss (a file outside the case's output folder changed, vanished or appeared);
- exit 2 with more than one line on stderr.

All but the first should be zero. Each exit 3 is run again with ``--debug`` and attributed to the
module of its innermost ``confirm`` frame (reading and processing of measured files are counted
apart from the rest). ``--show`` lists the failing cases with their first stderr line.

Run: ``python -m benchmarks.robustness [--per-kind 30] [--seed 14] [--timeout 60] [--show]``
"""

from __future__ import annotations

import argparse
import collections
import re
import resource
import tempfile
import time
from dataclasses import replace
from pathlib import Path

from tests.confirm.robustness_corpus import Case, corpus, run_case

#: Modules whose exit-3 failures are counted apart (reading and processing of measured files).
_READERS = ("reading", "processing", "peaks")


def _where(case: Case, timeout_s: float) -> str:
    """The module of the innermost ``confirm`` frame of the traceback of a case that exits 3."""
    with tempfile.TemporaryDirectory(prefix="confirm-robustness-") as folder:
        outcome = run_case(replace(case, argv=case.argv + ("--debug",)), Path(folder), timeout_s=timeout_s)
    frames = re.findall(r'File "[^"]*/confirm/([^"]+)\.py", line \d+', outcome.stderr)
    return frames[-1].replace("/", ".") if frames else "unknown"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--per-kind", type=int, default=30, help="cases per input kind (default 30)")
    parser.add_argument("--seed", type=int, default=14)
    parser.add_argument("--timeout", type=float, default=60.0, help="seconds before a case counts as hung")
    parser.add_argument("--show", action="store_true", help="list every failing case")
    args = parser.parse_args()
    cases = corpus(seed=args.seed, per_kind=args.per_kind)
    counts = collections.Counter()
    by_kind = collections.defaultdict(collections.Counter)
    failures = []
    start = time.perf_counter()
    for case in cases:
        with tempfile.TemporaryDirectory(prefix="confirm-robustness-") as folder:
            outcome = run_case(case, Path(folder), timeout_s=args.timeout)
        counts["tried"] += 1
        by_kind[case.kind][str(outcome.exit_code)] += 1
        problems = []
        if outcome.exit_code is None:
            problems.append("hang")
        elif outcome.exit_code == 3:
            where = _where(case, args.timeout)
            owner = "readers" if where.split(".")[0] in _READERS else "elsewhere"
            counts[f"exit 3 in {owner}"] += 1
            counts["exit 3"] += 1
            problems.append(f"exit 3 in confirm/{where}.py")
        elif outcome.exit_code not in (0, 1, 2):
            problems.append(f"exit {outcome.exit_code}")
        if outcome.data_loss:
            problems.append("data loss: " + ", ".join(outcome.data_loss))
        if outcome.exit_code == 2 and outcome.stderr.count("\n") > 1:
            problems.append("more than one line on stderr")
        for problem in problems:
            if not problem.startswith("exit 3"):
                counts[problem.split(":")[0]] += 1
        if problems:
            failures.append((case, outcome, problems))
    elapsed = time.perf_counter() - start
    print(f"inputs tried:          {counts['tried']}")
    print(f"exit 3:                {counts['exit 3']} (in reading/processing: {counts['exit 3 in readers']}, "
          f"elsewhere: {counts['exit 3 in elsewhere']})")
    others = sum(v for k, v in counts.items() if re.fullmatch(r"exit -?\d+", k) and k != "exit 3")
    print(f"other exit codes:      {others}")
    print(f"hangs:                 {counts['hang']}")
    print(f"data loss:             {counts['data loss']}")
    print(f"multi-line errors:     {counts['more than one line on stderr']}")
    print(f"time: {elapsed:.0f} s; peak memory of this process: "
          f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")
    shown = [f"{kind} " + ", ".join(f"{code}: {n}" for code, n in sorted(codes.items()))
             for kind, codes in by_kind.items()]
    print("exit codes by kind: " + "; ".join(shown))
    if args.show:
        for case, outcome, problems in failures:
            first = outcome.stderr.strip().splitlines()[:1]
            print(f"- {case.name}: {'; '.join(problems)} ({first[0] if first else 'no stderr'})")


if __name__ == "__main__":
    main()
