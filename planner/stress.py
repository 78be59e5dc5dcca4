"""Stress of every part under one stimulus, judged against its ratings.

A stimulus is a voltage or current source on the input terminals of a switch
state: DC (one operating point), a sine (the instantaneous operating points over
one cycle, solved as one batch) or a short impulse (both polarities of its peak,
judged on peak quantities only). The network is resistive with diodes and has no
reactive parts, so the quasi-static treatment of a sine is exact: every instant
of the cycle is a DC operating point.

For each element the cycle gives the peak, mean and rms of its current, the peak
of its voltage and its mean power (the average of v i over the cycle, i.e. the
heating power). These are compared with the ratings of :mod:`planner.model`:

========== ================================= =====================================
part       quantity                          rating
========== ================================= =====================================
resistor   mean power                        ``Resistor.power_w``
resistor   peak voltage                      ``Resistor.max_voltage_v`` (limiting
                                             element voltage)
resistor   pulse energy while a fuse opens   :func:`resistor_pulse_limit_j`
resistor   peak voltage while a fuse opens   2 x ``max_voltage_v`` (short time)
diode      average current (mean of |i|)     ``DiodeModel.max_current_a``
diode      peak current                      ``DiodeModel.surge_current_a``
diode      mean power                        ``DiodeModel.max_power_w``
diode      I^2 t while a fuse opens          :func:`diode_i2t_allowed_a2s`
movement   peak multiple of I_fs             ``Overload.short_time``
movement   rms multiple (covers |mean|)      ``Overload.continuous`` (or
                                             ``short_time`` while a fuse opens)
movement   pointer (mean multiple)           ``Overload.peg`` (end stop)
fuse       rms current                       ``FuseModel.rated_current_a`` (opens)
fuse       prospective current               ``FuseModel.breaking_capacity_a``
fuse       voltage across it once open       ``FuseModel.max_voltage_v``
========== ================================= =====================================

While a fuse opens (the pulse from the fault to the end of arcing, see
:func:`fuse_let_through`) resistors and diodes are judged on their short-time
(pulse) ratings instead of their continuous ones, and the movement on its
short-time overload; a case whose parts all survive the pulse, whose fuse breaks
the prospective current and stands the recovery voltage, is ``ok`` (or ``pegs``):
the instrument survives, the fuse needs replacing.

The verdict follows the design contract: ``ok``, ``pegs``, ``overstress`` or
``hazard``; see :func:`verdict_of` and ``docs/safety.md``.

The public entry point for one stimulus is :func:`apply_stimulus` (the ``planner
apply`` command); :func:`assess` judges many stimuli on one switch state and is
what :mod:`planner.faults` builds on.
"""

from __future__ import annotations

import math
import weakref
from dataclasses import dataclass, field, replace

import networkx as nx
import numpy as np

from . import network as nw
from .design import Design, as_design
from .engine import Engine
from .errors import UsageError
from .model import Diode, Fuse, Resistor
from .stimulus import (HAZARD_DC_V, HAZARD_PEAK_V, HAZARD_RMS_V, PHASE_POINTS, WAVEFORMS, Stimulus,  # noqa: F401
                       hazardous_live)

#: Longest pre-arcing time [s] for which the movement is judged on its short-time
#: overload rather than its continuous one. From memory: the short-duration
#: overload test of IEC 60051 applies the overload for about 0.5 s; verify it
#: against the standard and the movement's data before relying on it.
SHORT_TIME_S = 0.5

#: Short-time overload of a fixed resistor, IEC 60115-1 (from memory; verify
#: against the edition in use): 2.5 x the rated voltage sqrt(P R), but not above
#: 2 x the limiting element voltage, for 5 s. The power factor is 2.5^2.
SHORT_OVERLOAD_S = 5.0
SHORT_OVERLOAD_POWER_FACTOR = 2.5 ** 2
SHORT_OVERLOAD_VOLTAGE_FACTOR = 2.0

#: Duration of a diode's non-repetitive surge-current rating: one half-cycle of
#: 60 Hz (JEDEC 8.3 ms half-sine; common practice in diode data sheets) [s].
SURGE_HALF_CYCLE_S = 1.0 / 120.0
#: Shortest pulse for which a diode's I^2 t (for fusing) holds constant [s]; below
#: it the current is held to the level that reaches that I^2 t in this time
#: (from memory: data sheets quote I^2 t for 1 ms to 8.3 ms).
DIODE_I2T_MIN_S = 1e-3

#: Resistance [ohm] that stands in for a fuse once it has opened: the insulation
#: of the open fuse, high enough that no part is stressed through it, low enough
#: to keep the nodal matrix well conditioned.
OPEN_FUSE_OHM = 1e9

#: Ratio above which a rating counts as exceeded (guards round-off at exactly 1).
_EXCEED = 1.0 + 1e-9

VERDICTS = ("ok", "pegs", "overstress", "hazard")


# --- solved waveforms ----------------------------------------------------------------


@dataclass
class Waveform:
    """The operating points of one stimulus on one switch state, per sample.

    Attributes
    ----------
    stimulus : Stimulus
    state : SwitchState
    current_a, voltage_v : dict of str -> ndarray (n,)
        Each non-contact element's current [A] (first node to second) and
        voltage [V].
    movement_current_a : ndarray (n,)
    source_current_a : ndarray (n,)
        Current the source delivers into the plus terminal [A].
    terminal_v : ndarray (n,)
        Voltage across the input terminals [V].
    source_v : ndarray (n,)
        Open-circuit value of the source at each sample [V] (voltage sources) or
        the terminal voltage (current sources).
    limited : ndarray of bool (n,)
        Samples where the source's current limit took over.
    open_input : bool
        True when no path joins the input terminals in this state.
    """

    stimulus: Stimulus
    state: nw.SwitchState
    current_a: dict
    voltage_v: dict
    movement_current_a: np.ndarray
    source_current_a: np.ndarray
    terminal_v: np.ndarray
    source_v: np.ndarray
    limited: np.ndarray
    open_input: bool = False


def _input_connected(engine: Engine, st: nw.SwitchState) -> bool:
    g = nw.active_graph(engine.net, st)
    plus, minus = st.position.input
    return nx.has_path(g, plus, minus)


def _stress_elements(engine: Engine) -> list:
    return [e for e in engine.net.elements if e.rated]


