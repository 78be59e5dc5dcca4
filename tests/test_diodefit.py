"""Checks of planner.diodefit: the exact diode current, the fit, its uncertainty, input errors.

Synthetic points are generated explicitly from the element equations of the design
contract (docs/solver.md, "Element equations"): pick junction voltages V_j,
then I = I_s (exp(V_j / n V_t) - 1) + V_j / R_p and V = V_j + I R_s. No solver is
involved, so the generator is independent of the code under test.
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pytest
import yaml
from scipy.optimize import brentq

from planner import diodefit as df
from planner.errors import ProjectError, UsageError
from planner.model import DiodeModel
from planner.units import parse

K_B = 1.380649e-23  # J/K, exact SI (BIPM SI Brochure, 9th ed.)
Q_E = 1.602176634e-19  # C, exact SI
T_REF = 296.15  # 23 degC, the planner's reference temperature

KEYS4 = ("saturation_current_a", "emission", "series_resistance_ohm", "leakage_resistance_ohm")


def vt(t_k):
    return K_B * np.asarray(t_k, dtype=float) / Q_E


def spice_is(i_s0, n, eg, xti, t, t0):
    """SPICE temperature law of I_s, written out from Massobrio & Antognetti (design contract)."""
    return i_s0 * (t / t0) ** (xti / n) * np.exp((t / t0 - 1.0) * eg / (n * vt(t)))


def make_points(i_s, n, r_s, r_p, vj, t_k=T_REF, *, eg=1.11, xti=3.0, t0=T_REF):
    """(V, I) from chosen junction voltages, explicitly from the contract's equations."""
    ist = spice_is(i_s, n, eg, xti, t_k, t0)
    i = ist * np.expm1(vj / (n * vt(t_k))) + vj / r_p
    return vj + i * r_s, i


def forward_grid(i_s, n, i_lo=1e-7, i_hi=0.1, count=28, t_k=T_REF):
    """Junction voltages whose exponential current spans i_lo .. i_hi, plus reverse points."""
    vj = n * vt(t_k) * np.log(np.logspace(math.log10(i_lo), math.log10(i_hi), count) / i_s)
    return np.concatenate([vj, [-1.0, -5.0, -10.0, -20.0]])


# --- the exact current -----------------------------------------------------------------


@pytest.mark.parametrize("v, r, expected", [
    (5.0, 1e3, 4.307456e-3),
    (10.0, 1e4, 0.9346955e-3),
    (100.0, 1e5, 0.9934538e-3),
])
def test_current_matches_banwell_jayakumar_values(v, r, expected):
    # Banwell & Jayakumar, Electronics Letters 36(4) 2000, values computed from their closed
    # form with I_s = 1e-14 A, n = 1, 300 K [calc; tests/reference/diode.md]
    i = df.diode_current(v, 1e-14, vt(300.0), r, math.inf)
    np.testing.assert_allclose(i, expected, rtol=2e-7)  # the references give 7 digits


def test_current_matches_root_finding_on_the_element_equations():
    # independent method: brentq on I - I_s expm1((V - I R_s)/nV_t) - (V - I R_s)/R_p = 0
    rng = np.random.default_rng(11)
    cases = [(10 ** rng.uniform(-18, -6), rng.uniform(0.9, 2.5), 10 ** rng.uniform(-2, 3),
              10 ** rng.uniform(4, 12), rng.uniform(-40.0, 3.0)) for _ in range(300)]
    i_s, n, r_s, r_p, v = (np.array(c) for c in zip(*cases))
    got = df.diode_current(v, i_s, n * vt(T_REF), r_s, r_p)
    for k in range(len(cases)):
        a = n[k] * vt(T_REF)

        def f(i):
            vj = v[k] - i * r_s[k]
            return i - i_s[k] * np.expm1(vj / a) - vj / r_p[k]

        lo = min(0.0, v[k] / r_p[k]) - 2 * i_s[k] - 1e-30
        hi = max(0.0, v[k] / r_s[k]) + 1e-30
        ref = brentq(f, lo, hi, xtol=1e-300, rtol=1e-15, maxiter=1000)
        np.testing.assert_allclose(got[k], ref, rtol=1e-10)  # both near machine precision


