"""The accuracy analyses of one switch position, as named steps.

:func:`check_position` runs, for one position: the sweep over the scale at every
ambient temperature point (nominal error, linearity, temperature change, what
the source sees, and the node voltages and part stresses at full scale, all
from one solve), the loading by a source impedance, the worst case over the
tolerance extremes and the Monte Carlo builds. It returns the position's JSON
object and its :class:`planner.accuracy.result.PositionArrays`.
"""

from __future__ import annotations

import numpy as np

from ..model import Spec
from .classes import class_figures
from .result import PositionArrays
from .tolerances import MAX_CORNER_PARAMETERS, CountingEngine, current_carrying, error_pct, worst_case_steps

#: Points of the linearity tables, fractions of full scale.
LINEARITY_FRACTIONS = np.arange(1, 11) / 10.0
#: Smallest number of ambient temperature points.
MIN_TEMPERATURE_POINTS = 7
#: Percentiles reported for the Monte Carlo distributions [%].
PERCENTILES = (1.0, 5.0, 50.0, 95.0, 99.0)


def temperature_points(spec: Spec) -> np.ndarray:
    """Ambient temperatures of the analyses [K], ascending, reference included.

    At least :data:`MIN_TEMPERATURE_POINTS` evenly spaced points from the minimum
    to the maximum ambient, plus the reference temperature.
    """
    amb = spec.ambient
    pts = np.linspace(amb.t_min_k, amb.t_max_k, MIN_TEMPERATURE_POINTS)
    return np.unique(np.append(pts, amb.t_ref_k))


def stats(x: np.ndarray) -> dict:
    """Mean, standard deviation, extremes and percentiles of a sample."""
    out = {"mean": float(np.mean(x)), "std": float(np.std(x, ddof=1)) if x.size > 1 else 0.0,
           "min": float(np.min(x)), "max": float(np.max(x))}
    for p, v in zip(PERCENTILES, np.percentile(x, PERCENTILES)):
        out[f"p{p:g}"] = float(v)
    return out


def _table(applied, reading, full_scale):
    return [{"applied": float(a), "reading": float(r), "error_pct": float((r - a) / full_scale * 100.0)}
            for a, r in zip(applied, reading)]


def _at_full_scale(op, row: int) -> tuple[dict, dict]:
    """Node voltages [V] and rated parts' |current| [A], |voltage| [V], |power| [W] at one sweep point."""
    volts = {n: float(op.node_voltage(n)[row, -1]) for n in op.circuit.node_index}
    stresses = {}
    for st in op.stresses():
        vals = (abs(float(st.current_a[row, -1])), abs(float(st.voltage_v[row, -1])),
                abs(float(st.power_w[row, -1])))
        stresses[st.name] = tuple(v if np.isfinite(v) else 0.0 for v in vals)
    return volts, stresses


def _sweep(run: CountingEngine, spec: Spec, pos, out: dict) -> PositionArrays:
    """Nominal error, linearity, temperature change and the source's view: one solve."""
    fs = float(pos.full_scale)
    temps = temperature_points(spec)
    applied = LINEARITY_FRACTIONS * fs
    op = run.operate(pos.name, applied, temperature_k=temps)
    rd = op.reading()  # (T, 10)
    i_ref = int(np.argmin(np.abs(temps - spec.ambient.t_ref_k)))
    i_hot = int(np.argmax(temps))
    fs_reading = rd[:, -1]
    out["nominal_error_pct"] = float(error_pct(fs_reading[i_ref], fs))
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
    volts, stresses = _at_full_scale(op, i_ref)
    return PositionArrays(name=pos.name, measures=pos.measures, unit=pos.unit, full_scale=fs, applied=applied,
                          temperatures_k=temps, readings=np.asarray(rd, dtype=float), i_ref=i_ref, i_hot=i_hot,
                          mc_readings=np.empty((0, applied.size)), mc_error_pct=np.empty(0),
                          node_voltages_v=volts, stresses=stresses)


def _loading(run: CountingEngine, pos, source_impedance_ohm: float, out: dict, arrays: PositionArrays) -> None:
    """The reading of a full-scale source with an internal resistance: one solve."""
    fs = float(pos.full_scale)
    loaded = float(run.operate(pos.name, [fs], r_source_ohm=source_impedance_ohm).reading()[0, 0])
    out["source_impedance_ohm"] = float(source_impedance_ohm)
    out["loaded_reading"] = loaded
    out["loading_error_pct"] = float(error_pct(loaded, fs))
    arrays.loaded_reading = loaded


