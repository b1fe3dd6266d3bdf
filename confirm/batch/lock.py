"""One batch at a time per output folder: a lock file in ``--out`` while a batch runs there.

Two batches writing into one folder would overwrite each other's items and summaries, so
:func:`hold_out_lock` creates ``--out/.confirm-batch.lock`` (exclusively: the file system decides
who was first) holding the process id, the host, when it started and, on Linux, the process's
start tick, and removes it when the batch ends. A second batch finds the file and refuses to
start with a one-line message naming the holder. A lock left behind by a process that no longer
runs on this host (killed, or the machine restarted) is stale and taken over; a lock from another
host cannot be checked from here, so the message says which file to delete once that run is
known to be gone.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
from collections.abc import Iterator
from pathlib import Path

from confirm.batch.finished import read_json_object
from predictors.errors import InputError

__all__ = ["LOCK_NAME", "hold_out_lock"]

#: The lock file's name inside ``--out`` (item ids never start with a dot).
LOCK_NAME = ".confirm-batch.lock"
#: A lock file still empty after this long was left by a process that died while writing it.
_EMPTY_GRACE_S = 10.0


@contextlib.contextmanager
def hold_out_lock(out_dir: str | Path) -> Iterator[Path]:
    """Hold the lock of ``out_dir`` for the duration of the block; yield the lock file's path.

    Raises
    ------
    InputError
        Another batch holds the lock (named in the message), or the lock file cannot be made.
    """
    path = Path(out_dir) / LOCK_NAME
    mine = _take(path)
    try:
        yield path
    finally:
        if read_json_object(path) == mine:  # a lock taken over as stale by mistake is not ours to remove
            with contextlib.suppress(OSError):
                path.unlink()


def _holder_record() -> dict:
    pid = os.getpid()
    return {"pid": pid, "host": socket.gethostname(), "pid_start": _process_start(pid),
            "started": time.strftime("%Y-%m-%d %H:%M:%S")}


def _take(path: Path) -> dict:
    mine = _holder_record()
    for _ in range(3):  # a stale lock is cleared, then the file made again
        try:
            fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        except FileExistsError:
            holder = read_json_object(path)
            if not _is_stale(holder, path):
                raise InputError(_busy_message(path, holder)) from None
            _clear_stale(path, holder)
            continue
        except OSError as exc:
            raise InputError(f"--out: cannot create the lock file {str(path)!r} "
                             f"({exc.strerror or exc})") from None
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(json.dumps(mine) + "\n")
        return mine
    raise InputError(_busy_message(path, read_json_object(path)))


def _is_stale(holder: dict | None, path: Path) -> bool:
    """True when the lock's process is known to be gone: on this host and not running (or another
    process now has its id), or the file stayed unreadable past the time it takes to write it."""
    if holder is None:
        try:
            return time.time() - path.stat().st_mtime > _EMPTY_GRACE_S
        except OSError:
            return True  # removed meanwhile: try again
    if holder.get("host") != socket.gethostname():
        return False
    pid = holder.get("pid")
    if not isinstance(pid, int) or isinstance(pid, bool) or pid <= 0:
        return True
    if not _running(pid):
        return True
    recorded = holder.get("pid_start") or ""
    return bool(recorded) and _process_start(pid) not in ("", recorded)  # the id was given to another


def _running(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process
        return True
    except OSError:
        return False
    return _process_state(pid) != "Z"  # a zombie has ended; only its exit status is left


def _proc_stat_fields(pid: int) -> list[str]:
    """Fields of ``/proc/<pid>/stat`` after the command name (Linux; empty elsewhere)."""
    try:
        text = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return []
    return text[text.rfind(")") + 1:].split()


def _process_state(pid: int) -> str:
    found = _proc_stat_fields(pid)
    return found[0] if found else ""


def _process_start(pid: int) -> str:
    """When the process started, in clock ticks since boot (field 22 of ``/proc/<pid>/stat``),
    so that a process id given to a new process is not taken for the old one; "" elsewhere."""
    found = _proc_stat_fields(pid)
    return found[19] if len(found) > 19 else ""


def _clear_stale(path: Path, holder: dict | None) -> None:
    """Move the stale lock aside and delete it; put it back if it changed since it was read (a
    batch that cleared it first has made it again)."""
    aside = path.with_name(f"{LOCK_NAME}.stale.{os.getpid()}")
    try:
        os.replace(path, aside)
    except FileNotFoundError:
        return
    except OSError as exc:
        raise InputError(f"--out: cannot remove the stale lock file {str(path)!r} "
                         f"({exc.strerror or exc}); delete it") from None
    if holder is not None and read_json_object(aside) != holder:
        with contextlib.suppress(OSError):
            os.link(aside, path)  # never over a lock made meanwhile
    with contextlib.suppress(OSError):
        aside.unlink()


def _busy_message(path: Path, holder: dict | None) -> str:
    folder = str(path.parent)
    if holder is None:
        who = "another batch"
    else:
        who = (f"another batch (process {holder.get('pid')} on {holder.get('host')}, started "
               f"{holder.get('started')})")
    return (f"--out {folder!r} is in use by {who}; wait for it to end or choose another --out "
            f"(if no batch is running there, delete {str(path)!r})")
