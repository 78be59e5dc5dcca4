"""AC (rectifier) ranges: sizing, the cycle solve, readings, check figures and misrange families.

Each check names its outside source: the form factor of a sine (standard AC circuit
theory: rectified mean 2 sqrt 2 / pi = 0.9003 of the rms for full-wave, 0.4502 for
half-wave; a square wave reads 11.07 % high and a triangle 3.81 % low on an
average-responding meter calibrated in rms of a sine [calc]); the exact solution of
a diode with series resistance (Banwell and Jayakumar, Electronics Letters 36(4),
291-292, 2000) integrated over the phase with ``scipy.integrate.quad``; an
independent nodal solve of the bridge (``scipy.optimize.fsolve`` on Kirchhoff's
current law, Shockley's law per diode) for the linearity table; 4096 equally spaced
phases (the rectangle rule on a periodic integrand: Trefethen and Weideman, SIAM
Review 56, 2014) for the convergence of the cycle rules.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import fsolve
from scipy.special import wrightomega

from planner.accuracy import check_project, draw_factors, parameters
from planner.design import build
from planner.engine import Engine
from planner.errors import ProjectError
from planner.faults.families import stimuli_for
from planner.project import loads

#: Exact SI constants (SI brochure, 9th edition, 2019).
K_B = 1.380649e-23
Q_E = 1.602176634e-19
#: Sine: full-wave rectified mean over rms, 2 sqrt 2 / pi [calc, standard AC theory].
FULL_WAVE = 2.0 * math.sqrt(2.0) / math.pi
#: Average-responding reading of a square wave and a triangle, % of their rms (form factors pi/(2 sqrt 2),
#: 1 and 2/sqrt 3) [calc, from the form factors].
SQUARE_PCT = (math.pi / (2 * math.sqrt(2)) / 1.0 - 1.0) * 100.0     # +11.07 %
TRIANGLE_PCT = (math.pi / (2 * math.sqrt(2)) / (2 / math.sqrt(3)) - 1.0) * 100.0  # -3.81 %

MOVEMENT = "movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}\n"


def _project(body: str, diode: str) -> str:
    return ("title: rectifier test meter (invented)\n" + MOVEMENT +
            "parts:\n  resistors: {series: E96, tolerance: 0.1 %, tempco: 25 ppm/K}\n"
            f"  diodes:\n    d1: {diode}\n" + body)


#: A diode whose drop is small beside a 1000 V range: I_s 1 pA, n 1 (drop about 0.47 V at 78 uA).
SHARP = "{saturation_current: 1 pA, emission: 1, series_resistance: 0 ohm}"
#: A small-signal silicon diode of the design's sketch, without leakage (so the independent
#: computations need no leakage term).
SOFT = "{saturation_current: 5 nA, emission: 1.9, series_resistance: 0.5 ohm}"


@pytest.fixture(scope="module")
def high_bridge():
    spec = loads(_project("ac_voltage: {arrangement: separate, full_scales: [1000 V], rectifier: bridge, "
                          "diode: d1}\n", SHARP), "high.yaml")
    return build(spec)


@pytest.mark.parametrize("rectifier,factor", [("bridge", FULL_WAVE), ("half_wave", FULL_WAVE / 2)])
def test_ideal_rectifier_multiplier(rectifier, factor):
    """1000 V range: multiplier = 0.9003 (bridge) or 0.4502 (half wave) x V_rms / I_fs - R_coil.

    Source: the rectified mean of a sine, 2 sqrt 2 / pi of its rms (standard AC circuit
    theory). The diodes' drops (about 2 x 0.47 V beside 1414 V peak) lower the solved
    multiplier by under 1e-3; the E96 value is within the allowed share
    (0.1 x class 1.5 = 0.15 %) of the solved target.
    """
    spec = loads(_project(f"ac_voltage: {{arrangement: separate, full_scales: [1000 V], rectifier: {rectifier}, "
                          "diode: d1}\n", SHARP), "high.yaml")
    sizing = build(spec).sizing
    seg = next(s for s in sizing.segments if s.role == "multiplier")
    ideal = factor * 1000.0 / 50e-6 - 2000.0
    assert -1e-3 < seg.target_ohm / ideal - 1.0 < 0.0       # the drops lower it, by under 1e-3
    assert abs(seg.achieved_ohm / seg.target_ohm - 1.0) <= 1.5e-3  # E-series share


def test_form_factor_readings(high_bridge):
    """Square +11.07 %, triangle -3.81 % on an average-responding range [calc, form factors].

    The diodes' drops on a 1000 V range move them by a few hundredths of a percent.
    """
    figs = high_bridge.net.positions[0].kind.check_figures(Engine(high_bridge), high_bridge.net.positions[0])
    err = {w["waveform"]: w["error_pct"] for w in figs["waveform_errors"]}
    np.testing.assert_allclose(err["square"], SQUARE_PCT, atol=0.05)      # diodes' drops: < 0.05 % of FS
    np.testing.assert_allclose(err["triangle"], TRIANGLE_PCT, atol=0.05)
    assert abs(SQUARE_PCT - 11.07) < 0.005 and abs(TRIANGLE_PCT + 3.81) < 0.005  # the quoted values


# --- a low range with a real diode: Banwell and Jayakumar over the phase -------------------------------------

R1_OHM = 20e3
HALF_WAVE_NET = f"""network:
  elements:
    - {{name: R1, kind: resistor, between: [in, a], value: {R1_OHM:g} ohm, tempco: 25 ppm/K}}
    - {{name: D1, kind: diode, anode: a, cathode: m, model: d1}}
    - {{name: M1, kind: movement, between: [m, com]}}
  positions:
    - {{name: '2.5 V~', measures: ac_voltage, full_scale: 2.5 V, input: [in, com]}}
