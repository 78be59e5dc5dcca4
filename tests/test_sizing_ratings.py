"""Tests of planner.sizing.ratings: the linear estimate's compiled cases, kept per network.

:class:`LinearNetwork` compiles each (shorted nodes, position) case once and solves it again
for every input value. The reference is the uncached solve: each rating case on a fresh
network, one case per instance. A cache that handed back another case's circuit (another
position, other nodes shorted) would change the voltages.
"""

from __future__ import annotations

import numpy as np

from planner.project import load
from planner.sizing import SECTIONS, lay_out, size
from planner.sizing.ratings import LinearNetwork, impulse_cases, rating_cases

from test_sizing_protection import FLAGSHIP


def _flagship_cases():
    """The sized flagship, its network and every rating and impulse case as (position, value, shorted)."""
    spec = load(FLAGSHIP)
    layout = lay_out(spec, SECTIONS)
    net = size(spec).network
    cases = [(pos, value, shorted) for _, pos, value, shorted, _ in rating_cases(spec, layout)]
    cases += [(pos, value, shorted) for _, pos, value, shorted in impulse_cases(spec, layout)]
    return spec, net, cases


def test_cached_cases_solve_as_fresh_networks():
    spec, net, cases = _flagship_cases()
    shared = LinearNetwork(spec, net)
    assert len({(p.name, s) for p, _, s in cases}) > 10  # several positions and shorted nodes share one instance
    assert any(s for _, _, s in cases)
    for pos, value, shorted in cases + cases[::-1]:  # each case twice, in both orders
        got = shared.solve(pos, value, shorted)
        fresh = LinearNetwork(spec, net)
        want = fresh.solve(pos, value, shorted)
        assert (got is None) == (want is None)
        if want is not None:
            assert got == want  # the same circuit solved: bit for bit
            assert shared.last_input_v == fresh.last_input_v


def test_full_scale_voltage_across_the_movement():
    """At full scale on a voltage position the movement carries its full-scale current (Ohm's law:
    V = I_fs R_m, within the sizer's allowed share of the class; the linear estimate leaves the
    diodes out)."""
    spec = load(FLAGSHIP)
    layout = lay_out(spec, SECTIONS)
    net = size(spec).network
    lin = LinearNetwork(spec, net)
    m = spec.movement
    allowed = spec.analysis.allowed_share * m.class_index / 100.0
    for _, pos, value, shorted, fs in rating_cases(spec, layout):
        if fs and pos.measures == "voltage":
            dv = lin.solve(pos, value, shorted)
            # tolerance: the allowed share of the class (the values are E96 parts), relative
            np.testing.assert_allclose(abs(dv["M1"]), m.i_fs_a * m.r_coil_ohm, rtol=allowed)
            np.testing.assert_allclose(lin.last_input_v, value, rtol=1e-12)  # an ideal source: the input itself


def test_cases_solved_ahead_as_one_by_one():
    """:meth:`LinearNetwork.solve_ahead` solves the values of one circuit as the columns of one stimulus;
    the answers are those of each value solved alone (the reference: a fresh instance, one solve a case)."""
    spec, net, cases = _flagship_cases()
    ahead = LinearNetwork(spec, net)
    ahead.solve_ahead(cases)
    assert len({(p.name, s) for p, _, s in cases}) < len(cases)  # circuits solved at several values
    for pos, value, shorted in cases:
        got = ahead.solve(pos, value, shorted)
        fresh = LinearNetwork(spec, net)
        want = fresh.solve(pos, value, shorted)
        assert (got is None) == (want is None)
        if want is not None:
            assert got.keys() == want.keys()
            # tolerance: the same equations, a column of a multi-column solve against a one-column one
            np.testing.assert_allclose([got[k] for k in want], [want[k] for k in want], rtol=1e-12, atol=1e-15)
            np.testing.assert_allclose(ahead.last_input_v, fresh.last_input_v, rtol=1e-12, atol=1e-15)


def test_stresses_shared_by_networks_that_differ_in_their_diodes():
    """Two clamp requests that differ only in their diode models and counts size the same linear network,
    so they share one Stress; each caller gets its own copy, equal to the one computed afresh."""
    from dataclasses import replace

    from planner.model import ClampRequest
    from planner.sizing.ratings import _STRESSES, _stresses, stresses
    from planner.sizing.sizer import size as size_fresh

    spec = load(FLAGSHIP)
    models = list(spec.parts.diodes)
    specs = [replace(spec, clamps=(ClampRequest(at="movement", forward=m, reverse=m, count=1),
                                   ClampRequest(at=4120.0, forward=m, reverse=None, count=n)))
             for m, n in ((models[0], 1), (models[1], 3))]
    nets = [size_fresh(s).network for s in specs]
    assert nets[0] != nets[1]  # other diodes
    layout = lay_out(specs[0], SECTIONS)
    rows = [[(e.name, e.value_ohm, e.nodes[0], e.nodes[1])] for e in nets[0].elements if e.kind == "resistor"]
    _STRESSES.clear()
    first = stresses(specs[0], layout, nets[0], rows)
    again = stresses(specs[1], lay_out(specs[1], SECTIONS), nets[1], rows)
    assert len(_STRESSES) == 1
    assert again == first and again is not first
    again.v.clear()
    assert stresses(specs[0], layout, nets[0], rows) == _stresses(specs[0], layout, nets[0], rows, True)
