"""PTC thermistors (planner.parts.ptc): time to trip, the tripped state, and how a case is judged.

Hand computations: the lumped heat balance C dT/dt = I^2 R - dT / R_th (lumped
capacitance method, Incropera and DeWitt, *Fundamentals of Heat and Mass Transfer*,
6th ed., 5.1) gives t = tau ln(I^2 / (I^2 - I_t^2)); a tripped PTC holding a constant
power P behind a resistance R from a source V_s sits at V^2 - V_s V + P R = 0, the
larger root (polymer and ceramic PTC data sheets: nearly constant tripped power, from
memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from planner import model as m
from planner.parts.ptc import PtcModel, thermal_trip_time_s, time_to_trip_s, tripped_resistance_ohm
from planner.project import loads
from planner.stress import apply_stimulus
from stress_circuits import movement, res

PTC = PtcModel("ptc_1k", hold_current_a=0.010, trip_current_a=0.020, r_cold_ohm=100.0, max_voltage_v=600.0,
               max_current_a=1.0, tripped_power_w=0.5, time_to_trip=((0.2, 1.0),))


def ptc_voltmeter(model=PTC, r_mult=10e3):
    """plus -> PTC -> R1 -> movement (50 uA, 2 kohm) -> com: one voltage range."""
    els = (m.Ptc("P1", "plus", "a", model.name), res("R1", "a", "m", r_mult, power=0.25, vmax=1e4),
           m.MovementElement("M1", "m", "com"))
    pos = (m.Position("10 V", "voltage", 50e-6 * (r_mult + 2e3 + model.r_cold_ohm), ("plus", "com")),)
    return m.Spec("ptc", movement(), m.Parts(ptcs={model.name: model}), network=m.NetworkSpec(els, pos))


def test_trip_time_from_one_point_at_two_currents():
    # one maker's point (200 mA, 1 s) fixes tau = 1 s / ln(0.2^2 / (0.2^2 - 0.02^2)); by hand:
    tau = 1.0 / math.log(0.04 / (0.04 - 0.0004))
    # 0.5 A: t = tau ln(0.25 / (0.25 - 0.0004)); 2 A: t = tau ln(4 / (4 - 0.0004))
    np.testing.assert_allclose(time_to_trip_s(PTC, 0.5), tau * math.log(0.25 / 0.2496), rtol=1e-12)  # round-off
    np.testing.assert_allclose(time_to_trip_s(PTC, 2.0), tau * math.log(4.0 / 3.9996), rtol=1e-12)
    # the same numbers written out: tau = 99.4992 s, t(0.5 A) = 0.159326 s, t(2 A) = 9.95041 ms
    np.testing.assert_allclose(tau, 99.49916, rtol=1e-6)  # 6 figures by hand
    np.testing.assert_allclose(time_to_trip_s(PTC, 0.5), 0.1593262, rtol=1e-6)
    np.testing.assert_allclose(time_to_trip_s(PTC, 2.0), 9.950414e-3, rtol=1e-6)
    assert time_to_trip_s(PTC, 0.015) == math.inf  # below the trip current: it does not trip


def test_trip_time_between_points_is_log_log():
    p = PtcModel("p", 0.1, 0.2, 1.0, 60.0, 10.0, tripped_power_w=1.0, time_to_trip=((0.4, 1.0), (4.0, 0.01)))
    # geometric mean of the currents -> geometric mean of the times (log-log straight line)
    np.testing.assert_allclose(time_to_trip_s(p, math.sqrt(1.6)), 0.1, rtol=1e-12)
    assert time_to_trip_s(PtcModel("p", 0.1, 0.2, 1.0, 60.0, 10.0, tripped_power_w=1.0), 1.0) is None


def test_adiabatic_limit_of_the_thermal_model():
    # I >> I_t: t -> tau I_t^2 / I^2 (heating with no time to lose heat)
    np.testing.assert_allclose(thermal_trip_time_s(1.0, 2.0, 1e3), 2.0 * 1e-6, rtol=1e-6)


def test_steady_tripped_state_holds_its_power():
    spec = ptc_voltmeter()
    vs, r_rest = 230.0, 10e3 + 2e3
    out = apply_stimulus(spec, "10 V", volts=vs)
    # cold: I = V_s / (R_c + R_rest) = 19.01 mA, below the 20 mA trip current: it does not trip
    assert not out["fuses"][0]["trips"]
    vs = 400.0
    out = apply_stimulus(spec, "10 V", volts=vs)
    (f,) = [x for x in out["fuses"] if not x.get("after")]
    i_cold = vs / (PTC.r_cold_ohm + r_rest)  # Ohm's law
    np.testing.assert_allclose(f["current_rms_a"], i_cold, rtol=1e-12)
    assert f["trips"] and f["resets"]
    np.testing.assert_allclose(f["pre_arcing_time_s"], time_to_trip_s(PTC, i_cold), rtol=1e-12)
    # tripped: V^2 - V_s V + P R_rest = 0, larger root; I = P / V
    v = (vs + math.sqrt(vs * vs - 4.0 * PTC.tripped_power_w * r_rest)) / 2.0
    i = PTC.tripped_power_w / v
    np.testing.assert_allclose(out["after_fuse_opens"]["movement_multiple"], i / 50e-6, rtol=1e-8)  # settle 1e-9
    volt = [x for x in out["stresses"] if x["quantity"].startswith("voltage across the tripped PTC")]
    np.testing.assert_allclose(volt[0]["value"], v, rtol=1e-8)
    assert volt[0]["rating"] == PTC.max_voltage_v and not volt[0]["exceeded"]


def test_tripped_resistance_and_overvoltage_is_a_hazard():
    p = PtcModel("ptc_r", 0.010, 0.020, 100.0, 300.0, 1.0, tripped_resistance_ohm=1e6, time_to_trip=((0.2, 1.0),))
    spec = ptc_voltmeter(p)
    vs = 400.0
    out = apply_stimulus(spec, "10 V", volts=vs)
    # tripped: a divider 1 Mohm / (1 Mohm + 12 kohm)
    v = vs * 1e6 / (1e6 + 12e3)
    volt = [x for x in out["stresses"] if x["quantity"].startswith("voltage across the tripped PTC")][0]
    np.testing.assert_allclose(volt["value"], v, rtol=1e-9)
    # two named hazards: the tripped PTC beyond its voltage rating, and R1 held at 10.9 W for the
    # 45 s the PTC takes to trip at 1.65 x its trip current (ignition rule, docs/safety.md)
    assert out["verdict"] == "hazard"
    assert {(h["part"], h["rule"]) for h in out["hazards"]} == {("P1", "voltage rating"), ("R1", "ignition")}
    assert tripped_resistance_ohm(p, 123.0) == 1e6


def test_current_beyond_the_interruptible_maximum_is_a_hazard():
    p = PtcModel("ptc_c", 0.010, 0.020, 100.0, 600.0, 0.030, tripped_power_w=0.5, time_to_trip=((0.2, 1.0),))
    out = apply_stimulus(ptc_voltmeter(p), "10 V", volts=500.0)
    cut = [x for x in out["stresses"] if x["quantity"].startswith("current to cut")][0]
    np.testing.assert_allclose(cut["value"], 500.0 / 12.1e3, rtol=1e-12)  # Ohm's law, cold
    assert cut["exceeded"] and out["verdict"] == "hazard"


PROJECT = """
title: PTC test
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
parts:
  ptcs:
    ptc_1k: {hold_current: 10 mA, trip_current: 20 mA, cold_resistance: 100 ohm, max_voltage: 600 V,
             max_current: 1 A, tripped_power: 0.5 W, time_to_trip: [[200 mA, 1 s]]}
network:
  elements:
    - {name: P1, kind: ptc, between: [plus, a], model: ptc_1k}
    - {name: R1, kind: resistor, between: [a, m], value: 10 kohm}
    - {name: M1, kind: movement, between: [m, com]}
  positions:
    - {name: "0.6 V", measures: voltage, full_scale: 605 mV, input: [plus, com]}
"""


def test_project_keys_load():
    spec = loads(PROJECT)
    assert spec.parts.ptcs["ptc_1k"] == PTC
    assert spec.network.element("P1").yaml() == "{name: P1, kind: ptc, between: [plus, a], model: ptc_1k}"


@pytest.mark.parametrize("bad, words", [
    ("tripped_power: 0.5 W", "exactly one of"),
    ("trip_current: 20 mA", "below the hold current"),
])
def test_project_errors(bad, words):
    text = PROJECT.replace("tripped_power: 0.5 W, ", "") if bad.startswith("tripped") else \
        PROJECT.replace("hold_current: 10 mA", "hold_current: 30 mA")
    with pytest.raises(Exception) as e:
        loads(text)
    assert words in str(e.value)
