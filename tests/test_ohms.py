"""Ohms ranges (planner.ohms): the series ohmmeter through the solver, zeroing, and ngspice.

Sources: T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I, ch. 8, "Ohmmeter
design" (series ohmmeter, half-scale deflection at the internal resistance); US Army
correspondence course SS0602 (same relation); the closed form of the centre after
re-zeroing a shunt-adjusted multi-range ohmmeter is derived in docs/ohms.md and checked
here against an independent nodal solve written with numpy.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner import ohms
from planner.design import build
from planner.engine import Engine
from planner.project import loads

I_FS, R_M = 50e-6, 2000.0

SERIES_OHMMETER = """
title: series ohmmeter
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 2.5}
network:
  elements:
    - {name: M1, kind: movement, between: [m, com]}
    - {name: R1, kind: resistor, between: [bp, m], value: 27999 ohm}
    - {name: B1, kind: battery, between: [bp, plus], voltage: 1.5 V, internal_resistance: 1 ohm}
  positions:
    - {name: Rx1k, measures: resistance, center: 30 kohm, input: [plus, com]}
"""

# shunt zero adjust, two ranges: swamp RW, adjuster RF + RV across the coil, series RS1/RS2,
# range shunt RH1 on the low range (values invented for the test)
E_NOM, E_MIN, E_MAX, R_B = 1.5, 1.1, 1.6, 0.5
R_W, R_F, RV_MAX = 8000.0, 500.0, 20000.0
R_S1, R_H1, R_S2 = 300.0, 2000.0, 10000.0
SHUNT_ADJUST = f"""
title: shunt adjusted ohmmeter
movement: {{full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 2.5}}
network:
  elements:
    - {{name: M1, kind: movement, between: [m, com]}}
    - {{name: RW, kind: resistor, between: [ox, m], value: {R_W} ohm}}
    - {{name: SA, kind: contact, between: [m, a1], closed_in: [x1, x10]}}
    - {{name: RF, kind: resistor, between: [a1, a2], value: {R_F} ohm}}
    - {{name: RV, kind: rheostat, between: [a2, com], max: {RV_MAX} ohm}}
    - {{name: B1, kind: battery, between: [bp, plus], voltage: {E_NOM} V, min: {E_MIN} V, max: {E_MAX} V,
        internal_resistance: {R_B} ohm}}
    - {{name: RS1, kind: resistor, between: [bp, o1], value: {R_S1} ohm}}
    - {{name: S1, kind: contact, between: [o1, ox], closed_in: [x1]}}
    - {{name: RH1, kind: resistor, between: [h1, com], value: {R_H1} ohm}}
    - {{name: S2, kind: contact, between: [h1, ox], closed_in: [x1]}}
    - {{name: RS2, kind: resistor, between: [bp, o2], value: {R_S2} ohm}}
    - {{name: S3, kind: contact, between: [o2, ox], closed_in: [x10]}}
  positions:
    - {{name: x1, measures: resistance, center: 2 kohm, input: [plus, com]}}
    - {{name: x10, measures: resistance, center: 20 kohm, input: [plus, com]}}
