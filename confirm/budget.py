"""Time budgets: every analysis has a deadline, checked between its stages.

A :class:`Budget` is created when an analysis starts (``--max-seconds``, default 60 s) and
handed down the stages; each stage calls ``budget.check(stage)`` when it starts (and, inside
long stages, now and then). Past the deadline ``check`` raises :class:`BudgetExceeded`, a
:class:`ConfirmError`: the command line prints its one line (which stage ran out and what to
change) and exits 2. A :class:`ProgressLines` reporter attached to the budget prints the stage
names on stderr once an analysis has run for 5 s.

A check only runs where the code calls it, so a stage that never comes back to a check (one
long computation) would overrun. :func:`watch_budget` closes that gap on the command line: a
timer signal (POSIX, main thread only) prints a progress line every few seconds while a stage
runs and stops the stage at the deadline by raising :class:`BudgetExceeded` where the main
thread is, the way Ctrl-C raises ``KeyboardInterrupt``. The library never installs it by itself.
"""

from __future__ import annotations

import math
import signal
import sys
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field

from predictors.errors import ConfirmError, InputError

__all__ = [
    "DEFAULT_MAX_SECONDS",
    "PROGRESS_AFTER_S",
    "Budget",
    "BudgetExceeded",
    "ProgressLines",
    "check_budget",
    "watch_budget",
]

#: Time allowed for one analysis unless the user says otherwise (``--max-seconds``).
DEFAULT_MAX_SECONDS = 60.0
#: Progress lines start once an analysis has run this long.
PROGRESS_AFTER_S = 5.0
#: Longest budget accepted (a day): a larger number is almost certainly a typing error.
_MAX_ALLOWED_S = 86400.0
#: What to change when a stage runs out of time, by stage (the part before any ':').
_HINTS = {
    "candidates": "give the candidates yourself with --candidates, or a smaller substrate",
    "reading": "a smaller data set",
    "processing": "a smaller data set (fewer points)",
    "predictions": "fewer or smaller candidates",
    "fit": "fewer candidates (each one adds to the fit)",
    "verdict": "fewer candidates",
}


class BudgetExceeded(ConfirmError):  # noqa: N818 - the name says what happened
    """An analysis ran past its time budget (exit 2 on the command line)."""

    def __init__(self, stage: str, *, elapsed_s: float, max_seconds: float):
        self.stage, self.elapsed_s, self.max_seconds = stage, elapsed_s, max_seconds
        hint = _HINTS.get(stage.split(":")[0].strip(), "fewer candidates")
        super().__init__(
            f"time budget: stopped in the {stage} stage after {elapsed_s:.1f} s (limit {max_seconds:g} s); "
            f"try {hint}, or allow more time with --max-seconds"
        )

    def __reduce__(self):  # picklable, so it can come back from a worker process
        return (_rebuild_exceeded, (self.stage, self.elapsed_s, self.max_seconds))


def _rebuild_exceeded(stage: str, elapsed_s: float, max_seconds: float) -> BudgetExceeded:
    return BudgetExceeded(stage, elapsed_s=elapsed_s, max_seconds=max_seconds)


class ProgressLines:
    """Prints ``confirm: 12 s, fit`` lines on a stream once an analysis has run ``after_s``.

    A line is printed when the stage changes or ``every_s`` after the last one. It also keeps
    the name of the current stage (for the watchdog's message) when printing is off.

    Parameters
    ----------
    stream : text stream, optional
        Where the lines go (``sys.stderr`` at the time of printing when None).
    enabled : bool
        Print at all (the stage is recorded either way).
    after_s, every_s : float
        Quiet for the first ``after_s`` seconds; then a line per stage change or per ``every_s``.
    """

    def __init__(self, stream=None, *, enabled: bool = True, after_s: float = PROGRESS_AFTER_S,
                 every_s: float = 5.0):
        self.stream, self.enabled, self.after_s, self.every_s = stream, enabled, after_s, every_s
        self.stage: str | None = None
        self._printed_stage: str | None = None
        self._printed_at = -math.inf

    def __call__(self, stage: str, elapsed_s: float) -> None:
        """Record that ``stage`` is running at ``elapsed_s``; print a line when it is time to."""
        self.stage = stage
        if not self.enabled or elapsed_s < self.after_s:
            return
        if stage == self._printed_stage and elapsed_s - self._printed_at < self.every_s:
            return
        self._printed_stage, self._printed_at = stage, elapsed_s
        stream = self.stream if self.stream is not None else sys.stderr
        try:
            stream.write(f"confirm: {elapsed_s:.0f} s, {stage}\n")
            stream.flush()
        except (OSError, ValueError, RuntimeError):  # closed stream, or a write this one interrupted
            pass


