"""Writing output files safely.

Every file the planner writes (JSON, PDF, CSV, generated YAML) goes through this
module. Four rules:

* **Only regular files are written.** A target that exists and is not a regular
  file (a folder, a character or block device such as ``/dev/null`` or
  ``/dev/full``, a FIFO, a socket) is refused with a :class:`UsageError`; the
  planner never puts a regular file in the place of a device (which, run as root,
  could break the machine). Output to the terminal is asked for explicitly with
  ``-`` (see :func:`emit`), never through a device path.
* **Inputs are never overwritten**, also not through another name (a relative
  path, a symbolic or a hard link): pass them as ``protect``.
* **A symbolic link is written through**: when the target is a link to a regular
  file, that file is replaced (atomically, in its own folder) and the link stays a
  link. Replacing the link itself with a regular file would leave the file the user
  meant unchanged and silently turn the link into a copy; writing through is what
  the shell's ``>`` does. A link that points nowhere (dangling) or to something
  other than a regular file is refused, so a link cannot make the planner create a
  file somewhere the user did not look. A target with other hard links is replaced
  by a new file under the name given; its other names keep the old content (an
  input is never among them: ``protect`` compares files, not names).
* **Several outputs are one act** (:func:`write_all`): every target is checked
  first (kind, not an input, folder exists, targets distinct, also through links),
  every file's data is written to its temporary file and flushed, and only then are
  they renamed into place. A mistake in the second output leaves the first
  untouched; a full disk leaves every old file in place.

Each file is written to a temporary file in the target's folder, flushed to disk,
then renamed over the target in one step, so a reader sees either the old file or
the whole new one, never half of it.

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
import stat
import sys
from typing import Iterable, Sequence

from planner.errors import UsageError

__all__ = ["write_atomic", "write_all", "check_target", "check_targets", "emit", "STDOUT"]

#: The output name that means "standard output" (``-o -``).
STDOUT = "-"

def _same_file(a: str, b: str) -> bool:
    if os.path.realpath(a) == os.path.realpath(b):
        return True
    try:
        return os.path.samefile(a, b)  # hard links, bind mounts
    except OSError:
        return False


def _kind(mode: int) -> str:
    """A person's name for a file type that is not a regular file."""
    if stat.S_ISCHR(mode):
        return "character device"
    if stat.S_ISBLK(mode):
        return "block device"
    if stat.S_ISFIFO(mode):
        return "FIFO (named pipe)"
    if stat.S_ISSOCK(mode):
        return "socket"
    if stat.S_ISDIR(mode):
        return "folder"
    return "special file"


def _reason(exc: OSError) -> str:
    return exc.strerror or str(exc)


def check_target(path, protect: Sequence = ()) -> str:
    """Check one output path before anything is computed or written.

    Parameters
    ----------
    path : str or path-like
        The output file to create or replace. ``-`` (standard output) is refused
        here: a command that can write to standard output checks ``-`` itself
        (see :func:`check_targets` with ``stdout=True`` and :func:`emit`).
    protect : sequence of str or path-like
        The inputs, which must never be overwritten (also not through a symbolic
        or hard link).

    Returns
    -------
    str
        The file that will really be written: ``path`` itself, or, when ``path``
        is a symbolic link to a regular file, the file it points to.

    Raises
    ------
    planner.errors.UsageError
        When ``path`` is ``-`` or empty, is (or reaches) a protected input, exists and is
        not a regular file (folder, device, FIFO, socket), is a dangling symbolic
        link, lies in a folder that does not exist or cannot be written, or cannot
        be examined at all (a file where a folder should be, a name too long).
        The message names the path and says what to do.
    """
    target = os.fspath(path)
    if target == STDOUT:
        raise UsageError("-: this output cannot go to standard output; give a file name "
                         "(write ./- for a file named '-')")
    if target == "":
        raise UsageError("the output path is empty; give a file name for the output")
    if "\x00" in target:
        raise UsageError(f"{target!r}: an output path cannot hold a NUL character; give a plain file name")
    for p in protect:
        if _same_file(target, os.fspath(p)):
            raise UsageError(
                f"{target}: refusing to overwrite the input file {os.fspath(p)}; choose another output path"
            )
    dest = target
    try:
        st = os.lstat(target)
    except FileNotFoundError:
        st = None
    except OSError as e:
        raise UsageError(f"{target}: cannot use this output path ({_reason(e)}); choose another output path") from None
    if st is not None and stat.S_ISLNK(st.st_mode):
        dest = os.path.realpath(target)
        try:
            st = os.stat(target)
        except FileNotFoundError:
            raise UsageError(
                f"{target}: is a symbolic link to {dest}, which does not exist; give the path of a file "
                "to create, not a link that points nowhere") from None
        except OSError as e:
            raise UsageError(f"{target}: cannot follow this symbolic link ({_reason(e)}); "
                             "give the path of a regular file") from None
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise UsageError(f"{target}: is a folder; give a file name for the output")
        if not stat.S_ISREG(st.st_mode):
            via = f" (through the symbolic link to {dest})" if dest != target else ""
            raise UsageError(
                f"{target}: is a {_kind(st.st_mode)}{via}, not a regular file; the planner writes only regular "
                "files: give the path of a file to create or replace")
    folder = os.path.dirname(os.path.abspath(dest))
    if not os.path.isdir(folder):
        raise UsageError(f"{target}: the folder {folder} does not exist; create it or choose another output path")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise UsageError(f"{target}: cannot write in the folder {folder} (permission denied); "
                         "choose another output path")
    return dest


