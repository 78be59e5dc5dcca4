"""Tests of planner.faults: the misrange matrix, protection curves, transitions, cautions."""

from __future__ import annotations

import json
import math
from dataclasses import replace

import numpy as np
import pytest

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.errors import ProjectError
from planner.faults import (cautions_for, category_impulse, faults_project, format_faults, stimuli_for)
from planner.stress import assess

from jsontree import assert_same_json

OVERLOAD = m.Overload(peg=1.1, short_time=10.0, continuous=1.2)
SI = m.DiodeModel("si", i_s_a=5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9, max_current_a=0.2, surge_current_a=1.0,
                  max_power_w=0.5)


def movement(i_fs, r_m):
    return m.Movement(i_fs_a=i_fs, r_coil_ohm=r_m, class_index=1.5, tempco_per_k=0.0, overload=OVERLOAD)


def res(name, a, b, value, power=0.25, vmax=250.0):
    return m.Resistor(name, a, b, value, tolerance=0.0, tempco_per_k=0.0, power_w=power, max_voltage_v=vmax)


def voltmeter(clamps=True, faults=m.Faults(max_input_v=50.0), series_clamp=False):
    """50 uA, 2 kohm movement; chain 10 V / 50 V; optional silicon pair across the movement."""
    els = [m.MovementElement("M1", "m", "com"),
           res("R1", "t1", "m", 198e3, power=2.0, vmax=1000.0),
           res("R2", "t2", "t1", 800e3, power=2.0, vmax=1000.0),
           m.Contact("S1", "plus", "t1", ("10 V",)), m.Contact("S2", "plus", "t2", ("50 V",))]
    if clamps:
        els += [m.Diode("D1", "m", "com", "si"), m.Diode("D2", "com", "m", "si")]
    if series_clamp:
        els += [res("RC", "m", "k", 10.0), m.Diode("D3", "k", "com", "si")]
    pos = (m.Position("10 V", "voltage", 10.0, ("plus", "com")), m.Position("50 V", "voltage", 50.0, ("plus", "com")))
    return m.Spec("voltmeter", movement(50e-6, 2e3), m.Parts(diodes={"si": SI}), faults=faults,
                  network=m.NetworkSpec(tuple(els), pos))


def separate_ammeter(contact_style=None, faults=m.Faults()):
    """100 uA, 1 kohm movement permanently across the input; one shunt per range."""
    rs1 = 1e3 * 100e-6 / (1e-3 - 100e-6)  # R = R_m I_fs / (I - I_fs), common practice
    rs2 = 1e3 * 100e-6 / (10e-3 - 100e-6)
    els = (m.MovementElement("M1", "in", "com"), res("RS1", "s1", "com", rs1), res("RS2", "s2", "com", rs2),
           m.Contact("S1", "in", "s1", ("1 mA",)), m.Contact("S2", "in", "s2", ("10 mA",)))
    pos = (m.Position("1 mA", "current", 1e-3, ("in", "com")), m.Position("10 mA", "current", 10e-3, ("in", "com")))
    return m.Spec("separate shunts", movement(100e-6, 1e3), faults=faults,
                  network=m.NetworkSpec(els, pos, contact_style=contact_style))


def ring_ammeter():
    """The same movement on an Ayrton ring for 1 mA / 10 mA.

    R_t = R_m I_fs / (I_1 - I_fs) = 111.11 ohm; tap for 10 mA at I_fs (R_t + R_m) / I_2 = 11.111 ohm
    (Ayrton shunt formulas; Wikipedia, "Ayrton shunt").
    """
    r_t = 1e3 * 100e-6 / (1e-3 - 100e-6)
    r_b = 100e-6 * (r_t + 1e3) / 10e-3
    els = (m.MovementElement("M1", "t1", "com"), res("RA", "t1", "t2", r_t - r_b), res("RB", "t2", "com", r_b),
           m.Contact("S1", "in", "t1", ("1 mA",)), m.Contact("S2", "in", "t2", ("10 mA",)))
    pos = (m.Position("1 mA", "current", 1e-3, ("in", "com")), m.Position("10 mA", "current", 10e-3, ("in", "com")))
    return m.Spec("ring", movement(100e-6, 1e3), network=m.NetworkSpec(els, pos))


