"""EMFs in linear branches (batteries) in the solver, against closed forms and an independent solve.

Convention (planner.solve.solve): branch j from node a to node b is its resistance in
series with a source of EMF e_j whose plus side faces a; its current from a to b is
(v_a - v_b - e_j) / r_j, so that with open terminals v_a - v_b = e_j. A battery
between [plus, minus] is a branch from plus to minus with e = E.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import wrightomega

from flat_circuits import build
from planner.errors import SolveError
from planner.solve import Junctions, solve

NONE = Junctions(*(np.zeros(0),) * 6)


def series_ohmmeter():
    """Battery B1 [bp, com], series resistor R1, movement M1, the unknown R_x as the source
    resistance of a 0 V stimulus (branch RX from the held node to the terminal t)."""
    return build([("RX", "plus", "t"), ("M1", "m", "t"), ("R1", "bp", "m"), ("B1", "bp", "com")])


def test_open_terminals_show_the_emf():
    """A 0 A current stimulus (open terminals): v_plus - v_minus = E, whatever the resistances."""
    c = build([("B1", "plus", "x"), ("R1", "x", "com"), ("R2", "plus", "com")], kind="current")
    sol = solve(c, [0.7, 1e3, 1e12], NONE, [0.0], emf=[1.5, 0.0, 0.0])
    # R2 = 1 Tohm across: the battery drives 1.5 V / 1 Tohm through it, a divider to 1e-12
    want = 1.5 * 1e12 / (1e12 + 1e3 + 0.7)
    # tolerance: round-off of a linear solve whose conductances span 12 decades
    np.testing.assert_allclose(sol.node_voltage(c.node_index["plus"])[0], [want], rtol=1e-11)
    i_leak = 1.5 / (1e12 + 1e3 + 0.7)
    np.testing.assert_allclose(sol.branch_current(2)[0], [i_leak], rtol=1e-11)
    # the battery's own current is (v_plus - v_x - E) / 0.7 ohm, a difference of 1.5 V node voltages:
    # its round-off is ulp(1.5 V) / 0.7 ohm, 3e-16 A
    np.testing.assert_allclose(sol.branch_current(0)[0], [-i_leak], rtol=0, atol=1e-15)


@pytest.mark.parametrize("e_bat", [1.5, 1.1])
def test_series_ohmmeter_half_scale_at_the_internal_resistance(e_bat):
    """Series ohmmeter: I = E / (R_int + R_x), deflection D = R_int / (R_int + R_x), half scale at
    R_x = R_int (T. R. Kuphaldt, Lessons in Electric Circuits, vol. I, "DC metering circuits",
    "Ohmmeter design")."""
    c = series_ohmmeter()
    r_int = 0.8 + 1470.0 + 30.0  # battery, series resistor, coil
    r_x = np.array([0.0, 1.0, 150.0, r_int, 10 * r_int, 1e6])
    r = np.column_stack([r_x, np.full(6, 30.0), np.full(6, 1470.0), np.full(6, 0.8)])
    sol = solve(c, np.maximum(r, 1e-12), NONE, np.zeros((6, 1)), emf=[0.0, 0.0, 0.0, e_bat])
    i_m = sol.branch_current(1)[:, 0]  # M1 from m to t
    i_fs = e_bat / (r_int + 1e-12)
    # tolerance: a branch current is a difference of node voltages over the branch's resistance, here
    # 1.5 V nodes and a 30 ohm coil carrying 1.5 uA: ulp(1.5 V) / 30 ohm is 1e-12 of that current
    np.testing.assert_allclose(i_m, e_bat / (r_int + np.maximum(r_x, 1e-12)), rtol=1e-9)
    np.testing.assert_allclose(i_m / i_fs, r_int / (r_int + r_x), rtol=1e-9)
    assert abs(i_m[3] / i_fs - 0.5) < 1e-12


def _independent(circuit, r, e, stimulus):
    """Node voltages and branch currents by a full modified nodal solve written here (numpy)."""
    n = circuit.n_nodes
    lin = len(r)
    # unknowns: v_1 .. v_{n-1}, branch currents, the held source's current
    held = circuit.held
    size = (n - 1) + lin + (1 if held is not None else 0)
    a = np.zeros((size, size))
    b = np.zeros(size)
    for j, (na, nb) in enumerate(zip(circuit.lin_a, circuit.lin_b)):
        col = (n - 1) + j
        for node, sign in ((na, 1.0), (nb, -1.0)):  # KCL rows: current leaving each node
            if node:
                a[node - 1, col] += sign
        row = col  # branch row: v_a - v_b - r i = e
        if na:
            a[row, na - 1] += 1.0
        if nb:
            a[row, nb - 1] -= 1.0
        a[row, col] = -r[j]
        b[row] = e[j]
    if held is not None:
        k = size - 1
        a[held - 1, k] += 1.0  # the source's current leaves the held node's KCL
        a[k, held - 1] = 1.0
        b[k] = stimulus
    else:
        b[circuit.inject - 1] += stimulus
    x = np.linalg.solve(a, b)
    return np.concatenate([[0.0], x[:n - 1]]), x[n - 1:n - 1 + lin]


@pytest.mark.parametrize("seed", range(8))
@pytest.mark.parametrize("kind", ["voltage", "current"])
def test_random_networks_with_emfs_match_an_independent_solve(seed, kind):
    """Random connected resistor networks, EMFs in some branches, stimulus 0 and not, against a
    modified nodal solve of the same network with each EMF as a voltage source."""
    rng = np.random.default_rng(seed)
    nodes = ["com", "plus"] + [f"n{k}" for k in range(int(rng.integers(2, 7)))]
    branches = [(f"T{k}", nodes[k], nodes[int(rng.integers(0, k))]) for k in range(1, len(nodes))]  # a tree
    for k in range(int(rng.integers(0, 6))):
        a, b = rng.choice(len(nodes), 2, replace=False)
        branches.append((f"X{k}", nodes[a], nodes[b]))
    c = build(branches, kind=kind)
    lin = len(branches)
    r = 10.0 ** rng.uniform(-1, 6, lin)
    e = np.where(rng.uniform(size=lin) < 0.4, rng.uniform(-9, 9, lin), 0.0)
    e[int(rng.integers(0, lin))] = 1.5  # at least one battery
    stims = [0.0, 3.0] if kind == "voltage" else [0.0, 2e-3]
    sol = solve(c, r, NONE, stims, emf=e)
    for s_i, s in enumerate(stims):
        v_ref, i_ref = _independent(c, r, e, s)
        v = sol.v_node[0, s_i]
        i = sol.i_branch[0, s_i]
        v_scale = np.abs(v_ref).max() + 1e-300
        # tolerance: round-off of two different linear solves, which grows with the spread of the
        # conductances (kappa = r_max / r_min, up to 1e7 here): 10 eps kappa of the largest voltage
        kappa = r.max() / r.min()
        v_tol = 10 * np.finfo(float).eps * kappa * v_scale
        np.testing.assert_allclose(v, v_ref, rtol=0, atol=v_tol)
        # currents: that round-off over the branch resistances
        np.testing.assert_allclose(i, i_ref, rtol=0, atol=v_tol / r.min())
        for j in range(lin):  # one column at a time, as an analysis asks for it
            np.testing.assert_allclose(sol.branch_current(j)[0, s_i], i[j], rtol=1e-12, atol=1e-300)


def test_battery_drives_a_diode_through_a_resistor():
    """E behind R into a junction: the exact current (T. C. Banwell and A. Jayakumar, Electronics
    Letters 36(4), 2000), with scipy's Wright omega function."""
    c = build([("B1", "bp", "com"), ("R1", "bp", "plus")], diodes=[("D1", "plus", "com")], kind="current")
    i_s, nvt, r_tot = 1e-14, 0.026, 100.0 + 0.5
    jn = Junctions(*(np.array([v]) for v in (i_s, nvt, math.inf, 1e-3, 0.0, 0.0)))
    emf = np.array([[0.3, 0.0], [1.5, 0.0], [9.0, 0.0], [-5.0, 0.0]])
    sol = solve(c, [0.5, 100.0], jn, [0.0], emf=emf)
    e = emf[:, 0]
    want = nvt / r_tot * np.real(wrightomega(np.log(i_s * r_tot / nvt) + (e + i_s * r_tot) / nvt)) - i_s
    np.testing.assert_allclose(sol.i_diode[:, 0, 0], want, rtol=1e-9)  # the solver's step tolerance
    # the battery's current is the diode's (B1 from bp to com carries -I), read as a difference of node
    # voltages of about E over 0.5 ohm: to 1e-9, or to a few ulp(E) / 0.5 ohm where the current is tiny
    np.testing.assert_allclose(sol.branch_current(0)[:, 0], -want, rtol=1e-9, atol=8 * np.finfo(float).eps * 9.0 / 0.5)


