"""The accuracy proof of a resistance (ohms) position: centre, zero span, errors over the battery's life.

:func:`check_resistance` answers for one resistance position what
:mod:`planner.accuracy` answers for a linear range, in the terms of an ohms
scale (design contract, "Resistance (ohms) ranges"):

* ``center_ohm``: R_x at half deflection (nominal parts, nominal battery, zeroed);
* ``zero_adjust_span_v``: the lowest and highest battery EMF that can be zeroed;
* ``center_error_pct``: the worst |reading - R_x| / R_x at the centre mark over
  the battery span (end of life, nominal, fresh) and the parts' tolerance
  corners, each case re-zeroed first, in % of reading;
* ``marks[]``: the same at the other scale marks (0.1 ... 10 x the centre), in %
  of reading and in % of scale length (the deflection error);
* ``open_circuit_voltage_v`` and ``short_circuit_current_a`` with a fresh battery;
* the temperature error (re-zeroed at each ambient) and a Monte Carlo yield
  against the class taken in % of scale length.

Errors in % of scale length are :math:`100 (D - D_{nom}(R_x))`: the ohms scale
is non-linear with an infinite mark, so its fiducial value is the scale length
(IEC 60051-1, definition of the fiducial value; from memory).
"""

from __future__ import annotations

import numpy as np

from .engine import Engine
from .ohms import MarkedScale, Scale, deflection, parts_of, zero, zero_span

#: Scale marks the errors are given at, multiples of the position's asked centre.
MARKS = (0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0)
#: Reference resistors of the acceptance test, multiples of the asked centre (the middle of the
#: scale, where an ohms scale is read best: common practice).
ACCEPTANCE_MARKS = (0.5, 1.0, 2.0)
#: Points of the drawn scale kept for the outputs: R_x from 1/100 to 100 times the centre.
SCALE_CURVE_DECADES, SCALE_CURVE_POINTS = 2, 81
#: Largest number of toleranced parameters whose corners are all evaluated.
MAX_CORNER_PARAMETERS = 10
#: Random corners evaluated (besides the all-low and all-high ones) above that.
RANDOM_CORNERS = 1022

LIMIT_BASIS = ("class index in % of scale length: the fiducial value of an instrument with a non-linear "
               "scale and an infinite mark is the scale length (IEC 60051-1, from memory)")


def _corners(params, rng) -> dict:
    """Tolerance factors at the corners of the box (all, or a seeded sample and the two aligned ones)."""
    k = len(params)
    if k <= MAX_CORNER_PARAMETERS:
        idx = np.arange(2 ** k)[:, None]
        signs = ((idx >> np.arange(k)[None, :]) & 1) * 2.0 - 1.0
    else:
        signs = np.vstack([np.ones(k), -np.ones(k), rng.choice([-1.0, 1.0], size=(RANDOM_CORNERS, k))])
    out = {}
    for j, p in enumerate(params):
        lo, hi = p.extremes()
        out[p.key] = np.where(signs[:, j] > 0, hi, lo)
    return out, signs.shape[0]


def _repeat(factors: dict, times: int) -> dict:
    return {k: np.repeat(np.asarray(v, dtype=float), times) for k, v in factors.items()}


def errors_at(engine: Engine, op, scale, marks_ohm, v_bat, factors=None, temperature_k=None):
    """Deflections and readings at the marks for each case, each case re-zeroed first.

    Parameters
    ----------
    marks_ohm : ndarray (M,)
        R_x of the marks [ohm].
    v_bat : ndarray (N,)
        Battery EMF per case [V].
    factors : mapping of ndarray (N,), optional
    temperature_k : ndarray (N,), optional

    Returns
    -------
    d : ndarray (N, M)
        Deflections.
    reading : ndarray (N, M)
        Readings on the nominal scale [ohm].
    zeroed : ndarray of bool (N,)
    """
    v_bat = np.asarray(v_bat, dtype=float).reshape(-1)
    n, m = v_bat.size, len(marks_ohm)
    z = zero(engine, op, v_bat, factors=factors, temperature_k=temperature_k)
    f = _repeat(factors, m) if factors else None
    t = None if temperature_k is None else np.repeat(np.broadcast_to(temperature_k, (n,)), m)
    d = deflection(engine, op, np.tile(marks_ohm, n), np.repeat(v_bat, m), np.repeat(z.setting, m),
                   factors=f, temperature_k=t).reshape(n, m)
    return d, scale.reading(d), z.zeroed


