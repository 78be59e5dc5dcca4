"""Tests of planner.protect.realise: a realised placement's readings without clamps solved only where needed.

A placement made of standard values by the sizer is judged for feasibility alone
(:func:`planner.protect.evaluate.feasible_alone`), which stops at the first position that
fails; the readings without clamps (the reference of the clamp error) are solved only for
the positions it judged to the end. The reference is a fresh context's full evaluation of
the same network: its readings without clamps and its clamp errors must be the same.

A lower tap is tried only when the sized placement fails on its clamps' own account (the
readings, or one of its own diodes): the placement's diodes are checked against the
network the sizer makes without any clamp (what is left are the protection parts).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import replace

import numpy as np

from planner.design import build
from planner.model import Diode
from planner.project import load, loads
from planner.protect import Combo, SearchContext, Stack
from planner.protect.candidates import sites
from planner.protect.evaluate import REPORT_PHASE_POINTS, Point, bare_readings, run, topology_of
from planner.protect.realise import (REALISE_TRIES, placed_diodes, realise_sized, sized_clamps, sized_network,
                                     sized_watch)
from planner.sizing import size

from conftest import SCHOOL
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


def _realise_counting(ctx, combo, r):
    """realise_sized of a combo at r, with the tries it made (each counts one evaluation)."""
    before = ctx.evaluated
    q = realise_sized(ctx, Point(combo, r, None, True))
    return q, ctx.evaluated - before


def test_placed_diodes_are_the_placements_own():
    # reference: the network sized without any clamp holds the protection parts' diodes; the realised
    # placement's diodes are the others (same anode, cathode and model counted out)
    spec = load(FLAGSHIP)
    ctx = SearchContext(build(spec))
    site = next(s for s in sites(ctx) if s.kind == "split" and s.pair is not None)
    combo = Combo(site, Stack("si_lowleak", 2), Stack("si_6a", 1))
    net = sized_network(ctx, sized_clamps(ctx, combo, 1000.0))
    unclamped = Counter((e.anode, e.cathode, e.model) for e in size(replace(spec, clamps=())).network.elements
                        if isinstance(e, Diode))
    diodes = [e for e in net.elements if isinstance(e, Diode)]
    protection = set()
    for e in diodes:
        key = (e.anode, e.cathode, e.model)
        if unclamped[key] > 0:
            unclamped[key] -= 1
            protection.add(e.name)
    assert protection  # the flagship's ring crowbar
    assert placed_diodes(net, combo) == {e.name for e in diodes} - protection
    assert len(placed_diodes(net, combo)) == 2 + 2 + 1  # the movement pair, the forward and reverse stacks


def test_a_lower_tap_only_for_the_clamps_own_failure():
    # the flagship's realised placements fail on a ring crowbar diode's rating (a protection part): one try
    design = build(load(FLAGSHIP))
    ctx = SearchContext(design)
    site = next(s for s in sites(ctx) if s.kind == "split" and s.pair is not None)
    combo = Combo(site, Stack("si_lowleak", 1), Stack("si_6a", 1))
    q, tries = _realise_counting(ctx, combo, 0.2 * site.r_ohm)
    assert not q.feasible and tries == 1
    assert ctx.failed_part is not None and ctx.failed_part not in placed_diodes(q.net, combo)
    # the full evaluation of that network agrees: that diode is beyond its rating, and the readings are within
    # the share (the failure is the diode's alone)
    full = run(SearchContext(design), topology_of(ctx, q.net, sized_watch(q.net)))
    assert full.stress[0] > 1.0 and full.stress_case[0][2] in topology_of(ctx, q.net).clamp
    # a placement that fails on accuracy (a share so tight that no tap meets it) tries every lower tap
    tight = SearchContext(build(loads(SCHOOL)), 0.001)
    split = next(s for s in sites(tight) if s.kind == "split")
    q, tries = _realise_counting(tight, Combo(split, Stack("si_small", 1), Stack("si_small", 1)), 0.5 * split.r_ohm)
    assert not q.feasible and tries == REALISE_TRIES and tight.failed_part is None
