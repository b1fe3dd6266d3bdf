"""Writing output files safely: never a half-written file, never over an input.

Every output goes through :func:`atomic_path` (a temporary file beside the target, renamed onto
it on success). Before anything is computed, a command hands its inputs and outputs to
:func:`check_outputs`, which refuses an output that is an input, lies inside an input folder or
contains an input, and two outputs with the same path, with symbolic links followed.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Iterator
from contextlib import contextmanager, suppress
from pathlib import Path

from predictors.errors import InputError

__all__ = ["atomic_path", "write_text_atomic", "resolve_path", "check_outputs", "check_file_targets",
           "is_within"]


def resolve_path(path: str | Path, *, label: str = "path") -> Path:
    """The absolute path with every symbolic link followed (the target need not exist).

    Raises
    ------
    InputError
        For a symbolic-link loop or a path the system cannot handle (too long).
    """
    try:
        return Path(os.path.realpath(os.fspath(path)))
    except (OSError, RuntimeError, ValueError) as exc:
        raise InputError(f"{label}: cannot resolve {str(path)!r} ({_reason(exc)})") from None


def is_within(path: Path, folder: Path) -> bool:
    """True when the resolved ``path`` is ``folder`` or lies inside it (both already resolved)."""
    return path == folder or folder in path.parents


def _reason(exc: BaseException) -> str:
    return getattr(exc, "strerror", None) or " ".join(str(exc).split()) or type(exc).__name__


def _shown(label: str, given, resolved: Path) -> str:
    text = f"{label} {str(given)!r}"
    if Path(os.path.abspath(os.fspath(given))) != resolved:
        text += f" (that is {str(resolved)!r})"
    return text


def check_outputs(outputs: Iterable[tuple[str, str | Path | None]],
                  inputs: Iterable[tuple[str, str | Path | None]], *,
                  folders: Iterable[tuple[str, str | Path | None]] = ()) -> None:
    """Refuse outputs that would overwrite or write into an input, and outputs that collide.

    Paths are compared after following symbolic links. ``None`` entries are skipped.

    Parameters
    ----------
    outputs : iterable of (label, path)
        Files (or folders) a command will write, e.g. ``("--report", "crude.html")``. None may
        equal an input, lie inside an input folder or contain an input, and no two may share
        a path or lie one inside the other.
    inputs : iterable of (label, path)
        What the command reads: spectrum files and folders, specifications, manifests.
    folders : iterable of (label, path), keyword-only
        Output folders that the command writes into (``batch --out``): a folder may not be an
        input or lie inside one; what it writes inside goes into ``outputs``.

    Raises
    ------
    InputError
        Naming both paths.
    """
    ins = [(label, given, resolve_path(given, label=label)) for label, given in inputs if given is not None]
    outs = [(label, given, resolve_path(given, label=label)) for label, given in outputs if given is not None]
    dirs = [(label, given, resolve_path(given, label=label)) for label, given in folders if given is not None]
    for label, given, out in dirs:
        for in_label, in_given, inp in ins:
            if is_within(out, inp):
                where = "is" if out == inp else "lies inside"
                raise InputError(f"{_shown(label, given, out)} {where} the input "
                                 f"{_shown(in_label, in_given, inp)}; results written there would mix with "
                                 "the data: "
                                 "choose a folder outside it")
    for label, given, out in outs:
        for in_label, in_given, inp in ins:
            if out == inp:
                raise InputError(f"{_shown(label, given, out)} is the input "
                                 f"{_shown(in_label, in_given, inp)}; writing it would destroy the input: "
                                 "choose another path")
            if inp in out.parents:
                raise InputError(f"{_shown(label, given, out)} lies inside the input "
                                 f"{_shown(in_label, in_given, inp)}: choose a path outside it")
            if out in inp.parents:
                raise InputError(f"{_shown(label, given, out)} contains the input "
                                 f"{_shown(in_label, in_given, inp)}: choose another path")
    for i, (label, given, out) in enumerate(outs):
        for other_label, other_given, other in outs[i + 1:]:
            if out == other or out in other.parents or other in out.parents:
                raise InputError(f"{_shown(label, given, out)} and {_shown(other_label, other_given, other)} "
                                 "name the same place; give each output its own path")


def check_file_targets(outputs: Iterable[tuple[str, str | Path | None]]) -> None:
    """Refuse, before any work, output files that cannot be written: a folder, or a missing folder.

    Raises
    ------
    InputError
        Naming the option and the path.
    """
    for label, given in outputs:
        if given is None:
            continue
        path = Path(given)
        try:
            if path.is_dir():
                raise InputError(f"{label}: {str(given)!r} is a folder; give a file name")
            if not path.parent.is_dir():
                raise InputError(f"{label}: folder {str(path.parent)!r} does not exist")
            if path.parent.exists() and not os.access(path.parent, os.W_OK):
                raise InputError(f"{label}: folder {str(path.parent)!r} is not writable")
        except OSError as exc:
            raise InputError(f"{label}: cannot write {str(given)!r} ({_reason(exc)})") from None
        if len(path.name.encode()) > 240:  # the temporary name beside it adds a few characters
            raise InputError(f"{label}: file name {path.name[:40]!r}... is too long ({len(path.name)} "
                             "characters); at most 240")


@contextmanager
def atomic_path(path: str | Path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    On any exception the temporary file is removed and ``path`` is left as it
    was, so a failed run never leaves a half-written output. A symbolic link at
    ``path`` is replaced by the file, never written through.

    Raises
    ------
    InputError
        When the target's folder does not exist, the target is a folder, or the
        system refuses the write (permissions, full disk, path too long...).
    """
    path = Path(path)
    try:
        if path.is_dir():
            raise InputError(f"output path: {str(path)!r} is a folder; give a file name")
        if not path.parent.is_dir():
            raise InputError(f"output path: folder {str(path.parent)!r} does not exist")
        tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
        tmp.unlink(missing_ok=True)  # a stale file or link of that name is never written through
    except OSError as exc:
        raise InputError(f"output path: cannot write {str(path)!r} ({_reason(exc)})") from None
    try:
        yield tmp
        os.replace(tmp, path)
    except OSError as exc:
        raise InputError(f"output path: cannot write {str(path)!r} ({_reason(exc)})") from None
    finally:
        with suppress(OSError):
            tmp.unlink(missing_ok=True)


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write UTF-8 ``text`` to ``path`` through :func:`atomic_path`; return the path."""
    path = Path(path)
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