def solve_waveforms(engine: Engine, state, stimuli, *, temperature_k=None,
                    n_phase: int | None = None) -> list[Waveform]:
    """Solve several stimuli on one switch state, batched by source kind.

    Parameters
    ----------
    engine : Engine
    state : str or SwitchState
        Position or transition.
    stimuli : sequence of Stimulus
    temperature_k : float, optional
        Ambient temperature [K]; the reference temperature by default.
    n_phase : int, optional
        Phase points per sine cycle; ``PHASE_POINTS`` by default.

    Returns
    -------
    list of Waveform, one per stimulus.

    Notes
    -----
    Stimuli of one kind and with (or without) a source impedance are solved in
    one call of :meth:`Engine.operate`, one parameter row per stimulus (so each
    row carries its own source impedance) and one column per sample.

    A current limit is applied the exact way for a resistive network with diodes,
    whose input current rises monotonically with the applied voltage: the samples
    whose source current at the nominal voltage exceeds the limit are solved
    again as a current source of the limit value, with the sign of that current.
    That is what a bench supply does when it crosses over from constant voltage
    to constant current.
    """
    st = engine.state(state)
    stimuli = list(stimuli)
    n_phase = n_phase or PHASE_POINTS
    out: list[Waveform | None] = [None] * len(stimuli)
    elements = _stress_elements(engine)
    if not _input_connected(engine, st):
        for j, s in enumerate(stimuli):
            x = s.samples(n_phase)
            z = np.zeros_like(x)
            out[j] = Waveform(s, st, {e.name: z for e in elements}, {e.name: z for e in elements}, z, z,
                              x if s.kind == "voltage" else z, x if s.kind == "voltage" else z,
                              np.zeros(x.shape, dtype=bool), open_input=True)
        return out

    groups: dict[tuple, list[int]] = {}
    for j, s in enumerate(stimuli):
        key = (s.kind, s.kind == "voltage" and s.r_source_ohm > 0.0)
        groups.setdefault(key, []).append(j)
    plus, minus = st.position.input
    for (kind, has_r), idx in groups.items():
        rows = [stimuli[j].samples(n_phase) for j in idx]
        width = max(len(r) for r in rows)
        stim = np.array([np.resize(r, width) for r in rows])
        r_src = np.array([stimuli[j].r_source_ohm for j in idx]) if has_r else 0.0
        op = engine.operate(st, stim, kind=kind, temperature_k=temperature_k, r_source_ohm=r_src)
        cur = {e.name: op.element(e.name).current_a for e in elements}
        vol = {e.name: op.element(e.name).voltage_v for e in elements}
        i_m = op.movement_current_a
        i_src = np.array(op.source_current_a)
        v_t = op.node_voltage(plus) - op.node_voltage(minus)
        limited = np.zeros(stim.shape, dtype=bool)
        if kind == "voltage":
            patch = []
            for row, j in enumerate(idx):
                lim = stimuli[j].current_limit_a
                if lim is None:
                    continue
                n = len(rows[row])
                for k in np.nonzero(np.abs(i_src[row, :n]) > lim)[0]:
                    patch.append((row, k, math.copysign(lim, i_src[row, k])))
            if patch:
                op2 = engine.operate(st, np.array([p[2] for p in patch]), kind="current",
                                     temperature_k=temperature_k)
                rr = np.array([p[0] for p in patch])
                kk = np.array([p[1] for p in patch])
                for e in elements:
                    es = op2.element(e.name)
                    cur[e.name] = np.array(cur[e.name])
                    vol[e.name] = np.array(vol[e.name])
                    cur[e.name][rr, kk] = es.current_a[0]
                    vol[e.name][rr, kk] = es.voltage_v[0]
                i_m = np.array(i_m)
                i_m[rr, kk] = op2.movement_current_a[0]
                i_src[rr, kk] = op2.source_current_a[0]
                v_t = np.array(v_t)
                v_t[rr, kk] = (op2.node_voltage(plus) - op2.node_voltage(minus))[0]
                limited[rr, kk] = True
        for row, j in enumerate(idx):
            n = len(rows[row])
            src_v = stim[row, :n] if kind == "voltage" else v_t[row, :n]
            out[j] = Waveform(
                stimuli[j], st,
                {k: np.array(v[row, :n]) for k, v in cur.items()},
                {k: np.array(v[row, :n]) for k, v in vol.items()},
                np.array(i_m[row, :n]), np.array(i_src[row, :n]), np.array(v_t[row, :n]),
                np.array(src_v), limited[row, :n].copy())
    return out


# --- statistics and checks -------------------------------------------------------------


def cycle_stats(x) -> dict:
    """Peak, mean and rms of samples equally spaced over one cycle.

    Notes
    -----
    :math:`X_{pk} = \\max |x_k|`, :math:`\\bar X = \\frac1N \\sum x_k`,
    :math:`X_{rms} = \\sqrt{\\frac1N \\sum x_k^2}` (the rectangle rule, exact for a
    trigonometric polynomial of degree below N; a DC stimulus is one sample).
    """
    x = np.asarray(x, dtype=float)
    n = x.size
    ax = np.abs(x)
    # sums over n, not np.mean: the same pairwise sums (the same numbers), without np.mean's
    # per-call cost (this runs once per part, quantity and case: 22 000 times for a 50-stack)
    return {"peak": float(ax.max()), "mean": float(x.sum() / n), "rms": float(np.sqrt((x * x).sum() / n)),
            "mean_abs": float(ax.sum() / n)}


def _entry(part, kind, quantity, value, rating, unit, limit, **extra):
    ratio = value / rating if rating > 0 else (0.0 if value == 0 else 1e300)
    d = {"part": part, "kind": kind, "quantity": quantity, "value": float(value), "rating": float(rating),
         "ratio": float(ratio), "unit": unit, "limit": limit, "exceeded": bool(ratio > _EXCEED)}
    d.update(extra)
    return d


def pre_arcing_time_s(fuse, i_rms_a: float) -> float | None:
    """Pre-arcing (melting) time of a fuse at an rms current [s].

    Parameters
    ----------
    fuse : FuseModel
    i_rms_a : float
        RMS current through the fuse [A].

    Returns
    -------
    float or None
        ``inf`` below the lowest current of its time-current curve; None when the
        model has neither curve nor I^2 t.

    Notes
    -----
    With time-current points, log-log interpolation between the points,
    :math:`\\log t = \\log t_1 + (\\log t_2 - \\log t_1)
    \\frac{\\log I - \\log I_1}{\\log I_2 - \\log I_1}`, and beyond the highest point the
    adiabatic law :math:`t = t_n (I_n / I)^2` (constant I^2 t). With only the
    pre-arcing integral, :math:`t = I^2t / I_{rms}^2`.

    References
    ----------
    IEC 60127-1, *Miniature fuses*, definitions of pre-arcing time and I^2 t;
    the log-log plot of time-current characteristics is common practice.
    """
    i = abs(float(i_rms_a))
    if i <= 0.0:
        return math.inf
    if fuse.curve:
        pts = sorted(fuse.curve)
        cur = np.array([p[0] for p in pts], dtype=float)
        t = np.array([p[1] for p in pts], dtype=float)
        if i < cur[0]:
            return math.inf
        if i >= cur[-1]:
            return float(t[-1] * (cur[-1] / i) ** 2)
        return float(np.exp(np.interp(np.log(i), np.log(cur), np.log(t))))
    if fuse.i2t_a2s is not None:
        return float(fuse.i2t_a2s / (i * i))
    return None


