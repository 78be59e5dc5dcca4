"""The AC sections' resistances solved through the rectifier (``planner/sizing/sections/rectifier.py``).

Every range of a section is searched in one batch per round; each range's resistance must be
the root of its own excess of the mean movement current over I_fs, as a bracketing root
finder of a general reference library finds it on the same mean (scipy ``brentq``: R. P.
Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973, chapter 4).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from planner.errors import ProjectError
from planner.project import loads
from planner.sizing.sections import rectifier as rx

MOVEMENT = "movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}\n"
#: A small-signal silicon diode (invented figures) with a 20 % saturation-current spread.
SOFT = "{saturation_current: 5 nA, emission: 1.9, series_resistance: 0.5 ohm}"


def _spec(body: str):
    text = ("title: rectifier sizing test (invented)\n" + MOVEMENT
            + "parts:\n  resistors: {series: E96, tolerance: 0.1 %, tempco: 25 ppm/K}\n"
            + f"  diodes:\n    d1: {SOFT}\n" + body)
    return loads(text, "rect.yaml")


def _excess(spec, prefix, rectifier, measures, fs, swamp_ohm):
    """The mean movement current over I_fs, less 1, as a function of ln R (the SIZING_NODES rule)."""
    net = rx._network(spec, prefix, rectifier, "d1", measures, fs, swamp_ohm)
    c, r, jn = rx._compiled(spec, net, "x", "voltage" if measures == "ac_voltage" else "current")
    jx = next(j for j, br in enumerate(c.branches) if br.element == "RX")

    def f(log_r):
        rr = r.copy()
        rr[0, jx] = math.exp(log_r)
        return rx._mean_of(c, rr, jn, fs, "M1") / spec.movement.i_fs_a - 1.0

    return f


@pytest.mark.parametrize("rectifier", ["bridge", "half_wave"])
@pytest.mark.parametrize("measures,scales,swamp", [
    ("ac_voltage", [2.5, 10.0, 250.0, 1000.0], 0.0),
    ("ac_current", [1e-3, 10e-3, 1.0], 0.0),
    ("ac_current", [1e-3, 10e-3], 10e3),
])
def test_each_range_of_a_batch_is_its_own_root(rectifier, measures, scales, swamp):
    """The batch's resistances are the roots brentq finds range by range, to 1e-11 of R."""
    key = "ac_voltage" if measures == "ac_voltage" else "ac_current"
    unit = "V" if measures == "ac_voltage" else "A"
    swamp_text = f", swamp: {swamp:g} ohm" if swamp else ""
    spec = _spec(f"{key}: {{arrangement: separate, full_scales: [{', '.join(f'{s:g} {unit}' for s in scales)}], "
                 f"rectifier: {rectifier}, diode: d1{swamp_text}}}\n")
    got = rx.solve_for_means(spec, "p", rectifier, "d1", measures, scales, None, swamp)
    for fs, r in zip(scales, got):
        f = _excess(spec, "p", rectifier, measures, fs, swamp)
        assert abs(f(math.log(r))) <= 1e-12  # the mean is I_fs to round-off of the cycle mean
        root = math.exp(brentq(f, math.log(r) - 0.05, math.log(r) + 0.05, xtol=1e-14, rtol=1e-15))
        np.testing.assert_allclose(r, root, rtol=1e-11)  # the same root as brentq's
        alone = rx.solve_for_mean(spec, "p", rectifier, "d1", measures, fs, None, swamp)
        np.testing.assert_allclose(r, alone, rtol=1e-12)  # a range in the batch as alone


def test_a_range_too_low_in_a_batch_is_refused_by_name():
    """A voltage range the diodes' drops cannot reach is refused, naming that range, even beside others."""
    spec = _spec("ac_voltage: {arrangement: separate, full_scales: [0.2 V, 10 V], rectifier: bridge, diode: d1}\n")
    with pytest.raises(ProjectError) as e:
        rx.solve_for_means(spec, "p", "bridge", "d1", "ac_voltage", [0.2, 10.0], 4)
    assert "range 200.0 mV is too low" in e.value.one_line() and e.value.one_line().startswith("rect.yaml:4:")


def test_first_guess_brackets_the_root():
    """The inverse cubic of four samples of a monotone function finds its root to the sampling's accuracy.

    Source: exp(-x) - 0.3 has its root at -ln 0.3 [calc].
    """
    x = np.array([-1.0, 0.0, 0.5, 1.0, 1.2, 1.5, 3.0])
    f = np.exp(-x) - 0.3
    guess, a, b, below = rx._first_guess(x, f, -5.0, 5.0)
    assert a <= -math.log(0.3) <= b and below > 0  # exp(-x) - 0.3 is above zero below its root
    assert abs(guess + math.log(0.3)) < 1e-3  # cubic through samples 0.3 to 0.5 apart
    guess, a, b, below = rx._first_guess(x[4:], f[4:], -5.0, 5.0)  # the root in the first interval
    assert a == -5.0 and b == x[6] and abs(guess + math.log(0.3)) < 1e-2  # samples 0.3 and 1.5 apart


def test_each_round_starts_from_the_round_before(monkeypatch):
    """The search's Newton rounds start from the rows of the round before: a few Newton iterations where a
    cold start takes about twenty, and the roots are those of the cold solves (brentq above, and here each
    range's own excess at its root within round-off of the cycle mean).

    Source: a network of resistors and diodes has one operating point (R. J. Duffin, Bull. AMS 53, 1947;
    from memory), so where Newton starts moves no result beyond its step tolerance (common practice).
    """
    calls = []
    solve = rx.solve

    def recorded(*a, **k):
        sol = solve(*a, **k)
        calls.append((np.shape(a[3])[-1], k.get("start") is not None, sol.iterations))
        return sol

    monkeypatch.setattr(rx, "solve", recorded)
    scales = [2.5, 10.0, 250.0]
    spec = _spec("ac_voltage: {arrangement: separate, full_scales: [2.5 V, 10 V, 250 V], rectifier: bridge, "
                 "diode: d1}\n")
    got = rx.solve_for_means(spec, "p", "bridge", "d1", "ac_voltage", scales, None)
    fine = [c for c in calls if c[0] == rx.SIZING_NODES]
    assert fine and all(started for _, started, _ in fine)  # every fine round from the one before
    assert max(it for _, _, it in fine[1:]) <= 5  # Newton steps move ln R by 1e-4 and less
    monkeypatch.setattr(rx, "solve", solve)
    for fs, r in zip(scales, got):
        assert abs(_excess(spec, "p", "bridge", "ac_voltage", fs, 0.0)(math.log(r))) <= 1e-12
