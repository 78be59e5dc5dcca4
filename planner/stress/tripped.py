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

import numpy as np

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


def _with(engine: Engine, values: dict, warm: bool = False) -> Engine:
    elems = tuple(replace(e, value_ohm=values[e.name]) if e.name in values else e for e in engine.net.elements)
    return Engine(engine.design.variant(replace(engine.net, elements=elems)), warm=warm)


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
    return settle_all(engine, st, [stimulus], temperature_k=temperature_k, n_phase=n_phase)[0]


def settle_all(engine: Engine, st, stimuli, *, temperature_k=None, n_phase=None) -> list[tuple]:
    """:func:`settle` for several stimuli on one network, solved together.

    Without a part that holds a tripped power, the stimuli are one batch of
    :func:`planner.stress.waveforms.solve_waveforms`. With one, each stimulus
    keeps its own iteration (its own resistances, given to the solver as factors
    per row); the stimuli of one source kind are solved in one batch per step, and
    a stimulus leaves the batch at the step where it has settled, so each ends
    where it would alone.

    Returns
    -------
    list of (Engine, Waveform), one per stimulus
    """
    stimuli = list(stimuli)
    ptcs = engine.spec.parts.ptcs
    fixed = {e.name: ptcs[e.ptc_model].tripped_resistance_ohm for e in engine.net.elements
             if isinstance(e, TrippedPtc) and ptcs[e.ptc_model].tripped_resistance_ohm is not None}
    if fixed:
        engine = _with(engine, fixed)
    held = _holding(engine)
    if not held:
        wfs = solve_waveforms(engine, st, stimuli, temperature_k=temperature_k, n_phase=n_phase)
        return [(engine, wf) for wf in wfs]
    models = {e.name: engine.spec.parts.ptcs[e.ptc_model] for e in held}
    # one network with each held part at 1 ohm, its resistance given as a factor per row and step
    # (the same resistances as a network per stimulus and step, without building one each time)
    unit = _with(engine, {n: 1.0 for n in models}, warm=True)  # each step starts from the one before
    out: list = [None] * len(stimuli)
    kinds: dict[tuple, list[int]] = {}
    for i, s in enumerate(stimuli):  # one batch per source kind, as solve_waveforms groups them
        kinds.setdefault((s.kind, s.kind == "voltage" and s.r_source_ohm > 0.0), []).append(i)
    for idx in kinds.values():
        for i, (used, wf) in zip(idx, _iterate(unit, st, [stimuli[i] for i in idx], models, temperature_k, n_phase)):
            out[i] = (_with(engine, {n: math.exp(v) for n, v in used.items()}), wf)
    return out


def _iterate(unit: Engine, st, stimuli, models: dict, temperature_k, n_phase) -> list[tuple]:
    """The settling iteration of :func:`settle` for stimuli of one source kind, one batch per step.

    Returns (the ln-resistances used, the waveform) per stimulus.
    """
    x = []
    for s in stimuli:
        v0 = max(abs(s.value), 1.0) if s.kind == "voltage" else 1e3
        x.append({n: math.log(v0 * v0 / m.tripped_power_w) for n, m in models.items()})
    prev: list = [None] * len(stimuli)
    done: list = [None] * len(stimuli)
    active = list(range(len(stimuli)))
    for step in range(SETTLE_MAX):
        factors = {n: np.array([math.exp(x[i][n]) for i in active]) for n in models}
        wfs = solve_waveforms(unit, st, [stimuli[i] for i in active], temperature_k=temperature_k,
                              n_phase=n_phase, factors=factors)
        still = []
        for i, wf in zip(active, wfs):
            g = {}
            for n, m in models.items():
                v = wf.voltage_v[n]
                v_rms = float(math.sqrt(float((v * v).mean()))) if v.size else 0.0
                g[n] = math.log(tripped_resistance_ohm(m, v_rms))
            h = {n: g[n] - x[i][n] for n in x[i]}
            if all(abs(h[n]) < SETTLE_RTOL for n in x[i]) or step == SETTLE_MAX - 1:
                done[i] = (x[i], wf)
                continue
            new = dict(g)
            if len(x[i]) == 1 and prev[i] is not None:
                (n,) = x[i]
                xp, hp = prev[i]
                if h[n] != hp and xp != x[i][n]:
                    dx = -h[n] * (x[i][n] - xp) / (h[n] - hp)
                    if math.isfinite(dx) and abs(dx) < 5.0:
                        new[n] = x[i][n] + dx
            prev[i] = (next(iter(x[i].values())), next(iter(h.values()))) if len(x[i]) == 1 else None
            x[i] = new
            still.append(i)
        active = still
        if not active:
            break
    return done
