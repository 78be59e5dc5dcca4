"""Tests of planner.stress: solving a stimulus, its cycle statistics, verdicts, planner apply.

The fuses, the event while they open and the pulse ratings are in tests/test_stress_fuses.py.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess

import numpy as np
import pytest
from scipy.special import wrightomega

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.errors import UsageError
from planner.stress import Stimulus, apply_stimulus, assess, cycle_stats, format_apply, hazardous_live
from stress_circuits import clamp_spec, movement, res, separate_ammeter, unclamped_voltmeter

# exact SI values (BIPM, SI Brochure, 9th ed., 2019)
K_B = 1.380649e-23
Q_E = 1.602176634e-19


def vt(t_k):
    return K_B * t_k / Q_E


def banwell_current(v, r, i_s, nvt):
    """Exact diode current through a series resistance, Wright omega form.

    Banwell and Jayakumar, "Exact analytical solution for current flow through diode
    with series resistance", Electronics Letters 36(4), 291-292, 2000.
    """
    return (nvt / r) * np.real(wrightomega(np.log(i_s * r / nvt) + (v + i_s * r) / nvt)) - i_s


def test_banwell_formula_reproduces_published_check_values():
    # [calc] values from the Banwell-Jayakumar formula (Electronics Letters 36(4), 2000): I_s = 1e-14 A, n = 1, 300 K
    nvt = vt(300.0)
    got = [banwell_current(5.0, 1e3, 1e-14, nvt), banwell_current(10.0, 10e3, 1e-14, nvt),
           banwell_current(100.0, 100e3, 1e-14, nvt)]
    np.testing.assert_allclose(got, [4.307456e-3, 0.9346955e-3, 0.9934538e-3], rtol=2e-7)  # 7 digits published


@pytest.mark.parametrize("volts", [1.0, 10.0, 100.0, 300.0, 1000.0])
def test_clamp_across_movement_matches_wright_omega(volts):
    # Banwell and Jayakumar, Electronics Letters 36(4) 2000: a diode with series resistance R
    # behind a Thevenin source. Movement in parallel with one diode (no leakage): the source
    # behind R1 and the coil R_m form V_th = V R_m / (R1 + R_m), R_th = R1 || R_m, exactly.
    d = m.DiodeModel("si", i_s_a=5e-9, n=1.9, r_s_ohm=0.5)
    r1, r_m = 100e3, 2e3
    spec = clamp_spec(r1, r_m, d)
    nvt = d.n * vt(spec.ambient.t_ref_k)
    v_th = volts * r_m / (r1 + r_m)
    r_th = r1 * r_m / (r1 + r_m)
    i_d = banwell_current(v_th, r_th + d.r_s_ohm, d.i_s_a, nvt)
    i_m = (v_th - r_th * i_d) / r_m
    out = apply_stimulus(spec, "P", volts=volts)
    parts = {p["name"]: p for p in out["parts"]}
    np.testing.assert_allclose(out["movement_current_a"], i_m, rtol=1e-9)  # exact closed form vs Newton at 1e-13
    np.testing.assert_allclose(parts["D1"]["current_a"], i_d, rtol=1e-9)
    np.testing.assert_allclose(out["movement_multiple"], i_m / 50e-6, rtol=1e-9)


def test_misrange_power_in_multiplier_segment_matches_hand_computation():
    # hand computation (Ohm's and Joule's laws): 50 V on the 0.5 V range of an unclamped
    # chain: I = V / (R1 + R_m), P_R1 = I^2 R1 = V^2 R1 / (R1 + R_m)^2
    spec = unclamped_voltmeter()
    v = 50.0
    out = apply_stimulus(spec, "0.5 V", volts=v)
    parts = {p["name"]: p for p in out["parts"]}
    p_r1 = v ** 2 * 8e3 / (8e3 + 2e3) ** 2
    np.testing.assert_allclose(parts["R1"]["power_w"], p_r1, rtol=1e-12)  # linear network, exact
    assert out["verdict"] == "overstress"  # 50 V DC is below the 70 V DC hazardous-live limit
    r1_power = [x for x in out["stresses"] if x["part"] == "R1" and x["quantity"] == "power"][0]
    np.testing.assert_allclose(r1_power["ratio"], p_r1 / 0.25, rtol=1e-12)
    # the movement takes V / (R1 + R_m) = 5 mA = 100 x I_fs: far beyond its short-time overload
    np.testing.assert_allclose(out["movement_multiple"], v / 10e3 / 50e-6, rtol=1e-12)
    assert json.dumps(out, allow_nan=False)


def test_a_hazardous_input_alone_makes_no_hazard():
    # IEC 61010-1:2010 clause 6.3.1: 70 V DC is the hazardous-live limit for DC. Above it the
    # cautions appear, but the verdict follows the named rules (docs/safety.md): R1 at
    # 71^2 x 8k / 10k^2 = 0.40 W is 1.6 x its 0.25 W rating, below the 10 x of the ignition rule,
    # so the case is overstress, not hazard
    spec = unclamped_voltmeter()
    assert apply_stimulus(spec, "0.5 V", volts=69.0)["verdict"] == "overstress"
    out = apply_stimulus(spec, "0.5 V", volts=71.0)
    assert out["verdict"] == "overstress" and out["hazards"] == []
    assert out["cautions"] and any("IEC 61010-1" in c for c in out["cautions"])
    assert apply_stimulus(spec, "0.5 V", volts=0.5)["cautions"] == []
    # at 200 V R1 takes 200^2 x 8k / 10k^2 = 3.2 W = 12.8 x its rating, held indefinitely: ignition
    hot = apply_stimulus(spec, "0.5 V", volts=200.0)
    assert hot["verdict"] == "hazard"
    assert [(h["rule"], h["part"]) for h in hot["hazards"]] == [("ignition", "R1")]
    np.testing.assert_allclose(hot["hazards"][0]["value"], 200.0 ** 2 * 8e3 / 10e3 ** 2, rtol=1e-12)


def test_a_pegged_movement_at_a_hazardous_input_is_never_hazard_by_itself():
    # a 10 V range with its multiplier rated for anything: 100 V DC (hazardous, IEC 61010-1 6.3.1)
    # drives the movement to 100 / 200k / 50 uA = 10 x full scale (Ohm's law): the movement is
    # beyond its end stop and its limits, but no hazard rule applies to a movement
    spec = unclamped_voltmeter(power=1e3, vmax=1e6)
    out = apply_stimulus(spec, "10 V", volts=100.0)
    np.testing.assert_allclose(out["movement_mean_multiple"], 100.0 / 200e3 / 50e-6, rtol=1e-12)
    assert out["hazardous_voltage"] is True
    assert out["verdict"] == "overstress" and out["hazards"] == []
    assert out["decided_by"].startswith("M1 movement")


def test_sine_rms_power_of_linear_branch_is_vrms_squared_over_r():
    # a linear branch under a sine: P = V_rms^2 / R for the branch voltage, I_rms = V_rms / R_total,
    # peak sqrt(2) I_rms, mean 0 (definitions of rms and mean; the rectangle rule is exact here)
    spec = unclamped_voltmeter()
    v_rms = 10.0
    out = apply_stimulus(spec, "10 V", volts=v_rms, waveform="sine")
    parts = {p["name"]: p for p in out["parts"]}
    r_tot = 8e3 + 190e3 + 2e3
    i_rms = v_rms / r_tot
    v_r2 = i_rms * 190e3
    np.testing.assert_allclose(parts["R2"]["power_w"], v_r2 ** 2 / 190e3, rtol=1e-12)
    np.testing.assert_allclose(parts["R2"]["current_rms_a"], i_rms, rtol=1e-12)
    np.testing.assert_allclose(parts["R2"]["current_peak_a"], math.sqrt(2) * i_rms, rtol=1e-12)
    assert abs(parts["R2"]["current_mean_a"]) < 1e-15 * i_rms * 1e3
    np.testing.assert_allclose(out["movement_rms_multiple"], i_rms / 50e-6, rtol=1e-12)
    np.testing.assert_allclose(out["movement_multiple"], math.sqrt(2) * i_rms / 50e-6, rtol=1e-12)
    assert abs(out["movement_mean_multiple"]) < 1e-12
    assert out["verdict"] == "ok"  # a sine on a DC range reads zero: within every rating


NGSPICE = shutil.which("ngspice")


@pytest.mark.skipif(NGSPICE is None, reason="ngspice is not installed")
def test_sine_mean_rms_peak_match_ngspice_transient(tmp_path):
    # ngspice transient analysis of the same resistive network with a diode over one cycle
    # (an independent simulator: the SPICE diode model with IS, N, RS); quasi-static is exact
    # without reactive parts, so the cycle statistics must agree to 1e-4 relative.
    d = m.DiodeModel("dm", i_s_a=5e-9, n=1.9, r_s_ohm=0.5)
    els = (res("R1", "in", "a", 10e3), res("R2", "a", "com", 20e3), m.Diode("D1", "a", "b", "dm"),
           m.MovementElement("M1", "b", "com"))
    net = m.NetworkSpec(els, (m.Position("P", "voltage", 10.0, ("in", "com")),))
    spec = m.Spec("half wave", movement(1e-3, 2e3), m.Parts(diodes={"dm": d}), network=net)
    t_c = spec.ambient.t_ref_k - m.ZERO_CELSIUS_K
    v_rms = 10.0
    cir = tmp_path / "halfwave.cir"
    cir.write_text(f"""half-wave branch