def _stats(x) -> dict:
    x = np.asarray(x, dtype=float)
    out = {"mean": float(np.mean(x)), "std": float(np.std(x, ddof=1)) if x.size > 1 else 0.0,
           "min": float(np.min(x)), "max": float(np.max(x))}
    for p, v in zip((1.0, 5.0, 50.0, 95.0, 99.0), np.percentile(x, (1.0, 5.0, 50.0, 95.0, 99.0))):
        out[f"p{p:g}"] = float(v)
    return out


def check_resistance(run, spec, pos, params, mc_factors, samples, rng, temperatures, say) -> tuple[dict, np.ndarray]:
    """The check of one resistance position (the ``positions[]`` entry of ``planner check --json``).

    Parameters
    ----------
    run : Engine or a wrapper with its ``operate``
    spec : Spec
    pos : Position
    params : list of Parameter
        The toleranced parameters in circuit on this position.
    mc_factors : dict
        The shared Monte Carlo builds (factors per key, arrays (samples,)).
    samples : int
    rng : numpy.random.Generator
        Seeded: draws the battery EMF of each build and any sampled corners.
    temperatures : ndarray
        Ambient points [K], reference included.
    say : callable(str)

    Returns
    -------
    result : dict
    ok : ndarray of bool (samples,)
        Builds within the limit on this position.
    arrays : dict
        ``marks`` [ohm], nominal ``readings`` there [ohm], ``temperatures_k``,
        ``i_ref``, ``center_deflection`` per ambient, the builds' ``mc_readings``
        [ohm] and ``mc_error_pct`` at the centre [% of scale length].

    Notes
    -----
    Each case (battery EMF, tolerance corner or build, ambient) is re-zeroed
    before it is read, as the user does. Reading error :math:`100 (R - R_x)/R_x`
    [% of reading]; scale error :math:`100 (D - D_{nom}(R_x))` [% of scale
    length]. Battery EMFs of the Monte Carlo builds: uniform over [min, max].

    References
    ----------
    Series ohmmeter and zero adjustment: T. R. Kuphaldt, *Lessons in Electric
    Circuits*, Vol. I, ch. 8, "Ohmmeter design"; US Army correspondence course
    SS0602. Fiducial value of a non-linear scale: IEC 60051-1 (from memory).
    """
    engine = getattr(run, "engine", run)
    cls = float(spec.movement.class_index)
    say(f"{pos.name}: ohms scale and zero adjustment")
    op = parts_of(engine, pos.name)
    own = Scale(engine, op)
    scale = MarkedScale(engine, pos, own)  # the arc it is read on (shared by centres a decade apart)
    bat = op.battery
    levels = np.array([bat.emf("min"), bat.emf("nominal"), bat.emf("max")])
    marks = np.array(MARKS) * float(pos.center or pos.full_scale)
    lo_v, hi_v = zero_span(engine, op)
    rc = own.center_ohm
    out = {"name": pos.name, "measures": pos.measures, "unit": "ohm", "full_scale": float(pos.full_scale),
           "class_index": cls, "center_target_ohm": float(pos.center or pos.full_scale), "center_ohm": rc,
           "center_deviation_pct": 100.0 * (rc - float(pos.center or pos.full_scale)) / float(pos.center or pos.full_scale),
           "zero_adjust_span_v": [lo_v, hi_v], "battery": bat.name, "battery_span_v": [float(levels[0]), float(levels[2])],
           "zero_adjuster": None if op.rheostat is None else op.rheostat.name,
           "zero_setting_ohm": own.setting_ohm, "read_on": scale.reference, "scale_factor": scale.factor,
           "limit_basis": LIMIT_BASIS}
    span_ok = lo_v <= levels[0] * (1 + 1e-9) and hi_v >= levels[2] * (1 - 1e-9)
    out["zeroable_over_battery_span"] = bool(span_ok)

    # nominal parts at the three battery levels, each re-zeroed
    say(f"{pos.name}: battery span")
    all_marks = np.concatenate([[rc], marks])
    d_nom = scale.deflection(all_marks)
    d, rd, zeroed = errors_at(engine, op, scale, all_marks, levels)
    out["linearity"] = [{"applied": float(a), "reading": float(r), "error_pct": float(100.0 * (dd - dn))}
                        for a, r, dd, dn in zip(marks, rd[1, 1:], d[1, 1:], d_nom[1:])]
    out["nominal_error_pct"] = float(100.0 * (d[1, 0] - d_nom[0]))
    out["battery_cases"] = [{"battery_v": float(v), "zeroed": bool(zz), "center_reading_ohm": float(r[0]),
                             "center_error_pct": float(100.0 * (r[0] - rc) / rc)}
                            for v, zz, r in zip(levels, zeroed, rd)]

    # tolerance corners x battery levels
    say(f"{pos.name}: worst case over {len(params)} toleranced parameters and the battery span")
    corners, count = _corners(params, rng)
    nc = max(count, 1)
    fac = _repeat(corners, 3) if corners else None
    vb = np.tile(levels, nc)
    d_c, rd_c, z_c = errors_at(engine, op, scale, all_marks, vb, fac)
    read_err = 100.0 * (rd_c - all_marks[None, :]) / all_marks[None, :]
    scale_err = 100.0 * (d_c - d_nom[None, :])
    out["center_error_pct"] = float(np.max(np.abs(read_err[:, 0])))
    out["worst_case_error_pct"] = float(np.max(np.abs(scale_err)))
    out["worst_case_method"] = "corners" if len(params) <= MAX_CORNER_PARAMETERS else "sampled corners"
    out["worst_case_corners"] = int(nc * 3)
    out["worst_case_parameters"] = [p.label for p in params]
    out["all_cases_zeroed"] = bool(np.all(z_c))
    out["marks"] = [{"applied_ohm": float(r), "reading_error_pct": float(np.max(np.abs(read_err[:, j + 1]))),
                     "scale_error_pct": float(np.max(np.abs(scale_err[:, j + 1])))}
                    for j, r in enumerate(marks)]

    # temperature: nominal battery, re-zeroed at each ambient
    say(f"{pos.name}: temperature")
    t = np.asarray(temperatures, dtype=float)
    d_t, _, _ = errors_at(engine, op, scale, np.array([rc]), np.full(t.size, levels[1]), temperature_k=t)
    i_ref = int(np.argmin(np.abs(t - spec.ambient.t_ref_k)))
    change = 100.0 * (d_t[:, 0] - d_t[i_ref, 0])
    out["temperature_error_pct"] = float(np.max(np.abs(change)))
    out["temperature_points"] = [{"temperature_k": float(a), "center_deflection": float(b), "change_pct": float(c)}
                                 for a, b, c in zip(t, d_t[:, 0], change)]

    # what the range does to the part under test: fresh battery
    op_open = engine.operate(pos.name, [0.0], kind="current", emf={bat.name: [levels[2]]},
                             settings=None if op.rheostat is None else {op.rheostat.name: [own.setting_ohm]})
    plus, minus = pos.input
    out["open_circuit_voltage_v"] = float((op_open.node_voltage(plus) - op_open.node_voltage(minus))[0, 0])
    z_fresh = zero(engine, op, [levels[2]])
    op_short = engine.operate(pos.name, [0.0], kind="voltage", emf={bat.name: [levels[2]]},
                              settings=None if op.rheostat is None else {op.rheostat.name: z_fresh.setting})
    out["short_circuit_current_a"] = float(abs(op_short.source_current_a[0, 0]))
    out["positive_terminal"] = plus if out["open_circuit_voltage_v"] >= 0 else minus

    # Monte Carlo: the shared builds, a battery EMF per build, re-zeroed
    say(f"{pos.name}: Monte Carlo, {samples} builds")
    vb = rng.uniform(levels[0], levels[2], samples) if levels[2] > levels[0] else np.full(samples, levels[0])
    fac = {p.key: mc_factors[p.key] for p in params}
    d_m, rd_m, z_m = errors_at(engine, op, scale, all_marks, vb, fac or None)
    err_m = 100.0 * (d_m - d_nom[None, :])
    worst = np.max(np.abs(err_m), axis=1)
    ok = (worst <= cls) & z_m
    out["yield_fraction"] = float(np.mean(ok))
    out["monte_carlo"] = {"samples": int(samples), "battery": "uniform over [min, max]",
                          "full_scale_error_pct": _stats(err_m[:, 0]),
                          "worst_linearity_error_pct": _stats(worst),
                          "center_reading_error_pct": _stats(100.0 * (rd_m[:, 0] - rc) / rc)}
    out["scale_points"] = scale_points(scale, float(pos.center or pos.full_scale))
    out["acceptance"] = acceptance_rows(scale, marks, rd[1, 1:], cls)
    budget = out["worst_case_error_pct"] + out["temperature_error_pct"]
    out["budget_pct"] = float(budget)
    out["verdict"] = "within class" if budget <= cls and span_ok and out["all_cases_zeroed"] else "outside class"
    out["input_resistance_ohm"] = rc
    arrays = {"marks": marks, "readings": rd[1, 1:], "temperatures_k": t, "i_ref": i_ref,
              "center_deflection": d_t[:, 0], "mc_readings": rd_m[:, 1:], "mc_error_pct": err_m[:, 0]}
    return out, ok, arrays


