"""Peak memory of a large accuracy check (a script, not a test).

Usage: ``python tests/benchmarks/bench_memory.py [--samples N] [--positions K]``

Writes a project with ``K`` switch positions (default 20: half voltage ranges on a
chain multiplier, half current ranges on an Ayrton ring, a clamp pair across the
movement, a fuse on the current ranges) into a temporary folder, runs
``planner check --json --samples N`` on it (default 10 000 builds) in a child process,
and prints the child's peak resident memory (``resource.getrusage(RUSAGE_CHILDREN)``,
``ru_maxrss``) against the 2 GB target, with the wall time. Nothing is written
outside the temporary folder.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
TARGET_BYTES = 2 * 1024**3  # 2 GB (binary: 2 GiB)

VOLTAGE_RANGES = ["0.25 V", "0.5 V", "1 V", "2.5 V", "5 V", "10 V", "25 V", "50 V", "100 V",
                  "250 V", "500 V", "1000 V"]
CURRENT_RANGES = ["100 uA", "250 uA", "500 uA", "1 mA", "2.5 mA", "5 mA", "10 mA", "25 mA", "50 mA", "100 mA",
                  "250 mA", "500 mA", "1 A"]


def project_text(positions: int) -> str:
    """A project with ``positions`` ranges (voltage and current about evenly)."""
    n_v = min(len(VOLTAGE_RANGES), (positions + 1) // 2)
    n_i = positions - n_v
    if not 1 <= n_i <= len(CURRENT_RANGES):
        raise SystemExit(f"--positions must be from 2 to {len(VOLTAGE_RANGES) + len(CURRENT_RANGES)}")
    return f"""\
title: Memory benchmark, {positions}-position test set   # an invented instrument
movement:
  full_scale_current: 50 uA
  coil_resistance: 2 kohm
  class: 1.5
ambient: {{reference: 23 degC, min: 10 degC, max: 35 degC}}
parts:
  resistors: {{series: E96, tolerance: 0.5 %, tempco: 50 ppm/K, power: 0.25 W, max_voltage: 250 V,
              ratings: [{{power: 0.25 W, max_voltage: 250 V}}, {{power: 1 W, max_voltage: 500 V}},
                        {{power: 2 W, max_voltage: 1000 V}}]}}
  diodes:
    si: {{saturation_current: 5 nA, emission: 1.9, series_resistance: 0.5 ohm, leakage_resistance: 1 Gohm,
          max_current: 200 mA, surge_current: 1 A, max_power: 500 mW}}
  fuses:
    f1: {{cold_resistance: 0.1 ohm, rated_current: 1.6 A, breaking_capacity: 10 kA, i2t: 1.2 A^2*s,
          max_voltage: 1000 V}}
voltage:
  arrangement: chain
  full_scales: [{", ".join(VOLTAGE_RANGES[:n_v])}]
current:
  arrangement: ring
  full_scales: [{", ".join(CURRENT_RANGES[:n_i])}]
  swamp: 6 kohm
  fuse: f1
clamps:
  - {{across: movement, forward: si, reverse: si}}
"""


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=10_000)
    ap.add_argument("--positions", type=int, default=20)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="planner-bench-memory-") as tmp:
        project = Path(tmp) / "bench_memory.yaml"
        project.write_text(project_text(args.positions), encoding="utf-8")
        env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
        before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
        t0 = time.perf_counter()
        r = subprocess.run([sys.executable, "-m", "planner.cli", "check", str(project), "--json", "--quiet",
                            "--samples", str(args.samples)], cwd=tmp, env=env, capture_output=True, text=True)
        wall = time.perf_counter() - t0
        peak_kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss  # Linux: kilobytes
    if r.returncode not in (0, 1):
        print(r.stderr.strip(), file=sys.stderr)
        raise SystemExit(f"planner check failed with exit code {r.returncode}")
    if peak_kb <= before:
        print("note: an earlier child of this process used more memory; the figure is an upper bound")
    peak = peak_kb * (1 if sys.platform == "darwin" else 1024)  # macOS reports bytes
    result = json.loads(r.stdout)
    print(f"project: {len(result['positions'])} positions, {args.samples} Monte Carlo builds, "
          f"{result['operating_points']:,} operating points in {result['solver_calls']} batched solves")
    print(f"wall time: {wall:.1f} s")
    print(f"peak resident memory: {peak / 1024**2:,.0f} MiB = {peak / TARGET_BYTES:.1%} of the 2 GiB target "
          f"({'within' if peak <= TARGET_BYTES else 'OVER'} target)")


if __name__ == "__main__":
    main()
