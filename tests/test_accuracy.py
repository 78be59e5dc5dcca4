"""Checks of planner.accuracy against closed forms, probability theory and textbook cases.

Each check names its source beside it. The networks are built from planner.model
dataclasses; the example projects are loaded with planner.project.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from planner import accuracy as acc
from planner.design import build
from planner.engine import Engine
from planner.errors import UsageError
from planner.model import (Ambient, Analysis, Contact, Diode, DiodeModel, Movement, MovementElement,
                           NetworkSpec, Parts, Position, Resistor, Spec, ZERO_CELSIUS_K)

ROOT = Path(__file__).resolve().parents[1]


def voltmeter(v_fs=10.0, i_fs=100e-6, r_m=500.0, tol=0.01, tempco=0.0, dist="uniform", coil_tempco=0.0,
              class_index=1.5, pieces=1, ambient=None, samples=500, seed=3, diodes=False):
    """A one-range voltmeter with a separate multiplier R = V/I_fs - R_m, in ``pieces`` equal parts."""
    r_total = v_fs / i_fs - r_m  # multiplier: R = V_fs / I_fs - R_m (Lessons in Electric Circuits Vol. I ch. 8, "Voltmeter design")
    nodes = ["plus"] + [f"n{k}" for k in range(1, pieces)] + ["m"]
    elements = [MovementElement("M1", "m", "com")]
    for k in range(pieces):
        elements.append(Resistor(f"R{k + 1}", nodes[k], nodes[k + 1], r_total / pieces, tolerance=tol,
                                 tempco_per_k=tempco, distribution=dist))
    models = {}
    if diodes:
        models = {"si": DiodeModel("si", i_s_a=5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9)}
        elements += [Diode("D1", "m", "com", "si"), Diode("D2", "com", "m", "si")]
    net = NetworkSpec(tuple(elements), (Position(f"{v_fs:g} V", "voltage", v_fs, ("plus", "com")),))
    return Spec(title="test voltmeter",
                movement=Movement(i_fs_a=i_fs, r_coil_ohm=r_m, class_index=class_index, tempco_per_k=coil_tempco),
                parts=Parts(diodes=models), ambient=ambient or Ambient(), network=net,
                analysis=Analysis(samples=samples, seed=seed))


def test_worst_case_single_multiplier_closed_form():
    # Closed form from R = V/I_fs - R_m (multiplier formula, Lessons in Electric Circuits Vol. I ch. 8): with R at R(1 +/- t)
    # the reading is V / (R_m + R(1 +/- t)) / I_fs * FS.
    v, i_fs, r_m, t = 10.0, 100e-6, 500.0, 0.01
    r = v / i_fs - r_m
    errs = [(v / (r_m + r * (1 + s * t)) / i_fs * v - v) / v * 100 for s in (+1, -1)]
    res = acc.check_project(voltmeter(v, i_fs, r_m, t), samples=50)
    p = res["positions"][0]
    assert p["worst_case_method"] == "corners" and p["worst_case_corners"] == 2
    np.testing.assert_allclose(p["worst_case_error_pct"], max(map(abs, errs)), rtol=1e-9)  # solver tolerance 1e-13 V
    np.testing.assert_allclose(p["nominal_error_pct"], 0.0, atol=1e-9)  # exact multiplier: no offset


def test_worst_case_sensitivity_bound_many_parts():
    # 14 equal multiplier pieces (> 12 parameters): the sensitivity method. Closed form of the worst
    # corner: every piece at +t or every piece at -t, reading V / (R_m + R(1 +/- t)) / I_fs * FS
    # (multiplier formula, Lessons in Electric Circuits Vol. I ch. 8). The bound must not be smaller and stays close (first order).
    v, i_fs, r_m, t = 10.0, 100e-6, 500.0, 0.02
    r = v / i_fs - r_m
    exact = max(abs((v / (r_m + r * (1 + s * t)) / i_fs * v - v) / v * 100) for s in (+1, -1))
    p = acc.check_project(voltmeter(v, i_fs, r_m, t, pieces=14), samples=50)["positions"][0]
    assert p["worst_case_method"] == "sensitivity"
    assert p["worst_case_error_pct"] >= exact * (1 - 1e-12)
    assert p["worst_case_error_pct"] >= p["worst_case_corner_max_pct"]
    np.testing.assert_allclose(p["worst_case_corner_max_pct"], exact, rtol=1e-9)  # aligned corner evaluated exactly
    np.testing.assert_allclose(p["worst_case_error_pct"], exact, rtol=0.03)  # 1/(1+x) curvature at t = 2 %


def test_worst_case_includes_coil_and_full_scale_current():
    # Closed form (multiplier formula, Lessons in Electric Circuits Vol. I ch. 8): reading = V / (R_m(1 +/- t_m) + R(1 +/- t)) / (I_fs(1 +/- t_i)) * FS;
    # the worst corner is the smallest resistance with the smallest I_fs, or the largest with the largest.
    v, i_fs, r_m, t, t_m, t_i = 10.0, 100e-6, 500.0, 0.01, 0.05, 0.02
    r = v / i_fs - r_m
    base = voltmeter(v, i_fs, r_m, t)
    spec = Spec(title=base.title, network=base.network, ambient=base.ambient, analysis=base.analysis,
                movement=Movement(i_fs_a=i_fs, r_coil_ohm=r_m, class_index=1.5, tolerance=t_m, i_fs_tolerance=t_i))
    worst = max(abs((v / (r_m * (1 + a * t_m) + r * (1 + a * t)) / (i_fs * (1 + b * t_i)) * v - v) / v * 100)
                for a in (1, -1) for b in (1, -1))
    p = acc.check_project(spec, samples=50)["positions"][0]
    assert p["worst_case_corners"] == 8
    np.testing.assert_allclose(p["worst_case_error_pct"], worst, rtol=1e-9)  # solver tolerance


def _yield_bounds(v, i_fs, r_m, c):
    """Factor range of the multiplier that keeps |error| <= c (fraction): from e = (R_m + R)/(R_m + R f) - 1."""
    r = v / i_fs - r_m
    return ((r_m + r) / (1 + c) - r_m) / r, ((r_m + r) / (1 - c) - r_m) / r


@pytest.mark.parametrize("dist", ["uniform", "normal"])
def test_monte_carlo_yield_matches_probability(dist):
    # Analytic yield (probability theory): uniform factor on [1-t, 1+t] -> length of the accepted
    # interval / 2t; normal with sigma = t/3 (tolerance = 3 sigma, design contract) -> Phi difference.
    # Agreement within 4 binomial standard errors sqrt(p(1-p)/N).
    v, i_fs, r_m, cls, n = 10.0, 100e-6, 500.0, 1.5, 20000
    t = 0.02 if dist == "uniform" else 0.03
    lo, hi = _yield_bounds(v, i_fs, r_m, cls / 100)
    if dist == "uniform":
        p_exact = (min(hi, 1 + t) - max(lo, 1 - t)) / (2 * t)
    else:
        phi = lambda z: 0.5 * (1 + math.erf(z / math.sqrt(2)))  # noqa: E731
        s = t / 3
        p_exact = phi((hi - 1) / s) - phi((lo - 1) / s)
    assert 0.5 < p_exact < 0.99  # a case that tests something
    p = acc.check_project(voltmeter(v, i_fs, r_m, t, dist=dist, class_index=cls), samples=n, seed=11)["positions"][0]
    se = math.sqrt(p_exact * (1 - p_exact) / n)
    assert abs(p["yield_fraction"] - p_exact) <= 4 * se
    # the spread of the full-scale error: uniform std = t/sqrt(3), normal std = t/3, times dR/dR_total
    std_f = t / math.sqrt(3) if dist == "uniform" else t / 3
    std_pct = std_f * (v / i_fs - r_m) / (v / i_fs) * 100  # first order: e = -(f - 1) R / (R + R_m)
    np.testing.assert_allclose(p["monte_carlo"]["full_scale_error_pct"]["std"], std_pct, rtol=0.05)  # sampling + curvature


def test_temperature_error_clamp_free_closed_form():
    # Copper coil 3930 ppm/K (IEC 60028, alpha_20 = 0.00393/K) and a 50 ppm/K multiplier: the reading
    # at T is V / (R_m(1 + a_cu dT) + R(1 + a_R dT)) / I_fs * FS; the largest change is at an end of
    # the ambient range (monotonic).
    v, i_fs, r_m, a_cu, a_r = 0.5, 50e-6, 2000.0, 3.93e-3, 50e-6
    amb = Ambient(t_ref_k=ZERO_CELSIUS_K + 23, t_min_k=ZERO_CELSIUS_K + 0, t_max_k=ZERO_CELSIUS_K + 40)
    r = v / i_fs - r_m

    def reading(dt):
        return v / (r_m * (1 + a_cu * dt) + r * (1 + a_r * dt)) / i_fs * v  # [V], full scale = v

    expect = max(abs(reading(dt) - reading(0.0)) / v * 100 for dt in (-23.0, 17.0))
    p = acc.check_project(voltmeter(v, i_fs, r_m, 0.005, tempco=a_r, coil_tempco=a_cu, ambient=amb),
                          samples=50)["positions"][0]
    np.testing.assert_allclose(p["temperature_error_pct"], expect, rtol=1e-9)  # solver tolerance
    temps = [q["temperature_k"] for q in p["temperature_points"]]
    assert len(temps) >= 7 and min(temps) == amb.t_min_k and max(temps) == amb.t_max_k and amb.t_ref_k in temps
    hot = reading(17.0)
    np.testing.assert_allclose(p["linearity_hot"][-1]["reading"], hot, rtol=1e-9)  # same closed form at 40 degC
    # budget (docs/methods-accuracy.md): worst case + temperature, a margin figure beside the class rule
    assert p["budget_pct"] == pytest.approx(p["worst_case_error_pct"] + p["temperature_error_pct"])
    assert p["budget_margin_pct"] == pytest.approx(1.5 - p["budget_pct"])
    # class rule (IEC 60051-1): intrinsic error and the variation due to temperature judged apart
    assert p["verdict"] == ("within class" if p["intrinsic_within_class"] and p["temperature_within_limit"]
                            else "outside class")


#: Permitted variation due to ambient temperature per 10 K, as a share of the class index: 100 %
#: (IEC 60051-2, from memory; the figure planner.accuracy.classes uses).
TEMPERATURE_SHARE_PER_10K = 1.0


@pytest.mark.parametrize("class_index", [1.5, 0.5])
def test_class_rule_judges_intrinsic_error_and_temperature_apart(class_index):
    # IEC 60051-1: the class index limits the intrinsic error (reference conditions); the ambient
    # temperature is an influence quantity with its own permitted variation per 10 K (IEC 60051-2,
    # from memory: 100 % of the class index). Closed form of a copper coil (3930 ppm/K, IEC 60028)
    # with a 50 ppm/K multiplier: r(T) = V / (R_m(1 + a_cu dT) + R(1 + a_R dT)) / I_fs * FS, the
    # same relative change at every point of the scale, so the full-scale chord decides.
    v, i_fs, r_m, a_cu, a_r, tol = 0.5, 50e-6, 2000.0, 3.93e-3, 50e-6, 0.002
    amb = Ambient(t_ref_k=ZERO_CELSIUS_K + 23, t_min_k=ZERO_CELSIUS_K + 0, t_max_k=ZERO_CELSIUS_K + 40)
    r = v / i_fs - r_m

    def reading(dt):
        return v / (r_m * (1 + a_cu * dt) + r * (1 + a_r * dt)) / i_fs * v

    temps = np.unique(np.append(np.linspace(0.0, 40.0, 7), 23.0)) - 23.0  # the check's points, dT [K]
    per_10k = max(abs(reading(dt) - reading(0.0)) / v * 100 * 10 / abs(dt) for dt in temps if dt != 0)
    # worst case of the one-resistor meter: R at R(1 +/- t), the larger error of the two corners
    wc = max(abs(v / (r_m + r * (1 + s * tol)) / i_fs * v - v) / v * 100 for s in (-1, 1))
    p = acc.check_project(voltmeter(v, i_fs, r_m, tol, tempco=a_r, coil_tempco=a_cu, ambient=amb,
                                    class_index=class_index), samples=50)["positions"][0]
    np.testing.assert_allclose(p["temperature_variation_per_10k_pct"], per_10k, rtol=1e-9)  # solver tolerance
    np.testing.assert_allclose(p["intrinsic_error_pct"], wc, rtol=1e-9)  # solver tolerance
    np.testing.assert_allclose(p["temperature_permitted_per_10k_pct"], TEMPERATURE_SHARE_PER_10K * class_index)
    assert p["intrinsic_within_class"] == (wc <= class_index)
    assert p["temperature_within_limit"] == (per_10k <= TEMPERATURE_SHARE_PER_10K * class_index)
    # about 0.2 x 3930 ppm/K = 0.79 % per 10 K: within class 1.5, outside class 0.5; the old
    # combined budget (worst case + the whole 23 K swing, about 1.9 %) would fail class 1.5 too
    if class_index == 1.5:
        assert p["budget_pct"] > class_index and p["budget_margin_pct"] < 0
        assert p["verdict"] == "within class"
    else:
        assert not p["temperature_within_limit"] and p["verdict"] == "outside class"


def test_loading_divider_reads_6_667_v():
    # [calc] from the divider formula (Thevenin's theorem): 100 uA, 500 ohm movement, 99.5 k multiplier on 10 V,
    # across the lower leg of a 100 k / 100 k divider fed with 20 V. Thevenin: 10 V behind 50 k;
    # meter 100 k; reading 10 * 100k / (100k + 50k) = 6.667 V.
    r_in = 99.5e3 + 500.0
    r_th = 100e3 * 100e3 / (100e3 + 100e3)
    v_th = 20.0 * 100e3 / (100e3 + 100e3)
    expect = v_th * r_in / (r_in + r_th)
    np.testing.assert_allclose(expect, 6.667, atol=5e-4)  # the published check value
    spec = voltmeter(10.0, 100e-6, 500.0, 0.01)
    assert spec.network.element("R1").value_ohm == pytest.approx(99.5e3)
    res = acc.check_project(spec, samples=50, source_impedance_ohm=r_th)
    p = res["positions"][0]
    np.testing.assert_allclose(p["loaded_reading"], expect, rtol=1e-9)  # solver tolerance
    np.testing.assert_allclose(p["loading_error_pct"], (expect - 10.0) / 10.0 * 100, rtol=1e-9)
    np.testing.assert_allclose(p["input_resistance_ohm"], 100e3, rtol=1e-12)  # V_fs / I_fs (Lessons in Electric Circuits Vol. I ch. 8)
    np.testing.assert_allclose(p["ohms_per_volt"], 1 / 100e-6, rtol=1e-12)  # sensitivity 1/I_fs (Lessons in Electric Circuits Vol. I ch. 8)


def test_loading_divider_built_into_the_network():
    # The same case with the divider itself in the network, 20 V applied at its top ([calc], divider formula).
    elements = (
        Resistor("Rtop", "src", "mid", 100e3, tolerance=0.0),
        Resistor("Rbot", "mid", "com", 100e3, tolerance=0.0),
        Resistor("R1", "mid", "m", 99.5e3, tolerance=0.0),
        MovementElement("M1", "m", "com"),
    )
    net = NetworkSpec(elements, (Position("10 V", "voltage", 10.0, ("src", "com")),))
    spec = Spec("divider", Movement(i_fs_a=100e-6, r_coil_ohm=500.0, class_index=1.5), network=net)
    reading = Engine(build(spec)).reading("10 V", [20.0])
    np.testing.assert_allclose(reading, [6.6666667], rtol=1e-7)  # 20/3 V by the divider formula


def test_burden_voltage_of_a_separate_shunt():
    # Shunt R_sh = R_m I_fs / (I - I_fs) (Lessons in Electric Circuits Vol. I ch. 8, "Ammeter design"); at full scale the terminals see I_fs R_m.
    i_fs, r_m, i = 100e-6, 1000.0, 1e-3
    r_sh = r_m * i_fs / (i - i_fs)
    elements = (MovementElement("M1", "a", "com"), Resistor("R1", "a", "com", r_sh, tolerance=0.001))
    net = NetworkSpec(elements, (Position("1 mA", "current", i, ("a", "com")),))
    spec = Spec("ammeter", Movement(i_fs_a=i_fs, r_coil_ohm=r_m, class_index=1.0), network=net)
    p = acc.check_project(spec, samples=50)["positions"][0]
    np.testing.assert_allclose(p["burden_voltage_v"], i_fs * r_m, rtol=1e-9)  # solver tolerance
    np.testing.assert_allclose(p["input_resistance_ohm"], r_m * r_sh / (r_m + r_sh), rtol=1e-9)
    assert "ohms_per_volt" not in p


def test_same_seed_identical_and_seeds_within_sampling_spread():
    # Seeded draws (numpy default_rng): the same seed repeats; two seeds differ by sampling only:
    # |y1 - y2| within 4 standard errors of a difference of two binomial shares, sqrt(2 p(1-p)/N).
    spec = voltmeter(10.0, 100e-6, 500.0, 0.02, class_index=1.5)
    a = acc.check_project(spec, samples=4000, seed=5)
    b = acc.check_project(spec, samples=4000, seed=5)
    assert json.dumps(a, sort_keys=True) == json.dumps(b, sort_keys=True)
    c = acc.check_project(spec, samples=4000, seed=6)
    ya, yc = a["positions"][0]["yield_fraction"], c["positions"][0]["yield_fraction"]
    p = (ya + yc) / 2
    assert abs(ya - yc) <= 4 * math.sqrt(2 * p * (1 - p) / 4000)
    ma = a["positions"][0]["monte_carlo"]["full_scale_error_pct"]["mean"]
    mc = c["positions"][0]["monte_carlo"]["full_scale_error_pct"]["mean"]
    assert ma != mc  # a different seed draws different builds
    std = a["positions"][0]["monte_carlo"]["full_scale_error_pct"]["std"]
    assert abs(ma - mc) <= 4 * std * math.sqrt(2 / 4000)  # standard error of a difference of means


def test_unused_chain_parts_are_not_toleranced():
    # Kirchhoff's current law: parts that hang from the circuit by one node (the unused top of a
    # chain, a pair of resistors tied to com only) carry no current, so they are no worst-case parameters.
    elements = (
        MovementElement("M1", "m", "com"),
        Resistor("R1", "t1", "m", 9.5e3, tolerance=0.01),
        Resistor("R2", "t2", "t1", 90e3, tolerance=0.01),
        Contact("S1", "plus", "t1", ("1 V",)),
        Contact("S2", "plus", "t2", ("10 V",)),
        Resistor("R3", "x", "com", 100.0, tolerance=0.01),  # a parallel pair hanging from com only,
        Resistor("R4", "x", "com", 10.0, tolerance=0.01),  # like a shunt ring switched out
    )
    net = NetworkSpec(elements, (Position("1 V", "voltage", 1.0, ("plus", "com")),
                                 Position("10 V", "voltage", 10.0, ("plus", "com"))))
    # chain segments of Lessons in Electric Circuits ch. 8 scaled to 100 uA, 500 ohm
    spec = Spec("chain", Movement(i_fs_a=100e-6, r_coil_ohm=500.0, class_index=1.5), network=net)
    res = acc.check_project(spec, samples=50)
    lo, hi = res["positions"]
    assert lo["worst_case_parameters"] == ["R1"] and hi["worst_case_parameters"] == ["R1", "R2"]
    np.testing.assert_allclose(lo["input_resistance_ohm"], 10e3, rtol=1e-12)  # V_fs / I_fs
    np.testing.assert_allclose(hi["input_resistance_ohm"], 100e3, rtol=1e-12)
    assert [q["name"] for q in res["parts"]] == ["M1", "R1", "R2", "R3", "R4"]
    assert {"name", "kind", "value_ohm", "target_ohm"} <= set(res["parts"][1])


def test_clamped_voltmeter_linearity_and_leakage():
    # Clamps leak: a diode pair across the coil makes the reading fall short, more at full scale
    # and more when hot (Shockley law, I_s rising with temperature: SPICE temperature law, Massobrio and Antognetti, 2nd ed.).
    p = acc.check_project(voltmeter(0.5, 50e-6, 2000.0, 0.005, diodes=True), samples=200)["positions"][0]
    lin, hot = p["linearity"], p["linearity_hot"]
    assert len(lin) == 10 and len(hot) == 10
    np.testing.assert_allclose([r["applied"] for r in lin], np.arange(1, 11) / 20, rtol=1e-12)
    assert lin[-1]["error_pct"] < 0 and hot[-1]["error_pct"] < lin[-1]["error_pct"]
    assert p["nominal_error_pct"] == lin[-1]["error_pct"]
    errs = [r["error_pct"] for r in lin]
    assert all(b < a for a, b in zip(errs, errs[1:]))  # leakage grows faster than the applied voltage


def test_diode_saturation_current_spread_is_a_worst_case_parameter():
    # Design contract: the worst case covers diode I_s spreads. A larger I_s leaks more, so the
    # corner with both diodes at I_s (1 + spread) and the multiplier high reads lowest (Shockley law).
    base = voltmeter(0.5, 50e-6, 2000.0, 0.005, diodes=True)
    models = {"si": DiodeModel("si", i_s_a=5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9, i_s_spread=0.5)}
    spread = Spec(title=base.title, movement=base.movement, parts=Parts(diodes=models), network=base.network)
    p0 = acc.check_project(base, samples=50)["positions"][0]
    p1 = acc.check_project(spread, samples=50)["positions"][0]
    assert p1["worst_case_parameters"] == ["R1", "D1 I_s", "D2 I_s"] and p1["worst_case_corners"] == 8
    assert p1["worst_case_error_pct"] > p0["worst_case_error_pct"]
    assert p1["worst_case_corner"] == {"R1": 1, "D1 I_s": 1, "D2 I_s": 1}


def test_bad_options_raise_usage_errors():
    spec = voltmeter()
    for kwargs in ({"samples": 1}, {"samples": 2.5}, {"seed": -1}, {"source_impedance_ohm": -5.0},
                   {"source_impedance_ohm": math.inf}):
        with pytest.raises(UsageError):
            acc.check_project(spec, **kwargs)


def _all_floats_finite(obj):
    if isinstance(obj, dict):
        return all(_all_floats_finite(v) for v in obj.values())
    if isinstance(obj, list):
        return all(_all_floats_finite(v) for v in obj)
    if isinstance(obj, float):
        return math.isfinite(obj)
    return True


@pytest.mark.parametrize("name", ["pocket_voltmeter.yaml", "bench_ammeter.yaml", "bench_multimeter.yaml"])
def test_example_projects(name):
    # Contract fields of `planner check --json` (design.md) on the example projects.
    project = pytest.importorskip("planner.project")
    path = ROOT / "projects" / name
    if not path.exists():
        pytest.skip(f"{name} not written yet")
    res = acc.check_project(project.load(str(path)), samples=200, source_impedance_ohm=1e3)
    json.dumps(res, allow_nan=False)
    assert _all_floats_finite(res)
    assert isinstance(res["requirements_met"], bool)
    for p in res["positions"]:
        for key in ("name", "measures", "full_scale", "nominal_error_pct", "worst_case_error_pct",
                    "temperature_error_pct", "yield_fraction", "linearity"):
            assert key in p
        assert len(p["linearity"]) == 10 and len(p["linearity_hot"]) == 10
        assert 0.0 <= p["yield_fraction"] <= 1.0
        assert p["worst_case_error_pct"] >= abs(p["nominal_error_pct"])  # corners include the offset
        assert ("input_resistance_ohm" in p) if p["measures"] == "voltage" else ("burden_voltage_v" in p)
    for q in res["parts"]:
        assert {"name", "kind", "value_ohm", "target_ohm"} <= set(q)
    text = acc.format_check(res)
    for p in res["positions"]:
        assert p["name"] in text
    assert ("requirement met" in text) == res["requirements_met"]


def test_the_check_keeps_gain_change_apart_from_nonlinearity():
    # A resistive voltmeter is linear (Ohm's law): at every temperature its readings lie on a straight
    # line through zero, so its non-linearity is zero and the whole temperature effect is the gain
    # change, the change of the full-scale reading (closed form as in the temperature test above).
    v, i_fs, r_m, a_cu, a_r = 0.5, 50e-6, 2000.0, 3.93e-3, 50e-6
    amb = Ambient(t_ref_k=ZERO_CELSIUS_K + 23, t_min_k=ZERO_CELSIUS_K + 0, t_max_k=ZERO_CELSIUS_K + 40)
    res = acc.check(voltmeter(v, i_fs, r_m, 0.005, tempco=a_r, coil_tempco=a_cu, ambient=amb), samples=50)
    arr = res.position(res.json["positions"][0]["name"])
    r = v / i_fs - r_m
    dt = arr.temperatures_k - amb.t_ref_k
    gain = (v / (r_m * (1 + a_cu * dt) + r * (1 + a_r * dt)) / i_fs * v - v / (r_m + r) / i_fs * v) / v * 100
    np.testing.assert_allclose(arr.gain_change_pct, gain, rtol=1e-9, atol=1e-12)  # solver tolerance
    np.testing.assert_allclose(arr.nonlinearity_pct, 0.0, atol=1e-9)  # [% FS], solver tolerance
    # with a clamp pair across the coil the leakage bends the scale: the non-linearity is no longer zero
    clamped = acc.check(voltmeter(0.5, 50e-6, 2000.0, 0.005, diodes=True), samples=20)
    arr = clamped.position(clamped.json["positions"][0]["name"])
    assert np.max(np.abs(arr.nonlinearity_pct)) > 1e-6
    assert arr.mc_error_pct.shape == (20,) and arr.mc_readings.shape == (20, arr.applied.size)


class _Share:
    """Positions shared with another worker: this check takes ``mine`` in turn, the rest are answered by
    :func:`planner.accuracy.check_positions` (as the dossier's second core does), except ``lost`` ones."""

    def __init__(self, design, mine, theirs, lost=()):
        self._mine = iter(mine)
        self._theirs, self._lost, self._design = list(theirs), set(lost), design

    def take(self):
        return next(self._mine, None)

    def rest(self):
        todo = iter(self._theirs)
        got = acc.check_positions(self._design, lambda: next(todo, None), samples=300, seed=11)
        self.answered = sorted(set(got) - self._lost)
        return {i: v for i, v in got.items() if i not in self._lost}


@pytest.mark.parametrize("name", ["bench_multimeter.yaml", "service_multimeter.yaml"])
def test_positions_checked_elsewhere_give_the_same_check(name):
    """A position's answer does not depend on the process that checks it nor on the order: the check
    with positions dealt to another worker (some of them lost there) equals the check done alone.
    Reference: the same function without sharing (bit for bit, solver counts included)."""
    from planner.project import load

    design = build(load(ROOT / "projects" / name))
    alone = acc.check(design, samples=300, seed=11).json
    n = len(design.net.positions)
    share = _Share(design, range(0, n, 3), [i for i in range(n) if i % 3], lost=[1, n - 1])
    shared = acc.check(design, samples=300, seed=11, share=share).json
    assert share.answered == [i for i in range(n) if i % 3 and i not in (1, n - 1)]  # taken from the worker
    assert json.dumps(shared, sort_keys=True) == json.dumps(alone, sort_keys=True)
