"""Resistance (ohms) ranges: a series ohmmeter, a battery driving the unknown through the movement.

The stimulus of a resistance position is an external resistor R_x between the
input terminals and no source voltage (a voltage stimulus of 0 V whose source
resistance is R_x); the battery inside the instrument drives the current. The
deflection falls from full scale at R_x = 0 to zero at an open input, through
half scale at the centre value. The analyses of these positions (the zeroing,
the nominal scale, the check figures) are in :mod:`planner.ohms`.
"""

from __future__ import annotations

import numpy as np

from ..stimulus import Stimulus
from .base import RangeKind
from .dc_current import MAINS_SOURCE_OHM, MAINS_V_RMS


class Resistance(RangeKind):
    """An ohms position: R_x across the input, the battery inside drives it.

    Notes
    -----
    For a series ohmmeter whose network is linear, the movement current is
    :math:`I_m = E_{th} / (R_{int} + R_x)` times a fixed share, so the deflection
    after zeroing is :math:`D = R_c / (R_c + R_x)` with the centre value
    :math:`R_c = R_{int}`, the resistance seen from the terminals. :meth:`reading`
    inverts that closed form: :math:`R = R_c (1 / D - 1)`; the check reads the
    solved nominal scale instead (:mod:`planner.ohms`).

    References
    ----------
    T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I (DC), ch. 8, "Ohmmeter
    design"; US Army correspondence course SS0602, *Basic electricity* (series
    ohmmeter, half-scale deflection at the internal resistance).
    """

    measures, unit, source, label = "resistance", "ohm", "voltage", "resistance"
    range_steps = False  # a neighbour's centre is no voltage: the voltage families cover ohms ranges

    def reading(self, movement_multiple, full_scale):
        """:math:`R_c (1 / D - 1)` [ohm] (infinite where the pointer rests at or below zero)."""
        d = np.asarray(movement_multiple, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(d > 0.0, full_scale * (1.0 / np.where(d > 0.0, d, 1.0) - 1.0), np.inf)

    def full_scale_drive(self, position) -> float:
        """The source value that gives full deflection: 0 V with the terminals shorted (R_x = 0)."""
        return 0.0

    def plate_scale(self, position):
        """None here: an ohms arc needs the zeroed response, drawn by :func:`planner.ohms.scale_definitions`
        (``planner scale`` passes those definitions to :func:`planner.scale.scale_project`)."""
        return None

    def input_figures(self, full_scale, source_current_a, terminal_v):
        return {}

    def misrange(self, position, faults) -> list:
        """The wall outlet on an ohms range when no maximum input is declared (the classic way an
        analog multimeter is destroyed); with a maximum input the ``max input`` columns cover it."""
        if faults.max_input_v is not None:
            return []
        return [Stimulus("mains on ohms range", "voltage", MAINS_V_RMS, "sine", MAINS_SOURCE_OHM,
                         detail="wall outlet on a resistance range (no maximum input declared)")]
