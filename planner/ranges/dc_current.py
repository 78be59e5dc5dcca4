"""DC current ranges: a shunt (or a tap of an Ayrton ring) across the movement."""

from __future__ import annotations

from ..stimulus import Stimulus
from .base import RangeKind

#: Built-in "voltage on a current range" stimulus when no maximum input is declared:
#: a wall outlet, 230 V rms, 0.5 ohm (common practice for a European outlet's
#: loop impedance; an assumption of this planner).
MAINS_V_RMS = 230.0
MAINS_SOURCE_OHM = 0.5


class DCCurrent(RangeKind):
    """A DC ammeter position: driven by a current, read on the linear DC scale.

    Its burden is the voltage across the input terminals at full scale and its
    input resistance the burden over the full scale.
    """

    measures, unit, source, label = "current", "A", "current", "DC current"

    def input_figures(self, full_scale, source_current_a, terminal_v):
        return {"burden_voltage_v": terminal_v, "input_resistance_ohm": terminal_v / full_scale}

    def misrange(self, position, faults) -> list:
        """The wall outlet on a current range, when the project declares no maximum input
        (with one, the ``max input`` column covers it)."""
        if faults.max_input_v is not None:
            return []
        return [Stimulus("mains on A range", "voltage", MAINS_V_RMS, "sine", MAINS_SOURCE_OHM,
                         detail="wall outlet on a current range (no maximum input declared)")]
