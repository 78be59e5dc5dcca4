"""Checks of the engine (planner.engine): parameters onto the solver, results per element.

Reference: the design contract's element equations (R(T) = R (1 + tc (T - T_ref)),
the SPICE temperature law of I_s), checked against hand-written nodal equations
solved here with scipy's brentq, independently of planner.solve.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.optimize import brentq

from conftest import make_spec
from planner.design import build
from planner.engine import Engine
from planner.errors import PlannerError
from planner.model import Contact, Diode, DiodeModel, MovementElement, Position, Resistor


def spice_is(i_s, n, eg, xti, t, t0):
    """SPICE temperature law (Massobrio and Antognetti, Semiconductor Device Modeling with SPICE)."""
    vt = 1.380649e-23 * t / 1.602176634e-19
    return i_s * (t / t0) ** (xti / n) * math.exp((t / t0 - 1.0) * eg / (n * vt))


def diode_terminal_current(v, model, t_k, t_ref_k):
    """Terminal current of a diode (R_s in series, R_p across the junction) at terminal voltage v."""
    i_s = spice_is(model.i_s_a, model.n, model.eg_ev, model.xti, t_k, model.t_nom_k or t_ref_k)
    nvt = model.n * 1.380649e-23 * t_k / 1.602176634e-19

    def f(i):
        vj = v - i * model.r_s_ohm
        # the exponent is capped only far from the root (there it just keeps f's sign)
        return i - (i_s * math.expm1(min(vj / nvt, 700.0)) + vj / model.r_p_ohm)

    hi = abs(v) / model.r_s_ohm + 1.0 if model.r_s_ohm > 0 else 1.0
    return brentq(f, -hi, hi, xtol=1e-300, rtol=1e-15, maxiter=500)


@pytest.mark.parametrize("position,series_ohm", [("10 V", 8e3 + 40e3 + 150e3), ("0.5 V", 8e3), ("250 V", 4.998e6)])
@pytest.mark.parametrize("which_t", ["t_ref_k", "t_min_k", "t_max_k"])
def test_voltmeter_against_hand_nodal_equation(voltmeter, position, series_ohm, which_t):
    # The pocket voltmeter is a series multiplier into the coil with a clamp pair across
    # it: one node equation (m_plus), solved here by bisection, per applied voltage.
    spec = voltmeter.spec
    t_k = getattr(spec.ambient, which_t)
    dt = t_k - spec.ambient.t_ref_k
    r_series = series_ohm * (1.0 + 50e-6 * dt)  # the file's resistor tempco: 50 ppm/K
    r_coil = spec.movement.r_coil_ohm * (1.0 + spec.movement.tempco_per_k * dt)
    d = spec.parts.diodes["si_small"]
    fs = spec.network.position(position).full_scale
    applied = np.array([-3.0, -1.0, -0.1, 0.0, 0.01, 0.5, 1.0, 1.5, 10.0]) * fs
    expect = []
    for v_in in applied:
        def kcl(vm):
            return ((v_in - vm) / r_series - vm / r_coil
                    - diode_terminal_current(vm, d, t_k, spec.ambient.t_ref_k)
                    + diode_terminal_current(-vm, d, t_k, spec.ambient.t_ref_k))
        vm = brentq(kcl, -abs(v_in) - 1.0, abs(v_in) + 1.0, xtol=1e-300, rtol=1e-15, maxiter=500) if v_in else 0.0
        expect.append(vm / r_coil)
    op = voltmeter.operate(position, applied, temperature_k=t_k)
    # hand solution good to about 1e-15; tolerance 1e-9 (the solver's brief), 1e-18 A at zero
    np.testing.assert_allclose(op.movement_current_a[0], expect, rtol=1e-9, atol=1e-18)
    np.testing.assert_allclose(op.reading()[0], np.array(expect) / spec.movement.i_fs_a * fs, rtol=1e-9, atol=1e-12)


def linear_voltmeter(tempco_r=50e-6, tempco_coil=3.93e-3):
    elements = [
        MovementElement("M1", "m", "com"),
        Resistor("R1", "t1", "m", 9.5e3, tempco_per_k=tempco_r),
        Contact("S1", "plus", "t1", ("10 V",)),
    ]
    positions = [Position("10 V", "voltage", 10.0, ("plus", "com"))]
    return Engine(build(make_spec(elements, positions, i_fs_a=1e-3, r_coil_ohm=500.0, coil_tempco=tempco_coil)))


def test_temperature_law_of_resistors_and_coil():
    # contract: R(T) = R (1 + tempco (T - T_ref)) for resistors and the coil
    eng = linear_voltmeter()
    t_ref = eng.spec.ambient.t_ref_k
    t = np.array([t_ref - 40.0, t_ref, t_ref + 25.0])
    op = eng.operate("10 V", [10.0], temperature_k=t)
    r_total = 9.5e3 * (1 + 50e-6 * (t - t_ref)) + 500.0 * (1 + 3.93e-3 * (t - t_ref))
    np.testing.assert_allclose(op.movement_current_a[:, 0], 10.0 / r_total, rtol=1e-13)  # Ohm's law
    assert op.movement_current_a.shape == (3, 1)


def test_factors_multiply_nominal_values():
    eng = linear_voltmeter()
    f_r = np.array([1.0, 1.01, 0.99])
    f_m = np.array([1.0, 0.98, 1.03])
    f_fs = np.array([1.0, 1.02, 0.97])
    op = eng.operate("10 V", [10.0, 5.0], factors={"R1": f_r, "M1": f_m, "i_fs": f_fs})
    i = 10.0 / (9.5e3 * f_r + 500.0 * f_m)
    np.testing.assert_allclose(op.movement_current_a[:, 0], i, rtol=1e-13)  # Ohm's law
    # the reading scales with the drawn full-scale current
    np.testing.assert_allclose(op.reading()[:, 0], i / (1e-3 * f_fs) * 10.0, rtol=1e-13)
    assert op.reading().shape == (3, 2)


def test_element_stress_is_ohms_law_and_power():
    eng = linear_voltmeter()
    op = eng.operate("10 V", [10.0, -20.0])
    r1 = op.element("R1")
    np.testing.assert_allclose(r1.current_a, [[1e-3, -2e-3]], rtol=1e-13)  # 10 V / 10 kohm
    np.testing.assert_allclose(r1.voltage_v, [[9.5, -19.0]], rtol=1e-13)
    np.testing.assert_allclose(r1.power_w, r1.voltage_v * r1.current_a, rtol=1e-15)
    m = op.element("M1")
    np.testing.assert_allclose(m.power_w, [[500.0 * 1e-6, 500.0 * 4e-6]], rtol=1e-12)  # I^2 R
    names = [s.name for s in op.stresses()]
    assert names == ["M1", "R1"]  # every non-contact element, in network order
    np.testing.assert_allclose(op.source_current_a, [[1e-3, -2e-3]], rtol=1e-13)


def test_diode_element_includes_series_and_leakage(voltmeter):
    # the element current of a clamp diode is its terminal current (junction + leakage),
    # its voltage the terminal voltage (junction + R_s drop)
    spec = voltmeter.spec
    d = spec.parts.diodes["si_small"]
    op = voltmeter.operate("0.5 V", [-50.0, -1.0, 0.2, 1.0, 50.0])
    for name, sign in (("D1", 1.0), ("D2", -1.0)):
        s = op.element(name)
        np.testing.assert_allclose(s.voltage_v[0], sign * op.node_voltage("m_plus")[0], rtol=1e-15)
        expect = [diode_terminal_current(v, d, spec.ambient.t_ref_k, spec.ambient.t_ref_k) for v in s.voltage_v[0]]
        # terminal voltage from node voltages: good to ~1e-12 relative here; tolerance 1e-9
        np.testing.assert_allclose(s.current_a[0], expect, rtol=1e-9)


def test_batches_equal_single_runs(ammeter):
    # a batch of temperatures x stimuli gives the same numbers as one case at a time
    t = np.array([278.15, 296.15, 308.15])
    s = np.array([-2.0, 1e-3, 0.5])
    batch = ammeter.operate("10 mA", s, temperature_k=t).movement_current_a
    assert batch.shape == (3, 3)
    for p, tk in enumerate(t):
        for j, sv in enumerate(s):
            one = ammeter.operate("10 mA", [sv], temperature_k=tk).movement_current_a[0, 0]
            np.testing.assert_allclose(batch[p, j], one, rtol=1e-14)  # same arithmetic, to rounding


def _with_second_model(spec):
    """The voltmeter's spec with a second diode model (a zener of its own values, common practice)."""
    d = spec.parts.diodes["si_small"]
    other = dataclasses.replace(d, name="zener_4v7", i_s_a=2e-12, n=1.3, r_s_ohm=2.0, bv_v=4.7, ibv_a=1e-3,
                                max_current_a=0.1)
    parts = dataclasses.replace(spec.parts, diodes={**spec.parts.diodes, "zener_4v7": other})
    return dataclasses.replace(spec, parts=parts)