def _melting_i2t_a2s(fuse) -> float | None:
    """Pre-arcing I^2 t of a fuse at high current [A^2 s]: ``i2t``, else the top of its curve."""
    if fuse.i2t_a2s is not None:
        return float(fuse.i2t_a2s)
    if fuse.curve:
        i_n, t_n = max(fuse.curve)
        return float(i_n * i_n * t_n)
    return None


def fuse_let_through(fuse, i_rms_a: float) -> dict | None:
    """The pulse a fuse lets through while it opens at an rms current.

    Parameters
    ----------
    fuse : FuseModel
    i_rms_a : float
        RMS current through the fuse before it opens [A].

    Returns
    -------
    dict or None
        ``pre_arcing_time_s``, ``arcing_i2t_a2s``, ``let_through_i2t_a2s``,
        ``event_time_s`` (the equivalent duration of the whole pulse at
        ``i_rms_a``) and ``arcing_known``; None when the fuse does not open in a
        known, finite time (no I^2 t or curve, or below its curve).

    Notes
    -----
    Pre-arcing :math:`I^2t_{pa} = I_{rms}^2 t_{pa}` with :math:`t_{pa}` from
    :func:`pre_arcing_time_s`. Arcing adds :math:`I^2t_{arc} = I^2t_{clear} -
    I^2t_{melt}` (the clearing, i.e. total operating, I^2 t less the melting I^2 t
    at high current; 0 when ``clearing_i2t_a2s`` is not given). The let-through
    is :math:`I^2t = I^2t_{pa} + I^2t_{arc}` and the equivalent duration
    :math:`t_{ev} = I^2t / I_{rms}^2`. A part carrying a fixed share of the fuse
    current (a linear network) takes the energy :math:`E = \\bar P \\, t_{ev}`,
    i.e. :math:`E = R \\, I^2t` for a resistor R in series with the fuse, whatever
    the waveform; the arcing current is at most the current before the arc, so
    this bounds the energy from above.

    References
    ----------
    IEC 60127-1, *Miniature fuses*, and IEC 60269-1, *Low-voltage fuses*:
    definitions of pre-arcing time, arcing time, operating time and I^2 t (Joule
    integral). The additive split pre-arcing + arcing is the definition of the
    operating I^2 t.
    """
    i = abs(float(i_rms_a))
    t_pa = pre_arcing_time_s(fuse, i)
    if t_pa is None or not math.isfinite(t_pa) or i <= 0.0:
        return None
    i2t_pa = i * i * t_pa
    melt = _melting_i2t_a2s(fuse)
    clear = fuse.clearing_i2t_a2s
    arc = max(0.0, clear - melt) if (clear is not None and melt is not None) else 0.0
    total = i2t_pa + arc
    return {"pre_arcing_time_s": float(t_pa), "arcing_i2t_a2s": float(arc), "let_through_i2t_a2s": float(total),
            "event_time_s": float(total / (i * i)), "arcing_known": clear is not None}


def short_time_power_w(r: Resistor) -> float:
    """Power a resistor stands for up to 5 s (IEC 60115-1 short-time overload) [W].

    Parameters
    ----------
    r : Resistor

    Returns
    -------
    float
        :math:`P_{st} = \\min(6.25 P, (2 V_{max})^2 / R)` [W].

    Notes
    -----
    The short-time overload test applies :math:`U = 2.5 \\sqrt{P R}`, capped at
    :math:`2 V_{max}`, for 5 s; the power at that voltage is :math:`U^2 / R`.

    References
    ----------
    IEC 60115-1, *Fixed resistors for use in electronic equipment - Part 1:
    Generic specification*, short-time overload test (from memory: 2.5 x rated
    voltage, not above 2 x limiting element voltage, 5 s; verify against the
    edition in use).
    """
    p = SHORT_OVERLOAD_POWER_FACTOR * r.power_w
    if math.isfinite(r.max_voltage_v) and r.value_ohm > 0:
        p = min(p, (SHORT_OVERLOAD_VOLTAGE_FACTOR * r.max_voltage_v) ** 2 / r.value_ohm)
    return float(p)


def resistor_pulse_energy_j(spec, r: Resistor) -> float | None:
    """The single-pulse energy of a resistor element [J], or None when none is given.

    The element's own ``pulse_energy_j``; else that of the rating it carries in
    ``parts.resistors`` (matched by power and limiting element voltage: the
    ``ratings`` ladder, then the default rating).
    """
    if r.pulse_energy_j is not None:
        return float(r.pulse_energy_j)
    rp = spec.parts.resistors
    for k, (pw, pe) in enumerate(zip(rp.power_ratings_w, rp.pulse_energies_j)):
        vk = rp.max_voltages_v[k] if k < len(rp.max_voltages_v) else rp.max_voltage_v
        if pe is not None and pw == r.power_w and vk == r.max_voltage_v:
            return float(pe)
    if rp.pulse_energy_j is not None and rp.power_w == r.power_w and rp.max_voltage_v == r.max_voltage_v:
        return float(rp.pulse_energy_j)
    return None


def resistor_pulse_limit_j(r: Resistor, duration_s: float, pulse_energy_j: float | None = None) -> float:
    """Energy a resistor survives in one pulse of a given duration (up to 5 s) [J].

    Parameters
    ----------
    r : Resistor
    duration_s : float
        Duration of the pulse [s], at most ``SHORT_OVERLOAD_S``.
    pulse_energy_j : float, optional
        The part's single-pulse energy [J] (the maker's figure for the shortest
        pulses; it holds for every duration up to 5 s).

    Returns
    -------
    float
        :math:`E_{allowed} = \\max(E_{pulse}, P_{st} t)` [J].

    Notes
    -----
    Two lower bounds of what the part survives, so their maximum is one too:
    the maker's single-pulse energy :math:`E_{pulse}`, and the short-time
    overload :math:`P_{st}` (:func:`short_time_power_w`) held for the pulse's
    duration t (a part that stands :math:`P_{st}` for 5 s stands it for any
    shorter time). Without a maker's figure only the second applies; it is
    conservative because the energy a resistor absorbs in a short pulse is
    limited by the heat capacity that pulse reaches, which shrinks as the pulse
    shortens: a constant energy taken from the 5 s test would not be.

    References
    ----------
    IEC 60115-1, short-time overload test (from memory, see
    :func:`short_time_power_w`); the maker's single-pulse energy or pulse-load
    curve (common practice for pulse-withstanding resistors).
    """
    t = min(max(float(duration_s), 0.0), SHORT_OVERLOAD_S)
    return float(max(pulse_energy_j or 0.0, short_time_power_w(r) * t))


