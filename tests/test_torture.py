"""Torture set for the solver: stiff, extreme and near-singular circuits, solved to tolerance.

Each case is solved by the engine and checked against a reference computed here
independently: a one-dimensional root (``scipy.optimize.brentq`` to a few ulp) of the
one unknown the circuit has, a closed form, or exact rational arithmetic
(``fractions.Fraction``) for linear networks. Diode law as in the design contract
(Shockley junction with breakdown and leakage, series resistance outside):
``i = I_s (exp(v_j / n V_t) - 1) - I_BV exp(-(v_j + BV) / n V_t) + v_j / R_p``,
``v = v_j + R_s i``.

The fallbacks (source stepping, gmin stepping) are forced by making the plain Newton
iteration give up after one step (a patch of the solver's Newton routine), and must log
what they do; an iteration limit and the batch-memory limit must end in a clear
:class:`planner.errors.SolveError`.
"""

from __future__ import annotations

import logging
import math
from fractions import Fraction

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import lambertw

from conftest import VOLTMETER, make_spec
from planner import cli, solve
from planner.design import build
from planner.engine import Engine
from planner.errors import SolveError
from planner.model import DEFAULT_T_REF_K, Contact, Diode, DiodeModel, MovementElement, Position, Resistor

VT = solve.thermal_voltage(DEFAULT_T_REF_K)  # the engine's default temperature is the reference


def P(name="P", kind="voltage", fs=10.0):
    return Position(name, kind, fs, ("plus", "com"))


# --- independent references ---------------------------------------------------------------------


def junction_current(m: DiodeModel, vj: float) -> float:
    """The contract's junction law (plus leakage) at the reference temperature [A]."""
    nvt = m.n * VT
    i = m.i_s_a * math.expm1(min(vj / nvt, 700.0))
    if m.bv_v is not None:
        i -= m.ibv_a * math.exp(min(-(vj + m.bv_v) / nvt, 700.0))
    if math.isfinite(m.r_p_ohm):
        i += vj / m.r_p_ohm
    return i


def terminal_current(m: DiodeModel, v: float) -> float:
    """Diode current for a terminal voltage ``v`` (series resistance included) [A]."""
    if m.r_s_ohm == 0.0 or v == 0.0:
        return junction_current(m, v)
    g = lambda vj: vj + m.r_s_ohm * junction_current(m, vj) - v  # noqa: E731 - increasing in vj
    lo, hi = (0.0, v) if v > 0 else (v, 0.0)
    vj = brentq(g, lo, hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=500)
    return junction_current(m, vj)


def node_root(kcl, lo, hi):
    """The node voltage where ``kcl`` (current leaving the node) is zero."""
    if lo == hi:
        return lo
    return brentq(kcl, lo, hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=500)


# --- stiff chains, clamps at 1000 V, zeners, leakage -----------------------------------------------


def test_ten_diodes_in_series_across_a_source():
    """A stiff chain: ten junctions in series with a 10-ohm movement, 0 V to 50 V and reverse."""
    eng = _chain_engine(10)
    volts = np.array([0.0, 1.0, 5.0, 7.0, 8.0, 10.0, 20.0, 50.0])
    got = eng.operate("P", volts).movement_current_a[0]

    def reference(v):  # one loop: V = I (R_m + 10 R_s) + 10 n V_t ln(1 + I / I_s)
        if v == 0.0:
            return 0.0
        f = lambda i: i * (10.0 + 10 * 0.05) + 10 * VT * math.log1p(i / 1e-14) - v  # noqa: E731
        return brentq(f, 0.0, v / 10.0, xtol=1e-300, rtol=4 * np.finfo(float).eps)

    want = np.array([reference(v) for v in volts])
    # tolerance 1e-9 relative: the solver's step tolerance is 1e-10 V, then one polishing step
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-20)
    assert got[-1] > 3.0  # 50 V drives amperes through the chain: far up the exponential


def _chain_engine(n_diodes=10):
    d = DiodeModel("j", 1e-14, n=1.0, r_s_ohm=0.05)
    nodes = ["plus"] + [f"x{k}" for k in range(1, n_diodes)] + ["m_plus"]
    els = [Diode(f"D{k + 1}", nodes[k], nodes[k + 1], "j") for k in range(n_diodes)]
    els.append(MovementElement("M1", "m_plus", "com"))
    return Engine(build(make_spec(els, [P()], i_fs_a=1e-3, r_coil_ohm=10.0, diodes=[d])))


