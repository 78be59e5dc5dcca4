"""The solver against ngspice, an independent circuit simulator, on the example networks.

The decks (tests/spice.py) implement the contract's element equations with ngspice's
own diode model and temperature law; see that module's notes for how the two are
matched (k/q, SPICE2 reverse approximation, gmin, breakdown). Agreement asked for:
1e-6 of the movement current, measured against max(|I|, 1e-3 I_fs) so that the zero
crossing of a sweep does not divide by nothing.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

import spice
from conftest import make_spec
from planner.design import build
from planner.engine import Engine
from planner.model import Contact, Diode, DiodeModel, MovementElement, Position, Resistor
from planner.solve import BOLTZMANN, CHARGE, saturation_current, thermal_voltage

pytestmark = pytest.mark.usefixtures("ngspice")

#: Agreement of the movement current (brief): 1e-6 relative, floor 1e-3 of full scale.
RTOL = 1e-6
FLOOR = 1e-3


def by_name(deck, data):
    """Columns of a run by name (a column serving several names under each)."""
    return {n: col for names, col in zip(spice.columns(deck), data.T) for n in names.split("=")}


def compare(cases, decks, results, i_fs):
    """Worst movement-current disagreement over all cases, relative to max(|I|, 1e-3 I_fs)."""
    worst = 0.0
    for (eng, state, kind, t_k, r_src), deck, data in zip(cases, decks, results):
        col = by_name(deck, data)
        # solve at the stimuli ngspice applied (its sweep accumulates its step)
        op = eng.operate(state, col["applied"], kind=kind, temperature_k=t_k, r_source_ohm=r_src)
        ours = op.movement_current_a[0]
        err = np.abs(ours - col["movement"]) / np.maximum(np.abs(ours), FLOOR * i_fs)
        worst = max(worst, float(err.max()))
        assert err.max() <= RTOL, (state, kind, t_k, float(err.max()))
    return worst


def test_k_over_q_calibration():
    # ngspice 39 uses CODATA 2014 k and q (k/q = 8.6173303e-5 V/K, from the ngspice
    # sources, const.h; from memory); the SI 2019 exact ratio differs by about 3.4e-7
    kq = spice.ngspice_k_over_q()
    assert abs(kq / (BOLTZMANN / CHARGE) - 1.0) < 1e-5
    # after the N/XTI scaling of the deck, a forward junction follows the SI-constant law
    d = DiodeModel("d", 1e-12, n=1.3, r_p_ohm=1e12)  # finite R_p: the deck sets gmin = 0
    eng = Engine(build(make_spec([MovementElement("M1", "plus", "a"), Diode("D1", "a", "com", "d")],
                           [Position("P", "voltage", 1.0, ("plus", "com"))], r_coil_ohm=1e3,
                           diodes=[d], t_ref_k=300.0)))
    col = spice.simulate(eng, "P", None, np.linspace(0.3, 3.0, 10), 300.0, nodes=["a"])
    vj = col["v:a"]
    law = 1e-12 * np.expm1(vj / (1.3 * thermal_voltage(300.0))) + vj / 1e12
    np.testing.assert_allclose(col["movement"], law, rtol=1e-9)  # ngspice reltol 1e-12; margin


def banwell(v, r, i_s, nvt):
    """Banwell and Jayakumar, Electronics Letters 36(4), 2000, Wright-omega form."""
    from scipy.special import wrightomega

    return nvt / r * np.real(wrightomega(np.log(i_s * r / nvt) + (v + i_s * r) / nvt)) - i_s


@pytest.mark.parametrize("t_k", [243.15, 296.15, 358.15])
def test_ngspice_diode_law_and_temperature_law(t_k):
    # ngspice's own saturation-current temperature law (its diotemp.c) against the
    # contract's (Massobrio and Antognetti), through the exact series-resistance solution,
    # forward and reverse (the reverse through the deck's correction of SPICE2's
    # approximation)
    d = DiodeModel("s", 2e-7, n=1.05, r_s_ohm=1.5, eg_ev=0.69, xti=2.0)
    eng = Engine(build(make_spec([MovementElement("M1", "plus", "a"), Diode("D1", "a", "com", "s")],
                           [Position("P", "voltage", 1.0, ("plus", "com"))], r_coil_ohm=100.0,
                           diodes=[d], t_ref_k=296.15)))
    v = np.linspace(-5.0, 5.0, 201)
    col = spice.simulate(eng, "P", None, v, t_k)
    i_s = saturation_current(d.i_s_a, d.n, d.eg_ev, d.xti, t_k, 296.15)
    exact = banwell(col["applied"], 100.0 + 1.5, i_s, d.n * thermal_voltage(t_k))
    # ngspice converges to reltol 1e-12; 1e-9 leaves margin, floor at 1e-3 of I_s
    np.testing.assert_allclose(col["movement"], exact, rtol=1e-9, atol=1e-3 * i_s)


def voltmeter_cases(eng):
    amb = eng.spec.ambient
    sweep = np.linspace(-1000.0, 1000.0, 401)  # far beyond every full scale (0.5 .. 250 V)
    cases = [(eng, p.name, "voltage", t, 0.0) for p in eng.positions for t in (amb.t_ref_k, amb.t_min_k, amb.t_max_k)]
    return cases, [sweep] * len(cases)


def ammeter_cases(eng):
    amb = eng.spec.ambient
    cases, sweeps = [], []
    for p in eng.positions:
        for t in (amb.t_ref_k, amb.t_min_k, amb.t_max_k):
            cases.append((eng, p.name, "current", t, 0.0))
            sweeps.append(np.linspace(-5.0, 5.0, 401))  # 5 A: 5000 x the 1 mA range
            cases.append((eng, p.name, "voltage", t, 0.05))  # a bench supply on a current range
            sweeps.append(np.linspace(-30.0, 30.0, 201))
    return cases, sweeps


def run_cases(cases, sweeps):
    decks = [spice.netlist(eng, state, kind, s, t, r) for (eng, state, kind, t, r), s in zip(cases, sweeps)]
    return decks, spice.run_many(decks)


def test_voltmeter_every_position_against_ngspice(voltmeter):
    cases, sweeps = voltmeter_cases(voltmeter)
    decks, results = run_cases(cases, sweeps)
    assert all(len(r) == 401 for r in results)
    compare(cases, decks, results, voltmeter.spec.movement.i_fs_a)


def test_ammeter_every_position_against_ngspice(ammeter):
    cases, sweeps = ammeter_cases(ammeter)
    decks, results = run_cases(cases, sweeps)
    compare(cases, decks, results, ammeter.spec.movement.i_fs_a)


def test_transitions_against_ngspice(voltmeter, ammeter):
    # make-before-break: both positions' contacts closed while the switch turns
    cases, sweeps = [], []
    for t in voltmeter.transitions():
        if "make-before-break" in t.name:
            cases.append((voltmeter, t.name, "voltage", voltmeter.spec.ambient.t_max_k, 0.0))
            sweeps.append(np.linspace(-1000.0, 1000.0, 201))
    for t in ammeter.transitions():
        if "make-before-break" in t.name:
            cases.append((ammeter, t.name, "current", ammeter.spec.ambient.t_ref_k, 0.0))
            sweeps.append(np.linspace(-5.0, 5.0, 201))
            cases.append((ammeter, t.name, "voltage", ammeter.spec.ambient.t_min_k, 1.5))
            sweeps.append(np.linspace(-30.0, 30.0, 201))
    decks, results = run_cases(cases, sweeps)
    compare(cases[:4], decks[:4], results[:4], voltmeter.spec.movement.i_fs_a)
    compare(cases[4:], decks[4:], results[4:], ammeter.spec.movement.i_fs_a)


def test_uneven_stimuli_and_single_run(voltmeter, ammeter):
    # stimuli that are no uniform grid go through a pwl table indexed by the sweep
    v = np.array([-900.0, -2.5, -0.3, 0.0, 1e-3, 0.2, 0.49, 0.51, 3.0, 700.0])
    col = spice.simulate(voltmeter, "0.5 V", None, v)
    np.testing.assert_allclose(col["applied"], v, rtol=1e-14, atol=0)  # pwl interpolation: rounding only
    ours = voltmeter.operate("0.5 V", v).movement_current_a[0]
    err = np.abs(ours - col["movement"]) / np.maximum(np.abs(ours), FLOOR * voltmeter.spec.movement.i_fs_a)
    assert err.max() <= RTOL
    a = np.array([-3.0, -1e-4, 0.0, 2e-4, 1e-3, 0.7])
    col = spice.simulate(ammeter, "1 mA", None, a)
    ours = ammeter.operate("1 mA", a).movement_current_a[0]
    err = np.abs(ours - col["movement"]) / np.maximum(np.abs(ours), FLOOR * ammeter.spec.movement.i_fs_a)
    assert err.max() <= RTOL
    # the input current agrees too: the source current of a voltage stimulus
    col = spice.simulate(ammeter, "10 mA", "voltage", np.linspace(-9.0, 9.0, 37), None, 1.5)
    ours = ammeter.operate("10 mA", col["applied"], kind="voltage", r_source_ohm=1.5).source_current_a[0]
    np.testing.assert_allclose(col["input"], ours, rtol=1e-9, atol=1e-15)  # ngspice reltol 1e-12; margin


def test_shorted_inputs_need_source_resistance():
    # the writer refuses what the solver refuses: an ideal voltage across shorted inputs
    eng = Engine(build(make_spec([MovementElement("M1", "plus", "com"), Resistor("R1", "plus", "com", 10.0),
                            Contact("S1", "plus", "com", ("P",))],
                           [Position("P", "current", 1e-3, ("plus", "com"))])))
    with pytest.raises(ValueError):
        spice.netlist(eng, "P", "voltage", [1.0], None)
    col = spice.simulate(eng, "P", "voltage", [1.0, 2.0], None, 0.5)
    np.testing.assert_allclose(col["input"], [2.0, 4.0], rtol=1e-9)  # Ohm's law through 0.5 ohm
    assert math.isclose(float(np.max(np.abs(col["movement"]))), 0.0, abs_tol=1e-15)


@pytest.mark.parametrize("t_k", [296.15, 340.0])
def test_zener_breakdown_against_ngspice(t_k):
    # a zener across the movement: the reverse breakdown branch of the contract's law
    # (written into the deck as a behavioural source, ngspice's own BV model differing)
    z = DiodeModel("z", 1e-14, n=1.0, r_s_ohm=1.0, r_p_ohm=1e10, bv_v=5.6, ibv_a=1e-3)
    eng = Engine(build(make_spec([Resistor("R1", "plus", "a", 1e3), MovementElement("M1", "a", "com"),
                            Diode("D1", "com", "a", "z")],
                           [Position("P", "voltage", 10.0, ("plus", "com"))], r_coil_ohm=2e3, diodes=[z])))
    cases = [(eng, "P", "voltage", t_k, 0.0)]
    sweeps = [np.linspace(-1000.0, 1000.0, 401)]
    decks, results = run_cases(cases, sweeps)
    compare(cases, decks, results, eng.spec.movement.i_fs_a)
    # the clamp holds the movement near BV + a few n V_t at 1000 V (sanity: it clamps)
    col = by_name(decks[0], results[0][-1:])
    assert 5.6 / 2e3 < col["movement"][0] < 7.0 / 2e3


# --- solver-level circuits: varistors and batteries (tests/spice_flat.py) ----------------------


def _flat_compare(circuit, sol, col, v_floor, i_floor, rtol=1e-9):
    """Every node voltage and branch current of a sweep against ngspice's columns.

    Relative to max(|value|, floor): rtol 1e-9 (ngspice runs at reltol 1e-10; the solver's step
    tolerance is 1e-10, then one polishing step). ngspice's accuracy on a small branch current is
    that of the largest current at its nodes (its convergence test), hence the current floor; its
    node voltages converge to vntol = 1e-12 V absolute, hence 1e-3 V as the voltage floor.
    """
    worst = 0.0
    for k in range(1, circuit.n_nodes):
        ours = sol.node_voltage(k)[0]
        err = np.abs(ours - col[f"v:{k}"]) / np.maximum(np.abs(ours), v_floor)
        worst = max(worst, float(err.max()))
    for j in range(len(circuit.branches)):
        ours = sol.branch_current(j)[0]
        err = np.abs(ours - col[f"i:{j}"]) / np.maximum(np.abs(ours), i_floor)
        worst = max(worst, float(err.max()))
    assert worst <= rtol, worst
    return worst


@pytest.mark.parametrize("alpha", [5.0, 30.0, 60.0])
def test_varistor_network_against_ngspice(alpha):
    """A varistor at the input of a voltmeter with a clamp pair across its movement, +/-1000 V.

    ngspice's side: the law I = I_1 sgn(V) (|V|/V_1)^alpha as a behavioural current source
    (tests/spice_flat.py), the junctions as in the example decks.
    """
    from flat_circuits import build
    from planner.solve import Junctions, Varistors, solve
    import spice_flat

    c = build([("R1", "plus", "x"), ("R2", "x", "m"), ("M1", "m", "com")],
              diodes=[("D1", "m", "com"), ("D2", "com", "m")], varistors=[("RV1", "x", "com")])
    r = np.array([470.0, 98e3, 2e3])
    nvt = 1.9 * thermal_voltage(300.0)
    jn = Junctions(*(np.array([v, v]) for v in (5e-9, nvt, math.inf, 1e-3, 0.5, 1e-9)))
    var = Varistors(np.array([120.0]), np.array([alpha]))
    sweep = np.linspace(-1000.0, 1000.0, 201)
    col = spice_flat.simulate(c, r, sweep, junctions=jn, varistors=var)
    sol = solve(c, r, jn, col["applied"], varistors=var)
    _flat_compare(c, sol, col, v_floor=1e-3, i_floor=1e-6)
    # the varistor holds the line: at 1000 V it carries (1000 - V) / 470 ohm, its own law
    v_var = sol.v_varistor[0, -1, 0]
    np.testing.assert_allclose(sol.i_varistor[0, -1, 0], 1e-3 * (v_var / 120.0) ** alpha, rtol=1e-12)  # round-off


@pytest.mark.parametrize("r_x", [0.5, 150.0, 1.5e3, 1e5])
def test_ohmmeter_battery_network_against_ngspice(r_x):
    """A shunt-zeroed series ohmmeter with a range shunt and a clamp pair across the movement: the
    battery an EMF in its branch, the unknown R_x the resistance in series with the stimulus,
    which sweeps from -30 V to 30 V through 0 V (a voltage applied to an ohms range, and none)."""
    from flat_circuits import build
    from planner.solve import Junctions, solve
    import spice_flat

    c = build([("RX", "plus", "t"), ("RSH", "t", "com"), ("R1", "t", "a"), ("RZ", "a", "m"), ("M1", "a", "m"),
               ("R2", "m", "bp"), ("B1", "bp", "com")], diodes=[("D1", "a", "m"), ("D2", "m", "a")])
    r = np.array([r_x, 13.6, 10.0, 4.7e3, 2e3, 9.1e3, 0.8])
    emf = np.array([0.0, 0.0, 0.0, 0.0, 0.0, 0.0, -1.5])  # plus of the battery at com: v_com - v_bp = 1.5 V
    nvt = 1.9 * thermal_voltage(300.0)
    jn = Junctions(*(np.array([v, v]) for v in (5e-9, nvt, math.inf, 1e-3, 0.5, 1e-9)))
    sweep = np.linspace(-30.0, 30.0, 121)
    col = spice_flat.simulate(c, r, sweep, emf=emf, junctions=jn)
    sol = solve(c, r, jn, col["applied"], emf=emf)
    _flat_compare(c, sol, col, v_floor=1e-3, i_floor=1e-6)


@pytest.mark.parametrize("dt_k", [-20.0, 0.0, 20.0])
def test_cold_ptc_in_the_deck(dt_k):
    """A PTC in normal use is its cold resistance with its tempco (planner.parts.ptc): a voltmeter with
    a PTC at its input and a clamp pair across the movement against ngspice, the deck writing the PTC
    as a resistor (left out, the deck was open at the PTC and ngspice read no current)."""
    from planner.model import PtcModel, Ptc

    ptc = PtcModel("p", 0.01, 0.02, 470.0, 600.0, 1.0, tripped_power_w=0.5, tempco_per_k=0.004)
    d = DiodeModel("si", 1e-9, n=1.8, r_s_ohm=0.8, r_p_ohm=2e9)
    spec = make_spec([Ptc("RT1", "plus", "a", "p"), Resistor("R1", "a", "m", 9.5e3, tempco_per_k=0.0),
                      MovementElement("M1", "m", "com"),
                      Diode("D1", "m", "com", "si"), Diode("D2", "com", "m", "si")],
                     [Position("10 V", "voltage", 10.0, ("plus", "com"))], i_fs_a=1e-3, r_coil_ohm=500.0, diodes=[d])
    spec = dataclasses.replace(spec, parts=dataclasses.replace(spec.parts, ptcs={"p": ptc}))
    eng = Engine(build(spec))
    t_k = spec.ambient.t_ref_k + dt_k
    case = (eng, "10 V", "voltage", t_k, 0.0)
    decks, results = run_cases([case], [np.linspace(-50.0, 50.0, 101)])
    assert "RT1" in decks[0]  # the PTC is in the deck
    compare([case], decks, results, 1e-3)
    # below the clamps' knee the movement sees Ohm's law with the PTC at R_c (1 + alpha dT) (the PTC's
    # tempco moves the current by 0.36 % at 20 K)
    col = by_name(decks[0], results[0])
    k = np.argmin(np.abs(col["applied"] - 1.0))
    r_tot = 470.0 * (1.0 + 0.004 * dt_k) + 9.5e3 + 500.0
    # the clamp pair's small-signal conductance 2 I_s(T) / (n V_t) is below 3e-4 of the coil's at +20 K
    np.testing.assert_allclose(col["movement"][k], col["applied"][k] / r_tot, rtol=5e-4)