def test_current_without_series_resistance_is_the_explicit_law():
    # design contract: with R_s = 0, I = I_s (exp(V/nV_t) - 1) + V/R_p directly
    v = np.array([-10.0, -0.1, 1e-6, 0.3, 0.6, 0.8])
    a = 1.9 * vt(T_REF)
    expected = 5e-9 * np.expm1(v / a) + v / 1e9
    np.testing.assert_allclose(df.diode_current(v, 5e-9, a, 0.0, 1e9), expected, rtol=1e-12)  # exact


def test_current_is_finite_where_the_exponential_would_overflow():
    # 50 V across 1 ohm with n = 1: exp(V/nV_t) is far beyond float range; the current must
    # approach (V - V_j)/R_s with V_j a little below 1.3 V (I_s = 1e-14, 50 A) (common practice)
    i = df.diode_current(50.0, 1e-14, vt(T_REF), 1.0, math.inf)
    assert 48.5 < i < 49.5


def test_analytic_jacobian_matches_finite_differences():
    # internal consistency: implicit-differentiation Jacobian against central differences
    vj = forward_grid(3e-9, 1.8)
    v, i = make_points(3e-9, 1.8, 0.7, 2e9, vj)
    t = np.r_[np.full(v.size, T_REF), np.full(v.size, T_REF + 30)]
    v, i = np.r_[v, v], np.r_[i, i * 3]
    fwd = (v > 0) & (i > 0)
    held = np.array([np.nan] * 4 + [1.11, 3.0])
    prob = df._Problem(v, i, t, T_REF, fwd, 1e-9, [0, 1, 2, 3, 4, 5], held)
    z = np.array([math.log(2.5e-9), math.log(1.7), math.log(0.5), math.log(1e9), 1.05, 2.5])
    jac = prob.jacobian(z)
    num = np.empty_like(jac)
    for j in range(z.size):
        h = 1e-6
        up, dn = z.copy(), z.copy()
        up[j] += h
        dn[j] -= h
        num[:, j] = (prob.residuals(up) - prob.residuals(dn)) / (2 * h)
    np.testing.assert_allclose(jac, num, rtol=1e-5, atol=1e-7)  # central-difference error


# --- recovery of known parameters ------------------------------------------------------


DIODES = {
    # invented parameter sets spanning the kinds the planner meets (common practice ranges)
    "silicon small signal": (3e-9, 1.85, 0.7, 2e9),
    "schottky": (2e-7, 1.05, 1.5, 2e8),
    "ideal-ish junction": (1e-14, 1.0, 0.1, 1e11),
    "high emission": (1e-20, 2.0, 5.0, 1e10),
}


@pytest.mark.parametrize("kind", list(DIODES))
def test_noise_free_points_give_the_parameters_back(kind):
    # points from the Shockley equation with series and leakage resistance (design contract)
    i_s, n, r_s, r_p = DIODES[kind]
    v, i = make_points(i_s, n, r_s, r_p, forward_grid(i_s, n))
    fit = df.fit(df.Points(v, i))
    got = [fit.params[k] for k in KEYS4]
    np.testing.assert_allclose(got, [i_s, n, r_s, r_p], rtol=0.01)  # brief: within 1 %
    assert fit.residual_rms < 1e-8  # exact data: the model reproduces them
    assert fit.unresolved == ()
    assert fit.fitted == KEYS4


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5, 6])
def test_noisy_points_truth_within_three_reported_sigma(seed):
    # 1 % multiplicative scatter on every current (seeded); the truth must lie within
    # about 3 reported sigma (linearised covariance), and the sigmas must be small
    true = (3e-9, 1.85, 0.7, 2e9)
    v, i = make_points(*true, forward_grid(3e-9, 1.85, count=35))
    rng = np.random.default_rng(seed)
    i = i * np.exp(0.01 * rng.standard_normal(i.size))
    fit = df.fit(df.Points(v, i))
    for key, t in zip(KEYS4, true):
        sigma = fit.uncertainty[key]
        assert sigma is not None and sigma < 0.05 * t  # 1 % scatter cannot leave 5 % doubt here
        assert abs(fit.params[key] - t) <= 3.0 * sigma, (key, fit.params[key], t, sigma)
    assert 0.006 < fit.residual_rms < 0.014  # recovers the 1 % scatter (ln scale)


