"""Side by side: the planner's solver against ngspice on the same circuits (a script, not a test).

Usage: ``python tests/benchmarks/run.py [--repeat R] [--quick] [--out PATH] [--no-scaling]``

One run, on one machine, with the two simulators taking turns inside each repetition
(so that other load on the machine falls on both), medians over the repetitions:

* **Deck A, the meter deck**: a six-range chain multiplier (0.5 V to 1 kV) in front of
  a 50 uA / 2 kohm movement, a silicon clamp pair across the movement and another at a
  tap 2 kohm above it; eight resistors drawn uniformly within +/-0.25 % in 1000
  Monte Carlo builds (seed 1), each build swept over 201 points from -1000 V to
  +1000 V on the 10 V range (both clamp pairs conduct hard over most of the sweep):
  201 000 circuits.
* **Deck B, the largest example**: ``projects/bench_multimeter.yaml`` through
  :func:`planner.design.build` (29 resistors, six diodes with two-diode
  stacks, a fuse, ten positions); the project's own toleranced parameters in 100
  builds (seed 1); 201 points per position over +/-1000 V (voltage ranges) or
  +/-5 A (current ranges): 201 000 circuits.
* **Decks V and O, the newer parts** (``tests/benchmarks/parts.py``): a varistor at the
  input of a voltmeter and a battery-driven ohms range with a clamp pair, against ngspice
  on solver-level decks (``tests/spice_flat.py``), 1000 builds of 201 points each.
* **Deck P, a tripped PTC** (``tests/benchmarks/parts.py``): a voltmeter whose input PTC
  has tripped and holds a constant 0.5 W (10 kohm and a 2 kohm / 50 uA movement behind
  it), a DC sweep of 201 points from 200 V to 1000 V in 100 builds (R1 drawn within
  +/-0.25 %): the planner settles every point at constant power
  (:func:`planner.stress.tripped.settle_all` on the network with the PTC's stand-in,
  each build's engine made before the timer starts); ngspice solves the PTC as a
  behavioural current source of constant power, on the stable (high-voltage) root.
  The settling stops at 1e-9 in ln R, so the agreement is about 1e-9 here.
* **The stack**: ``planner faults`` of ``tests/reliability/ideal_stack_50.yaml`` (a clamp of
  50 ideal junctions per direction at a tap, 1000 V maximum input) as a whole process, with
  the same project at one junction per direction beside it; the target is under 2 s.
* **The commands**: ``planner dossier``, ``faults`` and ``protect`` of the largest example as
  whole processes against ``planner check`` of it, and the dossier's peak memory
  (``tests/benchmarks/commands.py``; targets 1.5 x, 2 x, 2 x and 300 MiB).
* **AC ranges** (``tests/benchmarks/bench_ac.py``): ``planner check`` of
  ``projects/service_multimeter.yaml`` against the same file without its AC sections, as whole
  processes and in process (target 2 x), and the AC deck (cycle means of Monte Carlo builds
  of a 2.5 V~ bridge and a 10 mA~ range) against ngspice's ``.tran`` of the same sine
  (targets 20 x, 1e-5).
* **The check**: ``planner check projects/bench_multimeter.yaml`` (every position, 2000
  builds, the temperature points, linearity tables, worst case) as a whole process,
  against ngspice solving the same operating points: the engine calls of the check
  are recorded in-process and written as decks.

Both simulators use the same element equations (``tests/spice.py``: ngspice's own
diode model with the contract's reverse law added as a behavioural source, N and XTI
matched to the SI constants, gmin of 1e-15 S taken out of each R_p). ngspice runs in
one batch process per measurement, each circuit read once and re-run per build with
``alter`` (its fastest way here), tolerances tightened (``reltol=1e-9 abstol=1e-15
vntol=1e-12``) so that it agrees to about 1e-9; its time is the wall time of that
process. On the example's two-diode stacks ngspice often does not converge with those:
an untimed calibration run tries a few builds of every deck and falls back to tolerances
near ngspice's defaults (``reltol=1e-6``), or leaves a deck out that fails even so; the
check's decks run at the looser tolerances throughout (at the tight ones ngspice spends
minutes failing). What ngspice solved how, and what it could not solve, is reported;
what it could not solve is not in its time. The planner's time is in-process for the
decks (the engine calls and the movement currents, from parameters to answers) and the
whole ``planner check`` process for the check. Agreement is measured on the movement
current of every circuit, relative to max(|I|, 1e-3 I_fs) (the zero crossing of a
sweep divides by nothing otherwise); the script exits 1 if it is worse than 1e-6 on
the circuits ngspice solved at its tight tolerances.

Also measured: ngspice with its native diode model (no reverse correction; faster, but
it then agrees only to about 1e-7), the scaling of the check with the builds (500,
2000, 8000), and the cost of ``planner --help``.

Writes ``tests/benchmarks/results.json`` (or ``--out``); prints a table. Without
ngspice on the PATH (Debian package ``ngspice``) it says so and times the planner
alone.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))

import spice  # noqa: E402  (tests/spice.py: the deck writer and runner)

sys.path.insert(0, str(ROOT / "tests" / "benchmarks"))
import parts  # noqa: E402  (the newer parts' decks and the ideal-junction stack)
import commands  # noqa: E402  (whole commands against planner check)
import bench_ac  # noqa: E402  (the check with AC ranges against its DC ranges alone; the AC deck against .tran)

EXAMPLE = ROOT / "projects" / "bench_multimeter.yaml"
#: ngspice options of the benchmark: tight enough for agreement to about 1e-9.
SPICE_OPTIONS = "reltol=1e-9 abstol=1e-15 vntol=1e-12 itl1=500 itl2=200"
#: Where ngspice does not converge with those (the example's two-diode stacks), near its defaults.
LOOSE_OPTIONS = "reltol=1e-6 abstol=1e-12 vntol=1e-6 itl1=1000 itl2=1000"
#: ngspice's gmin [S]: with none, the example's two-diode stacks do not converge through 0 V;
#: the decks write each R_p less this, so the leakage stays the model's.
SPICE_GMIN = 1e-15
#: Agreement below which the run fails.
FAIL_ABOVE = 1e-6
#: Floor of the relative difference, a fraction of the full-scale current.
FLOOR = 1e-3


# --- the decks ------------------------------------------------------------------------------------


def meter_deck_spec():
    """Deck A: a six-range chain multiplier with clamp pairs across the movement and at a tap."""
    from planner import model

    def res(name, a, b, ohm):
        return model.Resistor(name, a, b, ohm, tolerance=0.0025, tempco_per_k=25e-6)

    ranges = [("0.5 V", 0.5), ("2.5 V", 2.5), ("10 V", 10.0), ("50 V", 50.0), ("250 V", 250.0), ("1 kV", 1000.0)]
    els = [res("R1", "tap", "m_plus", 2e3), res("R2", "v1", "tap", 6e3), res("R3", "v2", "v1", 40e3),
           res("R4", "v3", "v2", 150e3), res("R5", "v4", "v3", 800e3), res("R6", "v5", "v4", 4e6),
           res("R7", "v5x", "v5", 7.5e6), res("R8", "v6", "v5x", 7.5e6),
           model.MovementElement("M1", "m_plus", "com"),
           model.Diode("D1", "m_plus", "com", "si"), model.Diode("D2", "com", "m_plus", "si"),
           model.Diode("D3", "tap", "com", "si"), model.Diode("D4", "com", "tap", "si")]
    els += [model.Contact(f"S{k + 1}", "plus", f"v{k + 1}", (name,)) for k, (name, _) in enumerate(ranges)]
    positions = [model.Position(name, "voltage", fs, ("plus", "com")) for name, fs in ranges]
    si = model.DiodeModel("si", 1e-9, n=1.8, r_s_ohm=0.8, r_p_ohm=2e9)
    return model.Spec(title="meter deck", movement=model.Movement(i_fs_a=50e-6, r_coil_ohm=2e3, class_index=1.5),
                      parts=model.Parts(diodes={"si": si}),
                      ambient=model.Ambient(t_ref_k=296.15, t_min_k=288.15, t_max_k=304.15),
                      network=model.NetworkSpec(tuple(els), tuple(positions)))


def deck_a(builds: int):
    """Engine and jobs of deck A: [(position, stimuli, factors)]."""
    from planner.design import build
    from planner.engine import Engine

    eng = Engine(build(meter_deck_spec()))
    rng = np.random.default_rng(1)
    factors = {f"R{k}": 1.0 + 0.0025 * rng.uniform(-1.0, 1.0, builds) for k in range(1, 9)}
    return eng, [("10 V", np.linspace(-1000.0, 1000.0, 201), factors)]


def deck_b(builds: int):
    """Engine and jobs of deck B: every position of the largest example, the project's tolerances."""
    from planner.accuracy import draw_factors, parameters
    from planner.design import build
    from planner.engine import Engine
    from planner.project import load

    eng = Engine(build(load(str(EXAMPLE))))
    factors = draw_factors(parameters(eng), builds, np.random.default_rng(1))
    jobs = []
    for p in eng.positions:
        sweep = np.linspace(-1000.0, 1000.0, 201) if p.measures == "voltage" else np.linspace(-5.0, 5.0, 201)
        jobs.append((p.name, sweep, factors))
    return eng, jobs


