"""Diodes: the Shockley junction model with series and leakage resistance, and the element.

Element equations (design contract): the junction current
:math:`I_j = I_s (e^{V_j / (n V_t)} - 1) + V_j / R_p` with :math:`R_s` in series,
optional reverse breakdown (zener, TVS clamps), and the SPICE temperature law of
:math:`I_s` (:func:`planner.solve.saturation_current`). The solver treats each
diode as a junction port (:mod:`planner.solve`). Its ratings (average, surge and
power; the I^2 t for fusing while a fuse opens) are judged by :meth:`Diode.checks`
for :mod:`planner.stress`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..solve import saturation_current, thermal_voltage
from .base import Parameter, Part

#: Duration of a diode's non-repetitive surge-current rating: one half-cycle of
#: 60 Hz (JEDEC 8.3 ms half-sine; common practice in diode data sheets) [s].
SURGE_HALF_CYCLE_S = 1.0 / 120.0
#: Shortest pulse for which a diode's I^2 t (for fusing) holds constant [s]; below
#: it the current is held to the level that reaches that I^2 t in this time
#: (from memory: data sheets quote I^2 t for 1 ms to 8.3 ms).
DIODE_I2T_MIN_S = 1e-3


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
        ``surge_current_a`` (see :func:`diode_i2t_a2s`).
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
    #: ``clamp`` (protection: taken out to see what it protects) or ``rectifier`` (in the signal
    #: path of an AC range: part of the measurement).
    role: str = "clamp"

    kind: ClassVar[str] = "diode"
    stamp: ClassVar[str] = "junction"
    symbol: ClassVar[str] = "diode"

    @property
    def clamp(self) -> bool:
        """True for a protection diode, False for a rectifier's."""
        return self.role != "rectifier"

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
        role = ", role: rectifier" if self.role == "rectifier" else ""
        return (f"{{name: {self.name}, kind: diode, anode: {self.anode}, cathode: {self.cathode}, "
                f"model: {self.model}{role}}}")

    def checks(self, ctx) -> list[dict]:
        """Average, peak (surge) current and power against its model's ratings; I^2 t while a fuse opens.

        Notes
        -----
        Continuous: the mean of |i| against ``max_current_a`` and the mean power
        against ``max_power_w`` (neither for an impulse), the peak current against
        ``surge_current_a``. While fuses open in a known time :math:`t_{ev}` of at
        most one surge half-cycle, :math:`I_{rms}^2 t_{ev}` against
        :func:`diode_i2t_allowed_a2s` instead.
        """
        d = ctx.spec.parts.diodes[self.model]
        ev, ph, i_st = ctx.event, ctx.phase, ctx.current
        out = []
        if ev is not None and ev.event_time_s <= SURGE_HALF_CYCLE_S:
            t_ev = ev.event_time_s
            allowed = diode_i2t_allowed_a2s(d, t_ev)
            if math.isfinite(allowed):
                out.append(ctx.entry(self.name, self.kind, f"I2t {ev.words}{ph}", i_st["rms"] ** 2 * t_ev, allowed,
                                     "A^2 s", "rating", duration_s=t_ev))
            return out
        if not ctx.peak_only and math.isfinite(d.max_current_a):
            out.append(ctx.entry(self.name, self.kind, f"average current{ph}", i_st["mean_abs"], d.max_current_a,
                                 "A", "rating"))
        if math.isfinite(d.surge_current_a):
            out.append(ctx.entry(self.name, self.kind, f"peak current{ph}", i_st["peak"], d.surge_current_a,
                                 "A", "rating"))
        if not ctx.peak_only and math.isfinite(d.max_power_w):
            out.append(ctx.entry(self.name, self.kind, f"power{ph}", abs(ctx.power_w), d.max_power_w, "W", "rating"))
        return out


# --- pulse ratings ---------------------------------------------------------------------------


def diode_i2t_a2s(d: DiodeModel) -> float:
    """Non-repetitive I^2 t of a diode for pulses shorter than the surge half-cycle [A^2 s].

    Parameters
    ----------
    d : DiodeModel

    Returns
    -------
    float
        ``d.i2t_a2s`` when given, else :math:`I_{FSM}^2 \\, t_{hs} / 2` with
        :math:`t_{hs}` = 8.3 ms (``inf`` when the diode has no surge rating).

    Notes
    -----
    The surge rating :math:`I_{FSM}` is the peak of one half-sine of 60 Hz;
    its Joule integral is :math:`\\int_0^{t_{hs}} I_{FSM}^2 \\sin^2(\\pi t / t_{hs})
    \\, dt = I_{FSM}^2 t_{hs} / 2`.

    References
    ----------
    JEDEC 8.3 ms half-sine surge rating and the "I^2 t for fusing" figure of
    rectifier data sheets (common practice: e.g. 30 A surge and about 3.7 A^2 s
    for a 1 A rectifier, from memory).
    """
    if d.i2t_a2s is not None:
        return float(d.i2t_a2s)
    if not math.isfinite(d.surge_current_a):
        return math.inf
    return float(d.surge_current_a ** 2 * SURGE_HALF_CYCLE_S / 2.0)


def diode_i2t_allowed_a2s(d: DiodeModel, duration_s: float) -> float:
    """I^2 t a diode survives in one pulse of a given duration (up to the surge half-cycle) [A^2 s].

    Notes
    -----
    :math:`I^2t_{allowed} = I^2t_d \\min(1, t / 1\\,ms)`: the data-sheet figure
    (:func:`diode_i2t_a2s`) from 1 ms to 8.3 ms; below 1 ms the current is held
    to the level that reaches it in 1 ms, which is conservative (a junction
    stands more current in a shorter pulse).

    References
    ----------
    Rectifier data sheets, "I^2 t for fusing, 1 ms < t < 8.3 ms" (from memory).
    """
    return float(diode_i2t_a2s(d) * min(1.0, max(float(duration_s), 0.0) / DIODE_I2T_MIN_S))
