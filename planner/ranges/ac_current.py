"""AC current ranges: a shunt (or a tap of a ring) across a rectifier and the movement."""

from __future__ import annotations

from .ac import ACRange
from .dc_current import MAINS_SOURCE_OHM, MAINS_V_RMS
from ..stimulus import Stimulus


class ACCurrent(ACRange):
    """An AC ammeter position: driven by a sine current given as rms, read by the cycle mean.

    Its burden is the rms voltage across the input terminals at full-scale rms
    current, its input impedance that over the full scale.
    """

    measures, unit, source, label = "ac_current", "A", "current", "AC current"

    def input_figures(self, full_scale, source_current_a, terminal_v):
        return {"burden_voltage_v": terminal_v, "input_impedance_ohm": terminal_v / full_scale,
                "input_resistance_ohm": terminal_v / full_scale}

    def misrange(self, position, faults) -> list:
        """DC on the AC range (both polarities), and the wall outlet when no maximum input is declared."""
        out = super().misrange(position, faults)
        if faults.max_input_v is None:
            out.append(Stimulus("mains on A range", "voltage", MAINS_V_RMS, "sine", MAINS_SOURCE_OHM,
                                detail="wall outlet on an AC current range (no maximum input declared)"))
        return out