"""


def _engine(text):
    return Engine(build(loads(text)))


def test_half_deflection_at_the_internal_resistance():
    """D = R_int / (R_int + R_x) for an ideal battery, half scale at R_x = R_int (Lessons in Electric
    Circuits, "Ohmmeter design"; US Army SS0602)."""
    eng = _engine(SERIES_OHMMETER)
    op = ohms.parts_of(eng, "Rx1k")
    r_int = 1.0 + 27999.0 + R_M  # the internal resistance is part of R_int
    r_x = np.array([0.0, 1.0, 300.0, r_int, 3 * r_int, 1e6])
    d = ohms.deflection(eng, op, r_x, 1.5)
    # tolerance: the brief's 1e-9; the solve's round-off is ~1e-15 of these currents
    np.testing.assert_allclose(d, r_int / (r_int + r_x) * (1.5 / (I_FS * r_int)), rtol=1e-9)
    scale = ohms.Scale(eng, op)
    np.testing.assert_allclose(scale.center_ohm, r_int, rtol=1e-9)  # centre = R_int (same sources)
    assert abs(ohms.deflection(eng, op, [r_int], 1.5)[0] * I_FS * r_int / 1.5 - 0.5) < 1e-9


def centre_after_zeroing(e_bat, r_s, r_h):
    """Closed form of docs/ohms.md: the adjuster's parallel value p = R_m || R_a at the zero and the centre.

    p = I_fs R_m (A (R_h + R_W) + R_h R_W) / (E R_h - I_fs R_m (A + R_h)), A = r_b + R_s;
    R_c = A + R_h (R_W + p) / (R_h + R_W + p). Without a range shunt (R_h -> inf):
    p = I_fs R_m (A + R_W) / (E - I_fs R_m), R_c = A + R_W + p.
    """
    a = R_B + r_s
    if r_h is None:
        p = I_FS * R_M * (a + R_W) / (e_bat - I_FS * R_M)
        return p, a + R_W + p
    p = I_FS * R_M * (a * (r_h + R_W) + r_h * R_W) / (e_bat * r_h - I_FS * R_M * (a + r_h))
    rb = R_W + p
    return p, a + r_h * rb / (r_h + rb)


def nodal_deflection(e_bat, r_s, r_h, r_a, r_x):
    """Independent nodal solve (numpy) of the shunt-adjusted network: movement current / I_fs.

    Nodes: bp (battery plus), ox, m, terminal plus; com is ground. The battery is its EMF in
    series with r_b from bp to plus (Norton form), R_x from com to plus.
    """
    nodes = {"bp": 0, "ox": 1, "m": 2, "plus": 3}
    g = np.zeros((4, 4))
    i = np.zeros(4)

    def stamp(a, b, r):
        ga = 1.0 / r
        for x in (a, b):
            if x is not None:
                g[nodes[x], nodes[x]] += ga
        if a is not None and b is not None:
            g[nodes[a], nodes[b]] -= ga
            g[nodes[b], nodes[a]] -= ga

    stamp("bp", "plus", R_B)
    i[nodes["bp"]] += e_bat / R_B  # the EMF as a Norton source: E / r_b into bp, out of plus
    i[nodes["plus"]] -= e_bat / R_B
    stamp("bp", "ox", r_s)
    if r_h is not None:
        stamp("ox", None, r_h)
    stamp("ox", "m", R_W)
    stamp("m", None, R_M)
    stamp("m", None, r_a)
    stamp("plus", None, r_x)
    v = np.linalg.solve(g, i)
    return v[nodes["m"]] / R_M / I_FS


@pytest.mark.parametrize("position, r_s, r_h", [("x1", R_S1, R_H1), ("x10", R_S2, None)])
def test_centre_after_re_zeroing_at_end_of_life(position, r_s, r_h):
    """Shunt zero adjust: the centre after re-zeroing at the end-of-life battery, three ways: the closed
    form (docs/ohms.md), an independent numpy nodal solve, and planner.ohms through the solver."""
    p, rc = centre_after_zeroing(E_MIN, r_s, r_h)
    r_a = R_M * p / (R_M - p)
    # the independent solve: full deflection at R_x = 0 (tiny) and half at the closed-form centre
    # tolerance: round-off of a 4-node solve, far below 1e-9
    np.testing.assert_allclose(nodal_deflection(E_MIN, r_s, r_h, r_a, 1e-12), 1.0, rtol=1e-9)
    np.testing.assert_allclose(nodal_deflection(E_MIN, r_s, r_h, r_a, rc), 0.5, rtol=1e-9)
    eng = _engine(SHUNT_ADJUST)
    op = ohms.parts_of(eng, position)
    z = ohms.zero(eng, op, [E_MIN])
    assert z.zeroed[0]
    # the setting the planner found is the closed form's R_a less the fixed part
    # tolerance: the zeroing is a Moebius fit polished to |D - 1| < 1e-13 (linear network)
    np.testing.assert_allclose(z.setting[0] + R_F, r_a, rtol=1e-9)
    d = ohms.deflection(eng, op, [rc], [E_MIN], z.setting)
    np.testing.assert_allclose(d, 0.5, rtol=1e-9)


def test_zero_span_brackets_the_battery_and_the_reading_is_exact_at_nominal():
    """The adjuster's travel zeroes the meter from below E_min to above E_max on both ranges, and at the
    nominal battery the nominal scale reads every R_x back (closed form D = R_c / (R_c + R_x): Lessons in
    Electric Circuits, "Ohmmeter design")."""
    eng = _engine(SHUNT_ADJUST)
    centre = {}
    for name in ("x1", "x10"):
        op = ohms.parts_of(eng, name)
        lo, hi = ohms.zero_span(eng, op)
        assert lo < E_MIN and hi > E_MAX
        centre[name] = ohms.Scale(eng, op).center_ohm
    # x1 reads its own arc; x10 (a decade up) reads x1's arc times 10: R = 10 R_c,x1 R_x / R_c,x10
    # tolerance: interpolation of 1/D - 1, which is linear in R_x here (round-off only)
    np.testing.assert_allclose(ohms.apply_reading(eng, "x1", 3333.0)["reading_ohm"], 3333.0, rtol=1e-9)
    np.testing.assert_allclose(ohms.apply_reading(eng, "x10", 3333.0)["reading_ohm"],
                               10 * centre["x1"] * 3333.0 / centre["x10"], rtol=1e-9)


@pytest.mark.usefixtures("ngspice")
def test_shunt_adjusted_ohmmeter_against_ngspice():
    """The network with battery, adjuster and range shunt against ngspice at several R_x (independent
    simulator; the same element equations)."""
    import spice

    eng = _engine(SHUNT_ADJUST)
    op = ohms.parts_of(eng, "x1")
    z = ohms.zero(eng, op, [E_NOM])
    s = float(z.setting[0])
    r_x = [1.0, 100.0, 1000.0, 10000.0, 1e6]
    d = ohms.deflection(eng, op, r_x, E_NOM, s)
    for rx, dd in zip(r_x, d):
        deck = "\n".join([
            "shunt adjusted ohmmeter, range x1",
            f"VB bp bpi DC {E_NOM!r}", f"RB bpi plus {R_B!r}", f"RS1 bp ox {R_S1!r}", f"RH1 ox 0 {R_H1!r}",
            f"RW ox m {R_W!r}", "VMOVE m mi DC 0", f"RM mi 0 {R_M!r}", f"RF m a2 {R_F!r}", f"RV a2 0 {s!r}",
            f"RX 0 plus {rx!r}", ".control", "set wr_singlescale", "set numdgt=17", "op",
            f"wrdata {spice.OUT_FILE} i(vmove)", ".endc", ".end", ""])
        i_m = spice._run_raw(deck)[0, -1]
        # tolerance: the oracle tests' 1e-6 of the movement current (tests/test_spice.py)
        np.testing.assert_allclose(i_m / I_FS, dd, rtol=1e-6)


def test_example_project_ohms_ranges():
    """projects/pocket_ohmmeter.yaml: the sizer makes each centre the asked one (to the E96 choice, within
    0.25 % x 4 parts) and the adjuster zeroes over each battery's span (design contract, "Resistance
    (ohms) ranges"); the contract's JSON fields are present."""
    from pathlib import Path

    from planner.accuracy import check_project
    from planner.project import load

    path = Path(__file__).resolve().parent.parent / "projects" / "pocket_ohmmeter.yaml"
    res = check_project(build(load(path)), samples=200)
    ohm = [p for p in res["positions"] if p["measures"] == "resistance"]
    assert [p["name"] for p in ohm] == ["R 20 ohm", "R 200 ohm", "R 2 kohm", "R 20 kohm"]
    for p in ohm:
        assert abs(p["center_ohm"] - p["center_target_ohm"]) <= 0.01 * p["center_target_ohm"]
        lo, hi = p["zero_adjust_span_v"]
        assert lo < p["battery_span_v"][0] and hi > p["battery_span_v"][1]
        for key in ("center_error_pct", "open_circuit_voltage_v", "short_circuit_current_a", "yield_fraction"):
            assert key in p
        # the short-circuit current of a zeroed series ohmmeter is E_max / R_c (Ohm's law)
        e_max = p["battery_span_v"][1]
        np.testing.assert_allclose(p["short_circuit_current_a"], e_max / p["center_ohm"], rtol=0.05)