def test_uncertainty_scales_like_the_scatter():
    # a linear-regression property: sigma proportional to the residual scatter (Numerical Recipes 15.5)
    base = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    noise = np.random.default_rng(7).standard_normal(base[1].size)
    sig = []
    for level in (0.002, 0.02):
        fit = df.fit(df.Points(base[0], base[1] * np.exp(level * noise)))
        sig.append(fit.uncertainty["emission"])
    np.testing.assert_allclose(sig[1] / sig[0], 10.0, rtol=0.1)  # first-order theory, loose


def _at_temperatures(temps, *, eg, xti, i_s=3e-9, n=1.85, r_s=0.7, r_p=2e9):
    v_all, i_all, t_all = [], [], []
    for t in temps:
        vj = forward_grid(spice_is(i_s, n, eg, xti, t, T_REF), n, count=16, t_k=t)
        v, i = make_points(i_s, n, r_s, r_p, vj, t, eg=eg, xti=xti)
        v_all.append(v), i_all.append(i), t_all.append(np.full(v.size, t))
    return df.Points(np.concatenate(v_all), np.concatenate(i_all), np.concatenate(t_all))


def test_two_temperatures_give_the_band_gap_with_xti_held():
    # SPICE temperature law (Massobrio & Antognetti), silicon E_g = 1.12 eV, XTI = 3 held
    pts = _at_temperatures([T_REF, T_REF + 35.0], eg=1.12, xti=3.0)
    fit = df.fit(pts)
    assert "band_gap_ev" in fit.fitted and "xti" not in fit.fitted
    np.testing.assert_allclose(fit.params["band_gap_ev"], 1.12, rtol=0.01)  # brief: 1 %
    np.testing.assert_allclose([fit.params[k] for k in KEYS4], [3e-9, 1.85, 0.7, 2e9], rtol=0.01)
    assert fit.temperature_k == T_REF
    assert fit.uncertainty["xti"] is None


def test_two_temperatures_schottky_with_given_xti():
    # Schottky defaults of the SPICE law: E_g = 0.69 eV, XTI = 2 (ngspice manual, diode model; Massobrio and Antognetti, 2nd ed.)
    pts = _at_temperatures([T_REF - 20.0, T_REF + 25.0], eg=0.69, xti=2.0, i_s=2e-7, n=1.05,
                           r_s=1.5, r_p=2e8)
    fit = df.fit(pts, xti=2.0)
    np.testing.assert_allclose(fit.params["band_gap_ev"], 0.69, rtol=0.01)  # 1 %
    assert fit.params["xti"] == 2.0
    # parameters hold at the measured temperature nearest 23 degC
    assert fit.temperature_k == T_REF - 20.0


def test_four_temperatures_give_band_gap_and_xti():
    # both constants of the SPICE law from four temperatures, noise-free
    pts = _at_temperatures([273.15, T_REF, 323.15, 348.15], eg=1.12, xti=3.5)
    fit = df.fit(pts)
    assert {"band_gap_ev", "xti"} <= set(fit.fitted)
    np.testing.assert_allclose([fit.params["band_gap_ev"], fit.params["xti"]], [1.12, 3.5], rtol=0.01)
    assert any("correlation" in note for note in fit.notes)


def test_wrong_held_xti_biases_the_band_gap_as_the_law_predicts():
    # with XTI held wrong by dX, the law (Massobrio & Antognetti) compensates through
    # dE_g = -dX * n V_t(T1) ln(T1/T0) / (T1/T0 - 1): the fitted E_g must follow that
    t1 = T_REF + 35.0
    pts = _at_temperatures([T_REF, t1], eg=1.12, xti=3.0)
    fit = df.fit(pts, xti=2.0)
    expected = 1.12 + 1.0 * 1.0 * vt(t1) * math.log(t1 / T_REF) / (t1 / T_REF - 1.0)
    np.testing.assert_allclose(fit.params["band_gap_ev"], expected, rtol=1e-4)  # exact relation


# --- what the data cannot tell -----------------------------------------------------------


