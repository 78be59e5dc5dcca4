"""Determinism: the same project and seed give the same bytes from separate processes.

``planner check --json`` and ``planner faults --json`` run twice each on the largest
example (sized from its ranges, clamps, fuse, faults), in separate processes with
different hash seeds (``PYTHONHASHSEED``, so that an iteration over a set or a dict of
strings that leaks into the output would show). A different Monte Carlo seed must
change the Monte Carlo numbers and nothing that does not depend on it.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PROJECT = ROOT / "projects" / "bench_multimeter.yaml"
SAMPLES = "300"  # enough builds for distinct statistics, few enough to keep this quick

RUNS = {
    "check_a": (["check", PROJECT, "--json", "--samples", SAMPLES], "1"),
    "check_b": (["check", PROJECT, "--json", "--samples", SAMPLES], "2"),
    "check_seed": (["check", PROJECT, "--json", "--samples", SAMPLES, "--seed", "99"], "3"),
    "faults_a": (["faults", PROJECT, "--json"], "4"),
    "faults_b": (["faults", PROJECT, "--json"], "5"),
}


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    base = tmp_path_factory.mktemp("determinism")

    def one(item):
        name, (args, hash_seed) = item
        env = dict(os.environ, PYTHONHASHSEED=hash_seed)
        env.pop("PLANNER_DEBUG", None)
        env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
        cwd = base / name
        cwd.mkdir()
        r = subprocess.run([sys.executable, "-m", "planner.cli", *map(str, args)], cwd=cwd, env=env,
                           capture_output=True, text=True, timeout=300)
        assert r.returncode in (0, 1), (name, r.stderr[-2000:])
        assert list(cwd.iterdir()) == []
        return name, r.stdout

    with ThreadPoolExecutor(max_workers=2) as pool:
        return dict(pool.map(one, RUNS.items()))


def test_check_json_is_identical_across_processes(outputs):
    assert outputs["check_a"] == outputs["check_b"]
    data = json.loads(outputs["check_a"])
    assert data["seed"] == 1 and data["samples"] == int(SAMPLES)  # the file's seed, the asked samples


def test_faults_json_is_identical_across_processes(outputs):
    assert outputs["faults_a"] == outputs["faults_b"]
    assert json.loads(outputs["faults_a"])["cases"]


def _without_monte_carlo(obj):
    """The result with every field that depends on the Monte Carlo draws removed."""
    mc_keys = {"monte_carlo", "yield_fraction", "yield", "seed", "build_yield_fraction", "intrinsic_monte_carlo_pct"}
    if isinstance(obj, dict):
        return {k: _without_monte_carlo(v) for k, v in obj.items()
                if k not in mc_keys and "yield" not in k and "monte_carlo" not in k}
    if isinstance(obj, list):
        return [_without_monte_carlo(v) for v in obj]
    return obj


def test_another_seed_changes_the_monte_carlo_numbers_only(outputs):
    a, b = json.loads(outputs["check_a"]), json.loads(outputs["check_seed"])
    assert b["seed"] == 99
    changed = [p["name"] for p, q in zip(a["positions"], b["positions"]) if p["monte_carlo"] != q["monte_carlo"]]
    assert len(changed) == len(a["positions"])  # every position's builds differ
    for p, q in zip(a["positions"], b["positions"]):
        # a different sample of the same distribution: the means stay close (300 builds)
        ma, mb = p["monte_carlo"]["full_scale_error_pct"], q["monte_carlo"]["full_scale_error_pct"]
        assert ma["mean"] != mb["mean"]
        assert abs(ma["mean"] - mb["mean"]) < 0.5 * p["class_index"]
    assert _without_monte_carlo(a) == _without_monte_carlo(b)
