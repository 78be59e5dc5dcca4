"""Writing output files safely.

Every file the planner writes (JSON, PDF, generated YAML) goes through
:func:`write_atomic`: the data is written to a temporary file in the target's
folder, flushed to disk, then renamed over the target in one step, so a reader
sees either the old file or the whole new one, never half of it. An input file
named in ``protect`` is never overwritten.

Temporary files are hidden and name their writer: ``.<name>.<pid>-<random>.tmp``
beside the target. A writer removes its own temporary file on every failure it
lives through; one killed outright (SIGKILL, a power cut) leaves it behind, and the
next write to the same target removes it once no process with that id is running
(POSIX only; elsewhere such files are left for the user to delete).
"""

from __future__ import annotations

import os
import re
import secrets
from typing import Sequence

from planner.errors import UsageError

__all__ = ["write_atomic"]


def _same_file(a: str, b: str) -> bool:
    if os.path.realpath(a) == os.path.realpath(b):
        return True
    try:
        return os.path.samefile(a, b)  # hard links, bind mounts
    except OSError:
        return False


def write_atomic(
    path: str | os.PathLike[str],
    data: bytes | str,
    *,
    protect: Sequence[str | os.PathLike[str]] = (),
) -> None:
    """Write ``data`` to ``path`` atomically.

    Parameters
    ----------
    path : str or path-like
        The file to create or replace.
    data : bytes or str
        The content; text is written as UTF-8.
    protect : sequence of str or path-like
        Paths that must not be overwritten (the inputs). The same file reached
        by another name (a symbolic or hard link) counts as the same.

    Raises
    ------
    planner.errors.UsageError
        When ``path`` is a protected input, or the file cannot be written
        (missing folder, no permission, a folder in the way, disk full). The
        temporary file is removed on every failure, an interrupt included.

    Notes
    -----
    Steps: create ``.<name>.<pid>-<random>.tmp`` beside the target (``O_EXCL``, mode
    0666 less the umask, so the result has ordinary permissions), write,
    ``fsync``, ``os.replace`` onto the target (atomic on POSIX and Windows
    within one file system), then ``fsync`` the folder where the system allows
    it so that the rename itself survives a power cut. Last, temporary files of the
    same target left by writers that no longer run are removed.
    """
    target = os.fspath(path)
    for p in protect:
        if _same_file(target, os.fspath(p)):
            raise UsageError(
                f"{target}: refusing to overwrite the input file {os.fspath(p)}; choose another output path"
            )
    if os.path.isdir(target):
        raise UsageError(f"{target}: is a folder; give a file name for the output")
    payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    folder = os.path.dirname(os.path.abspath(target))
    base = os.path.basename(target)
    tmp = ""
    try:
        fd = -1
        for _ in range(100):
            tmp = os.path.join(folder, f".{base}.{os.getpid()}-{secrets.token_hex(6)}.tmp")
            try:
                fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), 0o666)
                break
            except FileExistsError:
                continue
        else:  # pragma: no cover - 100 collisions of 48 random bits
            raise FileExistsError(f"no free temporary name in {folder}")
        try:
            view = memoryview(payload)
            while view:
                n = os.write(fd, view)
                view = view[n:]
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, target)
        tmp = ""
    except OSError as e:
        reason = e.strerror or str(e)
        raise UsageError(
            f"{target}: cannot write the file ({reason}); check that the folder exists and is writable"
        ) from None
    finally:
        if tmp:
            try:
                os.unlink(tmp)
            except OSError:
                pass
    _fsync_folder(folder)
    _remove_stale_temps(folder, base)


def _remove_stale_temps(folder: str, base: str) -> None:
    """Remove ``.<base>.<pid>-<hex>.tmp`` files whose writer process no longer runs."""
    if os.name != "posix":  # no safe way to probe a process id
        return
    pattern = re.compile(r"\." + re.escape(base) + r"\.(\d+)-[0-9a-f]{12}\.tmp")
    try:
        names = os.listdir(folder)
    except OSError:
        return
    for name in names:
        m = pattern.fullmatch(name)
        if m is None or _running(int(m.group(1))):
            continue
        try:
            os.unlink(os.path.join(folder, name))
        except OSError:
            pass


def _running(pid: int) -> bool:
    """Whether a process with this id exists (POSIX: signal 0 probes without sending)."""
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # e.g. another user's process: it exists
        return True
    return True


def _fsync_folder(folder: str) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
