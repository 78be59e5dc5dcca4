"""Evaluating candidates: a topology run over the fault stimuli and positions, batched, and judged.

A :class:`Topology` is a candidate network with its Engine and the parts to
watch; :func:`run` solves it for a batch of split resistances (or standard-value
pairs) under every fault stimulus of every position and at the linearity points
at the hottest ambient, and returns :class:`Metrics` (one entry per row).
:func:`feasible`, :func:`slack`, :func:`accuracy_ok` and :func:`share_of_class`
judge them against the requirement; a :class:`Point` is one evaluated placement.

Public API
----------
:class:`Metrics`, :class:`Topology`, :class:`Point`, :func:`topology`,
:func:`topology_of`, :func:`bare_readings`, :func:`run`, :func:`accuracy_ok`,
:func:`feasible`, :func:`slack`, :func:`share_of_class`.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np

from ..accuracy import current_carrying
from ..engine import Engine
from ..errors import SolveError
from ..model import NetworkSpec, Resistor
from .candidates import Combo, clamp_diodes, place_clamp
from .context import SearchContext
from .ordering import lex_score

if TYPE_CHECKING:  # annotations only: the family module runs its batches through this one
    from .family import RowDiodes

__all__ = [
    "FRACTIONS",
    "SEARCH_PHASE_POINTS",
    "REPORT_PHASE_POINTS",
    "EXCEED",
    "Metrics",
    "Topology",
    "Point",
    "topology",
    "topology_of",
    "bare_readings",
    "run",
    "feasible_alone",
    "accuracy_ok",
    "feasible",
    "slack",
    "share_of_class",
]

#: Linearity points, fractions of full scale (those of ``planner check``).
FRACTIONS = np.arange(1, 11) / 10.0
#: Phase points per sine cycle during the search. A multiple of 4 hits both crests
#: exactly, and the movement current of this resistive network peaks at the
#: crest, so the peak multiples are exact; the cycle means (diode current, power)
#: carry the rectangle rule's error, which the reported rows cut to below 0.1 %
#: with :data:`REPORT_PHASE_POINTS`.
SEARCH_PHASE_POINTS = 16
REPORT_PHASE_POINTS = 64
#: Stimuli with a source impedance and more samples than this per cycle (a sine) are solved in a
#: call of their own, apart from the short ones (a DC source, an impulse's two samples).
WIDE = 4
#: A figure counts as over its limit only beyond this factor (round-off).
EXCEED = 1.0 + 1e-9


@dataclass
class Metrics:
    """What one batch of candidates does, one entry per row (split resistance).

    Multiples are |I_m| / I_fs; errors in % of full scale; power [W].
    """

    forward: np.ndarray
    reverse: np.ndarray
    forward_case: list
    reverse_case: list
    max_input_forward: np.ndarray
    max_input_reverse: np.ndarray
    error_pct: dict  # position -> (P,) clamp error at the hottest ambient
    total_pct: dict  # position -> (P,) whole error at the hottest ambient
    stress: np.ndarray
    stress_case: list
    power_w: np.ndarray
    pos_forward: dict  # position -> (P,) worst forward multiple on that position
    pos_reverse: dict  # position -> (P,) worst reverse multiple on that position
    failed: str | None = None

    @property
    def worst(self) -> np.ndarray:
        return np.maximum(self.forward, self.reverse)

    def position_worst(self) -> np.ndarray:
        """Worst multiple of each position, shape (P, positions), in position order."""
        return np.column_stack([np.maximum(self.pos_forward[k], self.pos_reverse[k]) for k in self.pos_forward])

    def row(self, i: int) -> "Metrics":
        return self.rows(slice(i, i + 1))

    def rows(self, sl: slice) -> "Metrics":
        """The entries of a slice of rows."""
        def pick(x):
            return x[sl]

        def pick_all(d):
            return {k: pick(v) for k, v in d.items()}

        return Metrics(pick(self.forward), pick(self.reverse), self.forward_case[sl], self.reverse_case[sl],
                       pick(self.max_input_forward), pick(self.max_input_reverse), pick_all(self.error_pct),
                       pick_all(self.total_pct), pick(self.stress), self.stress_case[sl], pick(self.power_w),
                       pick_all(self.pos_forward), pick_all(self.pos_reverse), self.failed)

    @staticmethod
    def stack(parts: list) -> "Metrics":
        """One Metrics of the rows of several, in order (the inverse of :meth:`rows`)."""
        def cat(get):
            return np.concatenate([get(m) for m in parts])

        def cat_all(get):
            return {k: cat(lambda m: get(m)[k]) for k in get(parts[0])}

        def seq(get):
            return [x for m in parts for x in get(m)]

        failed = next((m.failed for m in parts if m.failed is not None), None)
        return Metrics(cat(lambda m: m.forward), cat(lambda m: m.reverse), seq(lambda m: m.forward_case),
                       seq(lambda m: m.reverse_case), cat(lambda m: m.max_input_forward),
                       cat(lambda m: m.max_input_reverse), cat_all(lambda m: m.error_pct),
                       cat_all(lambda m: m.total_pct), cat(lambda m: m.stress), seq(lambda m: m.stress_case),
                       cat(lambda m: m.power_w), cat_all(lambda m: m.pos_forward), cat_all(lambda m: m.pos_reverse),
                       failed)


@dataclass
class Topology:
    """A candidate network, its engine and what to watch in it."""

    net: NetworkSpec
    engine: Engine
    clamp: tuple  # clamp diode designators
    watch: tuple  # clamp diodes and split resistors: the parts whose power counts
    factor: tuple | None = None  # (upper, lower, R_total, upper_nominal, lower_nominal) for a split on a grid
    bare_key: object = None  # None: readings without clamps are those of the base network
    bare: dict | None = None
    memo: dict = field(default_factory=dict)
    carrying: dict | None = None  # position -> designators that carry current in it
    static: dict = field(default_factory=dict)  # (position, phase points) -> figures that no row changes
    bare_engine: Engine | None = None  # the same network without its clamp diodes


@dataclass
class Point:
    """One evaluated placement: a combo at a split resistance (None off splits)."""

    combo: Combo
    r: float | None
    metrics: Metrics  # one row
    feasible: bool
    upper: tuple | None = None
    lower: tuple | None = None
    stage: str = "grid"
    clamps: tuple | None = None  # the ``clamps:`` requests (sized projects)
    net: NetworkSpec | None = None  # the sized network of those requests

    @property
    def worst(self) -> float:
        return float(self.metrics.worst[0])

    @property
    def multiples(self) -> np.ndarray:
        """Worst movement multiple of each position."""
        return self.metrics.position_worst()[0]

    @property
    def score(self) -> float:
        return lex_score(self.metrics.position_worst()[0])


# --- topologies -------------------------------------------------------------------------------


def topology(ctx: SearchContext, combo: Combo, **kw) -> Topology:
    """The base network with a combo placed (:func:`planner.protect.candidates.place_clamp`), ready to run."""
    net, clamp, watch, factor = place_clamp(ctx, combo, **kw)
    eng = Engine(ctx.design.variant(net))
    # a grid split keeps the sum of its two parts, hence the readings without
    # clamps, those of the base network exactly
    key = None if (factor is not None or combo.site.kind != "split") else tuple(
        (e.name, e.value_ohm) for e in net.elements if isinstance(e, Resistor))
    return Topology(net, eng, clamp, watch, factor, key)


def topology_of(ctx: SearchContext, net: NetworkSpec, watch_extra=()) -> Topology:
    """A topology around a whole network (the project as given, a sized candidate)."""
    clamp = tuple(clamp_diodes(net))
    key = tuple((e.name, e.value_ohm) for e in net.elements if isinstance(e, Resistor))
    return Topology(net, Engine(ctx.design.variant(net)), clamp, clamp + tuple(watch_extra), None, key)


def bare_readings(ctx: SearchContext, topo: Topology) -> dict:
    """Readings at the hottest ambient with the clamp diodes taken out, per position (10,)."""
    if topo.bare is not None:
        return topo.bare
    if topo.bare_key is None:
        if ctx.bare_base is None:
            ctx.bare_base = _readings(ctx, ctx.base)
        topo.bare = ctx.bare_base
    else:
        if topo.bare_key not in ctx.bare_cache:
            ctx.bare_cache[topo.bare_key] = {p.name: bare_reading(ctx, topo, p.name) for p in ctx.positions}
            ctx.bare_some.pop(topo.bare_key, None)
        topo.bare = ctx.bare_cache[topo.bare_key]
    return topo.bare


def bare_reading(ctx: SearchContext, topo: Topology, name: str) -> np.ndarray:
    """One position's readings of :func:`bare_readings` (10,), solving that position alone when it is new.

    A placement judged for feasibility alone (:func:`feasible_alone`) mostly fails at
    its first position: the other positions' readings without clamps are not needed.
    """
    if topo.bare is not None or topo.bare_key is None or topo.bare_key in ctx.bare_cache:
        return bare_readings(ctx, topo)[name]
    got = ctx.bare_some.get(topo.bare_key)
    if got is None:
        got = ctx.bare_some[topo.bare_key] = (_without_clamps(ctx, topo), {})
    eng, readings = got
    if name not in readings:
        p = next(q for q in ctx.positions if q.name == name)
        readings[name] = _reading(ctx, eng, p)
    return readings[name]


def _without_clamps(ctx: SearchContext, topo: Topology) -> Engine:
    """An engine of the topology's network with its clamp diodes taken out."""
    net = replace(topo.net, elements=tuple(e for e in topo.net.elements if e.name not in topo.clamp))
    return Engine(ctx.design.variant(net))


