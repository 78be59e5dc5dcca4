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
from ..units import format_si
from .base import Part
from .resistor import SHORT_OVERLOAD_S

#: Default largest current a battery may carry either way [A]: a small primary cell's
#: continuous drain (common practice for AA/9 V cells in test instruments; from memory,
#: makers' data sheets give 0.1 A to 1 A continuous). Charging a primary cell through
#: the meter (a voltage applied to an ohms range) counts in either direction.
DEFAULT_MAX_CURRENT_A = 0.1

#: The battery voltage levels an analysis may ask for.
LEVELS = ("min", "nominal", "max")


def battery_values(m, where: str) -> tuple[float, float, float, float]:
    """Nominal, min and max EMF [V] and internal resistance [ohm] of a battery entry, min <= nominal <= max.

    ``m`` is a section of the project file (:class:`planner.project.reader.Section`).
    """
    v = m.qty("voltage", "voltage", check="pos", example="1.5 V")
    lo = m.qty("min", "voltage", v, check="pos")
    hi = m.qty("max", "voltage", v, check="pos")
    r = m.qty("internal_resistance", "resistance", check="pos", example="0.5 ohm")
    if not lo <= v <= hi:
        m.fail(f"{where}: min {format_si(lo, 'V')}, voltage {format_si(v, 'V')} and max {format_si(hi, 'V')} must "
               "satisfy min <= voltage <= max; give the end-of-life, nominal and fresh voltage", m.line)
    return v, lo, hi, r


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
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between", "voltage", "min", "max",
                                            "internal_resistance", "max_current")

    @classmethod
    def read(cls, e, name: str, parts) -> "Battery":
        """Its nodes (plus first), voltages, internal resistance and current rating."""
        a, b = e.pair("between", "[b_plus, b_minus]")
        v, lo, hi, r = battery_values(e, e.where)
        return cls(name=name, a=a, b=b, voltage_v=v, v_min_v=lo, v_max_v=hi, r_int_ohm=r,
                   max_current_a=e.qty("max_current", "current", DEFAULT_MAX_CURRENT_A, check="pos"), line=e.line)

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Its internal resistance, held constant [ohm]."""
        return self.r_int_ohm + 0.0 * dt_k

    def emf(self, level: str = "nominal") -> float:
        """The EMF at ``level`` (``min``, ``nominal`` or ``max``) [V]."""
        return {"min": self.v_min_v, "nominal": self.voltage_v, "max": self.v_max_v}[level]

    def spice(self, deck) -> list[str]:
        """An ideal source of its nominal EMF (plus on ``a``) in series with its internal resistance.

        Notes
        -----
        :math:`v_a - v_m = E` and :math:`v_m - v_b = r i`, so :math:`i = (v_a - v_b - E) / r`
        (the solver's branch EMF, :func:`planner.solve.solve`).
        """
        mid = deck.inner(self.name, "e")
        return [f"{deck.instance('V', self.name)} {deck.node(self.a)} {mid} DC {deck.num(self.voltage_v)}",
                f"{deck.instance('R', self.name, 'int')} {mid} {deck.node(self.b)} {deck.num(self.r_int_ohm)}"]

    def part_row(self, spec) -> dict:
        return {"name": self.name, "kind": "battery", "value_ohm": float(self.r_int_ohm),
                "target_ohm": float(self.r_int_ohm), "target_given": False, "voltage_v": float(self.voltage_v),
                "min_voltage_v": float(self.v_min_v), "max_voltage_v": float(self.v_max_v)}

    def yaml(self) -> str:
        extra = "" if self.max_current_a == DEFAULT_MAX_CURRENT_A else f", max_current: {quantity(self.max_current_a, 'A')}"
        return (f"{{name: {self.name}, kind: battery, between: [{self.a}, {self.b}], "
                f"voltage: {quantity(self.voltage_v, 'V')}, min: {quantity(self.v_min_v, 'V')}, "
                f"max: {quantity(self.v_max_v, 'V')}, internal_resistance: {quantity(self.r_int_ohm, 'ohm')}{extra}}}")

    def short_time_current_a(self) -> float:
        r"""The largest current it may carry for a pulse of up to 5 s [A]: its own short-circuit current.

        Notes
        -----
        :math:`I_{st} = \max(I_{max}, E_{nom} / r)`: a cell delivers its short-circuit
        current :math:`E / r` when its terminals touch, and a pulse of that size either
        way, ended within the short-time window by a fuse, moves a charge
        :math:`I t` far below what harms it (from memory: makers rate small primary
        cells for short-circuit pulses, not for sustained charging).
        """
        return max(self.max_current_a, self.voltage_v / self.r_int_ohm)

    def checks(self, ctx) -> list[dict]:
        """Its current either way against ``max_current_a`` (a primary cell must not be charged hard).

        Notes
        -----
        :math:`I_{rms}` of the branch against the rating; a voltage applied to an
        ohms range drives it backwards (charging), which this bounds as well.
        While fuses open within the 5 s short-time window (``ctx.event``) the
        current lasts only the event and is judged against
        :meth:`short_time_current_a`.

        References
        ----------
        IEC 60086-4 and IEC 60086-5 warn against charging primary cells (from
        memory: no charging current is permitted by the makers); the rating here is
        a drain limit of the cell, common practice for test instruments.
        """
        if ctx.peak_only:
            return [ctx.entry(self.name, self.kind, f"peak current{ctx.phase}", ctx.current["peak"],
                              self.max_current_a, "A", "rating")]
        ev = ctx.event
        if ev is not None and ev.event_time_s <= SHORT_OVERLOAD_S:
            return [ctx.entry(self.name, self.kind, f"current {ev.words}{ctx.phase}", ctx.current["rms"],
                              self.short_time_current_a(), "A", "rating", limit_name="battery short-time current",
                              duration_s=ev.event_time_s)]
        return [ctx.entry(self.name, self.kind, f"current{ctx.phase}", ctx.current["rms"], self.max_current_a,
                          "A", "rating")]