def test_forward_only_low_current_points_leave_leakage_unresolved():
    # no reverse points and no low-current leakage: R_p ends on its bound and is reported so
    vj = 1.0 * vt(T_REF) * np.log(np.logspace(-6, -1, 20) / 1e-14)
    v, i = make_points(1e-14, 1.0, 0.2, math.inf, vj)
    fit = df.fit(df.Points(v, i))
    assert "leakage_resistance_ohm" in fit.unresolved
    assert fit.uncertainty["leakage_resistance_ohm"] is None
    assert math.isinf(fit.model().r_p_ohm)
    block = yaml.safe_load(df.yaml_block(fit))
    assert "leakage_resistance" not in block["fitted"]
    out = df.fit_json(fit)
    assert out["leakage_resistance_ohm"] is None and out["uncertainty"]["leakage_resistance_ohm"] is None
    json.dumps(out, allow_nan=False)  # strict JSON even with no leakage
    np.testing.assert_allclose(fit.params["series_resistance_ohm"], 0.2, rtol=0.01)  # 1 %


def test_series_resistance_the_points_do_not_show_is_held_at_zero():
    # points only up to about 1 uA: I R_s stays far below n V_t, so freeing R_s improves
    # the fit by less than 3 sigma (delta chi-square test, Numerical Recipes 15.6, from memory); it is
    # reported unresolved, written as 0 ohm, and the free-fit value is quoted in a note
    vj = np.linspace(0.1, 0.55, 20)
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, vj)
    i = i * np.exp(0.01 * np.random.default_rng(5).standard_normal(i.size))
    fit = df.fit(df.Points(v, i))
    assert "series_resistance_ohm" in fit.unresolved
    assert fit.params["series_resistance_ohm"] == 0.0
    assert fit.uncertainty["series_resistance_ohm"] is None
    assert any(note.startswith("series resistance not resolved") and "free fit" in note
               for note in fit.notes)
    assert yaml.safe_load(df.yaml_block(fit))["fitted"]["series_resistance"] == "0 ohm"
    # the exponential region still fits well: I_s and n within 3 sigma of the truth
    for key, true in (("saturation_current_a", 3e-9), ("emission", 1.85)):
        assert abs(fit.params[key] - true) <= 3.0 * fit.uncertainty[key], key
    assert fit.uncertainty["emission"] < 0.01 * 1.85


def test_points_at_zero_volts_are_left_out_with_a_note():
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    fit = df.fit(df.Points(np.r_[0.0, v], np.r_[1e-12, i]))
    assert fit.n_points == v.size
    assert any("0 V" in note for note in fit.notes)


# --- input files ----------------------------------------------------------------------------