def diode_i2t_a2s(d) -> float:
    """Non-repetitive I^2 t of a diode for pulses shorter than the surge half-cycle [A^2 s].

    Parameters
    ----------
    d : DiodeModel

    Returns
    -------
    float
        ``d.i2t_a2s`` when given, else :math:`I_{FSM}^2 \\, t_{hs} / 2` with
        :math:`t_{hs}` = 8.3 ms (``inf`` when the diode has no surge rating).

    Notes
    -----
    The surge rating :math:`I_{FSM}` is the peak of one half-sine of 60 Hz;
    its Joule integral is :math:`\\int_0^{t_{hs}} I_{FSM}^2 \\sin^2(\\pi t / t_{hs})
    \\, dt = I_{FSM}^2 t_{hs} / 2`.

    References
    ----------
    JEDEC 8.3 ms half-sine surge rating and the "I^2 t for fusing" figure of
    rectifier data sheets (common practice: e.g. 30 A surge and about 3.7 A^2 s
    for a 1 A rectifier, from memory).
    """
    if d.i2t_a2s is not None:
        return float(d.i2t_a2s)
    if not math.isfinite(d.surge_current_a):
        return math.inf
    return float(d.surge_current_a ** 2 * SURGE_HALF_CYCLE_S / 2.0)


def diode_i2t_allowed_a2s(d, duration_s: float) -> float:
    """I^2 t a diode survives in one pulse of a given duration (up to the surge half-cycle) [A^2 s].

    Notes
    -----
    :math:`I^2t_{allowed} = I^2t_d \\min(1, t / 1\\,ms)`: the data-sheet figure
    (:func:`diode_i2t_a2s`) from 1 ms to 8.3 ms; below 1 ms the current is held
    to the level that reaches it in 1 ms, which is conservative (a junction
    stands more current in a shorter pulse).

    References
    ----------
    Rectifier data sheets, "I^2 t for fusing, 1 ms < t < 8.3 ms" (from memory).
    """
    return float(diode_i2t_a2s(d) * min(1.0, max(float(duration_s), 0.0) / DIODE_I2T_MIN_S))


@dataclass
class Judgement:
    """Stresses and verdict of one solved waveform."""

    stresses: list
    fuses: list
    notes: list
    opened: frozenset
    short_exposure: bool
    hazardous: bool
    movement: dict
    parts: list = field(default_factory=list)
    event: dict | None = None


