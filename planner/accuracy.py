"""Accuracy proof per switch position: nominal, linearity, tolerance, temperature, loading.

Every figure is an error in percent of the position's full scale (the fiducial
value of IEC 60051 for a meter with zero at one end of the scale). The operating
points all come from :class:`planner.engine.Engine`; this module only chooses the
batches (stimuli, temperatures, tolerance factors), calls the engine once per
position and analysis family, and reduces the answers.

Analyses of one position (definitions are the design contract):

* **nominal and linearity** - readings at 10 %, 20 %, ..., 100 % of full scale at
  every ambient temperature point (one engine call): the nominal error is the
  100 % point at the reference temperature; the linearity tables are the rows at
  the reference and at the hottest ambient; the temperature error is the largest
  change of the 100 % point from its reference value.
* **worst case** - the full-scale error over the parts' tolerance extremes:
  every corner of the tolerance box when at most :data:`MAX_CORNER_PARAMETERS`
  parameters vary, otherwise a first-order sensitivity bound checked against a
  sample of corners and never smaller than any of them.
* **Monte Carlo** - one set of builds (every part drawn once per build, so the
  positions of one build share their parts, as in a real instrument), seeded.
* **input resistance / burden voltage / loading** - at full scale, nominal.

The budget rule: ``budget_pct = worst_case_error_pct + temperature_error_pct``.
The worst case already contains the nominal offset (it is the largest |error|
over the corners, each of which carries the offset), so the nominal error is
not added again. A position is ``within class`` when its budget is at most the
class index.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from .design import Design, as_design
from .engine import Engine
from .errors import SolveError, UsageError
from .model import ZERO_CELSIUS_K, Spec
from .parts import Parameter

#: Points of the linearity tables, fractions of full scale.
LINEARITY_FRACTIONS = np.arange(1, 11) / 10.0
#: Largest number of varied parameters whose corners are all evaluated (2**12 = 4096).
MAX_CORNER_PARAMETERS = 12
#: Most Monte Carlo builds per check (a memory cap; the same as the project file's).
MAX_SAMPLES = 200_000
#: Random corners that check the sensitivity bound (besides its two aligned corners).
VERIFY_CORNERS = 254
#: Smallest number of ambient temperature points.
MIN_TEMPERATURE_POINTS = 7
#: Percentiles reported for the Monte Carlo distributions [%].
PERCENTILES = (1.0, 5.0, 50.0, 95.0, 99.0)

BUDGET_RULE = ("budget = worst case (largest |error| at full scale over the tolerance corners, nominal "
               "offset included) + temperature (largest |change| of the full-scale reading over the "
               "ambient range); within class when budget <= class index")


def parameters(engine: Engine) -> list[Parameter]:
    """Every toleranced parameter of the engine's network, in network order.

    Resistors with a tolerance above zero, the coil resistance
    (``Movement.tolerance``), the full-scale current (``Movement.i_fs_tolerance``)
    and the saturation current of each diode whose model has ``i_s_spread``.

    Parameters
    ----------
    engine : Engine

    Returns
    -------
    list of Parameter
    """
    spec = engine.spec
    mov = spec.movement
    out = [q for e in engine.net.elements for q in e.parameters(spec)]
    if mov.i_fs_tolerance > 0:
        out.append(Parameter("i_fs", "I_fs", "i_fs", None, float(mov.i_fs_tolerance)))
    return out


def current_carrying(engine: Engine, state) -> set:
    """Designators that can carry current in a switch state.

    Notes
    -----
    The compiled state holds only the biconnected block of the graph that contains
    the source (see :func:`planner.network.compile_state`): any other block hangs on
    it by a single node and, being passive, carries no current. Such parts (the
    unused end of a multiplier chain, a shunt ring switched out on the voltage
    ranges) cannot change the reading, so the tolerance analyses leave them out.

    References
    ----------
    J. Hopcroft and R. Tarjan, "Algorithm 447: efficient algorithms for graph
    manipulation", Communications of the ACM 16(6), 372-378, 1973 (biconnected
    components, as networkx implements them).
    """
    st = engine.state(state)
    circuit = engine.circuit(st, st.position.kind.source, False)
    return {br.element for br in circuit.branches} | set(circuit.diodes)


def _error_pct(reading, full_scale):
    return (np.asarray(reading) - full_scale) / full_scale * 100.0


def _stats(x: np.ndarray) -> dict:
    """Mean, standard deviation, extremes and percentiles of a sample."""
    out = {"mean": float(np.mean(x)), "std": float(np.std(x, ddof=1)) if x.size > 1 else 0.0,
           "min": float(np.min(x)), "max": float(np.max(x))}
    for p, v in zip(PERCENTILES, np.percentile(x, PERCENTILES)):
        out[f"p{p:g}"] = float(v)
    return out


def draw_factors(params: list[Parameter], samples: int, rng: np.random.Generator) -> dict:
    """Tolerance draws for Monte Carlo builds: one factor array of shape (samples,) per parameter.

    Parameters
    ----------
    params : list of Parameter
    samples : int
        Number of builds.
    rng : numpy.random.Generator
        Seeded generator (``numpy.random.default_rng(seed)``).

    Returns
    -------
    dict
        ``{key: factors}``; factors multiply the nominal values.

    Notes
    -----
    Uniform: :math:`f = 1 + t\\,U(-1, 1)`. Normal: :math:`f = 1 + (t/3)\\,N(0, 1)`
    (the tolerance is three standard deviations; the tails are not cut). Draws
    are taken parameter by parameter in network order, so a given seed always
    gives the same builds.
    """
    out = {}
    for p in params:
        if p.distribution == "normal":
            f = 1.0 + (p.tolerance / 3.0) * rng.standard_normal(samples)
        else:
            f = 1.0 + p.tolerance * rng.uniform(-1.0, 1.0, samples)
        out[p.key] = np.maximum(f, 1e-6)
    return out


def _corner_signs(k: int) -> np.ndarray:
    """All 2**k sign vectors (+1/-1), shape (2**k, k)."""
    idx = np.arange(2 ** k)[:, None]
    return ((idx >> np.arange(k)[None, :]) & 1) * 2.0 - 1.0


def _factors_from_signs(params: list[Parameter], signs: np.ndarray) -> dict:
    out = {}
    for j, p in enumerate(params):
        lo, hi = p.extremes()
        out[p.key] = np.where(signs[:, j] > 0, hi, lo)
    return out


class CountingEngine:
    """An :class:`Engine` wrapper that counts the operating points solved.

    Parameters
    ----------
    engine : Engine

    Attributes
    ----------
    points : int
        Operating points solved so far (parameter sets x stimuli).
    calls : int
        Batched solves so far.
    """

    def __init__(self, engine: Engine):
        self.engine = engine
        self.points = 0
        self.calls = 0

    def operate(self, *args, **kwargs):
        op = self.engine.operate(*args, **kwargs)
        p, s = op.shape
        self.points += p * s
        self.calls += 1
        return op


def worst_case(run: CountingEngine, state, full_scale: float, params: list[Parameter], rng) -> dict:
    """Largest |error| at full scale over the parts' tolerance extremes [% of full scale].

    Parameters
    ----------
    run : CountingEngine
        The engine, wrapped to count its solves.
    state : str
        Position name.
    full_scale : float
        Full scale [V] or [A].
    params : list of Parameter
        The parameters that matter in this position.
    rng : numpy.random.Generator
        Draws the verification corners of the sensitivity bound.

    Returns
    -------
    dict
        ``worst_case_error_pct``, ``worst_case_method`` (``corners`` or
        ``sensitivity``), ``worst_case_parameters``, ``worst_case_corners``
        (corners evaluated), ``worst_case_corner`` (the sign of each parameter at
        the worst corner evaluated) and, for the bound, ``worst_case_bound_pct``.

    Notes
    -----
    With k parameters, k <= 12: every corner of the tolerance box, 2**k cases in
    one batched solve; the result is :math:`\\max |e|`. Above 12: central
    extremes :math:`\\Delta_j^\\pm = e(x_j^\\pm) - e_0` (2k + 1 cases, one solve)
    give the first-order bound

    .. math:: e_{hi} = e_0 + \\sum_j \\max(\\Delta_j^+, \\Delta_j^-, 0), \\quad
              e_{lo} = e_0 + \\sum_j \\min(\\Delta_j^+, \\Delta_j^-, 0)

    and :math:`\\max(|e_{hi}|, |e_{lo}|)`. It is checked against the two corners
    that align every parameter with its sensitivity and
    :data:`VERIFY_CORNERS` random corners (a second solve); the result is the
    larger of the bound and every corner evaluated, so it is never smaller than
    a corner that was computed.

    References
    ----------
    Worst-case circuit analysis by extreme-value (corner) enumeration and by
    linearised sensitivities: common practice (e.g. the tolerance analyses of
    SPICE simulators).
    """
    k = len(params)
    labels = [p.label for p in params]
    if k == 0:
        e = _error_pct(run.operate(state, [full_scale]).reading()[:, 0], full_scale)
        return {"worst_case_error_pct": float(abs(e[0])), "worst_case_method": "corners",
                "worst_case_parameters": [], "worst_case_corners": 1, "worst_case_corner": {}}
    if k <= MAX_CORNER_PARAMETERS:
        signs = _corner_signs(k)
        e = _error_pct(run.operate(state, [full_scale], factors=_factors_from_signs(params, signs)).reading()[:, 0],
                       full_scale)
        i = int(np.argmax(np.abs(e)))
        return {"worst_case_error_pct": float(abs(e[i])), "worst_case_method": "corners",
                "worst_case_parameters": labels, "worst_case_corners": int(len(e)),
                "worst_case_corner": {lab: int(s) for lab, s in zip(labels, signs[i])}}
    # sensitivity bound: nominal, then each parameter at its low and its high extreme
    rows = 2 * k + 1
    factors = {p.key: np.ones(rows) for p in params}
    for j, p in enumerate(params):
        lo, hi = p.extremes()
        factors[p.key][1 + 2 * j] = lo
        factors[p.key][2 + 2 * j] = hi
    e = _error_pct(run.operate(state, [full_scale], factors=factors).reading()[:, 0], full_scale)
    e0 = e[0]
    d_lo, d_hi = e[1::2] - e0, e[2::2] - e0
    hi_sum = e0 + np.sum(np.maximum(np.maximum(d_lo, d_hi), 0.0))
    lo_sum = e0 + np.sum(np.minimum(np.minimum(d_lo, d_hi), 0.0))
    bound = float(max(abs(hi_sum), abs(lo_sum)))
    up = np.where(d_hi >= d_lo, 1.0, -1.0)
    signs = np.vstack([up, -up, rng.choice([-1.0, 1.0], size=(VERIFY_CORNERS, k))])
    ec = _error_pct(run.operate(state, [full_scale], factors=_factors_from_signs(params, signs)).reading()[:, 0],
                    full_scale)
    i = int(np.argmax(np.abs(ec)))
    corner_max = float(abs(ec[i]))
    return {"worst_case_error_pct": max(bound, corner_max), "worst_case_method": "sensitivity",
            "worst_case_parameters": labels, "worst_case_corners": int(len(ec)),
            "worst_case_corner": {lab: int(s) for lab, s in zip(labels, signs[i])},
            "worst_case_bound_pct": bound, "worst_case_corner_max_pct": corner_max}


def temperature_points(spec: Spec) -> np.ndarray:
    """Ambient temperatures of the analyses [K], ascending, reference included.

    At least :data:`MIN_TEMPERATURE_POINTS` evenly spaced points from the minimum
    to the maximum ambient, plus the reference temperature.
    """
    amb = spec.ambient
    pts = np.linspace(amb.t_min_k, amb.t_max_k, MIN_TEMPERATURE_POINTS)
    return np.unique(np.append(pts, amb.t_ref_k))


def _table(applied, reading, full_scale):
    return [{"applied": float(a), "reading": float(r), "error_pct": float((r - a) / full_scale * 100.0)}
            for a, r in zip(applied, reading)]


def _check_position(run: CountingEngine, spec: Spec, pos, params_all, mc_factors, samples, rng_corners,
                    source_impedance_ohm, say) -> tuple[dict, np.ndarray]:
    fs = float(pos.full_scale)
    cls = float(spec.movement.class_index)
    carrying = current_carrying(run.engine, pos.name)
    params = [p for p in params_all if p.element is None or p.element in carrying]
    out = {"name": pos.name, "measures": pos.measures, "unit": pos.unit, "full_scale": fs, "class_index": cls}

    # nominal, linearity and temperature: every linearity point at every temperature, one solve
    say(f"{pos.name}: nominal, linearity, temperature")
    temps = temperature_points(spec)
    applied = LINEARITY_FRACTIONS * fs
    op = run.operate(pos.name, applied, temperature_k=temps)
    rd = op.reading()  # (T, 10)
    i_ref = int(np.argmin(np.abs(temps - spec.ambient.t_ref_k)))
    i_hot = int(np.argmax(temps))
    fs_reading = rd[:, -1]
    out["nominal_error_pct"] = float(_error_pct(fs_reading[i_ref], fs))
    change = (fs_reading - fs_reading[i_ref]) / fs * 100.0
    in_range = (temps >= spec.ambient.t_min_k) & (temps <= spec.ambient.t_max_k)
    in_range[i_ref] = True
    out["temperature_error_pct"] = float(np.max(np.abs(change[in_range])))
    out["temperature_points"] = [
        {"temperature_k": float(t), "reading": float(r), "change_pct": float(c)}
        for t, r, c in zip(temps, fs_reading, change)]
    out["linearity"] = _table(applied, rd[i_ref], fs)
    out["hot_temperature_k"] = float(temps[i_hot])
    out["linearity_hot"] = _table(applied, rd[i_hot], fs)

    # what the source sees at full scale
    i_src = float(op.source_current_a[i_ref, -1])
    plus, minus = pos.input
    v_in = float(op.node_voltage(plus)[i_ref, -1] - op.node_voltage(minus)[i_ref, -1])
    out.update(pos.kind.input_figures(fs, i_src, v_in))

    # loading: a full-scale source with an internal resistance
    if source_impedance_ohm is not None and pos.kind.source == "voltage":
        say(f"{pos.name}: loading")
        loaded = float(run.operate(pos.name, [fs], r_source_ohm=source_impedance_ohm).reading()[0, 0])
        out["source_impedance_ohm"] = float(source_impedance_ohm)
        out["loaded_reading"] = loaded
        out["loading_error_pct"] = float(_error_pct(loaded, fs))

    # worst case over the tolerance extremes
    say(f"{pos.name}: worst case over {len(params)} toleranced parameters")
    out.update(worst_case(run, pos.name, fs, params, rng_corners))

    # Monte Carlo: the shared builds, the whole scale per build, one solve
    say(f"{pos.name}: Monte Carlo, {samples} builds")
    fac = {p.key: mc_factors[p.key] for p in params}
    if fac:
        mrd = run.operate(pos.name, applied, factors=fac).reading()  # (N, 10)
    else:
        mrd = np.broadcast_to(rd[i_ref], (samples, applied.size))
    err = (mrd - applied[None, :]) / fs * 100.0
    fs_err = err[:, -1]
    worst_lin = np.max(np.abs(err), axis=1)
    nonlin = np.max(np.abs(mrd - applied[None, :] * (mrd[:, -1:] / fs)), axis=1) / fs * 100.0
    ok = np.abs(fs_err) <= cls
    out["yield_fraction"] = float(np.mean(ok))
    out["monte_carlo"] = {
        "samples": int(samples),
        "full_scale_error_pct": _stats(fs_err),
        "worst_linearity_error_pct": _stats(worst_lin),
        "nonlinearity_pct": _stats(nonlin),
    }

    budget = out["worst_case_error_pct"] + out["temperature_error_pct"]
    out["budget_pct"] = float(budget)
    out["verdict"] = "within class" if budget <= cls else "outside class"
    return out, ok


def _parts(engine: Engine) -> list[dict]:
    """The ``parts[]`` rows of the check: every part that has one (:meth:`planner.parts.Part.part_row`)."""
    rows = (e.part_row(engine.spec) for e in engine.net.elements)
    return [r for r in rows if r is not None]


def _assert_finite(obj, where="result"):
    if isinstance(obj, dict):
        for k, v in obj.items():
            _assert_finite(v, f"{where}.{k}")
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            _assert_finite(v, f"{where}[{i}]")
    elif isinstance(obj, float) and not math.isfinite(obj):
        raise SolveError(f"the accuracy check produced a non-finite value at {where}; "
                         "check the network for open or shorted paths")


def check_project(design: Design | Spec, *, samples: int | None = None, seed: int | None = None,
                  source_impedance_ohm: float | None = None,
                  progress: Callable[[str], None] | None = None) -> dict:
    """The accuracy proof of every switch position of a project.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec is
        built into one).
    samples : int, optional
        Monte Carlo builds; ``spec.analysis.samples`` by default.
    seed : int, optional
        Seed of ``numpy.random.default_rng``; ``spec.analysis.seed`` by default.
    source_impedance_ohm : float, optional
        Internal resistance of a full-scale voltage source for the loading error
        [ohm]; no loading analysis when None.
    progress : callable(str), optional
        Receives a short message before each analysis.

    Returns
    -------
    dict
        The JSON object of ``planner check`` (design contract): ``positions[]``
        with ``name``, ``measures``, ``full_scale``, ``nominal_error_pct``,
        ``worst_case_error_pct``, ``temperature_error_pct``, ``yield_fraction``,
        ``linearity[]`` (``applied``, ``reading``, ``error_pct``),
        ``input_resistance_ohm``, ``burden_voltage_v`` (current positions),
        ``budget_pct``, ``verdict`` and more; ``parts[]`` with ``name``, ``kind``,
        ``value_ohm``, ``target_ohm``; ``requirements_met``.

    Raises
    ------
    UsageError
        For a bad ``samples``, ``seed`` or ``source_impedance_ohm``.
    SolveError
        When the solver cannot find an operating point.

    Notes
    -----
    Errors are in % of full scale: :math:`e = (r - a) / FS \\times 100` with the
    reading :math:`r = I_m / I_{fs} \\times FS`. Budget rule:
    :math:`B = e_{wc} + e_T` (the worst case already includes the nominal
    offset); a position is within class when :math:`B \\le` class index.

    References
    ----------
    IEC 60051-1: class index as the limit of intrinsic error in percent of the
    fiducial value, which is the upper range limit for a scale with zero at one end.
    """
    design = as_design(design)
    spec = design.spec
    samples = spec.analysis.samples if samples is None else samples
    seed = spec.analysis.seed if seed is None else seed
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or not 2 <= samples <= MAX_SAMPLES:
        raise UsageError(f"samples must be a whole number from 2 to {MAX_SAMPLES}, not {samples!r}")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise UsageError(f"seed must be a whole number of at least 0, not {seed!r}")
    if source_impedance_ohm is not None:
        source_impedance_ohm = float(source_impedance_ohm)
        if not math.isfinite(source_impedance_ohm) or source_impedance_ohm < 0:
            raise UsageError(f"the source impedance must be a finite resistance >= 0 ohm, "
                             f"not {source_impedance_ohm!r}")
    say = progress or (lambda message: None)
    say("preparing the network")
    engine = Engine(design)
    run = CountingEngine(engine)
    params = parameters(engine)
    mc_factors = draw_factors(params, int(samples), np.random.default_rng(int(seed)))
    positions, oks = [], []
    for i, pos in enumerate(engine.positions):
        rng_corners = np.random.default_rng([int(seed), i])
        res, ok = _check_position(run, spec, pos, params, mc_factors, int(samples), rng_corners,
                                  source_impedance_ohm, say)
        positions.append(res)
        oks.append(ok)
    amb = spec.ambient
    result = {
        "title": spec.title,
        "class_index": float(spec.movement.class_index),
        "reference_temperature_k": float(amb.t_ref_k),
        "ambient_min_k": float(amb.t_min_k),
        "ambient_max_k": float(amb.t_max_k),
        "samples": int(samples),
        "seed": int(seed),
        "budget_rule": BUDGET_RULE,
        "positions": positions,
        "parts": _parts(engine),
        "instrument_yield_fraction": float(np.mean(np.all(np.vstack(oks), axis=0))) if oks else 1.0,
        "operating_points": int(run.points),
        "solver_calls": int(run.calls),
    }
    if source_impedance_ohm is not None:
        result["source_impedance_ohm"] = source_impedance_ohm
    from .testpoints import test_points

    result["test_points"] = test_points(engine, engine.net)  # named by the parts' pins, at full scale
    trims = getattr(design.sizing, "trims", ()) if spec.analysis.trim else ()
    if spec.analysis.trim:  # the calibration simulated (planner.trim); the verdicts after trimming decide
        from .trim import calibrated_check

        say("calibration: trimmers set at their positions")
        result.update(calibrated_check(run, trims, params, positions, float(spec.movement.class_index), int(seed)))
    verdict = "verdict_after_trim" if trims else "verdict"
    outside = [p["name"] for p in positions if p[verdict] != "within class"]
    result["positions_outside_class"] = outside  # after trimming, where trimmers are planned
    result["requirements_met"] = not outside
    _assert_finite(result)
    return result


# --- terminal table ---------------------------------------------------------------------------


def _fs_text(value: float, unit: str) -> str:
    from .units import format_si

    return format_si(value, unit, 4)


def _pct(x: float, width: int = 8) -> str:
    return f"{x:+{width}.3f}" if x != 0 else f"{0.0:{width}.3f}"


def format_check(result: dict) -> str:
    """A readable terminal report of :func:`check_project`'s result.

    Parameters
    ----------
    result : dict
        What :func:`check_project` returned.

    Returns
    -------
    str
        Per position: full scale, nominal, worst case, temperature, budget
        against the class index, verdict, yield and input resistance or burden
        voltage; then the linearity errors at the reference and the hottest
        ambient, the Monte Carlo spread, and the overall verdict.
    """
    from .units import format_si

    t_ref_c = result["reference_temperature_k"] - ZERO_CELSIUS_K
    t_lo_c = result["ambient_min_k"] - ZERO_CELSIUS_K
    t_hi_c = result["ambient_max_k"] - ZERO_CELSIUS_K
    lines = [
        f"{result['title']}: accuracy per position",
        f"class {result['class_index']:g} (% of full scale); reference {t_ref_c:.1f} degC, ambient "
        f"{t_lo_c:.1f} to {t_hi_c:.1f} degC; Monte Carlo {result['samples']} builds, seed {result['seed']}",
        "",
    ]
    head = (f"{'position':<12}{'full scale':>12}{'nominal %':>11}{'worst %':>9}{'temp %':>8}"
            f"{'budget %':>10}{'class %':>9}  {'verdict':<14}{'yield':>7}  {'input':<s}")
    lines += [head, "-" * (len(head) + 24)]
    for p in result["positions"]:
        if p["measures"] == "voltage":
            inp = (f"{format_si(p['input_resistance_ohm'], 'ohm')} "
                   f"({format_si(p['ohms_per_volt'], 'ohm/V')})")
        else:
            inp = (f"burden {format_si(p['burden_voltage_v'], 'V')} "
                   f"({format_si(p['input_resistance_ohm'], 'ohm')})")
        lines.append(
            f"{p['name']:<12}{_fs_text(p['full_scale'], p['unit']):>12}{p['nominal_error_pct']:>+11.3f}"
            f"{p['worst_case_error_pct']:>9.3f}{p['temperature_error_pct']:>8.3f}{p['budget_pct']:>10.3f}"
            f"{p['class_index']:>9g}  {p['verdict']:<14}{p['yield_fraction'] * 100:>6.1f}%  {inp}")
    lines.append("")
    lines.append("worst case method: " + "; ".join(
        f"{p['name']} {p['worst_case_method']} ({p['worst_case_corners']} corners, "
        f"{len(p['worst_case_parameters'])} parameters)" for p in result["positions"]))
    if any("loading_error_pct" in p for p in result["positions"]):
        lines.append(f"loading by a {format_si(result['source_impedance_ohm'], 'ohm')} source at full scale: " + "; ".join(
            f"{p['name']} reads {_fs_text(p['loaded_reading'], p['unit'])} ({p['loading_error_pct']:+.3f} %)"
            for p in result["positions"] if "loading_error_pct" in p))

    cols = "".join(f"{int(round(f * 100)):>7d}%" for f in LINEARITY_FRACTIONS)
    for key, title in (("linearity", f"at {t_ref_c:.1f} degC"), ("linearity_hot", "at the hottest ambient")):
        lines += ["", f"linearity error, % of full scale, {title} (columns: % of full scale)",
                  f"{'position':<12}{cols}"]
        for p in result["positions"]:
            row = "".join(f"{r['error_pct']:>+8.3f}" for r in p[key])
            extra = f"  ({p['hot_temperature_k'] - ZERO_CELSIUS_K:.1f} degC)" if key == "linearity_hot" else ""
            lines.append(f"{p['name']:<12}{row}{extra}")

    lines += ["", "Monte Carlo, full-scale error % (mean, std, 1st-99th percentile) and worst error over the scale %:"]
    for p in result["positions"]:
        s = p["monte_carlo"]["full_scale_error_pct"]
        w = p["monte_carlo"]["worst_linearity_error_pct"]
        lines.append(f"{p['name']:<12}{s['mean']:+.3f} +/- {s['std']:.3f}  [{s['p1']:+.3f}, {s['p99']:+.3f}]   "
                     f"worst over scale: median {w['p50']:.3f}, 99th pct {w['p99']:.3f}")
    lines.append(f"builds with every position within class: {result['instrument_yield_fraction'] * 100:.1f} %")
    from .trim import format_trim

    lines += format_trim(result)
    lines += ["", f"budget rule: {result['budget_rule']}"]
    if result["requirements_met"]:
        lines.append("RESULT: requirement met - every position within class")
    else:
        lines.append("RESULT: requirement NOT met - outside class: " + ", ".join(result["positions_outside_class"]))
    return "\n".join(lines) + "\n"
