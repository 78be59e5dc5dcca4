"""Metal-oxide varistors: the catalogue model (``parts.varistors``), the element and its misrange rules.

In the solver a varistor is the symmetric power law
:math:`I = I_1 \\,\\mathrm{sgn}(V) (|V| / V_1)^{\\alpha}` with :math:`I_1` = 1 mA
(:mod:`planner.solve.varistor`), on a port of its own or shared with diodes on the
same pair of nodes. Under a misrange it is judged on its single-pulse energy (an
impulse, or the pulse while a fuse opens), its peak current and its largest
continuous voltage.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

from ..tools import quantity
from .base import Part

#: Keys of a ``parts.varistors`` model.
VARISTOR_KEYS = ("voltage", "alpha", "energy", "max_continuous_voltage", "peak_current")

#: Current at which the varistor voltage is stated [A] (design contract: 1 mA).
VARISTOR_I1_A = 1e-3

#: Equivalent duration of the standard 1.2/50 us impulse voltage [s]:
#: :math:`\\int_0^\\infty f(t)\\,dt` of the normalised double exponential
#: :math:`f(t) = A (e^{-t/\\tau_1} - e^{-t/\\tau_2})`, :math:`\\tau_1` = 68.2 us,
#: :math:`\\tau_2` = 0.405 us, A = 1.037, i.e. :math:`A (\\tau_1 - \\tau_2)`.
#: Waveform: IEC 60060-1 (1.2/50 us lightning impulse, front and time to half
#: value); the double-exponential constants are those commonly quoted for it
#: (secondary source: surge-protection application notes; verify).
IMPULSE_EQUIVALENT_S = 1.037 * (68.2e-6 - 0.405e-6)


@dataclass(frozen=True)
class VaristorModel:
    """A metal-oxide varistor.

    Attributes
    ----------
    name : str
    v1_v : float
        Varistor voltage at 1 mA [V].
    alpha : float
        Nonlinearity exponent [1].
    energy_j : float
        Single-pulse energy rating [J] (the maker's figure, usually for a
        10/1000 us or 2 ms pulse).
    max_continuous_v : float
        Largest continuous voltage (DC, or rms of a periodic wave) [V].
    peak_current_a : float
        Largest single-pulse peak current [A] (``inf`` when not given).
    """

    name: str
    v1_v: float
    alpha: float
    energy_j: float
    max_continuous_v: float
    peak_current_a: float = math.inf

    #: Keys of one model of ``parts.varistors`` (``docs/project-file.md``).
    file_keys: ClassVar[tuple[str, ...]] = VARISTOR_KEYS
    file_example: ClassVar[str] = "{voltage: 1.2 kV, alpha: 30, energy: 20 J, max_continuous_voltage: 1 kV}"

    @classmethod
    def read(cls, m, name: str) -> "VaristorModel":
        """The model ``name`` from its mapping of ``parts.varistors`` (a :class:`planner.project.reader.Section`)."""
        v1 = m.qty("voltage", "voltage", check="pos", example="470 V")
        alpha = m.qty("alpha", "dimensionless", check="pos", example="30")
        if not 1.0 <= alpha <= 60.0:
            m.fail(f"{m.at('alpha')} is {alpha:g}; the exponent of a varistor lies between 1 and 60 (metal oxide: "
                   "about 20 to 50)", m.line_of("alpha"))
        energy = m.qty("energy", "energy", check="pos", example="10 J")
        vc = m.qty("max_continuous_voltage", "voltage", check="pos", example="300 V")
        if vc > v1:
            m.fail(f"{m.at('max_continuous_voltage')} is above the varistor voltage; a varistor's continuous rating "
                   "lies below its 1 mA voltage: check the values", m.line_of("max_continuous_voltage"))
        ipk = m.qty("peak_current", "current", math.inf, check="pos")
        return cls(name, v1, alpha, energy, vc, ipk)


def impulse_energy_j(peak_power_w: float) -> float:
    """Energy a part takes from one standard impulse whose peak power is ``peak_power_w`` [J].

    Notes
    -----
    The part's power follows the impulse no faster than linearly:
    :math:`P(t) \\le P_{pk} f(t)` for a resistor (:math:`P \\propto f^2 \\le f`) and for
    a clamp that holds its voltage :math:`V_c` while the source's excess drives
    the current (:math:`V_c (V_s f - V_c) \\le V_c (V_s - V_c) f`), so
    :math:`E \\le P_{pk} \\int f\\,dt = P_{pk} \\cdot` :data:`IMPULSE_EQUIVALENT_S`,
    an upper bound.

    References
    ----------
    IEC 60060-1, *High-voltage test techniques*, standard lightning impulse
    1.2/50 us (see :data:`IMPULSE_EQUIVALENT_S`).
    """
    return float(abs(peak_power_w) * IMPULSE_EQUIVALENT_S)


@dataclass(frozen=True)
class Varistor(Part):
    """A varistor element; ``model`` names a :class:`VaristorModel` in ``parts.varistors``."""

    name: str
    a: str
    b: str
    model: str
    line: int | None = None

    kind: ClassVar[str] = "varistor"
    stamp: ClassVar[str] = "varistor"
    symbol: ClassVar[str] = "varistor"
    clamp: ClassVar[bool] = True
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between", "model")

    @classmethod
    def read(cls, e, name: str, parts) -> "Varistor":
        """Its two nodes and a model of ``parts.varistors``."""
        a, b = e.pair("between", "[p1, com]")
        return cls(name=name, a=a, b=b, model=e.model("model", parts.varistors, "varistor", "mov_1k2"), line=e.line)

    def law(self, spec) -> tuple[float, float, float]:
        """Varistor voltage [V], exponent and the current at that voltage [A]."""
        m = spec.parts.varistors[self.model]
        return float(m.v1_v), float(m.alpha), VARISTOR_I1_A

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: varistor, between: [{self.a}, {self.b}], model: {self.model}}}"

    def spice(self, deck) -> list[str]:
        """The power law as a behavioural current source, :math:`I = I_1 \\mathrm{sgn}(V) (|V| / V_1)^\\alpha`."""
        v1, alpha, i1 = self.law(deck.spec)
        a, b = deck.node(self.a), deck.node(self.b)
        v = f"v({a},{b})"
        return [f"{deck.instance('B', self.name)} {a} {b} I={deck.num(i1)}*sgn({v})"
                f"*pow(abs({v})*{deck.num(1.0 / v1)},{deck.num(alpha)})"]

    def checks(self, ctx) -> list[dict]:
        """Pulse energy, peak current and continuous voltage against the model's ratings.

        Notes
        -----
        An impulse: :func:`impulse_energy_j` of the peak power against ``energy``,
        the peak current against ``peak_current``. While fuses open in a known
        time :math:`t_{ev}`: :math:`E = \\bar P t_{ev}` against ``energy``.
        Otherwise (continuous): the voltage (rms of a periodic wave, |DC|)
        against ``max_continuous_voltage``; a varistor is no continuous absorber.

        References
        ----------
        Metal-oxide varistor data sheets: maximum continuous voltage, single-pulse
        energy and peak current ratings (common practice); T. K. Gupta,
        "Application of zinc oxide varistors", J. Am. Ceram. Soc. 73(7),
        1817-1840, 1990.
        """
        m = ctx.spec.parts.varistors[self.model]
        ph, ev = ctx.phase, ctx.event
        # an absorber beyond its energy at a hazardous voltage can fail short, rupture or burn: a hazard rule
        energy = ({"limit": "safety", "rule": "energy absorber"} if ctx.stimulus.hazardous() else {"limit": "rating"})
        out = []
        if math.isfinite(m.peak_current_a):
            out.append(ctx.entry(self.name, self.kind, f"peak current{ph}", ctx.current["peak"], m.peak_current_a, "A",
                                 "rating"))
        if ctx.peak_only:
            p_pk = ctx.current["peak"] * ctx.voltage["peak"]
            out.append(ctx.entry(self.name, self.kind, f"impulse energy{ph}", impulse_energy_j(p_pk), m.energy_j, "J",
                                 duration_s=IMPULSE_EQUIVALENT_S, limit_name="varistor energy", **energy))
            return out
        if ev is not None:
            out.append(ctx.entry(self.name, self.kind, f"pulse energy {ev.words}{ph}", abs(ctx.power_w) * ev.event_time_s,
                                 m.energy_j, "J", duration_s=ev.event_time_s, limit_name="varistor energy", **energy))
            return out
        v = ctx.voltage["rms"] if ctx.stimulus.waveform.cyclic else ctx.voltage["peak"]
        out.append(ctx.entry(self.name, self.kind, f"continuous voltage{ph}", v, m.max_continuous_v, "V", "rating"))
        return out


def model_yaml(m: VaristorModel) -> str:
    """The model as a ``parts.varistors`` flow mapping."""
    items = [f"voltage: {quantity(m.v1_v, 'V')}", f"alpha: {m.alpha:g}", f"energy: {quantity(m.energy_j, 'J')}",
             f"max_continuous_voltage: {quantity(m.max_continuous_v, 'V')}"]
    if math.isfinite(m.peak_current_a):
        items.append(f"peak_current: {quantity(m.peak_current_a, 'A')}")
    return "{" + ", ".join(items) + "}"

