"""The search: a branch-and-bound over sites and stacks, a grid over each split, then refinement.

:func:`branch_and_bound` bounds every site by its strongest stacks, branches over
the sites in the order of their bounds and prunes what cannot beat the best
feasible placement so far; every split combo is evaluated on a batched grid of
split resistances (:func:`split_grid`), and the most promising are refined by
:func:`refine` (a finer grid over the bracket between grid neighbours, in batches).
A combo is evaluated together with the members of its family (:func:`family_key`)
that the search would visit next, as the rows of one batch (:class:`Batches`).

Public API
----------
:func:`branch_and_bound`, :func:`split_grid`, :func:`family_key`, :func:`evaluate_combo`,
:class:`Batches`, :func:`best_point`, :func:`bracket_grid`, :func:`refine`.
"""

from __future__ import annotations

import copy
import math
from dataclasses import replace

import numpy as np

from .ahead import Ahead
from .candidates import Combo, Site, Stack, sites, stacks
from .context import SearchContext
from .evaluate import Metrics, Point, Topology, feasible, run, slack, topology
from .family import run_family
from .ordering import lex_best, lex_compare, lex_score, ranked

__all__ = [
    "GRID_POINTS",
    "RANDOM_PROBES",
    "SPLIT_LO",
    "SPLIT_HI",
    "REFINE_COMBOS",
    "REFINE_XTOL_REL",
    "REFINE_EDGE_ROWS",
    "REFINE_GAIN",
    "FAMILY_MAX",
    "LOOK_AHEAD",
    "split_grid",
    "family_key",
    "evaluate_combo",
    "Batches",
    "best_point",
    "bracket_grid",
    "refine",
    "branch_and_bound",
]

#: Points of the split grid: geometric from SPLIT_LO to SPLIT_HI of the split resistor.
GRID_POINTS = 16
#: Extra split resistances drawn at random (log-uniform, seeded) besides the grid.
RANDOM_PROBES = 4
SPLIT_LO = 0.01
SPLIT_HI = 0.98
#: Combinations whose split resistance is refined (:func:`refine`) after the grid.
REFINE_COMBOS = 3
#: Step of the refinement's batch, as a fraction of the split resistance (finer
#: than the 2.4 % steps of E96).
REFINE_XTOL_REL = 0.015
#: Rows of the second batch that splits the refined edge's last step (about 0.2 % of r apart).
REFINE_EDGE_ROWS = 7
#: Least relative gain an interior refinement must promise (see :func:`_worth_refining`).
REFINE_GAIN = 0.005


class _Stop(Exception):
    """The candidate cap was reached."""


# --- one combo --------------------------------------------------------------------------------


def split_grid(ctx: SearchContext, site: Site, rng: np.random.Generator | None = None) -> np.ndarray:
    """Split resistances of the batched grid [ohm], ascending (seeded random probes included).

    The probes are drawn from ``ctx.rng`` (or ``rng``, a copy of it, to know a
    grid ahead without drawing it).
    """
    r = site.r_ohm
    lo, hi = math.log(SPLIT_LO * r), math.log(SPLIT_HI * r)
    pts = list(np.exp(np.linspace(lo, hi, GRID_POINTS)))
    pts += list(np.exp((ctx.rng if rng is None else rng).uniform(lo, hi, RANDOM_PROBES)))
    if ctx.sized:
        pts += [float(c.at) for c in ctx.spec.clamps
                if not isinstance(c.at, str) and SPLIT_LO * r <= float(c.at) <= SPLIT_HI * r]
    return np.unique(np.asarray(pts, dtype=float))


def family_key(combo: Combo) -> tuple:
    """What a combo's network is apart from its stacks' models and lengths: its site and each stack's mode.

    The combos of one family are one circuit whose stacks differ in model and number of
    junctions only (:func:`planner.protect.family.family_template`), so they are
    evaluated as the rows of one batch (:func:`planner.protect.family.run_family`).
    """
    def shape(st):
        return None if st is None else st.mode

    return combo.site.label, shape(combo.forward), shape(combo.reverse)