def solve_jobs(eng, jobs):
    """The planner: movement currents of every job, shapes (builds, points)."""
    return [np.asarray(eng.operate(pos, s, factors=f).movement_current_a) for pos, s, f in jobs]


def spice_jobs(eng, jobs, native=False):
    """ngspice deck makers (by options) and variants of the same jobs."""
    makers, variants = [], []
    for pos, s, f in jobs:
        n = len(next(iter(f.values())))
        makers.append(lambda opts, pos=pos, s=s: spice.netlist(
            eng, pos, None, s, nodes=[], options=opts, exact_reverse=not native, reverse_constants=True,
            gmin=SPICE_GMIN))
        variants.append([{k: float(v[b]) for k, v in f.items()} for b in range(n)])
    return makers, variants


class SpiceSide:
    """ngspice on a set of decks: tight tolerances where they converge, else near its defaults.

    A calibration run (not timed) solves a few variants of every deck (``probes``,
    evenly spread, first and last included) with :data:`SPICE_OPTIONS`; a deck where
    one of them fails is tried with :data:`LOOSE_OPTIONS` (with ``tight=False``, every
    deck starts there), and a deck that fails with those too is left out (counted,
    not timed). The timed run solves the rest; a variant that fails there is counted
    as failed.
    """

    def __init__(self, makers, variants, timeout=3600.0, tight=True, probes=3):
        self.tight = [m(SPICE_OPTIONS) for m in makers]
        self.loose = [m(LOOSE_OPTIONS) for m in makers]
        self.variants = [v if v is not None else [{}] for v in variants]
        self.timeout = timeout
        probes = [[v[int(round(x))] for x in np.linspace(0, len(v) - 1, min(probes, len(v)))]
                  for v in self.variants]
        self.mode = ["skip"] * len(makers)
        todo = list(range(len(makers)))
        tries = (("tight", self.tight), ("loose", self.loose)) if tight else (("loose", self.loose),)
        for name, decks in tries:
            if not todo:
                break
            res = spice.run_many([decks[i] for i in todo], variants=[probes[i] for i in todo], partial=True,
                                 timeout=timeout)
            for i, rr in zip(todo, res):
                if all(r is not None for r in rr):
                    self.mode[i] = name
            todo = [i for i in todo if self.mode[i] == "skip"]

    def run(self):
        """Seconds, movement currents per deck (variants x points, NaN where unsolved), tags per variant."""
        use = [i for i, m in enumerate(self.mode) if m != "skip"]
        decks = [self.tight[i] if self.mode[i] == "tight" else self.loose[i] for i in use]
        stats = {}
        res = spice.run_many(decks, variants=[self.variants[i] for i in use], stats=stats, partial=True,
                             timeout=self.timeout)
        got = dict(zip(use, res))
        currents, tags = [], []
        for i, deck in enumerate(self.tight):
            n = spice._points(deck)
            rr = got.get(i, [None] * len(self.variants[i]))
            j = movement_column(deck)
            currents.append(np.array([r[:, j] if r is not None else np.full(n, np.nan) for r in rr]))
            tags.append([self.mode[i] if r is not None else "failed" for r in rr])
        return stats["seconds"], currents, tags


