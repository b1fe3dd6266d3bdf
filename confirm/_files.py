"""Writing output files safely: never a half-written file at the target path."""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from predictors.errors import InputError

__all__ = ["atomic_path", "write_text_atomic"]


@contextmanager
def atomic_path(path: str | Path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    On any exception the temporary file is removed and ``path`` is left as it
    was, so a failed run never leaves a half-written output.

    Raises
    ------
    InputError
        When the target's folder does not exist or the target is a folder.
    """
    path = Path(path)
    if path.is_dir():
        raise InputError(f"output path: {str(path)!r} is a folder; give a file name")
    if not path.parent.is_dir():
        raise InputError(f"output path: folder {str(path.parent)!r} does not exist")
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        yield tmp
        os.replace(tmp, path)
    finally:
        tmp.unlink(missing_ok=True)


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write UTF-8 ``text`` to ``path`` through :func:`atomic_path`; return the path."""
    path = Path(path)
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
