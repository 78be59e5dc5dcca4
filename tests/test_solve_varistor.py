"""The varistor law in the solver (planner.solve.varistor), against closed forms solved here.

Law: I = I_1 sgn(V) (|V| / V_1)^alpha, I_1 = 1 mA by default (L. M. Levinson and H. R.
Philipp, "The physics of metal oxide varistors", J. Appl. Phys. 46(3), 1975; T. K. Gupta,
"Application of zinc oxide varistors", J. Am. Ceram. Soc. 73(7), 1990). Each reference
is the one unknown of the circuit, a root found by ``scipy.optimize.brentq`` to a few
ulp; the solver must agree to 1e-9 relative (its step tolerance is 1e-10, then one
polishing step).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from flat_circuits import build
from planner.errors import SolveError
from planner.solve import Junctions, Varistors, solve

NONE = Junctions(*(np.zeros(0),) * 6)
RTOL = 1e-9  # the solver's step tolerance is 1e-10 relative, then one polishing step


def law(v, v1, alpha, i1=1e-3):
    """The varistor law [A]."""
    return i1 * math.copysign(abs(v / v1) ** alpha, v) if v else 0.0


def root(f, lo, hi):
    if lo == hi:
        return lo
    return brentq(f, lo, hi, xtol=1e-300, rtol=1e-15, maxiter=500)


@pytest.mark.parametrize("alpha", [2.0, 5.0, 12.0, 30.0, 60.0])
def test_varistor_behind_a_resistor_matches_the_closed_form(alpha):
    """V + R I(V) = V_s, solved for V by brentq, over both polarities and six decades."""
    r, v1 = 1e3, 100.0
    c = build([("R1", "plus", "x")], varistors=[("V1", "x", "com")])
    vs = np.array([-1e5, -1e3, -150.0, -1.0, 0.0, 1e-9, 0.5, 10.0, 99.0, 100.0, 150.0, 200.0, 1e3, 1e4, 1e5])
    sol = solve(c, [r], NONE, vs, varistors=Varistors([v1], [alpha]))
    want = np.array([root(lambda v: v + r * law(v, v1, alpha) - s, min(s, 0.0), max(s, 0.0)) for s in vs])
    got_v = sol.v_varistor[0, :, 0]
    np.testing.assert_allclose(got_v, want, rtol=RTOL, atol=0)
    want_i = np.array([law(v, v1, alpha) for v in want])
    np.testing.assert_allclose(sol.i_varistor[0, :, 0], want_i, rtol=1e-8 * alpha / 10 + RTOL, atol=0)
    # Kirchhoff: the resistor's current is the varistor's
    np.testing.assert_allclose(sol.branch_current(0)[0], sol.i_varistor[0, :, 0], rtol=1e-8 * alpha / 10 + RTOL,
                               atol=1e-15)
    assert sol.fallbacks == {"source_stepping": 0, "gmin_stepping": 0}


def test_linear_varistor_is_a_resistor():
    """alpha = 1: the law is a resistance V_1 / I_1; a divider, in closed form."""
    c = build([("R1", "plus", "x")], varistors=[("V1", "x", "com")])
    vs = np.array([-10.0, 1e-12, 3.0, 1e3])
    sol = solve(c, [1e3], NONE, vs, varistors=Varistors([2.0], [1.0], [1e-3]))  # 2 kohm
    np.testing.assert_allclose(sol.v_varistor[0, :, 0], vs * 2e3 / 3e3, rtol=1e-13)  # round-off


@pytest.mark.parametrize("alpha", [3.0, 25.0, 60.0])
def test_current_into_a_bare_varistor(alpha):
    """A current source straight into a varistor (a node no resistor reaches): V = V_1 (I / I_1)^(1/alpha)."""
    c = build([], varistors=[("V1", "plus", "com")], kind="current")
    amps = np.array([-2.0, -1e-3, 0.0, 1e-9, 1e-3, 0.25, 5.0])
    sol = solve(c, np.zeros((1, 0)), NONE, amps, varistors=Varistors([47.0], [alpha], [1e-3]))
    want = np.sign(amps) * 47.0 * (np.abs(amps) / 1e-3) ** (1.0 / alpha)
    np.testing.assert_allclose(sol.v_varistor[0, :, 0], want, rtol=RTOL)
    np.testing.assert_allclose(sol.node_voltage(c.node_index["plus"])[0], want, rtol=RTOL)


def test_two_varistors_in_series():
    """Two different varistors in series (their middle node reached by nothing else) behind 100 ohm.

    One current I through both: V_s = R I + V_a(I) + V_b(I), V(I) = V_1 (I / I_1)^(1/alpha),
    solved for ln I by brentq.
    """
    c = build([("R1", "plus", "x")], varistors=[("VA", "x", "mid"), ("VB", "mid", "com")])
    params = Varistors([150.0, 60.0], [25.0, 8.0], [1e-3, 2e-3])
    vs = np.array([-800.0, -10.0, 5.0, 200.0, 230.0, 400.0, 2000.0])
    sol = solve(c, [100.0], NONE, vs, varistors=params)

    def inverse(i, v1, a, i1):
        return v1 * (i / i1) ** (1.0 / a)

    want = []
    for s in vs:
        def f(li):
            i = math.exp(li)
            return 100.0 * i + inverse(i, 150.0, 25.0, 1e-3) + inverse(i, 60.0, 8.0, 2e-3) - abs(s)
        i = math.exp(root(f, -200.0, math.log(abs(s) / 100.0)))
        want.append(math.copysign(i, s))
    want_a = [math.copysign(inverse(abs(i), 150.0, 25.0, 1e-3), i) for i in want]
    want_b = [math.copysign(inverse(abs(i), 60.0, 8.0, 2e-3), i) for i in want]
    # the solver's step test is on volts relative to 1 + |V|: 1e-10 (1 + |V_s|) absolute at most
    atol = 1e-10 * (1.0 + np.abs(vs))
    np.testing.assert_allclose(sol.v_varistor[0, :, 0], want_a, rtol=RTOL, atol=0)
    assert np.all(np.abs(sol.v_varistor[0, :, 1] - want_b) <= atol)
    assert np.all(np.abs(sol.node_voltage(c.node_index["mid"])[0] - want_b) <= atol)
    # the current through VA (10 V and more across it): alpha 25 times its voltage's error
    np.testing.assert_allclose(sol.i_varistor[0, :, 0], want, rtol=25 * 1e-10)


def test_varistor_and_clamp_diodes_share_a_port():
    """A varistor across an antiparallel diode pair (one node pair): one node's current law.

    (v_s - v)/R = I_var(v) + I_d(v) - I_d(-v), I_d the junction law (no series resistance).
    """
    c = build([("R1", "plus", "x")], diodes=[("D1", "x", "com"), ("D2", "com", "x")],
              varistors=[("V1", "x", "com")])
    assert c.n_ports == 1
    i_s, nvt = 1e-12, 0.05
    jn = Junctions(*(np.array([v, v]) for v in (i_s, nvt, math.inf, 1e-3, 0.0, 0.0)))
    vs = np.array([-300.0, -0.3, 0.2, 1.0, 30.0, 300.0])
    sol = solve(c, [50.0], jn, vs, varistors=Varistors([0.6], [15.0]))

    def kcl(v, s):
        return (v - s) / 50.0 + law(v, 0.6, 15.0) + i_s * math.expm1(v / nvt) - i_s * math.expm1(-v / nvt)

    want = np.array([root(lambda v: kcl(v, s), max(min(s, 0.0), -3.0), min(max(s, 0.0), 3.0)) for s in vs])
    np.testing.assert_allclose(sol.v_varistor[0, :, 0], want, rtol=RTOL)
    np.testing.assert_allclose(sol.v_junction[0, :, 0], want, rtol=RTOL)
    np.testing.assert_allclose(sol.v_junction[0, :, 1], -want, rtol=RTOL)


def test_varistor_parameter_sets_batch():
    """600 parameter sets (a V_1 spread and two exponents) at the same stimuli, each against its root."""
    rng = np.random.default_rng(7)
    p = 600
    v1 = 100.0 * (1.0 + 0.1 * rng.uniform(-1, 1, p))
    alpha = np.where(np.arange(p) % 2, 30.0, 12.0)
    c = build([("R1", "plus", "x")], varistors=[("V1", "x", "com")])
    vs = np.array([-400.0, 50.0, 120.0, 400.0])
    sol = solve(c, [2e3], NONE, vs, varistors=Varistors(v1[:, None], alpha[:, None]))
    for k in (0, 1, 2, 333, 599):
        want = [root(lambda v: v + 2e3 * law(v, v1[k], alpha[k]) - s, min(s, 0.0), max(s, 0.0)) for s in vs]
        np.testing.assert_allclose(sol.v_varistor[k, :, 0], want, rtol=RTOL)


def test_bad_varistor_parameters_are_refused():
    c = build([("R1", "plus", "x")], varistors=[("V1", "x", "com")])
    for bad in (Varistors([0.0], [30.0]), Varistors([100.0], [0.5]), Varistors([100.0], [float("nan")]),
                Varistors([100.0], [30.0], [-1e-3])):
        with pytest.raises(SolveError, match="varistor needs"):
            solve(c, [1e3], NONE, [10.0], varistors=bad)
    with pytest.raises(SolveError, match="no varistor parameters"):
        solve(c, [1e3], NONE, [10.0])


def test_varistor_beyond_its_law_is_refused_by_name():
    """Straight across the held input, 10 V_1 at alpha 60 would need 1e57 A: a clear error."""
    c = build([("R1", "plus", "com")], varistors=[("VAR7", "plus", "com")])
    with pytest.raises(SolveError, match=r"varistor VAR7 would be driven to 1e\+03 V"):
        solve(c, [1e3], NONE, [1e3], varistors=Varistors([100.0], [60.0]))
