"""Tests of planner.cycle: shapes, cycle rules, adaptive rules on rectifier networks, pre-arcing times."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import comb, wrightomega

import rectifiers as rx
from planner import model as m
from planner.cycle import (DC, FlatTopMains, Impulse, OddHarmonics, Sine, Square, Triangle, adapt, equal_rule,
                           extreme_rows, fixed_rule, gauss_kronrod, joule_integral_sine, pre_arcing_on_grid,
                           pre_arcing_sine, pre_arcing_time_sine, shape_named)
from planner.cycle.shared import Target, adapt_shared
from planner.design import build
from planner.engine import Engine
from planner.errors import UsageError
from planner.solve import saturation_current, thermal_voltage

#: Reading accuracy the rules must reach, as a fraction of full scale (the speed issue's target).
READING_TOL = 1e-6
TOL_A = READING_TOL * rx.I_FS


# --- shapes ---------------------------------------------------------------------------


def test_sine_form_and_crest_factor():
    # textbook rectifier-instrument analysis: form factor pi / (2 sqrt 2) = 1.1107
    s = Sine()
    np.testing.assert_allclose(s.form_factor, math.pi / (2.0 * math.sqrt(2.0)), rtol=1e-15)
    assert round(s.form_factor, 4) == 1.1107
    np.testing.assert_allclose(s.crest_factor, math.sqrt(2.0), rtol=1e-15)
    np.testing.assert_allclose(s.mean_abs(), 2.0 / math.pi, rtol=1e-15)  # rectified mean 2/pi of the peak


def test_average_responding_meter_on_square_and_triangle():
    # [calc] from the form factors: a meter calibrated in sine rms reads a square
    # wave 11.07 % high and a triangle 3.81 % low
    assert round(Square().average_reading_error() * 100.0, 2) == 11.07
    assert round(Triangle().average_reading_error() * 100.0, 2) == -3.81
    assert Sine().average_reading_error() == 0.0


@pytest.mark.parametrize("shape", [Sine(), Square(), Triangle(), FlatTopMains()], ids=lambda s: s.name)
def test_factors_agree_with_sampled_waveform(shape):
    # the closed forms against 2**16 equally spaced instants of the waveform itself (rectangle rule)
    x = shape.samples(2 ** 16)
    rms = math.sqrt(np.mean(x * x))
    mean_abs = np.mean(np.abs(x))
    peak = np.max(np.abs(x))
    np.testing.assert_allclose(peak, 1.0, atol=1e-8)  # samples are fractions of the peak
    np.testing.assert_allclose(shape.crest_factor, peak / rms, rtol=1e-7)
    # the triangle's corners leave the rectangle rule O(h^2) = 1e-8 off
    np.testing.assert_allclose(shape.form_factor, rms / mean_abs, rtol=1e-7)


def test_flat_top_mains_harmonic_content():
    # the stated content (5 % third, 6 % fifth, both against the crest) measured by numpy's FFT
    f = FlatTopMains()
    n = 1024
    spec = np.fft.rfft(f.samples(n)) / (n / 2)
    b1, b3, b5 = (-spec[k].imag for k in (1, 3, 5))  # sine coefficients
    np.testing.assert_allclose([b3 / b1, b5 / b1], [0.05, -0.06], atol=1e-12)
    assert np.all(np.abs(spec[[2, 4, 6, 7, 8, 9]]) < 1e-12)  # no other content
    assert f.crest_factor < math.sqrt(2.0)  # flattened crest
    # the crest is a local minimum: x(pi/2) below the peak
    assert f.at(math.pi / 2) < 1.0 - 1e-3


def test_odd_harmonics_refuse_even_orders():
    with pytest.raises(ValueError):
        OddHarmonics({2: 0.1})


def test_shape_by_name_and_unknown_name():
    assert isinstance(shape_named("triangle"), Triangle)
    with pytest.raises(UsageError, match="choose one of"):
        shape_named("sawtooth")


def test_stated_values():
    assert Sine().peak_of(230.0) == pytest.approx(230.0 * math.sqrt(2.0), rel=1e-15)
    assert DC().peak_of(-5.0) == -5.0
    assert Impulse().peak_of(-1000.0) == 1000.0
    imp = fixed_rule(Impulse())
    assert imp.peak_only and sorted(imp.nodes.tolist()) == [-1.0, 1.0]
    assert math.isnan(Impulse().crest_factor)


# --- fixed rules and tables ----------------------------------------------------------------


def test_gauss_chebyshev_rule_is_exact_for_arcsine_moments():
    # moments of the arcsine law (the sine's amplitude distribution): E[x^2k] = C(2k, k) / 4^k;
    # an n-point Gauss-Chebyshev rule is exact to degree 2n - 1 (Abramowitz and Stegun 25.4.38)
    r = fixed_rule(Sine(), 8, crests=True)
    for k in range(8):
        np.testing.assert_allclose(r.mean(r.nodes ** (2 * k)), comb(2 * k, k) / 4 ** k, rtol=1e-14)
    assert np.all(r.weights[-2:] == 0.0) and set(r.nodes[-2:]) == {1.0, -1.0}  # zero-weight crests
    assert r.peak(r.nodes) == 1.0


def test_triangle_rule_is_uniform():
    # uniform distribution on [-1, 1]: E[x^2k] = 1 / (2k + 1)
    r = fixed_rule(Triangle(), 6, crests=False)
    for k in range(6):
        np.testing.assert_allclose(r.mean(r.nodes ** (2 * k)), 1.0 / (2 * k + 1), rtol=1e-14)


def test_equal_rule_of_a_sine_folds_by_symmetry():
    # the 4096-point cycle mean of any function of the sine, from n/2 + 1 distinct values
    r = equal_rule(Sine(), 4096)
    assert r.size == 2049
    g = lambda x: np.exp(3.0 * x) / (1.0 + x * x)  # noqa: E731
    direct = np.mean(g(np.sin(2.0 * np.pi * np.arange(4096) / 4096)))
    np.testing.assert_allclose(r.mean(g(r.nodes)), direct, rtol=1e-14)
    np.testing.assert_allclose(r.weights.sum(), 1.0, rtol=1e-15)


@pytest.mark.parametrize("n", [101, 333, 1024])
def test_gauss_legendre_of_many_points_against_scipy(n):
    """Above 100 points (Newton's method on the recurrence): the nodes scipy's ``roots_legendre`` gives to
    round-off, and the integral of e^x over [-1, 1], e - 1/e [calc], to round-off (the weights' check).

    Source: scipy.special.roots_legendre (a general reference library); the integral in closed form.
    """
    from scipy.special import roots_legendre

    from planner.cycle.rules import gauss_legendre

    x, w = gauss_legendre(n)
    ref, ref_w = roots_legendre(n)
    np.testing.assert_allclose(x, ref, rtol=0, atol=4e-16)  # nodes: round-off of numbers below 1
    np.testing.assert_allclose(w, ref_w, rtol=1e-8)  # scipy's own weights hold about 1e-9 relative at 1024
    np.testing.assert_allclose(np.sum(w * np.exp(x)), math.e - 1 / math.e, rtol=0, atol=4e-15)
    np.testing.assert_allclose(np.sum(w * x ** 2), 2 / 3, rtol=0, atol=4e-15)  # [calc]


def test_gauss_kronrod_15_exactness():
    # G7-K15 (Kronrod 1965; QUADPACK): K15 is exact to degree 3n + 1 = 22, G7 to 13
    x, wk, wg = gauss_kronrod(7)
    assert x.size == 15
    for k in range(23):
        exact = 0.0 if k % 2 else 2.0 / (k + 1)
        np.testing.assert_allclose(np.sum(wk * x ** k), exact, atol=1e-15)
    for k in range(14):
        exact = 0.0 if k % 2 else 2.0 / (k + 1)
        np.testing.assert_allclose(np.sum(wg * x ** k), exact, atol=1e-15)
    np.testing.assert_allclose(x[1::2], np.polynomial.legendre.leggauss(7)[0], atol=1e-15)


def test_gauss_kronrod_15_against_scipy_table():
    # scipy's copy of QUADPACK's G7-K15 table (scipy.integrate._quad_vec, a private module)
    qv = pytest.importorskip("scipy.integrate._quad_vec")
    if not hasattr(qv, "_quadrature_gk15"):
        pytest.skip("this scipy has no _quadrature_gk15 table")
    seen = []
    qv._quadrature_gk15(-1.0, 1.0, lambda t: seen.append(t) or 0.0, abs)
    x, wk, _ = gauss_kronrod(7)
    np.testing.assert_allclose(np.sort(seen), x, atol=1e-15)
    for f in (np.cos, lambda t: np.exp(2 * t), lambda t: 1.0 / (1.3 + t)):
        ref, _, _ = qv._quadrature_gk15(-1.0, 1.0, f, abs)
        np.testing.assert_allclose(np.sum(wk * f(x)), ref, rtol=1e-14)


# --- adaptive rules on synthetic integrands -----------------------------------------------------


def _softplus(x0, width):
    """A diode-like knee: g(x) = w ln(1 + exp((x - x0)/w)), batched over knee positions x0."""
    x0 = np.atleast_1d(np.asarray(x0, dtype=float))[:, None]

    def g(x):
        z = (np.asarray(x, dtype=float)[None, :] - x0) / width
        return width * np.logaddexp(0.0, z)

    return g


def _quad_mean_sine(g_scalar, points=()):
    # cycle mean over [0, 2 pi) by scipy quad (QUADPACK QAGS) with the knees as breakpoints
    val, _ = quad(lambda th: g_scalar(math.sin(th)), 0.0, 2 * math.pi, points=points, epsabs=1e-15,
                  epsrel=1e-13, limit=400)
    return val / (2 * math.pi)


def test_adaptive_rule_meets_tolerance_on_a_sharp_knee():
    width, x0 = 0.01, 0.3
    g = _softplus(x0, width)
    rule = adapt(Sine(), g, 1.0, 1e-8)
    ref = _quad_mean_sine(lambda s: float(g(np.array([s]))[0, 0]),
                          points=[math.asin(x0), math.pi - math.asin(x0)])
    assert abs(rule.mean(g(rule.nodes))[0] - ref) <= 1e-8
    assert rule.error_mean <= 1e-8
    assert rule.size < 100


def test_verify_refines_where_a_shifted_knee_misses():
    width = 0.005
    rule = adapt(Sine(), _softplus(0.3, width), 1.0, 1e-8, margin=1.0)
    shifted = [0.52, 0.61]
    g = _softplus(shifted, width)
    before = rule.mean(g(rule.nodes))
    refs = [_quad_mean_sine(lambda s, a=a: width * np.logaddexp(0.0, (s - a) / width),
                            points=[math.asin(a), math.pi - math.asin(a)]) for a in shifted]
    assert np.max(np.abs(before - refs)) > 1e-8  # the nominal rule misses on these rows
    checked = rule.verify(g)
    assert checked.refined and checked.size > rule.size
    np.testing.assert_allclose(checked.mean(g(checked.nodes)), refs, rtol=0, atol=1e-8)
    # a rule that passes is returned unchanged, with the check recorded
    again = checked.verify(g)
    assert not again.refined and np.array_equal(again.nodes, checked.nodes)
    assert again.rows_checked == checked.rows_checked + 2


def test_atomic_shapes_need_no_adaptation():
    calls = []
    r = adapt(Square(), lambda x: calls.append(x) or x, 3.0, 1e-9)
    assert not calls and r.error_mean == 0.0
    q = np.abs(r.points(3.0))
    assert r.mean(q) == 3.0 and r.rms(q) == 3.0


def test_extreme_rows():
    v = np.array([5.0, 1.0, 9.0, 3.0, 7.0])
    assert extreme_rows(v, 1).tolist() == [1, 2]
    assert extreme_rows(v, 2).tolist() == [1, 2, 3, 4]


# --- exact single diode with series resistance (Banwell and Jayakumar) -----------------------------


def banwell_current(v, r, i_s, nvt):
    """Diode with series resistance, exact: Banwell and Jayakumar, Electronics Letters 36(4), 291-292, 2000.

    I = (n V_t / R) omega(ln(I_s R / (n V_t)) + (V + I_s R) / (n V_t)) - I_s, Wright omega form
    (scipy.special.wrightomega).
    """
    return (nvt / r) * np.real(wrightomega(math.log(i_s * r / nvt) + (v + i_s * r) / nvt)) - i_s


def _series_diode_spec(r1):
    d = m.DiodeModel("ideal_si", i_s_a=2e-9, n=1.8)  # no R_s, no leakage: the exact formula holds
    els = [m.Resistor("R1", "in", "a", r1, tolerance=0.0, tempco_per_k=0.0), m.Diode("D1", "a", "p", d.name),
           m.MovementElement("M1", "p", "com")]
    mov = m.Movement(i_fs_a=rx.I_FS, r_coil_ohm=rx.R_COIL, class_index=1.5, tempco_per_k=0.0)
    net = m.NetworkSpec(tuple(els), (m.Position("AC", "voltage", 2.5, ("in", "com")),))
    return m.Spec("series diode", mov, m.Parts(diodes={d.name: d}), network=net), d


@pytest.mark.parametrize("temperature_k", [rx.T_REF, rx.T_HOT])
@pytest.mark.parametrize("rms", [0.5, 1.5, 2.5])
def test_half_wave_mean_against_wright_omega_quad(rms, temperature_k):
    spec, d = _series_diode_spec(20e3)
    eng = Engine(build(spec))
    r_total = 20e3 + rx.R_COIL
    # the SPICE temperature law of I_s (Massobrio and Antognetti, Semiconductor Device Modeling with SPICE, 2nd ed.), V_t = k T / q (exact SI)
    i_s = float(saturation_current(d.i_s_a, d.n, d.eg_ev, d.xti, temperature_k, rx.T_REF))
    nvt = d.n * float(thermal_voltage(temperature_k))
    peak = math.sqrt(2.0) * rms
    ref, _ = quad(lambda th: banwell_current(peak * math.sin(th), r_total, i_s, nvt), 0.0, 2 * math.pi,
                  points=[0.0, math.pi], epsabs=0.0, epsrel=1e-12, limit=400)
    ref /= 2 * math.pi
    ev = lambda x: eng.operate("AC", x, kind="voltage", temperature_k=[temperature_k]).movement_current_a  # noqa
    rule = adapt(Sine(), ev, peak, 1e-8 * abs(ref))
    got = rule.mean(ev(rule.points(peak)))[0]
    np.testing.assert_allclose(got, ref, rtol=1e-7)  # issue 15: 1e-7 relative


# --- rectifier networks solved by the engine ---------------------------------------------------------


@pytest.fixture(scope="module", params=["bridge", "half-wave"])
def rectifier(request):
    eng = rx.sized(request.param)
    fac, temps = rx.monte_carlo(eng, 16)
    return request.param, eng, fac, temps


def _reference_4096(eng, fac, temps, shape, peak):
    # 4096 equally spaced phases, each distinct value solved once (equal_rule; the folding is
    # checked against the plain 4096-point mean in test_equal_rule_of_a_sine_folds_by_symmetry)
    ref = equal_rule(shape, 4096)
    q = eng.operate(rx.POSITION, ref.points(peak), kind="voltage", temperature_k=temps, factors=fac).movement_current_a
    return ref.mean(q), ref.rms(q)


def test_sized_networks_read_full_scale():
    # the sizing helper itself: mean movement current at 2.5 V rms is I_fs over 4096 phases
    for kind in ("bridge", "half-wave"):
        np.testing.assert_allclose(rx.sine_mean_4096(rx.sized(kind), 2.5), rx.I_FS, rtol=1e-6)


@pytest.mark.parametrize("fraction", [0.1, 0.5, 1.0])
def test_adaptive_rule_on_rectifiers_against_4096_points(rectifier, fraction):
    kind, eng, fac, temps = rectifier
    s = Sine()
    peak = s.peak_of(fraction * 2.5)
    # built on the nominal parts at the reference and both temperature extremes
    build = rx.evaluator(eng, temperatures=[rx.T_COLD, rx.T_REF, rx.T_HOT])
    rule = adapt(s, build, peak, TOL_A)
    q = rx.evaluator(eng, fac, temps)(rule.points(peak))
    mean = rule.mean(q)
    rule = rule.verify(rx.evaluator(eng, fac, temps, rows=extreme_rows(mean, 2)))
    if rule.refined:
        q = rx.evaluator(eng, fac, temps)(rule.points(peak))
    ref_mean, ref_rms = _reference_4096(eng, fac, temps, s, peak)
    # 1e-6 of full scale against the 4096-point reference (the speed issue's target)
    np.testing.assert_allclose(rule.mean(q), ref_mean, rtol=0, atol=TOL_A)
    np.testing.assert_allclose(rule.rms(q), ref_rms, rtol=0, atol=TOL_A)
    assert rule.error_mean <= TOL_A and rule.error_rms <= TOL_A
    assert rule.size < 129  # fewer than half the 257 distinct values of 512 equal phases
    # the crest is a node: the peak is the crest's current
    np.testing.assert_allclose(rule.peak(q), np.max(np.abs(q), axis=1), rtol=0)


def test_shared_rule_on_rectifiers_against_4096_points(rectifier):
    kind, eng, fac, temps = rectifier
    fs = 2.5
    targets = [Target(Sine(), Sine().peak_of(f * fs), f"sine {f:.0%}") for f in np.arange(1, 11) / 10.0]
    targets += [Target(sh, sh.peak_of(fs), sh.name) for sh in (Square(), Triangle(), FlatTopMains())]
    rule = adapt_shared(targets, rx.evaluator(eng, temperatures=[rx.T_COLD, rx.T_REF, rx.T_HOT]), TOL_A)
    q = rx.evaluator(eng, fac, temps)(rule.points())
    mean = rule.mean(q)
    rows = np.unique(np.concatenate([extreme_rows(mean[:, j], 1) for j in range(len(targets))]))
    rule = rule.verify(rx.evaluator(eng, fac, temps, rows=rows))
    if rule.refined:
        q = rx.evaluator(eng, fac, temps)(rule.points())
        mean = rule.mean(q)
    rms = rule.rms(q)
    for j, t in enumerate(targets):
        ref_mean, ref_rms = _reference_4096(eng, fac, temps, t.shape, t.peak)
        # 1e-6 of full scale against 4096 equally spaced phases; the triangle's corners leave the
        # equally spaced reference itself O(h^2) = about 1e-7 of full scale off
        np.testing.assert_allclose(mean[:, j], ref_mean, rtol=0, atol=TOL_A, err_msg=t.label)
        np.testing.assert_allclose(rms[:, j], ref_rms, rtol=0, atol=TOL_A, err_msg=t.label)
    assert np.all(rule.error_mean <= TOL_A)
    assert rule.size < 13 * 40  # far fewer than one adaptive rule per target


def test_square_wave_reads_high_on_an_ideal_rectifier():
    # a high range (250 V bridge): the diode drops are negligible, so the reading of a square
    # wave of the full-scale rms approaches +11.07 % ([calc] from the form factors)
    eng = rx.sized("bridge", 250.0)
    targets = [Target(Sine(), Sine().peak_of(250.0)), Target(Square(), 250.0), Target(Triangle(),
                                                                                   Triangle().peak_of(250.0))]
    rule = adapt_shared(targets, rx.evaluator(eng), TOL_A)
    mean = rule.mean(rx.evaluator(eng)(rule.points()))[0]
    rel = mean[1:] / mean[0] - 1.0
    np.testing.assert_allclose(rel, [0.1107, -0.0381], atol=2e-3)  # diode drops: 0.3 % of 250 V at most


# --- pre-arcing over the onset phase ---------------------------------------------------------------------


@pytest.mark.parametrize("phase", [0.0, 0.4, math.pi / 2, 2.5])
def test_joule_integral_closed_form_against_quad(phase):
    ip, f = 186.0, 50.0
    w = 2 * math.pi * f
    for t in (1e-5, 3.3e-3, 0.0137, 0.05):
        ref, _ = quad(lambda tau: (ip * math.sin(w * tau + phase)) ** 2, 0.0, t, epsabs=0, epsrel=1e-13, limit=200)
        np.testing.assert_allclose(joule_integral_sine(t, ip, f, phase), ref, rtol=1e-11)


def test_pre_arcing_time_against_independent_root():
    ip, f, i2t = 50.0, 60.0, 0.9
    w = 2 * math.pi * f
    for phase in (0.0, 1.0, math.pi / 2):
        def joule(t):  # numerical integration of i^2, root by brentq: independent of the closed form
            return quad(lambda tau: (ip * math.sin(w * tau + phase)) ** 2, 0.0, t, epsabs=0, epsrel=1e-13,
                        limit=200)[0]

        ref = brentq(lambda t: joule(t) - i2t, 0.0, 1.0, xtol=1e-15, rtol=1e-13)
        np.testing.assert_allclose(pre_arcing_time_sine(i2t, ip, f, phase), ref, rtol=1e-10)


def test_pre_arcing_of_the_mains_fault_of_issue_13():
    # issue 13: 1 A range on the mains, 186 A peak at 50 Hz, melting I2t that gives 87 us at the rms;
    # integrating i^2 gives about 43 us from the crest and about 1.1 ms from a zero crossing
    ip, f = 186.0, 50.0
    i2t = (ip / math.sqrt(2)) ** 2 * 87e-6
    r = pre_arcing_sine(i2t, ip, f)
    assert abs(r.times_s["crest"] - 43.5e-6) < 0.5e-6
    assert abs(r.times_s["zero crossing"] - 1.1e-3) < 0.02e-3
    assert r.slower == "zero crossing" and r.time_s == r.times_s["zero crossing"]
    np.testing.assert_allclose(r.rms_time_s, 87e-6, rtol=1e-12)
    # short-time expansions [calc]: from the crest t ~ I2t / I_p^2 (1 + (wt)^2/3), from a zero crossing
    # t ~ (3 I2t / (I_p w)^2)^(1/3) (first term of the series of the closed form)
    w = 2 * math.pi * f
    t0 = i2t / ip ** 2
    np.testing.assert_allclose(r.times_s["crest"], t0 * (1 + (w * t0) ** 2 / 3), rtol=1e-6)
    np.testing.assert_allclose(r.times_s["zero crossing"], (3 * i2t / (ip * w) ** 2) ** (1 / 3), rtol=0.03)
    # the slowest onset lies before a zero crossing and takes longer than either named onset
    assert r.times_s["slowest"] > r.times_s["zero crossing"]
    np.testing.assert_allclose(joule_integral_sine(r.times_s["slowest"], ip, f, r.onsets_rad["slowest"]), i2t,
                               rtol=1e-10)


@pytest.mark.parametrize("cycles", [0.05, 3.7])
def test_pre_arcing_on_a_phase_grid_matches_the_closed_form(cycles):
    ip, f = 10.0, 50.0
    T = 1 / f
    i2t = 0.5 * ip ** 2 * T * cycles  # 'cycles' periods at the rms
    grid = ip * np.sin(2 * np.pi * np.arange(512) / 512)
    r = pre_arcing_on_grid(i2t, grid, T)
    exact = pre_arcing_sine(i2t, ip, f)
    # periodic cubic spline on 512 points: interpolation error ~ h^4 (de Boor)
    for key in ("crest", "zero crossing", "slowest"):
        np.testing.assert_allclose(r.times_s[key], exact.times_s[key], rtol=1e-7)
    assert r.slower == exact.slower


def test_pre_arcing_of_a_half_wave_current():
    # a rectified current: zero for half the cycle. Reference: quad of the exact waveform, brentq.
    ip, f = 20.0, 50.0
    T, w = 1 / f, 2 * math.pi * f
    i_of = lambda t: ip * max(math.sin(w * t), 0.0)  # noqa: E731
    i2t = 0.4 * 0.25 * ip ** 2 * T  # 0.4 cycles at its rms (I_p / 2)
    grid = np.array([i_of(k * T / 1024) for k in range(1024)])
    r = pre_arcing_on_grid(i2t, grid, T)

    def ref_from(t_on):
        def joule(t):
            edges = [t_on + k * T / 2 for k in range(1, 8)]
            pts = [e for e in edges if e < t_on + t]
            return quad(lambda tau: i_of(tau) ** 2, t_on, t_on + t, points=pts or None, epsabs=0, epsrel=1e-12,
                        limit=200)[0]
        return brentq(lambda t: joule(t) - i2t, 0.0, 3 * T, xtol=1e-14, rtol=1e-12)

    np.testing.assert_allclose(r.onsets_rad["crest"], math.pi / 2, atol=1e-12)
    np.testing.assert_allclose(r.times_s["crest"], ref_from(T / 4), rtol=1e-5)  # kinks: spline O(h^2)
    np.testing.assert_allclose(r.times_s["zero crossing"], ref_from(T / 2), rtol=1e-5)
    # from the zero crossing the current stays off for half a cycle, then rises
    assert r.times_s["zero crossing"] > T / 2
    assert r.slower == "zero crossing"


def test_values_on_a_phase_grid_from_the_nodes():
    # a memoryless response resampled to equally spaced phases (for the time-ordered Joule integral)
    g = _softplus(0.3, 0.05)
    rule = adapt(Sine(), g, 1.0, 1e-9)
    grid = rule.on_phase_grid(g(rule.nodes), 512)
    exact = g(Sine().samples(512))
    # PCHIP between the nodes (Fritsch and Carlson 1980): O(h^3) where the response is smooth
    np.testing.assert_allclose(grid, exact, rtol=0, atol=1e-4)
    assert grid.shape == (1, 512)
    sq = fixed_rule(Square())
    np.testing.assert_array_equal(sq.on_phase_grid(np.array([2.0, -1.0]), 8), [2.0] * 4 + [-1.0] * 4)


def test_shared_weights_are_exact_for_a_polynomial_response():
    # product integration is exact when the response is a polynomial the panels' interpolants hold:
    # moments of the arcsine law E[x^2k] = C(2k, k) / 4^k, of the uniform law 1 / (2k + 1), and for
    # the flat-topped wave scipy quad over its phase
    coef = {6: 1.0, 3: -0.3, 1: 1.0, 0: 0.2}
    g = lambda x: sum(c * np.asarray(x, dtype=float) ** k for k, c in coef.items())  # noqa: E731
    s, tri, flat = Sine(), Triangle(), FlatTopMains()
    targets = [Target(s, 0.3), Target(s, -0.7), Target(s, 1.0), Target(tri, 0.9), Target(Square(), 0.5),
               Target(flat, 0.8), Target(DC(), -0.4), Target(s, 0.0)]
    rule = adapt_shared(targets, lambda x: g(x)[None, :], 1e-13)
    got = rule.mean(g(rule.nodes * rule.span))

    def sine_mean(a):
        return sum(c * a ** k * (comb(k, k // 2) / 2 ** k if k % 2 == 0 else 0.0) for k, c in coef.items())

    def tri_mean(a):
        return sum(c * a ** k * (1.0 / (k + 1) if k % 2 == 0 else 0.0) for k, c in coef.items())

    flat_mean = quad(lambda t: float(g(0.8 * flat.at(t))), -math.pi / 2, math.pi / 2, epsabs=0,
                     epsrel=1e-13, limit=200)[0] / math.pi
    want = [sine_mean(0.3), sine_mean(-0.7), sine_mean(1.0), tri_mean(0.9), 0.5 * (g(0.5) + g(-0.5)), flat_mean,
            g(-0.4), g(0.0)]
    np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(rule.weights.sum(axis=1), 1.0, rtol=1e-13)
    # crest values: g at +peak and -peak of each target (DC: its level twice)
    crest = rule.crest_values(g(rule.nodes * rule.span))
    np.testing.assert_allclose(crest[2], [g(1.0), g(-1.0)], rtol=1e-12)
    np.testing.assert_allclose(crest[6], [g(-0.4), g(-0.4)], rtol=1e-12)


# --- the shared rule's building blocks: moments, look-ahead, check nodes ------------------------------------


@pytest.mark.parametrize("scale,lo,hi", [(1.0, -1.0, -0.5), (0.7, -0.2, 0.3), (-0.4, 0.1, 0.9), (0.3, 0.5, 0.8),
                                         (1.0, 0.99, 1.0)])
def test_sine_moments_against_quad(scale, lo, hi):
    # the Legendre moments of the arcsine law of s sin t on a panel, against scipy quad of
    # P_k((y - mid) / half) / (pi sqrt(s^2 - y^2)) with the end singularities as quad's 'alg' weight
    from planner.cycle.shared import MAX_DEGREE, _sine_moments

    got = _sine_moments([scale], lo, hi)[0]
    s = abs(scale)
    a, b = max(lo, -s), min(hi, s)
    mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    al, be = (-0.5 if a == -s else 0.0), (-0.5 if b == s else 0.0)  # (y - a)^al (b - y)^be: quad's 'alg' weight
    want = np.zeros(MAX_DEGREE + 1)
    for k in range(MAX_DEGREE + 1):
        pk = np.polynomial.legendre.Legendre.basis(k)

        def rest(y, pk=pk):  # the density 1 / (pi sqrt(s^2 - y^2)) without the factors the weight holds
            return float(pk((y - mid) / half)) / math.pi * (s + y) ** (-0.5 - al) * (s - y) ** (-0.5 - be)

        want[k] = quad(rest, a, b, weight="alg", wvar=(al, be), epsabs=1e-14, epsrel=1e-11)[0] if b > a else 0.0
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-12)  # quad to 1e-11 relative; the 48-point phase rule is exact there


def test_look_ahead_keeps_the_rule(rectifier, monkeypatch):
    # solving halves ahead changes how many solves a rule takes, not the rule: the same panels, orders and
    # weights as plain halving (a sharp-kneed 250 V bridge and the fixture's 2.5 V rectifier)
    import planner.cycle.shared as sh

    kind, eng, fac, temps = rectifier
    for engine, fs in ((eng, 2.5), (rx.sized("bridge", 250.0), 250.0)):
        targets = [Target(Sine(), Sine().peak_of(f * fs)) for f in np.arange(1, 11) / 10.0]
        calls = []

        def ev(x, engine=engine):
            calls.append(len(x))
            return rx.evaluator(engine, temperatures=[rx.T_COLD, rx.T_HOT])(x)

        rules = {}
        for depth in (0, sh.LOOKAHEAD):
            monkeypatch.setattr(sh, "LOOKAHEAD", depth)
            calls.clear()
            rules[depth] = (adapt_shared(targets, ev, TOL_A), len(calls))
        (plain, n0), (ahead, n2) = rules[0], rules[sh.LOOKAHEAD]
        np.testing.assert_array_equal(ahead.panels, plain.panels)
        np.testing.assert_array_equal(ahead.orders, plain.orders)
        np.testing.assert_allclose(ahead.weights, plain.weights, rtol=0, atol=1e-13)
        assert n2 <= n0


def test_check_nodes_are_what_verify_solves_and_padding_keeps_the_means(rectifier):
    kind, eng, fac, temps = rectifier
    targets = [Target(Sine(), Sine().peak_of(f * 2.5)) for f in (0.3, 1.0)]
    rule = adapt_shared(targets, rx.evaluator(eng), TOL_A)
    asked = []

    def ev(x):
        asked.append(np.array(x))
        return rx.evaluator(eng, fac, temps, rows=[0, 1])(x)

    q = rx.evaluator(eng, fac, temps, rows=[0, 1])(rule.points())
    rule.verify(ev, known=q)
    np.testing.assert_array_equal(asked[0], rule.span * rule.check_nodes())  # the same floats
    extra = rule.check_nodes()
    padded = rule.padded(extra)
    q_all = np.concatenate([q, ev(rule.span * extra)], axis=1)
    np.testing.assert_array_equal(padded.points(), np.concatenate([rule.points(), rule.span * extra]))
    np.testing.assert_allclose(padded.mean(q_all), rule.mean(q), rtol=1e-15, atol=0)
    np.testing.assert_allclose(padded.rms(q_all), rule.rms(q), rtol=1e-15, atol=0)
    np.testing.assert_allclose(padded.peak(q_all), rule.peak(q), rtol=1e-15, atol=0)
