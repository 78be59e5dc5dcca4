"""Tests of the verdicts of planner.stress: named hazard rules, the movement's limits, compliance, fuse onsets."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.faults import faults_project
from planner.faults.families import DEFAULT_COMPLIANCE_V, default_compliance_v
from planner.stress import Stimulus, apply_stimulus, assess, stress_entry, verdict_of
from planner.stress.verdict import HAZARD_RULES, hazards_of
from stress_circuits import FUSE, fused_shunt, movement, separate_ammeter, unclamped_voltmeter


def _joule_sine(t, i_p, f, phi):
    """Closed form of the integral of (I_p sin(w t + phi))^2 from 0 to t (sin^2 u = (1 - cos 2u) / 2)."""
    w = 2 * math.pi * f
    return i_p ** 2 / 2 * (t - (math.sin(2 * (w * t + phi)) - math.sin(2 * phi)) / (2 * w))


# --- fuse pre-arcing over the onset phase --------------------------------------------------------


def test_pre_arcing_time_of_a_sine_from_the_crest_and_from_zero():
    # 50 V rms at 50 Hz on the fused shunt: a linear network, so the fuse current is a sine of peak
    # I_p = sqrt(2) 50 V / (1.5 + R_fuse + R_s || R_b) (Ohm's law). It melts when the integral of i^2
    # from the onset reaches I2t (IEC 60269-1 Joule integral): from the crest (phi = pi/2) and from a
    # zero crossing (phi = 0), the slower deciding
    spec, r_s, r_b = fused_shunt()
    out = apply_stimulus(spec, "I", volts=50.0, r_source_ohm=1.5, waveform="sine")
    i_p = math.sqrt(2) * 50.0 / (1.5 + FUSE.r_cold_ohm + r_s * r_b / (r_s + r_b))
    hand = {name: brentq(lambda t: _joule_sine(t, i_p, 50.0, phi) - FUSE.i2t_a2s, 0.0, 0.02, xtol=1e-15)
            for name, phi in (("crest", math.pi / 2), ("zero crossing", 0.0))}
    (f,) = [x for x in out["fuses"] if not x.get("after")]
    # the spline through 512 phase points reproduces the closed form to ~1e-9 (tolerance 1e-7)
    np.testing.assert_allclose(f["pre_arcing_times_s"]["crest"], hand["crest"], rtol=1e-7)
    np.testing.assert_allclose(f["pre_arcing_times_s"]["zero crossing"], hand["zero crossing"], rtol=1e-7)
    assert f["onset"] == out["pre_arcing_onset"] == "zero crossing"  # the slower onset decides
    np.testing.assert_allclose(out["pre_arcing_time_s"], hand["zero crossing"], rtol=1e-7)
    # an independent quadrature of i^2 over the deciding window gives back the melting I2t
    w = 2 * math.pi * 50.0
    j, _ = quad(lambda t: (i_p * math.sin(w * t)) ** 2, 0.0, hand["zero crossing"], epsabs=0, epsrel=1e-12)
    np.testing.assert_allclose(j, FUSE.i2t_a2s, rtol=1e-9)
    # the rms shortcut I2t / I_rms^2 lies between the two onsets (here, within a half cycle)
    assert hand["crest"] < f["rms_time_s"] < hand["zero crossing"]
    np.testing.assert_allclose(f["rms_time_s"], FUSE.i2t_a2s / (i_p ** 2 / 2), rtol=1e-9)


def test_the_shunt_takes_r_times_i2t_over_the_onset_window():
    # whatever the onset, a resistor in series with the fuse's path takes R_s (share)^2 I2t while it
    # melts (Joule's law integrated over the window; no clearing_i2t, so the window ends at melting)
    spec, r_s, r_b = fused_shunt()
    out = apply_stimulus(spec, "I", volts=50.0, r_source_ohm=1.5, waveform="sine")
    x = [s for s in out["stresses"] if s["part"] == "RS" and s["quantity"].startswith("pulse energy")][0]
    share = r_b / (r_s + r_b)
    np.testing.assert_allclose(x["value"], r_s * share ** 2 * FUSE.i2t_a2s, rtol=1e-6)  # spline of 512 points
    np.testing.assert_allclose(x["duration_s"], out["event_time_s"], rtol=1e-15)


def test_issue_figures_of_a_186_a_sine():
    # 186 A peak at 50 Hz with the I2t that gives 87 us at the rms: closed form (sin^2 identity) and
    # Brent's method give about 43 us from the crest and 1.1 ms from a zero crossing
    from planner.cycle import onsets_on_grid

    i_p, i2t = 186.0, 186.0 ** 2 / 2 * 87e-6
    grid = i_p * np.sin(2 * np.pi * np.arange(512) / 512)
    o = onsets_on_grid([i2t], grid, 0.02)
    crest = brentq(lambda t: _joule_sine(t, i_p, 50.0, math.pi / 2) - i2t, 0, 0.02, xtol=1e-15)
    zero = brentq(lambda t: _joule_sine(t, i_p, 50.0, 0.0) - i2t, 0, 0.02, xtol=1e-15)
    np.testing.assert_allclose(o.times_s["crest"][0], crest, rtol=1e-7)
    np.testing.assert_allclose(o.times_s["zero crossing"][0], zero, rtol=1e-7)
    assert 42e-6 < crest < 44e-6 and 1.05e-3 < zero < 1.15e-3
    assert o.slower(0) == "zero crossing"


# --- named hazard rules ----------------------------------------------------------------------------


def test_a_fuse_beyond_its_breaking_capacity_is_hazard_by_its_rule():
    # 230 V rms through 0.5 ohm into the 10 mA range: prospective peak sqrt(2) 230 / (0.5 + R_fuse + R_in)
    # is above the 20 A breaking capacity (IEC 60127-1): a person is at risk
    spec, rs2 = separate_ammeter(FUSE)
    out = apply_stimulus(spec, "10 mA", volts=230.0, r_source_ohm=0.5, waveform="sine")
    r_in = rs2 * 1e3 / (rs2 + 1e3)
    i_p = math.sqrt(2) * 230.0 / (0.5 + FUSE.r_cold_ohm + r_in)
    assert out["verdict"] == "hazard"
    assert out["decided_by"] == "F1 fuse breaking capacity"
    (h,) = [h for h in out["hazards"] if h["rule"] == "breaking capacity"]
    assert h["part"] == "F1" and "IEC 60127-1" in h["source"]
    np.testing.assert_allclose(h["value"], i_p, rtol=1e-12)
    np.testing.assert_allclose(h["limit"], FUSE.breaking_capacity_a, rtol=0)


def test_a_fuse_within_its_ratings_opens_and_the_case_is_opens():
    # 9 V through 1.5 ohm (not hazardous): the fuse opens within its breaking capacity and 250 V rating,
    # the movement behind its 99 kohm swamp stays within its limits: the verdict is opens
    spec, _, _ = fused_shunt(pulse_energy=10.0)
    out = apply_stimulus(spec, "I", volts=9.0, r_source_ohm=1.5)
    assert out["verdict"] == "opens" and out["hazards"] == []
    assert out["decided_by"] == "F1 fuse rated current"
    assert "replace the fuse" in out["detail"]


def test_hazard_rules_are_named_and_checked():
    with pytest.raises(ValueError):
        stress_entry("F1", "fuse", "prospective current", 1.0, 2.0, "A", "safety")  # no rule
    with pytest.raises(ValueError):
        stress_entry("F1", "fuse", "prospective current", 1.0, 2.0, "A", "safety", rule="made up")
    # an energy absorber beyond its energy rating: a safety entry under its rule makes the case a hazard
    x = stress_entry("V1", "varistor", "energy", 12.0, 10.0, "J", "safety", rule="energy absorber")
    y = stress_entry("R1", "resistor", "power", 1.0, 0.25, "W", "rating")
    verdict, deciding = verdict_of([x, y], hazardous=True)
    assert verdict == "hazard" and deciding is x
    assert [h["rule"] for h in hazards_of([x, y])] == ["energy absorber"]
    assert all(r.source for r in HAZARD_RULES.values())
    # a rating beyond its limit at a hazardous input is overstress, not hazard
    assert verdict_of([y], hazardous=True)[0] == "overstress"
    # a fuse that opens outranks a pegged pointer; any damage outranks both
    trig = stress_entry("F1", "fuse", "rms current", 2.0, 1.0, "A", "fuse trigger")
    peg = stress_entry("M1", "movement", "pointer", 2.0, 1.1, "x I_fs", "end stop")
    assert verdict_of([trig, peg], opens=True)[0] == "opens"
    assert verdict_of([trig, peg, y], opens=True)[0] == "overstress"


# --- the movement's limits ---------------------------------------------------------------------------


def _voltmeter(**overload):
    spec = unclamped_voltmeter(power=1e3, vmax=1e6)  # the multiplier rated for anything
    return replace(spec, movement=replace(spec.movement, overload=m.Overload(**overload)))


def test_the_movement_limit_that_decides_is_named():
    # the 10 V range: 200 kohm in all, so V volts drive V / 200k / 50 uA times full scale (Ohm's law)
    mech = apply_stimulus(_voltmeter(mechanical=3.0, continuous=10.0), "10 V", volts=40.0)  # 4 x, DC
    assert mech["verdict"] == "overstress" and mech["decided_by"] == "M1 movement mechanical"
    np.testing.assert_allclose(mech["deciding"]["value"], 4.0, rtol=1e-12)
    # a sine: the mean (pointer drive) is zero, the rms 4 x: only the thermal limit can decide
    therm = apply_stimulus(_voltmeter(mechanical=3.0, continuous=3.0), "10 V", volts=40.0, waveform="sine")
    assert therm["verdict"] == "overstress" and therm["decided_by"] == "M1 movement thermal"
    np.testing.assert_allclose(therm["deciding"]["value"], 4.0, rtol=1e-9)
    # an impulse is judged on its peak only: the short-time peak limit
    imp = apply_stimulus(_voltmeter(short_time=12.0), "10 V", volts=150.0, waveform="impulse")
    assert imp["decided_by"] == "M1 movement short-time peak"
    np.testing.assert_allclose(imp["deciding"]["value"], 15.0, rtol=1e-12)
    # defaults are damage levels, not the 1.2 x test level: 4 x full scale DC only pegs
    assert apply_stimulus(_voltmeter(), "10 V", volts=40.0)["verdict"] == "pegs"


def test_thermal_limit_over_a_short_exposure():
    # lumped heat balance (first-order): m(t) = m_cont / sqrt(1 - exp(-t / tau)), adiabatic m^2 t = m_cont^2 tau
    ov = m.Overload(continuous=4.0, short_time=1000.0, thermal_time_s=2.0)
    assert ov.thermal_limit(math.inf) == 4.0
    np.testing.assert_allclose(ov.thermal_limit(1.0), 4.0 / math.sqrt(1 - math.exp(-0.5)), rtol=1e-15)
    np.testing.assert_allclose(ov.thermal_limit(1e-4) ** 2 * 1e-4, 4.0 ** 2 * 2.0, rtol=1e-4)  # O(t / tau)
    assert ov.thermal_limit(1e-9) == 1000.0  # capped at the short-time peak limit
    assert m.Overload().continuous > 1.2 and m.Overload().mechanical > 1.2


def test_the_zero_end_stop_lists_no_numerical_zero_and_keeps_its_sign():
    spec = unclamped_voltmeter()
    sine = apply_stimulus(spec, "10 V", volts=5.0, waveform="sine")  # symmetric: the pointer rests at zero
    assert not [x for x in sine["stresses"] if "below zero" in x["quantity"]]
    (rest,) = [x for x in sine["stresses"] if x["quantity"] == "pointer (mean multiple)"]
    assert rest["value"] == 0.0
    back = apply_stimulus(spec, "10 V", volts=-2.5)  # -0.25 x full scale (Ohm's law)
    (x,) = [x for x in back["stresses"] if "below zero" in x["quantity"]]
    np.testing.assert_allclose(x["value"], -0.25, rtol=1e-12)
    assert x["rating"] < 0 and x["ratio"] > 1 and back["verdict"] == "pegs"


# --- finite compliance -----------------------------------------------------------------------------


def test_no_stress_across_an_open_part_above_the_compliance():
    # 1 A into the fused 10 mA range: F1 (250 mA) opens; the ideal source would then drive 1 A into
    # the open fuse's 1 Gohm (1 GV). A 30 V compliance holds the terminals at 30 V instead
    spec, _ = separate_ammeter(FUSE)
    eng = Engine(build(spec))
    (case,) = assess(eng, "10 mA", [Stimulus("cal", "current", 1.0, compliance_v=30.0)])
    assert case["fuse_opens"]
    volts = [x for x in case["stresses"] if x["unit"] == "V"]
    assert volts and max(x["value"] for x in volts) <= 30.0 * (1 + 1e-9)
    (rec,) = [x for x in volts if x["quantity"].startswith("voltage across the open fuse")]
    np.testing.assert_allclose(rec["value"], 30.0, rtol=1e-6)  # the source at its compliance
    assert any("compliance of 30 V" in n for n in case["notes"])


def test_built_in_current_stimuli_have_the_default_compliance():
    spec, _ = separate_ammeter(FUSE)
    spec = replace(spec, faults=m.Faults(max_input_v=20.0))
    assert default_compliance_v(spec) == 20.0 and DEFAULT_COMPLIANCE_V == 30.0
    res = faults_project(spec)
    current = [c for c in res["cases"] + res["transitions"] if c["stimulus_detail"]["kind"] == "current"]
    assert current and all(c["stimulus_detail"]["compliance_v"] == 20.0 for c in current)
    for c in res["cases"] + res["transitions"]:
        # no stress value across any part above the compliance or the declared maximum input
        assert all(x["value"] <= 20.0 * (1 + 1e-9) for x in c["stresses"] if x["unit"] == "V")
