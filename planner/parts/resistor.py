"""Fixed resistors: the catalogue defaults (``parts.resistors``) and the element.

Ohm's law at temperature, :math:`R(T) = R (1 + \\alpha (T - T_{ref}))` (design
contract); a tolerance drawn per build; ratings of power and limiting element
voltage (the judgement of those ratings is in :mod:`planner.stress`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..tools import fmt, quantity
from .base import Parameter, Part


@dataclass(frozen=True)
class ResistorParts:
    """What the project's resistors are like when an element does not say.

    Attributes
    ----------
    series : str
        IEC 60063 series the sizer picks from (``E6`` ... ``E192``).
    tolerance : float
        Tolerance (fraction).
    tempco_per_k : float
        Temperature coefficient [1/K].
    power_w : float
        Power rating [W].
    max_voltage_v : float
        Limiting element voltage [V].
    distribution : str
        ``uniform`` or ``normal`` (tolerance = 3 sigma) for Monte Carlo.
    power_ratings_w : tuple of float
        Power ratings the sizer may step up to, ascending [W].
    max_voltages_v : tuple of float
        Limiting element voltage belonging to each power rating [V].
    pulse_energy_j : float or None
        Single-pulse energy [J] a part of the default rating (``power_w``,
        ``max_voltage_v``) survives for any pulse up to 5 s; None for the
        conservative rule of :func:`planner.stress.resistor_pulse_limit_j`.
    pulse_energies_j : tuple of (float or None)
        The same for each power rating of ``power_ratings_w`` (empty, or one
        entry per rating; None where the rating gives none).
    """

    series: str = "E96"
    tolerance: float = 0.01
    tempco_per_k: float = 100e-6
    power_w: float = 0.25
    max_voltage_v: float = 250.0
    distribution: str = "uniform"
    power_ratings_w: tuple[float, ...] = ()
    max_voltages_v: tuple[float, ...] = ()
    pulse_energy_j: float | None = None
    pulse_energies_j: tuple[float | None, ...] = ()


@dataclass(frozen=True)
class Resistor(Part):
    """A resistor element between nodes ``a`` and ``b``.

    ``target_ohm`` is the ideal value the sizer aimed at (None for an explicit
    network). ``group`` names the segment a resistor belongs to when the sizer
    built one segment from several parts. ``pulse_energy_j`` is the single-pulse
    energy [J] the part survives (None: that of its rating in
    ``parts.resistors``, else the conservative rule of
    :func:`planner.stress.resistor_pulse_limit_j`).
    """

    name: str
    a: str
    b: str
    value_ohm: float
    tolerance: float = 0.01
    tempco_per_k: float = 100e-6
    power_w: float = 0.25
    max_voltage_v: float = 250.0
    series: str | None = None
    target_ohm: float | None = None
    group: str | None = None
    trimmer: bool = False
    distribution: str = "uniform"
    line: int | None = None
    pulse_energy_j: float | None = None

    kind: ClassVar[str] = "resistor"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "resistor"

    def resistance(self, spec, dt_k) -> np.ndarray:
        """:math:`R (1 + \\alpha \\Delta T)` [ohm]."""
        return self.value_ohm * (1.0 + self.tempco_per_k * dt_k)

    def parameters(self, spec) -> list[Parameter]:
        """The value's tolerance (none when it is zero)."""
        if not self.tolerance > 0:
            return []
        dist = self.distribution if self.distribution in ("uniform", "normal") else "uniform"
        return [Parameter(self.name, self.name, "resistor", self.name, float(self.tolerance), dist)]

    def part_row(self, spec) -> dict:
        return {"name": self.name, "kind": "resistor", "value_ohm": float(self.value_ohm),
                "target_ohm": float(self.target_ohm if self.target_ohm is not None else self.value_ohm),
                "target_given": self.target_ohm is not None, "tolerance_pct": float(self.tolerance * 100.0),
                "tempco_ppm_per_k": float(self.tempco_per_k * 1e6), "distribution": self.distribution}

    def yaml(self) -> str:
        """Every rating written out (value, tolerance, tempco, power, limiting voltage, series,
        ``trimmer`` and ``pulse_energy`` when set), so the file does not depend on the
        ``parts.resistors`` defaults; the segment and the sizer's target follow as a comment."""
        extra = [
            f"value: {quantity(self.value_ohm, 'ohm')}",
            f"tolerance: {self.tolerance * 100:.10g} %",
            f"tempco: {self.tempco_per_k * 1e6:.10g} ppm/K",
            f"power: {quantity(self.power_w, 'W')}",
            f"max_voltage: {quantity(self.max_voltage_v, 'V')}",
        ]
        if self.series is not None:
            extra.append(f"series: {self.series}")
        if self.trimmer:
            extra.append("trimmer: true")
        if self.pulse_energy_j is not None:
            extra.append(f"pulse_energy: {quantity(self.pulse_energy_j, 'J')}")
        note = []
        if self.group is not None:
            note.append(f"segment '{self.group}'")
        if self.target_ohm is not None:
            note.append(f"share of target {fmt(self.target_ohm, 'ohm')}")
        comment = f"  # {', '.join(note)}" if note else ""
        return f"{{name: {self.name}, kind: resistor, between: [{self.a}, {self.b}], {', '.join(extra)}}}{comment}"
