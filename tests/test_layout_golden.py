"""The JSON of every command on every example is byte-identical to its recording.

A check for the reshaping of the package into one Design per command, parts and
range kinds (no behaviour was to change): the recordings in
``tests/reference/layout/`` are the outputs of the commands before the reshaping,
made on the same machine kind. It lasts while that step lasts: a change that is
meant to alter results (a new verdict rule, a new analysis) records them anew
or retires this file, saying so in its commit.
"""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import pytest

from planner.cli import main

ROOT = Path(__file__).resolve().parent.parent
REF = ROOT / "tests" / "reference" / "layout"

#: (recording, command line), run from the repository's root.
CASES = [
    (f"{p}.{c}", [c, f"projects/{p}.yaml", "--json"])
    for p in ("pocket_voltmeter", "bench_ammeter", "bench_multimeter")
    for c in ("check", "faults", "protect")
] + [
    ("bench_multimeter.size", ["size", "projects/bench_multimeter.yaml", "--json"]),
    ("pocket_voltmeter.apply", ["apply", "projects/pocket_voltmeter.yaml", "--position", "0.5 V", "--volts", "230",
                                "--waveform", "sine", "--source-impedance", "0.5", "--json"]),
    ("bench_multimeter.apply_v", ["apply", "projects/bench_multimeter.yaml", "--position", "10 V", "--volts", "230",
                                  "--waveform", "sine", "--json"]),
    ("bench_multimeter.apply_a", ["apply", "projects/bench_multimeter.yaml", "--position", "1 A", "--amps", "0.5",
                                  "--json"]),
]


@pytest.mark.slow
@pytest.mark.parametrize("name,argv", CASES, ids=[c[0] for c in CASES])
def test_json_unchanged(name, argv, monkeypatch, capsys):
    monkeypatch.chdir(ROOT)
    main(argv)
    out = capsys.readouterr().out
    want = gzip.decompress((REF / f"{name}.json.gz").read_bytes()).decode("utf-8")
    if out != want:  # show the first field that differs, not 700 kB of text
        a, b = json.loads(out), json.loads(want)
        assert a == b
    assert out == want