def test_battery_left_in_a_loop_drives_current_on_another_position():
    """A battery the switch leaves in a loop that does not pass the input still drives its loop:
    I = E / (r_b + R) by Ohm's law, though the loop hangs on the measured circuit by one node."""
    text = """
title: battery loop
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 2.5}
network:
  elements:
    - {name: M1, kind: movement, between: [m, com]}
    - {name: R1, kind: resistor, between: [vin, m], value: 48 kohm}
    - {name: S1, kind: contact, between: [vin, plus], closed_in: [2.5 V]}
    - {name: B1, kind: battery, between: [bp, com], voltage: 1.5 V, internal_resistance: 0.5 ohm}
    - {name: R2, kind: resistor, between: [bp, x], value: 1 kohm}
    - {name: S2, kind: contact, between: [x, com], closed_in: [2.5 V]}
  positions:
    - {name: 2.5 V, measures: voltage, full_scale: 2.5 V, input: [plus, com]}
"""
    eng = _engine(text)
    op = eng.operate("2.5 V", [2.5])
    # tolerance: round-off of a linear solve
    np.testing.assert_allclose(op.element("R2").current_a[0, 0], 1.5 / 1000.5, rtol=1e-12)
    np.testing.assert_allclose(op.movement_multiple[0, 0], 2.5 / 50e3 / I_FS, rtol=1e-12)  # unchanged reading


