"""Helpers of the tests that start processes: whether a process of this machine has ended."""

from __future__ import annotations

import subprocess
import sys
import time


def running(pid: int) -> bool:
    """Whether the process ``pid`` still runs (a zombie, ended but not yet reaped, does not)."""
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(")", 1)[1].split()[0] not in ("Z", "X")
    except FileNotFoundError:
        return False


def orphan_ends(code: str, seconds: float = 20.0) -> bool:
    """Run ``code`` in a new Python whose last act prints a child's pid and exits without waiting for
    it; True when that child has ended within ``seconds`` (it did not wait for ever on its dead parent)."""
    out = subprocess.run([sys.executable, "-c", code], stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
                         text=True, timeout=60, check=True)
    child = int(out.stdout.split()[0])
    deadline = time.monotonic() + seconds
    while running(child) and time.monotonic() < deadline:
        time.sleep(0.05)
    return not running(child)
