"""DC voltage ranges: a multiplier in series with the movement."""

from __future__ import annotations

from .base import RangeKind


class DCVoltage(RangeKind):
    """A DC voltmeter position: driven by a voltage, read on the linear DC scale.

    Its input resistance at full scale is :math:`V_{fs} / I_{in}` and its
    sensitivity that over the full scale [ohm/V] (the "ohms per volt" of the
    trade: :math:`1 / I_{fs}` for a plain multiplier, *Lessons in Electric
    Circuits*, Vol. I, ch. 8, "Voltmeter design").
    """

    measures, unit, source, label = "voltage", "V", "voltage", "DC voltage"

    def input_figures(self, full_scale, source_current_a, terminal_v):
        r_in = full_scale / source_current_a
        return {"input_resistance_ohm": r_in, "ohms_per_volt": r_in / full_scale,
                "source_current_a": source_current_a}