def agreement(ours, theirs, tags, i_fs):
    """Relative differences of every circuit, split by how ngspice solved it."""
    out = {"tight": [], "loose": []}
    failed = 0
    for a, b, t in zip(ours, theirs, tags):
        a = np.atleast_2d(a)
        for k, tag in enumerate(t):
            if tag == "failed":
                failed += a.shape[1]
                continue
            out[tag].append(np.abs(a[k] - b[k]) / np.maximum(np.abs(a[k]), FLOOR * i_fs))
    d = {key: np.concatenate(v) if v else np.zeros(0) for key, v in out.items()}
    summary = {"circuits_tight": int(d["tight"].size), "circuits_loose": int(d["loose"].size),
               "circuits_failed": failed}
    for key in ("tight", "loose"):
        summary[f"max_rel_diff_{key}"] = float(d[key].max()) if d[key].size else None
        summary[f"median_rel_diff_{key}"] = float(np.median(d[key])) if d[key].size else None
    return summary, d["tight"]


def movement_column(deck) -> int:
    for j, names in enumerate(spice.columns(deck)):
        if "movement" in names.split("="):
            return j
    raise ValueError("deck writes no movement current")


# --- the check's own operating points ----------------------------------------------------------------


def record_check(samples: int):
    """Run check_project in-process and record every engine call: [(eng, state, kind, t, r_src, stim, factors, i_m)]."""
    from planner import engine as engine_mod
    from planner.accuracy import check_project
    from planner.project import load

    calls = []
    original = engine_mod.Engine.operate

    def recording(self, state, stimulus, *, kind=None, temperature_k=None, r_source_ohm=0.0, factors=None):
        op = original(self, state, stimulus, kind=kind, temperature_k=temperature_k, r_source_ohm=r_source_ohm,
                      factors=factors)
        calls.append((self, state, kind, temperature_k, r_source_ohm, np.array(stimulus, dtype=float),
                      None if factors is None else {k: np.array(v, dtype=float) for k, v in factors.items()},
                      np.array(op.movement_current_a)))
        return op

    engine_mod.Engine.operate = recording
    try:
        t0 = time.perf_counter()
        check_project(load(str(EXAMPLE)), samples=samples)
        elapsed = time.perf_counter() - t0
    finally:
        engine_mod.Engine.operate = original
    return calls, elapsed