def _readings(ctx: SearchContext, net: NetworkSpec) -> dict:
    """Readings of a network at the linearity points at the hottest ambient, per position."""
    eng = Engine(ctx.design.variant(net))
    return {p.name: _reading(ctx, eng, p) for p in ctx.positions}


def _reading(ctx: SearchContext, eng: Engine, p) -> np.ndarray:
    """One position's readings at the linearity points at the hottest ambient (10,)."""
    return eng.operate(p.name, FRACTIONS * p.full_scale, temperature_k=ctx.t_hot).reading()[0]


# --- running a batch ----------------------------------------------------------------------------


def run(ctx: SearchContext, topo: Topology, r_rows=None, *, pairs=None, n_phase: int = SEARCH_PHASE_POINTS,
        count: bool | None = True) -> Metrics:
    """Evaluate a topology for a batch of split resistances (one row when None).

    Parameters
    ----------
    ctx : SearchContext
    topo : Topology
    r_rows : array_like, optional
        Split resistances below the tap [ohm] of a grid topology, one row each.
    pairs : (sequence, sequence), optional
        (upper values, lower values) [ohm]: the two parts of a grid split row by
        row instead (standard values).
    n_phase : int
        Phase points per sine cycle.
    count : bool or None
        False leaves the evaluation out of the candidate count (the reported
        rows' final pass); None counts it nowhere (already counted by
        :func:`feasible_alone`).

    Returns
    -------
    Metrics
        One entry per row; every figure infinite (``failed`` set) when the
        solver fails.

    Notes
    -----
    Per position, the fault stimuli are solved in one call of
    :meth:`Engine.operate` per stimulus kind and source impedance (rows:
    split resistances x stimuli; columns: the samples of one sine cycle, a DC
    value repeated), a source's current limit by solving its limited samples
    again as a current source (as :func:`planner.stress.solve_waveforms` does);
    the linearity points at the hottest ambient in one more call.
    """
    if pairs is not None:
        rows = len(pairs[0])
    else:
        rows = 1 if r_rows is None else len(r_rows)
    if count:
        ctx.evaluated += rows
    elif count is not None:
        ctx.reevaluated += rows
    try:
        return _run_rows(ctx, topo, _factors(topo, r_rows, pairs), rows, n_phase, pairs is not None)
    except SolveError as e:
        inf = np.full(rows, np.inf)
        none = [None] * rows

        def per():
            return {p.name: inf.copy() for p in ctx.positions}

        return Metrics(inf, inf.copy(), none, none, inf.copy(), inf.copy(), per(), per(), inf.copy(), none,
                       inf.copy(), per(), per(), failed=e.one_line())