def _write(tmp_path, text, name="points.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_read_points_with_comments_blanks_and_temperature(tmp_path):
    path = _write(tmp_path, "# a comment\n\nvoltage_v, current_a, temperature_c\n0.5,1e-5,23\n"
                            "# between\n0.6, 1e-4 ,23\n\n0.7,1e-3,50\n")
    pts = df.read_points(path)
    np.testing.assert_array_equal(pts.voltage_v, [0.5, 0.6, 0.7])
    np.testing.assert_array_equal(pts.current_a, [1e-5, 1e-4, 1e-3])
    np.testing.assert_allclose(pts.temperature_k, [296.15, 296.15, 323.15])  # 0 degC = 273.15 K exact
    np.testing.assert_array_equal(pts.lines, [4, 6, 8])
    assert pts.header_line == 3


def test_read_points_columns_in_any_order(tmp_path):
    pts = df.read_points(_write(tmp_path, "current_a,voltage_v\n1e-3,0.6\n"))
    assert pts.voltage_v[0] == 0.6 and pts.current_a[0] == 1e-3 and pts.temperature_k is None


GOOD = "voltage_v,current_a\n0.3,1e-7\n0.4,1e-6\n0.5,1e-5\n0.6,1e-4\n0.7,1e-3\n0.8,1e-2\n"


@pytest.mark.parametrize("text, line, words", [
    ("0.3,1e-7\n0.4,1e-6\n", 1, "header"),  # data where the header belongs
    ("# only comments\n\n", 2, "header"),
    ("volts,amps\n0.3,1e-7\n", 1, "unknown column"),
    ("voltage_v,voltage_v\n0.3,1e-7\n", 1, "twice"),
    ("voltage_v,temperature_c\n0.3,23\n", 1, "current_a"),
    ("# c\nvoltage_v,current_a\n", 2, "no points"),
    ("voltage_v,current_a\n0.3,1e-7\n0.4,abc\n", 3, "not a number"),
    ("voltage_v,current_a\n0.3,1e-7\n0.4\n", 3, "cell"),
    ("voltage_v,current_a\n0.3;1e-7\n", 2, "semicolons"),
    ("voltage_v,current_a\n0.3,1e-7\n0.4,nan\n", 3, "finite"),
    ("voltage_v,current_a\n0.3,1 uA\n", 2, "no unit text"),
    ("voltage_v,current_a,temperature_c\n0.3,1e-7,23\n0.4,1e-6,-300\n", 3, "absolute zero"),
    ("voltage_v,current_a,temperature_c\n0.3,1e-7,23\n0.4,1e-6,\n", 3, "blank"),
    # values no bench measurement of a diode gives: a unit or an exponent typed wrong
    ("voltage_v,current_a\n0.3,1e-7\n1e6,1e-3\n", 3, "1e6 V is beyond the 10000 V"),
    ("voltage_v,current_a\n0.3,1e-7\n0.7,1e300\n", 3, "1e300 A is beyond the 1000 A"),
    ("voltage_v,current_a\n0.3,1e-7\n0.7,-2e3\n", 3, "-2e3 A is beyond"),
    ("voltage_v,current_a\n0.3,1e-300\n", 2, "below the 1e-18 A any meter resolves"),
    ("voltage_v,current_a\n1e-300,1e-7\n", 2, "below the 1e-09 V any meter resolves"),
    ("voltage_v,current_a,temperature_c\n0.3,1e-7,23\n0.4,1e-6,1e9\n", 3, "above the 500 degC"),
])
def test_bad_files_name_the_line_and_the_remedy(tmp_path, text, line, words):
    path = _write(tmp_path, text)
    with pytest.raises(ProjectError) as err:
        df.read_points(path)
    assert err.value.path == str(path)
    assert err.value.line == line
    assert words in err.value.message
    assert f"points.csv:{line}:" in str(err.value)


@pytest.mark.parametrize("text, line, words", [
    # fewer points than parameters (plus one for the scatter)
    ("voltage_v,current_a\n0.3,1e-7\n0.5,1e-5\n0.7,1e-3\n", 4, "at least 5"),
    # every point reverse: the diode was measured the other way round
    ("voltage_v,current_a\n-0.3,-1e-7\n-0.4,-1e-6\n-0.5,-1e-5\n-0.6,-1e-4\n-0.7,-1e-3\n"
     "-0.8,-1e-2\n", 1, "other way round"),
    # voltage and current of opposite signs
    ("voltage_v,current_a\n0.3,-1e-7\n0.4,-1e-6\n0.5,-1e-5\n0.6,-1e-4\n0.7,-1e-3\n0.8,-1e-2\n",
     1, "reversed"),
    # one forward voltage only
    ("voltage_v,current_a\n0.6,1e-3\n-1,-1e-9\n-2,-2e-9\n-5,-5e-9\n-10,-1e-8\n-20,-2e-8\n",
     2, "two forward points"),
    # the second temperature has one forward point only
    ("voltage_v,current_a,temperature_c\n" + "".join(f"{0.3 + 0.1 * k:.1f},{10.0 ** (k - 7)},23\n"
                                                     for k in range(6)) + "0.5,1e-4,60\n",
     8, "60 degC"),
])
def test_unfittable_points_name_the_line_and_the_remedy(tmp_path, text, line, words):
    path = _write(tmp_path, text)
    with pytest.raises(ProjectError) as err:
        df.fit(df.read_points(path))
    assert err.value.path == str(path)
    assert err.value.line == line
    assert words in err.value.message


def test_values_at_the_limits_fit_without_warnings(tmp_path):
    # the largest and smallest values read_points accepts must reach the fit's verdict without
    # an overflow: an error (or a verdict), never a numpy warning or a crash
    text = ("voltage_v,current_a\n1e4,1e3\n-1e4,-1e3\n0.5,1e-18\n0.6,1e-9\n0.7,1e-3\n1e-9,0\n"
            "0.65,1e-6\n")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fit = df.fit(df.read_points(_write(tmp_path, text)))
    assert not fit.usable  # these points follow no diode law


def test_points_made_in_code_are_checked_like_the_file():
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    i = i.copy()
    i[4] = 1e300
    with pytest.raises(ProjectError, match="current_a: 1e\\+300 A is beyond the 1000 A") as err:
        df.fit(df.Points(v, i))
    assert err.value.line == 5  # the default line numbers count the points from 1


@pytest.mark.parametrize("xti", [math.nan, math.inf, -math.inf, -1.0, 20.5, "three"])
def test_a_held_xti_must_be_a_number_from_0_to_20(xti):
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    with pytest.raises(UsageError, match="--xti: .* give a number from 0 to 20"):
        df.fit(df.Points(v, i), xti=xti)


@pytest.mark.parametrize("t_k", [0.0, -5.0, math.nan, math.inf, 1e9])
def test_a_measurement_temperature_must_be_plausible(t_k):
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    with pytest.raises(UsageError, match="--temperature: .* is not a measurement temperature"):
        df.fit(df.Points(v, i), temperature_k=t_k)


# --- the quality gate ----------------------------------------------------------------------


def test_shuffled_points_are_not_usable():
    # the Shockley law makes the current rise monotonically with the voltage (W. Shockley,
    # Bell System Technical Journal 28, 1949): currents shuffled against their voltages
    # cannot follow it, whatever the parameters
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    i = i[np.random.default_rng(3).permutation(i.size)]
    fit = df.fit(df.Points(v, i, path="bench/mixed.csv"))
    assert not fit.usable and fit.problems
    out = df.fit_json(fit)
    assert out["usable"] is False and out["yaml"] is None and out["problems"] == list(fit.problems)
    json.dumps(out, allow_nan=False)
    text = df.format_fit(fit)
    assert "NOT USABLE" in text and "saturation_current:" not in text
    with pytest.raises(UsageError, match="the fit is not usable"):
        df.yaml_block(fit)


def test_a_resistor_is_not_a_diode():
    # Ohm's law, I = V / 100 ohm: the junction carries none of the current
    v = np.linspace(0.1, 0.6, 6)
    fit = df.fit(df.Points(v, v / 100.0))
    assert not fit.usable
    assert any("resistor of about 100 ohm" in p for p in fit.problems)


def test_scatter_beyond_the_gate_is_not_usable_below_it_is():
    # multiplicative scatter exp(s N(0,1)) of rms s on the ln scale (seeded): 15 % passes, 60 % fails;
    # the gate is rms 0.25 on the ln scale, exp(0.25) - 1 = 28 % of current
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85, count=35))
    noise = np.random.default_rng(5).standard_normal(i.size)
    ok = df.fit(df.Points(v, i * np.exp(0.15 * noise)))
    assert ok.usable and ok.residual_rms < df.quality.MAX_RMS
    bad = df.fit(df.Points(v, i * np.exp(0.6 * noise)))
    assert not bad.usable and any("scatter about the best fit" in p for p in bad.problems)
    np.testing.assert_allclose(math.expm1(df.quality.MAX_RMS), 0.284, atol=5e-4)  # the documented 28 %


