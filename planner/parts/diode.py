"""Diodes: the Shockley junction model with series and leakage resistance, and the element.

Element equations (design contract): the junction current
:math:`I_j = I_s (e^{V_j / (n V_t)} - 1) + V_j / R_p` with :math:`R_s` in series,
optional reverse breakdown (zener, TVS clamps), and the SPICE temperature law of
:math:`I_s` (:func:`planner.solve.saturation_current`). The solver treats each
diode as a junction port (:mod:`planner.solve`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..solve import saturation_current, thermal_voltage
from .base import Parameter, Part


@dataclass(frozen=True)
class DiodeModel:
    """Shockley junction with series and leakage resistance.

    Attributes
    ----------
    name : str
        Model name used by diode elements.
    i_s_a : float
        Saturation current at ``t_nom_k`` [A].
    n : float
        Emission coefficient.
    r_s_ohm : float
        Series resistance [ohm] (0 for none).
    r_p_ohm : float
        Leakage resistance across the junction [ohm] (``inf`` for none).
    eg_ev : float
        Band gap for the temperature law [eV].
    xti : float
        Saturation-current temperature exponent.
    t_nom_k : float or None
        Temperature at which the parameters hold [K]; None means the project's
        reference temperature.
    bv_v : float or None
        Reverse breakdown voltage [V] (zener, TVS); None for none.
    ibv_a : float
        Current at the breakdown voltage [A].
    max_current_a : float
        Maximum average forward current [A].
    surge_current_a : float
        Non-repetitive surge current [A].
    max_power_w : float
        Maximum dissipation [W].
    i_s_spread : float
        Relative spread of ``i_s_a`` between parts (fraction; 0.5 is +-50 %).
    i2t_a2s : float or None
        Non-repetitive I^2 t for pulses shorter than one half-cycle of the surge
        test [A^2 s] ("I^2 t for fusing"); None to derive it from
        ``surge_current_a`` (see :func:`planner.stress.diode_i2t_a2s`).
    """

    name: str
    i_s_a: float
    n: float = 1.0
    r_s_ohm: float = 0.0
    r_p_ohm: float = math.inf
    eg_ev: float = 1.11
    xti: float = 3.0
    t_nom_k: float | None = None
    bv_v: float | None = None
    ibv_a: float = 1e-3
    max_current_a: float = math.inf
    surge_current_a: float = math.inf
    max_power_w: float = math.inf
    i_s_spread: float = 0.0
    i2t_a2s: float | None = None


@dataclass(frozen=True)
class Diode(Part):
    """A diode element; ``model`` names a :class:`DiodeModel` in ``parts.diodes``."""

    name: str
    anode: str
    cathode: str
    model: str
    line: int | None = None

    kind: ClassVar[str] = "diode"
    stamp: ClassVar[str] = "junction"
    symbol: ClassVar[str] = "diode"
    clamp: ClassVar[bool] = True

    @property
    def nodes(self) -> tuple[str, str]:
        return (self.anode, self.cathode)

    def junction(self, spec, t_k) -> tuple[np.ndarray, ...]:
        """Junction parameters at the temperatures ``t_k`` (shape (P, 1)).

        Returns
        -------
        tuple of ndarray
            Saturation current [A], :math:`n V_t` [V], breakdown voltage [V]
            (``inf`` for none), current at breakdown [A], series resistance [ohm],
            leakage conductance [S]; each of shape (P, 1).
        """
        d = spec.parts.diodes[self.model]
        t_nom = d.t_nom_k if d.t_nom_k is not None else spec.ambient.t_ref_k
        isat = saturation_current(d.i_s_a, d.n, d.eg_ev, d.xti, t_k, t_nom)
        return (isat, d.n * thermal_voltage(t_k), np.full_like(t_k, np.inf if d.bv_v is None else d.bv_v),
                np.full_like(t_k, d.ibv_a), np.full_like(t_k, d.r_s_ohm), np.full_like(t_k, 1.0 / d.r_p_ohm))

    def parameters(self, spec) -> list[Parameter]:
        """The saturation current's spread between parts (none when the model gives none)."""
        spread = spec.parts.diodes[self.model].i_s_spread
        return [Parameter(self.name, f"{self.name} I_s", "diode", self.name, float(spread))] if spread > 0 else []

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: diode, anode: {self.anode}, cathode: {self.cathode}, model: {self.model}}}"
