"""Atomic output writing."""

from __future__ import annotations

import pytest

from confirm._files import atomic_path, write_text_atomic
from predictors.errors import InputError


def test_write_and_replace(tmp_path):
    target = tmp_path / "out.txt"
    write_text_atomic(target, "one")
    write_text_atomic(target, "two")
    assert target.read_text() == "two"
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]


def test_failure_leaves_target_untouched(tmp_path):
    target = tmp_path / "out.txt"
    target.write_text("old")
    with pytest.raises(RuntimeError), atomic_path(target) as tmp:
        tmp.write_text("half")
        raise RuntimeError("disk full")
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]


def test_missing_folder_and_folder_target(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        write_text_atomic(tmp_path / "nope" / "out.txt", "x")
    with pytest.raises(InputError, match="is a folder"):
        write_text_atomic(tmp_path, "x")
