"""Time budgets: the deadline object, progress lines, the watchdog and the analysis stages."""

from __future__ import annotations

import io
import pickle
import time

import pytest

import confirm.analysis as analysis
from confirm.budget import Budget, BudgetExceeded, ProgressLines, check_budget, watch_budget
from confirm.commands.demo import sample_files
from predictors.errors import ConfirmError, InputError

ANETHOLES = ["C/C=C/c1ccc(OC)cc1", "C/C=C\\c1ccc(OC)cc1"]


def _spent(seconds: float = 1.0, **kwargs) -> Budget:
    """A budget of ``seconds`` that started twice that long ago."""
    return Budget(max_seconds=seconds, start_s=time.monotonic() - 2 * seconds, **kwargs)


@pytest.mark.parametrize("bad", [0, -1, float("nan"), float("inf"), 1e9, True, "60"])
def test_budget_rejects_impossible_limits(bad):
    with pytest.raises(InputError, match="--max-seconds"):
        Budget(max_seconds=bad)


def test_check_passes_in_time_and_stops_after():
    budget = Budget(max_seconds=60)
    budget.check("fit")
    assert 59 < budget.remaining_s() <= 60
    with pytest.raises(BudgetExceeded) as caught:
        _spent().check("fit")
    message = str(caught.value)
    assert isinstance(caught.value, ConfirmError)
    assert "fit stage" in message and "--max-seconds" in message and "fewer candidates" in message
    assert "\n" not in message
    check_budget(None, "fit")  # no budget: nothing to check


def test_the_error_survives_a_trip_through_a_worker_process():
    error = BudgetExceeded("fit: refinement", elapsed_s=61.0, max_seconds=60.0)
    again = pickle.loads(pickle.dumps(error))
    assert str(again) == str(error) and again.stage == "fit: refinement"


def test_progress_lines_start_after_five_seconds_and_are_rate_limited():
    stream = io.StringIO()
    lines = ProgressLines(stream)
    lines("candidates", 0.5)
    lines("fit", 4.9)
    assert stream.getvalue() == "" and lines.stage == "fit"
    lines("fit", 5.1)
    lines("fit", 6.0)  # same stage, under 5 s later: quiet
    lines("verdict", 6.5)  # a new stage: a line
    lines("verdict", 11.6)
    assert stream.getvalue().splitlines() == ["confirm: 5 s, fit", "confirm: 6 s, verdict",
                                              "confirm: 12 s, verdict"]
    quiet = ProgressLines(io.StringIO(), enabled=False)
    quiet("fit", 30.0)
    assert quiet.stage == "fit" and quiet.stream.getvalue() == ""


def test_check_reports_progress():
    stream = io.StringIO()
    budget = Budget(max_seconds=100, start_s=time.monotonic() - 7, progress=ProgressLines(stream))
    budget.check("predictions")
    assert stream.getvalue() == "confirm: 7 s, predictions\n"


def test_the_watchdog_stops_a_stage_that_never_checks():
    stream = io.StringIO()
    budget = Budget(max_seconds=0.5, progress=ProgressLines(stream, after_s=0.0, every_s=0.1))
    start = time.monotonic()
    with pytest.raises(BudgetExceeded, match="busy stage"), watch_budget(budget, tick_s=0.05):
        budget.check("busy stage")
        while time.monotonic() - start < 10:  # a long computation that never checks
            sum(range(1000))
    assert time.monotonic() - start < 2.0
    assert "busy stage" in stream.getvalue()
    # the timer is off afterwards
    time.sleep(0.2)


def test_the_watchdog_leaves_a_block_that_finishes_in_time_alone():
    budget = Budget(max_seconds=5)
    with watch_budget(budget, tick_s=0.05):
        time.sleep(0.2)
    with watch_budget(None):
        pass


def test_analyze_path_checks_before_it_starts():
    with pytest.raises(BudgetExceeded, match="candidates stage"):
        analysis.analyze_path(sample_files()[1], candidates=ANETHOLES, budget=_spent())


def test_the_budget_reaches_the_fit_only_when_the_fit_takes_it(monkeypatch):
    import confirm.fitting

    seen = {}
    real = confirm.fitting.fit_mixture

    def with_budget(spectrum, systems, candidates, *, noise_sd=None, options=None, budget=None):
        seen["budget"] = budget
        return real(spectrum, systems, candidates, noise_sd=noise_sd, options=options)

    def without_budget(spectrum, systems, candidates, *, noise_sd=None, options=None):
        seen["called"] = True
        return real(spectrum, systems, candidates, noise_sd=noise_sd, options=options)

    budget = Budget(max_seconds=600)
    assert analysis._budget_keyword(with_budget, budget) == {"budget": budget}
    assert analysis._budget_keyword(without_budget, budget) == {}
    assert analysis._budget_keyword(with_budget, None) == {}
    monkeypatch.setattr(confirm.fitting, "fit_mixture", with_budget)
    result = analysis.analyze_path(sample_files()[1], candidates=ANETHOLES, budget=budget)
    assert seen["budget"] is budget and result.verdict is not None


def test_the_command_line_stops_at_the_budget(run_cli):
    result = run_cli("analyze", "--spectrum", sample_files()[1], "--candidates", *ANETHOLES,
                     "--max-seconds", "0.05")
    assert result.exit_code == 2
    assert result.stderr.startswith("error: time budget: stopped in the ")
    assert "--max-seconds" in result.stderr
    assert result.stderr.count("\n") == 1
    result = run_cli("analyze", "--spectrum", sample_files()[1], "--candidates", *ANETHOLES,
                     "--max-seconds", "0")
    assert result.exit_code == 2 and "--max-seconds" in result.stderr


@pytest.mark.parametrize("command", ["analyze", "qc", "batch", "demo"])
def test_every_analysing_command_has_the_option(run_cli, command):
    result = run_cli(command, "--help")
    assert result.exit_code == 0 and "--max-seconds" in result.stdout
