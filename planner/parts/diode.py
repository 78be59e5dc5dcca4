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

from ..solve import BOLTZMANN, CHARGE, saturation_current, thermal_voltage
from .base import Parameter, Part
from .resistor import ignition_entries

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

    #: Keys of one model of ``parts.diodes`` (``docs/project-file.md``).
    file_keys: ClassVar[tuple[str, ...]] = (
        "saturation_current", "emission", "series_resistance", "leakage_resistance", "band_gap", "xti",
        "temperature", "breakdown_voltage", "breakdown_current", "max_current", "surge_current", "max_power",
        "saturation_current_spread", "i2t",
    )
    file_example: ClassVar[str] = "{saturation_current: 5 nA, emission: 1.9}"

    @classmethod
    def read(cls, m, name: str) -> "DiodeModel":
        """The model ``name`` from its mapping of ``parts.diodes`` (a
        :class:`planner.project.reader.Section`); implausible emission coefficients,
        band gaps and XTI are refused (a unit mistake, most likely)."""
        d = cls(name=name, i_s_a=1.0)
        i_s = m.qty("saturation_current", "current", check="pos", example="5 nA")
        n = m.qty("emission", "dimensionless", d.n, check="pos")
        if n > 10:
            m.fail(f"{m.at('emission')} is {n:g}; an emission coefficient lies between about 1 and 4: give e.g. 1.9",
                   m.line_of("emission"))
        r_s = m.qty("series_resistance", "resistance", d.r_s_ohm, check="nonneg")
        r_p = m.qty("leakage_resistance", "resistance", d.r_p_ohm, check="pos")
        eg = m.qty("band_gap", "energy_ev", d.eg_ev, check="pos")
        if eg > 10:
            m.fail(f"{m.at('band_gap')} is {eg:g} eV; a band gap is a few eV (silicon 1.11 eV): check the value",
                   m.line_of("band_gap"))
        xti = m.qty("xti", "dimensionless", d.xti)
        if abs(xti) > 50:
            m.fail(f"{m.at('xti')} is {xti:g}; the saturation-current temperature exponent is about 2 to 3",
                   m.line_of("xti"))
        return cls(
            name=name,
            i_s_a=i_s,
            n=n,
            r_s_ohm=r_s,
            r_p_ohm=r_p,
            eg_ev=eg,
            xti=xti,
            t_nom_k=m.qty("temperature", "temperature", d.t_nom_k, check="pos"),
            bv_v=m.qty("breakdown_voltage", "voltage", d.bv_v, check="pos"),
            ibv_a=m.qty("breakdown_current", "current", d.ibv_a, check="pos"),
            max_current_a=m.qty("max_current", "current", d.max_current_a, check="pos"),
            surge_current_a=m.qty("surge_current", "current", d.surge_current_a, check="pos"),
            max_power_w=m.qty("max_power", "power", d.max_power_w, check="pos"),
            i_s_spread=m.qty("saturation_current_spread", "fraction", d.i_s_spread, check="frac"),
            i2t_a2s=m.qty("i2t", "i2t", None, check="pos"),
        )


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
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "anode", "cathode", "model", "role")

    @property
    def clamp(self) -> bool:
        """True for a protection diode, False for a rectifier's."""
        return self.role != "rectifier"

    @classmethod
    def read(cls, e, name: str, parts) -> "Diode":
        """Its anode, cathode (two different nodes), a model of ``parts.diodes`` and its role
        (``clamp``, the default, or ``rectifier``)."""
        an = e.node_name("anode", "m_plus")
        ca = e.node_name("cathode", "com")
        if an == ca:
            e.fail(f"{e.where} has anode and cathode both on node '{an}'; give two different nodes")
        mdl = e.model("model", parts.diodes, "diode", "si_generic")
        role = e.choice("role", ("clamp", "rectifier"), "clamp")
        return cls(name=name, anode=an, cathode=ca, model=mdl, line=e.line, role=role)

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

    def spice(self, deck) -> list[str]:
        """A native SPICE diode for the junction, made the contract's law where SPICE's differs.

        Notes
        -----
        The junction is SPICE's ``D`` with ``RS=0``; R_s is a resistor in series
        and R_p a resistor across the junction alone (less the simulator's gmin,
        which it puts across every junction), so
        :math:`I_j = I_s (e^{V_j/(n V_t)} - 1) + V_j / R_p`. ``N`` and ``XTI`` are
        scaled by ``deck.vt_ratio`` so that ``N`` V_t in the simulator's constants is
        n V_t in the exact SI ones (ngspice uses CODATA 2014 k and q) and XTI/N =
        xti/n: SPICE's saturation-current law is then the contract's,
        :math:`I_s(T) = I_s(T_0) (T/T_0)^{XTI/n} \\exp((T/T_0 - 1) E_g / (n V_t))`,
        with ``TNOM`` at the model's temperature. Two behavioural current sources
        across the junction finish the contract's law:

        * below :math:`-3 n V_t` SPICE replaces the exponential by the SPICE2
          approximation :math:`-I_s (1 + (3 n V_t / (e V))^3)`; the source adds
          :math:`I_s(T) (e^{u/(n V_t)} + (3 n V_t/(e u))^3)` with
          :math:`u = \\min(V, -3 n V_t)`, which is zero above that voltage;
        * reverse breakdown (a model with ``bv_v``):
          :math:`-I_{BV} e^{-(V + BV)/(n V_t)}` (SPICE's own BV model refits BV).

        Both hold :math:`n V_t` and :math:`I_s(T)` at the deck's temperature as
        numbers (a deck for another temperature is written with ``--temperature``;
        the native diode and the resistors follow ``temp`` by themselves).

        References
        ----------
        P. Antognetti and G. Massobrio, *Semiconductor Device Modeling with SPICE*,
        2nd ed., McGraw-Hill, 1993, ch. 1 (diode model, temperature law); the
        ngspice manual (version 39), "Diodes", and its sources ``dioload.c``,
        ``diotemp.c`` (the reverse approximation and the temperature law).
        """
        d = deck.spec.parts.diodes[self.model]
        num = deck.num
        t_nom = d.t_nom_k if d.t_nom_k is not None else deck.t_ref_k
        an, ca = deck.node(self.anode), deck.node(self.cathode)
        words = [f"I_s {num(d.i_s_a)} A at {deck.celsius(t_nom)} degC", f"n {num(d.n)}", f"R_s {num(d.r_s_ohm)} ohm",
                 f"R_p {num(d.r_p_ohm) + ' ohm' if math.isfinite(d.r_p_ohm) else 'none'}", f"E_g {num(d.eg_ev)} eV", f"XTI {num(d.xti)}"]
        if d.bv_v is not None:
            words.append(f"breakdown {num(d.bv_v)} V at {num(d.ibv_a)} A")
        out = [f"* {self.name}: diode, model {self.model} ({', '.join(words)})"]
        j = an
        if d.r_s_ohm > 0.0:
            j = deck.inner(self.name, "j")
            out.append(f"{deck.instance('R', self.name, 's')} {an} {j} {num(d.r_s_ohm)}")
        # the simulator's gmin across the junction stands in for a leakage below it
        if math.isfinite(d.r_p_ohm) and 1.0 / d.r_p_ohm > deck.gmin:
            r_p = d.r_p_ohm if deck.gmin == 0.0 else 1.0 / (1.0 / d.r_p_ohm - deck.gmin)
            out.append(f"{deck.instance('R', self.name, 'p')} {j} {ca} {num(r_p)}")
        breakdown = "" if d.bv_v is None else f" BV={num(d.bv_v)} IBV={num(d.ibv_a)}"
        model = deck.model(f"d_{self.model}", f"D(IS={num(d.i_s_a)} N={num(d.n * deck.vt_ratio)} RS=0 "
                                              f"EG={num(d.eg_ev)} XTI={num(d.xti * deck.vt_ratio)} "
                                              f"TNOM={deck.celsius(t_nom)}{breakdown})")
        out.append(f"{deck.instance('D', self.name)} {j} {ca} {model}")
        # the behavioural sources hold n V_t and I_s(T) at the deck's temperature as numbers
        nvt = d.n * BOLTZMANN / CHARGE * deck.temperature_k
        isat = float(saturation_current(d.i_s_a, d.n, d.eg_ev, d.xti, deck.temperature_k, t_nom))
        v = f"v({j},{ca})"
        u = f"min({v},{num(-3.0 * nvt)})"
        w = f"({num(3.0 * nvt / math.e)}/{u})"  # negative: cubed as a product
        out.append(f"{deck.instance('B', self.name, 'rev')} {j} {ca} I={num(isat)}*(exp({u}*{num(1.0 / nvt)})"
                   f"+{w}*{w}*{w})")
        return out

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
                i2t = ctx.pulse["i2t_a2s"] if ctx.pulse else i_st["rms"] ** 2 * t_ev
                out.append(ctx.entry(self.name, self.kind, f"I2t {ev.words}{ph}", i2t, allowed,
                                     "A^2 s", "rating", limit_name="diode I2t", duration_s=t_ev))
            return out
        if not ctx.peak_only and math.isfinite(d.max_current_a):
            out.append(ctx.entry(self.name, self.kind, f"average current{ph}", i_st["mean_abs"], d.max_current_a,
                                 "A", "rating", limit_name="diode average current"))
        if math.isfinite(d.surge_current_a):
            out.append(ctx.entry(self.name, self.kind, f"peak current{ph}", i_st["peak"], d.surge_current_a,
                                 "A", "rating", limit_name="diode surge current"))
        if not ctx.peak_only and math.isfinite(d.max_power_w):
            out.append(ctx.entry(self.name, self.kind, f"power{ph}", abs(ctx.power_w), d.max_power_w, "W", "rating",
                                 limit_name="diode power"))
            out += ignition_entries(ctx, self.name, self.kind, abs(ctx.power_w), d.max_power_w)
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
