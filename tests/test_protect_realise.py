"""Tests of planner.protect.realise: a realised placement's readings without clamps solved only where needed.

A placement made of standard values by the sizer is judged for feasibility alone
(:func:`planner.protect.evaluate.feasible_alone`), which stops at the first position that
fails; the readings without clamps (the reference of the clamp error) are solved only for
the positions it judged to the end. The reference is a fresh context's full evaluation of
the same network: its readings without clamps and its clamp errors must be the same.
"""

from __future__ import annotations

import numpy as np

from planner.design import build
from planner.project import load
from planner.protect import Combo, SearchContext, Stack
from planner.protect.candidates import sites
from planner.protect.evaluate import REPORT_PHASE_POINTS, Point, bare_readings, run, topology_of
from planner.protect.realise import realise_sized, sized_watch

from test_sizing_protection import FLAGSHIP


def test_readings_without_clamps_only_where_judged():
    design = build(load(FLAGSHIP))
    ctx = SearchContext(design)
    site = next(s for s in sites(ctx) if s.kind == "split" and s.pair is None)
    mdl = ctx.models[0]
    q = realise_sized(ctx, Point(Combo(site, Stack(mdl, 1), Stack(mdl, 1)), 0.25 * site.r_ohm, None, True))
    assert q is not None and q.net is not None
    judged = {name for _, some in ctx.bare_some.values() for name in some}
    assert len(judged) < len(ctx.positions)  # a failing placement: not every position's readings solved
    fresh_ctx = SearchContext(design)
    topo = topology_of(ctx, q.net, sized_watch(q.net))
    fresh = bare_readings(fresh_ctx, topology_of(fresh_ctx, q.net, sized_watch(q.net)))
    for _, some in ctx.bare_some.values():
        for name, got in some.items():
            # tolerance: the same solve; a circuit's first solve in the process may differ in its last bit
            np.testing.assert_allclose(got, fresh[name], rtol=1e-14, atol=0)
    # asked for in full, the readings are those of a fresh context, and a run's metrics too
    whole = bare_readings(ctx, topo)
    assert list(whole) == [p.name for p in ctx.positions]
    for name in whole:
        np.testing.assert_allclose(whole[name], fresh[name], rtol=1e-14, atol=0)  # tolerance: as above
    # a run on those readings gives the clamp errors of a fresh context's run (to the same last bits)
    got = run(ctx, topo, n_phase=REPORT_PHASE_POINTS, count=False)
    want = run(fresh_ctx, topology_of(fresh_ctx, q.net, sized_watch(q.net)), n_phase=REPORT_PHASE_POINTS, count=False)
    for name in want.error_pct:
        # tolerance: 1e-12 of full scale in % (the readings' last bits over a difference of readings)
        np.testing.assert_allclose(got.error_pct[name], want.error_pct[name], rtol=0, atol=1e-12)
