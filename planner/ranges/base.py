"""What every kind of range (what a switch position measures) provides.

A range kind is one file of this package holding a :class:`RangeKind` subclass:
the quantity a position of that kind measures, the source that drives it at full
scale, how the pointer's deflection becomes a reading, which figures describe
what the instrument does to the measured circuit, and the misrange stimuli that
belong to that kind of range (the generic ones, such as the next range's full
scale and the declared maximum input, are built in :mod:`planner.faults`).
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np


class RangeKind:
    """A kind of range: the questions the analyses ask a switch position.

    Attributes
    ----------
    measures : str
        The position's ``measures`` in project files and JSON.
    unit : str
        Unit of its full scale and readings (``V``, ``A``).
    source : str
        What drives it at full scale: ``voltage`` or ``current``.
    label : str
        Words for reports (``DC voltage``).
    waveform : str
        The waveform a position of this kind is calibrated for and read with
        (:data:`planner.cycle.SHAPES`): ``dc`` for DC ranges, ``sine`` for the
        average-responding AC ranges (their applied value is its rms).
    """

    measures: ClassVar[str] = ""
    unit: ClassVar[str] = ""
    source: ClassVar[str] = ""
    label: ClassVar[str] = ""
    waveform: ClassVar[str] = "dc"

    def reading(self, movement_multiple: np.ndarray, full_scale: float) -> np.ndarray:
        """The reading from the movement current as a multiple of full scale [unit].

        A moving-coil pointer follows the (mean) movement current; on a linear DC
        scale the reading is :math:`I_m / I_{fs} \\times FS` (design contract).
        """
        return movement_multiple * full_scale

    def input_figures(self, full_scale: float, source_current_a: float, terminal_v: float) -> dict:
        """What the instrument presents to the measured circuit at full scale (JSON fields)."""
        return {}

    def check_figures(self, engine, position) -> dict:
        """Figures of ``planner check`` that belong to this kind of range (JSON fields).

        Parameters
        ----------
        engine : planner.engine.Engine
        position : Position
        """
        return {}

    def misrange(self, position, faults) -> list:
        """Misrange stimuli that belong to this kind of range (list of :class:`planner.stimulus.Stimulus`).

        Parameters
        ----------
        position : Position
        faults : Faults
            The project's ``faults`` section.
        """
        return []

    def __repr__(self) -> str:
        return f"{type(self).__name__}()"
