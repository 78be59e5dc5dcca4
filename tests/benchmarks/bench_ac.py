"""AC ranges: the check with AC ranges against the same project's DC ranges alone, and the AC deck against ngspice.

Usage::

    python tests/benchmarks/bench_ac.py [--repeat 3] [--builds 20] [--quick] [--no-deck]

1. ``check``: ``planner.accuracy.check_project`` of ``projects/service_multimeter.yaml``
   (7 DC and 5 AC positions) and of the same file without its ``ac_voltage`` and
   ``ac_current`` sections (the DC ranges alone), in one process, medians over the
   repetitions; then the same as whole processes (``python -m planner check``). The
   target of the speed brief is a ratio of at most 2.
2. ``deck``: the mean movement current over one cycle of a sine, for ``--builds``
   Monte Carlo builds x 4 amplitudes on the 2.5 V~ bridge and the 10 mA~ current range of
   ``tests/test_ac_spice.py``'s networks: the planner (one batched call per position,
   the adaptive cycle rule) against ngspice's ``.tran`` (one deck per build and
   amplitude, 4000 steps per cycle, ``reltol=1e-6``: the loosest settings that keep the
   agreement within 1e-5), with the largest relative difference. Target: planner at
   least 20 x faster. Skipped without ngspice.

Prints a table and the machine's load; writes nothing.
"""

from __future__ import annotations

import argparse
import math
import os
import re
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from planner.accuracy import check_project, draw_factors, parameters  # noqa: E402
from planner.design import build  # noqa: E402
from planner.engine import Engine  # noqa: E402
from planner.project import loads  # noqa: E402

EXAMPLE = ROOT / "projects" / "service_multimeter.yaml"
#: Steps per cycle and options of the ngspice transient at 1e-5 agreement.
STEPS = 4000
TRAN_OPTIONS = "reltol=1e-6 abstol=1e-14 vntol=1e-9 itl1=500 itl2=200"
#: The options of ``tests/test_ac_spice.py``, for the few decks ngspice gives up on at the loose ones.
TIGHT_OPTIONS = "reltol=1e-9 abstol=1e-15 vntol=1e-12 itl1=500 itl2=200"


def dc_only(text: str) -> str:
    """The project file without its AC sections (the DC ranges alone)."""
    out, skip = [], False
    for line in text.splitlines():
        if re.match(r"^(ac_voltage|ac_current):", line):
            skip = True
            continue
        if skip and (line.startswith(" ") or not line.strip()):
            continue
        skip = False
        out.append(line)
    return "\n".join(out) + "\n"


def time_check(text: str, repeat: int, samples: int | None) -> tuple[float, int]:
    design = build(loads(text, str(EXAMPLE)))
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        check_project(design, samples=samples)
        times.append(time.perf_counter() - t0)
    return statistics.median(times), len(design.net.positions)


def time_process(path: Path, repeat: int) -> float:
    """Median wall time of ``planner check PATH --json`` as a whole process [s]."""
    return time_processes([path], repeat)[0]["wall_s"]


def time_processes(paths, repeat: int) -> list[dict]:
    """``planner check PATH --json`` of each path as whole processes, the paths taking turns in each
    repetition: per path the median wall and CPU (user + system of the process and its children) [s],
    and the per-repetition times. The CPU time says what the wall time hides on a loaded machine."""
    import resource

    env = dict(os.environ, PYTHONPATH=str(ROOT))
    walls = [[] for _ in paths]
    cpus = [[] for _ in paths]
    for _ in range(repeat):
        for k, path in enumerate(paths):
            before = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "planner", "check", str(path), "--json"], env=env,
                           capture_output=True, check=False)
            walls[k].append(time.perf_counter() - t0)
            after = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpus[k].append((after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime))
    return [{"wall_s": statistics.median(w), "cpu_s": statistics.median(c), "walls_s": w, "cpus_s": c}
            for w, c in zip(walls, cpus)]


def tran_mean(eng, position, rms, kind, factors) -> float:
    """ngspice's cycle mean at the loose options; where ngspice gives up there, at the tests' options."""
    try:
        return _tran_mean(eng, position, rms, kind, factors, TRAN_OPTIONS)
    except (OSError, ValueError, IndexError):
        return _tran_mean(eng, position, rms, kind, factors, TIGHT_OPTIONS)