@pytest.mark.parametrize("n_diodes", [2, 3, 10])
def test_diode_chain_reverse_biased(n_diodes):
    """Every junction blocks: the chain passes -I_s (1 - e^{v_j / nV_t}), the voltage shared equally.

    Reference: the chain's one loop, V = n v_j + I (R_m + n R_s) with I = I_s (e^{v_j/nV_t} - 1),
    solved for the junction voltage v_j by brentq (the current itself, a hair above -I_s, is
    not a well-conditioned unknown).
    """
    volts = [-0.5, -1.0, -5.0, -100.0]
    op = _chain_engine(n_diodes).operate("P", volts)
    rev = op.movement_current_a[0]

    def reference(v):
        g = lambda vj: n_diodes * vj + 1e-14 * math.expm1(vj / VT) * (10.0 + n_diodes * 0.05) - v  # noqa: E731
        vj = brentq(g, v / n_diodes - 1.0, 0.0, xtol=1e-300, rtol=4 * np.finfo(float).eps)
        return vj, 1e-14 * math.expm1(vj / VT)

    want = [reference(v) for v in volts]
    # tolerance 1e-9 relative: the solver's step tolerance is 1e-10 V, then one polishing step
    np.testing.assert_allclose(rev, [i for _, i in want], rtol=1e-9)
    np.testing.assert_allclose(op.solution.v_junction[0], [[vj] * n_diodes for vj, _ in want], rtol=1e-9)


@pytest.mark.parametrize("volts", [-1000.0, -100.0, -1.0, 1.0, 100.0, 1000.0])
def test_fifty_ideal_junctions_in_series(volts):
    """Fifty junctions of I_s = 1e-30 A, no series and no leakage resistance, behind 1 kohm.

    Reverse, each takes V/50 exactly (the same law, the same current: the symmetric solution is
    the only one), 20 V at -1000 V, where e^{v_j/nV_t} = e^{-778} is below the smallest double;
    the current is -I_s (1 - e^{v_j/nV_t}). Forward, the loop V = 50 v_j + I R_m with
    I = I_s (e^{v_j/nV_t} - 1), solved for v_j by brentq.
    """
    n = 50
    d = DiodeModel("ideal", 1e-30, n=1.0)
    nodes = ["plus"] + [f"x{k}" for k in range(1, n)] + ["m_plus"]
    els = [Diode(f"D{k + 1}", nodes[k], nodes[k + 1], "ideal") for k in range(n)]
    els.append(MovementElement("M1", "m_plus", "com"))
    eng = Engine(build(make_spec(els, [P()], i_fs_a=1e-3, r_coil_ohm=1e3, diodes=[d])))
    op = eng.operate("P", [volts])
    g = lambda vj: n * vj + 1e-30 * math.expm1(min(vj / VT, 700.0)) * 1e3 - volts  # noqa: E731
    vj = brentq(g, min(volts / n, 0.0) - 1.0, max(volts / n, 0.0) + 1.0, xtol=1e-300, rtol=4 * np.finfo(float).eps)
    want_i = 1e-30 * math.expm1(vj / VT)
    # tolerance 1e-9 relative: the solver's step tolerance is 1e-10 V, then one polishing step
    np.testing.assert_allclose(op.solution.v_junction[0, 0], [vj] * n, rtol=1e-9)
    np.testing.assert_allclose(op.movement_current_a[0], [want_i], rtol=1e-9)
    np.testing.assert_allclose(op.node_voltage("x25")[0], [volts - 25 * (volts - 1e3 * want_i) / n], rtol=1e-9)


def _fifty_chain_engine():
    n = 50
    d = DiodeModel("ideal", 1e-30, n=1.0)
    nodes = ["plus"] + [f"x{k}" for k in range(1, n)] + ["m_plus"]
    els = [Diode(f"D{k + 1}", nodes[k], nodes[k + 1], "ideal") for k in range(n)]
    els.append(MovementElement("M1", "m_plus", "com"))
    return Engine(build(make_spec(els, [P()], i_fs_a=1e-3, r_coil_ohm=1e3, diodes=[d])))