def test_the_gate_names_pinned_parameters_and_low_emission():
    from planner.diodefit import quality

    msgs = quality.problems({"emission": 10.0}, {"emission": "upper", "series_resistance_ohm": "lower"}, 0.01, [3])
    assert len(msgs) == 1 and "emission coefficient ended on its search bound" in msgs[0]
    # none: R_s at its lower bound and R_p at its upper bound mean "not shown", an ordinary outcome
    assert quality.problems({"emission": 1.8}, {"series_resistance_ohm": "lower",
                                                "leakage_resistance_ohm": "upper"}, 0.01, [3]) == ()
    # an ideal junction has n = 1 (Shockley 1949): 0.5 is no junction's
    assert "below any junction's" in quality.problems({"emission": 0.5}, {}, 0.01, [3])[0]


def test_missing_file_is_a_project_error(tmp_path):
    with pytest.raises(ProjectError, match="no such file"):
        df.read_points(tmp_path / "absent.csv")


def test_bad_model_name_is_a_usage_error():
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    with pytest.raises(UsageError):
        df.fit(df.Points(v, i), name="my diode: 1")


# --- outputs ---------------------------------------------------------------------------------


def _noisy_fit():
    v, i = make_points(3e-9, 1.85, 0.7, 2e9, forward_grid(3e-9, 1.85))
    i = i * np.exp(0.005 * np.random.default_rng(3).standard_normal(i.size))
    return df.fit(df.Points(v, i, path="bench/d1.csv"), name="d1")