def evaluate_combo(ctx: SearchContext, combo: Combo, batches: "Batches | None" = None,
                   following=()) -> tuple[Topology, np.ndarray | None, Metrics] | None:
    """A combo evaluated on its split grid (one row off splits); None when the cap leaves no room.

    With ``batches`` (:class:`Batches`): the combo's rows come from a family batch
    evaluated earlier (here or on the worker) where it holds them; else the combo is
    evaluated here together with the members of its family among ``following`` (the
    combos that would come next, in order), and the next family is sent to the worker.
    A row a batch does not hold (a random probe of the grid that was drawn otherwise
    than foreseen) is evaluated here. The answer is the same as the combo's own
    evaluation, to the solver's tolerance.
    """
    r = split_grid(ctx, combo.site) if combo.site.kind == "split" else None
    rows = 1 if r is None else len(r)
    if not ctx.room(rows):
        return None
    got = batches.take(combo) if batches is not None else None
    if got is None:
        topo, ready = topology(ctx, combo), {}
        if batches is not None:
            ready = batches.evaluate(combo, topo, r, following)
    else:
        topo, ready = got
    keys = [None] if r is None else [float(x) for x in r]
    missing = [k for k in keys if k not in ready]
    if len(missing) == len(keys):
        m = run(ctx, topo, r)
    else:
        if missing:
            mx = run(ctx, topo, None if r is None else np.array(missing), count=None)
            ready.update(_rows(missing, mx))
        ctx.evaluated += rows
        m = Metrics.stack([ready[k] for k in keys])
    if r is not None:  # the memo holds the rows of this grid alone (a foreseen grid's other rows are dropped)
        topo.memo.update(_rows(r, m))
    return topo, r, m


#: Most combos in one family batch (rows: members x split grid).
FAMILY_MAX = 16
#: How far ahead the search's order is read for a batch's members and the worker's next family.
LOOK_AHEAD = 40


class Batches:
    """Family batches evaluated ahead of their turn: the members pending, the worker's family in flight.

    Parameters
    ----------
    ctx : SearchContext
    ahead : Ahead, optional
        A worker (:class:`planner.protect.ahead.Ahead`) running :func:`ahead_task`: while
        this process evaluates a family, the worker evaluates the next one.

    Notes
    -----
    A member's grid is foreseen by drawing its random probes from a copy of the
    search's generator, as if every combo before it in the search's order were
    visited; the cost of a batch being mostly per call, a member the search then
    prunes costs little.
    """

    def __init__(self, ctx: SearchContext, ahead: Ahead | None = None):
        self.ctx = ctx
        self.ahead = ahead
        self.pending: dict[tuple, tuple] = {}  # combo key -> (topology, {split resistance: Metrics row})
        self.flight: tuple = ()  # combo keys of the family on the worker

    def take(self, combo: Combo) -> tuple | None:
        """The combo's topology and the rows a batch evaluated for it, by split resistance (None off
        splits), or None where no batch holds it."""
        if combo.key() not in self.pending and combo.key() in self.flight:
            got = self.ahead.take()
            self.flight = ()
            if got is not None:
                for (c, g), (m, static) in zip(got["members"], got["results"]):
                    t = topology(self.ctx, c)
                    t.static.update(static)
                    self.pending.setdefault(c.key(), (t, _rows(g, m)))
        return self.pending.pop(combo.key(), None)

    def evaluate(self, combo: Combo, topo: Topology, r, following) -> dict:
        """Evaluate ``combo`` with its family's members among ``following`` as one batch, and return its
        rows by split resistance (empty when it has no members); the members wait in :attr:`pending`.
        The next family goes to the worker first."""
        ctx = self.ctx
        upcoming = _upcoming(ctx, following)
        fam = family_key(combo)
        members = [(c, g) for c, g in upcoming if family_key(c) == fam][:FAMILY_MAX - 1]
        self._send_next([(c, g) for c, g in upcoming if family_key(c) != fam])
        if not members:
            return {}
        topos = [topo] + [topology(ctx, c) for c, _ in members]
        grids = [r] + [g for _, g in members]
        got = run_family(ctx, [combo] + [c for c, _ in members], topos, grids)
        if got is None:
            return {}
        for (c, g), t, m in zip(members, topos[1:], got[1:]):
            self.pending[c.key()] = (t, _rows(g, m))
        return _rows(r, got[0])

    def _send_next(self, rest: list) -> None:
        """Send the first of ``rest`` not pending, with its family's members, to an idle worker."""
        ahead = self.ahead
        if ahead is None:
            return
        if self.flight and not ahead.holds(self.flight):
            self.flight = ()
        ahead.drop_done()  # a family the search did not reach, when the worker is done with it
        if not ahead.idle:
            return
        rest = [(c, g) for c, g in rest if c.key() not in self.pending]
        if not rest:
            return
        fam = family_key(rest[0][0])
        batch = [x for x in rest if family_key(x[0]) == fam][:FAMILY_MAX]
        key = tuple(c.key() for c, _ in batch)
        if ahead.send(key, ("family", batch)):
            self.flight = key