@pytest.mark.parametrize("volts", [-1000.0, -30.0, 2.0, 1000.0])
def test_fifty_different_ideal_junctions_in_series(volts):
    """The same stack with each I_s drawn within a factor 3 (a Monte Carlo spread): solved junction
    by junction, no stack shortcut. One current I through all: forward, V = R I + sum nV_t
    ln(1 + I/I_s,k), brentq on ln I; reverse, with the least I_s (index j) and r_k = I_s,j / I_s,k,
    V = R I + nV_t x_j + sum_k nV_t ln((1 - r_k) + r_k e^{x_j}), I = I_s,j (e^{x_j} - 1), brentq
    on x_j: the junction with the least I_s takes nearly all of a reverse voltage.
    """
    rng = np.random.default_rng(11)
    n = 50
    f = 3.0 ** rng.uniform(-1.0, 1.0, n)
    i_s = 1e-30 * f
    op = _fifty_chain_engine().operate("P", [volts], factors={f"D{k + 1}": f[k:k + 1] for k in range(n)})
    assert op.solution.fallbacks == {"source_stepping": 0, "gmin_stepping": 0}
    if volts > 0:
        g = lambda li: 1e3 * math.exp(li) + VT * sum(math.log1p(math.exp(li) / s) for s in i_s) - volts  # noqa: E731
        i = math.exp(brentq(g, -300.0, math.log(volts / 1e3), xtol=1e-300, rtol=4 * np.finfo(float).eps))
        vj = VT * np.log1p(i / i_s)
    else:
        j = int(np.argmin(i_s))
        ratio = i_s[j] / i_s

        def g(xj):
            cur = i_s[j] * math.expm1(xj)
            others = sum(math.log((1.0 - r) + r * math.exp(xj)) for k, r in enumerate(ratio) if k != j)
            return 1e3 * cur + VT * (xj + others) - volts

        xj = brentq(g, volts / VT - 1.0, 0.0, xtol=1e-300, rtol=4 * np.finfo(float).eps)
        i = i_s[j] * math.expm1(xj)
        with np.errstate(divide="ignore"):  # the weakest junction's own term: log(e^x_j), set below
            vj = VT * np.log((1.0 - ratio) + ratio * math.exp(xj))
        vj[j] = VT * xj
        assert vj[j] < 0.9 * volts  # the weakest junction blocks
    # tolerance: 1e-9 relative (the solver's step tolerance is 1e-10 V, then one polishing step), and
    # 1e-10 (1 + |V|) V absolute for the small voltages across the junctions that barely block
    got = op.solution.v_junction[0, 0]
    assert np.all(np.abs(got - vj) <= 1e-9 * np.abs(vj) + 1e-10 * (1.0 + abs(volts)))
    np.testing.assert_allclose(op.movement_current_a[0], [i], rtol=1e-9)


@pytest.mark.parametrize("model", [DiodeModel("si", 5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9),
                                   DiodeModel("z", 1e-14, n=1.0, r_s_ohm=2.0, r_p_ohm=1e10, bv_v=5.6, ibv_a=1e-3)],
                         ids=["silicon", "zener"])
