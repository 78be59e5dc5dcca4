"""The meter movement as a network element: its coil, and what its pointer reads.

The coil obeys Ohm's law at temperature with the movement's own tempco (copper by
default); the reading of a position is :math:`I_m / I_{fs}` times its full scale,
positive for current from the element's first node to its second (design
contract). The movement's data (full-scale current, coil resistance, class,
overload limits) are :class:`planner.model.Movement`; :meth:`MovementElement.checks`
judges its current against those limits for :mod:`planner.stress`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import Parameter, Part


@dataclass(frozen=True)
class MovementElement(Part):
    """The meter movement as a network element (current from ``a`` to ``b`` reads up)."""

    name: str
    a: str
    b: str
    line: int | None = None

    kind: ClassVar[str] = "movement"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "movement"
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between")

    @classmethod
    def read(cls, e, name: str, parts) -> "MovementElement":
        """Its two nodes: current from the first to the second reads up the scale."""
        a, b = e.pair("between", "[m_plus, com]")
        return cls(name=name, a=a, b=b, line=e.line)

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Coil resistance :math:`R_m (1 + \\alpha_{coil} \\Delta T)` [ohm]."""
        m = spec.movement
        return m.r_coil_ohm * (1.0 + m.tempco_per_k * dt_k)

    def parameters(self, spec) -> list[Parameter]:
        """The coil resistance's tolerance (none when it is measured)."""
        m = spec.movement
        return [Parameter(self.name, f"{self.name} coil", "coil", self.name, float(m.tolerance))] if m.tolerance > 0 else []

    def part_row(self, spec) -> dict:
        m = spec.movement
        return {"name": self.name, "kind": "movement", "value_ohm": float(m.r_coil_ohm),
                "target_ohm": float(m.r_coil_ohm), "target_given": False,
                "tolerance_pct": float(m.tolerance * 100.0), "tempco_ppm_per_k": float(m.tempco_per_k * 1e6),
                "full_scale_current_a": float(m.i_fs_a), "i_fs_tolerance_pct": float(m.i_fs_tolerance * 100.0)}

    def spice(self, deck) -> list[str]:
        """``VMOVE`` (0 V) from the first node to the coil, then the coil's resistance.

        Notes
        -----
        A SPICE voltage source's current flows from its plus node through the
        source to its minus node, so ``i(vmove)`` is the movement current from the
        element's first node to its second, the sign of its reading (design
        contract). The coil is :math:`R_m (1 + \alpha_{coil} (T - T_{ref}))` as
        ``tc1`` against the deck's ``tnom``.
        """
        m = deck.spec.movement
        coil = deck.inner(self.name, "coil")
        tc = f" tc1={deck.num(m.tempco_per_k)}" if m.tempco_per_k else ""
        return [f"VMOVE {deck.node(self.a)} {coil} DC 0",
                f"{deck.instance('R', self.name)} {coil} {deck.node(self.b)} {deck.num(m.r_coil_ohm)}{tc}"]

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: movement, between: [{self.a}, {self.b}]}}"

    def checks(self, ctx) -> list[dict]:
        """Peak and rms multiples of I_fs against its overload limits; the pointer against its stops.

        Notes
        -----
        The peak multiple against ``overload.short_time`` always; for a DC or
        periodic stimulus also the rms multiple (heating follows the rms, and
        :math:`|\\bar I| \\le I_{rms}`, so it covers the mean too) against
        ``short_time`` while a fuse opens fast (``ctx.short_exposure``) or
        ``continuous`` otherwise, and the mean multiple (what the pointer follows)
        against the end stop ``peg``; a negative mean against the zero-end stop,
        assumed as far below zero as the forward stop is beyond full scale
        (common practice: a few percent).
        """
        ov = ctx.spec.movement.overload
        ms, ph = ctx.movement_multiple, ctx.phase
        out = [ctx.entry(self.name, self.kind, f"peak multiple{ph}", ms["peak"], ov.short_time, "x I_fs", "rating")]
        if ctx.peak_only:
            return out
        if ctx.short_exposure:
            rating, words = ov.short_time, " until the fuse opens"
        else:
            rating, words = ov.continuous, ""
        q = "rms multiple" if ctx.stimulus.waveform.cyclic else "multiple"
        out.append(ctx.entry(self.name, self.kind, f"{q}{words}{ph}", ms["rms"], rating, "x I_fs", "rating"))
        if ms["mean"] >= 0.0:
            out.append(ctx.entry(self.name, self.kind, f"pointer (mean multiple){ph}", ms["mean"], ov.peg,
                                 "x I_fs", "end stop"))
        else:
            back = max(ov.peg - 1.0, 1e-3)
            out.append(ctx.entry(self.name, self.kind, f"pointer below zero (mean multiple){ph}", -ms["mean"], back,
                                 "x I_fs", "end stop"))
        return out