def check_targets(paths: Iterable, protect: Sequence = (), *, stdout: bool = False) -> list[str]:
    """Check several outputs of one command together: each as :func:`check_target`, and distinct.

    Parameters
    ----------
    paths : iterable of str or path-like
        The outputs.
    protect : sequence of str or path-like
        The inputs.
    stdout : bool
        Whether one of the outputs may be ``-`` (standard output, written with
        :func:`emit`); refused otherwise.

    Returns
    -------
    list of str
        The files that will really be written, in the order of ``paths``
        (``-`` kept as is).

    Raises
    ------
    planner.errors.UsageError
        For the first target :func:`check_target` refuses, or when two outputs
        are the same file (the same name, or one file through a link).
    """
    paths = [os.fspath(p) for p in paths]
    if stdout and paths.count(STDOUT) > 1:
        raise UsageError("only one output can go to standard output ('-'); give the others file names")
    dests = [p if (stdout and p == STDOUT) else check_target(p, protect) for p in paths]
    files = [(p, d) for p, d in zip(paths, dests) if p != STDOUT]
    for k, (p, d) in enumerate(files):
        for q, e in files[:k]:
            if p == q:
                raise UsageError(f"{p} is named for two outputs; give each output its own name")
            if _same_file(d, e) or os.path.normcase(os.path.abspath(d)) == os.path.normcase(os.path.abspath(e)):
                raise UsageError(f"{p} and {q} are the same file; give each output its own name")
    return dests


def write_atomic(path, data: bytes | str, *, protect: Sequence = ()) -> None:
    """Write ``data`` to ``path`` atomically.

    Parameters
    ----------
    path : str or path-like
        The file to create or replace (a symbolic link to a regular file is
        written through: the file it points to is replaced, the link stays).
    data : bytes or str
        The content; text is written as UTF-8.
    protect : sequence of str or path-like
        Paths that must not be overwritten (the inputs). The same file reached
        by another name (a symbolic or hard link) counts as the same.

    Raises
    ------
    planner.errors.UsageError
        When :func:`check_target` refuses ``path``, or the file cannot be written
        (no permission, disk full). The temporary file is removed on every
        failure, an interrupt included.

    Notes
    -----
    Steps: create ``.<name>.<pid>-<random>.tmp`` beside the target (``O_EXCL``, mode
    0666 less the umask, so the result has ordinary permissions), write,
    ``fsync``, check the target's kind once more, ``os.replace`` onto the target
    (atomic on POSIX and Windows within one file system), then ``fsync`` the folder
    where the system allows it so that the rename itself survives a power cut.
    Last, temporary files of the same target left by writers that no longer run
    are removed.
    """
    write_all([(path, data)], protect=protect)