@pytest.mark.parametrize("position", ["0.5 V", "10 V"])
def test_models_per_row_are_the_networks_with_those_models(voltmeter_spec, position):
    # each parameter set's diode follows the model named for its row: the same operating points as
    # the network whose diode is that model, solved on its own (rows are independent in the solver)
    spec = _with_second_model(voltmeter_spec)
    design = build(spec)
    eng = Engine(design)
    s = np.array([-40.0, -3.0, 0.3, 2.0, 40.0])
    t = np.array([296.15, 296.15, 318.15, 278.15])
    rows = np.array(["si_small", "zener_4v7", "zener_4v7", "si_small"], dtype=object)
    got = eng.operate(position, s, temperature_k=t, models={"D1": rows})
    for k, (m, tk) in enumerate(zip(rows, t)):
        net = dataclasses.replace(design.net, elements=tuple(
            dataclasses.replace(e, model=m) if e.name == "D1" else e for e in design.net.elements))
        alone = Engine(design.variant(net)).operate(position, s, temperature_k=tk)
        # converged to the solver's own tolerance from (possibly) other starts: 1e-12 relative
        np.testing.assert_allclose(got.movement_current_a[k], alone.movement_current_a[0], rtol=1e-12, atol=1e-18)
        np.testing.assert_allclose(got.element("D1").current_a[k], alone.element("D1").current_a[0], rtol=1e-12,
                                   atol=1e-18)
    # rows 0 and 1 share their temperature but not their model: their diode currents differ (the rows
    # are not copies of one model)
    i = got.element("D1").current_a
    assert np.max(np.abs(i[1] - i[0]) / np.abs(i[0])) > 0.1


