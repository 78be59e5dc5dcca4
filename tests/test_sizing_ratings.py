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


def test_cached_cases_solve_as_fresh_networks():
    spec = load(FLAGSHIP)
    layout = lay_out(spec, SECTIONS)
    net = size(spec).network
    cases = [(pos, value, shorted) for _, pos, value, shorted, _ in rating_cases(spec, layout)]
    cases += [(pos, value, shorted) for _, pos, value, shorted in impulse_cases(spec, layout)]
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
