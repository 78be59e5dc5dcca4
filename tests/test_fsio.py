"""Tests of planner.fsio: atomic writes, target checks, several outputs as one act, stdout."""

from __future__ import annotations

import os
import socket
import stat

import pytest

from planner import fsio
from planner.errors import UsageError
from planner.fsio import check_target, check_targets, emit, write_all, write_atomic


def _leftovers(folder):
    return [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]


def test_writes_text_and_bytes(tmp_path):
    out = tmp_path / "report.json"
    write_atomic(out, '{"ohm": "Ω"}')
    assert out.read_text(encoding="utf-8") == '{"ohm": "Ω"}'
    write_atomic(str(out), b"\x00\x01binary")
    assert out.read_bytes() == b"\x00\x01binary"
    assert _leftovers(tmp_path) == []


def test_new_file_has_ordinary_permissions(tmp_path):
    umask = os.umask(0o022)
    os.umask(umask)
    out = tmp_path / "a.pdf"
    write_atomic(out, b"%PDF")
    assert out.stat().st_mode & 0o777 == 0o666 & ~umask


def test_refuses_to_overwrite_inputs(tmp_path, monkeypatch):
    src = tmp_path / "meter.yaml"
    src.write_text("title: keep me\n", encoding="utf-8")
    link = tmp_path / "link.yaml"
    link.symlink_to(src)
    hard = tmp_path / "hard.yaml"
    os.link(src, hard)
    monkeypatch.chdir(tmp_path)
    for target in (src, str(src), "meter.yaml", "./sub/../meter.yaml", link, hard):
        with pytest.raises(UsageError, match="refusing to overwrite the input file"):
            write_atomic(target, "title: clobbered\n", protect=[str(src)])
    assert src.read_text(encoding="utf-8") == "title: keep me\n"
    write_atomic(tmp_path / "other.yaml", "x", protect=[str(src)])  # other names are fine


def test_missing_folder(tmp_path):
    with pytest.raises(UsageError, match="the folder .* does not exist; create it or choose another output path"):
        write_atomic(tmp_path / "no" / "such" / "out.pdf", b"x")
    assert list(tmp_path.iterdir()) == []


def test_folder_in_the_way(tmp_path):
    (tmp_path / "out.pdf").mkdir()
    with pytest.raises(UsageError, match="is a folder"):
        write_atomic(tmp_path / "out.pdf", b"x")


@pytest.mark.parametrize("exc", [KeyboardInterrupt, OSError(28, "No space left on device")])
def test_failure_leaves_old_file_and_no_temp(tmp_path, monkeypatch, exc):
    out = tmp_path / "out.json"
    out.write_text("old", encoding="utf-8")

    def boom(fd):
        raise exc

    monkeypatch.setattr(fsio.os, "fsync", boom)
    expected = KeyboardInterrupt if exc is KeyboardInterrupt else UsageError
    with pytest.raises(expected):
        write_atomic(out, "new")
    assert out.read_text(encoding="utf-8") == "old"
    assert _leftovers(tmp_path) == []


# --- only regular files are written ---------------------------------------------------------------
# File kinds as POSIX defines them (IEEE Std 1003.1, <sys/stat.h>: S_ISREG, S_ISDIR, S_ISCHR,
# S_ISFIFO, S_ISSOCK); the checks below make each kind with the system's own calls.

needs_posix = pytest.mark.skipif(os.name != "posix", reason="FIFOs, sockets and /dev are POSIX")


@needs_posix
@pytest.mark.parametrize("device", ["/dev/null", "/dev/full"])
def test_a_character_device_is_refused_and_left_a_device(device):
    if not os.path.exists(device):
        pytest.skip(f"{device} is absent here")
    with pytest.raises(UsageError, match=f"{device}: is a character device, not a regular file; .* give the path"):
        write_atomic(device, b"x")
    assert stat.S_ISCHR(os.stat(device).st_mode)


@needs_posix
def test_a_fifo_is_refused_and_left_a_fifo(tmp_path):
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    with pytest.raises(UsageError, match=r"pipe: is a FIFO \(named pipe\), not a regular file"):
        write_atomic(fifo, "text")
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["pipe"]  # no temporary file either