def test_battery_life_batch_and_monte_carlo_path():
    """600 parameter sets (resistor draws) at one battery voltage take the representative-set warm
    start; the same with the battery spread over its life does not; both match the closed form."""
    rng = np.random.default_rng(3)
    c = series_ohmmeter()
    p = 600
    r = np.column_stack([np.full(p, 1500.0), 30.0 * (1 + 0.002 * rng.uniform(-1, 1, p)),
                         1470.0 * (1 + 0.002 * rng.uniform(-1, 1, p)), np.full(p, 0.8)])
    for e_bat in (np.full(p, 1.5), np.linspace(1.6, 1.1, p)):
        emf = np.column_stack([np.zeros((p, 3)), e_bat])
        sol = solve(c, r, NONE, np.zeros((p, 1)), emf=emf)
        want = e_bat / r.sum(axis=1)
        np.testing.assert_allclose(sol.branch_current(1)[:, 0], want, rtol=1e-9)  # see the series ohmmeter


def test_emf_with_clamp_diodes_across_the_movement():
    """Battery and clamp pair: the node law at the movement, solved by brentq, for several R_x."""
    from scipy.optimize import brentq

    c = build([("RX", "plus", "t"), ("M1", "m", "t"), ("R1", "bp", "m"), ("B1", "bp", "com")],
              diodes=[("D1", "m", "t"), ("D2", "t", "m")])
    i_s, nvt = 5e-9, 1.9 * 0.0257
    jn = Junctions(*(np.array([v, v]) for v in (i_s, nvt, math.inf, 1e-3, 0.0, 1e-9)))
    e_bat = 9.0
    r_x = np.array([0.0, 100.0, 1e4])
    r = np.column_stack([np.maximum(r_x, 1e-9), np.full(3, 2e3), np.full(3, 10.0), np.full(3, 1.0)])
    sol = solve(c, r, jn, np.zeros((3, 1)), emf=[0.0, 0.0, 0.0, e_bat])
    for k, rx in enumerate(np.maximum(r_x, 1e-9)):
        # unknowns: the movement's voltage v (m less t); loop: E = (11 ohm + R_x) I + v, I = v/2k + diodes
        def f(v):
            i = v / 2e3 + i_s * math.expm1(v / nvt) - i_s * math.expm1(-v / nvt) + 2e-9 * v
            return (11.0 + rx) * i + v - e_bat
        v = brentq(f, 0.0, e_bat, xtol=1e-300, rtol=1e-15)
        np.testing.assert_allclose(sol.branch_current(1)[k, 0], v / 2e3, rtol=1e-9)


def test_bad_emf_arrays_are_refused():
    c = build([("B1", "plus", "com")])
    with pytest.raises(SolveError, match="EMF array has 2 columns for 1"):
        solve(c, [1.0], NONE, [0.0], emf=[1.0, 2.0])
    with pytest.raises(SolveError, match="EMF is not finite"):
        solve(c, [1.0], NONE, [0.0], emf=[math.inf])
