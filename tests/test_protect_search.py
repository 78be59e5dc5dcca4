"""Tests of planner.protect.search: the refinement of a split resistance as batched grids.

The batched refinement (:func:`planner.protect.search.refine`) is checked against
an independent answer on the same objective: the sequential refinement by scipy's
Brent root finder (``brentq``) at the feasibility edge, the bounded Brent minimiser
(``minimize_scalar(method='bounded')``) inside the feasible set, both stopping at
1.5 % of r and after eight evaluations (R. P. Brent, *Algorithms for Minimization
without Derivatives*, Prentice-Hall, 1973, ch. 4 and 5), each evaluation one row. The
edges come from a small voltmeter written here, the interior minimum from the service
multimeter example.

The combos of one family (alike but for their diodes' models) are evaluated as one batch
ahead of their turn (:class:`planner.protect.search.Batches`); the reference is the same
search with every combo evaluated alone, in its turn.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq, minimize_scalar

from planner.design import build
from planner.project import load, loads
from planner.protect import search
from planner.protect.candidates import Combo, Stack, sites
from planner.protect.context import SearchContext
from planner.protect.evaluate import feasible, run, slack
from planner.protect.ordering import lex_best, lex_compare, lex_score, ranked

from conftest import PROJECTS, SCHOOL

BRENT_XTOL_REL = 0.015  # the sequential refinement's tolerance, as a fraction of r
BRENT_MAXITER = 8  # and its most iterations per refinement


@pytest.fixture(scope="module")
def grid_points():
    """The school voltmeter searched through steps 1 and 2 (bounds, branching): its split combos on their grids."""
    ctx = SearchContext(build(loads(SCHOOL)), 0.25, None, 100000, None)
    bb = search._BranchAndBound(ctx)
    bb.bound_sites()
    bb.branch()
    splits = ranked([p for p in bb.points.values() if p.combo.site.kind == "split" and p.feasible])
    assert splits
    return ctx, bb, splits


def _brent(ctx, topo, r, m):
    """The sequential refinement by scipy's Brent methods on the same objective, one row per evaluation.

    Returns (kind, best multiples): the edge by brentq on the constraint use minus one
    (stepped back by the tolerance until feasible), the interior minimum by the bounded
    minimiser on the leximax scalar (penalised when infeasible); then, over the grid and
    every point evaluated, the feasible one that protects best (leximax, scalar, least r).
    """
    memo = dict(topo.memo)  # the grid's rows; this refinement's own evaluations stay here

    def at(x):
        x = float(x)
        if x not in memo:
            memo[x] = run(ctx, topo, np.array([x]), count=None)
        return memo[x]

    feas = feasible(ctx, m)
    pw = m.position_worst()
    score = np.array([lex_score(v) for v in pw])
    i = min(lex_best([int(k) for k in np.nonzero(feas)[0]], lambda k: pw[k]), key=lambda k: (score[k], k))
    xtol = BRENT_XTOL_REL * float(r[i])
    kind = None
    falling = i == 0 or score[i] <= score[i - 1]
    if i + 1 < len(r) and not feas[i + 1] and falling and np.isfinite(slack(ctx, m.row(i + 1))[0]):
        kind = "edge"
        a, b = float(r[i]), float(r[i + 1])
        edge = brentq(lambda x: float(slack(ctx, at(x))[0]), a, b, xtol=xtol, maxiter=BRENT_MAXITER, disp=False)
        while edge > a and not feasible(ctx, at(edge))[0]:
            edge = max(a, edge - xtol)
    elif (0 < i < len(r) - 1 or (i == 0 and len(r) > 1)) and search._worth_refining(r, score, i):
        kind = "interior"

        def objective(x):
            mx = at(x)
            s = float(slack(ctx, mx)[0])
            phi = lex_score(mx.position_worst()[0])
            return phi if s <= 0 else phi * (2.0 + s)

        minimize_scalar(objective, bounds=(float(r[max(i - 1, 0)]), float(r[i + 1])), method="bounded",
                        options={"xatol": xtol, "maxiter": BRENT_MAXITER})
    ok = [x for x in sorted(memo) if feasible(ctx, memo[x])[0]]
    x = min(lex_best(ok, lambda x: memo[x].position_worst()[0]),
            key=lambda x: (lex_score(memo[x].position_worst()[0]), x))
    return kind, memo[x].position_worst()[0]


def _as_good_as_brent(ctx, topo, combo, r, m, calls) -> str | None:
    """Refine a combo by the batches and by Brent; check the batched point; the bracket's kind (None: none).

    The combo's memo is left as it was (the grid's rows).
    """
    kind, old = _brent(ctx, topo, r, m)
    if kind is None:
        return None
    grid = dict(topo.memo)
    calls.clear()
    n0 = ctx.evaluated
    _, lo, hi = search._bracket(ctx, r, m)
    want = len(search.bracket_grid(lo, hi)) + (search.REFINE_EDGE_ROWS if kind == "edge" else 0)
    try:
        q = search.refine(ctx, topo, combo, r, m)
        assert q is not None and q.feasible
        # leximax over the positions: never worse than Brent's point beyond the search's own tie (2 %)
        assert lex_compare(q.multiples, old) <= 0
        # the scalar: the batch's last feasible row may lie up to one second-batch step
        # (1.5 % / 8 of r, about 0.19 %) below Brent's edge, and an interior row up to half a
        # step (0.75 %) beside Brent's minimum, where the scalar is flat to first order; the
        # score's relative slope at these points is well below 0.5, so 1e-3 bounds what a step costs
        assert q.score <= lex_score(old) * (1.0 + 1e-3)
        # one batch for an interior minimum, two at an edge; no more rows than the bracket at 1.5 %
        # steps and the edge's second batch
        assert len(calls) <= (2 if kind == "edge" else 1)
        assert ctx.evaluated - n0 <= want
        assert ctx.evaluated - n0 == sum(calls)
        if kind == "edge":
            # the edge located: the last feasible row below its first infeasible one by one fine step
            xs = sorted(topo.memo)
            last = max(k for k, x in enumerate(xs[:-1]) if feasible(ctx, topo.memo[x])[0]
                       and x < float(r[-1]) and not feasible(ctx, topo.memo[xs[k + 1]])[0])
            step = math.log(xs[last + 1] / xs[last])
            assert step <= math.log1p(search.REFINE_XTOL_REL) / (search.REFINE_EDGE_ROWS + 1) * (1 + 1e-9)
    finally:
        topo.memo.clear()
        topo.memo.update(grid)
    return kind


@pytest.fixture
def calls(monkeypatch):
    """The rows of every solver call the search makes, in order."""
    seen = []
    monkeypatch.setattr(search, "run", lambda *a, **k: seen.append(len(a[2])) or run(*a, **k))
    return seen


def test_batched_refinement_at_an_edge_is_at_least_as_good_as_brent(grid_points, calls):
    """Every refined split combo of the school voltmeter (all at the feasibility edge) against Brent's root."""
    ctx, bb, splits = grid_points
    kinds = []
    for p in splits:
        topo, r, m = bb.evaluated[p.combo.key()]
        kinds.append(_as_good_as_brent(ctx, topo, p.combo, r, m, calls))
    assert kinds.count("edge") >= 3


