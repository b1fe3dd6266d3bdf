"""The command-line frame: help, version, exit codes, no tracebacks."""

from __future__ import annotations

import subprocess
import sys

import pytest

import confirm
from confirm import cli


def test_version(run_cli):
    result = run_cli("--version")
    assert result.exit_code == 0
    assert confirm.__version__ in result.stdout


def test_help_lists_description(run_cli):
    result = run_cli("--help")
    assert result.exit_code == 0
    assert "1H NMR" in result.stdout


def test_unknown_subcommand_is_bad_input(run_cli):
    result = run_cli("no-such-command")
    assert result.exit_code == cli.EXIT_BAD_INPUT
    assert result.stderr.startswith("error: ")
    assert len(result.stderr.strip().splitlines()) == 1
    assert "Traceback" not in result.stderr


def test_internal_error_exits_3_and_debug_shows_traceback(run_cli, monkeypatch):
    def broken_parser():
        raise RuntimeError("boom")

    monkeypatch.setattr(cli, "build_parser", broken_parser)
    result = run_cli("--version")
    assert result.exit_code == cli.EXIT_INTERNAL
    assert "Traceback" not in result.stderr
    result = run_cli("--debug", "--version")
    assert result.exit_code == cli.EXIT_INTERNAL
    assert "Traceback" in result.stderr


def test_confirm_error_exits_2(run_cli, monkeypatch):
    def bad_parser():
        raise confirm.InputError("smiles: RDKit cannot parse 'C1CC'")

    monkeypatch.setattr(cli, "build_parser", bad_parser)
    result = run_cli("--version")
    assert result.exit_code == 2
    assert result.stderr == "error: smiles: RDKit cannot parse 'C1CC'\n"


def test_module_entry_point_runs():
    proc = subprocess.run([sys.executable, "-m", "confirm", "--version"], capture_output=True, text=True,
                          check=False)
    assert proc.returncode == 0
    assert confirm.__version__ in proc.stdout


def test_tables_wrap_their_last_column_to_the_width_asked():
    from confirm.commands._common import format_table

    verdict = ("Major alkene: (E)-pent-2-ene (96.0 +- 0.4 mol % of the detected components). E:Z = 97:3 "
               "(E 96.9 +- 0.4 % of the two). Confidence: high.")
    text = format_table(("item", "status", "QC", "verdict or error"), [("lot01", "done", "PASS", verdict)],
                        width=100)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= 100 and len(lines) == 4
    assert " ".join(line[21:].strip() for line in lines[2:]) == verdict  # every word kept, in order
    assert format_table(("a", "b"), [("1", "2")]) == "a  b\n-  -\n1  2"


@pytest.mark.parametrize("command", ["analyze", "candidates", "predict", "process", "qc", "batch", "trend",
                                     "demo"])
def test_every_subcommand_help_has_a_description_and_an_example(run_cli, command):
    result = run_cli(command, "--help")
    assert result.exit_code == 0, result.stderr
    text = result.stdout
    usage_end = text.index("\n\n")
    description = text[usage_end:].strip().split("\n\n")[0]
    assert len(description) > 40 and not description.startswith(("positional", "options"))
    assert "Example" in text and f"confirm {command}" in text.split("Example", 1)[1]


@pytest.mark.parametrize("args", [
    ("predict", "C/C=C/c1ccc(OC)cc1", "--field-mhz", "60"),
    ("candidates", "CC(Br)Cc1ccc(OC)cc1", "--reagent", "KOH", "--reaction-solvent", "DMSO", "--temp-c", "80"),
    ("process", "SAMPLE"),
])
def test_terminal_output_stays_within_100_columns(run_cli, args):
    from confirm.commands.demo import sample_files

    args = [str(sample_files()[0]) if a == "SAMPLE" else a for a in args]
    result = run_cli(*args)
    assert result.exit_code == 0, result.stderr
    assert max(len(line) for line in result.stdout.splitlines()) <= 100
