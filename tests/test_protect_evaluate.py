"""Tests of planner.protect.evaluate: feasibility judged position by position against the full evaluation.

:func:`feasible_alone` stops at the first position that fails and keeps the positions it
solved for a following :func:`run` of the same topology. The reference is the full
evaluation itself (:func:`run` on a fresh topology, then :func:`feasible`): the answer
must be the same for every candidate and every order of the positions, and the metrics
of a run that reuses the kept positions must be those of a fresh run, bit for bit. A
position's figures, solved in groups of stimuli, are checked against each stimulus solved
in a call of its own.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.design import build
from planner.protect import Combo, SearchContext, Site, Stack
from planner.protect.candidates import sites
from planner.protect.evaluate import REPORT_PHASE_POINTS, accuracy_ok, feasible, feasible_alone, run, topology


def _combos(ctx):
    """A few placements of every site: one diode each way, a longer forward stack, no reverse stack."""
    mdl = ctx.models[0]
    out = [Combo(Site("movement", "movement", ctx.movement.a), Stack(mdl, 1), Stack(mdl, 1))]
    for s in sites(ctx)[:3]:
        out += [Combo(s, Stack(mdl, 1), Stack(mdl, 1)), Combo(s, Stack(mdl, 3), Stack(mdl, 1)),
                Combo(s, Stack(mdl, 2), None)]
    return out


def _metrics_equal(a, b):
    for name in ("forward", "reverse", "max_input_forward", "max_input_reverse", "stress", "power_w"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name))  # same computation: bit for bit
    for name in ("error_pct", "total_pct", "pos_forward", "pos_reverse"):
        da, db = getattr(a, name), getattr(b, name)
        assert list(da) == list(db)
        for k in da:
            np.testing.assert_array_equal(da[k], db[k])
    assert a.forward_case == b.forward_case and a.reverse_case == b.reverse_case and a.stress_case == b.stress_case


# a share so loose that the clamp diodes' ratings decide, and one so tight that the accuracy does
@pytest.mark.parametrize("share", [1.0, 0.002])
def test_feasible_alone_is_the_full_answer_in_any_order(voltmeter_spec, share):
    ctx = SearchContext(build(voltmeter_spec), share, None, 2000, None)
    answers = []
    for combo in _combos(ctx):
        full = run(ctx, topology(ctx, combo), n_phase=REPORT_PHASE_POINTS)
        expected = bool(feasible(ctx, full)[0])
        names = [p.name for p in ctx.positions]
        for first in ((), tuple(reversed(names))):
            ctx.failed_at = []
            topo = topology(ctx, combo)
            ok, failing = feasible_alone(ctx, topo, n_phase=REPORT_PHASE_POINTS, first=first)
            assert ok == expected, combo.key()
            assert (failing is None) == ok or full.failed is not None
            # the positions it kept are those a fresh run solves
            _metrics_equal(run(ctx, topo, n_phase=REPORT_PHASE_POINTS), full)
        answers.append((expected, bool(accuracy_ok(ctx, full)[0])))
    # the check means something only when what it could get wrong occurs: feasible placements and
    # placements failed by their diodes' ratings alone (loose share), or by their accuracy (tight share)
    if share == 1.0:
        assert any(ok for ok, _ in answers) and any(acc and not ok for ok, acc in answers)
    else:
        assert any(not acc for _, acc in answers)


def test_feasible_alone_counts_one_evaluation(voltmeter_spec):
    ctx = SearchContext(build(voltmeter_spec), 0.25, None, 2000, None)
    combo = _combos(ctx)[0]
    e0, r0 = ctx.evaluated, ctx.reevaluated
    feasible_alone(ctx, topology(ctx, combo))
    feasible_alone(ctx, topology(ctx, combo), count=False)
    assert (ctx.evaluated, ctx.reevaluated) == (e0 + 1, r0 + 1)
    # a run after it is counted nowhere with count=None (the final pass counts the row once)
    topo = topology(ctx, combo)
    feasible_alone(ctx, topo, count=False)
    run(ctx, topo, count=None)
    assert (ctx.evaluated, ctx.reevaluated) == (e0 + 1, r0 + 2)


def test_position_figures_are_each_stimulus_solved_alone(voltmeter_spec):
    # run() solves a position's stimuli in groups (a sine behind a source impedance apart from the DC
    # sources, the sources without impedance side by side with the hot linearity points); the
    # reference solves each stimulus in a call of its own, as its samples alone
    ctx = SearchContext(build(voltmeter_spec), 0.25, None, 2000, None)
    for combo in _combos(ctx)[:4]:
        topo = topology(ctx, combo)
        m = run(ctx, topo, count=None)
        worst_power = 0.0
        for p in ctx.positions:
            fwd = rev = power = 0.0
            for s in ctx.stimuli[p.name]:
                op = topo.engine.operate(p.name, np.atleast_2d(s.samples(16)), kind=s.kind,
                                         r_source_ohm=s.r_source_ohm)
                mult = op.movement_multiple[0]
                fwd, rev = max(fwd, mult.max()), max(rev, (-mult).max())
                if not s.peak_only:
                    power = max(power, sum(abs(float(np.mean(op.element(n).current_a[0] * op.element(n).voltage_v[0])))
                                           for n in topo.watch))
            # the same operating points in other batches: 1e-12 relative
            np.testing.assert_allclose(m.pos_forward[p.name][0], fwd, rtol=1e-12)
            np.testing.assert_allclose(m.pos_reverse[p.name][0], rev, rtol=1e-12)
            worst_power = max(worst_power, power)
        # the clamp's power: the worst over the positions and stimuli, 1e-12 relative
        np.testing.assert_allclose(m.power_w[0], worst_power, rtol=1e-12)
        assert worst_power > 0.0