def _operate_kw(rd: "RowDiodes | None") -> dict:
    """The keywords of :meth:`planner.engine.Engine.operate` for a family's rows (none outside a family)."""
    if rd is None:
        return {}
    return {"models": rd.models or None, "stacks": rd.stacks or None}


def _factors(topo: Topology, r_rows, pairs):
    """Factors of the split's two parts: nominal value x factor = the row's value."""
    if topo.factor is None or (r_rows is None and pairs is None):
        return None
    up, lo, total, up0, lo0 = topo.factor
    if pairs is not None:
        return {up: np.asarray(pairs[0], dtype=float) / up0, lo: np.asarray(pairs[1], dtype=float) / lo0}
    r = np.asarray(r_rows, dtype=float)
    return {up: (total - r) / up0, lo: r / lo0}


def _run_rows(ctx: SearchContext, topo: Topology, fac, rows: int, n_phase: int, own_bare: bool = False,
              rd: "RowDiodes | None" = None, members: list | None = None) -> Metrics:
    """Every position for ``rows`` rows, gathered into the worst over the positions (see :func:`run`).

    ``rd`` and ``members``: the rows of a family (:func:`planner.protect.family.run_family`): the diodes of each row,
    and each member's own topology with its number of rows, in row order.
    """
    if topo.carrying is None:
        topo.carrying = {p.name: current_carrying(topo.engine, p.name) for p in ctx.positions}
    if own_bare and fac is not None:
        # standard values: the two parts no longer sum to the resistor exactly, so
        # the readings without clamps are those of the same parts, row by row
        if topo.bare_engine is None:
            topo.bare_engine = _without_clamps(ctx, topo)
        bare = {p.name: topo.bare_engine.operate(p.name, FRACTIONS * p.full_scale, temperature_k=ctx.t_hot,
                                                 factors=fac).reading() for p in ctx.positions}
    else:
        bare = bare_readings(ctx, topo)
    fwd, rev, mi_f, mi_r, stress, power = (np.zeros(rows) for _ in range(6))
    fcase, rcase, scase = [None] * rows, [None] * rows, [None] * rows
    err, tot, pf, pr = {}, {}, {}, {}
    for p in ctx.positions:
        # a position whose current-carrying part holds neither part of the split is
        # the same for every row of a topology: solve it once (once per member of a family)
        carried = topo.carrying[p.name]
        varies = fac is not None and any(n in carried for n in fac)
        if members is not None:
            r = _family_position(ctx, topo, p, fac if varies else None, rows, n_phase, bare, rd, members)
        elif varies:
            r = _position(ctx, topo, p, fac, rows, n_phase, bare[p.name])
        else:
            r = _static_position(ctx, topo, p, n_phase, bare)
        if not varies and r["forward"].shape[0] == 1 and rows > 1:
            r = {key: (np.repeat(v, rows, axis=0) if isinstance(v, np.ndarray) else v * rows)
                 for key, v in r.items()}
        pf[p.name], pr[p.name] = r["forward"], r["reverse"]
        err[p.name], tot[p.name] = r["error"], r["total"]
        for arr, cases, new, newc in ((fwd, fcase, r["forward"], r["forward_case"]),
                                      (rev, rcase, r["reverse"], r["reverse_case"]),
                                      (stress, scase, r["stress"], r["stress_case"])):
            for i in np.nonzero(new > arr)[0]:
                cases[i] = newc[i]
            arr[:] = np.maximum(arr, new)
        mi_f[:] = np.maximum(mi_f, r["max_input_forward"])
        mi_r[:] = np.maximum(mi_r, r["max_input_reverse"])
        power[:] = np.maximum(power, r["power"])
    return Metrics(fwd, rev, fcase, rcase, mi_f, mi_r, err, tot, stress, scase, power, pf, pr)