def test_identical_stack_as_one_junction_agrees_with_each_junction_solved(model):
    """A stack of 8 identical junctions is solved as one composite junction (N nV_t, N BV, N R_s,
    G_p / N: the contract's law for the N junctions exactly); making one junction's I_s differ by
    1e-12 forces the junction-by-junction solve. Both must agree to the solver's tolerance
    (a 1e-12 change of one I_s moves the answer by far less)."""
    n = 8
    nodes = ["tap"] + [f"s{k}" for k in range(1, n)] + ["com"]
    els = [Resistor("R1", "plus", "tap", 10e3), MovementElement("M1", "tap", "com")]
    els += [Diode(f"D{k + 1}", nodes[k], nodes[k + 1], model.name) for k in range(n)]
    eng = Engine(build(make_spec(els, [P()], i_fs_a=50e-6, r_coil_ohm=2e3, diodes=[model])))
    volts = np.linspace(-1000.0, 1000.0, 41)
    one = eng.operate("P", volts)
    each = eng.operate("P", volts, factors={"D3": np.array([1.0 + 1e-12])})
    # white-box: the shortcut took the stack's inner nodes out of the node system, the other did not
    assert "s3" not in [one.circuit.node_names[i] for i in one.solution._lin.touched]
    assert "s3" in [each.circuit.node_names[i] for i in each.solution._lin.touched]
    # tolerance: the solver's step tolerance, 1e-10 relative, then one polishing step
    np.testing.assert_allclose(one.movement_current_a, each.movement_current_a, rtol=1e-9, atol=1e-18)
    np.testing.assert_allclose(one.solution.v_junction, each.solution.v_junction, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(one.node_voltage("s5"), each.node_voltage("s5"), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(one.solution.v_node, each.solution.v_node, rtol=1e-9, atol=1e-12)


def test_fifty_stack_project_answers():
    """The reliability project (tests/reliability/ideal_stack_50.yaml): a 50-stack clamp each way at
    a tap, 1000 V maximum input. faults answers (exit 0 or 1, not 2) and, at the declared maximum
    input on the lowest range, every junction of the conducting stack holds the same voltage and
    carries the stack's current by its own law (the contract's junction law)."""
    import contextlib
    import io
    import json
    from pathlib import Path

    from planner.project import load

    path = Path(__file__).resolve().parent / "reliability" / "ideal_stack_50.yaml"
    spec = load(str(path))
    eng = Engine(build(spec))
    pos = eng.positions[0].name
    op = eng.operate(pos, [1000.0, -1000.0])
    nvt = solve.thermal_voltage(spec.ambient.t_ref_k)
    for col in (0, 1):
        cur = op.solution.i_diode[0, col]
        vj = op.solution.v_junction[0, col]
        on = cur > 1e-6  # the conducting stack's 50 junctions (the other stack's at +1000 V)
        assert on.sum() == 50
        np.testing.assert_allclose(vj[on], vj[on][0], rtol=1e-12)  # one law, one current: equal shares
        np.testing.assert_allclose(cur[on], 1e-30 * np.expm1(vj[on] / nvt), rtol=1e-9)
        np.testing.assert_allclose(vj[~on], -vj[on][0], rtol=1e-12)  # the other stack blocks, equally
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = cli.main(["faults", str(path), "--json"])
    assert code in (0, 1)
    assert json.loads(out.getvalue())["cases"]


def test_clamp_pair_at_1000_volts():
    """A voltmeter's silicon clamp pair across the movement takes 1000 V through the multiplier."""
    si = DiodeModel("si", 5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9)
    els = [Resistor("R1", "plus", "m_plus", 198e3), MovementElement("M1", "m_plus", "com"),
           Diode("D1", "m_plus", "com", "si"), Diode("D2", "com", "m_plus", "si")]
    eng = Engine(build(make_spec(els, [P()], i_fs_a=50e-6, r_coil_ohm=2e3, diodes=[si])))
    volts = np.array([0.1, 10.0, 100.0, 1000.0, -1000.0])
    op = eng.operate("P", volts)
    got = op.node_voltage("m_plus")[0]

    def reference(v):
        kcl = lambda x: (x - v) / 198e3 + x / 2e3 + terminal_current(si, x) - terminal_current(si, -x)  # noqa: E731
        return node_root(kcl, min(0.0, v), max(0.0, v))

    want = np.array([reference(v) for v in volts])
    np.testing.assert_allclose(got, want, rtol=1e-9)  # tolerance: see the stiff chain
    # at 1000 V the clamp carries about 5 mA and holds the movement near 2 x full scale
    i_clamp = op.element("D1").current_a[0, 3]
    np.testing.assert_allclose(i_clamp, (1000.0 - want[3]) / 198e3 - want[3] / 2e3 + terminal_current(si, -want[3]),
                               rtol=1e-9)
    assert 4e-3 < i_clamp < 5.1e-3 and abs(op.movement_multiple[0, 3]) < 30


def test_diode_behind_a_resistor_at_1000_volts_matches_the_closed_form():
    """1000 V on 1 ohm and a junction: the exact current of a diode with series resistance.

    Reference: T. C. Banwell and A. Jayakumar, "Exact analytical solution for current flow
    through diode with series resistance", Electronics Letters 36(4), 291-292, 2000:
    I = (n V_t / R) W0((I_s R / n V_t) exp((V + I_s R) / n V_t)) - I_s, here in its
    logarithmic form (W0 of a huge argument via lambertw of exp of its log).
    """
    d = DiodeModel("j", 1e-12, n=1.0)
    els = [Resistor("R1", "plus", "a", 1.0), Diode("D1", "a", "m_plus", "j"),
           MovementElement("M1", "m_plus", "com")]
    eng = Engine(build(make_spec(els, [P()], i_fs_a=1e-3, r_coil_ohm=1e-3, diodes=[d])))
    volts = np.array([0.5, 1.0, 10.0, 1000.0])
    got = eng.operate("P", volts).movement_current_a[0]
    r, nvt, i_s = 1.0 + 1e-3, VT, 1e-12

    def banwell(v):
        ln_arg = math.log(i_s * r / nvt) + (v + i_s * r) / nvt
        if ln_arg < 700:
            w = lambertw(math.exp(ln_arg)).real
        else:  # W(e^y) = y - ln y + ln y / y + ... : solve w + ln w = y by Newton instead
            w = ln_arg - math.log(ln_arg)
            for _ in range(50):
                w -= (w + math.log(w) - ln_arg) / (1.0 + 1.0 / w)
        return nvt / r * w - i_s

    np.testing.assert_allclose(got, [banwell(v) for v in volts], rtol=1e-9)  # see the stiff chain


def test_microamp_movement_with_gigaohm_leakage():
    """A 1 uA movement on a 1 kV range (1 Gohm multiplier), clamps with 1 Gohm leakage across it."""
    lk = DiodeModel("lk", 1e-12, n=1.0, r_p_ohm=1e9)
    r_m = 5e3
    els = [Resistor("R1", "plus", "m_plus", 1e9 - r_m), MovementElement("M1", "m_plus", "com"),
           Diode("D1", "m_plus", "com", "lk"), Diode("D2", "com", "m_plus", "lk")]
    eng = Engine(build(make_spec(els, [P(fs=1000.0)], i_fs_a=1e-6, r_coil_ohm=r_m, diodes=[lk])))
    volts = np.array([1e-3, 1.0, 100.0, 1000.0])
    op = eng.operate("P", volts)

    def reference(v):
        kcl = lambda x: ((x - v) / (1e9 - r_m) + x / r_m + terminal_current(lk, x)  # noqa: E731
                         - terminal_current(lk, -x))
        return node_root(kcl, min(0.0, v), max(0.0, v)) / r_m

    want = np.array([reference(v) for v in volts])
    np.testing.assert_allclose(op.movement_current_a[0], want, rtol=1e-9)  # see the stiff chain
    # the leakage (two 1 Gohm paths and the junctions' slope) steals about 1e-5 of the reading
    np.testing.assert_allclose(op.movement_multiple[0, -1], 1.0, rtol=2e-5)
    assert op.movement_multiple[0, -1] < 1.0


def test_zener_clamp_in_breakdown():
    """A 5.6 V zener holds a node while 100 V drives a milliampere-class current through it."""
    z = DiodeModel("z", 1e-14, n=1.0, r_s_ohm=1.0, bv_v=5.6, ibv_a=1e-3)
    els = [Resistor("R1", "plus", "z", 1e3), Diode("Z1", "com", "z", "z"),
           Resistor("R2", "z", "m_plus", 100e3), MovementElement("M1", "m_plus", "com")]
    eng = Engine(build(make_spec(els, [P()], i_fs_a=50e-6, r_coil_ohm=1e3, diodes=[z])))
    volts = np.array([1.0, 5.0, 6.0, 10.0, 100.0, -10.0])
    op = eng.operate("P", volts)

    def reference(v):
        kcl = lambda x: (x - v) / 1e3 + x / 101e3 - terminal_current(z, -x)  # noqa: E731 (anode at com)
        return node_root(kcl, min(0.0, v), max(0.0, v))

    want = np.array([reference(v) for v in volts])
    np.testing.assert_allclose(op.node_voltage("z")[0], want, rtol=1e-9)  # see the stiff chain
    assert 5.6 < want[4] < 5.9  # clamped a little above BV at about 94 mA
    np.testing.assert_allclose(op.element("Z1").current_a[0, 4], -(100.0 - want[4]) / 1e3 + want[4] / 101e3,
                               rtol=1e-9)
    assert -0.8 < want[5] < -0.5  # forward at -10 V: one junction drop


def test_full_wave_bridge_a_loop_of_diode_ports():
    """A rectifier bridge around the movement: four diode ports that form a loop.

    With I_s = 1e-14 A the two blocking diodes pass at most 2e-14 A, below 1e-9 of the
    current, so one loop through the two conducting diodes is an exact enough reference.
    """
    d = DiodeModel("b", 1e-14, n=1.0, r_s_ohm=2.0)
    els = [Resistor("R1", "plus", "a", 500.0), Resistor("R2", "b", "com", 500.0),
           Diode("D1", "a", "p", "b"), Diode("D2", "b", "p", "b"), Diode("D3", "q", "a", "b"),
           Diode("D4", "q", "b", "b"), MovementElement("M1", "p", "q")]
    eng = Engine(build(make_spec(els, [P()], i_fs_a=1e-3, r_coil_ohm=100.0, diodes=[d])))
    volts = np.array([1.0, 2.0, 10.0, 100.0])  # from 3 uA up: the blocking pair is below 1e-8 of it
    both = eng.operate("P", np.concatenate([volts, -volts])).movement_current_a[0]

    def reference(v):  # V = I (R1 + R2 + R_m + 2 R_s) + 2 n V_t ln(1 + I / I_s)
        f = lambda i: i * (1100.0 + 4.0) + 2 * VT * math.log1p(i / 1e-14) - v  # noqa: E731
        return brentq(f, 0.0, v / 1104.0, xtol=1e-300, rtol=4 * np.finfo(float).eps)

    want = np.array([reference(v) for v in volts])
    np.testing.assert_allclose(both[:4], want, rtol=1e-8)  # tolerance: the neglected 2e-14 A
    np.testing.assert_allclose(both[4:], want, rtol=1e-8)  # full wave: the same deflection either way


# --- ideal contacts and near-singular linear networks -----------------------------------------------


def test_loops_of_ideal_contacts():
    """A triangle of zero-resistance contacts and an ideal contact across a resistor."""
    els = [Contact("S1", "plus", "t1", ("P", "Q")), Contact("S2", "t1", "t2", ("P", "Q")),
           Contact("S3", "t2", "plus", ("P", "Q")), Contact("S4", "t1", "t2", ("P",)),
           Resistor("R1", "t2", "m_plus", 9e3), Resistor("R2", "m_plus", "m2", 10e3),
           Contact("S5", "m_plus", "m2", ("P",)), MovementElement("M1", "m2", "com")]
    eng = Engine(build(make_spec(els, [P("P"), P("Q")], i_fs_a=1e-3, r_coil_ohm=1e3)))
    got_p = eng.operate("P", [10.0]).movement_current_a[0, 0]
    got_q = eng.operate("Q", [10.0]).movement_current_a[0, 0]
    # Ohm's law: S5 shorts R2 on P only; tolerance: a few ulp of a linear solve
    np.testing.assert_allclose([got_p, got_q], [10.0 / 10e3, 10.0 / 20e3], rtol=1e-13)


def _exact_nodal(nodes, branches, plus, held_v=None, inject_a=None):
    """Exact node voltages of a linear network by Gaussian elimination over the rationals."""
    free = [n for n in nodes if n != "com" and not (held_v is not None and n == plus)]
    idx = {n: k for k, n in enumerate(free)}
    size = len(free)
    a = [[Fraction(0)] * size for _ in range(size)]
    b = [Fraction(0)] * size
    known = {"com": Fraction(0)}
    if held_v is not None:
        known[plus] = Fraction(held_v)
    for n1, n2, r in branches:
        g = 1 / Fraction(r)
        for x, y in ((n1, n2), (n2, n1)):
            if x in idx:
                a[idx[x]][idx[x]] += g
                if y in idx:
                    a[idx[x]][idx[y]] -= g
                else:
                    b[idx[x]] += g * known[y]
    if inject_a is not None:
        b[idx[plus]] += Fraction(inject_a)
    for c in range(size):  # no pivoting needed: the matrix is diagonally dominant
        for r_ in range(c + 1, size):
            f = a[r_][c] / a[c][c]
            if f:
                for k in range(c, size):
                    a[r_][k] -= f * a[c][k]
                b[r_] -= f * b[c]
    x = [Fraction(0)] * size
    for r_ in range(size - 1, -1, -1):
        x[r_] = (b[r_] - sum(a[r_][k] * x[k] for k in range(r_ + 1, size))) / a[r_][r_]
    out = dict(known)
    out.update({n: x[idx[n]] for n in free})
    return out


@pytest.mark.parametrize("kind", ["voltage", "current"])
def test_near_singular_ladder(kind):
    """A ladder with 1 mohm next to 1 Gohm, series and shunt alternating in size (1e12 apart)."""
    sections = 8
    els, branches, nodes = [], [], ["plus", "com"]
    prev = "plus"
    for k in range(sections):
        node = f"n{k}"
        nodes.append(node)
        r_series = 1e-3 if k % 2 == 0 else 1e9
        r_shunt = 1e9 if k % 2 == 0 else 1e-3 * (k + 1)
        els += [Resistor(f"RS{k}", prev, node, r_series), Resistor(f"RP{k}", node, "com", r_shunt)]
        branches += [(prev, node, r_series), (node, "com", r_shunt)]
        prev = node
    els.append(MovementElement("M1", prev, "com"))
    branches.append((prev, "com", 1e3))
    eng = Engine(build(make_spec(els, [P(kind=kind, fs=1.0)], i_fs_a=1e-3, r_coil_ohm=1e3)))
    stim = 1.0 if kind == "voltage" else 1e-3
    op = eng.operate("P", [stim])
    exact = _exact_nodal(nodes, branches, "plus", held_v=stim if kind == "voltage" else None,
                         inject_a=stim if kind == "current" else None)
    got = {n: op.node_voltage(n)[0, 0] for n in nodes}
    if kind == "voltage":
        # the held input fixes the level: every node to 1e-9 of itself (observed: a few ulp)
        rtol = 1e-9
    else:
        # a current enters through 1 mohm into a node whose level only the gigaohms fix: the
        # nodal equations then carry the absolute level with a relative error up to about
        # eps x (largest / smallest conductance) = 2.2e-16 x 1e12 (a backward-stable solve of
        # the nodal matrix cannot do better in float64; observed 1.1e-5). Still 2x below the
        # finest class index of IEC 60051 (0.05 %).
        rtol = np.finfo(float).eps * (1 / 1e-3) / (1 / 1e9)
    for n in nodes:
        np.testing.assert_allclose(got[n], float(exact[n]), rtol=rtol, atol=1e-300, err_msg=n)
    i_m = float(exact[prev] / 1000)
    np.testing.assert_allclose(op.movement_current_a[0, 0], i_m, rtol=rtol)


# --- fallbacks, junction limiting, limits -------------------------------------------------------


def _clamp_engine():
    si = DiodeModel("si", 5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9)
    els = [Resistor("R1", "plus", "m_plus", 198e3), MovementElement("M1", "m_plus", "com"),
           Diode("D1", "m_plus", "com", "si"), Diode("D2", "com", "m_plus", "si"),
           Diode("D3", "m_plus", "x", "si"), Resistor("R3", "x", "com", 50.0)]
    return Engine(build(make_spec(els, [P()], i_fs_a=50e-6, r_coil_ohm=2e3, diodes=[si])))


def _cripple_newton(monkeypatch, fails):
    """Make the solver's Newton routine stop after one step when ``fails(kwargs)`` says so.

    Patches ``planner.solve.newton.newton``, through which every strategy and fallback
    of the solver runs its iterations.
    """
    seen = {"gmin": False}
    original = solve.newton.newton

    def patched(*args, **kwargs):
        if kwargs.get("extra_g", 0.0) > 0:
            seen["gmin"] = True
        if fails(kwargs, seen):
            kwargs["max_iter"] = 1
        return original(*args, **kwargs)

    monkeypatch.setattr(solve.newton, "newton", patched)


def _plain(kwargs):
    return kwargs.get("scale", 1.0) == 1.0 and kwargs.get("extra_g", 0.0) == 0.0


def test_source_stepping_takes_over_and_is_logged(monkeypatch, caplog):
    volts = np.array([1.0, 50.0, 1000.0, -1000.0])
    want = _clamp_engine().operate("P", volts).node_voltage("m_plus")[0]
    calls = {"n": 0}

    def fails(kwargs, seen):  # only the first, plain Newton run gives up
        calls["n"] += 1
        return calls["n"] == 1

    _cripple_newton(monkeypatch, fails)
    with caplog.at_level(logging.INFO, logger="planner.solve"):
        op = _clamp_engine().operate("P", volts)
    assert "source stepping on 4 cases" in caplog.text and "gmin stepping" not in caplog.text
    assert op.solution.fallbacks["source_stepping"] == 4
    np.testing.assert_allclose(op.node_voltage("m_plus")[0], want, rtol=1e-9)  # the same operating point


def test_gmin_stepping_takes_over_and_is_logged(monkeypatch, caplog):
    volts = np.array([1.0, 50.0, 1000.0, -1000.0])
    want = _clamp_engine().operate("P", volts).node_voltage("m_plus")[0]
    # plain Newton and every source step give up until gmin stepping has begun
    _cripple_newton(monkeypatch, lambda kwargs, seen: not seen["gmin"] and kwargs.get("extra_g", 0.0) == 0.0)
    with caplog.at_level(logging.INFO, logger="planner.solve"):
        op = _clamp_engine().operate("P", volts)
    assert "source stepping on 4 cases" in caplog.text and "gmin stepping on 4 cases" in caplog.text
    assert op.solution.fallbacks == {"source_stepping": 4, "gmin_stepping": 4}
    np.testing.assert_allclose(op.node_voltage("m_plus")[0], want, rtol=1e-9)


def test_iteration_limit_gives_a_clear_error(monkeypatch):
    _cripple_newton(monkeypatch, lambda kwargs, seen: True)
    with pytest.raises(SolveError) as ei:
        _clamp_engine().operate("P", [1000.0])
    msg = ei.value.one_line()
    assert msg.startswith("P: no operating point found for stimulus 1000")
    assert "after Newton, source stepping and gmin stepping" in msg


def test_junction_limiting_follows_spice():
    """The classic limiting: a forward step beyond V_crit becomes v_old + nV_t ln(1 + dv / nV_t).

    Reference: L. W. Nagel, SPICE2, UC Berkeley ERL-M520, 1975 (``pnjlim``).
    """
    nvt, i_s = 0.025, 1e-14
    vcrit = nvt * math.log(nvt / (math.sqrt(2.0) * i_s))
    got = solve.pnjlim(np.array([5.0, 5.0, 0.3, 0.70]), np.array([0.6, -1.0, 0.2, 0.69]), nvt, vcrit)
    want = [0.6 + nvt * math.log(1 + (5.0 - 0.6) / nvt),  # from a forward-biased start
            nvt * math.log(5.0 / nvt),  # from a reverse-biased start
            0.3,  # below V_crit: no limiting
            0.70]  # a small step: no limiting
    np.testing.assert_allclose(got, want, rtol=1e-14)  # tolerance: round-off of the same formula
    assert math.isfinite(i_s * math.exp(got[0] / nvt))  # the limited step keeps the current finite


def test_batch_memory_limit_gives_a_clear_error(monkeypatch):
    monkeypatch.setattr(solve, "MAX_RESULT_FLOATS", 10_000)
    eng = _clamp_engine()
    eng.operate("P", np.linspace(0, 10, 100))  # 100 cases x 10 held values: within the limit
    with pytest.raises(SolveError) as ei:
        eng.operate("P", np.linspace(0, 10, 2000))
    msg = ei.value.one_line()
    assert msg.startswith("P: 2000 operating points in one batch would need about")
    assert "GB for the results" in msg and "lower the Monte Carlo samples (--samples)" in msg


def test_full_node_arrays_respect_the_batch_memory_limit(monkeypatch):
    """Results are held per case (port currents, diode values); the full node-voltage array
    of a many-node network is formed only when asked for, and is refused when too big."""
    els = [Resistor(f"R{k}", f"n{k}", f"n{k + 1}", 100.0) for k in range(30)]
    els += [Resistor("RIN", "plus", "n0", 1e3), MovementElement("M1", "n30", "com"),
            Diode("D1", "n30", "com", "si")]
    si = DiodeModel("si", 5e-9, n=1.9, r_s_ohm=0.5)
    eng = Engine(build(make_spec(els, [P()], i_fs_a=1e-3, r_coil_ohm=1e3, diodes=[si])))
    monkeypatch.setattr(solve, "MAX_RESULT_FLOATS", 10_000)
    op = eng.operate("P", np.linspace(0, 10, 1000))  # 1000 cases x 5 held values: within the limit
    assert op.movement_current_a.shape == (1, 1000)  # one column at a time: fine
    with pytest.raises(SolveError, match=r"^P: 1000 operating points in one batch would need about .* GB for the"):
        op.solution.v_node  # 1000 cases x 33 nodes: refused


def test_batch_memory_limit_through_the_command_line(monkeypatch, capsys, tmp_path):
    monkeypatch.setattr(solve, "MAX_RESULT_FLOATS", 200_000)
    monkeypatch.chdir(tmp_path)
    code = cli.main(["check", str(VOLTMETER), "--samples", "5000"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and err.count("\n") == 1
    assert "operating points in one batch would need about" in err and "--samples" in err
    assert list(tmp_path.iterdir()) == []