def _tran_mean(eng, position, rms, kind, factors, options) -> float:
    import spice

    deck = spice.netlist(eng, position, kind, [-1.0, 1.0], factors=factors, options=options)
    src = "Vstim" if kind == "voltage" else "Istim"
    period = 0.02
    step = period / STEPS
    lines = []
    for line in deck.splitlines():
        if line.startswith(f"{src} "):
            line = line.split(" DC ")[0] + f" SIN(0 {float(math.sqrt(2.0) * rms)!r} 50)"
        elif line.startswith(".dc "):
            line = f".tran {step!r} {period!r} 0 {step!r}"
        lines.append(line)
    with tempfile.TemporaryDirectory(prefix="planner-bench-") as tmp:
        path = os.path.join(tmp, "deck.cir")
        Path(path).write_text("\n".join(lines))
        run = subprocess.run([spice.NGSPICE or "ngspice", "-b", path], cwd=tmp, capture_output=True, text=True,
                             timeout=600)
        out = os.path.join(tmp, spice.OUT_FILE)
        if not os.path.exists(out):
            raise OSError(f"ngspice wrote no data:\n{run.stdout[-600:]}\n{run.stderr[-600:]}")
        data = np.loadtxt(out, skiprows=1)
    col = 1 + next(j for j, c in enumerate(spice.columns(deck)) if "movement" in c.split("="))
    return float(np.trapezoid(data[:, col], data[:, 0]) / (data[-1, 0] - data[0, 0]))


def deck(builds: int):
    from test_ac_spice import PROJECT

    out = []
    for body, pos, fs in (("ac_voltage: {arrangement: chain, full_scales: [2.5 V, 10 V], rectifier: bridge, "
                           "diode: d1}\n", "2.5 V~", 2.5),
                          ("ac_current: {arrangement: separate, full_scales: [10 mA], rectifier: bridge, "
                           "diode: d1}\n", "10 mA~", 0.01)):
        eng = Engine(build(loads(PROJECT.replace("leakage_resistance: 1 Gohm",
                                                 "leakage_resistance: 1 Gohm, saturation_current_spread: 20 %")
                                 + body, "deck.yaml")))
        kind = eng.design.net.position(pos).kind.source
        fac = draw_factors(parameters(eng), builds, np.random.default_rng(5))
        amps = fs * np.array([0.25, 0.5, 0.75, 1.0])
        t0 = time.perf_counter()
        ours = eng.operate(pos, amps, factors=fac).movement_current_a  # (builds, 4)
        t_ours = time.perf_counter() - t0
        t0 = time.perf_counter()
        theirs = np.array([[tran_mean(eng, pos, a, kind, {k: float(v[b]) for k, v in fac.items()}) for a in amps]
                           for b in range(builds)])
        t_spice = time.perf_counter() - t0
        # relative to max(|I|, 1e-3 I_fs), as the DC oracle tests (a current range at a quarter of its full scale
        # moves the pointer by 0.1 %: a relative figure there says nothing about the reading)
        floor = 1e-3 * eng.spec.movement.i_fs_a
        out.append((pos, builds * len(amps), t_ours, t_spice,
                    float(np.max(np.abs(ours - theirs) / np.maximum(np.abs(theirs), floor)))))
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--builds", type=int, default=20, help="Monte Carlo builds of the deck comparison")
    ap.add_argument("--samples", type=int, default=None, help="Monte Carlo builds of the check (project's default)")
    ap.add_argument("--quick", action="store_true", help="one repetition, 3 builds")
    ap.add_argument("--no-deck", action="store_true", help="the check alone (no ngspice comparison)")
    args = ap.parse_args(argv)
    rep = 1 if args.quick else args.repeat
    builds = 3 if args.quick else args.builds
    print(f"load average at the start: {os.getloadavg()}")
    text = EXAMPLE.read_text()
    t_ac, n_ac = time_check(text, rep, args.samples)
    t_dc, n_dc = time_check(dc_only(text), rep, args.samples)
    print(f"check in process: {n_ac} positions (with AC) {t_ac:.3f} s, {n_dc} DC positions alone {t_dc:.3f} s, "
          f"ratio {t_ac / t_dc:.1f} (target <= 2)")
    with tempfile.TemporaryDirectory() as tmp:
        dc_path = Path(tmp) / "dc_only.yaml"
        dc_path.write_text(dc_only(text))
        ac, dc = time_processes([EXAMPLE, dc_path], rep)
    print(f"check as a process, in turns: with AC {ac['wall_s']:.2f} s, DC alone {dc['wall_s']:.2f} s, "
          f"ratio {ac['wall_s'] / dc['wall_s']:.2f}; CPU {ac['cpu_s']:.2f} s / {dc['cpu_s']:.2f} s, "
          f"ratio {ac['cpu_s'] / dc['cpu_s']:.2f}")
    import shutil

    if args.no_deck:
        print(f"load average at the end: {os.getloadavg()}")
        return 0
    if shutil.which("ngspice") is None:
        print("ngspice not found: the deck comparison is skipped")
        return 0
    for pos, cases, t_ours, t_spice, worst in deck(builds):
        print(f"deck {pos}: {cases} cycles; planner {t_ours:.3f} s, ngspice .tran {t_spice:.1f} s, "
              f"ratio {t_spice / t_ours:.0f} x (target >= 20); largest difference {worst:.1e} of max(|I|, 1e-3 I_fs)")
    print(f"load average at the end: {os.getloadavg()}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
