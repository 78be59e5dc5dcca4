"""Fusible resistors: a resistor that opens after a time at a power, by the maker's fusing points.

A ``resistor`` element with ``fusible: true`` carries ``fusing: [[power, time], ...]``
(it opens after ``time`` at ``power``) and ``breaking_voltage`` (the largest voltage
across which it opens safely, without a sustained arc or flame). In normal use it
is an ordinary resistor (:class:`planner.parts.resistor.Resistor`). Under a
misrange :func:`trip` says whether it opens and when (:func:`time_to_open_s`), the
other parts are judged over that time (as over a fuse's pre-arcing time), and once
open the voltage across it is judged against its breaking voltage
(:func:`open_checks`).
"""

from __future__ import annotations

import math

import numpy as np

from .base import Trip


def time_to_open_s(fusing, power_w: float) -> float:
    """Time a fusible resistor takes to open at a power [s].

    Parameters
    ----------
    fusing : sequence of (power [W], time [s])
        The maker's fusing points (power rising, time falling).
    power_w : float
        Mean power in the part [W].

    Returns
    -------
    float
        ``inf`` below the lowest power of the points (it does not open).

    Notes
    -----
    Between the points, log-log interpolation:
    :math:`\\log t = \\log t_1 + (\\log t_2 - \\log t_1) \\frac{\\log P - \\log P_1}{\\log P_2 - \\log P_1}`.
    Beyond the highest point the element heats adiabatically, so the energy to
    open is that of the last point: :math:`t = t_n P_n / P`.

    References
    ----------
    Fusible (flame-proof, fusing) resistor data sheets state fusing time against
    a multiple of the rated power; the log-log plot of such curves is common
    practice, as for fuses (IEC 60127-1 time-current characteristics).
    """
    p = abs(float(power_w))
    pts = sorted(fusing)
    if p <= 0.0 or not pts or p < pts[0][0]:
        return math.inf
    pw = np.array([x[0] for x in pts], dtype=float)
    t = np.array([x[1] for x in pts], dtype=float)
    if p >= pw[-1]:
        return float(t[-1] * pw[-1] / p)
    return float(np.exp(np.interp(np.log(p), np.log(pw), np.log(t))))


def trip(r, ctx) -> Trip | None:
    """Whether a fusible resistor opens under a stimulus, when, and what opening asks of it.

    Notes
    -----
    The mean power against the lowest fusing power is the trigger. When it opens
    in :math:`t` (:func:`time_to_open_s`), the pulse the other parts take lasts
    :math:`t` (``event_time_s``, with let-through :math:`I_{rms}^2 t`). An impulse
    is too short to open it.
    """
    if ctx.peak_only or not r.fusible:
        return None
    p = abs(ctx.power_w)
    p_min = min(x[0] for x in r.fusing)
    t = time_to_open_s(r.fusing, p)
    opens = math.isfinite(t)
    i_rms = ctx.current["rms"]
    stresses = [ctx.entry(r.name, r.kind, f"power{ctx.phase}", p, p_min, "W", "fuse trigger")]
    record = {"name": r.name, "model": "fusible resistor", "kind": "fusible resistor", "current_rms_a": i_rms,
              "power_w": p, "rated_current_a": math.sqrt(p_min / r.value_ohm), "opens": bool(opens),
              "pre_arcing_time_s": t if opens else None, "time_known": True,
              "prospective_current_a": ctx.prospective_a, "breaking_capacity_a": math.inf,
              "let_through_i2t_a2s": i_rms * i_rms * t if opens else None, "arcing_i2t_a2s": 0.0 if opens else None,
              "event_time_s": t if opens else None, "arcing_known": bool(opens)}
    notes = [f"{r.name} (fusible) opens in {t:.3g} s at {p:.4g} W"] if opens else []
    return Trip(record, bool(opens), stresses, notes)


def open_checks(r, ctx) -> list[dict]:
    """The voltage across the open fusible resistor (rms of a periodic wave, else peak) against its breaking voltage.

    References
    ----------
    Fusible resistor data sheets: the largest voltage at which the part opens
    without a sustained arc (common practice).
    """
    if not math.isfinite(r.breaking_voltage_v):
        return []
    v = ctx.voltage["rms"] if ctx.stimulus.waveform.cyclic else ctx.voltage["peak"]
    return [ctx.entry(r.name, r.kind, f"voltage across the open fusible resistor{ctx.phase}", v, r.breaking_voltage_v,
                      "V", "safety", rule="voltage rating", limit_name="fusible resistor breaking voltage")]


def read_points(m, key: str) -> tuple:
    """The maker's fusing points under ``key`` of a mapping (a :class:`planner.project.reader.Section`)."""
    pts: list[tuple[float, float]] = []
    for i, pt in enumerate(m.items(key, "[[5 W, 10 s], [50 W, 50 ms]]"), 1):
        pw = f"{m.at(key)}[{i}]"
        pair = m.ctx.seq(pt, pw, "[5 W, 10 s]")
        if len(pair) != 2:
            m.fail(f"{pw} has {len(pair)} values; each point is [power, time], e.g. [5 W, 10 s]", pt.line)
        p = m.ctx.qty(pair[0], "power", f"{pw} power", "pos")
        t = m.ctx.qty(pair[1], "time", f"{pw} time", "pos")
        if pts and (p <= pts[-1][0] or t > pts[-1][1]):
            m.fail(f"{pw}: list the points by rising power, the time falling (more power opens it sooner)", pt.line)
        pts.append((p, t))
    return tuple(pts)


def read_element(e) -> dict:
    """The fusible keys of a ``resistor`` element (``e`` is its :class:`planner.project.reader.Section`)."""
    fusible = e.boolean("fusible", False)
    bv = e.qty("breaking_voltage", "voltage", math.inf, check="pos")
    if not fusible:
        for key in ("fusing", "breaking_voltage"):
            if e.has(key):
                e.fail(f"{e.at(key)} belongs to a fusible resistor; add 'fusible: true' or remove it", e.line_of(key))
        return {}
    pts = read_points(e, "fusing")
    if not pts:
        e.fail(f"{e.at('fusible')}: a fusible resistor needs 'fusing: [[power, time], ...]', the maker's points "
               "(it opens after time at power), e.g. [[5 W, 10 s], [50 W, 50 ms]]", e.line_of("fusible"))
    return {"fusible": True, "fusing": pts, "breaking_voltage_v": bv}