def test_category_impulse_table():
    # IEC 61010-1 / 61010-2-030 rated impulse voltages as quoted in secondary sources (verify):
    # 300 V: 2500/4000/6000 V, 1000 V: 6000/8000/12000 V; 12 ohm CAT II, 2 ohm CAT III/IV
    assert category_impulse("CAT II 300 V")[:2] == (2500.0, 12.0)
    assert category_impulse("CAT III 600 V")[:2] == (6000.0, 2.0)
    assert category_impulse("CAT IV 1000 V")[:2] == (12000.0, 2.0)
    assert category_impulse("CAT III 150 V")[:2] == (2500.0, 2.0)
    assert category_impulse("cat ii 250 V") == (2500.0, 12.0, "CAT II 300 V")  # the next higher row
    with pytest.raises(ProjectError):
        category_impulse("CAT II 1500 V")
    with pytest.raises(ProjectError):
        category_impulse("CAT I 300 V")


def test_built_in_stimuli_per_position():
    spec = voltmeter()
    net = spec.network
    names = {p.name: {s.name: s for s in stimuli_for(spec, net, p)} for p in net.positions}
    assert names["10 V"]["range up"].value == 50.0 and "range down" not in names["10 V"]
    assert names["50 V"]["range down"].value == 10.0 and "range up" not in names["50 V"]
    assert names["10 V"]["max input"].value == 50.0 and names["10 V"]["max input reversed"].value == -50.0
    assert all("mains on A range" not in v for v in names.values())
    amm = separate_ammeter()
    for p in amm.network.positions:
        mains = {s.name: s for s in stimuli_for(amm, amm.network, p)}["mains on A range"]
        assert (mains.kind, mains.value, mains.waveform, mains.r_source_ohm) == ("voltage", 230.0, "sine", 0.5)
    cat = replace(spec, faults=m.Faults(category="CAT II 300 V"))
    imp = [s for s in stimuli_for(cat, net, net.positions[0]) if s.waveform == "impulse"]
    assert len(imp) == 1 and imp[0].value == 2500.0 and imp[0].r_source_ohm == 12.0


def test_impulse_is_judged_on_peak_quantities_only():
    spec = replace(voltmeter(clamps=False), faults=m.Faults(category="CAT II 300 V"))
    imp = [s for s in stimuli_for(spec, spec.network, spec.network.positions[0]) if s.waveform == "impulse"]
    (case,) = assess(Engine(build(spec)), "10 V", imp)
    quantities = {x["quantity"] for x in case["stresses"]}
    # no power, average or pointer checks; a resistor's impulse energy is a pulse on peak quantities
    assert quantities == {"peak voltage", "peak multiple", "impulse energy"}
    r1 = [x for x in case["stresses"] if x["part"] == "R1" and x["quantity"] == "peak voltage"][0]
    # voltage divider (hand computation): 2500 V through 12 ohm into R1 + R_m
    np.testing.assert_allclose(r1["value"], 2500.0 * 198e3 / (12.0 + 198e3 + 2e3), rtol=1e-12)
    # R1's 1000 V limiting element voltage exceeded at 2.5 kV: damage, but no hazard rule (docs/safety.md)
    assert case["verdict"] == "overstress" and case["hazards"] == []
    assert r1["exceeded"] and r1["limit_name"] == "resistor limiting element voltage"


