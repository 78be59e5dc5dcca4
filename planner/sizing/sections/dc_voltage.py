"""DC voltage ranges (``voltage:``): multiplier chain or separate multipliers, clamp-tap splits.

Targets by :func:`planner.sizing.formulas.chain_segments` or
:func:`planner.sizing.formulas.separate_multipliers` against the meter the
multipliers see; the clamp taps declared by the clamp section split the first
chain segment (or the common lower end of the separate multipliers). Topology
and names as in ``docs/sizing.md`` (sections 1, 3 and 5).
"""

from __future__ import annotations

from ...model import Position, Spec
from ...tools import fmt
from ..formulas import chain_segments, separate_multipliers
from ..layout import COM, PLUS, Layout, SegmentPlan, SizingSection, position_label
from ..request import check_ranges, request_error


class DCVoltageSizing(SizingSection):
    """The ``voltage`` section: one position per range, each with its own input contact."""

    key = "voltage"
    ranges = True

    def labels(self, spec: Spec) -> list[str]:
        return [position_label(x, "V") for x in spec.voltage.full_scales]

    def validate(self, spec: Spec) -> None:
        v = spec.voltage
        if v.arrangement not in ("chain", "separate"):
            raise request_error(spec, f"voltage.arrangement '{v.arrangement}' is not known; use 'chain' or 'separate'",
                                v.line)
        check_ranges(spec, tuple(v.full_scales), "voltage", v.line, "V")

    def targets(self, spec: Spec, layout: Layout) -> list[float]:
        """Ideal multiplier segments [ohm], lowest range first, checked positive."""
        v = spec.voltage
        i_m, r_m = layout.meter_i_a, layout.meter_r_ohm
        vfs = list(v.full_scales)
        formula = chain_segments if v.arrangement == "chain" else separate_multipliers
        targets = formula(vfs, i_m, r_m)
        if layout.feed_ohm > 0:  # input protection in series with every range: off the first segment
            targets = [t - layout.feed_ohm if (k == 0 or v.arrangement == "separate") else t
                       for k, t in enumerate(targets)]
        for vk, t in zip(vfs, targets):
            if t <= 0:
                raise request_error(
                    spec,
                    f"voltage range {fmt(vk, 'V')} needs a multiplier of {fmt(t, 'ohm')}: the lowest range must "
                    f"exceed I_fs*R_m = {fmt(i_m * r_m, 'V')} (the meter's own full-scale voltage); raise it or "
                    "drop it" + (" (the input protection's series resistance counts against it)" if layout.feed_ohm
                                 else ""),
                    v.line,
                )
        return targets

    def _check_taps(self, spec: Spec, layout: Layout, targets: list[float]) -> None:
        chain = spec.voltage.arrangement == "chain"
        if chain:  # a tap may split any segment of the chain, not fall on one of its nodes
            nodes = [sum(targets[:k + 1]) for k in range(len(targets))]
            for tap in layout.taps:
                if tap.ohm >= nodes[-1] * (1 - 1e-12) or any(abs(tap.ohm - x) <= 1e-9 * x for x in nodes):
                    raise request_error(
                        spec,
                        f"clamp tap at {fmt(tap.ohm, 'ohm')} above the movement lies on a range's node or beyond the "
                        f"chain ({fmt(nodes[-1], 'ohm')}); give a value between two range nodes "
                        f"({', '.join(fmt(x, 'ohm') for x in nodes)})",
                        tap.line,
                    )
            return
        first = min(targets)
        for tap in layout.taps:
            if tap.ohm >= first * (1 - 1e-12):
                where = "first chain segment" if chain else "smallest multiplier"
                raise request_error(
                    spec,
                    f"clamp tap at {fmt(tap.ohm, 'ohm')} above the movement lies beyond the {where} "
                    f"({fmt(first, 'ohm')}) it would split; give a value below {fmt(first, 'ohm')}",
                    tap.line,
                )

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        v = spec.voltage
        names = self.labels(spec)
        targets = self.targets(spec, layout)
        self._check_taps(spec, layout, targets)
        segs = layout.segments
        below, done = layout.multiplier_base, 0.0
        if v.arrangement == "chain":
            # each clamp tap splits the chain segment it falls in: the part below it is 'tap j'
            taps, j, cum = list(layout.taps), 0, 0.0
            for k, t in enumerate(targets):
                cum += t
                while j < len(taps) and taps[j].ohm < cum:
                    segs.append(SegmentPlan(f"tap {j + 1}", "clamp tap", taps[j].ohm - done, below, taps[j].node,
                                            v.line))
                    below, done, j = taps[j].node, taps[j].ohm, j + 1
                top = f"v{k + 1}"
                segs.append(SegmentPlan(f"chain {names[k]}", "multiplier", cum - done, below, top, v.line))
                below, done = top, cum
        else:
            for j, tap in enumerate(layout.taps, 1):
                segs.append(SegmentPlan(f"tap {j}", "clamp tap", tap.ohm - done, below, tap.node, v.line))
                below, done = tap.node, tap.ohm
            for k, t in enumerate(targets):
                segs.append(SegmentPlan(f"multiplier {names[k]}", "multiplier", t - done, below, f"v{k + 1}", v.line))
        for k, vk in enumerate(v.full_scales):
            layout.positions.append(Position(names[k], "voltage", float(vk), (PLUS, COM), v.line))
            layout.contacts.append((layout.voltage_feed, f"v{k + 1}", (names[k],)))
            layout.ideal[names[k]] = (vk / layout.meter_i_a, None)