def test_reading_is_multiple_times_full_scale(ammeter):
    op = ammeter.operate("100 mA", [0.05, 0.1])
    np.testing.assert_allclose(op.reading(), op.movement_multiple * 0.1, rtol=1e-15)
    np.testing.assert_allclose(op.movement_multiple, op.movement_current_a / ammeter.spec.movement.i_fs_a, rtol=1e-15)
    np.testing.assert_allclose(ammeter.reading("100 mA", [0.05, 0.1]), op.reading()[0], rtol=1e-15)


def test_bad_requests(voltmeter):
    with pytest.raises(PlannerError) as err:
        voltmeter.operate("10 volts", [1.0])
    assert "10 V" in err.value.one_line()
    with pytest.raises(PlannerError):
        voltmeter.operate("10 V", [1.0], kind="resistance")


def test_warm_engine_same_operating_points():
    """An Engine(warm=True) starts each solve of a state from its previous one: the same answers.

    A tap clamped by two zeners back to back (a suppressor pair) behind 10 kohm, the movement
    from the tap to com, at voltages where the pair blocks and where it breaks down; the series
    resistor stepped by 1 % per call as an iteration over a part's value does. Each call
    against a cold engine's (both iterate to the solver's step tolerance: 1e-12 relative), the
    stepped calls in fewer Newton steps. A call whose stimulus rows are not among the previous
    call's starts cold.
    """
    z = DiodeModel("z68", 1e-12, n=1.5, r_s_ohm=0.0, r_p_ohm=1e10, bv_v=6.8, ibv_a=1e-3)
    elements = [Resistor("R1", "plus", "t", 1e4), MovementElement("M1", "t", "com"),
                Diode("Z1", "m", "t", "z68"), Diode("Z2", "m", "com", "z68")]
    design = build(make_spec(elements, [Position("P", "voltage", 1.0, ("plus", "com"))], i_fs_a=1e-3,
                             r_coil_ohm=500.0, diodes=[z]))
    cold, warm = Engine(design), Engine(design, warm=True)
    volts = np.array([[3.0, 30.0, 300.0, -30.0], [3.0, 30.0, 300.0, -30.0]])
    steps_cold = steps_warm = 0
    for k in range(4):
        factors = {"R1": np.array([1.0, 1.02]) * 1.01 ** k}
        a = cold.operate("P", volts, factors=factors)
        b = warm.operate("P", volts, factors=factors)
        np.testing.assert_allclose(b.movement_current_a, a.movement_current_a, rtol=1e-12)
        np.testing.assert_allclose(b.element("Z1").current_a, a.element("Z1").current_a, rtol=1e-12, atol=1e-21)
        if k:
            steps_cold += a.solution.iterations
            steps_warm += b.solution.iterations
    assert steps_warm < steps_cold
    other = warm.operate("P", [[7.0]])  # no previous row at 7 V: a cold start
    np.testing.assert_allclose(other.movement_current_a, cold.operate("P", [[7.0]]).movement_current_a, rtol=1e-12)


def test_element_arrays_formed_once(voltmeter):
    """An Operating's element() gives the same arrays on every call (formed once per name)."""
    op = voltmeter.operate(voltmeter.positions[0].name, [0.1, 1.0])
    name = voltmeter.net.elements[0].name
    assert op.element(name) is op.element(name)
