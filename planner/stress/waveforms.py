"""The operating points of stimuli on a switch state, and their statistics over the cycle.

A stimulus is solved as its instantaneous operating points: one for DC, the phase
points of one cycle for a periodic wave, both polarities of its peak for an
impulse. The network is resistive with diodes and has no reactive parts, so the
quasi-static treatment of a periodic wave is exact: every instant of the cycle is
a DC operating point. A voltage source with a current limit crosses over to a
current source where the limit takes over (:func:`solve_waveforms`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import networkx as nx
import numpy as np

from .. import network as nw
from ..engine import Engine
from ..solve.memo import Kept
from ..stimulus import PHASE_POINTS, Stimulus


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
        Samples where the source's current limit (a voltage source) or its
        compliance (a current source) took over.
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


def stress_elements(engine: Engine) -> list:
    """The elements judged against ratings (every rated part; contacts are not), in network order."""
    return [e for e in engine.net.elements if e.rated]


#: :func:`input_connected` by topology (:func:`planner.network.topology_key`).
_CONNECTED = Kept(4096)


def input_connected(engine: Engine, st: nw.SwitchState) -> bool:
    """Whether a path joins the input terminals of a switch state (found once per topology)."""
    key = nw.topology_key(engine.net, st)
    if key not in _CONNECTED:
        g = nw.active_graph(engine.net, st)
        plus, minus = st.position.input
        _CONNECTED.keep(key, nx.has_path(g, plus, minus))
    return _CONNECTED[key]


def cycle_stats(x) -> dict:
    """Peak, mean and rms of samples equally spaced over one cycle.

    Parameters
    ----------
    x : array_like
        The samples.

    Returns
    -------
    dict
        ``peak``, ``mean``, ``rms`` and ``mean_abs`` (the mean of |x|).

    Notes
    -----
    :math:`X_{pk} = \\max |x_k|`, :math:`\\bar X = \\frac1N \\sum x_k`,
    :math:`X_{rms} = \\sqrt{\\frac1N \\sum x_k^2}` (the rectangle rule, exact for a
    trigonometric polynomial of degree below N; a DC stimulus is one sample).

    References
    ----------
    The rectangle rule on a periodic integrand (trapezoidal rule for periodic
    functions): L. N. Trefethen and J. A. C. Weideman, "The exponentially
    convergent trapezoidal rule", SIAM Review 56 (2014), doi:10.1137/130932132.
    """
    return cycle_stats_rows(np.reshape(np.asarray(x, dtype=float), (1, -1)))[0]


def cycle_stats_rows(x) -> list[dict]:
    """:func:`cycle_stats` of each row of a 2-D array (one cycle of samples per row), all rows at once.

    Each row's sums run over its own contiguous samples, so a row's figures are
    the same numbers whether it is alone or among others.
    """
    # sums over n, not np.mean: the same pairwise sums (the same numbers), without np.mean's
    # per-call cost (this runs once per case, or per part where a caller asks part by part)
    x = np.ascontiguousarray(x, dtype=float)
    n = x.shape[1]
    ax = np.abs(x)
    peak, mean = ax.max(axis=1), x.sum(axis=1) / n
    rms, mean_abs = np.sqrt((x * x).sum(axis=1) / n), ax.sum(axis=1) / n
    return [{"peak": float(peak[k]), "mean": float(mean[k]), "rms": float(rms[k]), "mean_abs": float(mean_abs[k])}
            for k in range(x.shape[0])]


def solve_waveforms(engine: Engine, state, stimuli, *, temperature_k=None,
                    n_phase: int | None = None, factors=None) -> list[Waveform]:
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
    factors : mapping, optional
        Multipliers of nominal values per designator (:meth:`Engine.operate`): one
        value for every stimulus, or one per stimulus (arrays as long as
        ``stimuli``, all of one source kind).

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
    again as a current source of the limit value, with the sign of that current
    (:func:`_cross_over`). That is what a bench supply does when it crosses over
    from constant voltage to constant current.
    """
    st = engine.state(state)
    stimuli = list(stimuli)
    n_phase = n_phase or PHASE_POINTS
    if not input_connected(engine, st):
        return [_no_current(engine, st, s, n_phase) for s in stimuli]
    out: list[Waveform | None] = [None] * len(stimuli)
    groups: dict[tuple, list[int]] = {}
    for j, s in enumerate(stimuli):
        key = (s.kind, s.kind == "voltage" and s.r_source_ohm > 0.0)
        groups.setdefault(key, []).append(j)
    for (kind, has_r), idx in groups.items():
        for j, wf in zip(idx, _solve_group(engine, st, [stimuli[j] for j in idx], kind, has_r, temperature_k,
                                           n_phase, factors)):
            out[j] = wf
    return out


def _no_current(engine: Engine, st, s: Stimulus, n_phase: int) -> Waveform:
    """The waveform of a state whose input terminals no path joins: nothing flows."""
    elements = stress_elements(engine)
    x = s.samples(n_phase)
    z = np.zeros_like(x)
    return Waveform(s, st, {e.name: z for e in elements}, {e.name: z for e in elements}, z, z,
                    x if s.kind == "voltage" else z, x if s.kind == "voltage" else z,
                    np.zeros(x.shape, dtype=bool), open_input=True)


