"""Batteries: the source inside an ohmmeter, an EMF in series with its internal resistance.

A battery between ``[plus, minus]`` is one linear branch from ``plus`` to
``minus``: its internal resistance with an EMF E whose plus side faces ``plus``,
so that its current from plus to minus is :math:`(v_+ - v_- - E) / r`
(:func:`planner.solve.solve`, ``emf=``). It stays in the network in every switch
state, so it also drives current on the other positions where the switch leaves
it in a loop. Its voltage is a span: ``min`` (end of life, the lowest voltage the
meter must still zero at), ``voltage`` (nominal, the voltage the ohms scale is
drawn at) and ``max`` (a fresh cell).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..tools import quantity
from .base import Part

#: Default largest current a battery may carry either way [A]: a small primary cell's
#: continuous drain (common practice for AA/9 V cells in test instruments; from memory,
#: makers' data sheets give 0.1 A to 1 A continuous). Charging a primary cell through
#: the meter (a voltage applied to an ohms range) counts in either direction.
DEFAULT_MAX_CURRENT_A = 0.1

#: The battery voltage levels an analysis may ask for.
LEVELS = ("min", "nominal", "max")


@dataclass(frozen=True)
class Battery(Part):
    """A battery element: EMF ``voltage_v`` between ``a`` (plus) and ``b`` (minus).

    Attributes
    ----------
    voltage_v : float
        Nominal EMF [V]; the ohms scale is drawn at it.
    v_min_v, v_max_v : float
        End-of-life and fresh EMF [V].
    r_int_ohm : float
        Internal resistance [ohm], above zero.
    max_current_a : float
        Largest current it may carry either way [A].
    """

    name: str
    a: str
    b: str
    voltage_v: float
    v_min_v: float
    v_max_v: float
    r_int_ohm: float
    max_current_a: float = DEFAULT_MAX_CURRENT_A
    line: int | None = None

    kind: ClassVar[str] = "battery"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "battery"

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Its internal resistance, held constant [ohm]."""
        return self.r_int_ohm + 0.0 * dt_k

    def emf(self, level: str = "nominal") -> float:
        """The EMF at ``level`` (``min``, ``nominal`` or ``max``) [V]."""
        return {"min": self.v_min_v, "nominal": self.voltage_v, "max": self.v_max_v}[level]

    def part_row(self, spec) -> dict:
        return {"name": self.name, "kind": "battery", "value_ohm": float(self.r_int_ohm),
                "target_ohm": float(self.r_int_ohm), "target_given": False, "voltage_v": float(self.voltage_v),
                "min_voltage_v": float(self.v_min_v), "max_voltage_v": float(self.v_max_v)}

    def yaml(self) -> str:
        extra = "" if self.max_current_a == DEFAULT_MAX_CURRENT_A else f", max_current: {quantity(self.max_current_a, 'A')}"
        return (f"{{name: {self.name}, kind: battery, between: [{self.a}, {self.b}], "
                f"voltage: {quantity(self.voltage_v, 'V')}, min: {quantity(self.v_min_v, 'V')}, "
                f"max: {quantity(self.v_max_v, 'V')}, internal_resistance: {quantity(self.r_int_ohm, 'ohm')}{extra}}}")

    def checks(self, ctx) -> list[dict]:
        """Its current either way against ``max_current_a`` (a primary cell must not be charged hard).

        Notes
        -----
        :math:`I_{rms}` of the branch against the rating; a voltage applied to an
        ohms range drives it backwards (charging), which this bounds as well.

        References
        ----------
        IEC 60086-4 and IEC 60086-5 warn against charging primary cells (from
        memory: no charging current is permitted by the makers); the rating here is
        a drain limit of the cell, common practice for test instruments.
        """
        if ctx.peak_only:
            return [ctx.entry(self.name, self.kind, f"peak current{ctx.phase}", ctx.current["peak"],
                              self.max_current_a, "A", "rating")]
        return [ctx.entry(self.name, self.kind, f"current{ctx.phase}", ctx.current["rms"], self.max_current_a,
                          "A", "rating")]
