"""Where the solver starts an AC position's requests (``planner/cycle/starts.py``).

A start changes no result: a network of resistors and diodes (each a strictly increasing
current-voltage law) has one operating point (R. J. Duffin, "Nonlinear networks. IIa",
Bulletin of the American Mathematical Society 53, 963-971, 1947; from memory), and every
case is iterated to the solver's step tolerance from wherever it starts. So the checks are:
the same results with and without the starts (to the solver's convergence, common practice
1e-12 of full scale), fewer Newton iterations with them, and the predictions' arithmetic
against closed forms (Shockley's law: a junction's voltage at a fixed current is
n V_t ln(I / I_s), linear in ln I_s; Lagrange interpolation is exact for a polynomial of its
degree).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from planner.accuracy import check_project, draw_factors, parameters
from planner.accuracy.tolerances import current_carrying, worst_case_steps
from planner.cycle.starts import Curve, SolvedPoints, StartModel
from planner.design import build
from planner.engine import Engine

#: n V_t of a junction of emission 1.9 at 296.15 K [V]: k T / q with the exact SI constants (SI brochure, 9th ed.).
NVT = 1.9 * 1.380649e-23 * 296.15 / 1.602176634e-19


@pytest.fixture(scope="module")
def service():
    from pathlib import Path

    from planner.project import load

    return build(load(Path(__file__).resolve().parents[1] / "projects" / "service_multimeter.yaml"))


def test_model_is_exact_for_the_junction_law():
    """Unknowns that are a sum of one function of each parameter, quadratic in ln f, are predicted exactly.

    Source: Shockley's law at a fixed current, v = n V_t ln(I / I_s): each junction's voltage is linear in
    ln I_s (a part voltage), a node voltage the sum of the junctions' drops [calc].
    """
    x = np.array([0.5, 1.0, 2.0])  # three source currents [mA]
    i_s = {"D1": 5e-9, "D2": 2e-9}

    def unknowns(f1, f2):  # node rows: the two drops' sum; part voltages: each drop (3 cases x 1 and x 2)
        v1 = NVT * np.log(x * 1e-3 / (i_s["D1"] * f1))
        v2 = NVT * np.log(x * 1e-3 / (i_s["D2"] * f2))
        return (v1 + v2)[:, None], np.stack([v1, v2], axis=1)

    rows = [(1.0, 1.0), (0.8, 1.0), (1.2, 1.0), (1.0, 0.7), (1.0, 1.3)]  # nominal, then each alone at two values
    u = np.concatenate([unknowns(*r)[0] for r in rows])
    w = np.concatenate([unknowns(*r)[1] for r in rows])
    factors = {"D1": np.array([r[0] for r in rows]), "D2": np.array([r[1] for r in rows])}
    model = StartModel.from_rows(x, factors, (u, w))
    assert model is not None and model.sensitivities
    builds = {"D1": np.array([0.9, 1.45, 0.6]), "D2": np.array([1.1, 0.75, 1.5])}  # beyond the rows too
    pu, pw = model.predict(x[::-1], builds, 3)
    for b in range(3):
        eu, ew = unknowns(builds["D1"][b], builds["D2"][b])
        np.testing.assert_allclose(pu[3 * b:3 * b + 3], eu[::-1], rtol=0, atol=1e-13)  # [V]
        np.testing.assert_allclose(pw[3 * b:3 * b + 3], ew[::-1], rtol=0, atol=1e-13)  # [V]
    assert model.predict(np.array([0.7]), builds, 3) is None  # a source value not solved: no prediction


def test_model_learns_only_from_parameters_moved_alone():
    """Rows that move two parameters together teach no dependence; rows without a nominal one make no model."""
    x = np.array([1.0])
    u = np.array([[0.0], [0.1], [0.2]])  # any unknowns that differ between the rows
    w = np.array([[0.0], [0.3], [0.5]])
    together = StartModel.from_rows(x, {"R1": np.array([1.0, 0.9, 1.1]), "R2": np.array([1.0, 0.9, 1.1])}, (u, w))
    assert together is not None and not together.sensitivities  # the nominal row alone
    alone = StartModel.from_rows(x, {"R1": np.array([0.9, 1.0, 1.1])}, (u, w))
    assert alone is not None and alone.keys == ["R1"]
    assert StartModel.from_rows(x, {"R1": np.array([0.9, 0.95, 1.1])}, (u, w)) is None  # no nominal row


def test_curve_is_exact_at_its_points_and_linear_between():
    """Solved points come back exactly; between them, the straight line (exact for a linear function) [calc]."""
    c = Curve()
    x = np.array([-2.0, -1.0, 0.0, 3.0])
    c.add(x[:2], np.stack([x[:2], 2 * x[:2]], axis=1))
    c.add(x[2:], np.stack([x[2:], 2 * x[2:]], axis=1))
    np.testing.assert_array_equal(c.at(x), np.stack([x, 2 * x], axis=1))
    q = np.array([-1.5, 1.0, 4.0, -3.0])  # between, and beyond both ends
    np.testing.assert_allclose(c.at(q), np.stack([q, 2 * q], axis=1), rtol=0, atol=1e-14)


def test_other_temperatures_by_the_quadratic_through_three():
    """A nominal row at an unsolved temperature: Lagrange's quadratic through the three nearest, exact for
    unknowns quadratic in T [calc]."""
    pts = SolvedPoints(296.15)
    x = np.array([0.0, 1.0])

    def y(t):  # one node row and one part voltage per source value
        return np.stack([1e-3 * t * t + x, -0.002 * t + 0.0 * x], axis=1)

    temps = np.array([288.15, 296.15, 304.15])
    rows = np.concatenate([y(t) for t in temps])
    pts.add(x, temps, None, (rows[:, :1].copy(), rows[:, 1:].copy()))
    u, w = pts.predict(x, np.array([290.8, 301.5]), None, 2)
    want = np.concatenate([y(290.8), y(301.5)])
    np.testing.assert_allclose(np.concatenate([u, w], axis=1), want, rtol=0, atol=1e-9)  # [V]


def test_builds_start_from_the_sensitivity_rows(service):
    """An AC position's builds solved from the model of its sensitivity rows: the same operating points as
    from the solver's own start (to 1e-12 of I_fs), in at most three Newton steps where that takes five."""
    eng = Engine(service)
    name = "10 mA~"
    st = eng.state(name)
    fs = st.position.full_scale
    eng.operate(name, np.arange(1, 11) * 0.1 * fs, temperature_k=[288.15, 296.15, 304.15])  # builds the rule
    rule = next(r for k, r in eng._cycle_rules.items() if k[0] == name)
    x = rule.points()
    carrying = current_carrying(eng, name)
    params = [p for p in parameters(eng) if p.element is None or p.element in carrying]
    sens, _ = next(worst_case_steps(params, np.random.default_rng(0), 6))
    op = eng.operate(st, x, kind="current", factors=sens)
    model = StartModel.from_rows(x, sens, op.solution.start_rows)
    builds = draw_factors(params, 400, np.random.default_rng(1))
    start = model.predict(x, builds, 400)
    warm = eng.operate(st, x, kind="current", factors=builds, start=start)
    cold = eng.operate(st, x, kind="current", factors=builds)
    i_fs = service.spec.movement.i_fs_a
    np.testing.assert_allclose(warm.movement_current_a / i_fs, cold.movement_current_a / i_fs, rtol=0, atol=1e-12)
    assert warm.solution.iterations <= 3 < cold.solution.iterations


