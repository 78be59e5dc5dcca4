"""AC voltage ranges: a multiplier feeding a rectifier (bridge or half wave) and the movement."""

from __future__ import annotations

from ..stimulus import Stimulus
from .ac import ACRange
from .dc_current import MAINS_SOURCE_OHM, MAINS_V_RMS


class ACVoltage(ACRange):
    """An AC voltmeter position: driven by a sine given as rms, read by the cycle mean.

    Its input impedance is the rms full-scale voltage over the rms input current
    (design contract); with diodes in the path the input current is not a sine,
    so the figure is the ratio of the rms values, not of the amplitudes. Its
    sensitivity in ohms per volt AC is that over the full scale (the trade's
    "ohms per volt AC", lower than the DC figure by the rectifier's form factor
    and drops: *Lessons in Electric Circuits*, Vol. I, ch. 8, "Voltmeter design").
    """

    measures, unit, source, label = "ac_voltage", "V", "voltage", "AC voltage"

    def input_figures(self, full_scale, source_current_a, terminal_v):
        z = terminal_v / source_current_a
        return {"input_impedance_ohm": z, "input_resistance_ohm": z, "ohms_per_volt": z / full_scale,
                "source_current_a": source_current_a}

    def misrange(self, position, faults) -> list:
        """The AC families, and the wall outlet on a range below it when no maximum input is declared."""
        out = super().misrange(position, faults)
        if faults.max_input_v is None and position.full_scale < MAINS_V_RMS:
            out.append(Stimulus("mains on AC range", "voltage", MAINS_V_RMS, "sine", MAINS_SOURCE_OHM,
                                detail="wall outlet on an AC voltage range below it (no maximum input declared)"))
        return out
