"""The start's closed-form currents of an antiparallel segment (planner.solve.start).

Reference: the exact current of a junction behind a resistance, I = (nV_t/R) W(I_s R/nV_t
e^{(V + I_s R)/nV_t}) - I_s (T. C. Banwell and A. Jayakumar, Electronics Letters 36(4),
291-292, 2000), with scipy's ``lambertw``; and one call per direction.
"""

import numpy as np
from scipy.special import lambertw

from planner.solve.junction import single_diode
from planner.solve.start import _forward_currents


def _banwell(v, r, i_s, nvt):
    arg = i_s * r / nvt * np.exp((v + i_s * r) / nvt)
    return nvt / r * lambertw(arg).real - i_s


def test_both_directions_in_one_call_are_each_direction_alone():
    n = 50
    v_th = np.linspace(-3.0, 3.0, n)
    r_th = np.linspace(100.0, 5e3, n)
    # (o, chosen parts, n V_t, I_s, R_s): a silicon diode one way, a Schottky-like one the other
    forward = [(1.0, [0], 0.0517, 2e-14, 0.5), (-1.0, [1], 0.0270, 3e-8, 2.0)]
    both = _forward_currents(forward, v_th, r_th, n)
    for (o, _, nvt, i_s, r_s), got in zip(forward, both):
        alone = single_diode(o * v_th, r_th + r_s, i_s, nvt)
        np.testing.assert_array_equal(got, alone)  # the same values, bit for bit
        ref = _banwell(o * v_th, r_th + r_s, i_s, nvt)
        # lambertw and the Wright-omega form agree to a few ulp of the current, and to the
        # rounding of I_s where the current is -I_s (reverse bias)
        np.testing.assert_allclose(got, ref, rtol=1e-12, atol=1e-12 * i_s)


def test_a_few_cases_and_shared_parameters():
    # at most SMALL cases each direction takes its own (float) call; shared floats stay floats
    v_th = np.array([0.7, -0.7, 0.0])
    forward = [(1.0, [0], 0.05, 1e-9, 1.0), (-1.0, [1], 0.05, 1e-9, 1.0)]
    for n, v in ((3, v_th), (40, np.resize(v_th, 40))):
        both = _forward_currents(forward, v, 1e3, n)
        for (o, _, nvt, i_s, r_s), got in zip(forward, both):
            np.testing.assert_allclose(got, _banwell(o * v, 1e3 + r_s, i_s, nvt), rtol=1e-12, atol=1e-21)
