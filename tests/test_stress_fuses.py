"""Tests of planner.stress with fuses: which open, the pulse while they open, the parts' pulse ratings."""

from __future__ import annotations

import math

import numpy as np

from planner import model as m
from planner.stress import (SHORT_OVERLOAD_S, SHORT_TIME_S, apply_stimulus, diode_i2t_a2s, diode_i2t_allowed_a2s,
                            fuse_let_through, pre_arcing_time_s, resistor_pulse_energy_j, resistor_pulse_limit_j,
                            short_time_power_w)
from stress_circuits import FUSE, fused_shunt, movement, res, separate_ammeter


def test_voltage_on_current_range_without_fuse_is_judged_continuous():
    spec, rs2 = separate_ammeter(None)
    out = apply_stimulus(spec, "10 mA", volts=9.0, r_source_ohm=1.5)
    # nothing interrupts the current: RS2 (0.5 W) takes far more than 10 x its rating indefinitely,
    # the ignition rule of docs/safety.md
    assert out["verdict"] == "hazard"
    assert {(h["rule"], h["part"]) for h in out["hazards"]} == {("ignition", "RS2")}
    assert out["fuses"] == []
    mov = [x for x in out["stresses"] if x["part"] == "M1" and x["quantity"] == "multiple"][0]
    assert mov["rating"] == 1.2  # the thermal (continuous) limit of this movement, held indefinitely
    assert mov["limit_name"] == "movement thermal" and "duration_s" not in mov
    # Ohm's law: 9 V through 1.5 ohm into RS2 || R_m
    r_in = rs2 * 1e3 / (rs2 + 1e3)
    np.testing.assert_allclose(out["movement_current_a"], 9.0 / (1.5 + r_in) * r_in / 1e3, rtol=1e-12)


def test_voltage_on_current_range_with_fuse_opens_and_judges_short_time():
    spec, rs2 = separate_ammeter(FUSE)
    out = apply_stimulus(spec, "10 mA", volts=9.0, r_source_ohm=1.5)
    r_in = rs2 * 1e3 / (rs2 + 1e3)
    i = 9.0 / (1.5 + FUSE.r_cold_ohm + r_in)  # Ohm's law, linear network
    (f,) = [x for x in out["fuses"] if not x.get("after")]
    assert f["opens"]
    np.testing.assert_allclose(f["current_rms_a"], i, rtol=1e-12)
    # pre-arcing time from the melting integral, t = I2t / I^2 (IEC 60127-1 definitions)
    np.testing.assert_allclose(f["pre_arcing_time_s"], FUSE.i2t_a2s / i ** 2, rtol=1e-12)
    assert f["pre_arcing_time_s"] < SHORT_TIME_S
    # prospective current = source peak / (source impedance + cold network resistance)
    np.testing.assert_allclose(f["prospective_current_a"], i, rtol=1e-12)
    mov = [x for x in out["stresses"] if x["part"] == "M1" and x["quantity"].startswith("multiple")]
    # thermal limit over the pulse, first-order heating (lumped heat balance): 1.2 / sqrt(1 - exp(-t/tau))
    t = f["event_time_s"]
    np.testing.assert_allclose(mov[0]["rating"], 1.2 / math.sqrt(1.0 - math.exp(-t / 1.0)), rtol=1e-12)
    assert "until the fuse opens" in mov[0]["quantity"] and mov[0]["duration_s"] == t
    assert out["verdict"] == "overstress"  # the movement beyond its thermal limit over the pulse
    # once F1 in the input lead opens, nothing flows
    assert out["after_fuse_opens"]["movement_multiple"] < 1e-6
    assert any("F1 opens" in n for n in out["notes"])


def test_prospective_current_beyond_breaking_capacity_is_hazard():
    spec, rs2 = separate_ammeter(FUSE)
    out = apply_stimulus(spec, "10 mA", volts=230.0, r_source_ohm=0.5, waveform="sine")
    r_in = rs2 * 1e3 / (rs2 + 1e3)
    i_p = math.sqrt(2) * 230.0 / (0.5 + FUSE.r_cold_ohm + r_in)  # source peak / (source + cold network)
    assert out["verdict"] == "hazard"
    d = out["deciding"]
    assert (d["part"], d["quantity"]) == ("F1", "prospective current")
    np.testing.assert_allclose(d["value"], i_p, rtol=1e-12)
    np.testing.assert_allclose(d["ratio"], i_p / FUSE.breaking_capacity_a, rtol=1e-12)