def test_reversed_battery_drives_the_pointer_below_zero():
    """The battery put in backwards with the probes shorted: in a linear network reversing the only
    EMF reverses every current (superposition), so the zeroed meter is driven to -1 x I_fs; the
    faults matrix judges it on the zero-end stop (pegs)."""
    from planner.faults import faults_project

    design = ohms.zeroed_design(build(loads(SHUNT_ADJUST)), "x1")
    res = faults_project(design, position="x1")
    case = next(c for c in res["cases"] if c["stimulus"] == "battery reversed")
    # tolerance: the zeroing's |D - 1| < 1e-13 and round-off
    np.testing.assert_allclose(case["movement_mean_multiple"], -1.0, rtol=1e-9)
    assert case["verdict"] == "pegs"


def test_ohms_scale_plate_marks_the_centre_at_half_deflection():
    """planner scale: the ohms arc of the shunt-adjusted meter marks each R at D = R_c / (R_c + R) of the
    nominal (zeroed) response (Lessons in Electric Circuits, "Ohmmeter design"); the centre at 0.5."""
    from planner.scale import scale_json, scale_project

    design = build(loads(SHUNT_ADJUST))
    eng = Engine(design)
    defs = ohms.scale_definitions(eng)
    assert [d.name for d in defs] == ["ohms"]  # centres a decade apart share one arc
    res = scale_json(scale_project(design, engine=eng, defs=defs))
    first = next(s for s in res["scales"] if s["name"] == "ohms")
    rc = ohms.Scale(eng, ohms.parts_of(eng, "x1")).center_ohm
    for t in first["ticks"]:
        if t["value"] is not None and t["value"] > 0:
            # tolerance: the tick fractions come from the solved response (linear network: round-off)
            np.testing.assert_allclose(t["fraction"], rc / (rc + t["value"]), rtol=1e-9)


def test_sized_ohms_network_written_and_read_back():
    """planner size --write-network: the battery, rheostat and resistance positions written as project-file
    text load back to the same elements (round trip; the contract's keys)."""
    from pathlib import Path

    from planner.project import load
    from planner.sizing import network_yaml, size

    path = Path(__file__).resolve().parent.parent / "projects" / "pocket_ohmmeter.yaml"
    spec = load(path)
    sizing = size(spec)
    again = loads(network_yaml(spec, sizing), path=str(path))
    import dataclasses

    def ours(net):
        return [dataclasses.replace(e, line=None) for e in net.elements if e.kind in ("battery", "rheostat")]

    assert ours(again.network) == ours(sizing.network) and len(ours(again.network)) == 3
    assert [dataclasses.replace(p, line=None) for p in again.network.positions] == \
        [dataclasses.replace(p, line=None) for p in sizing.network.positions]


