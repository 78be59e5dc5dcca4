"""Cycle rules against 512 equally spaced phases: points and time per Monte Carlo build (a script, not a test).

Usage: ``python tests/benchmarks/bench_cycle.py [--builds N] [--repeat R] [--reference-builds M] [--json PATH]``

For each rectifier network of ``tests/rectifiers.py`` (a 2.5 V bridge, a 2.5 V
half-wave with its second diode, a 250 V bridge; R1 sized so that a full-scale
sine reads full scale) and ``N`` Monte Carlo builds at the reference temperature
(the project's own tolerances: R1 0.5 %, coil 1 %, diode I_s +/-50 %, seed 1):

* **DC, 10 points**: the DC check's cost per build, ten applied values (the
  linearity points of :mod:`planner.accuracy`) on the same network.
* **full scale** (one sine at full-scale rms):

  - ``512 equal``: 512 equally spaced phases, as ``Stimulus.samples`` solves a sine today;
  - ``adaptive``: :func:`planner.cycle.adapt` built on the nominal parts at 0, 23 and
    40 degC, the batch solved on its nodes, verified on the four extreme builds
    (:func:`planner.cycle.extreme_rows`) and solved again if the check refined it.

* **scale table** (ten sines at 10 % .. 100 % of full scale and a square, a
  triangle and a flat-topped mains wave at full-scale rms: 13 stimuli):

  - ``512 equal``: 13 x 512 phases (measured on a quarter of the builds, per build);
  - ``adaptive x 13``: one adaptive rule per stimulus;
  - ``shared``: :func:`planner.cycle.shared.adapt_shared`, one node set for all 13.

Each time includes building and verifying the rule; the figure is the median
over ``R`` repetitions, per build. Agreement: the largest |error| of the mean
movement current against 4096 equally spaced phases (solved as their distinct
values, :func:`planner.cycle.equal_rule`) over the first ``M`` builds, as a
fraction of I_fs. The ratios in the last column are to the DC row of the same
network, in the same run.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT))

import rectifiers as rx  # noqa: E402
from planner.accuracy import LINEARITY_FRACTIONS, draw_factors, parameters  # noqa: E402
from planner.cycle import FlatTopMains, Sine, Square, Triangle, adapt, equal_rule, extreme_rows  # noqa: E402
from planner.cycle.shared import Target, adapt_shared  # noqa: E402

CASES = (("bridge", 2.5), ("half-wave", 2.5), ("bridge", 250.0))
TOL = 1e-6  # of full scale


def _targets(fs):
    s = Sine()
    out = [Target(s, s.peak_of(f * fs), f"sine {f:.0%}") for f in LINEARITY_FRACTIONS]
    out += [Target(sh, sh.peak_of(fs), sh.name) for sh in (Square(), Triangle(), FlatTopMains())]
    return out


def _timed(fn, repeat):
    times, out = [], None
    for _ in range(max(1, repeat)):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def bench_case(kind: str, fs: float, builds: int = 2000, repeat: int = 3, reference_builds: int = 100) -> dict:
    """Points, time per build and agreement of each rule on one network; see the module notes."""
    eng = rx.sized(kind, fs)
    fac = draw_factors(parameters(eng), builds, np.random.default_rng(1))
    temps = np.full(builds, rx.T_REF)
    every = rx.evaluator(eng, fac, temps)
    nominal = rx.evaluator(eng, temperatures=[rx.T_COLD, rx.T_REF, rx.T_HOT])
    tol = TOL * rx.I_FS
    targets = _targets(fs)
    ref_rows = np.arange(min(reference_builds, builds))
    ref_eval = rx.evaluator(eng, fac, temps, rows=ref_rows)
    refs = []
    for t in targets:
        r = equal_rule(t.shape, 4096)
        refs.append(r.mean(ref_eval(r.points(t.peak))))
    refs = np.array(refs).T  # (M, 13)
    out = {"network": kind, "full_scale_v": fs, "builds": builds, "rows": []}

    def row(label, points, seconds, per, err):
        out["rows"].append({"method": label, "points_per_build": points, "seconds": seconds,
                            "us_per_build": seconds / per * 1e6, "max_error_fs": err})

    # DC: ten points per build
    applied = LINEARITY_FRACTIONS * fs
    sec, _ = _timed(lambda: every(applied), repeat)
    row("DC, 10 points", 10, sec, builds, None)

    fs_t = targets[9]
    # full scale, 512 equal phases
    x512 = fs_t.peak * Sine().samples(512)
    sec, q = _timed(lambda: every(x512), repeat)
    err = np.max(np.abs(np.mean(q[ref_rows], axis=1) - refs[:, 9])) / rx.I_FS
    row("full scale: 512 equal", 512, sec, builds, err)

    def adaptive_fs():
        rule = adapt(Sine(), nominal, fs_t.peak, tol)
        q = every(rule.points(fs_t.peak))
        rule = rule.verify(rx.evaluator(eng, fac, temps, rows=extreme_rows(rule.mean(q), 2)))
        if rule.refined:
            q = every(rule.points(fs_t.peak))
        return rule, rule.mean(q)

    sec, (rule, mean) = _timed(adaptive_fs, repeat)
    err = np.max(np.abs(mean[ref_rows] - refs[:, 9])) / rx.I_FS
    row("full scale: adaptive", rule.size, sec, builds, err)

    # the scale table: 13 stimuli
    quarter = max(1, builds // 4)
    ev_q = rx.evaluator(eng, fac, temps, rows=np.arange(quarter))

    def equal_table():
        return np.array([np.mean(ev_q(t.peak * t.shape.samples(512)), axis=1) for t in targets]).T

    sec, mean = _timed(equal_table, repeat)
    n = min(quarter, ref_rows.size)
    err = np.max(np.abs(mean[:n] - refs[:n])) / rx.I_FS
    row("table: 512 equal x 13", 13 * 512, sec, quarter, err)

    def adaptive_table():
        means, size = [], 0
        for t in targets:
            rule = adapt(t.shape, nominal, t.peak, tol)
            q = every(rule.points(t.peak))
            if hasattr(rule, "verify"):
                rule = rule.verify(rx.evaluator(eng, fac, temps, rows=extreme_rows(rule.mean(q), 2)))
                if rule.refined:
                    q = every(rule.points(t.peak))
            means.append(rule.mean(q))
            size += rule.size
        return size, np.array(means).T

    sec, (size, mean) = _timed(adaptive_table, repeat)
    err = np.max(np.abs(mean[ref_rows] - refs)) / rx.I_FS
    row("table: adaptive x 13", size, sec, builds, err)

    def shared_table():
        rule = adapt_shared(targets, nominal, tol)
        q = every(rule.points())
        mean = rule.mean(q)
        rows = np.unique(np.concatenate([extreme_rows(mean[:, j], 1) for j in range(len(targets))]))
        rule = rule.verify(rx.evaluator(eng, fac, temps, rows=rows))
        if rule.refined:
            mean = rule.mean(every(rule.points()))
        return rule, mean

    sec, (rule, mean) = _timed(shared_table, repeat)
    err = np.max(np.abs(mean[ref_rows] - refs)) / rx.I_FS
    row("table: shared", rule.size, sec, builds, err)

    dc = out["rows"][0]["us_per_build"]
    for r in out["rows"]:
        r["ratio_to_dc"] = r["us_per_build"] / dc
    return out


def run(builds: int = 2000, repeat: int = 3, reference_builds: int = 100) -> dict:
    """Every case of :data:`CASES`; the entry point for ``tests/benchmarks/run.py``."""
    import os

    return {"load_average": list(os.getloadavg()), "tolerance_fs": TOL,
            "cases": [bench_case(k, fs, builds, repeat, reference_builds) for k, fs in CASES]}


def format_table(res: dict) -> str:
    lines = [f"cycle rules, tolerance {res['tolerance_fs']:g} of full scale; load average "
             f"{', '.join(f'{v:.2f}' for v in res['load_average'])}",
             "| network | method | points / build | us / build | x DC | max error / I_fs |",
             "| --- | --- | --- | --- | --- | --- |"]
    for c in res["cases"]:
        name = f"{c['network']} {c['full_scale_v']:g} V ({c['builds']} builds)"
        for r in c["rows"]:
            err = "" if r["max_error_fs"] is None else f"{r['max_error_fs']:.1e}"
            lines.append(f"| {name} | {r['method']} | {r['points_per_build']} | {r['us_per_build']:.0f} | "
                         f"{r['ratio_to_dc']:.1f} | {err} |")
    return "\n".join(lines)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--builds", type=int, default=2000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--reference-builds", type=int, default=100)
    ap.add_argument("--json", help="write the results here")
    args = ap.parse_args()
    res = run(args.builds, args.repeat, args.reference_builds)
    print(format_table(res))
    if args.json:
        from planner.fsio import write_atomic

        write_atomic(args.json, json.dumps(res, indent=1) + "\n")


if __name__ == "__main__":
    main()
