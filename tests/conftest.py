"""Shared fixtures: the real-spectra folder and an in-process CLI runner."""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

import pytest

from confirm.cli import main

PROJECT_ROOT = Path(__file__).resolve().parents[1]


def real_spectra_path() -> Path | None:
    """The shared folder of real measured spectra, or None when absent.

    ``CONFIRM_REAL_SPECTRA`` overrides the default ``../shared/real_spectra``.
    """
    env = os.environ.get("CONFIRM_REAL_SPECTRA")
    path = Path(env) if env else PROJECT_ROOT.parent / "shared" / "real_spectra"
    return path if path.is_dir() else None


@pytest.fixture(scope="session")
def real_spectra() -> Path:
    """Path of the real spectra; skips the test when the folder is absent."""
    path = real_spectra_path()
    if path is None:
        pytest.skip("real spectra folder absent (set CONFIRM_REAL_SPECTRA or provide ../shared/real_spectra)")
    return path


@dataclass
class CliResult:
    exit_code: int
    stdout: str
    stderr: str


@pytest.fixture
def run_cli(capsys):
    """Run ``confirm`` in-process: ``run_cli("predict", "C=C")`` -> CliResult."""

    def _run(*args: str) -> CliResult:
        capsys.readouterr()
        code = main([str(a) for a in args])
        out, err = capsys.readouterr()
        return CliResult(code, out, err)

    return _run