def judge(engine: Engine, wf: Waveform, *, phase: str = "", opened=frozenset(),
          short_exposure: bool | None = None) -> Judgement:
    """Compare the stresses of one solved waveform with the parts' ratings.

    Parameters
    ----------
    engine : Engine
    wf : Waveform
    phase : str
        Words appended to each quantity (``'after F1 opens'``).
    opened : frozenset of str
        Fuses already open in this network (their stand-in resistor is judged on
        the fuse's rated voltage only).
    short_exposure : bool, optional
        Force the movement's exposure to short-time (True) or continuous (False);
        by default short-time exactly when a fuse opens within ``SHORT_TIME_S``.

    Returns
    -------
    Judgement

    Notes
    -----
    Mean power is :math:`\\bar P = \\frac1N \\sum v_k i_k`, the heating power of a
    quasi-static cycle. The prospective current of a fuse is the largest
    |source current| of the cycle, which is the source's peak value over its
    impedance plus the cold network's resistance.

    When fuses open in a known time (the *event*, :func:`fuse_let_through`; the
    longest let-through of the fuses that open sets its duration
    :math:`t_{ev}`), a resistor is judged on the energy
    :math:`E = \\bar P t_{ev}` against :func:`resistor_pulse_limit_j` and its peak
    voltage against twice its limiting element voltage (for :math:`t_{ev}` up
    to 5 s), and a diode on :math:`I_{rms}^2 t_{ev}` against
    :func:`diode_i2t_allowed_a2s` (for :math:`t_{ev}` up to 8.3 ms) instead of
    their continuous ratings. Longer events, and fuses whose time is unknown,
    leave every part judged on its continuous ratings.
    """
    spec = engine.spec
    s = wf.stimulus
    mv = spec.movement
    ov = mv.overload
    sfx = f" {phase}" if phase else ""
    stresses, fuses, notes, parts = [], [], [], []
    peak_only = s.peak_only

    hazardous = hazardous_live(s.waveform, wf.source_v if s.kind == "voltage" else wf.terminal_v)
    if s.kind == "voltage" and s.current_limit_a is not None:
        hazardous = hazardous or hazardous_live(s.waveform, s.samples())
    if wf.open_input:
        notes.append(f"{wf.state.name}: no path joins the input terminals, so no current flows")
    if wf.limited.any():
        notes.append(f"the source's current limit of {s.current_limit_a:g} A takes over "
                     f"on {int(wf.limited.sum())} of {wf.limited.size} samples")

    # fuses first: whether one opens decides the movement's exposure
    newly = []
    prospective = float(np.max(np.abs(wf.source_current_a))) if wf.source_current_a.size else 0.0
    for e in _stress_elements(engine):
        i_st = cycle_stats(wf.current_a[e.name])
        v_st = cycle_stats(wf.voltage_v[e.name])
        p_mean = float(np.mean(wf.current_a[e.name] * wf.voltage_v[e.name]))
        parts.append({"name": e.name, "kind": e.kind, "current_peak_a": i_st["peak"], "current_mean_a": i_st["mean"],
                      "current_rms_a": i_st["rms"], "voltage_peak_v": v_st["peak"], "voltage_rms_v": v_st["rms"],
                      "voltage_mean_v": v_st["mean"], "power_w": p_mean})
        if e.name in opened:
            fm = _fuse_model_of(engine, e.name)
            if fm is not None and math.isfinite(fm.max_voltage_v):
                v_rec = v_st["rms"] if s.waveform.cyclic else v_st["peak"]
                stresses.append(_entry(e.name, "fuse", f"voltage across the open fuse{sfx}", v_rec,
                                       fm.max_voltage_v, "V", "safety"))
            continue
        if not isinstance(e, Fuse) or peak_only:
            continue
        fm = spec.parts.fuses[e.model]
        i_rms = i_st["rms"]
        opens = i_rms > fm.rated_current_a * _EXCEED
        t_pa = pre_arcing_time_s(fm, i_rms) if opens else None
        stresses.append(_entry(e.name, "fuse", f"rms current{sfx}", i_rms, fm.rated_current_a, "A", "fuse trigger"))
        lt = fuse_let_through(fm, i_rms) if opens else None
        info = {"name": e.name, "model": fm.name, "current_rms_a": i_rms, "rated_current_a": fm.rated_current_a,
                "opens": bool(opens), "pre_arcing_time_s": t_pa if (t_pa is None or math.isfinite(t_pa)) else None,
                "time_known": t_pa is not None, "prospective_current_a": prospective,
                "breaking_capacity_a": fm.breaking_capacity_a,
                "let_through_i2t_a2s": lt["let_through_i2t_a2s"] if lt else None,
                "arcing_i2t_a2s": lt["arcing_i2t_a2s"] if lt else None,
                "event_time_s": lt["event_time_s"] if lt else None,
                "arcing_known": bool(lt and lt["arcing_known"])}
        fuses.append(info)
        if opens:
            newly.append(e.name)
            stresses.append(_entry(e.name, "fuse", f"prospective current{sfx}", prospective,
                                   fm.breaking_capacity_a, "A", "safety"))
            if t_pa is None:
                notes.append(f"{e.name} opens at {i_rms:.4g} A rms; its model gives no I2t or curve, "
                             "so the pre-arcing time is unknown: give i2t or curve")
            elif math.isinf(t_pa):
                notes.append(f"{e.name} carries {i_rms:.4g} A rms, above its {fm.rated_current_a:g} A rating "
                             "but below its time-current curve: it may not open for a long time")
            else:
                arc = (f", arcing {lt['arcing_i2t_a2s']:.3g} A^2 s" if lt["arcing_known"] else
                       "; no clearing_i2t given, so the pulse is counted over the pre-arcing time only")
                notes.append(f"{e.name} opens: {i_rms:.4g} A rms, pre-arcing time {t_pa:.3g} s, let-through "
                             f"{lt['let_through_i2t_a2s']:.3g} A^2 s{arc}")
    fast = [f for f in fuses if f["opens"] and f["event_time_s"] is not None
            and f["event_time_s"] <= SHORT_TIME_S]
    unknown = [f for f in fuses if f["opens"] and not f["time_known"]]
    if short_exposure is None:
        short_exposure = bool(fast or unknown)
    if short_exposure and (fast or unknown):
        names = ", ".join(f["name"] for f in fast + unknown)
        notes.append(f"the movement is judged on its short-time overload ({ov.short_time:g} x) because "
                     f"{names} opens within {SHORT_TIME_S:g} s (or an unknown time); what follows is judged "
                     "after it opens")
    elif any(f["opens"] for f in fuses):
        notes.append(f"a fuse opens only after more than {SHORT_TIME_S:g} s, so the movement is judged "
                     "on its continuous overload")

    # the event: every fuse that opens does so in a known, finite time
    opening = [f for f in fuses if f["opens"]]
    event = None
    if opening and short_exposure is not False and all(f["event_time_s"] is not None for f in opening):
        lead = max(opening, key=lambda f: f["event_time_s"])
        names = " and ".join(f["name"] for f in opening)
        event = {"fuses": [f["name"] for f in opening], "fuse": lead["name"],
                 "pre_arcing_time_s": lead["pre_arcing_time_s"], "let_through_i2t_a2s": lead["let_through_i2t_a2s"],
                 "event_time_s": lead["event_time_s"],
                 "words": f"while {names} open{'s' if len(opening) == 1 else ''}"}
    elif opening and short_exposure is not False:
        notes.append("a fuse opens in an unknown or long time, so resistors and diodes are judged on their "
                     "continuous ratings")
    t_ev = event["event_time_s"] if event else math.inf
    pulse_r = event is not None and t_ev <= SHORT_OVERLOAD_S
    pulse_d = event is not None and t_ev <= SURGE_HALF_CYCLE_S
    if event is not None and not pulse_r:
        notes.append(f"the pulse lasts {t_ev:.3g} s, longer than the {SHORT_OVERLOAD_S:g} s short-time overload of "
                     "a resistor: every part is judged on its continuous ratings")

    # resistors and diodes
    for e in _stress_elements(engine):
        if e.name in opened:
            continue
        i = wf.current_a[e.name]
        v = wf.voltage_v[e.name]
        i_st, v_st = cycle_stats(i), cycle_stats(v)
        p_mean = float(np.mean(i * v))
        if isinstance(e, Resistor) and pulse_r:
            pe = resistor_pulse_energy_j(spec, e)
            lim = resistor_pulse_limit_j(e, t_ev, pe)
            basis = "pulse_energy" if (pe is not None and pe >= short_time_power_w(e) * t_ev) else "short-time overload"
            stresses.append(_entry(e.name, "resistor", f"pulse energy {event['words']}{sfx}", abs(p_mean) * t_ev, lim,
                                   "J", "rating", duration_s=t_ev, basis=basis))
            if math.isfinite(e.max_voltage_v):
                stresses.append(_entry(e.name, "resistor", f"peak voltage {event['words']}{sfx}", v_st["peak"],
                                       SHORT_OVERLOAD_VOLTAGE_FACTOR * e.max_voltage_v, "V", "rating"))
        elif isinstance(e, Resistor):
            if not peak_only and math.isfinite(e.power_w):
                stresses.append(_entry(e.name, "resistor", f"power{sfx}", p_mean, e.power_w, "W", "rating"))
            if math.isfinite(e.max_voltage_v):
                stresses.append(_entry(e.name, "resistor", f"peak voltage{sfx}", v_st["peak"], e.max_voltage_v,
                                       "V", "rating"))
        elif isinstance(e, Diode) and pulse_d:
            d = spec.parts.diodes[e.model]
            allowed = diode_i2t_allowed_a2s(d, t_ev)
            if math.isfinite(allowed):
                stresses.append(_entry(e.name, "diode", f"I2t {event['words']}{sfx}", i_st["rms"] ** 2 * t_ev, allowed,
                                       "A^2 s", "rating", duration_s=t_ev))
        elif isinstance(e, Diode):
            d = spec.parts.diodes[e.model]
            if not peak_only and math.isfinite(d.max_current_a):
                stresses.append(_entry(e.name, "diode", f"average current{sfx}", i_st["mean_abs"], d.max_current_a,
                                       "A", "rating"))
            if math.isfinite(d.surge_current_a):
                stresses.append(_entry(e.name, "diode", f"peak current{sfx}", i_st["peak"], d.surge_current_a,
                                       "A", "rating"))
            if not peak_only and math.isfinite(d.max_power_w):
                stresses.append(_entry(e.name, "diode", f"power{sfx}", abs(p_mean), d.max_power_w, "W", "rating"))

    # the movement
    m = engine.movement
    i_fs = mv.i_fs_a
    ms = cycle_stats(wf.movement_current_a / i_fs)
    stresses.append(_entry(m.name, "movement", f"peak multiple{sfx}", ms["peak"], ov.short_time, "x I_fs", "rating"))
    if not peak_only:
        # heating follows the rms; |mean| <= rms, so the rms check covers the mean too
        if short_exposure:
            rating, words = ov.short_time, " until the fuse opens"
        else:
            rating, words = ov.continuous, ""
        q = "rms multiple" if s.waveform.cyclic else "multiple"
        stresses.append(_entry(m.name, "movement", f"{q}{words}{sfx}", ms["rms"], rating, "x I_fs", "rating"))
        # the pointer: forward end stop at `peg`, zero-end stop assumed as far below zero
        # as the forward stop is beyond full scale (common practice: a few percent)
        if ms["mean"] >= 0.0:
            stresses.append(_entry(m.name, "movement", f"pointer (mean multiple){sfx}", ms["mean"], ov.peg,
                                   "x I_fs", "end stop"))
        else:
            back = max(ov.peg - 1.0, 1e-3)
            stresses.append(_entry(m.name, "movement", f"pointer below zero (mean multiple){sfx}", -ms["mean"], back,
                                   "x I_fs", "end stop"))
    movement = {"current_a": float(ms["mean"] * i_fs) if s.waveform.cyclic else float(wf.movement_current_a[0]),
                "multiple": ms["peak"], "rms_multiple": ms["rms"], "mean_multiple": ms["mean"],
                "peak_current_a": ms["peak"] * i_fs, "rms_current_a": ms["rms"] * i_fs}
    return Judgement(stresses, fuses, notes, frozenset(newly), bool(short_exposure), hazardous, movement, parts,
                     event)


