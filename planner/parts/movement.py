"""The meter movement as a network element: its coil, and what its pointer reads.

The coil obeys Ohm's law at temperature with the movement's own tempco (copper by
default); the reading of a position is :math:`I_m / I_{fs}` times its full scale,
positive for current from the element's first node to its second (design
contract). The movement's data (full-scale current, coil resistance, class,
overload limits) are :class:`planner.model.Movement`; :meth:`MovementElement.checks`
judges its current against those limits for :mod:`planner.stress`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import Parameter, Part

#: Relative size [of the peak multiple] below which a cycle mean is solver round-off
#: around zero (a pointer at rest under a symmetric wave), not a reading.
ROUND_OFF = 1e-9


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
        """The movement's damage limits (short-time peak, thermal, mechanical) and its end stops.

        Notes
        -----
        Each entry names its limit (``limit_name``):

        ``movement short-time peak``
            the peak multiple against ``overload.short_time``, always;
        ``movement thermal``
            the rms multiple (heating follows the rms) against
            :meth:`planner.model.Overload.thermal_limit` over the exposure: over
            the pulse's window while a fuse opens fast (``ctx.short_exposure``,
            the rms of ``ctx.pulse``; an unknown time counts as the short-time
            limit), else the cycle's rms indefinitely (``continuous``);
        ``movement mechanical``
            the mean multiple (what drives the pointer against its stop) against
            ``overload.mechanical``, for a lasting exposure (during a short event
            the pointer barely moves; the peak limit covers the kick);
        ``movement end stop``
            the mean multiple against ``peg`` (or, for a reverse mean, against the
            zero-end stop, as far below zero as the forward stop is beyond full
            scale; common practice: a few percent): the verdict ``pegs``, not damage.

        A mean within round-off of zero (a pointer at rest under a symmetric
        wave) is zero: no stress below zero is listed for it.
        """
        ov = ctx.spec.movement.overload
        ms, ph = ctx.movement_multiple, ctx.phase
        out = [ctx.entry(self.name, self.kind, f"peak multiple{ph}", ms["peak"], ov.short_time, "x I_fs", "rating",
                         limit_name="movement short-time peak")]
        if ctx.peak_only:
            return out
        ev = ctx.event
        if ctx.short_exposure:
            duration = ev.event_time_s if ev is not None else 0.0
            words = " until the fuse opens"
        else:
            duration, words = math.inf, ""
        q = "rms multiple" if ctx.stimulus.waveform.cyclic else "multiple"
        extra = {"duration_s": duration} if math.isfinite(duration) else {}
        rms = ms["rms"]
        if ctx.short_exposure and ctx.pulse is not None:  # the rms over the pulse's own window
            rms = ctx.pulse["rms_a"] / ctx.spec.movement.i_fs_a
        out.append(ctx.entry(self.name, self.kind, f"{q}{words}{ph}", rms, ov.thermal_limit(duration), "x I_fs",
                             "rating", limit_name="movement thermal", **extra))
        mean = ms["mean"]
        if abs(mean) <= ROUND_OFF * max(ms["peak"], 1.0):
            mean = 0.0
        if not ctx.short_exposure:
            out.append(ctx.entry(self.name, self.kind, f"pointer drive (|mean multiple|){ph}", abs(mean),
                                 ov.mechanical, "x I_fs", "rating", limit_name="movement mechanical"))
        if mean >= 0.0:
            out.append(ctx.entry(self.name, self.kind, f"pointer (mean multiple){ph}", mean, ov.peg, "x I_fs",
                                 "end stop", limit_name="movement end stop"))
        else:
            back = max(ov.peg - 1.0, 1e-3)
            out.append(ctx.entry(self.name, self.kind, f"pointer below zero (mean multiple){ph}", mean, -back,
                                 "x I_fs", "end stop", limit_name="movement zero-end stop"))
        return out