def write_all(items: Sequence, *, protect: Sequence = ()) -> None:
    """Write several outputs as one act: check them all, then write them all.

    Parameters
    ----------
    items : sequence of (path, data)
        Each output file and its content (bytes, or text written as UTF-8).
    protect : sequence of str or path-like
        The inputs, never overwritten.

    Raises
    ------
    planner.errors.UsageError
        When any target is refused (:func:`check_targets`): then nothing at all
        is written. When the data of any file cannot be written (disk full, no
        permission): then every temporary file is removed and every old file
        is left as it was.

    Notes
    -----
    Three phases: (1) :func:`check_targets` on every path; (2) each file's data
    is written to its temporary file beside its target and flushed to disk;
    (3) each temporary file is renamed over its target, in the order given, each
    target's kind checked once more just before. Only phase 3 changes what a
    reader sees, and a rename within one folder does not run out of space; it
    can fail only when the folder changes under the planner between the phases,
    and the message then names the outputs already in place.
    """
    items = [(os.fspath(p), d) for p, d in items]
    dests = check_targets([p for p, _ in items], protect)
    temps: list[str] = []
    done: list[str] = []
    try:
        for (target, data), dest in zip(items, dests):
            payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
            temps.append(_write_temp(target, dest, payload))
        for k, ((target, _), dest) in enumerate(zip(items, dests)):
            _commit(target, dest, temps[k], done)
            temps[k] = ""
            done.append(target)
    finally:
        for tmp in temps:
            if tmp:
                try:
                    os.unlink(tmp)
                except OSError:
                    pass
    for dest in dests:
        folder, base = os.path.split(os.path.abspath(dest))
        _fsync_folder(folder)
        _remove_stale_temps(folder, base)


def _write_temp(target: str, dest: str, payload: bytes) -> str:
    """Write ``payload`` to a fresh temporary file beside ``dest``, flushed; return its path."""
    folder, base = os.path.split(os.path.abspath(dest))
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
            tmp = ""
            raise FileExistsError(f"no free temporary name in {folder}")
        try:
            view = memoryview(payload)
            while view:
                n = os.write(fd, view)
                view = view[n:]
            os.fsync(fd)
        finally:
            os.close(fd)
        return tmp
    except BaseException as e:
        if tmp:
            try:
                os.unlink(tmp)
            except OSError:
                pass
        if isinstance(e, OSError):
            raise UsageError(
                f"{target}: cannot write the file ({_reason(e)}); check that the folder exists and is writable"
            ) from None
        raise


def _commit(target: str, dest: str, tmp: str, done: list[str]) -> None:
    """Rename ``tmp`` over ``dest`` after checking the target's kind once more."""
    try:
        mode = os.stat(dest).st_mode
    except FileNotFoundError:
        mode = None
    except OSError as e:
        raise UsageError(f"{target}: not written ({_reason(e)}){_written(done)}; "
                         "give the path of a regular file") from None
    if mode is not None and not stat.S_ISREG(mode):
        raise UsageError(f"{target}: not written (it became a {_kind(mode)}){_written(done)}; "
                         "give the path of a regular file")
    try:
        os.replace(tmp, dest)
    except OSError as e:
        raise UsageError(
            f"{target}: cannot write the file ({_reason(e)}){_written(done)}; check that the folder exists "
            "and is writable") from None


def _written(done: list[str]) -> str:
    return f", after {', '.join(done)} had been written" if done else ""


def emit(path, data: bytes | str, *, protect: Sequence = ()) -> bool:
    """Write an output to a file, or to standard output when ``path`` is ``-``.

    Parameters
    ----------
    path : str or path-like
        The output file, or ``-`` for standard output (a file literally named
        ``-`` is written as ``./-``).
    data : bytes or str
        The content; text goes out as UTF-8.
    protect : sequence of str or path-like
        The inputs, never overwritten.

    Returns
    -------
    bool
        True when a file was written (so the caller may say "wrote ..."),
        False when the data went to standard output.

    Raises
    ------
    planner.errors.UsageError
        As :func:`write_atomic` for a file.
    """
    if os.fspath(path) != STDOUT:
        write_atomic(path, data, protect=protect)
        return True
    if isinstance(data, str):
        sys.stdout.write(data)
    else:
        sys.stdout.flush()
        sys.stdout.buffer.write(bytes(data))
    sys.stdout.flush()
    return False


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
