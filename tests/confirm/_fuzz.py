"""Shared settings and checks of the property-based (Hypothesis) tests of every reader and parser.

The profile is small and reproducible: ``FUZZ_EXAMPLES`` examples per test (25 by default; set
``CONFIRM_FUZZ_EXAMPLES=500`` for a deeper run), examples derived from the test's name
(``derandomize``) so every run tries the same inputs (``CONFIRM_FUZZ_RANDOM=1`` explores new
ones), no example database, and a 20 s deadline per example, which only a hang would reach. A
failure found by exploring becomes an explicit test case beside the property.
"""

from __future__ import annotations

import os
import tempfile
import tracemalloc
from datetime import timedelta
from pathlib import Path

from hypothesis import HealthCheck, settings

from tests.confirm.robustness_corpus import Case, Outcome, run_case


def _warm_up() -> None:
    """Run one sound input of each reader once, untraced: later runs measure the run, not imports."""
    from tests.confirm.robustness_corpus import acqus_folder, fid_points, jcamp_fid, jcamp_spectrum

    real, imag = fid_points(600)
    files = {"s.jdx": jcamp_spectrum(real), "f.jdx": jcamp_fid(real, imag), "p.csv": b"ppm,intensity\n1,2\n"}
    for name, data in files.items():
        with tempfile.TemporaryDirectory() as folder:
            run_case(Case("warm-up", name, ((name, data),), ("process", "{dir}/" + name)), Path(folder))
    with tempfile.TemporaryDirectory() as folder:
        run_case(Case("warm-up", "fid", tuple((f"exp/{n}", d) for n, d in acqus_folder(n_points=600)),
                      ("process", "{dir}/exp")), Path(folder))


_warm_up()

FUZZ_EXAMPLES = int(os.environ.get("CONFIRM_FUZZ_EXAMPLES", "25"))

#: The settings of every fuzz test.
FUZZ = settings(max_examples=FUZZ_EXAMPLES, deadline=timedelta(seconds=20), database=None,
                derandomize=os.environ.get("CONFIRM_FUZZ_RANDOM", "") != "1",
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.function_scoped_fixture])


def check_case(case: Case, *, allowed=(0, 2), memory_mb: float | None = None) -> Outcome:
    """Run ``case`` through the command line and assert the robustness contract.

    Exit code in ``allowed`` (never 3, never a hang), exit 2 with exactly one ``error:`` line, no
    file outside the case's output folder changed or created, and, with ``memory_mb``, a peak of
    Python-traced memory (NumPy arrays included) below that many MB.
    """
    with tempfile.TemporaryDirectory(prefix="confirm-fuzz-") as folder:
        if memory_mb is not None:
            tracemalloc.start()
        try:
            outcome = run_case(case, Path(folder), timeout_s=30.0)
            peak = tracemalloc.get_traced_memory()[1] if memory_mb is not None else 0
        finally:
            if memory_mb is not None:
                tracemalloc.stop()
    assert outcome.exit_code is not None, f"{case.name}: no exit within 30 s"
    assert outcome.exit_code in allowed, f"{case.name}: exit {outcome.exit_code}: {outcome.stderr[-800:]}"
    assert not outcome.data_loss, f"{case.name}: wrote outside --out: {outcome.data_loss}"
    if outcome.exit_code == 2:
        assert outcome.stderr.startswith("error: ") and outcome.stderr.count("\n") == 1, outcome.stderr
    if memory_mb is not None:
        assert peak < memory_mb * 2**20, f"{case.name}: peak memory {peak / 2**20:.0f} MB"
    return outcome
