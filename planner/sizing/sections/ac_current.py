"""AC current ranges (``ac_current:``): separate shunts across a rectifier and the movement.

Each shunt is solved through the nonlinear solver so that the mean movement
current at full-scale rms is I_fs
(:func:`planner.sizing.sections.rectifier.solve_for_means`, every range in one batch): the input current
divides between the shunt and the rectifier branch, whose share is not a fixed
fraction (the diodes' resistance falls as the current rises), so the division
is solved, not taken from the DC formula. A ``swamp`` resistor in series with the
rectifier branch makes the diodes' share of the branch voltage (and so their
temperature law and spread) smaller, at the price of a larger burden. An Ayrton ring is not laid out for AC
current (its taps would each need the ring's whole rectifier solve); ask for
``separate``. Topology and names in ``docs/ac.md``.
"""

from __future__ import annotations

from ...model import Position, Spec
from ...tools import fmt
from ..layout import PLUS, Layout, SegmentPlan, SizingSection
from ..request import request_error
from .ac_voltage import ac_label, check_ac_request
from .rectifier import input_minus, lay_out_rectifier, solve_for_means

#: Node prefix of the section's rectifier and shunts.
PREFIX = "aca"


class ACCurrentSizing(SizingSection):
    """The ``ac_current`` section: per range a shunt and two contacts (input to shunt, shunt to rectifier)."""

    key = "ac_current"
    ranges = True

    def labels(self, spec: Spec) -> list[str]:
        return [ac_label(x, "A") for x in spec.ac_current.full_scales]

    def validate(self, spec: Spec) -> None:
        c = spec.ac_current
        check_ac_request(spec, c, "ac_current", ("separate", "ring"), "A")
        if c.arrangement == "ring":
            raise request_error(spec, "ac_current.arrangement: ring is not laid out by the sizer (each tap would "
                                "need its own rectifier solve of the whole ring); use separate, or give an explicit "
                                "network", c.line)
        for fs in c.full_scales:
            if fs <= spec.movement.i_fs_a * 1.2:
                raise request_error(spec, f"AC current range {fmt(fs, 'A')} is too close to the movement's "
                                    f"I_fs = {fmt(spec.movement.i_fs_a, 'A')} for a rectifier and a shunt; raise it",
                                    c.line)

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        c = spec.ac_current
        names = self.labels(spec)
        lo = input_minus(PREFIX, c.rectifier)
        shunts = solve_for_means(spec, PREFIX, c.rectifier, c.diode, "ac_current", c.full_scales, c.line, c.swamp_ohm)
        for k, (fs, r) in enumerate(zip(c.full_scales, shunts)):
            top = f"{PREFIX}{k + 1}"
            layout.segments.append(SegmentPlan(f"AC shunt {names[k]}", "shunt", r, lo, top, c.line))
            layout.positions.append(Position(names[k], "ac_current", float(fs), (PLUS, lo), c.line,
                                             scale=c.scale))
            layout.contacts.append((layout.current_feed, top, (names[k],)))
            layout.contacts.append((top, f"{PREFIX}_s" if c.swamp_ohm > 0 else f"{PREFIX}_a", (names[k],)))
            layout.ideal[names[k]] = (r, None)
        if c.swamp_ohm > 0:
            layout.segments.append(SegmentPlan("AC swamp", "swamp", c.swamp_ohm, f"{PREFIX}_a", f"{PREFIX}_s", c.line))
        lay_out_rectifier(layout, PREFIX, c.rectifier, c.diode, names, c.line)