def test_apply_ohms_zero_is_full_deflection_through_the_cli(tmp_path):
    """planner apply --ohms 0: the probes shorted on a zeroed ohms range read full scale (design contract,
    "before reading, the rheostat is set so that R_x = 0 gives full deflection")."""
    import json
    import subprocess
    import sys
    from pathlib import Path

    path = Path(__file__).resolve().parent.parent / "projects" / "pocket_ohmmeter.yaml"
    r = subprocess.run([sys.executable, "-m", "planner", "apply", str(path), "--position", "R 2 kohm", "--ohms", "0",
                        "--json"], capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    res = json.loads(r.stdout)
    # tolerance: the zeroing stops at |D - 1| < 1e-13; round-off
    np.testing.assert_allclose(res["movement_multiple"], 1.0, rtol=1e-9)
    np.testing.assert_allclose(res["ohms"]["deflection"], 1.0, rtol=1e-9)
    assert res["ohms"]["reading_ohm"] == 0.0 and res["verdict"] == "ok"


# --- misrange: what the ohms ranges of projects/pocket_ohmmeter.yaml survive, and what they read -------------------

@pytest.fixture(scope="module")
def pocket_faults():
    from pathlib import Path

    from planner.faults import faults_project
    from planner.project import load

    path = Path(__file__).resolve().parent.parent / "projects" / "pocket_ohmmeter.yaml"
    return faults_project(ohms.zeroed_design(build(load(path))))  # as planner faults: adjuster at its nominal zero


def test_pocket_fault_matrix_every_case_survives(pocket_faults):
    """The example's misrange matrix: every case ok, pegs or opens (a fuse), on every position, both polarities
    of the declared maximum input, the bench supply and the reversed battery; every transition of either
    contact style survives."""
    res = pocket_faults
    assert len(res["cases"]) == 29
    assert {c["verdict"] for c in res["cases"]} <= {"ok", "pegs", "opens"}
    assert {t["verdict"] for t in res["transitions"]} <= {"ok", "pegs", "opens"}
    assert res["contact_style_needed"] == "either" and res["requirements_met"]
    by = {(c["position"], c["stimulus"]): c for c in res["cases"]}
    for pos in ("R 20 ohm", "R 200 ohm", "R 2 kohm"):  # behind the crowbar: the ohms fuse opens
        for stim in ("bench supply", "max input", "max input reversed"):
            c = by[(pos, stim)]
            assert c["verdict"] == "opens" and c["fuse"] == "F1", (pos, stim)
    # the bench supply crosses over to its 3 A limit through the crowbar: F1's time is the adiabatic
    # extension of its last curve point, 4 ms (1.6 A / 3 A)^2 (IEC 60127-1 pre-arcing I2t; hand computation)
    c = by[("R 20 ohm", "bench supply")]
    np.testing.assert_allclose(c["pre_arcing_time_s"], 4e-3 * (1.6 / 3.0) ** 2, rtol=1e-6)  # 3 A to round-off
    # while F1 opens the 1.5 V cell carries the pulse, judged on its short-circuit current E / r = 1.5 V / 0.5 ohm
    b1 = [s for s in by[("R 20 ohm", "max input")]["stresses"] if s["part"] == "B1"]
    assert all(s["rating"] == pytest.approx(3.0) for s in b1 if "short-time" in s["limit_name"])
    # the 9 V range has no crowbar: its parts and the movement's clamp take 50 V for good
    assert by[("R 20 kohm", "max input")]["verdict"] == "pegs"


def test_fault_reading_of_an_ohms_range_is_the_ohms_value_on_its_arc(pocket_faults):
    """reading on a resistance position: the R_x the arc marks at the pointer's deflection, None past
    either end (beyond the 0 ohm mark, or at/below the infinity mark); a series ohmmeter's arc is
    D = R_c / (R_c + R_x) (Lessons in Electric Circuits, Vol. I, ch. 8), so R = R_c (1/D - 1)."""
    res = pocket_faults
    for c in res["cases"] + res["transitions"]:
        if not c["position"].startswith("R "):
            continue
        d = c["movement_mean_multiple"]
        if d <= 0.0 or d > 1.0 + 1e-9:
            assert c["reading"] is None, (c["state"], c["stimulus"], d)
        else:
            centre = {"R 20 ohm": 20.0, "R 200 ohm": 200.0, "R 2 kohm": 2e3, "R 20 kohm": 2e4}[c["position"]]
            # tolerance: the drawn arc is the solved nominal one, whose centre is the asked one to the E96 choice
            np.testing.assert_allclose(c["reading"], centre * (1.0 / d - 1.0), rtol=5e-3, atol=centre * 1e-6)
    by = {(c["position"], c["stimulus"]): c for c in res["cases"]}
    assert by[("R 20 ohm", "battery reversed")]["reading"] is None  # D = -1: against the zero stop
    assert by[("R 2 kohm", "max input")]["reading"] is None  # D = 5.9: past the 0 ohm mark
    assert any(c["reading"] is not None and c["reading"] > 0 for c in res["transitions"]
               if c["position"].startswith("R "))


def test_pointer_reading_at_the_ends_of_the_arc():
    eng = Engine(build(loads(SERIES_OHMMETER, "x.yaml")))
    (pos,) = eng.positions
    scale = ohms.MarkedScale(eng, pos)
    rc = 30000.0  # R_int = 27999 + 1 ohm + 2 kohm (Lessons in Electric Circuits, "Ohmmeter design")
    assert ohms.pointer_reading(scale, 1.0) == 0.0
    np.testing.assert_allclose(ohms.pointer_reading(scale, 0.5), rc, rtol=1e-9)  # ideal battery: exact to round-off
    np.testing.assert_allclose(ohms.pointer_reading(scale, 0.25), 3 * rc, rtol=1e-9)
    assert ohms.pointer_reading(scale, 0.0) is None and ohms.pointer_reading(scale, -0.3) is None
    assert ohms.pointer_reading(scale, 1.05) is None