V1 in 0 SIN(0 {math.sqrt(2) * v_rms!r} 50)
R1 in a 10k
R2 a 0 20k
D1 a b dmod
RM b 0 2k
.model dmod D(IS=5n N=1.9 RS=0.5)
.options reltol=1e-7 abstol=1e-15 vntol=1e-9 temp={t_c!r} tnom={t_c!r}
.tran 1u 20m 0 1u
.meas tran isrc_avg AVG i(V1) from=0 to=20m
.meas tran vb_avg AVG v(b) from=0 to=20m
.meas tran vb_rms RMS v(b) from=0 to=20m
.meas tran vb_max MAX v(b) from=0 to=20m
.meas tran va_rms RMS v(a) from=0 to=20m
.end
""")
    run = subprocess.run([NGSPICE, "-b", str(cir)], capture_output=True, text=True, timeout=60)
    meas = {k.lower(): float(v) for k, v in re.findall(r"^(\w+)\s*=\s*([-+0-9.eE]+)", run.stdout, re.M)}
    out = apply_stimulus(spec, "P", volts=v_rms, waveform="sine")
    parts = {p["name"]: p for p in out["parts"]}
    ours = [parts["M1"]["current_mean_a"] * 2e3, parts["M1"]["current_rms_a"] * 2e3,
            parts["M1"]["current_peak_a"] * 2e3, parts["R2"]["voltage_rms_v"], -parts["R1"]["current_mean_a"]]
    theirs = [meas["vb_avg"], meas["vb_rms"], meas["vb_max"], meas["va_rms"], meas["isrc_avg"]]
    np.testing.assert_allclose(ours, theirs, rtol=1e-4)  # tolerance from the task: 1e-4 relative


def test_cycle_stats_of_a_sampled_sine():
    # definitions: a sine of amplitude A has rms A / sqrt(2), mean 0, peak A (N divisible by 4)
    x = 3.0 * np.sin(2 * np.pi * np.arange(64) / 64)
    st = cycle_stats(x)
    np.testing.assert_allclose([st["peak"], st["rms"]], [3.0, 3.0 / math.sqrt(2)], rtol=1e-14)
    assert abs(st["mean"]) < 1e-15


def test_current_limit_turns_the_source_into_a_current_source():
    # a bench supply in current limit delivers its limit; the terminal voltage is I_lim R_in
    # (Ohm's law) and below its setting
    spec, rs2 = separate_ammeter(None)
    r_in = rs2 * 1e3 / (rs2 + 1e3)
    stim = Stimulus("bench", "voltage", 30.0, r_source_ohm=0.05, current_limit_a=0.5)
    (case,) = assess(Engine(build(spec)), "10 mA", [stim], with_parts=True)
    parts = {p["name"]: p for p in case["parts"]}
    np.testing.assert_allclose(parts["RS2"]["current_mean_a"] + parts["M1"]["current_mean_a"], 0.5, rtol=1e-12)
    np.testing.assert_allclose(parts["M1"]["voltage_mean_v"], 0.5 * r_in, rtol=1e-12)
    assert any("current limit" in n for n in case["notes"])


# --- verdicts ------------------------------------------------------------------------------


def test_reverse_deflection_pegs_against_the_zero_stop():
    # common practice: the pointer rests a few percent below zero; -1 x full scale slams it
    spec = unclamped_voltmeter()
    out = apply_stimulus(spec, "10 V", volts=-10.0)
    assert out["verdict"] == "pegs"
    np.testing.assert_allclose(out["movement_mean_multiple"], -1.0, rtol=1e-12)
    assert apply_stimulus(spec, "10 V", volts=10.0)["verdict"] == "ok"
    assert apply_stimulus(spec, "10 V", volts=11.5)["verdict"] == "pegs"  # 1.15 x: past 1.1, below 1.2


def test_hazardous_live_limits():
    # IEC 61010-1:2010 clause 6.3.1: 33 V rms, 46.7 V peak, 70 V DC
    assert not hazardous_live("dc", [70.0])
    assert hazardous_live("dc", [-70.5])
    s33 = Stimulus("s", "voltage", 32.9, "sine").samples()
    assert not hazardous_live("sine", s33)
    assert hazardous_live("sine", Stimulus("s", "voltage", 33.1, "sine").samples())


def test_apply_contract_and_text():
    spec = unclamped_voltmeter()
    out = apply_stimulus(spec, "0.5 V", volts=5.0)
    for key in ("movement_current_a", "movement_multiple", "parts", "verdict", "position", "stimulus", "stresses",
                "deciding", "movement_rms_multiple", "movement_mean_multiple"):
        assert key in out
    for p in out["parts"]:
        assert {"name", "current_a", "voltage_v", "power_w"} <= set(p)
    for x in out["stresses"]:
        assert {"part", "quantity", "value", "rating", "ratio"} <= set(x)
    json.dumps(out, allow_nan=False)
    text = format_apply(out)
    assert "OVERSTRESS" in text and "R1" in text
    assert max(len(line) for line in text.splitlines()) <= 100
    with pytest.raises(UsageError):
        apply_stimulus(spec, "0.5 V")
    with pytest.raises(UsageError):
        apply_stimulus(spec, "0.5 V", volts=1.0, amps=1.0)


def test_judging_contexts_are_those_the_constructor_makes():
    """:func:`planner.stress.judge.element_contexts` and the per-part copies of :func:`judge` (made
    without :func:`dataclasses.replace`) hold what ``JudgingContext(...)`` and ``replace`` give, field
    for field; the parts' rows are made only when asked for."""
    from dataclasses import fields, replace

    from planner.stress.judge import JudgingContext, _with, element_contexts, judge
    from planner.stress.waveforms import cycle_stats_rows, solve_waveforms, stress_elements

    eng = Engine(build(clamp_spec(100e3, 2e3, m.DiodeModel("si", i_s_a=5e-9, n=1.9, r_s_ohm=0.5))))
    st = eng.positions[0].name
    wf = solve_waveforms(eng, st, [Stimulus("mains", "voltage", 230.0, "sine", 0.5)])[0]
    elements = stress_elements(eng)
    ms = cycle_stats(wf.movement_current_a / eng.spec.movement.i_fs_a)
    got = element_contexts(eng.spec, wf, elements, ms, " after F1 opens")
    cur = np.array([wf.current_a[e.name] for e in elements])
    vol = np.array([wf.voltage_v[e.name] for e in elements])
    i_st, v_st = cycle_stats_rows(cur), cycle_stats_rows(vol)
    power = (cur * vol).sum(axis=1) / cur.shape[1]
    prospective = float(np.max(np.abs(wf.source_current_a)))
    for k, e in enumerate(elements):
        want = JudgingContext(eng.spec, wf.stimulus, i_st[k], v_st[k], float(power[k]), ms, prospective,
                              " after F1 opens", samples_i=wf.current_a[e.name], samples_v=wf.voltage_v[e.name])
        for f in fields(JudgingContext):
            a, b = getattr(got[e.name], f.name), getattr(want, f.name)
            assert a is b or (np.array_equal(a, b) if isinstance(a, np.ndarray) else a == b), f.name
        changed = _with(want, short_exposure=True, duration_s=0.25)
        assert repr(changed) == repr(replace(want, short_exposure=True, duration_s=0.25))
        assert want.short_exposure is False  # the copy is a new context
    assert judge(eng, wf).parts and judge(eng, wf, with_parts=False).parts == []