def _rows(r, m: Metrics) -> dict:
    """The rows of ``m`` by split resistance (None off splits)."""
    return {None: m} if r is None else {float(x): m.row(i) for i, x in enumerate(r)}


def _upcoming(ctx: SearchContext, following) -> list:
    """The next combos in the search's order with their foreseen grids (the random probes drawn from
    a copy of the generator, each combo in turn)."""
    rng = copy.deepcopy(ctx.rng)
    out, sigs = [], set()
    for c in following:
        if c.signature() in sigs:  # skipped at its turn: one circuit is visited once
            continue
        sigs.add(c.signature())
        out.append((c, split_grid(ctx, c.site, rng) if c.site.kind == "split" else None))
        if len(out) >= LOOK_AHEAD:
            break
    return out


def ahead_task(ctx: SearchContext):
    """What the worker of :class:`Batches` runs: a family's metrics on its grids, and each member's
    static positions (uncounted there)."""
    def task(payload):
        _, batch = payload
        topos = [topology(ctx, c) for c, _ in batch]
        grids = [g for _, g in batch]
        got = run_family(ctx, [c for c, _ in batch], topos, grids) if len(batch) > 1 else None
        if got is None:
            got = [run(ctx, t, g, count=None) for t, g in zip(topos, grids)]
        return {"members": batch, "results": [(m, t.static) for m, t in zip(got, topos)]}
    return task


def best_point(ctx: SearchContext, combo: Combo, r, m: Metrics, stage="grid") -> Point:
    """The feasible row that protects best (leximax), else the row nearest feasibility."""
    feas = feasible(ctx, m)
    if feas.any():
        pw = m.position_worst()
        best = lex_best([int(k) for k in np.nonzero(feas)[0]], lambda k: pw[k])
        i = min(best, key=lambda k: (lex_score(pw[k]), k))
    else:
        i = int(np.argmin(slack(ctx, m)))
    return Point(combo, None if r is None else float(r[i]), m.row(i), bool(feas[i]), stage=stage)


