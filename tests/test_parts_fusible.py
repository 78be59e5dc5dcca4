"""Fusible resistors (planner.parts.fusible): time to open from the maker's points, and how a case is judged.

Hand computations: log-log interpolation of the maker's fusing points (common practice
for fusing curves, as for fuses' time-current characteristics, IEC 60127-1), constant
energy beyond the last point; Ohm's law for the power in the part.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from planner import model as m
from planner.parts.fusible import time_to_open_s
from planner.project import loads
from planner.stress import apply_stimulus
from stress_circuits import movement, res

FUSING = ((2.5, 60.0), (25.0, 0.05))  # 10 x and 100 x a 0.25 W rating (invented maker's points)


def test_time_to_open_at_two_powers_by_hand():
    # log t = log 60 + (log 0.05 - log 60) (log P - log 2.5) / (log 25 - log 2.5)
    # P = 7.9057 W (= 2.5 sqrt 10): half way in log P, so t = sqrt(60 * 0.05) = 1.7321 s
    np.testing.assert_allclose(time_to_open_s(FUSING, 2.5 * math.sqrt(10.0)), math.sqrt(3.0), rtol=1e-12)
    np.testing.assert_allclose(time_to_open_s(FUSING, 2.5 * math.sqrt(10.0)), 1.732051, rtol=1e-6)  # by hand
    # P = 100 W, beyond the last point: the energy of the last point, 25 W x 50 ms = 1.25 J, so 12.5 ms
    np.testing.assert_allclose(time_to_open_s(FUSING, 100.0), 0.0125, rtol=1e-12)
    assert time_to_open_s(FUSING, 1.0) == math.inf  # below the lowest point it does not open


def fusible_voltmeter(breaking=1000.0):
    """plus -> RF (fusible, 2 kohm) -> R1 (8 kohm) -> movement (50 uA, 2 kohm): a 0.6 V range."""
    rf = m.Resistor("RF", "plus", "a", 2e3, tolerance=0.0, tempco_per_k=0.0, power_w=0.25, max_voltage_v=1000.0,
                    fusible=True, fusing=FUSING, breaking_voltage_v=breaking)
    els = (rf, res("R1", "a", "m", 8e3, power=0.25, vmax=1e4), m.MovementElement("M1", "m", "com"))
    pos = (m.Position("0.6 V", "voltage", 0.6, ("plus", "com")),)
    return m.Spec("fusible", movement(), network=m.NetworkSpec(els, pos))


def test_fusible_input_resistor_opens_and_the_others_are_judged_over_the_time():
    out = apply_stimulus(fusible_voltmeter(), "0.6 V", volts=1000.0)
    i = 1000.0 / 12e3  # Ohm's law: 83 mA, 13.9 W in RF
    p = i * i * 2e3
    (f,) = [x for x in out["fuses"] if not x.get("after")]
    assert f["opens"]
    np.testing.assert_allclose(f["power_w"], p, rtol=1e-12)
    np.testing.assert_allclose(f["pre_arcing_time_s"], time_to_open_s(FUSING, p), rtol=1e-12)
    # R1 takes I^2 R1 over that time, against its short-time rating (IEC 60115-1, from memory)
    e = [x for x in out["stresses"] if x["part"] == "R1" and x["quantity"].startswith("pulse energy")]
    assert f["pre_arcing_time_s"] < 0.5  # about 0.30 s: the pulse the others take
    np.testing.assert_allclose(e[0]["value"], i * i * 8e3 * f["pre_arcing_time_s"], rtol=1e-12)
    # once open, the whole 1000 V stands across it: just within its 1000 V breaking voltage
    v = [x for x in out["stresses"] if x["quantity"].startswith("voltage across the open fusible")][0]
    np.testing.assert_allclose(v["value"], 1000.0, rtol=1e-5)  # 1 Gohm stand-in against 12 kohm
    assert not v["exceeded"]
    assert not [x for x in out["stresses"] if x["part"] == "RF" and x["limit"] == "rating" and x["exceeded"]]


def test_opening_above_its_breaking_voltage_is_a_hazard():
    out = apply_stimulus(fusible_voltmeter(breaking=200.0), "0.6 V", volts=1000.0)
    assert out["verdict"] == "hazard"
    assert out["deciding"]["quantity"].startswith("voltage across the open fusible")


PROJECT = """
title: fusible test
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
network:
  elements:
    - {name: RF, kind: resistor, between: [plus, a], value: 2 kohm, fusible: true,
       fusing: [[2.5 W, 60 s], [25 W, 50 ms]], breaking_voltage: 1 kV}
    - {name: R1, kind: resistor, between: [a, m], value: 8 kohm}
    - {name: M1, kind: movement, between: [m, com]}
  positions:
    - {name: "0.6 V", measures: voltage, full_scale: 0.6 V, input: [plus, com]}
"""


def test_project_keys_load_and_write_back():
    spec = loads(PROJECT)
    rf = spec.network.element("RF")
    assert rf.fusible and rf.fusing == FUSING and rf.breaking_voltage_v == 1000.0
    assert "fusible: true, fusing: [[2.5 W, 60 s], [25 W, 50 ms]], breaking_voltage: 1 kV" in rf.yaml()
    with pytest.raises(Exception) as e:
        loads(PROJECT.replace("fusible: true,", ""))
    assert "fusible: true" in str(e.value)
