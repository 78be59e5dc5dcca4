"""The tripped state of PTC thermistors that hold a constant power: solved with the rest of the network.

A tripped PTC that states a tripped power P settles where its loss balances its
heating, at nearly constant power: its resistance is :math:`R = V_{rms}^2 / P`
with :math:`V_{rms}` the voltage the network puts across it (:func:`planner.parts.
ptc.tripped_resistance_ohm`). :func:`settle` finds that resistance by iterating
the network's solution: the fixed point :math:`R_{k+1} = V(R_k)^2 / P` in
:math:`x = \\ln R`, accelerated by secant steps. Started above the solution (at the
source's whole voltage), it converges to the high-resistance solution, the stable
one (a PTC held below it would heat further and rise).
"""

from __future__ import annotations

import math
from dataclasses import replace

from ..engine import Engine
from ..parts.ptc import TrippedPtc, tripped_resistance_ohm
from .waveforms import solve_waveforms

#: Relative change of a tripped resistance at which the iteration stops.
SETTLE_RTOL = 1e-9
#: Most solves spent settling one case.
SETTLE_MAX = 60


def _holding(engine: Engine) -> list:
    """The tripped PTCs of a network whose model states a tripped power."""
    ptcs = engine.spec.parts.ptcs
    return [e for e in engine.net.elements if isinstance(e, TrippedPtc)
            and ptcs[e.ptc_model].tripped_power_w is not None]


def _with(engine: Engine, values: dict) -> Engine:
    elems = tuple(replace(e, value_ohm=values[e.name]) if e.name in values else e for e in engine.net.elements)
    return Engine(engine.design.variant(replace(engine.net, elements=elems)))


def settle(engine: Engine, st, stimulus, *, temperature_k=None, n_phase=None):
    """Solve one stimulus on a network whose tripped PTCs hold their tripped power.

    Parameters
    ----------
    engine : Engine
        The network with the tripped parts' stand-ins in place.
    st : SwitchState
    stimulus : Stimulus

    Returns
    -------
    engine : Engine
        The network with each tripped part at its settled resistance.
    waveform : Waveform
        The solved stimulus on it.

    Notes
    -----
    For every tripped part with a tripped power P, :math:`R = V_{rms}(R)^2 / P`
    (one part: secant steps on :math:`h(x) = \\ln(V^2/P) - x`, :math:`x = \\ln R`;
    several: fixed-point steps) until every resistance moves by less than
    :data:`SETTLE_RTOL`. When the source cannot deliver P into any resistance
    (its available power :math:`V_{th}^2 / 4R_{th}` is below P) there is no
    tripped state; the iteration then ends near the matched load, where the
    part takes all the power it can.

    References
    ----------
    Constant-power behaviour of a tripped PTC: see :func:`planner.parts.ptc.
    tripped_resistance_ohm`; fixed-point and secant iteration: any numerical
    analysis text (e.g. Press et al., *Numerical Recipes*, 3rd ed., 9.2).
    """
    ptcs = engine.spec.parts.ptcs
    fixed = {e.name: ptcs[e.ptc_model].tripped_resistance_ohm for e in engine.net.elements
             if isinstance(e, TrippedPtc) and ptcs[e.ptc_model].tripped_resistance_ohm is not None}
    if fixed:
        engine = _with(engine, fixed)
    held = _holding(engine)
    if not held:
        return engine, solve_waveforms(engine, st, [stimulus], temperature_k=temperature_k, n_phase=n_phase)[0]
    models = {e.name: engine.spec.parts.ptcs[e.ptc_model] for e in held}
    v0 = max(abs(stimulus.value), 1.0) if stimulus.kind == "voltage" else 1e3
    x = {n: math.log(v0 * v0 / m.tripped_power_w) for n, m in models.items()}
    prev = None
    eng = engine
    wf = None
    for _ in range(SETTLE_MAX):
        eng = _with(engine, {n: math.exp(v) for n, v in x.items()})
        wf = solve_waveforms(eng, st, [stimulus], temperature_k=temperature_k, n_phase=n_phase)[0]
        g = {}
        for n, m in models.items():
            v = wf.voltage_v[n]
            v_rms = float(math.sqrt(float((v * v).mean()))) if v.size else 0.0
            g[n] = math.log(tripped_resistance_ohm(m, v_rms))
        h = {n: g[n] - x[n] for n in x}
        if all(abs(h[n]) < SETTLE_RTOL for n in x):
            break
        new = dict(g)
        if len(x) == 1 and prev is not None:
            (n,) = x
            xp, hp = prev
            if h[n] != hp and xp != x[n]:
                step = -h[n] * (x[n] - xp) / (h[n] - hp)
                if math.isfinite(step) and abs(step) < 5.0:
                    new[n] = x[n] + step
        prev = (next(iter(x.values())), next(iter(h.values()))) if len(x) == 1 else None
        x = new
    return eng, wf
