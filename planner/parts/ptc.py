"""Resettable PTC thermistors: the catalogue model (``parts.ptcs``), the element and its misrange rules.

In normal use a PTC is its cold resistance (a linear branch, with its own
tolerance and tempco). Under a fault its current rises above the trip current,
it heats and trips after :func:`time_to_trip_s`; once tripped it holds the voltage
across it at its tripped resistance, or at the resistance at which it dissipates
its tripped power (:func:`tripped_resistance_ohm`, solved with the rest of the
network by :mod:`planner.stress.tripped`). A PTC that trips is not a part that
opens: the case's verdict is that of the tripped state, and the other parts are
judged over the time to trip as over a fuse's pre-arcing time. It is a hazard when
the voltage across the tripped part exceeds its ``max_voltage`` or the current it
must cut exceeds its ``max_current`` (the maker's largest interruptible current).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..tools import quantity
from .base import Parameter, Part, Trip
from .resistor import Resistor

#: Keys of a ``parts.ptcs`` model.
PTC_KEYS = ("hold_current", "trip_current", "cold_resistance", "max_voltage", "max_current",
            "tripped_resistance", "tripped_power", "time_to_trip", "tolerance", "tempco")


@dataclass(frozen=True)
class PtcModel:
    """A PTC thermistor.

    Attributes
    ----------
    name : str
    hold_current_a : float
        Largest current it carries without tripping (at the reference ambient) [A].
    trip_current_a : float
        Smallest current that trips it [A].
    r_cold_ohm : float
        Resistance in normal use [ohm].
    max_voltage_v : float
        Largest voltage across the tripped part (rms of a periodic wave) [V].
    max_current_a : float
        Largest current it can interrupt [A].
    tripped_resistance_ohm : float or None
        Resistance once tripped [ohm] (one of this and ``tripped_power_w``).
    tripped_power_w : float or None
        Power it dissipates once tripped [W], held whatever the voltage.
    time_to_trip : tuple of (current [A], time [s])
        The maker's points, ascending current (empty: time unknown).
    tolerance : float
        Tolerance of the cold resistance (fraction).
    tempco_per_k : float
        Temperature coefficient of the cold resistance [1/K].
    """

    name: str
    hold_current_a: float
    trip_current_a: float
    r_cold_ohm: float
    max_voltage_v: float
    max_current_a: float
    tripped_resistance_ohm: float | None = None
    tripped_power_w: float | None = None
    time_to_trip: tuple[tuple[float, float], ...] = ()
    tolerance: float = 0.0
    tempco_per_k: float = 0.0

    #: Keys of one model of ``parts.ptcs`` (``docs/project-file.md``).
    file_keys: ClassVar[tuple[str, ...]] = PTC_KEYS
    file_example: ClassVar[str] = ("{hold_current: 20 mA, trip_current: 40 mA, cold_resistance: 1 kohm, "
                                   "max_voltage: 1 kV, max_current: 3 A, tripped_power: 1 W}")

    @classmethod
    def read(cls, m, name: str) -> "PtcModel":
        """The model ``name`` from its mapping of ``parts.ptcs`` (a :class:`planner.project.reader.Section`)."""
        hold = m.qty("hold_current", "current", check="pos", example="50 mA")
        trip = m.qty("trip_current", "current", check="pos", example="100 mA")
        if trip < hold:
            m.fail(f"{m.at('trip_current')} is below the hold current; a PTC trips above the current it holds "
                   "(about twice it): check the values", m.line_of("trip_current"))
        r_cold = m.qty("cold_resistance", "resistance", check="pos", example="10 ohm")
        vmax = m.qty("max_voltage", "voltage", check="pos", example="600 V")
        imax = m.qty("max_current", "current", check="pos", example="3 A")
        r_trip = m.qty("tripped_resistance", "resistance", None, check="pos")
        p_trip = m.qty("tripped_power", "power", None, check="pos")
        if (r_trip is None) == (p_trip is None):
            m.fail(f"parts.ptcs.{name} needs exactly one of 'tripped_resistance: 100 kohm' or 'tripped_power: 1 W' "
                   "(what the tripped part holds)", m.line)
        tol = m.qty("tolerance", "fraction", 0.0, check="frac")
        tempco = m.tempco("tempco", 0.0)
        points: list[tuple[float, float]] = []
        for i, pt in enumerate(m.items("time_to_trip", "[[200 mA, 5 s], [1 A, 100 ms]]"), 1):
            pw = f"{m.at('time_to_trip')}[{i}]"
            pair = m.ctx.seq(pt, pw, "[1 A, 100 ms]")
            if len(pair) != 2:
                m.fail(f"{pw} has {len(pair)} values; each point is [current, time], e.g. [1 A, 100 ms]", pt.line)
            i_a = m.ctx.qty(pair[0], "current", f"{pw} current", "pos")
            t_s = m.ctx.qty(pair[1], "time", f"{pw} time", "pos")
            if not i_a > trip:
                m.fail(f"{pw}: the current must be above the trip current; below it the part does not trip", pt.line)
            if points and (i_a <= points[-1][0] or t_s > points[-1][1]):
                m.fail(f"{pw}: list the points by rising current, the time falling (a larger current trips sooner)",
                       pt.line)
            points.append((i_a, t_s))
        return cls(name, hold, trip, r_cold, vmax, imax, r_trip, p_trip, tuple(points), tol, tempco)


def thermal_time_constant_s(m: PtcModel, i_a: float, t_s: float) -> float:
    """Thermal time constant of the lumped model that trips in ``t_s`` at ``i_a`` [s].

    Notes
    -----
    Inverts :func:`thermal_trip_time_s`: :math:`\\tau = t / \\ln\\frac{I^2}{I^2 - I_t^2}`.
    """
    x = (m.trip_current_a / i_a) ** 2
    return float(t_s / math.log(1.0 / (1.0 - x)))


def thermal_trip_time_s(i_trip_a: float, tau_s: float, i_a: float) -> float:
    """Time to trip of the lumped thermal model [s] (``inf`` at or below the trip current).

    Parameters
    ----------
    i_trip_a : float
        Trip current [A]: the current whose steady temperature rise just reaches
        the switching temperature.
    tau_s : float
        Thermal time constant :math:`\\tau = R_{th} C_{th}` [s].
    i_a : float
        RMS current [A].

    Notes
    -----
    Heat balance with the cold resistance R held until it switches:
    :math:`C_{th} \\, d\\Delta T/dt = I^2 R - \\Delta T / R_{th}`, so
    :math:`\\Delta T(t) = I^2 R R_{th} (1 - e^{-t/\\tau})`. It switches when
    :math:`\\Delta T` reaches the switching rise :math:`I_t^2 R R_{th}`:

    .. math:: t = \\tau \\ln \\frac{I^2}{I^2 - I_t^2}

    and, for :math:`I \\gg I_t`, :math:`t \\approx \\tau I_t^2 / I^2` (adiabatic heating).

    References
    ----------
    Lumped (single time-constant) heat balance, e.g. F. P. Incropera and D. P.
    DeWitt, *Fundamentals of Heat and Mass Transfer*, 6th ed., section 5.1
    (lumped capacitance method); its use for the trip time of a PTC is common
    practice, its parameters taken from the maker's time-to-trip curve.
    """
    i = abs(float(i_a))
    if i <= i_trip_a:
        return math.inf
    return float(tau_s * math.log(i * i / (i * i - i_trip_a * i_trip_a)))


def time_to_trip_s(m: PtcModel, i_a: float) -> float | None:
    """Time a PTC takes to trip at an rms current [s].

    Parameters
    ----------
    m : PtcModel
    i_a : float
        RMS current through it [A].

    Returns
    -------
    float or None
        ``inf`` at or below the trip current; None when the model gives no
        time-to-trip point (the time is unknown).

    Notes
    -----
    Between the maker's points, log-log interpolation (as for a fuse's
    time-current curve). Outside them, and with a single point, the lumped
    thermal model of :func:`thermal_trip_time_s` whose time constant passes
    through the nearest point (:func:`thermal_time_constant_s`).

    References
    ----------
    See :func:`thermal_trip_time_s`; log-log interpolation of a maker's
    time-to-trip curve is common practice.
    """
    i = abs(float(i_a))
    if i <= m.trip_current_a:
        return math.inf
    pts = sorted(p for p in m.time_to_trip if p[0] > m.trip_current_a)
    if not pts:
        return None
    cur = np.array([p[0] for p in pts])
    t = np.array([p[1] for p in pts])
    if len(pts) >= 2 and cur[0] <= i <= cur[-1]:
        return float(np.exp(np.interp(np.log(i), np.log(cur), np.log(t))))
    near = 0 if i < cur[0] else len(pts) - 1
    tau = thermal_time_constant_s(m, float(cur[near]), float(t[near]))
    return thermal_trip_time_s(m.trip_current_a, tau, i)


def tripped_resistance_ohm(m: PtcModel, v_rms_v: float) -> float:
    """Resistance of the tripped part with ``v_rms_v`` across it [ohm].

    Notes
    -----
    With a tripped resistance, that value. With a tripped power P (the part
    settles where its heating balances its loss, at nearly constant power):
    :math:`R = V^2 / P`, so that :math:`I = P / V`.

    References
    ----------
    Polymer and ceramic PTC data sheets state the tripped-state dissipation,
    nearly independent of the voltage (from memory).
    """
    if m.tripped_resistance_ohm is not None:
        return float(m.tripped_resistance_ohm)
    return float(max(v_rms_v, 1e-9) ** 2 / m.tripped_power_w)


@dataclass(frozen=True)
class TrippedPtc(Resistor):
    """The stand-in of a tripped PTC: a resistor of its tripped resistance, rated for anything.

    ``ptc_model`` names its model; :mod:`planner.stress.tripped` moves the value to
    the constant-power point when the model gives a tripped power.
    """

    ptc_model: str = ""

    def yaml(self) -> str:  # never written: the project keeps the PTC itself
        raise NotImplementedError("a tripped PTC is a stand-in of the misrange analysis")


@dataclass(frozen=True)
class Ptc(Part):
    """A PTC thermistor element; ``model`` names a :class:`PtcModel` in ``parts.ptcs``."""

    name: str
    a: str
    b: str
    model: str
    line: int | None = None

    kind: ClassVar[str] = "ptc"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "ptc"
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between", "model")

    @classmethod
    def read(cls, e, name: str, parts) -> "Ptc":
        """Its two nodes and a model of ``parts.ptcs``."""
        a, b = e.pair("between", "[plus, p1]")
        return cls(name=name, a=a, b=b, model=e.model("model", parts.ptcs, "ptc", "ptc_1k"), line=e.line)

    def _m(self, spec) -> PtcModel:
        return spec.parts.ptcs[self.model]

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Cold resistance at temperature, :math:`R_c (1 + \\alpha \\Delta T)` [ohm]."""
        m = self._m(spec)
        return m.r_cold_ohm * (1.0 + m.tempco_per_k * dt_k)

    def parameters(self, spec) -> list[Parameter]:
        """The cold resistance's tolerance (none when the model gives none)."""
        tol = self._m(spec).tolerance
        return [Parameter(self.name, self.name, "resistor", self.name, float(tol))] if tol > 0 else []

    def part_row(self, spec) -> dict:
        m = self._m(spec)
        return {"name": self.name, "kind": "ptc", "value_ohm": float(m.r_cold_ohm), "target_ohm": float(m.r_cold_ohm),
                "target_given": False, "tolerance_pct": float(m.tolerance * 100.0),
                "tempco_ppm_per_k": float(m.tempco_per_k * 1e6)}

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: ptc, between: [{self.a}, {self.b}], model: {self.model}}}"

    def spice(self, deck) -> list[str]:
        """Its cold resistance with its linear temperature coefficient (``tc1``, as a resistor's)."""
        m = self._m(deck.spec)
        tc = f" tc1={deck.num(m.tempco_per_k)}" if m.tempco_per_k else ""
        return [f"* {self.name}: PTC {self.model}, cold state",
                f"{deck.instance('R', self.name)} {deck.node(self.a)} {deck.node(self.b)} {deck.num(m.r_cold_ohm)}{tc}"]

    # --- misrange (planner.stress) -------------------------------------------------------
    def trip(self, ctx) -> Trip | None:
        """Whether it trips (rms current above the trip current), how fast, and what tripping asks of it.

        Notes
        -----
        The rms current is a trigger against the trip current (not an overstress);
        between hold and trip current it may or may not trip, and it is taken not
        to (the cold state is judged on the continuous ratings). When it trips,
        the current it must cut is a ``safety`` stress against ``max_current`` and
        :func:`time_to_trip_s` gives the pulse the other parts take meanwhile
        (``event_time_s``). An impulse is too short to trip it.

        References
        ----------
        See :func:`time_to_trip_s`; maximum interruptible current and maximum
        voltage as stated on PTC data sheets (common practice).
        """
        if ctx.peak_only:
            return None
        m = self._m(ctx.spec)
        ph = ctx.phase
        i_rms = ctx.current["rms"]
        trips = ctx.exceeds(i_rms, m.trip_current_a)
        t = time_to_trip_s(m, i_rms) if trips else None
        stresses = [ctx.entry(self.name, self.kind, f"rms current{ph}", i_rms, m.trip_current_a, "A", "fuse trigger")]
        if trips:
            stresses.append(ctx.entry(self.name, self.kind, f"current to cut{ph}", i_rms, m.max_current_a, "A",
                                      "safety", rule="breaking capacity", limit_name="ptc interruptible current"))
        known = t is not None and math.isfinite(t)
        record = {"name": self.name, "model": m.name, "kind": "ptc", "resets": True, "current_rms_a": i_rms,
                  "rated_current_a": m.hold_current_a, "trip_current_a": m.trip_current_a, "opens": bool(trips),
                  "trips": bool(trips), "pre_arcing_time_s": t if known else None, "time_known": t is not None,
                  "prospective_current_a": ctx.prospective_a, "breaking_capacity_a": m.max_current_a,
                  "let_through_i2t_a2s": i_rms * i_rms * t if known else None, "arcing_i2t_a2s": 0.0 if known else None,
                  "event_time_s": t if known else None, "arcing_known": known}
        notes = []
        if trips:
            when = (f"in {t:.3g} s" if known else "in an unknown time (give time_to_trip)" if t is None
                    else "only after a long time")
            notes.append(f"{self.name} trips {when} at {i_rms:.4g} A rms and resets once the fault is removed")
        elif ctx.exceeds(i_rms, m.hold_current_a):
            notes.append(f"{self.name} carries {i_rms:.4g} A rms, between its hold and trip currents: it may trip")
        return Trip(record, bool(trips), stresses, notes)

    def opened(self, r_open_ohm: float) -> TrippedPtc:
        """The tripped part: a resistor of the tripped resistance (first guess at 1 kohm for constant power)."""
        return TrippedPtc(self.name, self.a, self.b, 1e3, tolerance=0.0, tempco_per_k=0.0, power_w=math.inf,
                          max_voltage_v=math.inf, line=self.line, ptc_model=self.model)

    def open_checks(self, ctx) -> list[dict]:
        """The voltage across the tripped part (rms of a periodic wave, else peak) against ``max_voltage``.

        References
        ----------
        Maximum voltage of PTC data sheets (the largest voltage the tripped part
        withstands; common practice).
        """
        m = self._m(ctx.spec)
        v = ctx.voltage["rms"] if ctx.stimulus.waveform.cyclic else ctx.voltage["peak"]
        out = [ctx.entry(self.name, self.kind, f"voltage across the tripped PTC{ctx.phase}", v, m.max_voltage_v, "V",
                         "safety", rule="voltage rating", limit_name="ptc maximum voltage")]
        return out


def model_yaml(m: PtcModel) -> str:
    """The model as a ``parts.ptcs`` flow mapping."""
    items = [f"hold_current: {quantity(m.hold_current_a, 'A')}", f"trip_current: {quantity(m.trip_current_a, 'A')}",
             f"cold_resistance: {quantity(m.r_cold_ohm, 'ohm')}", f"max_voltage: {quantity(m.max_voltage_v, 'V')}",
             f"max_current: {quantity(m.max_current_a, 'A')}"]
    if m.tripped_resistance_ohm is not None:
        items.append(f"tripped_resistance: {quantity(m.tripped_resistance_ohm, 'ohm')}")
    if m.tripped_power_w is not None:
        items.append(f"tripped_power: {quantity(m.tripped_power_w, 'W')}")
    if m.time_to_trip:
        pts = ", ".join(f"[{quantity(i, 'A')}, {quantity(t, 's')}]" for i, t in m.time_to_trip)
        items.append(f"time_to_trip: [{pts}]")
    return "{" + ", ".join(items) + "}"