def _bracket(ctx: SearchContext, r: np.ndarray, m: Metrics) -> tuple[str, float, float] | None:
    """What a refinement searches: ("edge" or "interior", lo, hi) [ohm], or None (see :func:`refine`)."""
    feas = feasible(ctx, m)
    if not feas.any():
        return None
    pw = m.position_worst()
    score = np.array([lex_score(v) for v in pw])
    i = min(lex_best([int(k) for k in np.nonzero(feas)[0]], lambda k: pw[k]), key=lambda k: (score[k], k))
    falling = i == 0 or score[i] <= score[i - 1]
    if i + 1 < len(r) and not feas[i + 1] and falling and np.isfinite(slack(ctx, m.row(i + 1))[0]):
        return "edge", float(r[i]), float(r[i + 1])
    if (0 < i < len(r) - 1 or (i == 0 and len(r) > 1)) and _worth_refining(r, score, i):
        return "interior", float(r[max(i - 1, 0)]), float(r[i + 1])
    return None


def bracket_grid(lo: float, hi: float, rows: int | None = None) -> np.ndarray:
    """Points strictly inside (lo, hi) [ohm], geometric, with neighbours at most REFINE_XTOL_REL apart.

    ``rows``: that many points instead, evenly spread on the same logarithmic scale.
    """
    if rows is None:
        rows = max(math.ceil(math.log(hi / lo) / math.log1p(REFINE_XTOL_REL)) - 1, 0)
    return np.exp(np.linspace(math.log(lo), math.log(hi), rows + 2)[1:-1])


def refine(ctx: SearchContext, topo: Topology, combo: Combo, r: np.ndarray, m: Metrics) -> Point | None:
    """Refine the split resistance of a combo between its grid neighbours, in batched evaluations.

    Notes
    -----
    The clamp's error grows with the split resistance r (the junction sees
    :math:`I_{fs} (R_m + r)` at full scale), so the feasible set is an interval
    from the lowest grid point up to an edge. When the worst multiple still
    falls at the last feasible grid point, the optimum is on that edge, and the
    bracket is the last feasible and the first infeasible grid point.
    Otherwise the minimum is inside the feasible set, and the bracket is the
    two grid neighbours of the best grid point (the first two grid points when
    it is the first), when the parabola through the three promises a gain
    (:func:`_worth_refining`).

    The bracket is searched as a grid of its own (:func:`bracket_grid`):
    geometric points with neighbours at most :data:`REFINE_XTOL_REL` (1.5 %)
    of r apart, finer than the 2.4 % steps of the E96 series the split is then
    made of, all evaluated as the rows of one :func:`planner.protect.evaluate.run`.
    The solver's cost is mostly fixed per call, not per row, so one batch of
    some 20 rows (edge) or 40 rows (interior) costs less than the eight
    one-row evaluations a sequential root finder or minimiser takes to that
    tolerance. At an edge, the step between the last feasible row of the batch
    and the next row (infeasible) is split once more, by a second batch of
    :data:`REFINE_EDGE_ROWS` rows: two stages locate the edge to about 0.2 % of
    r, for less than one batch at that step would cost. That is the one
    bisection-like step; otherwise no unimodality is assumed: the refined point
    is, over every row of the combo evaluated so far (grid and batches), the
    feasible one that protects best (:func:`planner.protect.ordering.lex_best`,
    then the least :func:`planner.protect.ordering.lex_score`, then the least
    r). At an edge where protection improves towards it, that is the last
    feasible row.

    When the candidate cap leaves room for fewer rows than a batch, a coarser
    batch of the rows that fit spans the same bracket (the search is then
    marked truncated).

    References
    ----------
    W. H. Press, S. A. Teukolsky, W. T. Vetterling and B. P. Flannery,
    *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007, sec. 9.1 (a
    root bracketed by a change of sign, here of the constraint use minus one)
    and sec. 10.1 (a minimum bracketed by three points, the middle one lowest);
    each bracket is searched on a grid, not by bisection or Brent's method.
    IEC 60063:2015 (the E96 series, steps of :math:`10^{1/96}`, about 2.4 %).
    """
    if not feasible(ctx, m).any():
        return None
    br = _bracket(ctx, r, m)
    if br is not None:
        kind, lo, hi = br
        if _batch(ctx, topo, bracket_grid(lo, hi)) and kind == "edge":
            inside = [x for x in sorted(topo.memo) if lo <= x <= hi]
            ok = [k for k, x in enumerate(inside[:-1]) if feasible(ctx, topo.memo[x])[0]]
            if ok:
                _batch(ctx, topo, bracket_grid(inside[ok[-1]], inside[ok[-1] + 1], REFINE_EDGE_ROWS))
    ok = [x for x in sorted(topo.memo) if feasible(ctx, topo.memo[x])[0]]
    if not ok:
        return None
    x = min(lex_best(ok, lambda x: topo.memo[x].position_worst()[0]),
            key=lambda x: (lex_score(topo.memo[x].position_worst()[0]), x))
    return Point(combo, x, topo.memo[x], True, stage="refined")