"""


def _i_s(t_k, t0_k, i_s=5e-9, n=1.9, eg=1.11, xti=3.0):
    """Saturation current at T: I_s (T/T0)^(XTI/n) exp((T/T0 - 1) E_g / (n V_t(T))).

    Source: the SPICE diode temperature law (Massobrio and Antognetti, *Semiconductor
    Device Modeling with SPICE*, 2nd ed.; ngspice manual, diode model).
    """
    vt = K_B * t_k / Q_E
    return i_s * (t_k / t0_k) ** (xti / n) * math.exp((t_k / t0_k - 1.0) * eg / (n * vt))


def _banwell(v, r, i_s, nvt):
    """Current of a diode with series resistance r at applied v (Banwell and Jayakumar 2000, Wright omega form)."""
    return nvt / r * float(np.real(wrightomega(math.log(i_s * r / nvt) + (v + i_s * r) / nvt))) - i_s


@pytest.mark.parametrize("t_c", [23.0, 40.0])
@pytest.mark.parametrize("fraction", [0.3, 0.7, 1.0])
def test_mean_current_against_banwell_quad(fraction, t_c, monkeypatch):
    """Half-wave 2.5 V range: cycle mean of the movement current to 1e-7 relative.

    Source: the exact current of a diode with series resistance (Banwell and Jayakumar,
    Electronics Letters 36(4), 291-292, 2000), R = R1(T) + R_coil(T) + R_s, integrated
    over one cycle of the phase with ``scipy.integrate.quad``. Both cycle rules: the
    fixed 1024-node rule of a single parameter row, and the adaptive shared rule of a
    batch (two rows here). The check builds the adaptive rule to 1e-6 of I_fs (a reading
    to 1e-6 of full scale, 4e-7 of this mean at 30 %); here it is asked for 1e-10 of
    I_fs, so that what is compared is the solver's instantaneous states and the rule's
    error control, not the check's tolerance.
    """
    import planner.ranges.ac as ac

    monkeypatch.setattr(ac, "TOLERANCE_FS", 1e-10)
    design = build(loads(_project(HALF_WAVE_NET, SOFT), "hw.yaml"))
    eng = Engine(design)
    t_ref = design.spec.ambient.t_ref_k
    t_k = 273.15 + t_c
    r = R1_OHM * (1 + 25e-6 * (t_k - t_ref)) + 2000.0 * (1 + 3.93e-3 * (t_k - t_ref)) + 0.5
    i_s = _i_s(t_k, t_ref)
    nvt = 1.9 * K_B * t_k / Q_E
    peak = math.sqrt(2.0) * 2.5 * fraction
    mean = quad(lambda th: _banwell(peak * math.sin(th), r, i_s, nvt), 0.0, 2 * math.pi, points=[math.pi],
                epsabs=0.0, epsrel=1e-13, limit=400)[0] / (2 * math.pi)
    single = float(eng.operate("2.5 V~", [2.5 * fraction], temperature_k=t_k).movement_current_a[0, 0])
    batch = eng.operate("2.5 V~", [2.5 * fraction], temperature_k=[t_k, t_k]).movement_current_a[:, 0]
    np.testing.assert_allclose(single, mean, rtol=1e-7)  # brief: 1e-7 relative
    np.testing.assert_allclose(batch, mean, rtol=1e-7)


# --- the 2.5 V bridge on a shared scale: linearity against an independent nodal solve ------------------------

BRIDGE_25 = "ac_voltage: {arrangement: chain, full_scales: [2.5 V], rectifier: bridge, diode: d1, scale: shared}\n"


def _bridge_mean(v_rms, r1, r_m, i_s, nvt, r_s):
    """Cycle mean of the movement current of a bridge fed through r1 [A], by an independent nodal solve.

    Nodes: a (after r1), dc (cathodes), com (anodes; the coil from dc to com), the input's
    minus at 0. Kirchhoff's current law at a, dc, com with each diode's current from
    Banwell and Jayakumar's exact solution, solved by ``scipy.optimize.fsolve``; the mean
    over the phase by ``scipy.integrate.quad``.
    """
    def diode(v):
        return _banwell(v, r_s, i_s, nvt)

    guess = [np.zeros(3)]

    def solve_at(v, x0):
        def kcl(x):
            a, dc, com = x
            return [(v - a) / r1 + diode(com - a) - diode(a - dc),
                    diode(a - dc) + diode(0.0 - dc) - (dc - com) / r_m,
                    (dc - com) / r_m - diode(com - a) - diode(com - 0.0)]

        x, info, ier, _ = fsolve(kcl, x0, xtol=1e-12, full_output=True)
        # fsolve may stop short of xtol where its step is below the rounding of the node
        # voltages: accepted only with Kirchhoff's law met to a femtoampere
        return x, ier == 1 or np.max(np.abs(info["fvec"])) < 1e-15

    def movement(theta):
        v = math.sqrt(2.0) * v_rms * math.sin(theta)
        x, ok = solve_at(v, guess[0])
        if not ok:  # a cold start far up the diode law: walk the source up from zero instead
            x = np.zeros(3)
            for step in np.linspace(0.0, v, 41)[1:]:
                x, ok = solve_at(step, x)
            assert ok, (theta, v)
        guess[0] = x
        return (x[1] - x[2]) / r_m

    half = quad(movement, 0.0, math.pi, epsabs=0.0, epsrel=1e-11, limit=400)[0]
    guess[0] = np.zeros(3)
    other = quad(movement, math.pi, 2 * math.pi, epsabs=0.0, epsrel=1e-11, limit=400)[0]
    return (half + other) / (2 * math.pi)


def test_linearity_bridge_shared_scale_against_nodal_solve():
    """2.5 V bridge on the shared scale: the check's linearity table to 1e-6 of full scale.

    Source: an independent computation (``fsolve`` on Kirchhoff's current law with the
    exact single-diode law, ``quad`` over the phase); the reading on the shared scale is
    FS x mean / I_fs (design contract).
    """
    design = build(loads(_project(BRIDGE_25, SOFT), "bridge.yaml"))
    res = check_project(design, samples=20)
    row = res["positions"][0]
    r1 = sum(e.value_ohm for e in design.net.elements if e.kind == "resistor")
    t = design.spec.ambient.t_ref_k
    nvt = 1.9 * K_B * t / Q_E
    for point in row["linearity"][::3]:
        mean = _bridge_mean(point["applied"], r1, 2000.0, 5e-9, nvt, 0.5)
        np.testing.assert_allclose(point["reading"], 2.5 * mean / 50e-6, rtol=0, atol=1e-6 * 2.5)  # 1e-6 of FS


# --- convergence of the phase points: the cycle rules against 4096 equally spaced phases ---------------------


@pytest.mark.parametrize("body", [BRIDGE_25,
                                  "ac_voltage: {arrangement: chain, full_scales: [250 V], rectifier: bridge, "
                                  "diode: d1}\n",
                                  "ac_current: {arrangement: separate, full_scales: [10 mA], rectifier: half_wave, "
                                  "diode: d1}\n"])
@pytest.mark.parametrize("builds", [40, 60], ids=["verified-every-row", "verified-extreme-rows"])
def test_rule_converged_against_4096_phases(body, builds):
    """Readings at 10 % .. 100 % of full scale, nominal and 40 or 60 Monte Carlo builds, to 1e-6 of full scale.

    40 builds are a small batch (solved on the rule's check nodes too, every row verified), 60 a large
    one (the extreme rows verified in a second solve): both paths of ``planner.ranges.ac``.

    Source: the rectangle rule on 4096 equally spaced phases of the periodic integrand
    (exponentially convergent for a smooth one: Trefethen and Weideman, SIAM Review 56,
    2014; the sharp knee of a 250 V range leaves it about 1e-7).
    """
    diode = SOFT.replace("}", ", saturation_current_spread: 50 %}")
    design = build(loads(_project(body, diode), "conv.yaml"))
    eng = Engine(design)
    pos = design.net.positions[0]
    fs = pos.full_scale
    fac = draw_factors(parameters(eng), builds, np.random.default_rng(3))
    applied = np.arange(1, 11) * 0.1 * fs
    ours = eng.operate(pos.name, applied, factors=fac).movement_current_a
    phases = np.sin(2 * np.pi * np.arange(4096) / 4096)
    for j, a in enumerate(applied):
        ref = eng.operate(pos.name, math.sqrt(2) * a * phases, kind=pos.kind.source,
                          factors=fac).movement_current_a.mean(axis=1)
        np.testing.assert_allclose(ours[:, j] / 50e-6, ref / 50e-6, rtol=0, atol=1e-6)  # 1e-6 of full scale


# --- the example project: check figures, misrange families, loader -----------------------------------------


@pytest.fixture(scope="module")
def service():
    from pathlib import Path

    from planner.project import load

    return build(load(Path(__file__).resolve().parents[1] / "projects" / "service_multimeter.yaml"))


def test_example_check_has_ac_figures(service):
    """The example's AC positions: the contract's fields, within class, bridge ranges read DC about 11 % high.

    Source: a DC level equal to the rms reads as a square wave does, pi / (2 sqrt 2) - 1 = +11.07 %
    (form factor 1) on a bridge [calc].
    """
    res = check_project(service, samples=50)
    ac = [p for p in res["positions"] if p["measures"].startswith("ac_")]
    assert [p["name"] for p in ac] == ["10 V~", "50 V~", "250 V~", "10 mA~", "100 mA~"]
    for p in ac:
        assert {"square", "triangle"} <= {w["waveform"] for w in p["waveform_errors"]}
        assert p["input_impedance_ohm"] > 0 and p["verdict"] == "within class"
        assert abs(p["nominal_error_pct"]) < 0.25 * 2.5   # the sizer's allowed share of class 2.5
    v250 = next(p for p in ac if p["name"] == "250 V~")
    np.testing.assert_allclose(v250["dc_readings"][0]["error_pct"], SQUARE_PCT, atol=0.1)  # drops: < 0.1 % of FS
    own = next(p for p in ac if p["name"] == "10 mA~")
    assert own["scale"] == "own"
    assert max(abs(r["error_pct"]) for r in own["linearity"]) < 1e-4  # the own scale is marked from this response


def test_waveform_figures_from_one_solve_equal_one_wave_at_a_time(service):
    """The check's waveform figures come from one batch; each wave solved on its own gives the same reading.

    Source: the same fixed cycle rule per wave either way (midpoint in phase, 1024 nodes), so the two may differ by
    the solver's convergence alone (common practice: 1e-12 of full scale).
    """
    from planner.ranges.ac import CHECK_WAVEFORMS, waveform_readings

    eng = Engine(service)
    for name in ("250 V~", "10 mA~"):  # a shared and an own scale
        fs = eng.state(name).position.full_scale
        batch = waveform_readings(eng, name, [(w, [fs]) for w in CHECK_WAVEFORMS] + [("dc", [fs, -fs])])
        alone = [eng.operate(name, [fs], waveform=w).reading()[0] for w in CHECK_WAVEFORMS]
        alone.append(eng.operate(name, [fs, -fs], waveform="dc").reading()[0])
        for b, a in zip(batch, alone):
            np.testing.assert_allclose(b, a, rtol=0, atol=1e-12 * fs)


def test_own_scale_grid_agrees_with_the_fixed_rule(service, high_bridge):
    """The grid an ``own`` scale is marked from: the nested midpoint rules where they agree, else the fixed rule;
    either way within 1e-10 of I_fs of the 1024-phase rule (Gauss-Chebyshev, Abramowitz and Stegun 25.4.38).

    A current range's smooth response takes the shorter rules; the 1000 V bridge's sharp knee does not.
    """
    from planner.ranges.ac import SCALE_GRID, _grid_response, _nested_sine_means, operate_cycle

    for design, name, nested in ((service, "10 mA~", True), (high_bridge, high_bridge.net.positions[0].name, False)):
        eng = Engine(design)
        st = eng.state(name)
        fs = st.position.full_scale
        fixed = operate_cycle(eng, st, SCALE_GRID * fs, "sine", kind=st.position.kind.source, temperature_k=None,
                              r_source_ohm=0.0, factors=None).movement_multiple[0]
        assert (_nested_sine_means(eng, st, SCALE_GRID * fs) is not None) == nested
        a, d = _grid_response(eng, name)
        np.testing.assert_allclose(d[1:], fixed, rtol=0, atol=1e-10)
        np.testing.assert_allclose(a[1:], SCALE_GRID * fs, rtol=1e-15)


def test_faults_families_of_ac_and_dc_positions(service):
    """DC on AC positions (both polarities), AC on DC positions, range up/down as sines, max input as a sine."""
    net = service.net
    ac = net.position("10 V~")
    names = {s.name: s for s in stimuli_for(service.spec, net, ac)}
    assert {"DC on AC range", "DC on AC range reversed", "max input sine"} <= set(names)
    assert names["range up"].waveform == "sine" and names["range up"].value == 50.0
    dc = net.position("10 V")
    names = {s.name: s for s in stimuli_for(service.spec, net, dc)}
    assert names["AC on DC range"].waveform == "sine" and names["range up"].waveform == "dc"


def test_ac_worst_case_bound_covers_every_corner(service):
    """An AC position with 10 toleranced parameters takes the sensitivity bound (a corner costs a cycle); the
    bound is never below the largest error over all 1024 corners, enumerated here, and close to it.

    Source: the first-order worst-case bound by linearised sensitivities, checked by corner enumeration
    (common practice in circuit tolerance analysis); the error is monotone in each part here, so the two
    agree to within the curvature of the diodes' law (0.05 % of full scale).
    """
    from planner.accuracy import MAX_CORNER_PARAMETERS, CountingEngine, current_carrying, worst_case

    eng = Engine(service)
    pos = service.net.position("10 V~")
    carrying = current_carrying(eng, pos.name)
    params = [q for q in parameters(eng) if q.element is None or q.element in carrying]
    assert len(params) > pos.kind.corner_parameters
    run = CountingEngine(eng)
    bound = worst_case(run, pos.name, pos.full_scale, params, np.random.default_rng(0), pos.kind.corner_parameters)
    every = worst_case(run, pos.name, pos.full_scale, params, np.random.default_rng(0), MAX_CORNER_PARAMETERS)
    assert bound["worst_case_method"] == "sensitivity" and every["worst_case_method"] == "corners"
    assert every["worst_case_corners"] == 2 ** len(params)
    assert bound["worst_case_error_pct"] >= every["worst_case_error_pct"] - 1e-9  # a bound, never below a corner
    np.testing.assert_allclose(bound["worst_case_error_pct"], every["worst_case_error_pct"], atol=0.05)  # % of FS


def test_corners_solved_with_the_builds_equal_each_batch_alone(service):
    """The check solves an AC position's worst-case corners with its Monte Carlo builds (one solve, the rule
    verified on each batch's extreme rows); the figures are those of the corners and the builds solved apart.

    Source: the same rule on the same parameter rows gives the same cycle means whatever else shares the
    solve; the solver converges every case to its step tolerance (common practice: 1e-12 of full scale).
    """
    from planner.accuracy import CountingEngine, current_carrying, worst_case
    from planner.accuracy.position import LINEARITY_FRACTIONS, check_position

    eng = Engine(service)
    params_all = parameters(eng)
    builds = draw_factors(params_all, 300, np.random.default_rng(5))
    for name in ("50 V~", "100 mA~"):
        pos = service.net.position(name)
        fs = pos.full_scale
        run = CountingEngine(eng)
        out, _, arrays = check_position(run, service.spec, pos, params_all, builds, 300, np.random.default_rng(7),
                                        None, lambda message: None)
        carrying = current_carrying(eng, name)
        params = [q for q in params_all if q.element is None or q.element in carrying]
        alone = worst_case(CountingEngine(eng), name, fs, params, np.random.default_rng(7), pos.kind.corner_parameters)
        assert out["worst_case_method"] == alone["worst_case_method"] == "sensitivity"
        assert out["worst_case_corner"] == alone["worst_case_corner"]
        for key in ("worst_case_error_pct", "worst_case_bound_pct", "worst_case_corner_max_pct"):
            np.testing.assert_allclose(out[key], alone[key], rtol=0, atol=1e-10)  # % of full scale
        mc = eng.operate(name, LINEARITY_FRACTIONS * fs, factors={q.key: builds[q.key] for q in params}).reading()
        np.testing.assert_allclose(arrays.mc_readings, mc, rtol=0, atol=1e-12 * fs)


@pytest.mark.parametrize("text,what", [
    ("ac_voltage: {arrangement: chain, full_scales: [10 V], rectifier: full, diode: d1}\n", "rectifier"),
    ("ac_voltage: {arrangement: chain, full_scales: [10 V], diode: nope}\n", "diode"),
    ("ac_voltage: {arrangement: chain, full_scales: [10 V], diode: d1, swamp: 1 kohm}\n", "swamp"),
    ("ac_voltage: {arrangement: chain, full_scales: [0.2 V], diode: d1}\n", "too low"),
])
def test_bad_ac_requests_name_the_line(text, what):
    """A bad AC request is one ProjectError naming the file and line and what to do."""
    with pytest.raises(ProjectError) as e:
        build(loads(_project(text, SOFT), "bad.yaml"))
    msg = e.value.one_line()
    assert "bad.yaml:" in msg and what in msg


@pytest.mark.parametrize("waveform,multiple", [("sine", 1.0), ("square", math.pi / (2 * math.sqrt(2))),
                                               ("triangle", math.pi / (2 * math.sqrt(2)) / (2 / math.sqrt(3)))])
def test_apply_waveforms_mean_multiple(high_bridge, waveform, multiple):
    """``apply --waveform``: the pointer's mean multiple at full-scale rms follows the form factor.

    Source: form factors of the sine (pi / (2 sqrt 2)), square (1) and triangle (2 / sqrt 3)
    [standard AC theory]; the diodes' drops on a 1000 V range and the 512 equal phases of
    ``apply`` leave a few parts in 1e4.
    """
    from planner.stress import apply_stimulus

    out = apply_stimulus(high_bridge, "1 kV~", volts=1000.0, waveform=waveform)
    np.testing.assert_allclose(out["movement_mean_multiple"], multiple, rtol=1e-3)  # drops, 512 phases
    assert out["movement_rms_multiple"] >= out["movement_mean_multiple"] * (1 - 1e-12)


def test_own_scale_plate_follows_the_solved_response(service):
    """The AC scale of its own is marked from D_nom: at half scale the tick's fraction is the mean over
    4096 equally spaced phases (the rectangle rule, Trefethen and Weideman 2014) to 1e-6."""
    from planner.scale import scale_json, scale_project

    eng = Engine(service)
    plate = scale_json(scale_project(service, engine=eng))
    own = next(s for s in plate["scales"] if s["name"] == "AC 10 mA~")
    assert own["positions"] == ["10 mA~"]
    tick = min(own["ticks"], key=lambda t: abs(t["value"] - 5e-3))
    x = math.sqrt(2) * tick["value"] * np.sin(2 * np.pi * np.arange(4096) / 4096)
    ref = float(eng.operate("10 mA~", x, kind="current").movement_current_a.mean()) / 50e-6
    np.testing.assert_allclose(tick["fraction"], ref, atol=1e-6)  # 1e-6 of the arc
    shared = next(s for s in plate["scales"] if s["unit"] == "V" and s["name"].startswith("DC"))
    assert "10 V~" in shared["positions"]


def test_protect_keeps_the_rectifier(service):
    """``planner protect`` takes the clamps out to see what they cost; a bridge's diodes also reach the
    movement's common side but are the measurement itself (``role: rectifier``), never a clamp."""
    from planner.protect.candidates import clamp_diodes

    net = service.net
    clamps = set(clamp_diodes(net))
    rectifier = {e.name for e in net.elements if e.kind == "diode" and not e.clamp}
    assert rectifier and clamps  # the example has both
    assert not clamps & rectifier
    assert clamps == {e.name for e in net.elements if e.kind == "diode" and e.clamp}


def test_own_scale_ticks_against_an_independent_bridge_solve():
    """A 2.5 V bridge range on a scale of its own: each major tick sits where the mean movement current of
    a sine of that rms puts the pointer, fraction = I_mean(V) / I_fs, computed independently (Kirchhoff's
    laws with Banwell and Jayakumar's exact diode current, ``fsolve``, and the phase mean by ``quad``).

    Sources: T. C. Banwell and A. Jayakumar, Electronics Letters 36 (2000) 291 (the diode with series
    resistance in closed form); the own scale is marked from the nominal response D(V) = I_mean / I_fs
    (design contract). Tolerance 2e-6 of the arc (the response is solved at a grid and splined between).
    """
    from planner.scale import scale_json, scale_project

    design = build(loads(_project(BRIDGE_25.replace("scale: shared", "scale: own"), SOFT), "own.yaml"))
    plate = scale_json(scale_project(design))
    own = next(s for s in plate["scales"] if s["kind"] == "ac")
    r1 = sum(e.value_ohm for e in design.net.elements if e.kind == "resistor")
    nvt = 1.9 * K_B * design.spec.ambient.t_ref_k / Q_E
    majors = [t for t in own["ticks"] if t.get("label") and 0.0 < t["value"] <= 2.5]
    assert len(majors) >= 3
    for t in majors[:2] + majors[-1:]:
        ref = _bridge_mean(t["value"], r1, 2000.0, 5e-9, nvt, 0.5) / 50e-6
        np.testing.assert_allclose(t["fraction"], ref, rtol=0, atol=2e-6)  # fraction of the arc
