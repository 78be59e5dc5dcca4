"""DC current ranges (``current:``): an Ayrton ring or separate shunts, and the swamping resistor.

Targets by :func:`planner.sizing.formulas.ayrton_segments` or
:func:`planner.sizing.formulas.separate_shunts` against the movement branch
R_b = R_m + R_sw. With ``ring_on_voltage: across`` the ring stays across the
movement branch, whose top is then the node the voltage multipliers start from.
Topology and names as in ``docs/sizing.md`` (sections 1 and 5).
"""

from __future__ import annotations

import math

from ...model import Position, Spec
from ...tools import fmt
from ..formulas import ayrton_segments, ayrton_taps, current_branch_ohm, ring_across, separate_shunts
from ..layout import COM, M_IN, M_PLUS, PLUS, Layout, SegmentPlan, SizingSection, position_label
from ..request import check_ranges, request_error


#: Relative distance from I_fs within which a current range is the bare movement.
BARE_REL = 1e-9


def bare_range(spec: Spec) -> bool:
    """Whether the lowest current range is the bare movement (its full scale is I_fs)."""
    return abs(spec.current.full_scales[0] / spec.movement.i_fs_a - 1.0) <= BARE_REL


class DCCurrentSizing(SizingSection):
    """The ``current`` section: a ring with one tap contact per range, or one shunt per range."""

    key = "current"
    ranges = True

    def labels(self, spec: Spec) -> list[str]:
        return [position_label(x, "A") for x in spec.current.full_scales]

    def validate(self, spec: Spec) -> None:
        c, m = spec.current, spec.movement
        if c.arrangement not in ("ring", "separate"):
            raise request_error(spec, f"current.arrangement '{c.arrangement}' is not known; use 'ring' or 'separate'",
                                c.line)
        if c.ring_on_voltage not in ("across", "switched_out"):
            raise request_error(
                spec, f"current.ring_on_voltage '{c.ring_on_voltage}' is not known; use 'across' or 'switched_out'",
                c.line)
        if c.ring_on_voltage == "across" and c.arrangement != "ring":
            raise request_error(
                spec,
                "current.ring_on_voltage: across applies to an Ayrton ring only; use arrangement: ring or "
                "ring_on_voltage: switched_out",
                c.line,
            )
        if not (c.swamp_ohm >= 0 and math.isfinite(c.swamp_ohm)):
            raise request_error(spec, "current.swamp must be zero or a positive resistance", c.line)
        check_ranges(spec, tuple(c.full_scales), "current", c.line, "A")
        for i in c.full_scales:
            if i < m.i_fs_a * (1 - BARE_REL):
                raise request_error(
                    spec,
                    f"current range {fmt(i, 'A')} is below the movement's full-scale current "
                    f"I_fs = {fmt(m.i_fs_a, 'A')}, so no shunt can make it; remove the range or choose a "
                    "more sensitive movement",
                    c.line,
                )

    @staticmethod
    def branch_top(spec: Spec) -> str:
        """Top node of the movement branch on current ranges: above the swamp, if any."""
        return M_IN if spec.current.swamp_ohm > 0 else M_PLUS

    def prepare(self, spec: Spec, layout: Layout) -> None:
        if ring_across(spec):
            layout.multiplier_base = self.branch_top(spec)

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        c = spec.current
        if c.arrangement == "ring":
            self._ring(spec, layout)
        else:
            self._shunts(spec, layout)
        if c.swamp_ohm > 0:
            layout.segments.append(SegmentPlan("swamp", "swamp", c.swamp_ohm, M_PLUS, M_IN, c.line))

    def _bare(self, spec: Spec, layout: Layout, name: str, i_node: str) -> None:
        """The bare movement as a range: the input fed straight to the movement branch, no shunt."""
        c, i_fs = spec.current, spec.movement.i_fs_a
        layout.positions.append(Position(name, "current", float(i_fs), (PLUS, COM), c.line))
        layout.contacts.append((layout.current_feed, i_node, (name,)))
        burden = i_fs * current_branch_ohm(spec)
        layout.ideal[name] = (burden / i_fs, burden)

    def _ring(self, spec: Spec, layout: Layout) -> None:
        """The Ayrton ring; a bare-movement range first (ring switched out in it) when the lowest range is I_fs.

        With ``ring_on_voltage: across`` the ring stays across the movement branch in
        every other position (the voltage ones included) through one contact that
        opens only on the bare-movement range.
        """
        c, i_fs = spec.current, spec.movement.i_fs_a
        names, ifs, r_b = self.labels(spec), list(c.full_scales), current_branch_ohm(spec)
        i_node = self.branch_top(spec)
        across = c.ring_on_voltage == "across" or spec.voltage is None
        bare = bare_range(spec)
        if bare:
            others = [p.name for p in layout.positions]
            self._bare(spec, layout, names[0], i_node)
            names, ifs = names[1:], ifs[1:]
            if not names:
                return
        taps_r = ayrton_taps(ifs, i_fs, r_b)
        n = len(ifs)
        top = "t1" if (bare or not across) else i_node
        tnode = [top] + [f"t{k + 1}" for k in range(1, n)]
        lows = [COM] + [tnode[k] for k in range(n - 1, 0, -1)]
        highs = [tnode[k] for k in range(n - 1, -1, -1)]
        for j, t in enumerate(ayrton_segments(ifs, i_fs, r_b)):
            k = n - 1 - j  # the tap at the segment's upper end belongs to range k
            layout.segments.append(SegmentPlan(f"ring {names[k]}", "ring", t, lows[j], highs[j], c.line))
        for k, ik in enumerate(ifs):
            layout.positions.append(Position(names[k], "current", float(ik), (PLUS, COM), c.line))
            layout.contacts.append((_feed(layout, ik), tnode[k], (names[k],)))
            burden = i_fs * (taps_r[0] + r_b - taps_r[k])
            layout.ideal[names[k]] = (burden / ik, burden)
        if bare and across:
            layout.contacts.append(("t1", i_node, tuple(others + names)))
        elif not across:
            layout.contacts.append(("t1", i_node, tuple(names)))

    def _shunts(self, spec: Spec, layout: Layout) -> None:
        c, i_fs = spec.current, spec.movement.i_fs_a
        names, ifs, r_b = self.labels(spec), list(c.full_scales), current_branch_ohm(spec)
        i_node = self.branch_top(spec)
        if bare_range(spec):
            self._bare(spec, layout, names[0], i_node)
            names, ifs = names[1:], ifs[1:]
        for k, t in enumerate(separate_shunts(ifs, i_fs, r_b)):
            layout.segments.append(SegmentPlan(f"shunt {names[k]}", "shunt", t, COM, f"s{k + 1}", c.line))
        for k, ik in enumerate(ifs):
            layout.positions.append(Position(names[k], "current", float(ik), (PLUS, COM), c.line))
            layout.contacts.append((_feed(layout, ik), f"s{k + 1}", (names[k],)))
            layout.contacts.append((f"s{k + 1}", i_node, (names[k],)))
            burden = i_fs * r_b
            layout.ideal[names[k]] = (burden / ik, burden)


def _feed(layout: Layout, full_scale: float) -> str:
    """The node a current range's contact joins: behind a mA fuse when its full scale is below that fuse's rating."""
    low = layout.low_current_feed
    return low[1] if low is not None and full_scale < low[0] else layout.current_feed
