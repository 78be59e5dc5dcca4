"""The meter movement as a network element: its coil, and what its pointer reads.

The coil obeys Ohm's law at temperature with the movement's own tempco (copper by
default); the reading of a position is :math:`I_m / I_{fs}` times its full scale,
positive for current from the element's first node to its second (design
contract). The movement's data (full-scale current, coil resistance, class,
overload limits) are :class:`planner.model.Movement`.
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

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: movement, between: [{self.a}, {self.b}]}}"