def _fuse_model_of(engine: Engine, name: str):
    """The fuse model of an element that was a fuse in the original network."""
    orig = getattr(engine, "_planner_original_net", engine.net)
    try:
        e = orig.element(name)
    except KeyError:
        return None
    return engine.spec.parts.fuses.get(e.model) if isinstance(e, Fuse) else None


def verdict_of(stresses, hazardous: bool) -> tuple[str, dict | None]:
    """Verdict and deciding stress of a list of stresses (design contract).

    Returns
    -------
    verdict : {'ok', 'pegs', 'overstress', 'hazard'}
        ``hazard`` when a safety limit is exceeded (a fuse asked to break more than
        its breaking capacity, or to stand more than its rated voltage) or when any
        rating is exceeded while the stimulus is at a hazardous voltage;
        ``overstress`` when a rating is exceeded; ``pegs`` when only the pointer's
        end stop is passed; ``ok`` otherwise.
    deciding : dict or None
        The stress that decided (for ``ok``, the one closest to its rating).
    """
    def worst(kinds):
        c = [x for x in stresses if x["limit"] in kinds]
        return max(c, key=lambda x: x["ratio"]) if c else None

    safety = [x for x in stresses if x["limit"] == "safety" and x["exceeded"]]
    rating = [x for x in stresses if x["limit"] == "rating" and x["exceeded"]]
    peg = [x for x in stresses if x["limit"] == "end stop" and x["exceeded"]]
    if safety:
        return "hazard", max(safety, key=lambda x: x["ratio"])
    if rating:
        top = max(rating, key=lambda x: x["ratio"])
        return ("hazard" if hazardous else "overstress"), top
    if peg:
        return "pegs", max(peg, key=lambda x: x["ratio"])
    return "ok", worst(("rating",))


# --- opened fuses ------------------------------------------------------------------------

_OPEN_ENGINES: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()


def _open_fuse_engine(engine: Engine, opened: frozenset) -> Engine:
    """An engine on the same network with the named fuses open.

    Each open fuse is replaced by a resistor of ``OPEN_FUSE_OHM`` between its
    nodes, so every position still validates and the voltage across the open
    fuse (the recovery voltage) is solved.
    """
    cache = _OPEN_ENGINES.setdefault(engine, {})
    if opened not in cache:
        orig = getattr(engine, "_planner_original_net", engine.net)
        elems = []
        for e in engine.net.elements:
            if e.name in opened and isinstance(e, Fuse):
                elems.append(Resistor(e.name, e.a, e.b, OPEN_FUSE_OHM, tolerance=0.0, tempco_per_k=0.0,
                                      power_w=math.inf, max_voltage_v=math.inf, line=e.line))
            else:
                elems.append(e)
        eng = Engine(engine.design.variant(replace(engine.net, elements=tuple(elems)), validate=True))
        eng._planner_original_net = orig
        cache[opened] = eng
    return cache[opened]


# --- assessment ----------------------------------------------------------------------------


def assess(engine: Engine, state, stimuli, *, temperature_k=None, n_phase: int | None = None,
           with_parts: bool = False) -> list[dict]:
    """Judge several stimuli on one switch state.

    Parameters
    ----------
    engine : Engine
    state : str or SwitchState
    stimuli : sequence of Stimulus
    temperature_k : float, optional
    n_phase : int, optional
        Phase points per sine cycle; ``PHASE_POINTS`` by default.
    with_parts : bool
        Include every part's current, voltage and power in each result.

    Returns
    -------
    list of dict
        One case per stimulus with ``verdict``, ``deciding``, ``stresses``,
        ``movement_multiple`` (peak), ``movement_rms_multiple``,
        ``movement_mean_multiple``, ``movement_current_a``, ``fuses``, ``notes``,
        ``hazardous_voltage``, ``fuse_opens``, ``fuse``, ``pre_arcing_time_s``,
        ``let_through_i2t_a2s``, ``event_time_s``, ``detail`` and, with
        ``with_parts``, ``parts``.

    Notes
    -----
    When a fuse opens, the stresses before it opens are judged as a pulse: the
    resistors and diodes on their short-time (pulse) ratings and the movement on
    its short-time overload (if the fuse clears within ``SHORT_TIME_S``), see
    :func:`judge`; then the network with the fuse open is solved again under the
    same stimulus and judged on the continuous ratings, until no further fuse
    opens.

    References
    ----------
    IEC 60127-1 (fuse pre-arcing time and I^2 t); IEC 60115-1 (short-time
    overload of resistors, from memory); see :func:`fuse_let_through`,
    :func:`resistor_pulse_limit_j`, :func:`diode_i2t_allowed_a2s`.
    """
    st = engine.state(state)
    stimuli = list(stimuli)
    wfs = solve_waveforms(engine, st, stimuli, temperature_k=temperature_k, n_phase=n_phase)
    results = []
    for s, wf in zip(stimuli, wfs):
        j = judge(engine, wf)
        stresses = list(j.stresses)
        fuses, notes = list(j.fuses), list(j.notes)
        hazardous = j.hazardous
        opened = j.opened
        after = None
        eng = engine
        while opened and not s.peak_only:
            eng = _open_fuse_engine(engine, opened)
            wf2 = solve_waveforms(eng, st, [s], temperature_k=temperature_k, n_phase=n_phase)[0]
            label = "after " + ", ".join(sorted(opened)) + (" opens" if len(opened) == 1 else " open")
            j2 = judge(eng, wf2, phase=label, opened=opened, short_exposure=False)
            stresses += j2.stresses
            fuses += [dict(f, after=sorted(opened)) for f in j2.fuses]
            notes += j2.notes
            hazardous = hazardous or j2.hazardous
            after = {"opened": sorted(opened), "movement_multiple": j2.movement["multiple"],
                     "movement_rms_multiple": j2.movement["rms_multiple"],
                     "movement_mean_multiple": j2.movement["mean_multiple"]}
            new = j2.opened - opened
            if not new:
                break
            opened = opened | new
        verdict, deciding = verdict_of(stresses, hazardous)
        mv = j.movement
        first = [f for f in j.fuses if f["opens"]]
        ev = j.event
        case = {
            "position": st.position.name,
            "state": st.name,
            "stimulus": s.name,
            "stimulus_detail": s.as_dict(),
            "verdict": verdict,
            "deciding": deciding,
            "movement_current_a": mv["current_a"],
            "movement_peak_current_a": mv["peak_current_a"],
            "movement_rms_current_a": mv["rms_current_a"],
            "movement_multiple": max(mv["multiple"], after["movement_multiple"] if after else 0.0),
            "movement_rms_multiple": mv["rms_multiple"],
            "movement_mean_multiple": mv["mean_multiple"],
            "reading": mv["mean_multiple"] * st.position.full_scale,
            "hazardous_voltage": hazardous,
            "stresses": stresses,
            "fuses": fuses,
            "notes": notes,
            "after_fuse_opens": after,
            "fuse_opens": bool(first),
            "fuse": ev["fuse"] if ev else (first[0]["name"] if first else None),
            "pre_arcing_time_s": ev["pre_arcing_time_s"] if ev else None,
            "let_through_i2t_a2s": ev["let_through_i2t_a2s"] if ev else None,
            "event_time_s": ev["event_time_s"] if ev else None,
            "detail": _fuse_detail(first, ev, verdict),
        }
        if with_parts:
            case["parts"] = j.parts
        results.append(case)
    return results


