"""AC voltage ranges (``ac_voltage:``): a multiplier chain or separate multipliers feeding a rectifier.

Each range's total multiplier is solved through the nonlinear solver so that the
mean movement current at full-scale rms is I_fs
(:func:`planner.sizing.sections.rectifier.solve_for_means`, every range in one batch); a chain's segments are
the differences of consecutive totals. The rectifier (bridge or half wave) is the
section's own; its DC corner joins the movement through a contact closed on the
section's positions. Topology and names in ``docs/ac.md``.
"""

from __future__ import annotations

from ...model import Position, Spec
from ...tools import fmt
from ..layout import PLUS, Layout, SegmentPlan, SizingSection, position_label
from ..request import check_ranges, request_error
from .rectifier import RECTIFIERS, input_minus, lay_out_rectifier, solve_for_means

#: Node prefix of the section's rectifier and multiplier.
PREFIX = "acv"


def check_ac_request(spec: Spec, req, what: str, arrangements, unit: str) -> None:
    """The checks both AC sections share: arrangement, rectifier, diode model, scale, ranges."""
    if req.arrangement not in arrangements:
        raise request_error(spec, f"{what}.arrangement '{req.arrangement}' is not known; use "
                            f"{' or '.join(repr(a) for a in arrangements)}", req.line)
    if req.rectifier not in RECTIFIERS:
        raise request_error(spec, f"{what}.rectifier '{req.rectifier}' is not known; use 'bridge' or 'half_wave'",
                            req.line)
    if req.diode not in spec.parts.diodes:
        known = ", ".join(sorted(spec.parts.diodes)) or "none defined"
        raise request_error(spec, f"{what}.diode '{req.diode}' is not in parts.diodes (known: {known}); define it there",
                            req.line)
    if req.scale not in ("shared", "own"):
        raise request_error(spec, f"{what}.scale '{req.scale}' is not known; use 'shared' or 'own'", req.line)
    check_ranges(spec, tuple(req.full_scales), what, req.line, unit)
    if spec.current is not None and spec.current.ring_on_voltage == "across":
        raise request_error(spec, f"{what}: an Ayrton ring left across the movement (current.ring_on_voltage: across) "
                            "would shunt the rectifier's movement; use ring_on_voltage: switched_out", req.line)


def ac_label(value: float, unit: str) -> str:
    """The dial label of an AC range: '10 V~' (the tilde marks AC on the dial, common practice)."""
    return position_label(value, unit) + "~"


class ACVoltageSizing(SizingSection):
    """The ``ac_voltage`` section: one position per range, a contact from the input to its tap."""

    key = "ac_voltage"
    ranges = True

    def labels(self, spec: Spec) -> list[str]:
        return [ac_label(x, "V") for x in spec.ac_voltage.full_scales]

    def validate(self, spec: Spec) -> None:
        check_ac_request(spec, spec.ac_voltage, "ac_voltage", ("chain", "separate"), "V")

    def totals(self, spec: Spec) -> list[float]:
        """Total multiplier of each range [ohm], lowest range first (nonlinear solve)."""
        v = spec.ac_voltage
        return solve_for_means(spec, PREFIX, v.rectifier, v.diode, "ac_voltage", v.full_scales, v.line)

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        v = spec.ac_voltage
        names = self.labels(spec)
        totals = self.totals(spec)
        base, lo = f"{PREFIX}_a", input_minus(PREFIX, v.rectifier)
        below, done = base, 0.0
        for k, total in enumerate(totals):
            top = f"{PREFIX}{k + 1}"
            if v.arrangement == "chain":
                if total - done <= 0:
                    raise request_error(spec, f"AC range {names[k]} needs a chain segment of {fmt(total - done, 'ohm')}; "
                                        "make the AC ranges further apart", v.line)
                layout.segments.append(SegmentPlan(f"AC chain {names[k]}", "multiplier", total - done, below, top, v.line))
                below, done = top, total
            else:
                layout.segments.append(SegmentPlan(f"AC multiplier {names[k]}", "multiplier", total, base, top, v.line))
            layout.positions.append(Position(names[k], "ac_voltage", float(v.full_scales[k]), (PLUS, lo), v.line,
                                             scale=v.scale))
            layout.contacts.append((PLUS, top, (names[k],)))
            layout.ideal[names[k]] = (total, None)
        lay_out_rectifier(layout, PREFIX, v.rectifier, v.diode, names, v.line)
