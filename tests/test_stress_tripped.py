"""The tripped state of a constant-power PTC (planner.stress.tripped), over a sweep of stimuli.

Hand computation: a tripped PTC holding a constant power P behind a resistance R from
a DC source V_s sits where (V_s - V) / R = P / V, i.e. V^2 - V_s V + P R = 0; the
stable state is the larger root V = (V_s + sqrt(V_s^2 - 4 P R)) / 2 (a PTC below it
heats further and its resistance rises), and the current is I = P / V (polymer and
ceramic PTC data sheets: nearly constant tripped power, from memory; the quadratic
formula). These are the planner's side of the benchmark's deck P
(tests/benchmarks/parts.py) at a few of its points.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.stimulus import Stimulus
from planner.stress.assess import open_fuse_design
from planner.stress.tripped import settle, settle_all
from stress_circuits import movement, res

P_W = 0.5
R_M = 2e3
PTC = m.PtcModel("ptc_p", hold_current_a=0.010, trip_current_a=0.020, r_cold_ohm=100.0, max_voltage_v=1500.0,
                 max_current_a=1.0, tripped_power_w=P_W, time_to_trip=((0.2, 1.0),))


def tripped_voltmeter(r1_ohm):
    """plus -> P1 (tripped) -> R1 -> movement (50 uA, 2 kohm) -> com: the engine and its one state."""
    els = (m.Ptc("P1", "plus", "a", PTC.name), res("R1", "a", "m", r1_ohm, power=0.25, vmax=1e4),
           m.MovementElement("M1", "m", "com"))
    pos = (m.Position("0.6 V", "voltage", 50e-6 * (r1_ohm + R_M + PTC.r_cold_ohm), ("plus", "com")),)
    spec = m.Spec("ptc", movement(), m.Parts(ptcs={PTC.name: PTC}), network=m.NetworkSpec(els, pos))
    eng = Engine(open_fuse_design(build(spec), frozenset({"P1"})))
    return eng, eng.state("0.6 V")


def larger_root(v_s, r_rest):
    """V across the tripped PTC: the larger root of V^2 - V_s V + P R = 0 [V]."""
    return (v_s + np.sqrt(v_s * v_s - 4.0 * P_W * r_rest)) / 2.0


@pytest.mark.parametrize("r1", [10e3 * (1.0 - 0.0025), 10e3, 10e3 * (1.0 + 0.0025)])
def test_sweep_settles_on_the_larger_root(r1):
    # deck P's range: 200 V (V_s^2 = 4e4 against 4 P R = 2.4e4) up to 1000 V
    volts = np.array([200.0, 250.0, 400.0, 600.0, 1000.0])
    eng, st = tripped_voltmeter(r1)
    out = settle_all(eng, st, [Stimulus(f"{v:g} V", "voltage", float(v)) for v in volts])
    v_ptc = larger_root(volts, r1 + R_M)
    i_m = np.array([float(wf.movement_current_a[0]) for _, wf in out])
    # the iteration stops when ln R moves by less than 1e-9; I = V_s / (R + R_rest) then
    # carries at most about that relative error
    np.testing.assert_allclose(i_m, P_W / v_ptc, rtol=2e-9)
    for (e, wf), v in zip(out, v_ptc):
        # the settled resistance is V^2 / P, and the part dissipates P
        np.testing.assert_allclose(e.net.element("P1").value_ohm, v * v / P_W, rtol=4e-9)  # 2 x the current's
        np.testing.assert_allclose(float(wf.voltage_v["P1"][0] * wf.current_a["P1"][0]), P_W, rtol=2e-9)


def test_each_stimulus_ends_where_it_would_alone():
    # settle_all solves the stimuli together, each keeping its own iteration: the batch gives
    # each stimulus the answer of settle() on it alone (to round-off of the batched solve)
    volts = [200.0, 430.0, 1000.0]
    eng, st = tripped_voltmeter(10e3)
    stims = [Stimulus(f"{v:g} V", "voltage", v) for v in volts]
    together = [float(wf.movement_current_a[0]) for _, wf in settle_all(eng, st, stims)]
    alone = [float(settle(eng, st, s)[1].movement_current_a[0]) for s in stims]
    np.testing.assert_allclose(together, alone, rtol=1e-12)  # round-off only
    # and both against the hand computation (larger root)
    np.testing.assert_allclose(together, P_W / larger_root(np.array(volts), 12e3), rtol=2e-9)
