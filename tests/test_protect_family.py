"""Tests of planner.protect.family: combos alike but for their stacks' models and lengths as one batch.

:func:`run_family` solves a family's combos as the rows of one batch on one network, each
stack one diode whose rows carry the member's model and junctions in series (a stack of N
identical junctions obeys the law of one junction of N times its n V_t, breakdown voltage and
series resistance: the solver's own reduction of a stack, planner.solve.chains). The
reference is each combo's own :func:`planner.protect.evaluate.run` on its own network.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from planner.design import build
from planner.project import load
from planner.protect import Combo, SearchContext, Stack
from planner.protect.candidates import sites
from planner.protect.evaluate import feasible, run, topology
from planner.protect.family import family_template, run_family
from planner.protect.search import split_grid

from conftest import PROJECTS


def with_power_diode(spec):
    """The spec with a second, larger diode model beside ``si_small`` (invented values, common practice)."""
    d = spec.parts.diodes["si_small"]
    big = dataclasses.replace(d, name="si_power", i_s_a=30e-9, n=1.8, r_s_ohm=0.05, max_current_a=1.0,
                              surge_current_a=30.0, max_power_w=1.0)
    return dataclasses.replace(spec, parts=dataclasses.replace(spec.parts, diodes={**spec.parts.diodes,
                                                                                   "si_power": big}))


# the pocket voltmeter with a second diode model (DC ranges), and the service multimeter (AC ranges:
# a rectifier's readings are cycle means, solved member by member)
@pytest.mark.parametrize("which", ["voltmeter", "service"])
def test_family_rows_are_each_members_own_run(voltmeter_spec, which):
    spec = with_power_diode(voltmeter_spec) if which == "voltmeter" else load(PROJECTS / "service_multimeter.yaml")
    ctx = SearchContext(build(spec), 0.25, None, 100000, None)
    models = ctx.models
    assert len(models) == 2
    assert which == "voltmeter" or any(p.kind.waveform != "dc" for p in ctx.positions)
    checked = 0
    for site in sites(ctx)[:4 if which == "voltmeter" else 3]:
        # one family: every model each way, the forward stack one or two junctions long
        counts = (1, 2) if which == "voltmeter" else (1,)
        combos = [Combo(site, Stack(a, k), Stack(b, 1)) for k in counts for a in models for b in models]
        grids = [split_grid(ctx, site) if site.kind == "split" else None for _ in combos]
        topos = [topology(ctx, c) for c in combos]
        got = run_family(ctx, combos, topos, grids)
        assert got is not None
        for c, t, g, m in zip(combos, topos, grids, got):
            alone = run(ctx, topology(ctx, c), g, count=None)
            # a later run of the member's own network (a refinement) takes the positions the batch kept
            # for it: its own figures, its own diodes named
            again = run(ctx, t, g, count=None)
            np.testing.assert_allclose(again.worst, alone.worst, rtol=1e-12)  # as below
            assert again.stress_case == alone.stress_case
            # each row iterated to the solver's tolerance as in its own call (a stack as one junction
            # of N times its n V_t, the solver's own reduction of a stack): 1e-12 relative
            for name in ("forward", "reverse", "max_input_forward", "max_input_reverse", "stress", "power_w"):
                np.testing.assert_allclose(getattr(m, name), getattr(alone, name), rtol=1e-12, err_msg=name)
            for name in ("error_pct", "total_pct", "pos_forward", "pos_reverse"):
                for k, v in getattr(alone, name).items():
                    # errors in % of full scale: 1e-12 % absolute beside 1e-12 relative
                    np.testing.assert_allclose(getattr(m, name)[k], v, rtol=1e-12, atol=1e-12)
            np.testing.assert_array_equal(feasible(ctx, m), feasible(ctx, alone))
            # the diode a case names is the combo's own, the one its own evaluation names (a stack's first)
            assert m.stress_case == alone.stress_case
            checked += 1
        # the members are different circuits: their multiples are not all one
        assert len({m.position_worst().tobytes() for m in got}) > 1
    assert checked >= (16 if which == "voltmeter" else 12)


def test_template_is_one_diode_a_stack(voltmeter_spec):
    ctx = SearchContext(build(with_power_diode(voltmeter_spec)), 0.25, None, 100000, None)
    site = sites(ctx)[1]
    t = family_template(Combo(site, Stack("si_power", 3), Stack("si_small", 2)))
    assert (t.forward.count, t.reverse.count) == (1, 1)
    assert (t.forward.model, t.reverse.model) == ("si_power", "si_small")
    assert len(topology(ctx, t).clamp) == 2