def test_matrix_contract_acceptance_and_requirements():
    spec = voltmeter()
    res_ = faults_project(spec)
    json.dumps(res_, allow_nan=False)
    assert {"cases", "transitions", "protection_curves", "cautions", "accepted", "requirements_met",
            "contact_style_needed"} <= set(res_)
    for c in res_["cases"]:
        assert {"position", "stimulus", "movement_multiple", "verdict", "stresses", "movement_rms_multiple",
                "movement_mean_multiple"} <= set(c)
        for x in c["stresses"]:
            assert {"part", "quantity", "value", "rating", "ratio"} <= set(x)
    failing = [c for c in res_["cases"] if c["verdict"] in ("overstress", "hazard")]
    assert failing and res_["requirements_met"] is False
    # 50 V on the 10 V range: the clamps keep the movement near its short-time limit but above
    # its continuous one
    up = [c for c in res_["cases"] if (c["position"], c["stimulus"]) == ("10 V", "range up")][0]
    assert up["verdict"] == "overstress"

    accept = tuple(m.Acceptance(c["position"], c["stimulus"], "fused test leads") for c in failing)
    accepted = faults_project(replace(spec, faults=replace(spec.faults, accept=accept)))
    assert accepted["requirements_met"] is True
    assert len(accepted["accepted"]) == len(failing)
    kept = [c for c in accepted["cases"] if c["accepted"]]
    assert len(kept) == len(failing) and all(c["verdict"] in ("overstress", "hazard") for c in kept)  # never hidden
    assert all(c["accept_reason"] == "fused test leads" for c in kept)

    typo = replace(spec, faults=replace(spec.faults, accept=(m.Acceptance("10 V", "range upp", "x"),)))
    assert faults_project(typo)["accept_unmatched"][0]["stimulus"] == "range upp"


def test_only_failing_and_position_filters():
    spec = voltmeter()
    full = faults_project(spec)
    only = faults_project(spec, only_failing=True)
    assert only["requirements_met"] == full["requirements_met"]
    assert all(c["verdict"] in ("overstress", "hazard") for c in only["cases"] + only["transitions"])
    one = faults_project(spec, position="50 V")
    assert {c["position"] for c in one["cases"]} == {"50 V"}
    assert all("50 V" in t["state"] for t in one["transitions"])
    with pytest.raises(ProjectError):
        faults_project(spec, position="60 V")


def test_protection_curve_halving_input():
    spec = voltmeter(series_clamp=True, faults=m.Faults(max_input_v=500.0))
    eng = Engine(build(spec))
    res_ = faults_project(spec, engine=eng)
    curve = [c for c in res_["protection_curves"] if c["position"] == "10 V"][0]
    assert curve["has_clamps"]
    x = np.array(curve["applied"])
    np.testing.assert_allclose(x[[0, -1]], [-500.0, 500.0])  # the declared maximum input
    # without the clamps the network is linear: I_m = V / (R1 + R_m) (Ohm's law)
    np.testing.assert_allclose(curve["movement_current_unclamped_a"], x / 200e3, rtol=1e-12, atol=1e-18)
    xh = curve["halving_input_positive"]
    assert xh is not None and 10.0 < xh < 500.0
    # D3 (behind RC) conducts for positive inputs only, so the negative side halves later
    assert curve["halving_input_negative"] < -xh
    i_c = eng.operate("10 V", [xh]).movement_current_a[0, 0]
    np.testing.assert_allclose(i_c / (xh / 200e3), 0.5, rtol=2e-2)  # linear interpolation on a 201-point grid
    bare = faults_project(voltmeter(clamps=False))
    assert all(c["halving_input_positive"] is None and not c["has_clamps"] for c in bare["protection_curves"])


def test_separate_shunts_need_make_before_break():
    # common practice: with individual shunts, break-before-make leaves the movement alone
    # in the circuit for an instant, so the whole input current goes through it
    res_ = faults_project(separate_ammeter())
    bbm = [t for t in res_["transitions"] if t["state"] == "1 mA -> 10 mA (break-before-make)"][0]
    np.testing.assert_allclose(bbm["movement_multiple"], 1e-3 / 100e-6, rtol=1e-12)  # whole 1 mA in the coil
    assert bbm["verdict"] == "overstress"
    mbb = [t for t in res_["transitions"] if t["style"] == "make_before_break"]
    assert all(t["verdict"] in ("ok", "pegs") for t in mbb)
    assert res_["contact_style_needed"] == "make_before_break"