def test_fuse_in_a_shunt_branch_leaves_the_movement_exposed_after_it_opens():
    # a fuse that guards only the shunt: when it opens the whole current goes through the
    # movement (common practice: put the fuse in the input lead)
    spec, _ = separate_ammeter(FUSE, fuse_in_shunt=True)
    out = apply_stimulus(spec, "10 mA", volts=6.0, r_source_ohm=10.0)
    assert out["fuses"][0]["opens"]
    # Ohm's law after the shunt is gone: 6 V through 10 ohm into the 1 kohm coil; the open fuse
    # stands in as 1 Gohm in series with the shunt (1e-6 relative effect)
    np.testing.assert_allclose(out["after_fuse_opens"]["movement_multiple"], 6.0 / 1010.0 / 100e-6, rtol=1e-5)
    after = [x for x in out["stresses"] if "after F1 opens" in x["quantity"] and x["part"] == "M1"]
    assert any(x["exceeded"] for x in after)
    assert out["verdict"] == "overstress"


def test_pre_arcing_time_from_curve_log_log():
    # log-log interpolation between time-current points (common practice for fuse curves)
    f = m.FuseModel("c", 0.1, 1.0, 35.0, curve=((2.0, 10.0), (10.0, 0.01)))
    np.testing.assert_allclose(pre_arcing_time_s(f, math.sqrt(20.0)), math.sqrt(10.0 * 0.01), rtol=1e-12)
    np.testing.assert_allclose(pre_arcing_time_s(f, 20.0), 0.01 * (10.0 / 20.0) ** 2, rtol=1e-12)  # constant I2t
    assert pre_arcing_time_s(f, 1.5) == math.inf
    assert pre_arcing_time_s(m.FuseModel("n", 0.1, 1.0, 35.0), 3.0) is None


# --- pulses while a fuse opens --------------------------------------------------------------



def _stress(out, part, start):
    return [x for x in out["stresses"] if x["part"] == part and x["quantity"].startswith(start)][0]


def test_pulse_energy_in_a_shunt_while_the_fuse_opens_matches_hand_computation():
    spec, r_s, r_b = fused_shunt()
    out = apply_stimulus(spec, "I", volts=9.0, r_source_ohm=1.5)
    # hand computation, linear network: I_f = V / (R_src + R_fuse + R_s || R_b); the fuse melts in
    # t = I2t / I_f^2 (IEC 60127-1 definitions); the shunt carries I_s = I_f R_b / (R_s + R_b), so
    # E = R_s I_s^2 t = R_s (R_b / (R_s + R_b))^2 I2t, i.e. R x I2t for the share of the fuse current
    i_f = 9.0 / (1.5 + FUSE.r_cold_ohm + r_s * r_b / (r_s + r_b))
    t = FUSE.i2t_a2s / i_f ** 2
    share = r_b / (r_s + r_b)
    e_hand = r_s * share ** 2 * FUSE.i2t_a2s
    x = _stress(out, "RS", "pulse energy while F1 opens")
    np.testing.assert_allclose(x["value"], e_hand, rtol=1e-12)  # exact for a linear network
    np.testing.assert_allclose(x["duration_s"], t, rtol=1e-12)
    # no maker's figure: the IEC 60115-1 short-time overload (from memory) at 5 s, scaled as sqrt(t)
    # below it (film heating into a semi-infinite substrate, Carslaw and Jaeger 2.9): 6.25 P sqrt(5 s t)
    np.testing.assert_allclose(x["rating"], 6.25 * 0.25 * math.sqrt(5.0 * t), rtol=1e-12)
    assert x["basis"] == "pulse rule" and x["pulse_energy_given"] is False
    assert not x["exceeded"] and out["verdict"] == "opens"
    assert not [y for y in out["stresses"] if y["part"] == "RS" and y["quantity"] == "power"]  # no continuous check
    # the contract-side fields of a case whose fuse opens
    assert out["fuse_opens"] is True and out["fuse"] == "F1"
    np.testing.assert_allclose(out["pre_arcing_time_s"], t, rtol=1e-12)
    np.testing.assert_allclose(out["let_through_i2t_a2s"], FUSE.i2t_a2s, rtol=1e-12)
    assert "fuse opens" in out["detail"]