def test_batched_refinement_inside_is_at_least_as_good_as_brent(calls):
    """An interior minimum (the service multimeter's bridge-diode pair at its chain tap) against Brent's minimiser."""
    ctx = SearchContext(build(load(PROJECTS / "service_multimeter.yaml")), 0.25, None, 100000, None)
    site = next(s for s in sites(ctx) if s.kind == "split" and s.pair is None)
    combo = Combo(site, Stack("si_bridge", 1), Stack("si_bridge", 1))
    topo, r, m = search.evaluate_combo(ctx, combo)
    assert _as_good_as_brent(ctx, topo, combo, r, m, calls) == "interior"


def test_cap_thins_the_batch_and_marks_the_search_truncated(grid_points):
    """With room for fewer rows than the batch, the rows that fit span the bracket; the cap holds."""
    ctx, bb, splits = grid_points
    p = next(p for p in splits if search._bracket(ctx, *bb.evaluated[p.combo.key()][1:]) is not None)
    topo, r, m = bb.evaluated[p.combo.key()]
    grid = dict(topo.memo)
    saved = ctx.max_candidates, ctx.evaluated, ctx.truncated
    try:
        ctx.max_candidates = ctx.evaluated + 5
        q = search.refine(ctx, topo, p.combo, r, m)
        assert ctx.evaluated == ctx.max_candidates  # the five rows that fit, no more
        assert ctx.truncated is True
        new = sorted(set(topo.memo) - set(grid))
        assert len(new) == 5
        # spread over the bracket: the first and last rows of the full batch are among them
        lo, hi = min(new), max(new)
        assert hi / lo > (1 + search.REFINE_XTOL_REL) ** 10
        assert q is not None and q.feasible  # the best feasible row so far stands
    finally:
        ctx.max_candidates, ctx.evaluated, ctx.truncated = saved
        topo.memo.clear()
        topo.memo.update(grid)