def check_decks(calls):
    """ngspice deck makers and variants for the recorded calls, and the planner's currents in the same order."""
    makers, variants, ours = [], [], []

    def maker(eng, state, kind, stim, t, r_src, fac):
        return lambda opts: spice.netlist(eng, state, kind, stim, t, r_src, nodes=[], options=opts,
                                          reverse_constants=True, gmin=SPICE_GMIN, factors=fac)

    for eng, state, kind, t_k, r_src, stim, factors, i_m in calls:
        stim = np.atleast_1d(stim)
        if stim.ndim == 2 and stim.shape[0] > 1 and not np.all(stim == stim[:1]):
            # per-set stimuli (each parameter set its own applied values): one deck per set
            temps = np.broadcast_to(np.atleast_1d(eng.spec.ambient.t_ref_k if t_k is None else
                                                  np.asarray(t_k, dtype=float)), (stim.shape[0],))
            r_max = float(np.max(r_src))
            for row in range(stim.shape[0]):
                fac = None if factors is None else {k: float(np.broadcast_to(v, (stim.shape[0],))[row])
                                                    for k, v in factors.items()}
                makers.append(maker(eng, state, kind, stim[row], float(temps[row]), r_max, fac))
                variants.append(None)
                ours.append(i_m[row][None, :])
            continue
        stim = stim[0] if stim.ndim == 2 else stim
        temps = np.atleast_1d(eng.spec.ambient.t_ref_k if t_k is None else np.asarray(t_k, dtype=float))
        r_src = float(np.max(r_src))
        if temps.size > 1:  # one deck per temperature
            for row, t in enumerate(temps):
                fac = None if factors is None else {k: float(v[row]) for k, v in factors.items()}
                makers.append(maker(eng, state, kind, stim, float(t), r_src, fac))
                variants.append(None)
                ours.append(i_m[row][None, :])
            continue
        makers.append(maker(eng, state, kind, stim, float(temps[0]), r_src, None))
        if factors is None:
            variants.append(None)
        else:
            n = len(next(iter(factors.values())))
            variants.append([{k: float(v[b]) for k, v in factors.items()} for b in range(n)])
        ours.append(i_m)
    return makers, variants, ours


# --- timing helpers -------------------------------------------------------------------------------------


def timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def process_seconds(cmd) -> float:
    return commands.run_seconds(cmd, ROOT)


def planner_exe():
    here = Path(sys.executable).parent / "planner"
    return [str(here)] if here.exists() else [sys.executable, "-c", "import sys; from planner.cli import main; "
                                                               "sys.exit(main())"]


def med(xs):
    return float(statistics.median(xs)) if xs else None