def test_verdict_flips_at_the_pulse_energy_limit():
    # 30 V: the fuse clears in I2t / I^2 = 7.5 ms, where the rule allows 6.25 x 0.25 W x sqrt(5 s x 7.5 ms)
    # = 0.30 J, below the shunt's R x I2t share of 0.5 J: the maker's figure decides
    spec, r_s, r_b = fused_shunt()
    first = apply_stimulus(spec, "I", volts=30.0, r_source_ohm=1.5)
    x = _stress(first, "RS", "pulse energy")
    e = x["value"]
    assert x["exceeded"] and first["verdict"] == "overstress"
    assert first["asks"] and first["asks"][0]["key"] == "pulse_energy" and first["asks"][0]["part"] == "RS"
    above, _, _ = fused_shunt(pulse_energy=e * 1.001)
    below, _, _ = fused_shunt(pulse_energy=e * 0.999)
    ok = apply_stimulus(above, "I", volts=30.0, r_source_ohm=1.5)
    bad = apply_stimulus(below, "I", volts=30.0, r_source_ohm=1.5)
    assert ok["verdict"] == "opens" and bad["verdict"] == "overstress" and bad["asks"] == []
    assert bad["deciding"]["part"] == "RS" and bad["deciding"]["unit"] == "J"
    np.testing.assert_allclose(bad["deciding"]["ratio"], 1.0 / 0.999, rtol=1e-9)
    # the instrument survived: the fuse opened and needs replacing, and the case says so
    assert ok["fuse_opens"] and "fuse opens" in ok["detail"] and "replace the fuse" in ok["detail"]
    assert ok["after_fuse_opens"]["movement_multiple"] < 1e-6  # nothing flows once F1 is open


def test_clearing_i2t_adds_the_arcing_let_through():
    # IEC 60127-1 / 60269-1 definitions: operating I2t = pre-arcing I2t + arcing I2t
    fuse = m.FuseModel("fc", r_cold_ohm=0.12, rated_current_a=0.25, breaking_capacity_a=20.0, i2t_a2s=0.05,
                       max_voltage_v=250.0, clearing_i2t_a2s=0.2)
    lt = fuse_let_through(fuse, 2.0)
    np.testing.assert_allclose(lt["pre_arcing_time_s"], 0.05 / 4.0, rtol=1e-12)
    np.testing.assert_allclose(lt["arcing_i2t_a2s"], 0.15, rtol=1e-12)
    np.testing.assert_allclose(lt["let_through_i2t_a2s"], 0.2, rtol=1e-12)
    np.testing.assert_allclose(lt["event_time_s"], 0.2 / 4.0, rtol=1e-12)
    spec, r_s, r_b = fused_shunt(fuse=fuse)
    out = apply_stimulus(spec, "I", volts=9.0, r_source_ohm=1.5)
    share = r_b / (r_s + r_b)
    np.testing.assert_allclose(_stress(out, "RS", "pulse energy")["value"], r_s * share ** 2 * 0.2, rtol=1e-12)
    # below its time-current curve a fuse has no finite time: no pulse, continuous ratings
    slow = m.FuseModel("s", 0.1, 1.0, 35.0, curve=((2.0, 10.0), (10.0, 0.01)))
    assert fuse_let_through(slow, 1.5) is None


def test_short_time_overload_power_and_limit():
    # IEC 60115-1 short-time overload (from memory): 2.5 x rated voltage, at most 2 x the limiting
    # element voltage: P_st = min(6.25 P, (2 V_max)^2 / R)
    low = res("RL", "a", "b", 10.0, power=0.25, vmax=250.0)
    high = res("RH", "a", "b", 1e6, power=0.25, vmax=250.0)
    np.testing.assert_allclose(short_time_power_w(low), 6.25 * 0.25, rtol=1e-15)
    np.testing.assert_allclose(short_time_power_w(high), 500.0 ** 2 / 1e6, rtol=1e-15)
    # the maker's single-pulse energy wins where it is the larger; 5 s caps the rule, which is the
    # short-time overload at 5 s scaled as sqrt(t) below it (Carslaw and Jaeger, section 2.9)
    np.testing.assert_allclose(resistor_pulse_limit_j(low, 1e-3, 0.5), 0.5, rtol=1e-15)
    np.testing.assert_allclose(resistor_pulse_limit_j(low, 4.0, 0.5), 6.25 * 0.25 * math.sqrt(4.0 * 5.0),
                               rtol=1e-15)
    np.testing.assert_allclose(resistor_pulse_limit_j(low, 60.0), 6.25 * 0.25 * SHORT_OVERLOAD_S, rtol=1e-15)
    # the rule does not collapse for microsecond events: 3.7 us on a 0.25 W part allows
    # 6.25 x 0.25 W x sqrt(5 s x 3.7 us) = 6.7 mJ (the high-value part too: its voltage is judged apart)
    np.testing.assert_allclose(resistor_pulse_limit_j(high, 3.7e-6), 6.25 * 0.25 * math.sqrt(5.0 * 3.7e-6),
                               rtol=1e-15)
    assert resistor_pulse_limit_j(high, 3.7e-6) > 6e-3