def _family_position(ctx: SearchContext, topo: Topology, p, fac, rows: int, n_phase: int, bare: dict,
                     rd: "RowDiodes", members: list) -> dict:
    """One position for every row of a family (:func:`planner.protect.family.run_family`; ``topo``: its
    template), each case naming the member's own diodes.

    ``fac``: the split's factors of every row when the position carries a split part (else None).
    A position no split part carries is one row per member (each member's own models and
    stacks), solved together and kept in each member's ``static``; a cycle-averaged reading
    (an AC range's linearity points) is solved member by member on the members' own networks.
    """
    key = (p.name, n_phase)
    if p.kind.waveform != "dc":
        got = []
        for t, n, start in _spans(members):
            if fac is not None:
                own = {k: v[start:start + n] for k, v in fac.items()}
                got.append(_position(ctx, t, p, own, n, n_phase, bare[p.name]))
            else:
                got.append(_static_position(ctx, t, p, n_phase, bare))
        return _joined(got, [1 if fac is not None else n for _, n, _ in _spans(members)])
    if fac is not None:
        return _named(_position(ctx, topo, p, fac, rows, n_phase, bare[p.name], rd=rd), rd)
    first = rd.map(lambda v: v[[start for _, _, start in _spans(members)]])
    if any(n in topo.carrying[p.name] for n in rd.names()):
        r = _named(_position(ctx, topo, p, None, len(members), n_phase,
                             np.repeat(np.atleast_2d(bare[p.name])[:1], len(members), axis=0), rd=first), first)
        got = [{k: v[j:j + 1] for k, v in r.items()} for j in range(len(members))]
    else:  # the same for every member but for the names of its diodes
        r = _static_position(ctx, topo, p, n_phase, bare)
        got = [_named(r, first, j) for j in range(len(members))]
    for (t, _), g in zip(members, got):
        t.static.setdefault(key, g)
    return _joined(got, [n for _, n in members])


