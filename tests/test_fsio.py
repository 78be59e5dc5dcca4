"""Tests of planner.fsio.write_atomic."""

from __future__ import annotations

import os

import pytest

from planner import fsio
from planner.errors import UsageError
from planner.fsio import write_atomic


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
    with pytest.raises(UsageError, match="cannot write the file"):
        write_atomic(tmp_path / "no" / "such" / "out.pdf", b"x")


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