def test_ayrton_ring_is_safe_either_way():
    # common practice: the Ayrton ring stays across the movement; break-before-make only
    # opens the input, make-before-break only shorts part of the ring
    res_ = faults_project(ring_ammeter())
    bbm = [t for t in res_["transitions"] if t["style"] == "break_before_make"]
    assert bbm and all(t["movement_multiple"] == 0.0 for t in bbm)
    assert all(t["verdict"] in ("ok", "pegs") for t in res_["transitions"])
    assert res_["contact_style_needed"] == "either"


def test_chain_multiplier_wants_break_before_make():
    # make-before-break shorts the segment between two taps while turning down with the
    # higher range's full scale applied: the lower range sees 5 x its full scale
    res_ = faults_project(voltmeter())
    down = [t for t in res_["transitions"]
            if t["state"] == "50 V -> 10 V (make-before-break)" and t["stimulus"] == "full scale"][0]
    up = [c for c in res_["cases"] if (c["position"], c["stimulus"]) == ("10 V", "range up")][0]
    np.testing.assert_allclose(down["movement_multiple"], up["movement_multiple"], rtol=1e-12)  # the same circuit
    assert down["verdict"] == "overstress"
    assert res_["contact_style_needed"] == "break_before_make"


def test_declared_contact_style_decides_the_requirement():
    base = separate_ammeter()
    failing = [c for c in faults_project(base)["cases"] if c["verdict"] in ("overstress", "hazard")]
    accept = m.Faults(accept=tuple(m.Acceptance(c["position"], c["stimulus"], "bench use only") for c in failing))
    good = faults_project(separate_ammeter("make_before_break", accept))
    bad = faults_project(separate_ammeter("break_before_make", accept))
    assert good["requirements_met"] is True
    assert bad["requirements_met"] is False
    assert bad["contact_style_needed"] == "make_before_break"


def test_voltage_on_current_range_case_in_matrix():
    res_ = faults_project(separate_ammeter())
    mains = [c for c in res_["cases"] if c["stimulus"] == "mains on A range"]
    assert len(mains) == 2 and all(c["verdict"] == "hazard" for c in mains)
    assert any("mains on A range" in c for c in res_["cautions"])


def test_cautions():
    # IEC 61010-1:2010 clause 6.3.1 hazardous-live limits: 70 V DC
    low = voltmeter(faults=m.Faults())
    assert cautions_for(low) == []
    high = voltmeter(faults=m.Faults(max_input_v=250.0))
    text = " ".join(cautions_for(high))
    assert "Hazardous voltage" in text and "IEC 61010-1" in text and "not a certification" in text
    assert "local codes" in text and "licensed practice" in text
    src = voltmeter(faults=m.Faults(sources=(m.FaultSource("outlet", "voltage", 230.0, "sine", 0.5),)))
    assert any("outlet" in c for c in cautions_for(src))
    assert faults_project(high)["cautions"][:1] == cautions_for(high)[:1]


def test_format_faults_fits_100_columns():
    spec = voltmeter(faults=m.Faults(max_input_v=250.0, category="CAT III 300 V",
                                     sources=(m.FaultSource("outlet", "voltage", 230.0, "sine", 0.5),
                                              m.FaultSource("battery", "voltage", 13.8, "dc", 0.01),
                                              m.FaultSource("lab supply", "voltage", 30.0, "dc", 0.05, 3.0),
                                              m.FaultSource("current source", "current", 0.1))))
    res_ = faults_project(spec)
    text = format_faults(res_)
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= 100
    header = [line for line in lines if line.startswith("position")]
    assert header and "S1" in header[0]
    assert "S1 = outlet" in text and "CAT III 300 V impulse" in text
    assert "Requirements NOT met." in text and "CAUTION" in text
    assert math.isfinite(max(c["movement_multiple"] for c in res_["cases"]))