def _spans(members: list) -> list:
    """(topology, rows, first row) of each member of a family, in row order."""
    out, at = [], 0
    for t, n in members:
        out.append((t, n, at))
        at += n
    return out


def _joined(parts: list, repeats: list) -> dict:
    """Position figures of consecutive rows joined, each part's rows repeated ``repeats`` times."""
    return {k: (np.concatenate([np.repeat(g[k], n, axis=0) for g, n in zip(parts, repeats)])
                if isinstance(parts[0][k], np.ndarray) else [x for g, n in zip(parts, repeats) for x in g[k] * n])
            for k in parts[0]}


def _named(r: dict, rd: "RowDiodes", row: int | None = None) -> dict:
    """``r`` with each stress case naming the row's own diode instead of the template's
    (:attr:`planner.protect.family.RowDiodes.own`; ``row``: every case is that row's)."""
    cases = []
    for i, x in enumerate(r["stress_case"]):
        if x is not None and x[2] in rd.own:
            x = (x[0], x[1], rd.own[x[2]][i if row is None else row])
        cases.append(x)
    return {**r, "stress_case": cases}


def _static_position(ctx: SearchContext, topo: Topology, p, n_phase: int, bare: dict) -> dict:
    """A position's figures for the topology's own values (one row), solved once and kept in ``topo.static``."""
    key = (p.name, n_phase)
    if key not in topo.static:
        topo.static[key] = _position(ctx, topo, p, None, 1, n_phase, np.atleast_2d(bare[p.name])[:1])
    return topo.static[key]


def feasible_alone(ctx: SearchContext, topo: Topology, *, n_phase: int = SEARCH_PHASE_POINTS, count: bool = True,
                   first=()) -> tuple[bool, str | None]:
    """Whether a topology's own values are feasible, judged position by position until one fails.

    Parameters
    ----------
    ctx : SearchContext
    topo : Topology
        Run at its own values (one row, as :func:`run` without rows).
    n_phase : int
        Phase points per sine cycle.
    count : bool
        Counted as one evaluation of the search (True) or of the final pass (False), as :func:`run`.
    first : sequence of str
        Positions to judge early: after those that failed the last candidates judged so
        (``ctx.failed_at``, most recent first), before the rest (in switch order). Only
        the order of the work changes, never the answer.

    Returns
    -------
    feasible : bool
        ``feasible(ctx, run(ctx, topo, n_phase=n_phase))[0]``, exactly.
    failing : str or None
        The position that failed (None when feasible, or when the solver failed).

    Notes
    -----
    Feasibility is a conjunction over the positions (:func:`feasible`: each
    position's clamp error within its limit, the clamp diodes' worst ratio
    at most one, finite multiples; the worst over the positions is their
    maximum), so the first position that fails decides it and the others
    need not be solved. The positions solved are kept in ``topo.static``:
    a following :func:`run` of the same topology reuses them.
    """
    if count:
        ctx.evaluated += 1
    else:
        ctx.reevaluated += 1
    ctx.failed_part = None
    rank: dict = {}
    for name in list(ctx.failed_at) + list(first):
        rank.setdefault(name, len(rank))
    order = sorted(ctx.positions, key=lambda q: rank.get(q.name, len(rank)))
    try:
        for p in order:
            key = (p.name, n_phase)
            if key in topo.static:
                r = topo.static[key]
            else:
                # the stimulus group that overstressed a clamp diode here last time is solved first: a diode
                # beyond its rating makes the position fail whatever the other groups give
                # (its readings without clamps are solved only when no group overstresses a clamp diode)
                r = _position(ctx, topo, p, None, 1, n_phase,
                              lambda name=p.name: np.atleast_2d(bare_reading(ctx, topo, name))[:1],
                              stop_over=ctx.failed_stimulus.get(p.name, ""))
                if isinstance(r, tuple):  # (position, stimulus, diode): a clamp diode beyond its rating
                    ctx.failed_at = [p.name] + [n for n in ctx.failed_at if n != p.name]
                    ctx.failed_stimulus[p.name] = r[1]
                    ctx.failed_part = r[2]
                    return False, p.name
                topo.static[key] = r
            accurate = r["error"][0] <= ctx.limits[p.name] * EXCEED
            finite = np.isfinite(np.maximum(r["forward"], r["reverse"])[0])
            if not (accurate and finite and r["stress"][0] <= EXCEED):
                ctx.failed_at = [p.name] + [n for n in ctx.failed_at if n != p.name]
                ctx.failed_part = r["stress_case"][0][2] if accurate and finite else None
                return False, p.name
    except SolveError:
        return False, None
    return True, None