def test_check_is_the_same_without_the_starts(service, monkeypatch):
    """``planner check`` with and without the starts: every reading and figure to 1e-12 of full scale, the
    verdicts the same; with them the check takes fewer Newton iterations."""
    import planner.ranges.ac as ac
    import planner.solve.newton as nt

    steps = {"n": 0}
    newton = nt.newton

    def counted(*a, **k):
        out = newton(*a, **k)
        steps["n"] += out[3]
        return out

    monkeypatch.setattr(nt, "newton", counted)
    warm = check_project(service, samples=60)
    with_starts = steps["n"]
    monkeypatch.setattr(ac, "_predicted", lambda *a, **k: None)
    steps["n"] = 0
    cold = check_project(service, samples=60)
    assert with_starts < 0.75 * steps["n"]

    def same(a, b, fs, path):
        if isinstance(a, dict):
            assert a.keys() == b.keys(), path
            fs = a.get("full_scale", fs)
            for k in a:
                if k not in ("operating_points", "solver_calls"):
                    same(a[k], b[k], fs, f"{path}.{k}")
        elif isinstance(a, list):
            assert len(a) == len(b), path
            for i, (p, q) in enumerate(zip(a, b)):
                same(p, q, fs, f"{path}[{i}]")
        elif isinstance(a, float) and not isinstance(a, bool):
            scale = 100.0 if path.endswith("_pct") else (fs or 1.0)  # % of full scale, else the quantity's FS
            assert math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12 * scale), (path, a, b)
        else:
            assert a == b, path

    same(warm, cold, None, "")
