"""The plain junctions of a Newton step evaluated as one array (planner.solve.together).

Reference: the Shockley junction law with a parallel leak, i = I_s (e^{v/nV_t} - 1) + G_p v,
and its slope dI/dv = (I_s/nV_t) e^{v/nV_t} + G_p (A. S. Sedra and K. C. Smith,
*Microelectronic Circuits*, 7th ed., Oxford, 2015, section 4.2, the exponential model),
evaluated here with numpy directly; and the same step's part-by-part evaluation.
"""

import numpy as np
import pytest

from planner.solve import newton as nt
from planner.solve.together import Together


class _Ends:
    """The two things :class:`Together` reads of a circuit's structure."""

    def __init__(self, plain, scaled):
        self.plain_ends, self.scaled_ends = plain, scaled


INF = float("inf")


def _parts(n):
    rng = np.random.default_rng(7)
    return [
        nt.junction(1e-9, 0.052, INF, 1e-12, 5.0, 0.0),  # floats, no leak
        nt.Junction(rng.uniform(1e-10, 1e-8, n), 0.0258, INF, 1e-12, 2.0, 1e-9),  # I_s per case, a leak
        nt.junction(2e-14, 0.0517, INF, 1e-12, 0.5, 0.0),
    ]


def _law(p, w):
    x = w / p.nvt
    return p.i_s * np.expm1(x) + p.g_p * w, p.i_s / p.nvt * np.exp(x) + p.g_p


@pytest.mark.parametrize("n", [1, 7, 300])
def test_joint_evaluation_is_the_junction_law(n):
    parts = _parts(n)
    st = _Ends([[(0, 1.0)]] * 3, [[]] * 3)
    tog = Together(st, parts, n)
    assert tog.idx == [0, 1, 2]
    w = [np.linspace(-5.0, 0.9, n), np.linspace(-0.3, 0.7, n), np.linspace(0.0, 0.85, n)]
    got = tog.evaluate(w)
    for d, p in enumerate(parts):
        i, y = got[d][0], got[d][1]
        i_ref, y_ref = _law(p, w[d])
        # the same formula in another order of operations: a few ulp
        np.testing.assert_allclose(i, i_ref, rtol=1e-13, atol=1e-25)
        # the slope is formed as (expm1(x) + 1) I_s/nV_t: in reverse bias it carries the rounding of
        # expm1 near -1, about 1e-16 I_s/nV_t absolute (below 1e-21 S here)
        np.testing.assert_allclose(y, y_ref, rtol=1e-13, atol=1e-21)
        # and bit for bit what the step evaluates part by part
        one = nt._evaluate(p, w[d], True, False)
        np.testing.assert_array_equal(i, one[0])
        np.testing.assert_array_equal(y, one[1])


def test_beyond_the_exponent_limit_continued_linearly_as_part_by_part():
    # one junction driven past EXP_MAX n V_t: all are clipped together, each value as alone
    n = 5
    parts = _parts(n)
    st = _Ends([[(0, 1.0)]] * 3, [[]] * 3)
    w = [np.full(n, 0.052 * 90.0), np.linspace(-0.3, 0.7, n), np.linspace(0.0, 0.85, n)]
    got = Together(st, parts, n).evaluate(w)
    for d, p in enumerate(parts):
        one = nt._evaluate(p, w[d], True, False)
        np.testing.assert_array_equal(got[d][0], one[0])
        np.testing.assert_array_equal(got[d][1], one[1])


def test_breakdown_scaled_rows_and_single_junctions_stay_part_by_part():
    n = 3
    zener = nt.junction(1e-12, 0.026, 5.1, 1e-6, 1.0, 0.0)
    parts = _parts(n) + [zener]
    # part 2 ends at a node only parts reach (its rows are scaled), part 3 has a breakdown law
    st = _Ends([[(0, 1.0)], [(0, 1.0)], [], [(0, 1.0)]], [[], [], [(1, 1.0)], []])
    assert Together(st, parts, n).idx == [0, 1]
    assert Together(_Ends([[(0, 1.0)]], [[]]), parts[:1], n).idx == []
    assert Together(_Ends([[(0, 1.0)]], [[]]), parts[:1], n).evaluate([np.zeros(n)]) == {}