def _position(ctx: SearchContext, topo: Topology, p, fac, rows: int, n_phase: int, bare,
              stop_over: str | None = None, rd: "RowDiodes | None" = None) -> dict | tuple:
    """Every figure of one position for ``rows`` rows (see :func:`run`).

    ``bare``: the readings without clamps (rows x 10), or a callable that gives them
    when they are needed. With ``stop_over`` (one row): the stimulus groups are solved the one holding
    that stimulus first, and as soon as a group puts a clamp diode beyond its
    rating its case (position, stimulus, diode) is returned instead of the figures
    (the position is infeasible, :func:`feasible`). Otherwise the figures are
    those of the groups folded in their own order, whatever order they were
    solved in. ``rd``: the diodes of each row (:func:`planner.protect.family.run_family`).
    """
    eng = topo.engine
    diodes = _ratings(ctx, topo, rd)
    out = {key: np.zeros(rows) for key in ("forward", "reverse", "max_input_forward", "max_input_reverse",
                                            "stress", "power")}
    for key in ("forward_case", "reverse_case", "stress_case"):
        out[key] = [None] * rows
    stims = ctx.stimuli[p.name]
    groups: dict[tuple, list[int]] = {}
    for j, s in enumerate(stims):
        has_r = s.kind == "voltage" and s.r_source_ohm > 0
        groups.setdefault((s.kind, has_r, has_r and len(s.samples(n_phase)) > WIDE), []).append(j)
    order = list(groups)
    if stop_over is not None:
        order.sort(key=lambda g: not any(stims[j].name == stop_over for j in groups[g]))
    # the linearity points at the hottest ambient ride with the DC group of the position's own kind
    own = (p.kind.source, False, False)
    with_hot = own if p.kind.waveform == "dc" and own in groups and \
        all(len(stims[j].samples(n_phase)) == 1 for j in groups[own]) else None
    solved, hot_mult = {}, None
    for g in order:
        group = [stims[j] for j in groups[g]]
        *solved[g], hot_g = _solve_group(eng, topo, p, group, *g[:2], fac, rows, n_phase,
                                         hot=(FRACTIONS * p.full_scale, ctx.t_hot) if g == with_hot else None,
                                         rd=rd)
        if g == with_hot:
            hot_mult = hot_g
        if stop_over is not None:
            probe = {"stress": np.zeros(rows), "stress_case": [None] * rows, "power": np.zeros(rows)}
            _, cur, vol, width = solved[g]
            _record_power(probe, p, topo, diodes, group, cur, vol, rows, width)
            if probe["stress"][0] > EXCEED:
                return probe["stress_case"][0]
    for g, idx in groups.items():
        group = [stims[j] for j in idx]
        mult, cur, vol, width = solved[g]
        _record_multiples(out, p, group, mult.reshape(rows, len(group), width), rows)
        _record_power(out, p, topo, diodes, group, cur, vol, rows, width)
    out["error"], out["total"] = _hot_errors(ctx, eng, p, fac, rows, bare() if callable(bare) else bare, hot_mult,
                                             rd)
    return out


def _ratings(ctx: SearchContext, topo: Topology, rd: "RowDiodes | None") -> dict:
    """Each clamp diode's continuous ratings: (average current [A], surge current [A], power [W]), floats,
    or arrays (rows, 1) where ``rd`` gives the diode row by row (:meth:`RowDiodes.ratings`)."""
    cat = ctx.spec.parts.diodes
    out = {}
    for n in topo.clamp:
        if rd is not None and n in rd.models:
            out[n] = rd.ratings(cat, n)
        else:
            d = cat[topo.net.element(n).model]
            out[n] = (d.max_current_a, d.surge_current_a, d.max_power_w)
    return out