def fit_scaling(builds, seconds):
    """Least squares: log-log slope, and the line t = a + b N."""
    x = np.log(np.asarray(builds, dtype=float))
    y = np.log(np.asarray(seconds, dtype=float))
    exponent = float(np.polyfit(x, y, 1)[0])
    b, a = np.polyfit(np.asarray(builds, dtype=float), np.asarray(seconds, dtype=float), 1)
    return exponent, float(a), float(b)


# --- main ----------------------------------------------------------------------------------------------


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3, help="repetitions (medians are reported), default 3")
    ap.add_argument("--quick", action="store_true", help="one repetition, small decks: a smoke run")
    ap.add_argument("--out", default=str(ROOT / "tests" / "benchmarks" / "results.json"))
    ap.add_argument("--no-scaling", action="store_true", help="skip the 500/2000/8000-build scaling runs")
    args = ap.parse_args(argv)
    repeat = 1 if args.quick else max(1, args.repeat)
    builds_a, builds_b, samples = (100, 10, 200) if args.quick else (1000, 100, 2000)
    have_spice = spice.available()
    load_before = os.getloadavg()
    print(f"machine: {os.cpu_count()} cores, load {load_before[0]:.2f} {load_before[1]:.2f} {load_before[2]:.2f}; "
          f"python {platform.python_version()}, numpy {np.__version__}")
    if not have_spice:
        print("ngspice is not installed (Debian package 'ngspice'): timing the planner alone, no ratios")
    else:
        spice.ngspice_k_over_q()  # calibrate once, outside the timings

    results = {"machine": {"cores": os.cpu_count(), "load_before": list(load_before),
                           "python": platform.python_version(), "numpy": np.__version__,
                           "ngspice": have_spice, "spice_options": SPICE_OPTIONS,
                           "spice_loose_options": LOOSE_OPTIONS, "spice_gmin": SPICE_GMIN},
               "repeat": repeat, "quick": bool(args.quick)}
    tight_diffs = []

    # decks A and B, and the newer parts' decks V, O and P ---------------------------------------------
    decks = []
    for key, build, builds in (("deck_a", deck_a, builds_a), ("deck_b", deck_b, builds_b)):
        eng, jobs = build(builds)
        decks.append((key, (lambda eng=eng, jobs=jobs: solve_jobs(eng, jobs)),
                      (lambda native=False, eng=eng, jobs=jobs: spice_jobs(eng, jobs, native=native)),
                      eng.spec.movement.i_fs_a, sum(len(s) * len(next(iter(f.values()))) for _, s, f in jobs)))
    # deck P settles each point by iteration on an engine of its own per build: a tenth of the builds
    for key, build, builds in (("deck_v", parts.deck_v, builds_a), ("deck_o", parts.deck_o, builds_a),
                               ("deck_p", parts.deck_p, max(builds_a // 10, 2))):
        fd = build(builds)
        decks.append((key, fd.solve, (lambda native=False, fd=fd: fd.spice()), fd.i_fs, fd.circuits))
    for key, solve_fn, spice_fn, i_fs, circuits in decks:
        solve_fn()  # warm the engine's compiled states and numpy
        entry = {"circuits": circuits, "planner_s": [], "ngspice_s": [], "ngspice_native_s": [], "ratio": []}
        if have_spice:
            print(f"{key}: calibrating ngspice ...", flush=True)
            side = SpiceSide(*spice_fn())
            native = SpiceSide(*spice_fn(native=True)) if key == "deck_a" else None
            entry["ngspice_decks"] = {m: side.mode.count(m) for m in ("tight", "loose", "skip")}
        for rep in range(repeat):
            print(f"{key}: repetition {rep + 1} of {repeat}", flush=True)
            t_p, ours = timed(solve_fn)
            entry["planner_s"].append(t_p)
            if have_spice:
                t_s, theirs, tags = side.run()
                entry["ngspice_s"].append(t_s)
                entry["ratio"].append(t_s / t_p)
                if native is not None:
                    t_n, theirs_n, tags_n = native.run()
                    entry["ngspice_native_s"].append(t_n)
        entry["planner_median_s"] = med(entry["planner_s"])
        entry["planner_circuits_per_s"] = circuits / entry["planner_median_s"]
        if have_spice:
            summary, d = agreement(ours, theirs, tags, i_fs)
            tight_diffs.append(d)
            entry.update(summary)
            entry.update({
                "ngspice_median_s": med(entry["ngspice_s"]),
                "ngspice_circuits_per_s": circuits / med(entry["ngspice_s"]),
                "throughput_ratio": med(entry["ratio"]),
                "max_rel_diff": summary["max_rel_diff_tight"], "median_rel_diff": summary["median_rel_diff_tight"],
            })
            if native is not None:
                summary_n, _ = agreement(ours, theirs_n, tags_n, i_fs)
                entry.update({"ngspice_native_median_s": med(entry["ngspice_native_s"]),
                              "ngspice_native_circuits_per_s": circuits / med(entry["ngspice_native_s"]),
                              "throughput_ratio_vs_native": med(entry["ngspice_native_s"]) / entry["planner_median_s"],
                              "native": summary_n})
        results[key] = entry

    # the check: whole planner process against ngspice on the same operating points ---------------------
    print("check: recording the engine calls ...", flush=True)
    check = {"samples": samples, "planner_process_s": [], "ngspice_s": [], "ratio": []}
    calls, t_in = record_check(samples)
    check["operating_points"] = int(sum(c[7].size for c in calls))
    check["engine_calls"] = len(calls)
    check["planner_in_process_s"] = t_in
    cmd = planner_exe() + ["check", str(EXAMPLE), "--samples", str(samples), "--json", "--quiet"]
    if have_spice:
        makers, c_variants, c_ours = check_decks(calls)
        print(f"check: calibrating ngspice on {len(makers)} decks ...", flush=True)
        # ngspice at tight tolerances fails slowly on many of this example's operating points
        # (each failure costs it its gmin and source stepping); for the check it runs near its
        # defaults everywhere (faster for it), and a deck with a failing probe is left out
        c_side = SpiceSide(makers, c_variants, tight=False, probes=5)
        check["ngspice_decks"] = {m: c_side.mode.count(m) for m in ("tight", "loose", "skip")}
    for rep in range(repeat):
        print(f"check: repetition {rep + 1} of {repeat}", flush=True)
        t_proc = process_seconds(cmd)
        check["planner_process_s"].append(t_proc)
        if have_spice:
            t_s, c_theirs, c_tags = c_side.run()
            check["ngspice_s"].append(t_s)
            check["ratio"].append(t_proc / t_s)
    check["planner_process_median_s"] = med(check["planner_process_s"])
    if have_spice:
        summary, d = agreement(c_ours, c_theirs, c_tags, calls[0][0].spec.movement.i_fs_a)
        tight_diffs.append(d)
        check.update(summary)
        which = "tight" if summary["circuits_tight"] else "loose"
        check.update({"ngspice_median_s": med(check["ngspice_s"]), "check_time_over_ngspice_raw": med(check["ratio"]),
                      "max_rel_diff": summary[f"max_rel_diff_{which}"],
                      "median_rel_diff": summary[f"median_rel_diff_{which}"], "rel_diff_tolerances": which})
    results["check"] = check

    # scaling with the builds ------------------------------------------------------------------------
    if not args.no_scaling:
        from planner.accuracy import check_project
        from planner.project import load

        spec = load(str(EXAMPLE))
        counts = [100, 400, 1600] if args.quick else [500, 2000, 8000]
        seconds = []
        for n in counts:
            ts = [timed(lambda: check_project(spec, samples=n))[0] for _ in range(repeat)]
            seconds.append(med(ts))
        exponent, a, b = fit_scaling(counts, seconds)
        from planner.design import build

        positions = len(build(spec).net.positions)
        results["scaling"] = {"builds": counts, "check_in_process_s": seconds, "positions": positions,
                              "scaling_exponent": exponent, "fit_intercept_s": a, "fit_per_build_s": b,
                              "fit_per_build_position_s": b / max(positions, 1)}

    # AC ranges: the check with them against the same project's DC ranges alone; the AC deck against .tran ----
    results["ac"] = measure_ac(repeat, 3 if args.quick else 10, have_spice)

    # the 50-junction ideal stack: planner faults as a whole process, beside one junction ---------------
    cmd_50, cmd_1 = parts.stack_commands(planner_exe())
    t50, t1 = [], []
    for _ in range(max(3, repeat)):
        t50.append(process_seconds(cmd_50))
        t1.append(process_seconds(cmd_1))
    results["stack"] = {"faults_50_s": t50, "faults_1_s": t1, "faults_50_median_s": med(t50),
                        "faults_1_median_s": med(t1), "target_s": 2.0, "met": med(t50) < 2.0}

    # whole commands against planner check (dossier, faults, protect), the dossier's memory -----------
    results["commands"] = commands.measure(planner_exe(), EXAMPLE, ROOT, repeat=max(3, repeat))

    # planner --help ------------------------------------------------------------------------------------
    help_s = [process_seconds(planner_exe() + ["--help"]) for _ in range(max(3, repeat))]
    results["planner_help_s"] = med(help_s)

    results["machine"]["load_after"] = list(os.getloadavg())
    worst = 0.0
    if have_spice:
        d = np.concatenate(tight_diffs)
        worst = float(d.max()) if d.size else 0.0
        results.update({
            "throughput_ratio_vs_ngspice": results["deck_a"]["throughput_ratio"],
            "throughput_ratio_vs_ngspice_deck_b": results["deck_b"]["throughput_ratio"],
            "max_rel_diff": float(d.max()), "median_rel_diff": float(np.median(d)),
            "check_time_over_ngspice_raw": check["check_time_over_ngspice_raw"],
        })
    else:
        results.update({"throughput_ratio_vs_ngspice": None, "max_rel_diff": None, "median_rel_diff": None,
                        "check_time_over_ngspice_raw": None})
    results["scaling_exponent"] = results.get("scaling", {}).get("scaling_exponent")

    from planner.fsio import write_atomic

    write_atomic(args.out, json.dumps(results, indent=2) + "\n")
    print(table(results))
    print(f"wrote {args.out}")
    if have_spice and not worst <= FAIL_ABOVE:
        print(f"FAIL: agreement {worst:.2e} is worse than {FAIL_ABOVE:g}")
        return 1
    return 0


def measure_ac(repeat: int, builds: int, have_spice: bool) -> dict:
    """``planner check`` of the AC example against its DC ranges alone (whole processes and in process), and the
    AC deck (cycle means of Monte Carlo builds) against ngspice's ``.tran`` (``tests/benchmarks/bench_ac.py``)."""
    import tempfile

    text = bench_ac.EXAMPLE.read_text()
    print("ac: check with and without the AC ranges ...", flush=True)
    t_ac, _ = bench_ac.time_check(text, repeat, None)
    t_dc, _ = bench_ac.time_check(bench_ac.dc_only(text), repeat, None)
    with tempfile.TemporaryDirectory() as tmp:
        dc_path = Path(tmp) / "dc_only.yaml"
        dc_path.write_text(bench_ac.dc_only(text))
        ac, dc = bench_ac.time_processes([bench_ac.EXAMPLE, dc_path], repeat)  # in turns
    p_ac, p_dc = ac["wall_s"], dc["wall_s"]
    out = {"project": bench_ac.EXAMPLE.name, "check_process_s": p_ac, "check_dc_only_process_s": p_dc,
           "process_ratio": p_ac / p_dc, "check_process_cpu_s": ac["cpu_s"],
           "check_dc_only_process_cpu_s": dc["cpu_s"], "process_cpu_ratio": ac["cpu_s"] / dc["cpu_s"],
           "check_in_process_s": t_ac, "check_dc_only_in_process_s": t_dc,
           "in_process_ratio": t_ac / t_dc, "target_ratio": 2.0}
    if have_spice:
        print(f"ac: the AC deck, {builds} builds x 4 amplitudes, against ngspice .tran ...", flush=True)
        out["deck"] = [{"position": pos, "cycles": cases, "planner_s": t_o, "ngspice_s": t_s, "ratio": t_s / t_o,
                        "max_diff": worst} for pos, cases, t_o, t_s, worst in bench_ac.deck(builds)]
    return out


def _ac_lines(a: dict) -> list[str]:
    lines = [f"planner check with AC ranges / DC ranges alone ({a['project']}): processes "
             f"{a['check_process_s']:.2f} s / {a['check_dc_only_process_s']:.2f} s = {a['process_ratio']:.1f} x "
             f"(CPU {a.get('check_process_cpu_s', float('nan')):.2f} s / "
             f"{a.get('check_dc_only_process_cpu_s', float('nan')):.2f} s = {a.get('process_cpu_ratio', float('nan')):.1f} x); "
             f"in process {a['check_in_process_s']:.2f} s / {a['check_dc_only_in_process_s']:.3f} s = "
             f"{a['in_process_ratio']:.1f} x (target <= {a['target_ratio']:g} x)"]
    for d in a.get("deck", []):
        lines.append(f"AC deck {d['position']}: {d['cycles']} cycles, planner {d['planner_s']:.3f} s, ngspice .tran "
                     f"{d['ngspice_s']:.1f} s: {d['ratio']:.0f} x (target >= 20 x); largest difference "
                     f"{d['max_diff']:.1e} of max(|I|, 1e-3 I_fs) (target 1e-5)")
    return lines


def _fmt(x, unit="", digits=3):
    if x is None:
        return "-"
    if isinstance(x, float) and (abs(x) >= 1e5 or (x != 0 and abs(x) < 1e-3)):
        return f"{x:.{digits - 1}e}{unit}"
    return f"{x:,.{digits}g}{unit}"


def _solved(e) -> str:
    if "circuits_tight" not in e:
        return ""
    parts = [f"{e['circuits_tight']} at tight tolerances"]
    if e["circuits_loose"]:
        parts.append(f"{e['circuits_loose']} only at ngspice's looser ({_fmt(e['max_rel_diff_loose'])} max diff)")
    if e["circuits_failed"]:
        parts.append(f"{e['circuits_failed']} not at all (left out of its time)")
    return "  ngspice solved " + ", ".join(parts)


def table(r) -> str:
    """The summary table."""
    lines = ["", f"{'':34}{'planner':>14}{'ngspice':>14}{'ratio':>9}{'max diff':>11}{'median diff':>13}"]
    for key, title in (("deck_a", "deck A: meter deck, 201 points"), ("deck_b", "deck B: bench_multimeter"),
                       ("deck_v", "deck V: varistor at the input"), ("deck_o", "deck O: ohms range, battery"),
                       ("deck_p", "deck P: tripped PTC, constant P")):
        e = r[key]
        lines.append(f"{title:<34}{_fmt(e['planner_circuits_per_s']) + '/s':>14}"
                     f"{_fmt(e.get('ngspice_circuits_per_s')) + '/s':>14}{_fmt(e.get('throughput_ratio')) + 'x':>9}"
                     f"{_fmt(e.get('max_rel_diff')):>11}{_fmt(e.get('median_rel_diff')):>13}")
        if _solved(e):
            lines.append(_solved(e))
        if e.get("ngspice_native_circuits_per_s"):
            n = e["native"]
            lines.append(f"{'  ngspice, its native diode model':<34}{'':>14}"
                         f"{_fmt(e['ngspice_native_circuits_per_s']) + '/s':>14}"
                         f"{_fmt(e['throughput_ratio_vs_native']) + 'x':>9}{_fmt(n['max_rel_diff_tight']):>11}"
                         f"{_fmt(n['median_rel_diff_tight']):>13}")
    c = r["check"]
    lines.append(f"{'planner check (process) vs ngspice':<34}{_fmt(c['planner_process_median_s'], ' s'):>14}"
                 f"{_fmt(c.get('ngspice_median_s'), ' s'):>14}{_fmt(c.get('check_time_over_ngspice_raw')):>9}"
                 f"{_fmt(c.get('max_rel_diff')):>11}{_fmt(c.get('median_rel_diff')):>13}")
    lines.append(f"  ({c['operating_points']} operating points in {c['engine_calls']} engine calls, "
                 f"{c['samples']} builds; ratio = planner time / ngspice time)")
    if _solved(c):
        lines.append(_solved(c))
    if "scaling" in r:
        s = r["scaling"]
        lines.append(f"check scaling: builds {s['builds']} -> {', '.join(f'{t:.2f} s' for t in s['check_in_process_s'])}"
                     f"; log-log slope {s['scaling_exponent']:.2f}; {s['fit_per_build_position_s'] * 1e6:.2f} us "
                     f"per build x position + {s['fit_intercept_s']:.2f} s")
    st = r["stack"]
    lines.append(f"planner faults, 50-junction ideal stack: {st['faults_50_median_s']:.2f} s (one junction: "
                 f"{st['faults_1_median_s']:.2f} s; target < {st['target_s']:.0f} s: {'met' if st['met'] else 'NOT met'})")
    if "ac" in r:
        lines.extend(_ac_lines(r["ac"]))
    if "commands" in r:
        lines.extend(commands.table_lines(r["commands"]))
    lines.append(f"planner --help: {r['planner_help_s'] * 1e3:.0f} ms; load {r['machine']['load_before'][0]:.2f} "
                 f"before, {r['machine']['load_after'][0]:.2f} after")
    return "\n".join(lines)


if __name__ == "__main__":
    sys.exit(main())