def test_peak_voltage_while_the_fuse_opens_has_the_short_time_allowance():
    spec, _, _ = fused_shunt()
    out = apply_stimulus(spec, "I", volts=9.0, r_source_ohm=1.5)
    x = _stress(out, "RSW", "peak voltage while F1 opens")
    assert x["rating"] == 2.0 * 250.0  # IEC 60115-1 short-time overload cap, 2 x LEV (from memory)


def test_pulse_energy_from_the_ratings_ladder():
    rp = m.ResistorParts(power_w=0.25, max_voltage_v=250.0, pulse_energy_j=0.01, power_ratings_w=(0.25, 1.0),
                         max_voltages_v=(250.0, 500.0), pulse_energies_j=(None, 2.0))
    spec = m.Spec("ladder", movement(), m.Parts(resistors=rp))
    assert resistor_pulse_energy_j(spec, res("A", "a", "b", 1.0, power=1.0, vmax=500.0)) == 2.0
    assert resistor_pulse_energy_j(spec, res("B", "a", "b", 1.0, power=0.25, vmax=250.0)) == 0.01
    assert resistor_pulse_energy_j(spec, res("C", "a", "b", 1.0, power=2.0, vmax=750.0)) is None
    own = m.Resistor("D", "a", "b", 1.0, power_w=1.0, max_voltage_v=500.0, pulse_energy_j=7.0)
    assert resistor_pulse_energy_j(spec, own) == 7.0


def test_diode_i2t_from_its_surge_rating():
    # one 8.3 ms half-sine of I_FSM: I2t = I_FSM^2 t / 2 (JEDEC surge; a 30 A rectifier is quoted at
    # about 3.7 A2s "for fusing", from memory)
    d = m.DiodeModel("r", 1e-9, surge_current_a=30.0)
    np.testing.assert_allclose(diode_i2t_a2s(d), 30.0 ** 2 * (1 / 120) / 2, rtol=1e-15)
    np.testing.assert_allclose(diode_i2t_a2s(d), 3.7, rtol=0.02)  # the data-sheet figure, from memory
    assert diode_i2t_a2s(m.DiodeModel("g", 1e-9, surge_current_a=30.0, i2t_a2s=5.0)) == 5.0
    # below 1 ms the current is held to the level that reaches the figure in 1 ms (conservative)
    np.testing.assert_allclose(diode_i2t_allowed_a2s(d, 1e-4), diode_i2t_a2s(d) * 0.1, rtol=1e-12)
    np.testing.assert_allclose(diode_i2t_allowed_a2s(d, 5e-3), diode_i2t_a2s(d), rtol=1e-15)
    assert math.isinf(diode_i2t_a2s(m.DiodeModel("n", 1e-9)))


def test_clamp_diodes_are_judged_on_i2t_while_a_fast_fuse_opens():
    # a diode across a fused shunt: while F1 opens within the surge half-cycle the diode is judged
    # on I_rms^2 t against its I2t, not on its average current
    spec, _, _ = fused_shunt()
    d = m.DiodeModel("si", 5e-9, n=1.9, r_s_ohm=0.5, max_current_a=0.2, surge_current_a=1.0, max_power_w=0.5)
    net = spec.network
    els = net.elements + (m.Diode("D1", "f", "com", "si"),)
    spec = m.Spec(spec.title, spec.movement, m.Parts(diodes={"si": d}, fuses=spec.parts.fuses),
                  network=m.NetworkSpec(els, net.positions))
    out = apply_stimulus(spec, "I", volts=30.0, r_source_ohm=0.5)
    (f,) = [x for x in out["fuses"] if not x.get("after")]
    assert f["opens"] and f["event_time_s"] < 1 / 120
    x = _stress(out, "D1", "I2t while F1 opens")
    parts = {p["name"]: p for p in out["parts"]}
    np.testing.assert_allclose(x["value"], parts["D1"]["current_rms_a"] ** 2 * f["event_time_s"], rtol=1e-12)
    assert not [y for y in out["stresses"] if y["part"] == "D1" and y["quantity"] == "average current"]


def test_fuse_without_time_leaves_continuous_ratings():
    nofuse = m.FuseModel("n", r_cold_ohm=0.12, rated_current_a=0.25, breaking_capacity_a=20.0)
    spec, _, _ = fused_shunt(fuse=nofuse)
    out = apply_stimulus(spec, "I", volts=9.0, r_source_ohm=1.5)
    assert [x for x in out["stresses"] if x["part"] == "RS" and x["quantity"] == "power"]
    assert not [x for x in out["stresses"] if "pulse energy" in x["quantity"]]
    assert out["fuse_opens"] and out["pre_arcing_time_s"] is None and "unknown time" in out["detail"]
