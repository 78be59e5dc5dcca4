"""Fuses: the catalogue model (cold resistance, ratings, time-current behaviour) and the element.

In the solver a fuse is its cold resistance (design contract); how it opens,
what it lets through and whether it can break the prospective current are
judged in :mod:`planner.stress` (IEC 60127-1, IEC 60269-1 definitions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import Part


@dataclass(frozen=True)
class FuseModel:
    """A fuse: cold resistance, ratings and its time-current behaviour.

    Attributes
    ----------
    name : str
    r_cold_ohm : float
        Cold resistance [ohm].
    rated_current_a : float
        Rated current [A].
    breaking_capacity_a : float
        Largest prospective current it can interrupt safely [A].
    i2t_a2s : float or None
        Pre-arcing (melting) I^2 t [A^2 s].
    curve : tuple of (current [A], time [s])
        Time-current points, ascending current.
    max_voltage_v : float
        Rated voltage [V].
    clearing_i2t_a2s : float or None
        Total operating (clearing, let-through) I^2 t at high fault current:
        pre-arcing plus arcing [A^2 s]; None when unknown (the pulse is then
        counted over the pre-arcing time only).
    """

    name: str
    r_cold_ohm: float
    rated_current_a: float
    breaking_capacity_a: float
    i2t_a2s: float | None = None
    curve: tuple[tuple[float, float], ...] = ()
    max_voltage_v: float = math.inf
    clearing_i2t_a2s: float | None = None


@dataclass(frozen=True)
class Fuse(Part):
    """A fuse element; ``model`` names a :class:`FuseModel` in ``parts.fuses``."""

    name: str
    a: str
    b: str
    model: str
    line: int | None = None

    kind: ClassVar[str] = "fuse"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "fuse"

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Its cold resistance, held constant [ohm]."""
        return spec.parts.fuses[self.model].r_cold_ohm + 0.0 * dt_k

    def part_row(self, spec) -> dict:
        r = float(spec.parts.fuses[self.model].r_cold_ohm)
        return {"name": self.name, "kind": "fuse", "value_ohm": r, "target_ohm": r, "target_given": False,
                "tolerance_pct": 0.0, "tempco_ppm_per_k": 0.0}

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: fuse, between: [{self.a}, {self.b}], model: {self.model}}}"