def test_accept_entry_listing_several_cases():
    spec = voltmeter()
    res_ = faults_project(spec)
    failing = {(c["position"], c["stimulus"]) for c in res_["cases"] if c["verdict"] in ("overstress", "hazard")}
    stims = sorted({c["stimulus"] for c in res_["cases"]})
    # one entry for every position and every stimulus: only the failing cases are accepted, and the
    # combinations that do not exist ("range up" on the top range) are not reported as typos
    many = tuple(m.Acceptance(p, st, "clamped movement", expanded=True) for p in ("10 V", "50 V") for st in stims)
    out = faults_project(replace(spec, faults=replace(spec.faults, accept=many)))
    assert {(a["position"], a["stimulus"]) for a in out["accepted"]} == failing
    assert all(c["accepted"] == ((c["position"], c["stimulus"]) in failing) for c in out["cases"])
    assert out["accept_unmatched"] == [] and out["requirements_met"] is True
    # an unknown name in a listed entry is still reported
    typo = many + (m.Acceptance("10 V", "rnage up", "x", expanded=True),)
    out = faults_project(replace(spec, faults=replace(spec.faults, accept=typo)))
    assert [a["stimulus"] for a in out["accept_unmatched"]] == ["rnage up"]


def test_example_multimeter_survives_its_category_and_max_input_without_accept_entries():
    from pathlib import Path

    from planner.project import load

    spec = load(Path(__file__).resolve().parents[1] / "projects" / "bench_multimeter.yaml")
    assert spec.faults.accept == () and spec.faults.category == "CAT II 300 V"
    res_ = faults_project(spec)
    bad = [(c["position"], c["stimulus"]) for c in res_["cases"] if c["verdict"] not in ("ok", "pegs", "opens")]
    # every case survives: where a fuse opens (verdict `opens`), every part has stood its pulse;
    # the next range's full scale on 100 mA is a current source of bounded compliance (30 V)
    assert bad == [] and res_["requirements_met"] is True
    # a fuse opening is the only way a current range survives the outlet; a PTC trip is no `opens`
    assert {c["fuse"] for c in res_["cases"] if c["verdict"] == "opens"} <= {"F1", "F2"}
    # the CAT II 300 V impulse (2.5 kV through 12 ohm, secondary source) on every position
    imp = [c for c in res_["cases"] if c["stimulus"] == "CAT II 300 V impulse"]
    assert len(imp) == 10 and all(c["verdict"] == "ok" for c in imp)
    # a voltage range at the maximum input: the PTC trips against the chain clamp
    (c,) = [c for c in res_["cases"] if (c["position"], c["stimulus"]) == ("500 mV", "max input")]
    assert c["fuse"] == "RT1" and c["pre_arcing_time_s"] < 0.02
    rt = [f for f in c["fuses"] if f["name"] == "RT1" and not f.get("after")][0]
    assert rt["trips"] and rt["resets"]
    # a mA range at the maximum input: the crowbar fires and the mA fuse opens, not the main fuse
    (c,) = [c for c in res_["cases"] if (c["position"], c["stimulus"]) == ("10 mA", "max input")]
    assert c["fuse"] == "F2" and c["verdict"] == "opens"
    # break-before-make contacts survive every turn
    assert all(t["verdict"] in ("ok", "pegs", "opens") for t in res_["transitions"]
               if t["style"] == "break_before_make")
    text = format_faults(res_)
    assert max(len(line) for line in text.splitlines()) <= 100


def _example(name: str):
    from pathlib import Path

    from planner.project import load

    return build(load(Path(__file__).resolve().parents[1] / "projects" / f"{name}.yaml"))


@pytest.mark.parametrize("name", ["pocket_ohmmeter", "service_multimeter"])
def test_transitions_judged_beside_the_positions_give_the_same_matrix(name):
    """The transitions judged in a child process give the JSON of the matrix judged in one process."""
    design = _example(name)
    alone = faults_project(design, parallel=False)
    beside = faults_project(design, parallel=True)
    assert_same_json(beside, alone)
    assert beside["transitions"]  # there were transitions to share out


def test_a_transition_that_fails_in_the_child_raises_its_own_error_here(monkeypatch):
    """The child's failure is not turned into text: the transitions are judged again here and raise."""
    import planner.faults.matrix as fm
    from planner.errors import SolveError

    def fails(*args, **kwargs):
        raise SolveError("no operating point for this transition")

    monkeypatch.setattr(fm, "_transition_cases", fails)
    with pytest.raises(SolveError, match="no operating point"):
        faults_project(_example("pocket_ohmmeter"), parallel=True)
