"""The sizer's ohms section (planner/sizing/sections/resistance.py): the closed forms of docs/ohms.md.

With the ideal targets (no E-series rounding) each range's centre at the nominal battery must be
the asked one, R_c = R_int (T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I, ch. 8,
"Ohmmeter design"), and the adjuster must zero the meter over each battery's whole span.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner import ohms
from planner.design import Design
from planner.engine import Engine
from planner.project import loads
from planner.sizing import SECTIONS, Choice, assemble, lay_out, validate

PROJECT = """
title: ohms sizing
movement: {{full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 2.5}}
voltage: {{arrangement: chain, full_scales: [2.5 V, 10 V]}}
resistance:
  centers: [{centers}]
  battery: {{voltage: 1.5 V, min: 1.2 V, max: 1.6 V, internal_resistance: 0.5 ohm}}
  high_battery: {{voltage: 9 V, min: 7 V, max: 9.6 V, internal_resistance: 20 ohm}}
  zero_adjust: {adjust}
"""


def ideal_engine(text):
    spec = loads(text)
    series = validate(spec, SECTIONS)
    layout = lay_out(spec, SECTIONS)
    ideal = [Choice(((sp.target,),), "ideal") for sp in layout.segments]
    net, _ = assemble(spec, layout, ideal, [(1.0, 1000.0)] * len(layout.segments), series)
    return Engine(Design(spec, net))


@pytest.mark.parametrize("adjust, centers", [("shunt", "20 ohm, 200 ohm, 2 kohm, 20 kohm, 100 kohm"),
                                             ("series", "200 ohm, 2 kohm, 20 kohm")])
def test_ideal_targets_give_the_asked_centres_and_zero_over_the_battery_span(adjust, centers):
    eng = ideal_engine(PROJECT.format(adjust=adjust, centers=centers))
    ohm = [p for p in eng.positions if p.measures == "resistance"]
    assert len(ohm) == len(centers.split(","))
    for p in ohm:
        op = ohms.parts_of(eng, p.name)
        # tolerance: the closed forms are exact; the solve and the zeroing's fit are round-off
        np.testing.assert_allclose(ohms.Scale(eng, op).center_ohm, p.center, rtol=1e-9)
        lo, hi = ohms.zero_span(eng, op)
        assert lo < op.battery.v_min_v and hi > op.battery.v_max_v, (p.name, lo, hi)
    # 100 kohm needs more than 1.5 V drives through the meter branch: it goes on the 9 V battery
    if adjust == "shunt":
        assert ohms.parts_of(eng, ohm[-1].name).battery.voltage_v == 9.0


def test_a_centre_beyond_every_battery_is_refused():
    from planner.errors import ProjectError

    with pytest.raises(ProjectError, match="needs more than the high_battery can give"):
        ideal_engine(PROJECT.format(adjust="shunt", centers="20 ohm, 10 Mohm"))
