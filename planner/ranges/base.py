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
    #: Most toleranced parameters whose every corner ``planner check`` solves for the worst case
    #: (above: the sensitivity bound with its verification corners); None: the check's own limit.
    corner_parameters: ClassVar[int | None] = None
    #: The fewest worst-case corners ``planner check`` solves with the Monte Carlo builds, at every applied
    #: value (:meth:`planner.ranges.ac.ACRange.operate_groups`); None: never. For kinds whose every request
    #: costs the same nodes whatever its applied values (a cycle rule), not where a value costs a point.
    corners_with_builds: ClassVar[int | None] = None
    #: Whether the neighbouring ranges' full scales are misrange stimuli (``range up``/``down``).
    range_steps: ClassVar[bool] = True

    def reading(self, movement_multiple: np.ndarray, full_scale: float) -> np.ndarray:
        """The reading from the movement current as a multiple of full scale [unit].

        A moving-coil pointer follows the (mean) movement current; on a linear DC
        scale the reading is :math:`I_m / I_{fs} \\times FS` (design contract).
        """
        return movement_multiple * full_scale

    def full_scale_drive(self, position) -> float:
        """The source value [V] or [A] that drives the position to full deflection."""
        return position.full_scale

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

    def plate_scale(self, position) -> str | None:
        """Which scale of the dial marks this position (``planner scale``, the dossier's plate).

        Returns
        -------
        str or None
            ``"linear"``: the shared linear DC scale, fraction = value / full
            scale (reading = FS x I_m / I_fs); ``"own"``: a scale of its own, which
            :meth:`scale_definition` draws from the solved response; None: no scale.
        """
        return "linear"

    def scale_definition(self, response, position):
        """A scale of its own for this position (used where :meth:`plate_scale` says ``"own"``).

        Parameters
        ----------
        response : callable
            D(values): the nominal deflection I_m / I_fs of this position for an
            array of applied values (nominal parts, reference temperature; the
            solver seam of :mod:`planner.scale.solved`).
        position : Position

        Returns
        -------
        planner.scale.ScaleDef or None
            E.g. ``ScaleDef(name, "ac", (ScalePosition(...),), sampled_response(response,
            full_scale, "ac"))``; an ohms scale uses kind ``"ohms"`` with its centre
            value as the position's full scale.
        """
        return None

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