def _solve_group(eng: Engine, topo: Topology, p, group: list, kind: str, has_r: bool, fac, rows: int,
                 n_phase: int, hot: tuple | None = None, rd: "RowDiodes | None" = None):
    """Solve one group of stimuli (one kind, one source-impedance flag) for every row.

    Returns the movement multiples (rows x G, W), the watched parts' currents and
    voltages by designator (same shape) and the samples per stimulus W; samples
    over a source's current limit are solved again as a current source at the limit.
    With ``hot`` (the linearity points [V or A] and the hottest ambient [K]; for a
    group of DC stimuli of the position's own kind without source resistance),
    those points are solved in the same call, one solver row each at that
    temperature, and their movement multiples (rows x points) come fifth (None
    without ``hot``).
    """
    g = len(group)
    samples = [s.samples(n_phase) for s in group]
    width = max(len(x) for x in samples)
    block = np.array([np.resize(x, width) for x in samples])  # (G, W)
    stim = np.tile(block, (rows, 1))  # (rows*G, W): row i, stimulus j at i*G + j
    r_src = np.tile([s.r_source_ohm for s in group], rows) if has_r else 0.0
    f_rows = None if fac is None else {k: np.repeat(v, g) for k, v in fac.items()}
    d_rows = None if rd is None else rd.map(lambda v: np.repeat(v, g))
    hot_mult = None
    if has_r:  # a source impedance per stimulus: one parameter set per row and stimulus
        op = eng.operate(p.name, stim, kind=kind, r_source_ohm=r_src, factors=f_rows, **_operate_kw(d_rows))

        def laid(x):
            return np.array(x)
    else:
        # no source impedance: the group's samples side by side in one parameter set per row (the solver's
        # work grows with the parameter sets far more than with the stimuli of each); the linearity points
        # at the hottest ambient ride along as parameter sets of their own (rows independent: the same
        # figures as separate calls)
        line = block.reshape(-1)
        if hot is None:
            op = eng.operate(p.name, line, kind=kind, factors=fac, **_operate_kw(rd))
        else:
            applied, t_hot = hot
            cols = max(line.size, applied.size)
            both = np.vstack([np.resize(line, cols), np.resize(applied, cols)])  # short rows repeat themselves
            both = np.repeat(both, rows, axis=0)  # rows at the reference temperature, then rows hot
            t = np.repeat([eng.spec.ambient.t_ref_k, t_hot], rows)
            f2 = None if fac is None else {k: np.tile(v, 2) for k, v in fac.items()}
            d2 = None if rd is None else rd.map(lambda v: np.tile(v, 2))
            op = eng.operate(p.name, both, kind=kind, temperature_k=t, factors=f2, **_operate_kw(d2))
            hot_mult = np.asarray(op.movement_multiple)[rows:, :applied.size]

        def laid(x):
            x = np.broadcast_to(np.asarray(x)[:rows, :line.size], (rows, line.size))
            return np.array(x).reshape(rows * g, width)
    mult = laid(op.movement_multiple)
    cur = {n: laid(op.element(n).current_a) for n in topo.watch}
    vol = {n: laid(op.element(n).voltage_v) for n in topo.watch}
    i_src = laid(op.source_current_a)
    lims = np.tile([s.current_limit_a or np.inf for s in group], rows)
    if kind == "voltage" and np.isfinite(lims).any():
        rr, kk = np.nonzero(np.abs(i_src) > lims[:, None])
        if rr.size:
            vals = np.copysign(lims[rr], i_src[rr, kk])
            f2 = None if f_rows is None else {k: v[rr] for k, v in f_rows.items()}
            d2 = None if d_rows is None else d_rows.map(lambda v: v[rr])
            op2 = eng.operate(p.name, vals[:, None], kind="current", factors=f2, **_operate_kw(d2))
            mult[rr, kk] = np.asarray(op2.movement_multiple)[:, 0]
            for n in topo.watch:
                cur[n][rr, kk] = op2.element(n).current_a[:, 0]
                vol[n][rr, kk] = op2.element(n).voltage_v[:, 0]
    return mult, cur, vol, width, hot_mult