def _monte_carlo(run: CountingEngine, pos, params, mc_factors, samples: int, cls: float, out: dict,
                 arrays: PositionArrays, mrd=None) -> np.ndarray:
    """The shared builds over the whole scale: one solve (``mrd``: their readings, solved already);
    returns which builds are within class."""
    fs = float(pos.full_scale)
    applied = arrays.applied
    fac = {p.key: mc_factors[p.key] for p in params}
    if mrd is None and fac:
        mrd = run.operate(pos.name, applied, factors=fac).reading()  # (N, 10)
    elif mrd is None:
        mrd = np.broadcast_to(arrays.readings[arrays.i_ref], (samples, applied.size))
    err = (mrd - applied[None, :]) / fs * 100.0
    fs_err = err[:, -1]
    worst_lin = np.max(np.abs(err), axis=1)
    nonlin = np.max(np.abs(mrd - applied[None, :] * (mrd[:, -1:] / fs)), axis=1) / fs * 100.0
    ok = np.abs(fs_err) <= cls
    out["yield_fraction"] = float(np.mean(ok))
    out["monte_carlo"] = {
        "samples": int(samples),
        "full_scale_error_pct": stats(fs_err),
        "worst_linearity_error_pct": stats(worst_lin),
        "nonlinearity_pct": stats(nonlin),
    }
    arrays.mc_readings = np.array(mrd, dtype=float)
    arrays.mc_error_pct = np.array(fs_err, dtype=float)
    return ok


def _worst_case(run: CountingEngine, pos, params, mc_factors, rng, limit: int, arrays: PositionArrays, say):
    """The worst case (:func:`planner.accuracy.tolerances.worst_case_steps`), its last batch (the corners)
    solved with the Monte Carlo builds where the range kind asks for it and they are at least
    :attr:`planner.ranges.RangeKind.corners_with_builds`.

    Returns the worst case's dict and the builds' readings (N, 10) where they were solved, else None.
    """
    fs = float(pos.full_scale)
    least = pos.kind.corners_with_builds
    steps = worst_case_steps(params, rng, limit)
    factors, last = next(steps)
    mrd = None
    while True:
        rows = 0 if factors is None else len(next(iter(factors.values())))
        if last and params and least is not None and rows >= least:
            say(f"{pos.name}: Monte Carlo, {len(mc_factors[params[0].key])} builds, with the corners")
            fac = {p.key: np.concatenate([factors[p.key], mc_factors[p.key]]) for p in params}
            groups = (rows, len(mc_factors[params[0].key]))
            rd = pos.kind.operate_groups(run, pos, arrays.applied, fac, groups).reading()
            e, mrd = error_pct(rd[:rows, -1], fs), rd[rows:]
        else:
            e = error_pct(run.operate(pos.name, [fs], factors=factors).reading()[:, 0], fs)
        try:
            factors, last = steps.send(e)
        except StopIteration as done:
            return done.value, mrd


def check_position(run: CountingEngine, spec: Spec, pos, params_all, mc_factors, samples: int, rng_corners,
                   source_impedance_ohm, say) -> tuple[dict, np.ndarray, PositionArrays]:
    """Every accuracy analysis of one position.

    Parameters
    ----------
    run : CountingEngine
        The engine, wrapped to count its solves.
    spec : Spec
    pos : Position
    params_all : list of Parameter
        Every toleranced parameter of the network.
    mc_factors : dict
        The Monte Carlo builds (:func:`planner.accuracy.tolerances.draw_factors`).
    samples : int
        Number of builds.
    rng_corners : numpy.random.Generator
        Draws the verification corners of a sensitivity bound.
    source_impedance_ohm : float or None
        Internal resistance of the loading source [ohm]; no loading analysis when None.
    say : callable(str)
        Progress messages.

    Returns
    -------
    json : dict
        The position's object in ``positions[]``.
    ok : ndarray of bool, shape (N,)
        Which builds are within class at full scale.
    arrays : PositionArrays
    """
    fs = float(pos.full_scale)
    cls = float(spec.movement.class_index)
    carrying = current_carrying(run.engine, pos.name)
    params = [p for p in params_all if p.element is None or p.element in carrying]
    out = {"name": pos.name, "measures": pos.measures, "unit": pos.unit, "full_scale": fs, "class_index": cls}
    say(f"{pos.name}: nominal, linearity, temperature")
    arrays = _sweep(run, spec, pos, out)
    if source_impedance_ohm is not None and pos.kind.source == "voltage":
        say(f"{pos.name}: loading")
        _loading(run, pos, source_impedance_ohm, out, arrays)
    say(f"{pos.name}: worst case over {len(params)} toleranced parameters")
    limit = pos.kind.corner_parameters
    limit = MAX_CORNER_PARAMETERS if limit is None else min(limit, MAX_CORNER_PARAMETERS)
    wc, mrd = _worst_case(run, pos, params, mc_factors, rng_corners, limit, arrays, say)
    out.update(wc)
    if mrd is None:
        say(f"{pos.name}: Monte Carlo, {samples} builds")
    ok = _monte_carlo(run, pos, params, mc_factors, samples, cls, out, arrays, mrd)
    out.update(pos.kind.check_figures(run.engine, pos))  # figures of the range kind (AC: waveform errors)
    out.update(class_figures(spec, out, arrays))
    return out, ok, arrays
