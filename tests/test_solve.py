"""Checks of the batched DC solver (planner.solve) through the engine.

Outside sources: the exact diode-with-series-resistance solution (Banwell and
Jayakumar, Electronics Letters 36(4), 2000), exact SI constants, the SPICE
temperature law (Massobrio and Antognetti, Semiconductor Device Modeling with SPICE,
2nd ed.), textbook multiplier, shunt and Ayrton-shunt values (Lessons in Electric
Circuits Vol. I ch. 8; the Ayrton-shunt formulas), and Kirchhoff's current law on random networks.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.special import lambertw, wrightomega

from conftest import make_spec, supernodes
from planner import network as nw
from planner.design import build
from planner.engine import Engine
from planner.errors import SolveError
from planner.model import Contact, Diode, DiodeModel, MovementElement, Position, Resistor
from planner.solve import BOLTZMANN, CHARGE, saturation_current, solve, thermal_voltage

# --- reference formulas, written out here from the sources -----------------------------------


def banwell_current(v, r, i_s, nvt):
    """Current through a diode in series with R from V [A], exactly.

    Banwell and Jayakumar, "Exact analytical solution for current flow through diode
    with series resistance", Electronics Letters 36(4), 291-292, 2000:
    I = (n V_t / R) W0((I_s R / (n V_t)) exp((V + I_s R) / (n V_t))) - I_s.
    Where the exponent overflows, the same in Wright-omega form:
    I = (n V_t / R) omega(ln(I_s R / (n V_t)) + (V + I_s R) / (n V_t)) - I_s.
    """
    v = np.asarray(v, dtype=float)
    expo = (v + i_s * r) / nvt
    small = expo < 600.0
    with np.errstate(over="ignore"):
        w_lambert = np.real(lambertw(i_s * r / nvt * np.exp(np.where(small, expo, 0.0))))
    w_omega = np.real(wrightomega(np.log(i_s * r / nvt) + expo))
    w = np.where(small, w_lambert, w_omega)
    return nvt / r * w - i_s


def spice_is(i_s, n, eg, xti, t, t0):
    """SPICE temperature law for I_s, written out (Massobrio and Antognetti, Semiconductor
    Device Modeling with SPICE, 2nd ed.): I_s (T/T0)^(XTI/n) exp((T/T0 - 1) E_g / (n V_t(T)))."""
    vt = 1.380649e-23 * t / 1.602176634e-19  # exact SI k and q
    return i_s * (t / t0) ** (xti / n) * math.exp((t / t0 - 1.0) * eg / (n * vt))


def diode_behind_resistor(model, r_ohm, tempco=0.0, t_ref_k=300.0):
    """A movement (the series resistor) feeding a diode: plus -M1- a -D1>|- com."""
    elements = [
        MovementElement("M1", "plus", "a"),
        Diode("D1", "a", "com", model.name),
    ]
    positions = [Position("P", "voltage", 1.0, ("plus", "com"))]
    spec = make_spec(elements, positions, i_fs_a=1e-3, r_coil_ohm=r_ohm, coil_tempco=tempco,
                     diodes=[model], t_ref_k=t_ref_k)
    return Engine(build(spec))


# --- constants and the temperature law --------------------------------------------------------


def test_thermal_voltage_exact_si():
    # [calc] from V_t = k T / q: = 25.852 mV, V_t(298.15 K) = 25.6926 mV with exact SI k, q
    np.testing.assert_allclose(thermal_voltage(300.0), 25.852e-3, atol=0.5e-6)  # 5 digits given
    np.testing.assert_allclose(thermal_voltage(298.15), 25.6926e-3, atol=0.05e-6)  # 6 digits given
    # SI Brochure 9th ed. (2019): k = 1.380649e-23 J/K, q = 1.602176634e-19 C exactly
    assert BOLTZMANN == 1.380649e-23 and CHARGE == 1.602176634e-19
    t = np.array([233.15, 300.0, 373.15])
    np.testing.assert_allclose(thermal_voltage(t), 1.380649e-23 * t / 1.602176634e-19, rtol=1e-15)  # float rounding


def test_saturation_current_temperature_law():
    # [calc] SPICE temperature law (Massobrio and Antognetti, 2nd ed.; ngspice manual, diode model): silicon defaults (E_g 1.11 eV, XTI 3, n 1) give about x4.4 per +10 K near 300 K
    ratio = saturation_current(1e-14, 1.0, 1.11, 3.0, 310.0, 300.0) / 1e-14
    np.testing.assert_allclose(ratio, 4.4, rtol=0.01)  # "about 4.4": two digits
    # the law as written in Massobrio and Antognetti (SPICE diode model), recomputed here
    for t, n, eg, xti in [(250.0, 1.0, 1.11, 3.0), (350.0, 1.9, 1.11, 3.0), (320.0, 1.05, 0.69, 2.0)]:
        np.testing.assert_allclose(saturation_current(2e-9, n, eg, xti, t, 296.15),
                                   spice_is(2e-9, n, eg, xti, t, 296.15), rtol=1e-13)  # float rounding
    # at its nominal temperature the law returns I_s itself
    assert saturation_current(5e-9, 1.9, 1.11, 3.0, 296.15, 296.15) == 5e-9
    # common practice, loose: reverse leakage "doubles every 10 K" or faster for silicon (n = 1 .. 2)
    for n in (1.0, 2.0):
        r10 = saturation_current(1e-12, n, 1.11, 3.0, 310.0, 300.0) / 1e-12
        assert 1.8 < r10 < 5.0


# --- exact diode with series resistance -------------------------------------------------------


def test_banwell_reference_values():
    # [calc] from Banwell and Jayakumar, Electronics Letters 36(4), 291-292 (2000): I_s = 1e-14 A, n = 1, 300 K
    nvt = thermal_voltage(300.0)
    for v, r, published in [(5.0, 1e3, 4.307456e-3), (10.0, 10e3, 0.9346955e-3), (100.0, 100e3, 0.9934538e-3)]:
        exact = banwell_current(v, r, 1e-14, nvt)
        np.testing.assert_allclose(exact, published, rtol=1e-6)  # published to 7 digits
        eng = diode_behind_resistor(DiodeModel("d", 1e-14, n=1.0), r, t_ref_k=300.0)
        i = eng.operate("P", [v], temperature_k=300.0).movement_current_a[0, 0]
        np.testing.assert_allclose(i, published, rtol=1e-6)  # published to 7 digits
        np.testing.assert_allclose(i, exact, rtol=1e-9)  # brief: solver vs exact to 1e-9


def test_banwell_forms_agree():
    # the Lambert-W and Wright-omega forms of the same solution, where both are finite
    nvt = thermal_voltage(300.0)
    v = np.linspace(-5, 15, 41)
    lam = nvt / 1e3 * np.real(lambertw(1e-14 * 1e3 / nvt * np.exp((v + 1e-14 * 1e3) / nvt))) - 1e-14
    om = nvt / 1e3 * np.real(wrightomega(np.log(1e-14 * 1e3 / nvt) + (v + 1e-14 * 1e3) / nvt)) - 1e-14
    np.testing.assert_allclose(om, lam, rtol=1e-12, atol=1e-28)  # two evaluations of one function


DIODE_CASES = [
    # (model, series resistor [ohm]); the diode's own R_s adds to the resistor
    (DiodeModel("si", 1e-14, n=1.0), 1e3),
    (DiodeModel("si_small", 5e-9, n=1.9, r_s_ohm=0.5), 10.0),
    (DiodeModel("schottky", 2e-7, n=1.05, r_s_ohm=1.5, eg_ev=0.69, xti=2.0), 100.0),
    (DiodeModel("hv", 1e-12, n=1.3, r_s_ohm=0.0, t_nom_k=300.15), 1e5),
]


@pytest.mark.parametrize("model,r_ohm", DIODE_CASES, ids=[c[0].name for c in DIODE_CASES])
@pytest.mark.parametrize("t_k", [243.15, 296.15, 358.15])
def test_diode_with_series_resistance_exact(model, r_ohm, t_k):
    """Solver vs the exact solution: forward currents 1e-12 A .. 1 A of both polarities
    (the diode turned round for the negative ones), and reverse bias up to 1000 V."""
    t_ref = 296.15
    tempco = 3.93e-3  # copper coil as the series resistor: R(T) = R (1 + tc (T - T_ref))
    t_nom = model.t_nom_k if model.t_nom_k is not None else t_ref
    i_s = spice_is(model.i_s_a, model.n, model.eg_ev, model.xti, t_k, t_nom)
    nvt = model.n * 1.380649e-23 * t_k / 1.602176634e-19
    r = r_ohm * (1.0 + tempco * (t_k - t_ref)) + model.r_s_ohm
    # forward: the voltage that drives each target current, from the explicit inverse
    i_target = np.logspace(-12, 0, 49)
    v_fwd = i_target * r + nvt * np.log1p(i_target / i_s)
    # the exact solution reproduces the targets; it subtracts I_s from the W term, so it
    # resolves no better than a few ulp of I_s (float64 eps = 2.2e-16) where I << I_s
    eps = np.finfo(float).eps
    np.testing.assert_allclose(banwell_current(v_fwd, r, i_s, nvt), i_target, rtol=1e-9, atol=8 * eps * i_s)
    exact_fwd = i_target  # the better-conditioned form of the same exact current

    # The solver takes a branch current from the difference of its node voltages, each
    # good to a few ulp of the applied voltage: that difference resolves no better than
    # about eps |V| / R. Where this floor exceeds 1e-9 of the current (below about
    # 1e-10 A through 1 kohm at 0.3 V) it is the tolerance instead.

    def check(i, exact, v):
        floor = 8 * eps * np.abs(v) / r
        bad = np.abs(i - exact) > 1e-9 * np.abs(exact) + floor  # brief: 1e-9 relative
        assert not bad.any(), (v[bad], i[bad], exact[bad])

    eng = diode_behind_resistor(model, r_ohm, tempco=tempco, t_ref_k=t_ref)
    check(eng.operate("P", v_fwd, temperature_k=t_k).movement_current_a[0], exact_fwd, v_fwd)

    # negative polarity: the same diode turned round, driven by -V
    flipped = dataclasses.replace(eng.net, elements=(MovementElement("M1", "plus", "a"),
                                                     Diode("D1", "com", "a", model.name)))
    eng_neg = Engine(build(dataclasses.replace(eng.spec, network=flipped)))
    check(eng_neg.operate("P", -v_fwd, temperature_k=t_k).movement_current_a[0], -exact_fwd, v_fwd)

    # reverse bias from 1 mV to 1000 V: the current tends to -I_s
    v_rev = -np.logspace(-3, 3, 25)
    exact_rev = banwell_current(v_rev, r, i_s, nvt)
    check(eng.operate("P", v_rev, temperature_k=t_k).movement_current_a[0], exact_rev, v_rev)
    # and at zero, zero
    assert abs(eng.operate("P", [0.0], temperature_k=t_k).movement_current_a[0, 0]) <= 1e-9 * i_s


# --- multipliers, shunts, Ayrton rings through the full solver -------------------------------


def voltmeter_separate(i_fs, r_m, full_scales, values):
    """One multiplier per range, each selected by its own contact."""
    elements = [MovementElement("M1", "m", "com")]
    positions = []
    for k, (v, r) in enumerate(zip(full_scales, values), start=1):
        elements.append(Resistor(f"R{k}", f"t{k}", "m", r))
        elements.append(Contact(f"S{k}", "plus", f"t{k}", (f"{v:g} V",)))
        positions.append(Position(f"{v:g} V", "voltage", v, ("plus", "com")))
    return Engine(build(make_spec(elements, positions, i_fs_a=i_fs, r_coil_ohm=r_m)))


def voltmeter_chain(i_fs, r_m, full_scales, segments):
    """One multiplier string, the switch taps it: segment k between t_k and t_(k-1)."""
    elements = [MovementElement("M1", "t0", "com")]
    positions = []
    for k, (v, r) in enumerate(zip(full_scales, segments), start=1):
        elements.append(Resistor(f"R{k}", f"t{k}", f"t{k - 1}", r))
        elements.append(Contact(f"S{k}", "plus", f"t{k}", (f"{v:g} V",)))
        positions.append(Position(f"{v:g} V", "voltage", v, ("plus", "com")))
    return Engine(build(make_spec(elements, positions, i_fs_a=i_fs, r_coil_ohm=r_m)))


def test_lessons_voltmeter_multipliers():
    # Lessons in Electric Circuits, Vol. I, ch. 8 "Voltmeter design": 1 mA, 500 ohm movement,
    # ranges 1/10/100/1000 V: separate multipliers 500 / 9.5 k / 99.5 k / 999.5 k ohm,
    # chain segments 500 / 9 k / 90 k / 900 k ohm.
    i_fs, r_m = 1e-3, 500.0
    scales = [1.0, 10.0, 100.0, 1000.0]
    separate = [v / i_fs - r_m for v in scales]  # R = V / I_fs - R_m
    np.testing.assert_allclose(separate, [500.0, 9.5e3, 99.5e3, 999.5e3], rtol=1e-12)  # exact values
    chain = [scales[0] / i_fs - r_m] + [(b - a) / i_fs for a, b in zip(scales, scales[1:])]
    np.testing.assert_allclose(chain, [500.0, 9e3, 90e3, 900e3], rtol=1e-12)  # exact values
    for eng in (voltmeter_separate(i_fs, r_m, scales, separate), voltmeter_chain(i_fs, r_m, scales, chain)):
        for v in scales:
            reading = eng.reading(f"{v:g} V", [v, v / 2])
            np.testing.assert_allclose(reading, [v, v / 2], rtol=1e-9)  # brief: 1e-9
            # input resistance V_fs / I_fs = 1000 ohm/V (sensitivity 1 / I_fs)
            op = eng.operate(f"{v:g} V", [v])
            np.testing.assert_allclose(v / op.source_current_a[0, 0], v / i_fs, rtol=1e-9)


def test_army_course_multiplier():
    # US Army correspondence course SS0602 (basic electricity, meters): 1 mA, 75 ohm, 10 V -> 9925 ohm
    r = 10.0 / 1e-3 - 75.0
    assert r == 9925.0
    eng = voltmeter_separate(1e-3, 75.0, [10.0], [r])
    np.testing.assert_allclose(eng.reading("10 V", [10.0]), [10.0], rtol=1e-9)  # brief: 1e-9


def shunted_ammeter(i_fs, r_m, full_scale, r_sh):
    elements = [MovementElement("M1", "plus", "com"), Resistor("RSH", "plus", "com", r_sh)]
    positions = [Position("P", "current", full_scale, ("plus", "com"))]
    return Engine(build(make_spec(elements, positions, i_fs_a=i_fs, r_coil_ohm=r_m)))


@pytest.mark.parametrize("i_fs,r_m,i_range,published,digits_rtol", [
    (1e-3, 43.0, 1.0, 43.04e-3, 1e-4),  # textbook worked example of R_m I_fs / (I - I_fs): 43.04 mohm
    (50e-6, 1e3, 500e-6, 111.1, 5e-4),  # textbook worked example of R_m I_fs / (I - I_fs): 111.1 ohm
    (1e-3, 25.0, 2.0, 12.506e-3, 5e-5),  # textbook worked example of R_m I_fs / (I - I_fs): 12.506 mohm
])
def test_shunt_formula(i_fs, r_m, i_range, published, digits_rtol):
    r_sh = r_m * i_fs / (i_range - i_fs)  # R_sh = R_m I_fs / (I - I_fs)
    np.testing.assert_allclose(r_sh, published, rtol=digits_rtol)  # to the published digits
    eng = shunted_ammeter(i_fs, r_m, i_range, r_sh)
    np.testing.assert_allclose(eng.reading("P", [i_range, -i_range / 3]), [i_range, -i_range / 3],
                               rtol=1e-9)  # brief: 1e-9


def ayrton(i_fs, r_m, ranges, segments):
    """An Ayrton ring: segments from the movement end (t1) to the common end; tap k at t_k."""
    n = len(segments)
    elements = [MovementElement("M1", "t1", "com")]
    for k, r in enumerate(segments, start=1):
        elements.append(Resistor(f"R{k}", f"t{k}", f"t{k + 1}" if k < n else "com", r))
    positions = []
    for k, i in enumerate(ranges, start=1):
        name = f"{i * 1e3:g} mA"
        elements.append(Contact(f"S{k}", "plus", f"t{k}", (name,)))
        positions.append(Position(name, "current", i, ("plus", "com")))
    return Engine(build(make_spec(elements, positions, i_fs_a=i_fs, r_coil_ohm=r_m)))


def ayrton_segments(i_fs, r_m, ranges):
    """R_t = R_m I_fs / (I_1 - I_fs); tap k at R_k = I_fs (R_t + R_m) / I_k from the common end."""
    r_t = r_m * i_fs / (ranges[0] - i_fs)
    taps = [i_fs * (r_t + r_m) / i for i in ranges]
    return r_t, [a - b for a, b in zip(taps, taps[1:] + [0.0])]


def test_ayrton_worked_example():
    # science-ebooks.com "Ayrton shunt" worked example: 1 mA, 50 ohm movement,
    # ring 40 + 9 + 1 ohm for 2 / 10 / 100 mA; input resistances 25 / 9 / 0.99 ohm.
    i_fs, r_m, ranges = 1e-3, 50.0, [2e-3, 10e-3, 100e-3]
    r_t, seg = ayrton_segments(i_fs, r_m, ranges)
    np.testing.assert_allclose(r_t, 50.0, rtol=1e-12)
    np.testing.assert_allclose(seg, [40.0, 9.0, 1.0], rtol=1e-12)  # "the formula reproduces it exactly"
    eng = ayrton(i_fs, r_m, ranges, seg)
    for i, r_in in zip(ranges, [25.0, 9.0, 0.99]):
        name = f"{i * 1e3:g} mA"
        np.testing.assert_allclose(eng.reading(name, [i, i / 4]), [i, i / 4], rtol=1e-9)  # brief: 1e-9
        # input resistance = applied V / I, from a current and from a voltage stimulus
        op = eng.operate(name, [i])
        np.testing.assert_allclose(op.node_voltage("plus")[0, 0] / i, r_in, rtol=1e-9)  # exact values
        opv = eng.operate(name, [0.1], kind="voltage")
        np.testing.assert_allclose(0.1 / opv.source_current_a[0, 0], r_in, rtol=1e-9)  # exact values


def test_ayrton_calc_ring():
    # [calc] from the Ayrton-shunt formulas (Wikipedia, "Ayrton shunt"): 50 uA, 2 kohm with 1 mA / 10 mA / 100 mA / 1 A: ring 105.263 ohm,
    # segments 94.737 / 9.4737 / 0.94737 / 0.10526 ohm
    i_fs, r_m, ranges = 50e-6, 2e3, [1e-3, 10e-3, 100e-3, 1.0]
    r_t, seg = ayrton_segments(i_fs, r_m, ranges)
    np.testing.assert_allclose(r_t, 105.263, rtol=5e-6)  # 6 digits given
    np.testing.assert_allclose(seg, [94.737, 9.4737, 0.94737, 0.10526], rtol=5e-5)  # 5 digits given
    eng = ayrton(i_fs, r_m, ranges, seg)
    for i in ranges:
        np.testing.assert_allclose(eng.reading(f"{i * 1e3:g} mA", [i]), [i], rtol=1e-9)  # brief: 1e-9


# --- Kirchhoff's current law on random networks (hypothesis) ---------------------------------


def _log_uniform(lo, hi):
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda x: 10.0 ** x)


@st.composite
def random_networks(draw):
    """A random connected network of resistors, diodes and contacts around one movement.

    A ring of resistors through every node (one ring member is the movement) keeps every
    node on a resistive path, so any current stimulus has an operating point; chords add
    resistors, diodes (random parameters, either way round) and contacts (open or
    closed, zero or finite resistance). Every diode has some series resistance: a bare
    junction held by an ideal source at hundreds of volts has no finite current.
    """
    n = draw(st.integers(3, 7))
    nodes = ["plus", "com"] + [f"x{i}" for i in range(n - 2)]
    order = ["plus"] + nodes[2:] + ["com"]
    ring = list(zip(order, order[1:])) + [("com", "plus")]
    m_at = draw(st.integers(0, len(ring) - 2))  # the movement is never the plus-com closing link
    elements = []
    for k, (a, b) in enumerate(ring):
        if k == m_at:
            elements.append(MovementElement("M1", a, b))
        else:
            elements.append(Resistor(f"R{k}", a, b, draw(_log_uniform(0.1, 1e7)),
                                     tempco_per_k=draw(st.floats(-200e-6, 200e-6))))
    diodes = []
    contacts = []
    for k in range(draw(st.integers(0, 6))):
        a, b = draw(st.sampled_from([(p, q) for p in nodes for q in nodes if p != q]))
        what = draw(st.sampled_from(["resistor", "diode", "diode", "contact"]))
        if what == "resistor":
            elements.append(Resistor(f"RC{k}", a, b, draw(_log_uniform(0.1, 1e7))))
        elif what == "diode":
            model = DiodeModel(
                f"d{k}", draw(_log_uniform(1e-15, 1e-6)), n=draw(st.floats(1.0, 2.0)),
                r_s_ohm=draw(st.sampled_from([0.01, 0.1, 1.0, 30.0])),
                r_p_ohm=draw(st.sampled_from([math.inf, 1e6, 1e9, 1e12])),
                eg_ev=draw(st.sampled_from([0.69, 1.11])), xti=draw(st.sampled_from([2.0, 3.0])),
                bv_v=draw(st.sampled_from([None, None, None, 5.6, 30.0])))
            diodes.append(model)
            elements.append(Diode(f"D{k}", a, b, model.name))
        else:
            c = Contact(f"S{k}", a, b, ("P",) if draw(st.booleans()) else (),
                        r_ohm=draw(st.sampled_from([0.0, 0.0, 0.01, 0.5])))
            contacts.append(c)
            elements.append(c)
    if contacts and not any(c.closed_in for c in contacts):
        first = contacts[0]
        elements[elements.index(first)] = dataclasses.replace(first, closed_in=("P",))
    kind = draw(st.sampled_from(["voltage", "current"]))
    positions = [Position("P", kind, 1.0 if kind == "voltage" else 1e-3, ("plus", "com"))]
    spec = make_spec(elements, positions, i_fs_a=draw(_log_uniform(1e-5, 1e-2)),
                     r_coil_ohm=draw(_log_uniform(10.0, 1e4)), coil_tempco=3.93e-3, diodes=diodes)
    # stimuli: zero, or 1 uV .. 1000 V, 1 pA .. 1 A of either sign, log-uniform
    lo, hi = (-6.0, 3.0) if kind == "voltage" else (-12.0, 0.0)
    magnitude = st.one_of(st.just(0.0), st.floats(lo, hi).map(lambda x: 10.0 ** x))
    stimuli = [m * s for m, s in draw(st.lists(st.tuples(magnitude, st.sampled_from([-1.0, 1.0])),
                                                min_size=1, max_size=6))]
    r_source = draw(st.sampled_from([0.0, 0.0, 0.05, 12.0, 1e3])) if kind == "voltage" else 0.0
    t_k = draw(st.floats(233.15, 373.15))
    return spec, kind, np.array(stimuli), r_source, t_k


@settings(max_examples=200, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(random_networks())
def test_kirchhoff_current_law_random_networks(case):
    spec, kind, stimuli, r_source, t_k = case
    eng = Engine(build(spec))
    st_ = eng.state("P")
    rep = supernodes(spec, st_.closed)
    shorted = rep["plus"] == rep["com"]
    if kind == "voltage" and shorted and r_source == 0.0:
        with pytest.raises(SolveError):
            eng.operate("P", stimuli, temperature_k=t_k)
        return
    op = eng.operate("P", stimuli, temperature_k=t_k, r_source_ohm=r_source)
    # KCL from element currents and node voltages alone, per supernode (closed ideal
    # contacts carry an unknown current inside a supernode, so KCL holds around it).
    # Rounding floor: node voltages come from a backward-stable linear solve plus a
    # superposition of the stimulus's own response (the diode-free open-circuit voltages)
    # and the diodes' responses, so KCL holds to a few ulp of (sum of branch conductances)
    # x v_scale, v_scale = max |V_oc| + max |V| (float64 eps = 2.2e-16). With kilovolts on
    # a network holding a 10-mohm contact this floor exceeds 1e-12 of the largest current;
    # it is added to the tolerance.
    eps = np.finfo(float).eps
    linear = dataclasses.replace(spec.network, elements=tuple(e for e in spec.network.elements
                                                              if not isinstance(e, Diode)))
    eng_lin = Engine(build(dataclasses.replace(spec, network=linear)))
    op_lin = eng_lin.operate("P", stimuli, temperature_k=t_k, r_source_ohm=r_source)
    all_nodes = sorted(rep)
    v_scale = (np.max([np.abs(op_lin.node_voltage(x)[0]) for x in all_nodes], axis=0)
               + np.max([np.abs(op.node_voltage(x)[0]) for x in all_nodes], axis=0)
               + (np.abs(stimuli) if kind == "voltage" else 0.0))
    dt = t_k - spec.ambient.t_ref_k
    net_out = {}
    g_sum = 1.0 / r_source if r_source > 0 else 0.0
    currents = []
    for e in spec.network.elements:
        if isinstance(e, Contact) and (e.name not in st_.closed or e.r_ohm == 0.0):
            continue
        s = op.element(e.name)
        i = s.current_a[0]
        assert np.all(np.isfinite(i)), e.name
        currents.append(np.abs(i))
        a, b = e.nodes
        if isinstance(e, Resistor):
            r = e.value_ohm * (1.0 + e.tempco_per_k * dt)
        elif isinstance(e, MovementElement):
            r = spec.movement.r_coil_ohm * (1.0 + spec.movement.tempco_per_k * dt)
        elif isinstance(e, Contact):
            r = e.r_ohm
        else:  # a diode: its current comes from its junction law, not from a difference
            r = math.inf
        g_sum = g_sum + 1.0 / r
        for node, sign in ((rep[a], 1.0), (rep[b], -1.0)):
            net_out[node] = net_out.get(node, 0.0) + sign * i
    i_in = op.source_current_a[0] if kind == "voltage" else stimuli
    scale = np.max(np.vstack(currents + [np.abs(i_in)]), axis=0)
    for node, total in net_out.items():
        expected = 0.0
        if not shorted:
            expected = i_in if node == rep["plus"] else (-i_in if node == rep["com"] else 0.0)
        # brief: KCL residual below 1e-12 of the largest branch current (+ the rounding floor)
        # (+ 1e-30 A absolute, for the zero stimulus: far below any current that matters)
        floor = 64 * eps * v_scale * g_sum
        assert np.all(np.abs(total - expected) <= 1e-12 * scale + floor + 1e-30), (node, total, expected)
    # the stimulus itself: V(plus) - V(com) = V - R_source I, or the injected current
    if kind == "voltage" and not shorted:
        v_in = op.node_voltage("plus")[0] - op.node_voltage("com")[0]
        np.testing.assert_allclose(v_in, stimuli - r_source * i_in, rtol=1e-12,
                                   atol=1e-12 * np.max(np.abs(stimuli)))  # float rounding
    # every diode's current obeys the contract's law (SPICE temperature law, leakage,
    # breakdown) at the junction voltage the solver found. (At the terminal voltage the
    # check would also measure the conditioning of the node voltages, which KCL does not
    # depend on.)
    names = op.circuit.diodes
    for e in spec.network.elements:
        if isinstance(e, Diode) and e.name in names:
            d = spec.parts.diodes[e.model]
            k = names.index(e.name)
            vj = op.solution.v_junction[0, :, k]
            i_s = spice_is(d.i_s_a, d.n, d.eg_ev, d.xti, t_k, spec.ambient.t_ref_k)
            nvt = d.n * 1.380649e-23 * t_k / 1.602176634e-19
            law = i_s * np.expm1(vj / nvt) + vj / d.r_p_ohm
            if d.bv_v is not None:
                law = law - d.ibv_a * np.exp(-(vj + d.bv_v) / nvt)
            assert np.all(np.isfinite(law)), e.name
            np.testing.assert_allclose(op.solution.i_diode[0, :, k], law, rtol=1e-12, atol=1e-30)  # float rounding
            np.testing.assert_allclose(op.element(e.name).current_a[0], law, rtol=1e-12, atol=1e-30)  # same current


# --- monotonic response of the example meters ----------------------------------------------


def _nondecreasing(i, s):
    """Movement current non-decreasing in the stimulus, to rounding (1e-13 of the largest |i|)."""
    order = np.argsort(s, kind="stable")
    di = np.diff(i[order])
    return np.all(di >= -1e-13 * np.max(np.abs(i)))


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.lists(st.floats(-1000.0, 1000.0), min_size=2, max_size=40))
def test_voltmeter_movement_current_monotonic(voltmeter, volts):
    # physics: resistors and clamp diodes are monotonic two-terminal elements, so the
    # movement current of this network rises with the applied voltage (every position)
    s = np.array(volts)
    for p in voltmeter.positions:
        i = voltmeter.operate(p.name, s).movement_current_a[0]
        assert _nondecreasing(i, s), p.name


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.lists(st.floats(-5.0, 5.0), min_size=2, max_size=40), st.sampled_from([0.05, 1.5, 12.0]))
def test_ammeter_movement_current_monotonic(ammeter, amps, r_source):
    # the same for the current meter: in the applied current, and in a voltage applied
    # through a source resistance (a misrange)
    s = np.array(amps)
    for p in ammeter.positions:
        i = ammeter.operate(p.name, s).movement_current_a[0]
        assert _nondecreasing(i, s), p.name
        i = ammeter.operate(p.name, 20 * s, kind="voltage", r_source_ohm=r_source).movement_current_a[0]
        assert _nondecreasing(i, s), p.name


@pytest.mark.parametrize("which", ["voltmeter", "ammeter"])
def test_example_sweeps_monotonic(which, voltmeter, ammeter):
    # a dense deterministic sweep beside the random ones: 4001 points, every position
    eng = voltmeter if which == "voltmeter" else ammeter
    s = np.linspace(-1000.0, 1000.0, 4001) if which == "voltmeter" else np.linspace(-5.0, 5.0, 4001)
    for p in eng.positions:
        i = eng.operate(p.name, s).movement_current_a[0]
        assert np.all(np.diff(i) > 0.0), p.name  # strictly rising: no plateau is exactly flat


# --- error paths -----------------------------------------------------------------------------


def test_node_on_nothing_names_case_and_node():
    # a compiled state with a node no branch touches: the linear part is singular
    eng = diode_behind_resistor(DiodeModel("d", 1e-14), 1e3)
    st_ = eng.state("P")
    circuit = nw.compile_state(eng.spec, st_, net=eng.net)
    orphan = dataclasses.replace(circuit, name="P (test case)", node_names=circuit.node_names + ("orphan",))
    r = eng.branch_resistances(orphan, 300.0, None)
    jn = eng.junctions(orphan, 300.0)
    with pytest.raises(SolveError) as err:
        solve(orphan, r, jn, [1.0])
    assert "P (test case)" in err.value.one_line()
    assert "orphan" in err.value.one_line()


def test_voltage_onto_shorted_inputs():
    # a zero-ohm contact across the inputs (a current range selected with a voltage applied)
    elements = [
        MovementElement("M1", "plus", "com"),
        Resistor("R1", "plus", "com", 10.0),
        Contact("S1", "plus", "com", ("A",)),
    ]
    positions = [Position("A", "current", 0.1, ("plus", "com"))]
    eng = Engine(build(make_spec(elements, positions)))
    with pytest.raises(SolveError) as err:
        eng.operate("A", [1.0], kind="voltage")
    assert "A" in err.value.one_line() and "impedance" in err.value.one_line()
    # through a source resistance it is a plain short: all of V / R_source flows in the contact
    op = eng.operate("A", [1.0], kind="voltage", r_source_ohm=0.5)
    np.testing.assert_allclose(op.source_current_a[0], [2.0], rtol=1e-12)  # Ohm's law
    assert op.movement_current_a[0, 0] == 0.0


def test_current_into_open_state_names_nodes(ammeter):
    # break-before-make on the ammeter: the input hangs on the fuse alone, so a current
    # stimulus has nowhere to go; the error names the state and the stranded nodes
    name = ammeter.transitions()[1].name
    assert "break-before-make" in name
    with pytest.raises(SolveError) as err:
        ammeter.operate(name, [1e-3], kind="current")
    msg = err.value.one_line()
    assert name in msg and "a_in" in msg


# --- back-to-back breakdown pairs (transient-voltage suppressors) -----------------------------------


def test_back_to_back_zener_pair_exact_and_started_near():
    """A tap clamped by two zeners back to back (anodes joined), against the series law solved by brentq.

    plus -R1 (10 kohm)- t; the movement (500 ohm) from t to com; from t to com the pair: Z1
    (cathode at t) and Z2 (cathode at com), their anodes at a node only they reach. Below the
    breakdown voltage the pair passes its leakage only; above it the blocking junction breaks
    down and the other conducts forward. The pair's current i with node t at v: the middle
    node m where -i_1(m - v) = i_2(m), both the contract's junction law
    i(x) = I_s (e^{x/nV_t} - 1) - I_BV e^{-(x + BV)/nV_t} + x/R_p; then the current balance at t
    by brentq (scipy). Each stimulus is solved alone (a cold start): the pair's forward
    junction starts at the blocking current, not on its exponential (from there Newton walks
    down by about n V_t a step: about twenty steps here, over forty in the larger example).
    """
    from scipy.optimize import brentq

    t_ref = 296.15
    z = DiodeModel("z68", 1e-12, n=1.5, r_s_ohm=0.0, r_p_ohm=1e10, bv_v=6.8, ibv_a=1e-3)
    elements = [Resistor("R1", "plus", "t", 1e4), MovementElement("M1", "t", "com"),
                Diode("Z1", "m", "t", "z68"), Diode("Z2", "m", "com", "z68")]
    spec = make_spec(elements, [Position("P", "voltage", 1.0, ("plus", "com"))], i_fs_a=1e-3,
                     r_coil_ohm=500.0, diodes=[z], t_ref_k=t_ref)
    eng = Engine(build(spec))
    nvt = z.n * 1.380649e-23 * t_ref / 1.602176634e-19

    def law(x):  # exponents capped far beyond any root (brentq's brackets reach them)
        return (z.i_s_a * math.expm1(min(x / nvt, 700.0)) - z.ibv_a * math.exp(min(-(x + z.bv_v) / nvt, 700.0))
                + x / z.r_p_ohm)

    def pair(v):  # current from t into the pair [A]
        if v == 0.0:
            return 0.0
        m = brentq(lambda m: -law(m - v) - law(m), min(0.0, v), max(0.0, v), xtol=1e-15, rtol=1e-15)
        return law(m)

    for volts in (0.5, 3.0, 6.0, 8.0, 30.0, 300.0, -30.0):
        v_t = brentq(lambda v: (volts - v) / 1e4 - v / 500.0 - pair(v), min(0.0, volts), max(0.0, volts),
                     xtol=1e-15, rtol=1e-15)
        op = eng.operate("P", [volts])
        # the movement current against the reference: 1e-9 relative (the brief's agreement)
        np.testing.assert_allclose(op.movement_current_a[0, 0], v_t / 500.0, rtol=1e-9)
        # a cold start near the solution: five or six steps (19 to 21 started on the exponential)
        assert op.solution.iterations <= 12, (volts, op.solution.iterations)


@pytest.mark.parametrize("pair", [True, False], ids=["suppressor pair", "single zener"])
def test_clamp_in_breakdown_started_on_its_breakdown_law(pair):
    """A tap clamped in breakdown (a suppressor pair back to back, or one zener to com), against brentq.

    plus -R1 (10 kohm)- t; the movement (500 ohm) from t to com; the clamp from t to com. At
    300 V and 1 kV the blocking junction is deep in breakdown. The reference: the current
    balance at t by brentq (scipy) on the contract's junction law
    i(x) = I_s (e^{x/nV_t} - 1) - I_BV e^{-(x + BV)/nV_t} + x/R_p (the pair's middle node by
    brentq as well). The start solves the clamp as a junction of saturation current I_BV
    shifted by BV behind the tap's Thevenin source, so a cold start is two or three Newton
    steps from the answer (six when the clamp was started as not conducting).
    """
    from scipy.optimize import brentq

    t_ref = 296.15
    z = DiodeModel("z68", 1e-12, n=1.5, r_s_ohm=0.0, r_p_ohm=1e10, bv_v=6.8, ibv_a=1e-3)
    clamp = [Diode("Z1", "m", "t", "z68"), Diode("Z2", "m", "com", "z68")] if pair else [Diode("Z1", "com", "t", "z68")]
    elements = [Resistor("R1", "plus", "t", 1e4), MovementElement("M1", "t", "com")] + clamp
    spec = make_spec(elements, [Position("P", "voltage", 1.0, ("plus", "com"))], i_fs_a=1e-3,
                     r_coil_ohm=500.0, diodes=[z], t_ref_k=t_ref)
    eng = Engine(build(spec))
    nvt = z.n * 1.380649e-23 * t_ref / 1.602176634e-19

    def law(x):  # exponents capped far beyond any root
        return (z.i_s_a * math.expm1(min(x / nvt, 700.0)) - z.ibv_a * math.exp(min(-(x + z.bv_v) / nvt, 700.0))
                + x / z.r_p_ohm)

    def into_clamp(v):  # current from t into the clamp [A]
        if not pair:
            return -law(-v)
        if v == 0.0:
            return 0.0
        m = brentq(lambda m: -law(m - v) - law(m), min(0.0, v), max(0.0, v), xtol=1e-15, rtol=1e-15)
        return law(m)

    for volts in (300.0, 1000.0, -1000.0):
        v_t = brentq(lambda v: (volts - v) / 1e4 - v / 500.0 - into_clamp(v), min(0.0, volts), max(0.0, volts),
                     xtol=1e-15, rtol=1e-15)
        op = eng.operate("P", [volts])
        # the movement current against the reference: 1e-9 relative (the brief's agreement)
        np.testing.assert_allclose(op.movement_current_a[0, 0], v_t / 500.0, rtol=1e-9)
        assert op.solution.iterations <= 3, (volts, op.solution.iterations)


def test_start_from_an_earlier_solution():
    """solve(start=) from a neighbouring parameter set: the same operating points in fewer steps.

    The back-to-back clamp of the test above at 1 kV and at -1 kV (cases far up the breakdown
    law); the series resistor then moves by 0.1 %. Started from the first solution's rows, every
    case ends where a cold start ends (to 1e-12: both iterate to the same step tolerance), in
    fewer Newton steps.
    """
    z = DiodeModel("z68", 1e-12, n=1.5, r_s_ohm=0.0, r_p_ohm=1e10, bv_v=6.8, ibv_a=1e-3)
    elements = [Resistor("R1", "plus", "t", 1e4), MovementElement("M1", "t", "com"),
                Diode("Z1", "m", "t", "z68"), Diode("Z2", "m", "com", "z68")]
    eng = Engine(build(make_spec(elements, [Position("P", "voltage", 1.0, ("plus", "com"))], i_fs_a=1e-3,
                                 r_coil_ohm=500.0, diodes=[z])))
    st = eng.state("P")
    circuit = eng.circuit(st, "voltage", False)
    r = eng.branch_resistances(circuit, 296.15, None)
    jn = eng.junctions(circuit, 296.15)
    volts = np.array([1000.0, -1000.0, 3.0, 0.0])
    first = solve(circuit, r, jn, volts)
    moved = r.copy()
    moved[:, [b.element for b in circuit.branches].index("R1")] *= 1.001
    cold = solve(circuit, moved, jn, volts)
    warm = solve(circuit, moved, jn, volts, start=first.start_rows)
    for i in range(circuit.n_nodes):
        np.testing.assert_allclose(warm.node_voltage(i), cold.node_voltage(i), rtol=1e-12, atol=1e-15)
    assert warm.iterations < cold.iterations
    # rows of another shape (another number of cases) are ignored: a cold start
    other = solve(circuit, moved, jn, volts[:2], start=first.start_rows)
    np.testing.assert_allclose(other.node_voltage(1), cold.node_voltage(1)[:, :2], rtol=1e-12)


def test_closed_form_diode_current_of_a_few_cases():
    """The start's closed-form current in floats (a few cases) against the array form and Banwell's formula.

    Banwell and Jayakumar's exact solution (the reference above, by scipy's lambertw and
    wrightomega) over nine decades of resistance and forward and reverse drive; a batch of at
    most :data:`planner.solve.junction.SMALL` cases takes the float form.
    """
    from planner.solve.junction import SMALL, single_diode

    rng = np.random.default_rng(7)
    v = rng.uniform(-60.0, 60.0, 64)
    r = 10.0 ** rng.uniform(-2.0, 7.0, 64)
    i_s = 10.0 ** rng.uniform(-15.0, -7.0, 64)
    nvt = rng.uniform(0.025, 0.2, 64)
    with np.errstate(over="ignore"):  # the array form's exponential of a start far out, replaced by its limit
        whole = single_diode(v, r, i_s, nvt)
    for k in range(0, 64, SMALL):
        part = single_diode(v[k:k + SMALL], r[k:k + SMALL], i_s[k:k + SMALL], nvt[k:k + SMALL])
        np.testing.assert_allclose(part, whole[k:k + SMALL], rtol=1e-14, atol=0.0)  # the same formula
    ref = np.array([banwell_current(v[k], r[k], i_s[k], nvt[k]) for k in range(64)])
    np.testing.assert_allclose([single_diode(v[k], r[k], i_s[k], nvt[k]) for k in range(64)], ref,
                               rtol=1e-12, atol=1e-3 * i_s.min())  # Banwell and Jayakumar (2000)