@dataclass(frozen=True)
class Budget:
    """The time an analysis may take, from ``start_s`` (``time.monotonic()``) on.

    Parameters
    ----------
    max_seconds : float
        Seconds allowed, > 0.
    start_s : float
        When the budget started (``time.monotonic()``; the same clock in forked workers).
    progress : callable, optional
        ``progress(stage, elapsed_s)``, called by every :meth:`check` (e.g. :class:`ProgressLines`).
    """

    max_seconds: float = DEFAULT_MAX_SECONDS
    start_s: float = field(default_factory=time.monotonic)
    progress: object = field(default=None, compare=False, repr=False)

    def __post_init__(self) -> None:
        value = self.max_seconds
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                or not 0 < value <= _MAX_ALLOWED_S:
            raise InputError(f"--max-seconds: expected a number of seconds in (0, {_MAX_ALLOWED_S:g}], "
                             f"got {value!r}")
        object.__setattr__(self, "max_seconds", float(value))

    def elapsed_s(self) -> float:
        """Seconds since the budget started."""
        return time.monotonic() - self.start_s

    def remaining_s(self) -> float:
        """Seconds left (negative once the budget is spent)."""
        return self.max_seconds - self.elapsed_s()

    def check(self, stage: str) -> None:
        """Note that ``stage`` is running; raise :class:`BudgetExceeded` when the time is up.

        Parameters
        ----------
        stage : str
            Short name of the stage (``"candidates"``, ``"predictions"``, ``"processing"``,
            ``"fit"``, ``"verdict"``; ``"fit: refinement"`` for a part of one).
        """
        elapsed = self.elapsed_s()
        if self.progress is not None:
            self.progress(stage, elapsed)
        if elapsed > self.max_seconds:
            raise BudgetExceeded(stage, elapsed_s=elapsed, max_seconds=self.max_seconds)


def check_budget(budget: Budget | None, stage: str) -> None:
    """``budget.check(stage)``, or nothing when there is no budget."""
    if budget is not None:
        budget.check(stage)


@contextmanager
def watch_budget(budget: Budget | None, *, tick_s: float = 1.0) -> Iterator[None]:
    """Enforce ``budget`` on the code in the block even between its checks (command line only).

    A timer signal (``SIGALRM``) fires every ``tick_s``: it passes the current stage to the
    budget's progress reporter (a heartbeat line while a long stage runs) and, once the deadline
    has passed, raises :class:`BudgetExceeded` in the main thread, once. Forked workers do not
    inherit the timer. Without ``setitimer`` (not POSIX), outside the main thread, or without a
    budget, the block runs unwatched and only the stages' own checks apply.
    """
    usable = (budget is not None and hasattr(signal, "setitimer")
              and threading.current_thread() is threading.main_thread())
    if not usable:
        yield
        return
    fired = []

    def _on_tick(_signum, _frame):
        if fired:
            return
        elapsed = budget.elapsed_s()
        stage = getattr(budget.progress, "stage", None) or "analysis"
        if elapsed > budget.max_seconds:
            fired.append(True)
            signal.setitimer(signal.ITIMER_REAL, 0.0)
            raise BudgetExceeded(stage, elapsed_s=elapsed, max_seconds=budget.max_seconds)
        if budget.progress is not None:
            budget.progress(stage, elapsed)

    previous = signal.signal(signal.SIGALRM, _on_tick)
    old_timer = signal.setitimer(signal.ITIMER_REAL, tick_s, tick_s)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0.0)
        signal.signal(signal.SIGALRM, previous)
        if old_timer[0] > 0:  # an outer timer was running: give it back
            signal.setitimer(signal.ITIMER_REAL, *old_timer)