def _record_multiples(out: dict, p, group: list, mult: np.ndarray, rows: int) -> None:
    """Fold one group's worst forward and reverse multiples (rows x G x W) into ``out``."""
    for key, m in (("forward", mult.max(axis=2)), ("reverse", (-mult).max(axis=2))):
        jbest = np.argmax(m, axis=1)
        vbest = m[np.arange(rows), jbest]
        for i in np.nonzero(vbest > out[key])[0]:
            out[key + "_case"][i] = (p.name, group[jbest[i]].name)
        out[key] = np.maximum(out[key], vbest)
        at_max = [j for j, s in enumerate(group) if s.name in ("max input", "max input reversed")]
        if at_max:
            out["max_input_" + key] = np.maximum(out["max_input_" + key], m[:, at_max].max(axis=1))


def _record_power(out: dict, p, topo: Topology, diodes: dict, group: list, cur: dict, vol: dict, rows: int,
                  width: int) -> None:
    """Fold one group's power in the watched parts and the clamp diodes' continuous ratings into ``out``.

    Impulses are judged on peak quantities only, so they add neither power nor stress here.
    """
    g = len(group)
    impulse = np.array([s.peak_only for s in group])
    tot_p = np.zeros((rows, g))
    for n in topo.watch:
        i = cur[n].reshape(rows, g, width)
        v = vol[n].reshape(rows, g, width)
        pm = (i * v).mean(axis=2)
        tot_p += np.abs(pm)
        if n in diodes:
            i_max, i_surge, p_max = diodes[n]
            ratio = np.maximum.reduce([np.abs(i).mean(axis=2) / i_max,
                                       np.abs(i).max(axis=2) / i_surge,
                                       np.abs(pm) / p_max])
            ratio[:, impulse] = 0.0
            jbest = np.argmax(ratio, axis=1)
            vbest = ratio[np.arange(rows), jbest]
            for i_row in np.nonzero(vbest > out["stress"])[0]:
                out["stress_case"][i_row] = (p.name, group[jbest[i_row]].name, n)
            out["stress"] = np.maximum(out["stress"], vbest)
    tot_p[:, impulse] = 0.0
    out["power"] = np.maximum(out["power"], tot_p.max(axis=1))


def _hot_errors(ctx: SearchContext, eng: Engine, p, fac, rows: int, bare,
                hot_mult: np.ndarray | None = None, rd: "RowDiodes | None" = None) -> tuple[np.ndarray, np.ndarray]:
    """Clamp error and whole error at the hottest ambient over the linearity points [% of full scale].

    ``hot_mult``: the movement multiples at those points when solved already (:func:`_solve_group`);
    ``rd``: the diodes of each row (:func:`planner.protect.family.run_family`).
    """
    applied = FRACTIONS * p.full_scale
    if hot_mult is None:
        got = eng.operate(p.name, applied, temperature_k=ctx.t_hot, factors=fac, **_operate_kw(rd)).reading()
    else:
        got = p.kind.reading(hot_mult, p.full_scale)
    got = np.broadcast_to(got, (rows, applied.size))
    error = np.max(np.abs(got - np.broadcast_to(bare, got.shape)), axis=1) / p.full_scale * 100.0
    total = np.max(np.abs(got - applied[None, :]), axis=1) / p.full_scale * 100.0
    return error, total


# --- judging ------------------------------------------------------------------------------------


def accuracy_ok(ctx: SearchContext, m: Metrics) -> np.ndarray:
    """Per row: every position's clamp error within its limit."""
    ok = np.ones(m.forward.shape, dtype=bool)
    for p in ctx.positions:
        ok &= m.error_pct[p.name] <= ctx.limits[p.name] * EXCEED
    return ok


def feasible(ctx: SearchContext, m: Metrics) -> np.ndarray:
    """Per row: accuracy within the limits, the clamp diodes within their ratings, a finite solve."""
    return accuracy_ok(ctx, m) & (m.stress <= EXCEED) & np.isfinite(m.worst)


def slack(ctx: SearchContext, m: Metrics) -> np.ndarray:
    """Largest use of a constraint, minus one: <= 0 when feasible."""
    use = m.stress.copy()
    for p in ctx.positions:
        use = np.maximum(use, m.error_pct[p.name] / ctx.limits[p.name])
    return use - 1.0


def share_of_class(ctx: SearchContext, m: Metrics) -> np.ndarray:
    """Per row: the largest clamp error over the positions as a share of the class index."""
    return np.max(np.vstack([m.error_pct[p.name] for p in ctx.positions]), axis=0) / ctx.class_index