def test_yaml_block_round_trips_to_the_project_keys():
    # keys of parts.diodes in the project file (design contract sketch and projects/*.yaml)
    fit = _noisy_fit()
    loaded = yaml.safe_load(df.yaml_block(fit, "bench_si"))
    assert list(loaded) == ["bench_si"]
    entry = loaded["bench_si"]
    assert set(entry) == {"saturation_current", "emission", "series_resistance",
                          "leakage_resistance", "temperature"}  # one temperature: no band_gap/xti
    # each value reads back through the project's unit parser to 5 significant digits
    back = {
        "saturation_current_a": parse(entry["saturation_current"], "current"),
        "emission": parse(entry["emission"], "dimensionless"),
        "series_resistance_ohm": parse(entry["series_resistance"], "resistance"),
        "leakage_resistance_ohm": parse(entry["leakage_resistance"], "resistance"),
    }
    for key, value in back.items():
        np.testing.assert_allclose(value, fit.params[key], rtol=5e-5)  # 5 significant digits
    np.testing.assert_allclose(parse(entry["temperature"], "temperature"), T_REF, rtol=1e-12)


def test_yaml_block_with_temperature_law_has_every_key():
    fit = df.fit(_at_temperatures([273.15, T_REF, 323.15], eg=1.12, xti=3.0))
    entry = yaml.safe_load(df.yaml_block(fit))["fitted"]
    assert set(entry) == {"saturation_current", "emission", "series_resistance",
                          "leakage_resistance", "band_gap", "xti", "temperature"}
    np.testing.assert_allclose(parse(entry["band_gap"], "energy_ev"), fit.params["band_gap_ev"], rtol=5e-5)
    np.testing.assert_allclose(parse(entry["xti"], "dimensionless"), fit.params["xti"], rtol=5e-5)


def test_fit_json_contract_keys_and_strict_json():
    fit = _noisy_fit()
    out = df.fit_json(fit)
    for key in KEYS4:  # contract keys (brief)
        assert isinstance(out[key], float)
        assert isinstance(out["uncertainty"][key], float)
    assert set(out["uncertainty"]) == set(KEYS4)  # band gap and XTI not fitted here
    assert out["n_points"] == fit.n_points and out["residual_rms"] == fit.residual_rms
    json.dumps(out, allow_nan=False)  # strict JSON: no NaN or Infinity


def test_format_fit_reports_values_residuals_and_the_block():
    fit = _noisy_fit()
    text = df.format_fit(fit)
    assert "bench/d1.csv" in text and "rms" in text
    assert df.yaml_block(fit) in text + "\n" or df.yaml_block(fit).rstrip("\n") in text
    assert "saturation_current:" in text


def test_model_is_a_diode_model_at_the_fit_temperature():
    fit = _noisy_fit()
    m = fit.model()
    assert isinstance(m, DiodeModel) and m.name == "d1" and m.t_nom_k == T_REF
    assert m.i_s_a == fit.params["saturation_current_a"] and m.n == fit.params["emission"]


def test_demo_file_fits_near_the_values_it_was_made_from():
    # projects/drawer_diode.csv is invented demo data; its header states the generating values
    fit = df.fit(df.read_points("projects/drawer_diode.csv"), name="drawer_si")
    truth = {"saturation_current_a": 2.6e-9, "emission": 1.82, "series_resistance_ohm": 0.65,
             "leakage_resistance_ohm": 1.5e9, "band_gap_ev": 1.11}
    for key, value in truth.items():
        assert abs(fit.params[key] - value) <= 3.0 * fit.uncertainty[key], key
    assert fit.residual_rms < 0.01  # the file's scatter is about 0.4 %