def _batch(ctx: SearchContext, topo: Topology, xs: np.ndarray) -> bool:
    """Evaluate the points of ``xs`` [ohm] not in the memo as one batch (coarser when the cap is near).

    Returns False when the cap left no room for every point (the batch then
    spans the same range with the rows that fit, if any).
    """
    todo = [float(x) for x in xs if float(x) not in topo.memo]
    full = not todo or ctx.room(len(todo))
    if not full:
        left = max(ctx.max_candidates - ctx.evaluated, 0)
        todo = [todo[k] for k in np.unique(np.round(np.linspace(0, len(todo) - 1, left)).astype(int))]
    if todo:
        topo.memo.update(_rows(todo, run(ctx, topo, np.array(todo))))
    return full


def _worth_refining(r: np.ndarray, score: np.ndarray, i: int) -> bool:
    """Whether an interior minimum can gain more than :data:`REFINE_GAIN` over grid point i.

    Notes
    -----
    The parabola :math:`\\phi(x) = a x^2 + b x + c` through the grid point and its
    two neighbours, :math:`x = \\ln r`, has its vertex at :math:`\\phi_{min} = c -
    b^2 / (4 a)` when :math:`a > 0`; when :math:`\\phi_i - \\phi_{min}` is below the
    share, the grid point stands (the steps of the E96 series are coarser
    anyway). At the end of the grid, or with non-finite or non-convex
    neighbours, the refinement runs.
    """
    if i == 0 or i + 1 >= len(r):
        return True
    x = np.log(np.asarray(r[i - 1:i + 2], dtype=float))
    y = np.asarray(score[i - 1:i + 2], dtype=float)
    if not np.all(np.isfinite(y)):
        return True
    a, b, c = np.polyfit(x - x[1], y, 2)
    if a <= 0:
        return True
    gain = float(y[1] - (c - b * b / (4.0 * a)))
    return gain > REFINE_GAIN * float(y[1])


# --- branch and bound -------------------------------------------------------------------------