def _solve_group(engine: Engine, st, stimuli, kind: str, has_r: bool, temperature_k, n_phase: int,
                 factors=None) -> list[Waveform]:
    """Stimuli of one source kind (and with or without a source impedance) in one batched solve."""
    elements = stress_elements(engine)
    plus, minus = st.position.input
    rows = [s.samples(n_phase) for s in stimuli]
    width = max(len(r) for r in rows)
    stim = np.array([np.resize(r, width) for r in rows])
    r_src = np.array([s.r_source_ohm for s in stimuli]) if has_r else 0.0
    op = engine.operate(st, stim, kind=kind, temperature_k=temperature_k, r_source_ohm=r_src, factors=factors)
    sol = {
        "cur": {e.name: op.element(e.name).current_a for e in elements},
        "vol": {e.name: op.element(e.name).voltage_v for e in elements},
        "i_m": op.movement_current_a,
        "i_src": np.array(op.source_current_a),
        "v_t": op.node_voltage(plus) - op.node_voltage(minus),
        "limited": np.zeros(stim.shape, dtype=bool),
    }
    if kind == "voltage":
        _cross_over(engine, st, stimuli, rows, sol, temperature_k, factors)
    else:
        _compliance(engine, st, stimuli, rows, sol, temperature_k, factors)
    out = []
    for row, s in enumerate(stimuli):
        n = len(rows[row])
        src_v = stim[row, :n] if kind == "voltage" else sol["v_t"][row, :n]
        out.append(Waveform(
            s, st,
            {k: np.array(v[row, :n]) for k, v in sol["cur"].items()},
            {k: np.array(v[row, :n]) for k, v in sol["vol"].items()},
            np.array(sol["i_m"][row, :n]), np.array(sol["i_src"][row, :n]), np.array(sol["v_t"][row, :n]),
            np.array(src_v), sol["limited"][row, :n].copy()))
    return out


def _compliance(engine: Engine, st, stimuli, rows, sol: dict, temperature_k, factors=None) -> None:
    """Solve again, as a voltage source of the compliance, the samples where a current source runs out of voltage.

    A current source holds its current only up to its compliance voltage; beyond
    it, it holds that voltage (a real calibrator or a circuit's supply). For a
    resistive network with diodes the terminal voltage rises monotonically with
    the current, so the samples whose terminal voltage at the nominal current
    exceeds the compliance are exactly those solved at the compliance, with the
    sign of that voltage. ``sol`` is patched in place at those samples.
    """
    patch = _beyond(sol["v_t"], [s.compliance_v for s in stimuli], rows)
    if patch:
        _patch(engine, st, patch, "voltage", sol, temperature_k, factors)


def _beyond(values: np.ndarray, limits: list, rows) -> list:
    """(row, sample, signed limit) of every sample whose ``|values|`` exceeds its row's limit (None: no limit)."""
    patch = []
    for row, lim in enumerate(limits):
        if lim is None:
            continue
        n = len(rows[row])
        for k in np.nonzero(np.abs(values[row, :n]) > lim)[0]:
            patch.append((row, k, math.copysign(lim, values[row, k])))
    return patch


def _patch(engine: Engine, st, patch: list, kind: str, sol: dict, temperature_k, factors=None) -> None:
    """Solve the samples ``patch`` ((row, sample, value)) with a source of ``kind`` and write them into ``sol``."""
    plus, minus = st.position.input
    rr = np.array([p[0] for p in patch])
    kk = np.array([p[1] for p in patch])
    values = np.array([p[2] for p in patch])
    if factors is not None and any(np.asarray(v).size > 1 for v in factors.values()):
        # factors per row (one parameter set per stimulus): one parameter set per patched sample
        per = {k: (np.asarray(v)[rr] if np.asarray(v).size > 1 else np.repeat(np.asarray(v)[:1], rr.size))
               for k, v in factors.items()}
        op2 = engine.operate(st, values.reshape(-1, 1), kind=kind, temperature_k=temperature_k, factors=per)

        def take(a):
            return np.asarray(a)[:, 0]
    else:
        op2 = engine.operate(st, values, kind=kind, temperature_k=temperature_k,
                             factors=None if factors is None else {k: np.asarray(v)[:1] for k, v in factors.items()})

        def take(a):
            return np.asarray(a)[0]
    for e in stress_elements(engine):
        es = op2.element(e.name)
        sol["cur"][e.name] = np.array(sol["cur"][e.name])
        sol["vol"][e.name] = np.array(sol["vol"][e.name])
        sol["cur"][e.name][rr, kk] = take(es.current_a)
        sol["vol"][e.name][rr, kk] = take(es.voltage_v)
    sol["i_m"] = np.array(sol["i_m"])
    sol["i_m"][rr, kk] = take(op2.movement_current_a)
    sol["i_src"] = np.array(sol["i_src"])
    sol["i_src"][rr, kk] = take(op2.source_current_a)
    sol["v_t"] = np.array(sol["v_t"])
    sol["v_t"][rr, kk] = take(op2.node_voltage(plus) - op2.node_voltage(minus))
    sol["limited"][rr, kk] = True


def _cross_over(engine: Engine, st, stimuli, rows, sol: dict, temperature_k, factors=None) -> None:
    """Solve again, as a current source of the limit, the samples where a source's current limit takes over.

    ``sol`` (the group's solved arrays: ``cur``, ``vol``, ``i_m``, ``i_src``,
    ``v_t``, ``limited``) is patched in place at those samples.
    """
    patch = _beyond(sol["i_src"], [s.current_limit_a for s in stimuli], rows)
    if patch:
        _patch(engine, st, patch, "current", sol, temperature_k, factors)
