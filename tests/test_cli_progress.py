"""Progress on a terminal: every command that reports progress writes it to stderr and still answers.

The progress line is written only when stderr is a terminal (``planner.cli._progress``), which a
test run's captured stderr never is; here stderr is a stand-in that says it is one.
"""

from __future__ import annotations

import io
import sys
from pathlib import Path

import pytest

from planner import cli

ROOT = Path(__file__).resolve().parent.parent
VOLTMETER = ROOT / "projects" / "pocket_voltmeter.yaml"
OHMMETER = ROOT / "projects" / "pocket_ohmmeter.yaml"


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.mark.parametrize("args, says", [
    (["check", str(VOLTMETER), "--samples", "20", "--json"], "Monte Carlo"),
    (["faults", str(OHMMETER), "--json"], "faults: "),
    (["dossier", str(VOLTMETER), "--samples", "20"], "dossier: layout"),
], ids=["check", "faults", "dossier"])
def test_progress_on_a_terminal(args, says, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    if args[0] == "dossier":
        args = args + ["-o", str(tmp_path / "out.pdf")]
    term = Terminal()
    monkeypatch.setattr(sys, "stderr", term)
    code = cli.main(args)
    err = term.getvalue()
    assert code in (0, 1), err  # an answer (1: a requirement not met), not an internal error (3)
    assert "internal error" not in err and "Traceback" not in err
    assert says in err
    assert err.endswith("\r\x1b[K") or "wrote" in err  # the progress line is cleared at the end