class _BranchAndBound:
    """The state of one branch-and-bound run and its three steps (see :func:`branch_and_bound`)."""

    def __init__(self, ctx: SearchContext, ahead: Ahead | None = None):
        self.ctx = ctx
        self.batches = Batches(ctx, ahead)
        self.pruning: set = set()  # the combos of the walk under way that are pruned at their turn
        self.points: dict[tuple, Point] = {}
        self.evaluated: dict[tuple, tuple] = {}
        self.seen: set = set()
        self.bounds: dict[str, np.ndarray] = {}
        self.fb: dict[tuple, np.ndarray] = {}  # (site, model, mode) -> per-position forward bound
        self.rb: dict[tuple, np.ndarray] = {}  # (site, model, mode) -> per-position reverse bound
        self.info = {"sites": [], "pruned_sites": [], "pruned_combos": 0}
        self.sites = sites(ctx)
        self.fwd_stacks = stacks(ctx, "forward")
        self.rev_stacks = stacks(ctx, "reverse")
        self.n_pos = len(ctx.positions)

    # --- evaluating and pruning one combo ---------------------------------------------------
    def visit(self, combo: Combo, following=()):
        """Evaluate a combo once (a combo with the signature of one seen is skipped); stop at the cap.

        ``following``: the combos that may come next (:meth:`walk`): the combo's
        family among them is evaluated with it, the next family ahead on the worker
        (:class:`Batches`).
        """
        sig = combo.signature()
        if combo.key() in self.evaluated or sig in self.seen:
            return self.evaluated.get(combo.key())
        self.seen.add(sig)
        self.ctx.say(f"{combo.site.label}: forward {combo.forward.label() if combo.forward else 'none'}, "
                     f"reverse {combo.reverse.label() if combo.reverse else 'none'}")
        nxt = (c for c in following if not self.would_skip(c))
        res = evaluate_combo(self.ctx, combo, self.batches, nxt)
        if res is None:
            raise _Stop
        topo, r, m = res
        self.evaluated[combo.key()] = (topo, r, m)
        self.points[combo.key()] = best_point(self.ctx, combo, r, m)
        return self.evaluated[combo.key()]

    def beats_incumbent(self, lb) -> bool:
        """Whether a bound leaves room for better protection than every feasible point so far."""
        ok = [p for p in self.points.values() if p.feasible]
        return not ok or all(lex_compare(lb, p.multiples) < 0 for p in lex_best(ok, lambda p: p.multiples))

    def per_position_min(self, m: Metrics, which: str) -> np.ndarray:
        """Least multiple over a combo's rows, per position, of one polarity (a bound of its stacks)."""
        d = m.pos_forward if which == "forward" else m.pos_reverse
        return np.array([float(np.min(d[q.name])) for q in self.ctx.positions])

    def combo_bound(self, c: Combo) -> np.ndarray:
        """Per position: the larger of the bounds of the combo's forward and reverse stacks."""
        zero = np.zeros(self.n_pos)
        f = self.fb.get((c.site.label, c.forward.model, c.forward.mode), zero) if c.forward else zero
        r = self.rb.get((c.site.label, c.reverse.model, c.reverse.mode), zero) if c.reverse else zero
        return np.maximum(f, r)

    def prune(self, c: Combo) -> bool:
        """Whether to skip a combo: seen, a needless longer reverse stack, or a bound that cannot win."""
        why = self._prune_reason(c)
        if why == "bound":
            self.info["pruned_combos"] += 1
            self.ctx.pruned += 1
        return why is not None

    def _prune_reason(self, c: Combo) -> str | None:
        """Why :meth:`prune` skips a combo now (``seen`` or ``bound``), None when it does not; no counting."""
        if c.key() in self.points or c.signature() in self.seen:
            return "seen"
        # a reverse stack longer than one diode: only if the one-diode stack fails
        if c.reverse is not None and c.reverse.count > 1:
            one = self.points.get(Combo(c.site, c.forward, replace(c.reverse, count=1)).key())
            if one is None or one.feasible:
                return "bound"
        if not self.beats_incumbent(self.combo_bound(c)):
            return "bound"
        return None

    def would_skip(self, c: Combo) -> bool:
        """Whether the combo would not be evaluated were it visited now (seen, or pruned when pruning applies)."""
        if c.key() in self.evaluated or c.signature() in self.seen:
            return True
        return c in self.pruning and self._prune_reason(c) is not None

    def walk(self, combos: list, following=(), prune: bool = False) -> None:
        """Visit ``combos`` in order (each pruned first when ``prune``), families evaluated ahead.

        ``following``: combos visited after these (the guess may reach into them).
        """
        combos = list(combos)
        self.pruning = set(combos) if prune else set()
        for i, c in enumerate(combos):
            if prune and self.prune(c):
                continue
            self.visit(c, combos[i + 1:] + list(following))
        self.pruning = set()

    # --- the three steps --------------------------------------------------------------------
    def bound_sites(self) -> None:
        """Step 1: the strongest stack of each kind at every site, and each site's bound."""
        ctx = self.ctx
        # each site's combos, with where each one's per-position minimum is kept (a stack's polarity)
        plans = [[(Combo(site, Stack(mdl, 1), Stack(mdl, 1)),
                   (("forward", self.fb, (site.label, mdl, "junction")),
                    ("reverse", self.rb, (site.label, mdl, "junction")))) for mdl in ctx.models] +
                 [entry for z in ctx.zeners for entry in
                  ((Combo(site, Stack(z, 1, "breakdown"), None), (("forward", self.fb, (site.label, z, "breakdown")),)),
                   (Combo(site, None, Stack(z, 1, "breakdown")), (("reverse", self.rb, (site.label, z, "breakdown")),)))]
                 for site in self.sites]
        for k, site in enumerate(self.sites):
            self.walk([c for c, _ in plans[k]], [c for p in plans[k + 1:] for c, _ in p])
            lb = np.full(self.n_pos, np.inf)
            for c, keeps in plans[k]:
                _, _, m = self.visit(c)
                for which, store, key in keeps:
                    store[key] = self.per_position_min(m, which)
                lb = np.minimum(lb, np.min(m.position_worst(), axis=0))
            self.bounds[site.label] = lb
            self.info["sites"].append({"site": site.label, "kind": site.kind, "node": site.node,
                                       "element": site.element,
                                       "r_ohm": site.r_ohm if site.kind != "movement" else 0.0,
                                       "bound_multiple": float(np.max(lb)),
                                       "bound_multiples": {q.name: float(x) for q, x in zip(ctx.positions, lb)}})

    def branch(self) -> None:
        """Step 2: sites in the order of their bound; forward stacks, then reverse stacks with the best two."""
        for site in sorted(self.sites, key=lambda s: (lex_score(self.bounds[s.label]), s.label)):
            if not self.beats_incumbent(self.bounds[site.label]):
                self.info["pruned_sites"].append(site.label)
                self.ctx.pruned += 1
                continue
            ones = [st for st in self.rev_stacks if st.count == 1]
            rv0 = min(lex_best(ones, lambda st: self.rb[(site.label, st.model, st.mode)]),
                      key=lambda st: (lex_score(self.rb[(site.label, st.model, st.mode)]), st.mode, st.model))
            self.walk([Combo(site, f, rv) for f in self.fwd_stacks
                       for rv in ((rv0, None) if f.mode == "breakdown" else (rv0,))], prune=True)
            here = [p for p in self.points.values() if p.combo.site == site and p.feasible and p.combo.forward]
            self.walk([Combo(site, p.combo.forward, rv) for p in ranked(here)[:2]
                       for rv in list(self.rev_stacks) + ([None] if p.combo.forward.mode == "breakdown" else [])],
                      prune=True)

    def refine_splits(self) -> None:
        """Step 3: refine the split resistance of the most promising split combos (:func:`refine`).

        Here, not ahead on a worker: a refinement is one or two batched calls,
        and two of them side by side on a shared second core took longer than
        one after the other (docs/performance.md).
        """
        ctx = self.ctx
        splits = [p for p in self.points.values() if p.combo.site.kind == "split" and p.feasible]
        best = ranked(splits)[:REFINE_COMBOS]
        self.first_batches([p.combo for p in best])
        for p in best:
            ctx.say(f"refining {p.combo.site.label}: {p.combo.forward.label() if p.combo.forward else 'none'} / "
                    f"{p.combo.reverse.label() if p.combo.reverse else 'none'}")
            topo, r, m = self.evaluated[p.combo.key()]
            q = refine(ctx, topo, p.combo, r, m)
            if q is not None and (lex_compare(q.multiples, p.multiples) < 0 or
                                  (lex_compare(q.multiples, p.multiples) == 0 and q.score < p.score)):
                self.points[p.combo.key()] = q


    def first_batches(self, combos: list) -> None:
        """The first batch of each refinement (:func:`refine`) evaluated beforehand, a family's together.

        Each combo's bracket grid is what :func:`refine` would evaluate first; the combos
        of one family (:func:`family_key`) are solved as the rows of one batch
        (:func:`planner.protect.family.run_family`) and their rows kept in each combo's
        memo, where :func:`refine` finds them, counted as it would count them. Only
        when the cap leaves room for every row (else each refinement thins its own).
        """
        ctx = self.ctx
        plans = []
        for c in combos:
            topo, r, m = self.evaluated[c.key()]
            br = _bracket(ctx, r, m)
            if br is None:
                continue
            xs = np.array([x for x in bracket_grid(br[1], br[2]) if float(x) not in topo.memo])
            if xs.size:
                plans.append((c, topo, xs))
        if not ctx.room(sum(len(xs) for _, _, xs in plans)):
            return
        families: dict = {}
        for plan in plans:
            families.setdefault(family_key(plan[0]), []).append(plan)
        for group in families.values():
            group = group[:FAMILY_MAX]
            if len(group) < 2:
                continue
            got = run_family(ctx, [c for c, _, _ in group], [t for _, t, _ in group], [xs for _, _, xs in group])
            if got is None:
                continue
            for (_, topo, xs), m in zip(group, got):
                ctx.evaluated += len(xs)
                topo.memo.update(_rows(xs, m))


