"""The code base stays ruff clean (configuration in pyproject.toml)."""

from __future__ import annotations

import shutil
import subprocess
import sys

import pytest

from tests.conftest import PROJECT_ROOT


def test_ruff_clean():
    try:
        import ruff  # noqa: F401
    except ImportError:
        if shutil.which("ruff") is None:
            pytest.skip("ruff not installed (it is in the test extra)")
    command = [sys.executable, "-m", "ruff", "check", "confirm", "predictors", "tests", "benchmarks"]
    proc = subprocess.run(command, cwd=PROJECT_ROOT, capture_output=True, text=True, check=False)
    assert proc.returncode == 0, proc.stdout + proc.stderr