def test_bracket_grid_steps_finer_than_e96():
    """Geometric points strictly inside the bracket, neighbours at most 1.5 % apart (E96 steps: 10^(1/96) - 1,
    about 2.4 %, IEC 60063)."""
    lo, hi = 1000.0, 1357.0
    xs = search.bracket_grid(lo, hi)
    pts = np.concatenate([[lo], xs, [hi]])
    ratios = pts[1:] / pts[:-1]
    assert np.all(ratios <= 1 + search.REFINE_XTOL_REL)
    assert np.all(ratios > 1)
    np.testing.assert_allclose(ratios, ratios[0], rtol=1e-12)  # geometric: one ratio, to round-off
    assert ratios[0] < 10 ** (1 / 96)
    # no more rows than that step needs: one fewer would step beyond 1.5 %
    assert (hi / lo) ** (1 / len(xs)) > 1 + search.REFINE_XTOL_REL


def _search(spec, monkeypatch, family_max, parallel=False):
    monkeypatch.setattr(search, "FAMILY_MAX", family_max)
    ctx = SearchContext(build(spec), 0.25, None, 100000, None)
    points, info, _ = search.branch_and_bound(ctx, parallel=parallel)
    return ctx, {p.combo.key(): p for p in points}, info


@pytest.mark.parametrize("parallel", [False, True])
def test_family_batches_search_as_each_combo_alone(voltmeter_spec, monkeypatch, parallel):
    from test_protect_family import with_power_diode

    spec = with_power_diode(voltmeter_spec)
    batches = []
    run_family = search.run_family

    def counted(ctx, combos, topos, grids, **kw):
        batches.append(len(combos))
        return run_family(ctx, combos, topos, grids, **kw)

    monkeypatch.setattr(search, "run_family", counted)
    default = search.FAMILY_MAX
    ctx0, alone, info0 = _search(spec, monkeypatch, 1)  # a family of one: every combo in its own call
    assert not batches
    ctx1, batched, info1 = _search(spec, monkeypatch, default, parallel)
    assert parallel or batches  # (the worker's batches are run in its own process)
    # the same combos visited and pruned, the same rows counted, the same points chosen
    assert list(batched) == list(alone)
    assert (ctx1.evaluated, ctx1.pruned) == (ctx0.evaluated, ctx0.pruned)
    assert info1["pruned_sites"] == info0["pruned_sites"]
    for key, p in alone.items():
        q = batched[key]
        assert (q.r, q.feasible, q.stage) == (p.r, p.feasible, p.stage), key
        # each row solved to the solver's tolerance as in its own call: 1e-12 relative
        np.testing.assert_allclose(q.multiples, p.multiples, rtol=1e-12)
    assert len({p.combo.forward.model for p in alone.values() if p.combo.forward}) == 2


def test_first_batches_of_a_family_refine_as_each_alone(voltmeter_spec, monkeypatch):
    # the refinements' first batches solved together for the combos of one family give the refined
    # points, the counts and the rows of each refinement run alone in its turn
    from test_protect_family import with_power_diode

    spec = with_power_diode(voltmeter_spec)
    batched = []
    run_family = search.run_family
    first_batches = search._BranchAndBound.first_batches

    def counted(self, combos):
        def family(ctx, cs, topos, grids, **kw):
            batched.append(len(cs))
            return run_family(ctx, cs, topos, grids, **kw)

        monkeypatch.setattr(search, "run_family", family)
        try:
            return first_batches(self, combos)
        finally:
            monkeypatch.setattr(search, "run_family", run_family)

    def searched():
        ctx = SearchContext(build(spec), 0.25, None, 100000, None)
        points, _, evaluated = search.branch_and_bound(ctx)
        return ctx, {p.combo.key(): p for p in points}, evaluated

    monkeypatch.setattr(search._BranchAndBound, "first_batches", lambda self, combos: None)
    ctx0, alone, ev0 = searched()
    monkeypatch.setattr(search._BranchAndBound, "first_batches", counted)
    ctx1, together, ev1 = searched()
    assert batched and max(batched) >= 2  # a family's refinements did go together
    assert ctx1.evaluated == ctx0.evaluated
    assert list(together) == list(alone)
    for key, p in alone.items():
        q = together[key]
        assert (q.r, q.stage, q.feasible) == (p.r, p.stage, p.feasible), key
        np.testing.assert_allclose(q.multiples, p.multiples, rtol=1e-12)  # the solver's tolerance
        assert sorted(ev1[key][0].memo) == sorted(ev0[key][0].memo)  # the same rows evaluated
    assert any(p.stage == "refined" for p in alone.values())