@needs_posix
def test_a_socket_is_refused(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # a short relative name: socket paths are limited to about 100 bytes
    sock = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    try:
        sock.bind("s.sock")
        with pytest.raises(UsageError, match="s.sock: is a socket, not a regular file"):
            write_atomic("s.sock", b"x")
        assert stat.S_ISSOCK(os.lstat("s.sock").st_mode)
    finally:
        sock.close()


@needs_posix
def test_a_symlink_to_a_regular_file_is_written_through(tmp_path):
    # the documented choice: the file the link points to is replaced, the link stays a link
    real = tmp_path / "sub" / "real.yaml"
    real.parent.mkdir()
    real.write_text("old", encoding="utf-8")
    link = tmp_path / "link.yaml"
    link.symlink_to(real)
    assert check_target(link) == str(real)
    write_atomic(link, "new")
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert real.read_text(encoding="utf-8") == "new"
    assert sorted(p.name for p in real.parent.iterdir()) == ["real.yaml"]  # temporary beside the real file, gone


@needs_posix
def test_a_dangling_symlink_or_one_to_a_device_is_refused(tmp_path):
    dangling = tmp_path / "nowhere.pdf"
    dangling.symlink_to(tmp_path / "missing" / "x.pdf")
    with pytest.raises(UsageError, match="is a symbolic link to .*x.pdf, which does not exist"):
        write_atomic(dangling, b"x")
    assert not (tmp_path / "missing").exists()
    to_device = tmp_path / "null.pdf"
    to_device.symlink_to("/dev/null")
    with pytest.raises(UsageError, match="is a character device .through the symbolic link to /dev/null."):
        write_atomic(to_device, b"x")
    assert to_device.is_symlink() and stat.S_ISCHR(os.stat(to_device).st_mode)


def test_check_target_refuses_stdout_empty_and_a_file_as_folder(tmp_path):
    with pytest.raises(UsageError, match="cannot go to standard output"):
        check_target("-")
    with pytest.raises(UsageError, match="the output path is empty"):
        check_target("")
    (tmp_path / "plain").write_text("x")
    with pytest.raises(UsageError, match="cannot use this output path|does not exist"):
        check_target(tmp_path / "plain" / "out.pdf")  # a file where a folder should be


# --- several outputs as one act ----------------------------------------------------------------------


def test_write_all_writes_every_file(tmp_path):
    a, b = tmp_path / "d.pdf", tmp_path / "d.csv"
    write_all([(a, b"%PDF"), (b, "designator\n")])
    assert a.read_bytes() == b"%PDF" and b.read_text(encoding="utf-8") == "designator\n"
    assert _leftovers(tmp_path) == []


@pytest.mark.parametrize("second", ["input", "folder", "missing_folder", "fifo"])
def test_a_bad_second_target_leaves_the_first_untouched(tmp_path, second):
    if second == "fifo" and os.name != "posix":
        pytest.skip("FIFOs are POSIX")
    src = tmp_path / "meter.yaml"
    src.write_text("title: keep\n", encoding="utf-8")
    first = tmp_path / "out.pdf"
    first.write_bytes(b"old pdf")
    bad = {"input": src, "folder": tmp_path, "missing_folder": tmp_path / "no" / "x.csv",
           "fifo": tmp_path / "pipe"}[second]
    if second == "fifo":
        os.mkfifo(bad)
    before = sorted(p.name for p in tmp_path.iterdir())
    with pytest.raises(UsageError):
        write_all([(first, b"new pdf"), (bad, "table")], protect=[src])
    assert first.read_bytes() == b"old pdf" and src.read_text(encoding="utf-8") == "title: keep\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == before


def test_a_write_that_fails_on_the_second_file_leaves_every_old_file(tmp_path, monkeypatch):
    a, b = tmp_path / "a.pdf", tmp_path / "a.csv"
    a.write_text("old a")
    b.write_text("old b")
    calls = []
    real_fsync = os.fsync

    def fsync(fd):  # the first temporary file flushes, the second finds the disk full
        calls.append(fd)
        if len(calls) == 2:
            raise OSError(28, "No space left on device")
        real_fsync(fd)

    monkeypatch.setattr(fsio.os, "fsync", fsync)
    with pytest.raises(UsageError, match="a.csv: cannot write the file .No space left on device."):
        write_all([(a, "new a"), (b, "new b")])
    assert (a.read_text(), b.read_text()) == ("old a", "old b")
    assert _leftovers(tmp_path) == []


def test_outputs_must_be_distinct_also_through_links(tmp_path):
    with pytest.raises(UsageError, match="x.pdf is named for two outputs"):
        check_targets([tmp_path / "x.pdf", tmp_path / "x.pdf"])
    (tmp_path / "sub").mkdir()
    with pytest.raises(UsageError, match="are the same file"):
        check_targets([tmp_path / "x.pdf", tmp_path / "sub" / ".." / "x.pdf"])
    real = tmp_path / "r.csv"
    real.write_text("x")
    if os.name == "posix":
        (tmp_path / "l.csv").symlink_to(real)
        with pytest.raises(UsageError, match="are the same file"):
            write_all([(real, "a"), (tmp_path / "l.csv", "b")])
    os.link(real, tmp_path / "h.csv")
    with pytest.raises(UsageError, match="are the same file"):
        write_all([(real, "a"), (tmp_path / "h.csv", "b")])
    assert real.read_text() == "x"


# --- standard output ---------------------------------------------------------------------------------


def test_emit_dash_goes_to_stdout_and_writes_no_file(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert emit("-", "network: {}\n") is False
    assert capsys.readouterr().out == "network: {}\n"
    assert list(tmp_path.iterdir()) == []
    assert emit("./-", "a file named dash\n") is True
    assert (tmp_path / "-").read_text() == "a file named dash\n"


def test_only_one_output_may_be_stdout_and_only_where_allowed(tmp_path):
    assert check_targets(["-", tmp_path / "a.yaml"], stdout=True) == ["-", str(tmp_path / "a.yaml")]
    with pytest.raises(UsageError, match="only one output can go to standard output"):
        check_targets(["-", "-"], stdout=True)
    with pytest.raises(UsageError, match="cannot go to standard output"):
        write_atomic("-", b"x")
