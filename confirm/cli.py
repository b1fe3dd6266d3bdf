"""The ``confirm`` command line.

Exit codes: 0 success; 1 QC FAIL or INCONCLUSIVE (``qc``), or a batch with an item that failed
or did not pass; 2 anything the user can fix (bad input, unreadable or unwritable files, paths
too long, a time budget spent), one line on stderr, no traceback unless ``--debug``; 3 a bug in
confirm; 130 interrupted (Ctrl-C); 141 the reader of the output went away (broken pipe, e.g.
``confirm predict ... | head``). Warnings of the numerical libraries are not shown (``--debug``
shows them).
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import os
import pkgutil
import sys
import traceback
import warnings
from collections.abc import Sequence

from confirm import __version__
from predictors.errors import ConfirmError

__all__ = ["main", "build_parser", "EXIT_OK", "EXIT_REJECTED", "EXIT_BAD_INPUT", "EXIT_INTERNAL",
           "EXIT_INTERRUPTED", "EXIT_BROKEN_PIPE"]

EXIT_OK = 0
EXIT_REJECTED = 1
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3
#: 128 + SIGINT, what a shell reports for a program stopped by Ctrl-C.
EXIT_INTERRUPTED = 130
#: 128 + SIGPIPE, what a shell reports for a program whose output pipe was closed.
EXIT_BROKEN_PIPE = 141

#: Order of subcommands in ``--help``; modules found in ``confirm.commands``
#: but not named here come after, alphabetically.
COMMAND_ORDER = ("candidates", "predict", "process", "analyze", "qc", "batch", "trend", "demo")


def _command_modules() -> list[str]:
    """Names of the subcommand modules (public modules of ``confirm.commands``)."""
    import confirm.commands as package

    names = [m.name for m in pkgutil.iter_modules(package.__path__) if not m.name.startswith("_")]
    rank = {name: i for i, name in enumerate(COMMAND_ORDER)}
    return sorted(names, key=lambda n: (rank.get(n, len(rank)), n))


class _ArgumentParser(argparse.ArgumentParser):
    """argparse that reports usage errors as bad input (exit 2, one line)."""

    def error(self, message: str):  # noqa: D401 - argparse API
        raise _UsageError(f"{self.prog}: {message}")


class _UsageError(ConfirmError):
    pass


def _common_options() -> argparse.ArgumentParser:
    common = _ArgumentParser(add_help=False)
    common.add_argument("--json", action="store_true", help="print machine-readable JSON on stdout")
    common.add_argument("--debug", action="store_true", help="show full tracebacks on errors")
    return common


def build_parser() -> argparse.ArgumentParser:
    """Build the top-level parser with every registered subcommand."""
    parser = _ArgumentParser(
        prog="confirm",
        description=(
            "Prove from a 1H NMR spectrum which elimination or substitution product "
            "formed, in what ratio, and whether a batch meets its specification."
        ),
    )
    parser.add_argument("--version", action="version", version=f"confirm {__version__}")
    parser.add_argument("--debug", action="store_true", help="show full tracebacks on errors")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_ArgumentParser)
    common = _common_options()
    for name in _command_modules():
        importlib.import_module(f"confirm.commands.{name}").register(subparsers, [common])
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit code instead of exiting.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name; ``sys.argv[1:]`` when None.
    """
    argv = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in argv
    with warnings.catch_warnings(), _quiet_workers_on_interrupt():
        if not debug:  # numerical warnings (empty slices, divisions) are for developers
            warnings.simplefilter("ignore")
        return _run(argv, debug=debug)


@contextlib.contextmanager
def _quiet_workers_on_interrupt():
    """Ctrl-C reaches every process of the terminal's group: this process stops with
    ``KeyboardInterrupt`` as usual, while a worker it forked (which inherits the handler) leaves
    quietly instead of printing its own traceback; its parent ends it anyway."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    if signal.getsignal(signal.SIGINT) is signal.SIG_IGN:  # started to ignore Ctrl-C: keep it so
        yield
        return
    main_pid = os.getpid()

    def _on_interrupt(signum, frame):
        if os.getpid() != main_pid:
            raise SystemExit(EXIT_INTERRUPTED)
        raise KeyboardInterrupt

    previous = signal.signal(signal.SIGINT, _on_interrupt)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)


def _run(argv: list[str], *, debug: bool) -> int:
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        if getattr(args, "handler", None) is None:
            parser.print_help()
            return EXIT_OK
        code = int(args.handler(args))
        sys.stdout.flush()  # a closed pipe shows here, inside the handlers below
        return code
    except ConfirmError as exc:
        return _report(exc, debug=debug)
    except KeyboardInterrupt:
        _say("interrupted")
        return EXIT_INTERRUPTED
    except BrokenPipeError:
        _silence_stdout()
        return EXIT_BROKEN_PIPE
    except SystemExit as exc:  # argparse --help / --version
        return exc.code if isinstance(exc.code, int) else (0 if exc.code is None else EXIT_BAD_INPUT)
    except OSError as exc:  # the environment: permissions, full disk, names too long, missing files
        return _report(exc, debug=debug, text=_os_error_text(exc))
    except Exception as exc:  # any other exception is a bug in confirm
        if debug:
            traceback.print_exc()
        _say(f"internal error: {_one_line(exc)} (rerun with --debug and report it)")
        return EXIT_INTERNAL


def _report(exc: BaseException, *, debug: bool, text: str | None = None) -> int:
    """Print one ``error:`` line (and the traceback under ``--debug``); return exit code 2."""
    if debug:
        traceback.print_exc()
    _say(f"error: {text or _one_line(exc)}")
    return EXIT_BAD_INPUT


def _say(line: str) -> None:
    with contextlib.suppress(OSError, ValueError):  # stderr gone too: nothing more to say
        print(line, file=sys.stderr)


def _silence_stdout() -> None:
    """Point stdout at the null device so that the interpreter's last flush cannot fail again."""
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
        os.close(null)
    except (OSError, ValueError, AttributeError):  # stdout without a file descriptor (tests)
        pass


def _os_error_text(exc: OSError) -> str:
    where = " and ".join(repr(str(f)) for f in (exc.filename, exc.filename2) if f is not None)
    reason = exc.strerror or _one_line(exc)
    return f"{where}: {reason}" if where else reason


def _one_line(exc: BaseException) -> str:
    text = str(exc).strip() or type(exc).__name__
    return " ".join(text.split())


def run() -> None:
    """Console-script entry point."""
    from confirm._allocator import tune_allocator

    tune_allocator()
    sys.exit(main())


if __name__ == "__main__":
    run()