def _fuse_detail(opening: list, event: dict | None, verdict: str) -> str:
    """A few words on the fuses of a case: ``'fuse opens: F1 in 301 ns, let-through 2.5 A^2 s; ...'``."""
    from .units import format_si

    if not opening:
        return ""
    names = " and ".join(f["name"] for f in opening)
    if event is None:
        if any(not f["time_known"] for f in opening):
            return f"fuse opens: {names} in an unknown time (give its i2t or curve)"
        return f"{names} above its rating but below its curve: it may not open for a long time"
    text = (f"fuse opens: {names} in {format_si(event['event_time_s'], 's', 3)}, let-through "
            f"{event['let_through_i2t_a2s']:.3g} A^2 s")
    if verdict in ("ok", "pegs"):
        text += "; every part survives the pulse: replace the fuse"
    return text


# --- one stimulus (planner apply) ---------------------------------------------------------


def apply_stimulus(design, position, *, volts=None, amps=None, r_source_ohm=0.0, temperature_k=None,
                   waveform="dc", current_limit_a=None, n_phase: int | None = None) -> dict:
    """Apply one stimulus to one position (or transition) and judge every part.

    Parameters
    ----------
    design : Design or Engine
        The project's design (a loaded Spec is built into one), or an engine on it.
    position : str
        Position (or transition state) name.
    volts, amps : float
        Exactly one: the applied voltage [V] or current [A]; DC value (signed) or
        rms of a sine. A voltage on a current position is allowed, and so is a
        current on a voltage position.
    r_source_ohm : float
        Source impedance of a voltage source [ohm].
    temperature_k : float, optional
        Ambient temperature [K].
    waveform : {'dc', 'sine', 'impulse'}
    current_limit_a : float, optional
        Current limit of a voltage source [A].
    n_phase : int, optional
        Phase points per sine cycle; ``PHASE_POINTS`` by default.

    Returns
    -------
    dict
        The ``apply`` JSON of the design contract: ``movement_current_a`` (the DC
        value, or the cycle mean for a sine: what the pointer shows),
        ``movement_multiple`` (largest instantaneous |I_m| / I_fs),
        ``movement_rms_multiple``, ``movement_mean_multiple``, ``parts[]`` (``name``,
        ``kind``, ``current_a``, ``voltage_v``, ``power_w``; the DC value or, for a
        sine, the rms of current and voltage and the mean power; with peak, mean
        and rms beside them), ``verdict``, ``deciding``, ``stresses[]``,
        ``position``, ``stimulus``, ``fuses[]``, ``notes[]``, ``cautions[]``.

    Raises
    ------
    UsageError
        Neither or both of ``volts`` and ``amps``; a bad waveform.
    ProjectError
        An unknown position.
    """
    if (volts is None) == (amps is None):
        raise UsageError("give exactly one of --volts and --amps")
    engine = design if isinstance(design, Engine) else Engine(as_design(design))
    kind = "voltage" if volts is not None else "current"
    value = float(volts if volts is not None else amps)
    stim = Stimulus("applied", kind, value, waveform, float(r_source_ohm), current_limit_a)
    case = assess(engine, position, [stim], temperature_k=temperature_k, with_parts=True, n_phase=n_phase)[0]
    parts = []
    for p in case["parts"]:
        if stim.waveform.single:
            cur, vol = p["current_mean_a"], p["voltage_mean_v"]
        else:
            cur, vol = p["current_rms_a"], p["voltage_rms_v"]
        parts.append({"name": p["name"], "kind": p["kind"], "current_a": cur, "voltage_v": vol,
                      "power_w": p["power_w"], "current_peak_a": p["current_peak_a"],
                      "current_mean_a": p["current_mean_a"], "current_rms_a": p["current_rms_a"],
                      "voltage_peak_v": p["voltage_peak_v"], "voltage_mean_v": p["voltage_mean_v"],
                      "voltage_rms_v": p["voltage_rms_v"]})
    case["parts"] = parts
    case["stimulus"] = stim.as_dict()
    case["stimulus_name"] = case["stimulus"]["name"]
    case["temperature_k"] = engine.spec.ambient.t_ref_k if temperature_k is None else float(temperature_k)
    case["cautions"] = stimulus_cautions([stim]) if case["hazardous_voltage"] or _stim_hazardous(stim) else []
    return case


def _stim_hazardous(s: Stimulus) -> bool:
    return s.hazardous()


STANDARD_CAUTIONS = (
    "Verify by test before use: these results are a planning aid, not a certification.",
    "Follow IEC 61010-1 (IEC 61010-031 for probe assemblies), local codes and licensed practice; "
    "hazardous work belongs to people trained and authorised for it.",
)


def stimulus_cautions(stimuli) -> list[str]:
    """Cautions for stimuli at hazardous voltages (empty when none is).

    References
    ----------
    IEC 61010-1:2010, clause 6.3.1, hazardous-live limits.
    """
    out = []
    for s in stimuli:
        if _stim_hazardous(s):
            out.append(f"Hazardous voltage: stimulus '{s.name}' ({s.describe()}) exceeds the hazardous-live limits "
                       f"of IEC 61010-1 ({HAZARD_RMS_V:g} V rms, {HAZARD_PEAK_V:g} V peak, {HAZARD_DC_V:g} V DC).")
    if out:
        out += list(STANDARD_CAUTIONS)
    return out


