"""AC (rectifier) ranges: the cycle solve both AC range kinds share.

An average-responding rectifier instrument is calibrated in rms of a sine and its
pointer follows the **mean** movement current over one cycle (design contract).
The network is resistive with diodes, so a cycle is a set of instantaneous DC
operating points, solved exactly by :class:`planner.engine.Engine` as one batch;
the cycle mean, rms and peak are quadratures over them.

The phase points are chosen by the network's response, not fixed: one
:class:`planner.cycle.SharedRule` per position and set of applied values
(:func:`planner.cycle.adapt_shared`) places Gauss-Legendre panels between the
diodes' knees with Gauss-Kronrod error control to :data:`TOLERANCE_FS` of the
full-scale current, built on the nominal parts at the reference and both ambient
extremes and on every part at its low and at its high tolerance extreme; a batch of builds (Monte Carlo, tolerance corners) is then solved on
its nodes and the rule is verified on the builds with the largest and the
smallest result (refined and solved again where they miss). The convergence
test against 4096 equally spaced phases is ``tests/test_ac.py``; the measured
costs are in ``docs/ac.md``.

References
----------
R. Piessens et al., *QUADPACK*, Springer, 1983 (Gauss-Kronrod error estimates).
P. J. Davis and P. Rabinowitz, *Methods of Numerical Integration*, 2nd ed.,
Academic Press, 1984, section 2.5 (product integration).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from ..stimulus import Stimulus
from .base import RangeKind

def _cycle():
    """:mod:`planner.cycle`, imported on first use: it brings scipy's interpolation and root finding,
    and every command that loads a project imports this module (a refused output must stay quick)."""
    from .. import cycle

    return cycle


#: Accuracy of the cycle mean of the movement current, fraction of I_fs (reading to 1e-6 of full scale).
TOLERANCE_FS = 1e-6
#: Accuracy of the cycle rms (input impedance, heating), fraction of I_fs.
TOLERANCE_RMS_FS = 1e-5
#: Nodes of the fixed rule for single-row requests (nominal figures, the own scale's grid): the midpoint
#: rule in phase (Gauss-Chebyshev for a sine, Gauss-Legendre for the triangle), as accurate as 2048 equally
#: spaced phases: within 5e-7 of full scale on the sharpest knee of a 250 V range, far closer on low ranges.
SINGLE_ROW_NODES = 1024
#: Parameter rows up to which a batch is solved on its rule's check nodes too and verified on every row
#: from that one solve (:func:`_checked_small`); larger batches verify their extreme rows in a second solve.
SMALL_BATCH = 48
#: Waveforms whose reading error ``planner check`` reports on an AC position (at full-scale rms).
CHECK_WAVEFORMS = ("square", "triangle", "flat-top mains")
#: Phases of the shorter midpoint rule an ``own`` scale's grid is first solved with (and three times as
#: many; :func:`_nested_sine_means`).
GRID_NODES = 171
#: Largest difference of the two midpoint rules [fraction of I_fs] at which the finer one marks the grid.
GRID_AGREEMENT = 1e-10
#: Steps of the nominal response an ``own`` AC scale is marked from, fractions of full scale
#: (0.025 steps up to 1.3: the linearity points 10 % .. 100 % are grid points).
SCALE_GRID = np.round(np.arange(1, 53) * 0.025, 10)
#: Samples of the nominal response from zero to full scale that an ``own`` scale's ticks are placed from.
SCALE_SAMPLES = 401


class ACRange(RangeKind):
    """An average-responding AC position: calibrated in rms of a sine, read by the cycle mean.

    Reading (design contract): on the ``shared`` scale :math:`FS \\, \\bar I_m / I_{fs}`;
    on an ``own`` scale :math:`D_{nom}^{-1}(\\bar I_m / I_{fs})` with
    :math:`D_{nom}(A) = \\bar I_m(A) / I_{fs}` at nominal parts and the reference
    temperature (:func:`own_scale`).
    """

    waveform = "sine"
    #: A corner of an AC range costs a whole cycle (40 to 70 phase nodes, not one point): above 6
    #: parameters (64 corners) the sensitivity bound and its 256 verification corners cost less.
    corner_parameters = 6
    #: Fewer corners are a small batch (solved on the rule's check nodes too, every row verified).
    corners_with_builds = SMALL_BATCH + 1

    def check_figures(self, engine, position) -> dict:
        """``waveform_errors[]`` and the readings of a DC level equal to the full scale, both polarities.

        Notes
        -----
        An average-responding meter calibrated in rms of a sine reads a wave of
        form factor F about :math:`F_{sine} / F - 1` off (square +11.07 %,
        triangle -3.81 %); the diodes' drops change it on low ranges, which is
        why it is solved, not quoted. Errors in % of full scale, reading minus
        the waveform's true rms at full-scale rms (design contract).
        """
        fs = float(position.full_scale)
        read = waveform_readings(engine, position.name, [(name, [fs]) for name in CHECK_WAVEFORMS]
                                 + [("dc", [fs, -fs])])
        rows = []
        for name, r in zip(CHECK_WAVEFORMS, read):
            r = float(r[0])
            rows.append({"waveform": name, "form_factor": float(_cycle().SHAPES[name].form_factor),
                         "reading": r, "error_pct": (r - fs) / fs * 100.0})
        dc = read[-1]
        return {"waveform_errors": rows,
                "dc_readings": [{"applied": float(a), "reading": float(r), "error_pct": float((r - abs(a)) / fs * 100.0)}
                                for a, r in zip((fs, -fs), dc)],
                "scale": position.scale}

    def operate_groups(self, run, position, values, factors, groups):
        """Several batches of parameter rows of a position at the reference temperature as one solve.

        Parameters
        ----------
        run : planner.accuracy.tolerances.CountingEngine
            Counts the solve.
        position : Position
        values : array_like (T,)
            Applied rms values [V] or [A].
        factors : dict
            The batches' factors one after the other, arrays of shape (P,).
        groups : sequence of int
            Rows of each batch (summing to P).

        Returns
        -------
        CycleOperating
            Shape (P, T).

        Notes
        -----
        Every request of an AC position is solved on its scale rule's nodes whatever its
        applied values, so the worst case's corners (asked at full scale) cost a whole
        cycle as a Monte Carlo build does: solved with the builds, they share one solver
        call and one verification of the rule (each batch's extreme rows,
        :func:`operate_cycle` ``groups``), where apart they took two of each.
        """
        st = run.engine.state(position.name)
        op = operate_cycle(run.engine, st, values, self.waveform, kind=self.source, temperature_k=None,
                           r_source_ohm=0.0, factors=factors, groups=groups)
        run.calls += 1
        run.points += op.solved_points
        return op

    def plate_scale(self, position) -> str:
        """``linear`` on the shared DC scale (``scale: shared``), ``own`` for an AC scale of its own."""
        return "own" if position.scale == "own" else "linear"

    def scale_definition(self, response, position):
        """An ``ac`` scale named after the position (``AC 10 V``), marked from its solved nominal response.

        Notes
        -----
        The ticks sit where :math:`D_{nom}(A) = \\bar I_m(A) / I_{fs}` (nominal parts,
        reference temperature) puts them; ``response`` is that function
        (:func:`nominal_response` through the solver seam of :mod:`planner.scale.solved`).
        """
        from ..scale.ticks import Response, ScaleDef, ScalePosition

        values = np.linspace(0.0, position.full_scale, SCALE_SAMPLES)
        return ScaleDef(f"AC {position.name}", "ac", (ScalePosition(position.name, self.unit, position.full_scale),),
                        Response(values, np.asarray(response(values), dtype=float), response))

    def misrange(self, position, faults) -> list:
        """The AC range's own families: a DC level equal to the full scale in both polarities
        (``DC on AC range``) and the declared maximum input as a sine of that rms (``max input sine``)."""
        fs = float(position.full_scale)
        out = [Stimulus("DC on AC range", self.source, fs, "dc",
                        detail="a DC level equal to the full scale on an AC range"),
               Stimulus("DC on AC range reversed", self.source, -fs, "dc", detail="the same DC level reversed")]
        if faults.max_input_v is not None:
            out.append(Stimulus("max input sine", "voltage", faults.max_input_v, "sine",
                                detail="the declared maximum input as the rms of a sine"))
        return out


@lru_cache(maxsize=None)
def _fixed(shape_name: str):
    """The fixed rule of a shape with :data:`SINGLE_ROW_NODES` nodes (made once: a distorted wave's nodes
    are found by root finding)."""
    c = _cycle()
    return c.fixed_rule(c.SHAPES[shape_name], SINGLE_ROW_NODES)


class _Blocks:
    """A fixed rule of one shape applied to several stated values: one block of nodes per value.

    For a single parameter row a fixed rule of :data:`SINGLE_ROW_NODES` nodes (one solve) costs less
    than building an adaptive rule (tens of solves); the batches of many rows use the adaptive one.
    """

    def __init__(self, shape, values):
        self.rule = _fixed(shape.name)
        self.peaks = np.array([shape.peak_of(v) for v in values], dtype=float)
        self.n = self.rule.nodes.size

    def points(self):
        return np.concatenate([self.rule.points(p) for p in self.peaks])

    def _blocks(self, q):
        q = np.asarray(q, dtype=float)
        return q.reshape(q.shape[:-1] + (self.peaks.size, self.n))

    def mean(self, q):
        return self._blocks(q) @ self.rule.weights

    def rms(self, q):
        b = self._blocks(q)
        return np.sqrt((b * b) @ self.rule.weights)

    def peak(self, q):
        return np.max(np.abs(self._blocks(q)), axis=-1)


class _AtZero:
    """The rule of an all-zero stimulus: every target is the one operating point at zero."""

    def __init__(self, t: int):
        self.w = np.ones((t, 1))

    def mean(self, q):
        return np.asarray(q, dtype=float) @ self.w.T

    def rms(self, q):
        return np.abs(self.mean(q))

    def peak(self, q):
        return np.abs(self.mean(q))


def _rows(x, rows):
    """Rows of a per-row argument (an array of P values) or the argument itself (a number)."""
    a = np.asarray(x, dtype=float)
    return a if a.ndim == 0 or a.size == 1 else a.reshape(-1)[rows]


class CycleOperating:
    """Cycle quantities of one switch state for a batch: a rule's nodes solved, reduced per applied value.

    Shapes are (P, T): P parameter rows, T applied values (targets of the rule).

    Attributes
    ----------
    points : planner.engine.Operating
        The instantaneous operating points at the rule's nodes, shape (P, S).
    rule : planner.cycle.SharedRule
    values : ndarray (T,)
        The applied values (rms of a periodic wave, the level of a DC one) [V] or [A].
    """

    def __init__(self, engine, state, points, rule, values):
        self.engine = engine
        self.state = state
        self.points = points
        self.rule = rule
        self.values = np.asarray(values, dtype=float)
        self.circuit = points.circuit
        self.i_fs_a = points.i_fs_a

    @property
    def shape(self):
        return (self.points.shape[0], self.values.size)

    @property
    def solved_points(self) -> int:
        """Operating points actually solved (rows x the rule's nodes)."""
        return int(np.prod(self.points.shape))

    @property
    def movement_current_a(self) -> np.ndarray:
        """Cycle mean of the movement current [A] (what the pointer follows), (P, T)."""
        return self.rule.mean(self.points.movement_current_a)

    @property
    def movement_multiple(self) -> np.ndarray:
        """Cycle mean of the movement current / I_fs, (P, T)."""
        return self.movement_current_a / self.i_fs_a

    @property
    def movement_rms_multiple(self) -> np.ndarray:
        return self.rule.rms(self.points.movement_current_a) / self.i_fs_a

    @property
    def movement_peak_multiple(self) -> np.ndarray:
        return self.rule.peak(self.points.movement_current_a) / self.i_fs_a

    def reading(self) -> np.ndarray:
        """What the pointer reads [V] or [A], (P, T): on the shared scale or the position's own."""
        p = self.state.position
        if p.scale == "own":
            return own_scale(self.engine, p.name)(self.movement_multiple)
        return p.kind.reading(self.movement_multiple, p.full_scale)

    @property
    def source_current_a(self) -> np.ndarray:
        """rms of the current the source delivers [A], (P, T)."""
        return self.rule.rms(self.points.source_current_a)

    def node_voltage(self, node: str) -> np.ndarray:
        """rms of a node's voltage against the input's minus terminal [V], (P, T)."""
        return self.rule.rms(self.points.node_voltage(node))

    def element(self, name: str) -> "CycleStress":
        """rms current [A] and voltage [V] and mean power [W] of one element over the cycle, (P, T)."""
        e = self.points.element(name)
        return CycleStress(name, e.kind, self.rule.rms(e.current_a), self.rule.rms(e.voltage_v),
                           self.rule.mean(e.power_w))

    def stresses(self) -> list["CycleStress"]:
        """Every rated element's cycle stress, in network order."""
        return [self.element(e.name) for e in self.engine.net.elements if e.rated]


@dataclass
class CycleStress:
    """Cycle quantities of one element: rms current [A], rms voltage [V], mean power [W], shapes (P, T)."""

    name: str
    kind: str
    current_a: np.ndarray
    voltage_v: np.ndarray
    power_w: np.ndarray


def _standard_targets(fs: float) -> dict:
    """(shape, value) of the rules a position's check needs, by name: every request of ``planner check``
    falls in one of them.

    ``scale``: a sine at 10 % .. 100 % of full scale (linearity, temperature, worst case, Monte Carlo:
    the many-row batches, so the fewest nodes); ``waveforms``: the other waveforms and the DC levels at
    full scale (nominal rows only; the triangle's crest, sqrt 3 x FS, would widen the scale rule's span).
    """
    scale = [("sine", float(f * fs)) for f in np.round(np.arange(1, 11) * 0.1, 10)]
    waves = [(w, float(fs)) for w in CHECK_WAVEFORMS] + [("dc", float(fs)), ("dc", -float(fs))]
    return {"scale": scale, "waveforms": waves}


def _build_rows(engine):
    """Temperatures [K] and factors of the rows a rule is built on: nominal parts at the reference and
    both ambient extremes, and every toleranced part at its low and at its high extreme (the diodes'
    knees move most between those) at the reference."""
    spec = engine.spec
    amb = spec.ambient
    temps = list(np.unique([amb.t_min_k, amb.t_ref_k, amb.t_max_k]))
    params = [q for e in engine.net.elements for q in e.parameters(spec)]
    if not params:
        return np.array(temps), None
    n = len(temps)
    factors = {q.key: np.array([1.0] * n + list(q.extremes())) for q in params}
    return np.array(temps + [amb.t_ref_k, amb.t_ref_k]), factors


def _build(engine, st, pairs, kind, r0):
    spec = engine.spec
    i_fs = spec.movement.i_fs_a
    temps, factors = _build_rows(engine)

    def nominal(x):
        return _operate(engine, st, x, dict(kind=kind, temperature_k=temps, r_source_ohm=r0,
                                            factors=factors)).movement_current_a

    c = _cycle()
    targets = [c.Target(c.SHAPES[w], c.SHAPES[w].peak_of(v), w) for w, v in pairs]
    return c.adapt_shared(targets, nominal, TOLERANCE_FS * i_fs, tol_rms=TOLERANCE_RMS_FS * i_fs)


def _subset(rule, idx):
    """The rule restricted to some of its targets (the same nodes, their rows of weights)."""
    idx = np.asarray(idx, dtype=int)
    return replace(rule, targets=tuple(rule.targets[i] for i in idx), weights=rule.weights[idx],
                   crest_weights=rule.crest_weights[idx], error_mean=rule.error_mean[idx],
                   error_rms=rule.error_rms[idx])


def _single_row(temperature_k, r_source_ohm, factors) -> bool:
    """One parameter row: a scalar temperature and source impedance, no tolerance draws."""
    return not factors and _row_count(temperature_k, r_source_ohm, factors) == 1


def _cached(engine, st, shape, values) -> bool:
    """Whether an adaptive rule already built for this position covers these values."""
    wanted = [(shape.name, float(v)) for v in values]
    cache = engine.__dict__.get("_cycle_rules", {})
    std = _standard_targets(float(st.position.full_scale))
    return any(k[0] == st.name and k[2] == name and all(w in std[name] for w in wanted)
               for k in cache for name in std)


def _rule_for(engine, st, shape, values, kind, r_source_ohm):
    """The shared rule that covers a state's shape and values: the position's standard rule where it can.

    Returns the cache key of the rule, the rule, and the indices of the requested targets in it.
    """
    cache = engine.__dict__.setdefault("_cycle_rules", {})
    r0 = float(np.max(np.asarray(r_source_ohm, dtype=float)))
    wanted = [(shape.name, float(v)) for v in values]
    key, pairs = (st.name, st.closed, tuple(wanted), kind, r0), wanted
    for name, std in _standard_targets(float(st.position.full_scale)).items():
        if all(w in std for w in wanted):
            key, pairs = (st.name, st.closed, name, kind, r0), std
            break
    if key not in cache:
        cache[key] = _build(engine, st, pairs, kind, r0)
    return key, cache[key], [pairs.index(w) for w in wanted]


def operate_cycle(engine, st, values, waveform, *, kind, temperature_k, r_source_ohm, factors,
                  groups=None) -> CycleOperating:
    """Solve a periodic (or DC) stimulus of given rms values on a state, as cycle quantities.

    Parameters
    ----------
    engine : planner.engine.Engine
    st : SwitchState
    values : array_like (T,)
        Applied values: the rms of the wave (the level of a DC stimulus) [V] or [A].
    waveform : str
        A shape of :data:`planner.cycle.SHAPES`.
    kind : {'voltage', 'current'}
    temperature_k, r_source_ohm, factors
        As :meth:`planner.engine.Engine.operate` (per-row arrays of P values or numbers).
    groups : sequence of int, optional
        Row counts of consecutive groups of a merged batch (summing to P): the rule is
        verified on each group's extreme rows, as it would be on each group solved alone.

    Returns
    -------
    CycleOperating

    Notes
    -----
    The rule is built on the nominal parts at the reference and both ambient
    extremes (to half the tolerance), the batch solved on its nodes, then the rule
    verified on the two rows with the largest and the two with the smallest mean
    at the largest applied value; a refined rule is solved again (``docs/cycle.md``).
    """
    values = np.atleast_1d(np.asarray(values, dtype=float))
    if values.ndim != 1:
        raise ValueError("AC stimuli are one row of rms values, shape (T,)")
    shape = _cycle().SHAPES[waveform]
    if not np.any(values):  # nothing applied: one operating point at zero serves every target
        op = engine.operate(st, [0.0], kind=kind, temperature_k=temperature_k, r_source_ohm=r_source_ohm,
                            factors=factors)
        return CycleOperating(engine, st, op, _AtZero(values.size), values)
    if _single_row(temperature_k, r_source_ohm, factors) and not _cached(engine, st, shape, values):
        rule = _Blocks(shape, values)
        op = _operate(engine, st, rule.points(), dict(kind=kind, temperature_k=temperature_k,
                                                      r_source_ohm=r_source_ohm, factors=factors))
        return CycleOperating(engine, st, op, rule, values)
    key, rule, idx = _rule_for(engine, st, shape, values, kind, r_source_ohm)
    kw = dict(kind=kind, temperature_k=temperature_k, r_source_ohm=r_source_ohm, factors=factors)
    if 1 < _row_count(temperature_k, r_source_ohm, factors) <= SMALL_BATCH and shape.atoms is None:
        return _checked_small(engine, st, key, rule, idx, values, kw)
    op = _operate(engine, st, rule.points(), kw)
    p = op.shape[0]
    if p > 1 and shape.atoms is None:
        t_ref = engine.spec.ambient.t_ref_k
        big = idx[int(np.argmax(np.abs(values)))]
        at_big = rule.mean(op.movement_current_a)[:, big]
        ends = np.cumsum([0] + list(groups if groups is not None else [p]))
        rows = np.unique(np.concatenate([a + _cycle().extreme_rows(at_big[a:b], 2) for a, b in zip(ends[:-1], ends[1:])]))
        t = t_ref if temperature_k is None else temperature_k
        f_rows = {k: _rows(v, rows) for k, v in factors.items()} if factors else None

        kw_rows = dict(kind=kind, temperature_k=_rows(t, rows), r_source_ohm=_rows(r_source_ohm, rows),
                       factors=f_rows)

        def on_rows(x):
            return _operate(engine, st, x, kw_rows).movement_current_a

        checked = rule.verify(on_rows, known=op.movement_current_a[rows])  # the rule's nodes: solved above
        if checked.refined:  # keep the refined nodes for every later request of this position
            engine.__dict__["_cycle_rules"][key] = rule = checked
            op = _operate(engine, st, rule.points(), kw)
    rule = _subset(rule, idx)
    return CycleOperating(engine, st, op, rule, values)


def _solved(engine, st, kw):
    """The operating points solved so far on a state with this source kind and source impedance
    (:class:`planner.cycle.starts.SolvedPoints`), or None for per-row source impedances. Only the
    latest position's are kept (a request of another position drops them)."""
    r = np.asarray(kw["r_source_ohm"], dtype=float)
    if r.size != 1:
        return None
    cache = engine.__dict__.setdefault("_cycle_points", {})
    key = (st.name, st.closed, kw["kind"], float(r.reshape(-1)[0]))
    if key not in cache:
        for other in [k for k in cache if k[0] != st.name]:  # the analyses go position by position
            del cache[other]
        cache[key] = _cycle().SolvedPoints(engine.spec.ambient.t_ref_k)
    return cache[key]


def _temperatures(engine, kw):
    t = kw.get("temperature_k")
    return engine.spec.ambient.t_ref_k if t is None else t


def _predicted(engine, st, x, kw):
    """Where the solver starts a request at source values ``x`` (``kw``: its ``kind``, ``temperature_k``,
    ``r_source_ohm``, ``factors``): predicted from what the state solved before, or None (the solver's
    own start). The results do not depend on it."""
    solved = _solved(engine, st, kw)
    if solved is None:
        return None
    rows = _row_count(kw.get("temperature_k"), kw["r_source_ohm"], kw.get("factors"))
    return solved.predict(x, _temperatures(engine, kw), kw.get("factors"), rows)


def _remember(engine, st, x, kw, op) -> None:
    """Keep a solved request's operating points for the requests after it (:func:`_predicted`)."""
    solved = _solved(engine, st, kw)
    if solved is not None:
        solved.add(x, _temperatures(engine, kw), kw.get("factors"), op.solution.start_rows)


def _operate(engine, st, x, kw):
    """``engine.operate`` of instantaneous source values, started from the state's solved points and
    kept among them."""
    op = engine.operate(st, x, start=_predicted(engine, st, x, kw), **kw)
    _remember(engine, st, x, kw, op)
    return op


def _own_stimulus(st) -> dict:
    """The request of a position's own nominal stimulus: its source kind, the nominal parts at the
    reference temperature, no source impedance (``kw`` of :func:`_operate`)."""
    return dict(kind=st.position.kind.source, temperature_k=None, r_source_ohm=0.0, factors=None)


def _row_count(temperature_k, r_source_ohm, factors) -> int:
    """Parameter rows of a request: the longest of its per-row arguments."""
    sizes = [np.size(temperature_k if temperature_k is not None else 0.0), np.size(r_source_ohm)]
    sizes += [np.size(v) for v in (factors or {}).values()]
    return int(max(sizes))


def _checked_small(engine, st, key, rule, idx, values, kw) -> CycleOperating:
    """A small batch (temperature points, sensitivity rows) solved on the rule's nodes and its check nodes
    at once, the rule verified on every row from that one solve.

    Notes
    -----
    For at most :data:`SMALL_BATCH` rows the Gauss-Kronrod nodes of every row cost less than the
    separate solve of the extreme rows' ones (a solve of a few rows costs its Newton iterations
    whatever its size), and every row is checked, not only the extremes. Where the rule misses on a
    row it is refined and solved again, as in :func:`operate_cycle`.
    """
    y = rule.check_nodes()
    xk = rule.span * y
    n = rule.size
    x = np.concatenate([rule.points(), xk])
    op = _operate(engine, st, x, kw)
    q = op.movement_current_a

    def evaluate(x):
        x = np.asarray(x, dtype=float)
        if x.shape == xk.shape and np.array_equal(x, xk):
            return q[:, n:]  # solved above
        return _operate(engine, st, x, kw).movement_current_a

    checked = rule.verify(evaluate, known=q[:, :n])
    if checked.refined:  # keep the refined nodes for every later request of this position
        engine.__dict__["_cycle_rules"][key] = checked
        op = _operate(engine, st, checked.points(), kw)
        return CycleOperating(engine, st, op, _subset(checked, idx), values)
    return CycleOperating(engine, st, op, _subset(checked.padded(y), idx), values)


def waveform_readings(engine, position: str, requests) -> list:
    """Nominal readings of a position for several waveforms, from one solve.

    Parameters
    ----------
    engine : planner.engine.Engine
    position : str
    requests : sequence of (str, array_like)
        A shape of :data:`planner.cycle.SHAPES` and its applied values (rms of the
        wave, the level of a DC one) [V] or [A].

    Returns
    -------
    list of ndarray
        The readings [V] or [A] of each request, in order: the same as
        ``engine.operate(position, values, waveform=shape).reading()[0]`` one request
        at a time (each wave's fixed rule of :data:`SINGLE_ROW_NODES` nodes), with the
        nodes of every request solved as one batch of instantaneous operating points
        (nominal parts, reference temperature).
    """
    st = engine.state(position)
    c = _cycle()
    blocks = [_Blocks(c.SHAPES[name], np.atleast_1d(np.asarray(values, dtype=float))) for name, values in requests]
    points = [b.points() for b in blocks]
    op = _operate(engine, st, np.concatenate(points), _own_stimulus(st))
    i_m = op.movement_current_a[0]
    out, lo = [], 0
    pos = st.position
    for b, x in zip(blocks, points):
        mm = b.mean(i_m[lo:lo + x.size]) / engine.spec.movement.i_fs_a
        lo += x.size
        out.append(own_scale(engine, pos.name)(mm) if pos.scale == "own" else pos.kind.reading(mm, pos.full_scale))
    return out


def _nested_sine_means(engine, st, values):
    """I_mean / I_fs of sines of these rms values (nominal parts, reference temperature) from the midpoint
    rule of 3 x :data:`GRID_NODES` phases, or None where it and its every third node (the rule of
    :data:`GRID_NODES` phases) differ by more than :data:`GRID_AGREEMENT` of I_fs.

    Notes
    -----
    The midpoint rule in phase of 3n points holds the n-point rule's nodes (every third), so the
    pair costs 3n solved points, and their difference bounds the finer one's error: the rule
    converges geometrically on a smooth periodic integrand, and at least as :math:`n^{-2}` on a
    knee. An ``own`` scale is marked from these values and its low end magnifies their error in a
    reading, hence an agreement far below :data:`TOLERANCE_FS`; a response that does not meet it
    (the sharp knees of a high voltage range) is solved with the :data:`SINGLE_ROW_NODES` rule.

    References
    ----------
    L. N. Trefethen and J. A. C. Weideman, "The exponentially convergent trapezoidal rule",
    SIAM Review 56(3), 385-458, 2014 (periodic integrands; nested rules as error estimates).
    """
    c = _cycle()
    sine = c.SHAPES["sine"]
    fine = c.fixed_rule(sine, 3 * GRID_NODES, crests=False)
    peaks = np.array([sine.peak_of(v) for v in values], dtype=float)
    op = _operate(engine, st, (peaks[:, None] * fine.nodes[None, :]).ravel(),
                  _own_stimulus(st))
    q = op.movement_current_a[0].reshape(peaks.size, fine.nodes.size) / engine.spec.movement.i_fs_a
    hi, lo = q.mean(axis=1), q[:, 1::3].mean(axis=1)
    return hi if np.all(np.abs(hi - lo) <= GRID_AGREEMENT) else None


def _grid_response(engine, position: str):
    """(applied [unit], D_nom) at 0 and :data:`SCALE_GRID` x full scale, solved once per engine and position
    (:func:`_nested_sine_means`, else the fixed rule of :data:`SINGLE_ROW_NODES` phases)."""
    cache = engine.__dict__.setdefault("_ac_responses", {})
    if position not in cache:
        st = engine.state(position)
        pos = st.position
        fs = float(pos.full_scale)
        d = _nested_sine_means(engine, st, SCALE_GRID * fs)
        if d is None:  # the response bends too sharply for the shorter rules: the fixed rule
            d = operate_cycle(engine, st, SCALE_GRID * fs, "sine", kind=pos.kind.source,
                              temperature_k=None, r_source_ohm=0.0, factors=None).movement_multiple[0]
        d = np.concatenate([[0.0], d])
        a = np.concatenate([[0.0], SCALE_GRID * fs])
        if np.any(np.diff(d) <= 0):
            raise ValueError(f"the nominal response of '{position}' does not rise with the input")
        cache[position] = (a, d)
    return cache[position]


def nominal_response(engine, position: str):
    """D_nom(A) of an AC position: applied rms [unit] -> I_mean / I_fs (nominal parts, reference temperature).

    A cubic spline through the solved response at :data:`SCALE_GRID` x full scale (exact
    there), for the scale plate's ticks and the shared scale's bend.
    """
    from scipy.interpolate import CubicSpline

    a, d = _grid_response(engine, position)
    return CubicSpline(a, d)


def own_scale(engine, position: str):
    """The reading function of an ``own`` AC scale: multiples of I_fs -> applied rms [V] or [A].

    Notes
    -----
    The scale is marked from the nominal response :math:`D_{nom}(A) = \\bar I_m(A) / I_{fs}`
    (nominal parts, reference temperature) at :data:`SCALE_GRID` x full scale and
    :math:`D_{nom}(0) = 0`; a reading is the inverse, a cubic spline through
    :math:`(D_{nom}, A)`, exact at the grid points (the linearity points among
    them), straight beyond the last point.

    References
    ----------
    C. de Boor, *A Practical Guide to Splines*, Springer, 1978 (cubic spline
    interpolation).
    """
    from scipy.interpolate import CubicSpline

    cache = engine.__dict__.setdefault("_own_scales", {})
    if position not in cache:
        a, d = _grid_response(engine, position)
        spline = CubicSpline(d, a)
        slope = (a[-1] - a[-2]) / (d[-1] - d[-2])

        def read(mm):
            mm = np.asarray(mm, dtype=float)
            out = spline(np.clip(mm, 0.0, d[-1]))
            return np.where(mm > d[-1], a[-1] + (mm - d[-1]) * slope, np.where(mm < 0, mm * a[1] / d[1], out))

        cache[position] = read
    return cache[position]
