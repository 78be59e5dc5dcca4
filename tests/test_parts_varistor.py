"""Varistors as network elements (planner.parts.varistor): the engine against closed forms and ngspice.

Law: I = I_1 sgn(V) (|V| / V_1)^alpha, I_1 = 1 mA (L. M. Levinson and H. R. Philipp,
J. Appl. Phys. 46(3), 1975; T. K. Gupta, J. Am. Ceram. Soc. 73(7), 1990). The closed
form of a varistor fed from a resistor, V + I(V) R = V_s, is solved by
``scipy.optimize.brentq``; ngspice runs the same law as a behavioural current source
(tests/spice_flat.py) on the network the engine compiled.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.parts.varistor import IMPULSE_EQUIVALENT_S, VaristorModel
from planner.project import loads
from planner.stress import apply_stimulus
from stress_circuits import movement, res

MOV = VaristorModel("mov_470", v1_v=470.0, alpha=30.0, energy_j=10.0, max_continuous_v=300.0, peak_current_a=1200.0)
R1, R2, RM = 1e3, 98e3, 2e3


def law(v, v1=MOV.v1_v, alpha=MOV.alpha):
    return 1e-3 * math.copysign(abs(v / v1) ** alpha, v) if v else 0.0


def mov_voltmeter(model=MOV):
    """plus -> R1 -> x; varistor x-com; x -> R2 -> movement -> com (one 5 V range)."""
    els = (res("R1", "plus", "x", R1, power=1.0, vmax=1e5), m.Varistor("RV1", "x", "com", model.name),
           res("R2", "x", "m", R2, power=0.25, vmax=1e5), m.MovementElement("M1", "m", "com"))
    pos = (m.Position("5 V", "voltage", 50e-6 * (R1 + R2 + RM), ("plus", "com")),)
    return m.Spec("mov", movement(), m.Parts(varistors={model.name: model}), network=m.NetworkSpec(els, pos))


def closed_form(vs):
    """Node x: (V_s - V)/R1 = I(V) + V/(R2 + R_m), by brentq."""
    if vs == 0:
        return 0.0
    f = lambda v: (vs - v) / R1 - law(v) - v / (R2 + RM)  # noqa: E731
    return brentq(f, min(0.0, vs), max(0.0, vs), xtol=1e-300, rtol=1e-15, maxiter=500)


def test_engine_against_the_closed_form():
    eng = Engine(build(mov_voltmeter()))
    vs = np.array([-5000.0, -600.0, -100.0, 0.0, 5.0, 300.0, 470.0, 520.0, 1000.0, 6000.0])
    op = eng.operate("5 V", vs)
    es = op.element("RV1")
    want = np.array([closed_form(v) for v in vs])
    np.testing.assert_allclose(es.voltage_v[0], want, rtol=1e-9, atol=1e-12)  # solver step tolerance 1e-10
    want_i = np.array([law(v) for v in want])
    np.testing.assert_allclose(es.current_a[0], want_i, rtol=3e-8, atol=1e-18)  # alpha x the voltage's 1e-9
    # the source delivers the resistor's current: Kirchhoff at the input
    np.testing.assert_allclose(op.source_current_a[0], (vs - want) / R1, rtol=1e-9, atol=1e-15)


def test_varistor_behind_a_resistor_closed_form_only():
    # V + I R = V_s with the varistor alone behind R, solved by brentq
    els = (res("R1", "plus", "x", 100.0, vmax=1e5), m.Varistor("RV1", "x", "m", MOV.name),
           m.MovementElement("M1", "m", "com"))
    spec = m.Spec("v", movement(r_m=1e-3), m.Parts(varistors={MOV.name: MOV}),
                  network=m.NetworkSpec(els, (m.Position("P", "voltage", 1.0, ("plus", "com")),)))
    vs = 2500.0
    # the coil (1 mohm) is part of R: V_s = V + I (R + R_m)
    v = brentq(lambda x: x + law(x) * (100.0 + 1e-3) - vs, 0.0, vs, xtol=1e-300, rtol=1e-15)
    got = Engine(build(spec)).operate("P", [vs]).element("RV1").voltage_v[0, 0]
    np.testing.assert_allclose(got, v, rtol=1e-9)


def test_impulse_energy_and_continuous_voltage():
    spec = mov_voltmeter()
    # a 2.5 kV impulse through 12 ohm (CAT II 300 V, secondary source): the varistor's peak power
    # times the 1.2/50 us equivalent duration (IEC 60060-1 waveform)
    out = apply_stimulus(spec, "5 V", volts=2500.0, r_source_ohm=12.0, waveform="impulse")
    r_src = 12.0 + R1
    v = brentq(lambda x: (2500.0 - x) / r_src - law(x) - x / (R2 + RM), 0.0, 2500.0, xtol=1e-300, rtol=1e-15)
    e = [x for x in out["stresses"] if x["part"] == "RV1" and x["quantity"].startswith("impulse energy")][0]
    np.testing.assert_allclose(e["value"], v * law(v) * IMPULSE_EQUIVALENT_S, rtol=3e-8)
    np.testing.assert_allclose(IMPULSE_EQUIVALENT_S, 70.3e-6, rtol=1e-3)  # A (tau1 - tau2), by hand
    # the series resistor takes I_pk^2 R over the same equivalent duration (an upper bound)
    i_pk = (2500.0 - v) / r_src
    r1 = [x for x in out["stresses"] if x["part"] == "R1" and x["quantity"].startswith("impulse energy")][0]
    np.testing.assert_allclose(r1["value"], i_pk ** 2 * R1 * IMPULSE_EQUIVALENT_S, rtol=1e-8)
    # 350 V DC: the continuous voltage is above the 300 V rating
    out = apply_stimulus(spec, "5 V", volts=350.0)
    c = [x for x in out["stresses"] if x["part"] == "RV1" and x["quantity"] == "continuous voltage"][0]
    np.testing.assert_allclose(c["value"], closed_form(350.0), rtol=1e-9)
    assert c["exceeded"] and out["verdict"] != "ok"


@pytest.mark.usefixtures("ngspice")
@pytest.mark.parametrize("alpha", [8.0, 30.0])
def test_engine_network_against_ngspice(alpha):
    """The engine's compiled state with its varistor, against ngspice's behavioural source."""
    import spice_flat
    model = VaristorModel("mov", 470.0, alpha, 10.0, 300.0)
    eng = Engine(build(mov_voltmeter(model)))
    st = eng.state("5 V")
    c = eng.circuit(st, "voltage", False)
    r = eng.branch_resistances(c, eng.spec.ambient.t_ref_k, None)
    var = eng.varistors(c)
    col = spice_flat.simulate(c, r[0], np.linspace(-2000.0, 2000.0, 101), varistors=var)
    op = eng.operate(st, col["applied"])
    v = op.element("RV1").voltage_v[0]
    ref = col[f"v:{c.node_index['x']}"]
    np.testing.assert_allclose(v, ref, rtol=1e-9, atol=1e-3 * 1e-9)  # ngspice reltol 1e-10, vntol 1e-12
    np.testing.assert_allclose(op.movement_current_a[0], (ref / (R2 + RM)), rtol=1e-9, atol=1e-15)


PROJECT = """
title: varistor test
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
parts:
  varistors:
    mov_470: {voltage: 470 V, alpha: 30, energy: 10 J, max_continuous_voltage: 300 V, peak_current: 1.2 kA}
network:
  elements:
    - {name: R1, kind: resistor, between: [plus, x], value: 1 kohm}
    - {name: RV1, kind: varistor, between: [x, com], model: mov_470}
    - {name: R2, kind: resistor, between: [x, m], value: 98 kohm}
    - {name: M1, kind: movement, between: [m, com]}
  positions:
    - {name: "5 V", measures: voltage, full_scale: 5.05 V, input: [plus, com]}
"""


def test_project_keys_load():
    spec = loads(PROJECT)
    assert spec.parts.varistors["mov_470"] == MOV
    assert spec.network.element("RV1").yaml() == "{name: RV1, kind: varistor, between: [x, com], model: mov_470}"
    with pytest.raises(Exception) as e:
        loads(PROJECT.replace("max_continuous_voltage: 300 V", "max_continuous_voltage: 500 V"))
    assert "below its 1 mA voltage" in str(e.value)