def scale_points(scale: MarkedScale, center: float) -> list[dict]:
    """The arc the position is read on, as points for the outputs: ``r_ohm`` and nominal ``deflection``.

    R_x spaced evenly in log from 1/100 to 100 x the asked centre, and R_x = 0 first
    (full deflection); D from the solved nominal scale (:class:`planner.ohms.MarkedScale`).
    """
    r = np.concatenate([[0.0], center * np.logspace(-SCALE_CURVE_DECADES, SCALE_CURVE_DECADES, SCALE_CURVE_POINTS)])
    return [{"r_ohm": float(a), "deflection": float(b)} for a, b in zip(r, scale.deflection(r))]


def acceptance_rows(scale: MarkedScale, marks, readings, class_index: float) -> list[dict]:
    r"""The acceptance test of an ohms position: reference resistors, expected readings and limits.

    Parameters
    ----------
    scale : MarkedScale
        The arc the position is read on.
    marks, readings : ndarray (M,)
        The check's marks [ohm] and their nominal readings (nominal battery, re-zeroed) [ohm].
    class_index : float
        [% of scale length].

    Returns
    -------
    list of dict
        At each :data:`ACCEPTANCE_MARKS` multiple of the centre: ``applied_ohm``,
        ``expect_ohm`` and the limits ``low_ohm``, ``high_ohm``.

    Notes
    -----
    The class of an ohms range is read in % of scale length, so the limits are the
    values the arc marks :math:`\pm c/100` of its length from the reference
    resistor's own mark: :math:`R_{lo,hi} = R(D_{nom}(R_x) \pm c / 100)` (the higher
    deflection gives the lower value). The fiducial value of a non-linear scale with an
    infinite mark is its length (IEC 60051-1, from memory).
    """
    centre = float(marks[list(MARKS).index(1.0)])
    out = []
    for m in ACCEPTANCE_MARKS:
        j = list(MARKS).index(m)
        d0 = float(scale.deflection(marks[j]))
        out.append({"applied_ohm": float(marks[j]), "expect_ohm": float(readings[j]),
                    "low_ohm": float(scale.reading(min(d0 + class_index / 100.0, 1.0))),
                    "high_ohm": float(scale.reading(max(d0 - class_index / 100.0, 0.0))),
                    "multiple_of_center": float(marks[j] / centre)})
    return out


def ohms_lines(result: dict) -> list[str]:
    """Lines of the terminal report for the resistance positions of a check result (none without any)."""
    from .units import format_si

    rows = [p for p in result["positions"] if p["measures"] == "resistance"]
    if not rows:
        return []
    out = ["", "ohms ranges (errors after re-zeroing; % of reading at the marks, % of scale length otherwise):"]
    for p in rows:
        lo, hi = p["zero_adjust_span_v"]
        blo, bhi = p["battery_span_v"]
        out.append(f"{p['name']:<12}centre {format_si(p['center_ohm'], 'ohm')} (asked "
                   f"{format_si(p['center_target_ohm'], 'ohm')}), zeroes from {format_si(lo, 'V')} to "
                   f"{format_si(hi, 'V')} (battery {format_si(blo, 'V')} to {format_si(bhi, 'V')}"
                   f"{'' if p['zeroable_over_battery_span'] else ': NOT covered'}), centre error "
                   f"{p['center_error_pct']:.3f} % of reading")
        out.append(" " * 12 + "marks: " + "  ".join(
            f"{format_si(m['applied_ohm'], 'ohm')} {m['reading_error_pct']:.2f}%/{m['scale_error_pct']:.2f}%sl"
            for m in p["marks"]))
    return out