# --- text -------------------------------------------------------------------------------


def describe_stress(x: dict | None) -> str:
    """One line: ``'R1 power 7.81 W of 250.0 mW rating (31.2x)'``."""
    from .units import format_si

    if x is None:
        return "no rated part carries current"
    unit = x["unit"]
    if unit == "x I_fs":
        val, rat = f"{x['value']:.3g}x I_fs", f"{x['rating']:.3g}x"
    elif unit == "A^2 s":
        val, rat = f"{x['value']:.4g} A^2 s", f"{x['rating']:.4g} A^2 s"
    else:
        val, rat = format_si(x["value"], unit, 4), format_si(x["rating"], unit, 4)
    word = {"rating": "rating", "end stop": "end stop", "safety": "limit", "fuse trigger": "rated current"}[x["limit"]]
    return f"{x['part']} {x['quantity']} {val} of {rat} {word} ({_ratio_text(x['ratio'])})"


def _ratio_text(r: float) -> str:
    if not math.isfinite(r):
        return "inf x"
    if r >= 1e5:
        return f"{r:.2g}x"
    if r >= 100:
        return f"{r:.0f}x"
    return f"{r:.3g}x"


def format_apply(result: dict) -> str:
    """A readable report of :func:`apply_stimulus` for the terminal (about 100 columns)."""
    from .units import format_si

    s = result["stimulus"]
    wave = {"dc": "DC", "sine": "rms sine", "impulse": "peak impulse"}[s["waveform"]]
    head = f"{result['position']}: {format_si(s['value'], s['unit'], 4)} {wave}"
    if s["kind"] == "voltage":
        r = s["r_source_ohm"] or 0.0
        head += f" through {format_si(r, 'ohm', 3)}" if r > 0 else " from an ideal source"
        if s.get("current_limit_a"):
            head += f", limited to {format_si(s['current_limit_a'], 'A', 3)}"
    lines = [head]
    tiny = 1e-9 * max(result["movement_multiple"], 1.0)  # solver round-off around a zero mean

    def clean(x):
        return 0.0 if abs(x) < tiny else x

    i_cur = result["movement_current_a"]
    if abs(i_cur) < 1e-9 * result.get("movement_peak_current_a", 0.0):
        i_cur = 0.0
    lines.append(f"Movement: {format_si(i_cur, 'A', 4)} "
                 f"(pointer {clean(result['movement_mean_multiple']):.3g} x full scale, "
                 f"peak {result['movement_multiple']:.3g} x, rms {result['movement_rms_multiple']:.3g} x)")
    lines += wrap("Verdict: ", f"{result['verdict'].upper()} - {describe_stress(result['deciding'])}")
    lines.append("")
    sine = s["waveform"] == "sine"
    hdr = ("part", "kind", "current rms" if sine else "current", "peak current", "voltage rms" if sine else "voltage",
           "power", "worst check")
    rows = []
    worst = {}
    for x in result["stresses"]:
        if x["limit"] in ("rating", "safety") and (x["part"] not in worst or x["ratio"] > worst[x["part"]]["ratio"]):
            worst[x["part"]] = x
    for p in result["parts"]:
        w = worst.get(p["name"])
        rows.append((p["name"], p["kind"], format_si(p["current_a"], "A", 4), format_si(p["current_peak_a"], "A", 4),
                     format_si(p["voltage_v"], "V", 4), format_si(p["power_w"], "W", 4),
                     f"{_ratio_text(w['ratio'])}{' !' if w['exceeded'] else ''} {w['quantity']}"[:30] if w else ""))
    widths = [max(len(str(r[k])) for r in rows + [hdr]) for k in range(len(hdr))]
    lines.append("  ".join(h.ljust(widths[k]) for k, h in enumerate(hdr)).rstrip())
    for r in rows:
        lines.append("  ".join(str(c).ljust(widths[k]) for k, c in enumerate(r)).rstrip())
    for f in result["fuses"]:
        t = f["pre_arcing_time_s"]
        when = " (after " + ", ".join(f["after"]) + " opened)" if f.get("after") else ""
        state = "opens" if f["opens"] else "holds"
        extra = f", pre-arcing time {t:.3g} s" if (f["opens"] and t is not None) else ""
        if f["opens"] and f.get("let_through_i2t_a2s") is not None:
            extra += f", let-through {f['let_through_i2t_a2s']:.3g} A^2 s"
        lines += wrap("", f"Fuse {f['name']}{when}: {format_si(f['current_rms_a'], 'A', 4)} rms, {state}{extra}; "
                          f"prospective {format_si(f['prospective_current_a'], 'A', 4)} vs breaking capacity "
                          f"{format_si(f['breaking_capacity_a'], 'A', 4)}")
    if result.get("detail"):
        lines += wrap("", result["detail"][:1].upper() + result["detail"][1:] + ".")
    bad = [x for x in result["stresses"] if x["exceeded"] and x["limit"] != "fuse trigger"]
    if bad:
        lines.append("")
        lines.append("Beyond a limit:")
        for x in sorted(bad, key=lambda x: -x["ratio"]):
            lines += wrap("  ", describe_stress(x))
    for n in result.get("notes", []):
        lines += wrap("Note: ", n)
    for c in result.get("cautions", []):
        lines += wrap("CAUTION: ", c)
    return "\n".join(lines)


def wrap(prefix: str, text: str, width: int = 100) -> list[str]:
    """Lines of ``prefix + text`` wrapped to ``width`` columns, continuation indented."""
    import textwrap

    return textwrap.wrap(text, width=width, initial_indent=prefix, subsequent_indent=" " * min(len(prefix), 4),
                         break_long_words=False, break_on_hyphens=False) or [prefix.rstrip()]


__all__ = [
    "PHASE_POINTS", "HAZARD_RMS_V", "HAZARD_PEAK_V", "HAZARD_DC_V", "SHORT_TIME_S", "SHORT_OVERLOAD_S",
    "SHORT_OVERLOAD_POWER_FACTOR", "SHORT_OVERLOAD_VOLTAGE_FACTOR", "SURGE_HALF_CYCLE_S", "DIODE_I2T_MIN_S",
    "Stimulus", "Waveform", "hazardous_live", "solve_waveforms", "cycle_stats", "pre_arcing_time_s",
    "fuse_let_through", "short_time_power_w", "resistor_pulse_energy_j", "resistor_pulse_limit_j",
    "diode_i2t_a2s", "diode_i2t_allowed_a2s", "judge", "verdict_of", "assess",
    "apply_stimulus", "format_apply", "stimulus_cautions", "describe_stress", "STANDARD_CAUTIONS", "wrap",
]
