"""Safe outputs: every file goes through write_atomic, inputs are never overwritten, and a
write that is interrupted (even by SIGKILL) leaves the old file or none.

Policy for temporary files (see :mod:`planner.fsio`): they are hidden and name their
writer, ``.<name>.<pid>-<12 hex>.tmp`` beside the target. A writer removes its own on
every failure it lives through. A writer killed outright leaves its temporary file; the
next write to the same target removes it once no process with that id runs. Files that
do not follow the pattern, and temporary files of live writers, are never touched.
"""

from __future__ import annotations

import ast
import os
import re
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from planner import cli
from planner.fsio import write_atomic

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "planner"
MULTIMETER = ROOT / "projects" / "bench_multimeter.yaml"
TEMP = re.compile(r"\.(?P<base>.+)\.(?P<pid>\d+)-[0-9a-f]{12}\.tmp")

# --- every output goes through write_atomic -------------------------------------------------------

_WRITE_METHODS = {"write_text", "write_bytes", "tofile", "savefig", "save"}
_FS_CALLS = {("os", "rename"), ("os", "replace"), ("os", "remove"), ("os", "unlink"), ("os", "truncate"),
             ("os", "makedirs"), ("os", "mkdir"), ("shutil", "copy"), ("shutil", "copyfile"), ("shutil", "copy2"),
             ("shutil", "move"), ("shutil", "rmtree"), ("tempfile", "mkstemp"), ("tempfile", "NamedTemporaryFile")}


def _writes(tree: ast.AST):
    """Calls in a module that could write a file: (line, description)."""
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        f = node.func
        if isinstance(f, ast.Name) and f.id == "open":
            mode = node.args[1] if len(node.args) > 1 else next(
                (k.value for k in node.keywords if k.arg == "mode"), None)
            if mode is None:
                continue  # the default mode reads
            text = mode.value if isinstance(mode, ast.Constant) and isinstance(mode.value, str) else None
            if text is None or set(text) & set("wax+"):  # a mode worked out at run time counts too
                yield node.lineno, f"open(..., {text!r})"
        elif isinstance(f, ast.Attribute):
            if f.attr in _WRITE_METHODS:
                yield node.lineno, f".{f.attr}(...)"
            if isinstance(f.value, ast.Name) and (f.value.id, f.attr) in _FS_CALLS:
                yield node.lineno, f"{f.value.id}.{f.attr}(...)"
            if isinstance(f.value, ast.Name) and f.value.id == "os" and f.attr == "open":
                yield node.lineno, "os.open(...)"


def test_every_file_write_in_the_package_is_in_fsio():
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        if path.name == "fsio.py" and path.parent == PACKAGE:
            continue
        for line, what in _writes(ast.parse(path.read_text(encoding="utf-8"), str(path))):
            found.append(f"{path.relative_to(ROOT)}:{line}: {what}")
    assert found == [], "file writes outside planner/fsio.py:\n" + "\n".join(found)


def test_the_scan_finds_writes():
    """The scanner above is not blind: it flags the usual ways of writing a file."""
    code = ("open('a', 'w')\nopen(p, mode='ab')\nPath('x').write_text('t')\nos.replace(a, b)\n"
            "shutil.copy(a, b)\nfig.savefig('x.png')\nopen(p)\nopen(p, 'rb')\n")
    assert [line for line, _ in _writes(ast.parse(code))] == [1, 2, 3, 4, 5, 6]


# --- inputs are never overwritten ---------------------------------------------------------------------


def _env():
    env = dict(os.environ)
    env.pop("PLANNER_DEBUG", None)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def test_size_refuses_to_write_the_network_over_its_input(tmp_path):
    project = tmp_path / "meter.yaml"
    project.write_bytes(MULTIMETER.read_bytes())
    before = (project.read_bytes(), project.stat().st_mtime_ns)
    r = subprocess.run([sys.executable, "-m", "planner.cli", "size", str(project), "--write-network", str(project)],
                       cwd=tmp_path, env=_env(), capture_output=True, text=True, timeout=60)
    assert r.returncode == 2 and r.stdout == ""
    assert r.stderr.count("\n") == 1 and "refusing to overwrite the input file" in r.stderr
    assert (project.read_bytes(), project.stat().st_mtime_ns) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["meter.yaml"]


@pytest.mark.parametrize("how", ["relative", "symlink", "hardlink"])
def test_outputs_refuse_the_input_under_other_names(how, tmp_path, monkeypatch, capsys):
    project = tmp_path / "meter.yaml"
    project.write_bytes(MULTIMETER.read_bytes())
    monkeypatch.chdir(tmp_path)
    other = {"relative": "./sub/../meter.yaml", "symlink": "link.yaml", "hardlink": "hard.yaml"}[how]
    (tmp_path / "sub").mkdir()
    if how == "symlink":
        os.symlink(project, other)
    elif how == "hardlink":
        os.link(project, other)
    before = project.read_bytes()
    for argv in (["size", str(project), "--write-network", other], ["dossier", str(project), "-o", other],
                 ["protect", str(project), "-o", other]):
        assert cli.main(argv) == 2
        err = capsys.readouterr().err
        assert "refusing to overwrite the input file" in err and err.count("\n") == 1
    assert project.read_bytes() == before