def branch_and_bound(ctx: SearchContext, parallel: bool | None = False) -> tuple[list[Point], dict, dict]:
    """Branch-and-bound over sites and stacks.

    Parameters
    ----------
    ctx : SearchContext
    parallel : bool or None
        Evaluate the family that would come next in a forked worker while this
        process evaluates the current one (:class:`planner.protect.ahead.Ahead`;
        None: where a second core allows it). The search is the same.

    Returns
    -------
    points : list of Point
        The best point of every combo evaluated.
    info : dict
        A record of the sites and bounds (``sites``, ``pruned_sites``, ``pruned_combos``).
    evaluated : dict
        The evaluations by combo key: (topology with its memo of split
        resistances, grid, metrics).

    Notes
    -----
    1. *Bounds.* At every site the strongest stack of each kind - one diode
       each way of every model, one zener in breakdown each way - is evaluated
       (on the split grid). A longer stack needs more voltage for the same
       current, :math:`V_{stack}(I) = k\\,V_j(I)`, so it clamps later: the
       multiples of the one-diode stack bound those of every stack of its model
       and mode from below, position by position (up to the leakage of the
       other direction's reverse-biased stack and the grid's resolution).
    2. *Branching.* Sites in the order of their bound; a site, or a combo,
       whose bound does not beat the best feasible placement so far
       (:func:`planner.protect.ordering.lex_compare`) is pruned. At a site every
       forward stack is tried with the strongest reverse stack; then every
       reverse stack with the two best forward stacks (the reverse stack hardly
       changes the forward figures: reverse-biased, it only leaks). A reverse
       stack of more than one diode only clamps later, so it is tried only when
       the one-diode stack fails the accuracy requirement. Combos that place the
       same diodes the same way round (:meth:`Combo.signature`) are evaluated once.
    3. *Refinement* of the split resistance of the best :data:`REFINE_COMBOS`
       split combos (:func:`refine`).

    The candidate cap may stop any step; what was evaluated until then stands.

    References
    ----------
    A. H. Land and A. G. Doig, "An automatic method of solving discrete
    programming problems", Econometrica 28(3), 497-520, 1960 (branch and bound).
    """
    with Ahead(ahead_task(ctx), parallel=parallel) as ahead:
        bb = _BranchAndBound(ctx, ahead)
        try:
            bb.bound_sites()
            bb.branch()
        except _Stop:
            pass
        else:
            ahead.close()  # the refinements run here
            try:
                bb.refine_splits()
            except _Stop:
                pass
    return list(bb.points.values()), bb.info, bb.evaluated