def test_write_network_replaces_an_existing_output_whole(tmp_path, monkeypatch, capsys):
    from planner.project import load
    from planner.sizing import network_yaml, size

    out = tmp_path / "sized.yaml"
    out.write_text("an old file that must go entirely\n" * 1000, encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    assert cli.main(["size", str(MULTIMETER), "--write-network", str(out)]) in (0, 1)
    spec = load(MULTIMETER)
    assert out.read_text(encoding="utf-8") == network_yaml(spec, size(spec))
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []
    load(out)  # and the written network loads again


# --- readers see the old file or the new one, never a mixture -----------------------------------------


def test_a_concurrent_reader_never_sees_a_partial_file(tmp_path):
    out = tmp_path / "report.json"
    size = 2_000_000
    versions = [bytes([c]) * size for c in b"ABCD"]
    write_atomic(out, versions[0])
    stop = threading.Event()
    seen, bad = set(), []

    def reader():
        while not stop.is_set():
            data = out.read_bytes()
            if len(data) != size or data.count(data[:1]) != size:
                bad.append((len(data), data[:1]))
            seen.add(data[:1])

    t = threading.Thread(target=reader)
    t.start()
    try:
        for k in range(24):
            write_atomic(out, versions[k % 4])
    finally:
        stop.set()
        t.join()
    assert bad == []
    assert len(seen) >= 2  # the reader did overlap the writes
    assert [p.name for p in tmp_path.iterdir()] == ["report.json"]


# --- a writer killed mid-write --------------------------------------------------------------------------

_KILLABLE = r"""
import os, sys, time
from planner import fsio
target, marker, size = sys.argv[1], sys.argv[2], int(sys.argv[3])
def stall(fd):  # the data is in the temporary file; hold here, before the rename
    with open(marker, "w") as f:
        f.write(str(os.getpid()))
    time.sleep(120)
os.fsync = stall
fsio.write_atomic(target, b"N" * size)
"""


def _start_and_kill(target: Path, tmp_path: Path, size: int = 20_000_000) -> int:
    """Run a writer that stalls after writing its temporary file, SIGKILL it; return its pid."""
    marker = tmp_path / "writer-ready"
    proc = subprocess.Popen([sys.executable, "-c", _KILLABLE, str(target), str(marker), str(size)],
                            env=_env(), cwd=tmp_path)
    try:
        deadline = time.monotonic() + 60
        while not (marker.exists() and marker.read_text()):
            assert proc.poll() is None, "the writer ended before it stalled"
            assert time.monotonic() < deadline, "the writer never reached its stall"
            time.sleep(0.02)
        temps = [p for p in target.parent.iterdir() if TEMP.fullmatch(p.name)]
        assert len(temps) == 1 and temps[0].stat().st_size == size  # caught mid-write, data on disk
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.kill()
        proc.wait(timeout=30)  # reaped: its pid is free again
    assert proc.returncode == -signal.SIGKILL
    marker.unlink()
    return proc.pid


@pytest.mark.skipif(os.name != "posix", reason="SIGKILL and pid probing are POSIX")
def test_killed_writer_leaves_the_old_file_then_the_next_write_cleans_up(tmp_path):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    target = out_dir / "faults.json"
    old = b'{"old": true}\n' * 1000
    target.write_bytes(old)
    pid = _start_and_kill(target, tmp_path)
    assert target.read_bytes() == old  # the old file, whole
    left = [p.name for p in out_dir.iterdir() if TEMP.fullmatch(p.name)]
    assert left and all(TEMP.fullmatch(n)["pid"] == str(pid) for n in left)  # the policy: it stays...
    # ...until the next write to the same target, which removes temporaries of dead writers only
    alive = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        live_tmp = out_dir / f".faults.json.{alive.pid}-{'a' * 12}.tmp"
        live_tmp.write_bytes(b"another writer's work in progress")
        keep = [out_dir / ".faults.json.tmp", out_dir / ".other.json.99999999-aaaaaaaaaaaa.tmp",
                out_dir / "faults.json.1-aaaaaaaaaaaa.tmp"]
        for p in keep:
            p.write_bytes(b"not ours")
        write_atomic(target, b'{"new": true}\n')
        assert target.read_bytes() == b'{"new": true}\n'
        names = sorted(p.name for p in out_dir.iterdir())
        assert names == sorted(["faults.json", live_tmp.name] + [p.name for p in keep])
    finally:
        alive.kill()
        alive.wait()


@pytest.mark.skipif(os.name != "posix", reason="SIGKILL is POSIX")
def test_killed_writer_of_a_new_file_leaves_no_target(tmp_path):
    target = tmp_path / "out" / "dossier.pdf"
    target.parent.mkdir()
    _start_and_kill(target, tmp_path, size=1_000_000)
    assert not target.exists()  # none: never a partial file under the target's name
    write_atomic(target, b"%PDF-1.4 whole")
    assert sorted(p.name for p in target.parent.iterdir()) == ["dossier.pdf"]
