"""Sizing from real parts: multipliers, shunts and clamp taps from the E-series.

From a project's high-level request (:class:`planner.model.VoltageRanges`,
:class:`planner.model.CurrentRanges`, :class:`planner.model.ClampRequest`) this
module computes the ideal resistances with the handbook formulas, picks
standard values (single parts, or a pair in series or in parallel when one value
misses by more than the project allows), rates every part for the worst power and
voltage it sees, and lays out the explicit network (:class:`planner.model.NetworkSpec`)
that every analysis then solves. The topology, the designator order and the rating
rules are documented in ``docs/sizing.md``.

Public API
----------
:func:`size` (Spec -> :class:`Sizing`), :func:`sized_spec`, :func:`sizing_json`,
:func:`network_yaml`, :func:`format_sizing_table`; the formulas themselves as
:func:`chain_segments`, :func:`separate_multipliers`, :func:`ayrton_total`,
:func:`ayrton_taps`, :func:`ayrton_segments`, :func:`separate_shunts` and
:func:`voltage_meter`; the part choice as :func:`choose_value`.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from dataclasses import dataclass, field

import numpy as np

from . import eseries
from . import network as nw
from . import writer
from .errors import ProjectError, SolveError
from .solve import Junctions, solve
from .model import (
    Contact,
    Diode,
    Fuse,
    MovementElement,
    NetworkSpec,
    Position,
    Resistor,
    ResistorParts,
    Spec,
)

__all__ = [
    "CATALOG_MIN_OHM",
    "CATALOG_MAX_OHM",
    "chain_segments",
    "separate_multipliers",
    "ayrton_total",
    "ayrton_taps",
    "ayrton_segments",
    "separate_shunts",
    "voltage_meter",
    "choose_value",
    "Choice",
    "PartPlan",
    "Segment",
    "PositionIdeal",
    "Sizing",
    "size",
    "sized_spec",
    "sizing_json",
    "network_yaml",
    "format_sizing_table",
    "position_label",
]

#: Smallest resistor value the sizer picks [ohm] (sub-ohm decades for shunts).
CATALOG_MIN_OHM = 0.01
#: Largest resistor value the sizer picks [ohm].
CATALOG_MAX_OHM = 100e6

#: Node names of the sized topology (see docs/sizing.md).
COM, PLUS, M_PLUS, M_IN, FUSED = "com", "plus", "m_plus", "m_in", "a_fused"

_REL_EPS = 1e-12


# =====================================================================================
# Handbook formulas
# =====================================================================================


def chain_segments(full_scales_v, i_a: float, r_ohm: float) -> list[float]:
    """Segments of a chain (series-string) multiplier, from the movement upward.

    Parameters
    ----------
    full_scales_v : sequence of float
        Full-scale voltages [V], ascending.
    i_a : float
        Current into the meter at full deflection [A] (I_fs of the movement, or the
        lowest current range when an Ayrton ring stays across it).
    r_ohm : float
        Terminal resistance of the meter at its input [ohm] (R_m, or R_m || R_t).

    Returns
    -------
    list of float
        Segment k between the taps of ranges k-1 and k [ohm].

    Notes
    -----
    .. math:: R_1 = V_1 / I - R_m, \\qquad R_k = (V_k - V_{k-1}) / I

    References
    ----------
    T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I (DC), ch. 8 "Voltmeter
    design": 1 mA, 500 ohm movement, ranges 1/10/100/1000 V give 500 / 9 k / 90 k / 900 k.
    """
    v = [float(x) for x in full_scales_v]
    out = [v[0] / i_a - r_ohm]
    out += [(v[k] - v[k - 1]) / i_a for k in range(1, len(v))]
    return out


def separate_multipliers(full_scales_v, i_a: float, r_ohm: float) -> list[float]:
    """One multiplier per voltage range [ohm].

    Notes
    -----
    .. math:: R_k = V_k / I - R_m

    References
    ----------
    T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I (DC), ch. 8 "Voltmeter
    design" (1 mA, 500 ohm; 1/10/100/1000 V -> 500 / 9.5 k / 99.5 k / 999.5 k ohm);
    US Army correspondence course SS0602, basic electricity, meters (1 mA, 75 ohm on
    10 V -> 9925 ohm).
    """
    return [float(v) / i_a - r_ohm for v in full_scales_v]


def ayrton_total(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> float:
    """Total resistance of an Ayrton (universal) shunt ring [ohm].

    Parameters
    ----------
    i_ranges_a : sequence of float
        Current ranges [A], ascending; the lowest one sets the ring.
    i_fs_a : float
        Full-scale current of the movement [A].
    r_m_ohm : float
        Resistance of the movement branch [ohm] (coil plus any swamping resistor).

    Notes
    -----
    .. math:: R_t = R_m I_{fs} / (I_1 - I_{fs})

    References
    ----------
    "Ayrton shunt", worked example (science-ebooks.com): 1 mA, 50 ohm movement,
    ranges 2 / 10 / 100 mA, ring 40 + 9 + 1 ohm; Wikipedia, "Ayrton shunt".
    """
    i1 = float(i_ranges_a[0])
    return r_m_ohm * i_fs_a / (i1 - i_fs_a)


def ayrton_taps(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> list[float]:
    """Resistance from the common end of the ring to the tap of each range [ohm].

    Notes
    -----
    .. math:: R_k = I_{fs} (R_t + R_m) / I_k

    so R_1 = R_t for the lowest range.

    References
    ----------
    "Ayrton shunt", worked example (science-ebooks.com); Wikipedia, "Ayrton shunt".
    """
    r_t = ayrton_total(i_ranges_a, i_fs_a, r_m_ohm)
    taps = [i_fs_a * (r_t + r_m_ohm) / float(i) for i in i_ranges_a]
    taps[0] = r_t  # the same number; exact by definition
    return taps


def ayrton_segments(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> list[float]:
    """The ring's resistors from the common end upward [ohm].

    Segment j (j = 1 at the common end) lies between the taps of the ranges
    n-j+2 and n-j+1: the first is R_n, the next R_(n-1) - R_n, and so on.

    Notes
    -----
    .. math:: S_1 = R_n, \\qquad S_j = R_{n-j+1} - R_{n-j+2}

    References
    ----------
    "Ayrton shunt", worked example (science-ebooks.com): 2 / 10 / 100 mA on a 1 mA,
    50 ohm movement give 1, 9 and 40 ohm from the common end.
    """
    taps = ayrton_taps(i_ranges_a, i_fs_a, r_m_ohm)
    n = len(taps)
    out = [taps[-1]]
    for j in range(n - 2, -1, -1):
        out.append(taps[j] - taps[j + 1])
    return out


def separate_shunts(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> list[float]:
    """One shunt per current range, across the movement branch [ohm].

    Notes
    -----
    .. math:: R_{sh} = R_m I_{fs} / (I - I_{fs})

    References
    ----------
    Textbook examples quoted in references.md: 1 mA, 43 ohm to 1 A gives 43.04 mohm;
    50 uA, 1 kohm to 500 uA gives 111.1 ohm.
    """
    return [r_m_ohm * i_fs_a / (float(i) - i_fs_a) for i in i_ranges_a]


def _current_branch_ohm(spec: Spec) -> float:
    """Resistance of the movement branch on current ranges: coil plus swamping [ohm]."""
    sw = spec.current.swamp_ohm if spec.current is not None else 0.0
    return spec.movement.r_coil_ohm + sw


def _ring_across(spec: Spec) -> bool:
    return (
        spec.current is not None
        and spec.current.arrangement == "ring"
        and spec.current.ring_on_voltage == "across"
    )


def voltage_meter(spec: Spec) -> tuple[float, float]:
    """The meter the voltage multipliers see: full-deflection current and resistance.

    Returns
    -------
    i_a : float
        Input current at full deflection [A].
    r_ohm : float
        Terminal resistance [ohm].

    Notes
    -----
    With the Ayrton ring left across the movement on the voltage positions
    (``ring_on_voltage: across``), the movement branch R_b = R_m + R_sw is shunted
    by the whole ring R_t. At full deflection the branch carries I_fs at
    I_fs R_b volts, the ring I_fs R_b / R_t, so

    .. math:: I = I_{fs} (1 + R_b / R_t) = I_1, \\qquad
              R = R_b R_t / (R_b + R_t)

    where I_1 is the lowest current range (the ring's defining equation).
    Otherwise (``switched_out``, separate shunts, no current ranges) the
    multipliers see the bare movement: I = I_fs, R = R_m.

    References
    ----------
    Series and parallel resistance and the Ayrton relation as in ``ayrton_total``.
    """
    m = spec.movement
    if _ring_across(spec):
        r_b = _current_branch_ohm(spec)
        r_t = ayrton_total(spec.current.full_scales, m.i_fs_a, r_b)
        return m.i_fs_a * (1.0 + r_b / r_t), r_b * r_t / (r_b + r_t)
    return m.i_fs_a, m.r_coil_ohm


# =====================================================================================
# Part choice
# =====================================================================================


@dataclass(frozen=True)
class Choice:
    """Standard values making one resistance.

    ``units`` are in series; each unit is a tuple of values in parallel.
    """

    units: tuple[tuple[float, ...], ...]
    arrangement: str

    @property
    def value(self) -> float:
        return sum(_parallel(u) for u in self.units)

    def error(self, target: float) -> float:
        """Relative error (achieved - target) / target."""
        return (self.value - target) / target


def _parallel(values) -> float:
    if len(values) == 1:
        return values[0]
    return 1.0 / sum(1.0 / v for v in values)


def _neighbours(series: str, x: float) -> list[float]:
    """The series values just below and just above x, within the catalogue."""
    out = []
    if x <= 0:
        return out
    lo = max(x, CATALOG_MIN_OHM * 0.5)
    if lo > CATALOG_MAX_OHM * 2:
        return out
    for f in (eseries.at_or_below, eseries.at_or_above):
        try:
            v = f(series, lo)
        except ValueError:
            continue
        if CATALOG_MIN_OHM * (1 - _REL_EPS) <= v <= CATALOG_MAX_OHM * (1 + _REL_EPS):
            out.append(v)
    return sorted(set(out))


def _single(series: str, target: float) -> Choice:
    v = eseries.nearest(series, min(max(target, CATALOG_MIN_OHM), CATALOG_MAX_OHM))
    return Choice(((v,),), "single")


def choose_value(series: str, target_ohm: float, max_error: float) -> Choice:
    """Standard values for one resistance: a single part, or the best pair.

    Parameters
    ----------
    series : str
        IEC 60063 series (``'E96'``).
    target_ohm : float
        Wanted resistance [ohm].
    max_error : float
        Largest relative error a single value may have (fraction).

    Returns
    -------
    Choice
        The nearest single value if it is within ``max_error``; otherwise the best
        of every reasonable pair: in series a big value from [target/2, target] plus
        the trim value nearest the remainder, or in parallel a value from
        [target, 2 target] with the value nearest the one that completes it. On a
        tie the series pair wins. Values stay within [CATALOG_MIN_OHM, CATALOG_MAX_OHM].

    Notes
    -----
    Series: R = R_a + R_b; parallel: R = R_a R_b / (R_a + R_b).
    """
    t = float(target_ohm)
    best = _single(series, t)
    if abs(best.error(t)) <= max_error:
        return best
    cands: list[tuple[float, int, Choice]] = [(abs(best.error(t)), 2, best)]
    lo, hi = max(t / 2.0, CATALOG_MIN_OHM), min(t, CATALOG_MAX_OHM)
    if lo <= hi:
        for big in eseries.values_in(series, lo, hi):
            rest = t - big
            if rest <= 0:
                continue
            for trim in _neighbours(series, rest):
                c = Choice(((big,), (trim,)), "series pair")
                cands.append((abs(c.error(t)), 0, c))
    lo, hi = max(t, CATALOG_MIN_OHM), min(2.0 * t, CATALOG_MAX_OHM)
    if lo <= hi:
        for a in eseries.values_in(series, lo, hi):
            if a <= t * (1 + _REL_EPS):
                continue
            b_ideal = 1.0 / (1.0 / t - 1.0 / a)
            for b in _neighbours(series, b_ideal):
                c = Choice(((a, b),), "parallel pair")
                cands.append((abs(c.error(t)), 1, c))
    cands.sort(key=lambda x: (x[0], x[1]))
    return cands[0][2]


def _split_choice(series: str, target: float, k: int, max_error: float) -> Choice:
    """k equal parts in series, plus a trim part when needed, summing to the target.

    The k parts take the largest series value v <= target / k, so none of them
    takes more than 1/k of the segment's voltage; the remainder target - k v (less
    than one series step of the whole) is made by a trim value or pair, and left
    out when it is within ``max_error`` of the target already.
    """
    if k <= 1:
        return choose_value(series, target, max_error)
    v = eseries.at_or_below(series, target / k)
    units: tuple[tuple[float, ...], ...] = ((v,),) * k
    rest = target - k * v
    how = f"{k} equal in series"
    if rest > max_error * target and rest >= CATALOG_MIN_OHM * 0.5:
        trim = choose_value(series, rest, max_error * target / rest)
        units += trim.units
        how += " + trim" if trim.arrangement == "single" else f" + trim {trim.arrangement}"
    return Choice(units, how)


# =====================================================================================
# Result types
# =====================================================================================


@dataclass(frozen=True)
class PartPlan:
    """One resistor of a segment.

    ``target_ohm`` is the part's share of the segment's target: its value times
    target / achieved, so that the shares in their series/parallel arrangement make
    the target exactly.
    """

    name: str
    value_ohm: float
    series: str
    target_ohm: float
    trimmer: bool = False
    power_rated_w: float = 0.0
    voltage_rated_v: float = 0.0
    power_required_w: float = 0.0
    voltage_required_v: float = 0.0
    power_fullscale_w: float = 0.0
    voltage_fullscale_v: float = 0.0
    a: str = ""
    b: str = ""


@dataclass(frozen=True)
class Segment:
    """One resistance the topology needs, and the parts that make it.

    Attributes
    ----------
    name : str
        ``chain 2.5 V``, ``tap 1``, ``multiplier 10 V``, ``ring 1 mA``,
        ``shunt 100 mA`` or ``swamp`` (see docs/sizing.md).
    role : str
        ``multiplier``, ``clamp tap``, ``ring``, ``shunt`` or ``swamp``.
    target_ohm, achieved_ohm : float
        Ideal resistance and what the chosen parts make [ohm].
    parts : tuple of PartPlan
    arrangement : str
        ``single``, ``series pair``, ``parallel pair`` or ``k equal in series``
        (with ``+ trim ...`` when a trim part makes up the rest).
    low, high : str
        The segment's nodes (``low`` nearer the movement or the common end).
    power_required_w, voltage_required_v : float
        Worst power in and voltage across the whole segment, over every case [W], [V].
    power_fullscale_w, voltage_fullscale_v : float
        The same at full scale only (no misrange) [W], [V].
    power_rated_w, voltage_rated_v : float
        Rating of each of its parts [W], [V].
    worst_case : str
        The case that gives ``power_required_w``.
    flags : tuple of str
        Requirements not met (accuracy share, full-scale rating).
    cautions : tuple of str
        Stress under the declared maximum input beyond the largest rating.
    """

    name: str
    role: str
    target_ohm: float
    achieved_ohm: float
    parts: tuple[PartPlan, ...]
    arrangement: str
    low: str
    high: str
    power_required_w: float = 0.0
    voltage_required_v: float = 0.0
    power_fullscale_w: float = 0.0
    voltage_fullscale_v: float = 0.0
    power_rated_w: float = 0.0
    voltage_rated_v: float = 0.0
    worst_case: str = ""
    flags: tuple[str, ...] = ()
    cautions: tuple[str, ...] = ()

    @property
    def error_pct(self) -> float:
        """(achieved - target) / target [%]."""
        return 100.0 * (self.achieved_ohm - self.target_ohm) / self.target_ohm

    @property
    def part_power_required_w(self) -> float:
        return max(p.power_required_w for p in self.parts)

    @property
    def part_voltage_required_v(self) -> float:
        return max(p.voltage_required_v for p in self.parts)


@dataclass(frozen=True)
class PositionIdeal:
    """A position of the sized meter: ideal figures and the sized values' nominal error.

    ``input_resistance_ohm`` is the ideal resistance between the input terminals
    (V / I for a voltage position); ``burden_voltage_v`` the ideal voltage across the
    input at full scale of a current position (None for voltage positions);
    ``nominal_error_pct`` the reading error at full scale with the chosen values, by
    the linear estimate (clamps ignored) [% of full scale].
    """

    name: str
    measures: str
    full_scale: float
    input_resistance_ohm: float
    burden_voltage_v: float | None
    nominal_error_pct: float


@dataclass(frozen=True)
class Sizing:
    """The result of :func:`size`."""

    series: str
    allowed_error_pct: float
    meter_current_a: float
    meter_resistance_ohm: float
    segments: tuple[Segment, ...]
    positions: tuple[PositionIdeal, ...]
    network: NetworkSpec
    max_input_v: float | None = None
    notes: tuple[str, ...] = ()

    @property
    def flags(self) -> tuple[str, ...]:
        return tuple(f"{s.name}: {f}" for s in self.segments for f in s.flags)

    @property
    def cautions(self) -> tuple[str, ...]:
        return tuple(f"{s.name}: {c}" for s in self.segments for c in s.cautions)

    @property
    def requirements_met(self) -> bool:
        """True when every segment is within the allowed share and rated for full scale."""
        return not self.flags and all(
            abs(p.nominal_error_pct) <= self.allowed_error_pct * (1 + 1e-9) for p in self.positions
        )

    def segment(self, name: str) -> Segment:
        for s in self.segments:
            if s.name == name:
                return s
        raise KeyError(name)


# =====================================================================================
# Validation
# =====================================================================================


def _err(spec: Spec, message: str, line: int | None) -> ProjectError:
    return ProjectError(message, spec.path, line)


def _line_of_key(spec: Spec, key: str) -> int | None:
    """1-based line of the first ``key:`` in the file's text, for messages."""
    if not spec.text:
        return None
    for i, text in enumerate(spec.text.splitlines(), 1):
        stripped = text.split("#", 1)[0]
        if f"{key}:" in stripped:
            return i
    return None


def _fmt(x: float, unit: str) -> str:
    from .units import format_si

    return format_si(x, unit, 4)


def position_label(value: float, unit: str) -> str:
    """The dial label of a range: ``format_si`` without trailing zeros ('2.5 V', '100 mA', '1 kV')."""
    from .units import format_si

    text = format_si(value, unit, 6)
    num, _, rest = text.partition(" ")
    if "." in num and "e" not in num:
        num = num.rstrip("0").rstrip(".")
    return f"{num} {rest}" if rest else num


def _check_ranges(spec: Spec, values, what: str, line: int | None, unit: str) -> None:
    if not values:
        raise _err(spec, f"{what}.full_scales is empty; list at least one range, e.g. [{'2.5 V' if unit == 'V' else '10 mA'}]", line)
    for v in values:
        if not (v > 0 and math.isfinite(v)):
            raise _err(spec, f"{what}.full_scales has {v!r}; every range must be a positive {unit} value", line)
    for a, b in zip(values[:-1], values[1:]):
        if not b > a:
            raise _err(
                spec,
                f"{what}.full_scales must be ascending, each range once: {_fmt(a, unit)} is followed by "
                f"{_fmt(b, unit)}; list the ranges from the lowest to the highest",
                line,
            )


def _validate(spec: Spec) -> str:
    """Check the request; returns the canonical series name."""
    if spec.voltage is None and spec.current is None:
        if spec.network is not None:
            raise _err(
                spec,
                "nothing to size: the project gives an explicit network and no 'voltage'/'current' ranges; "
                "check it with 'planner check', retrim its values with 'planner size --retrim', or add ranges "
                "for the sizer",
                None,
            )
        raise _err(
            spec,
            "nothing to size: give a 'voltage' and/or 'current' section, or an explicit 'network'",
            None,
        )
    m = spec.movement
    if not (m.i_fs_a > 0 and m.r_coil_ohm > 0):
        raise _err(spec, "the movement needs a positive full_scale_current and coil_resistance", _line_of_key(spec, "movement"))
    try:
        series = eseries.normalise(spec.parts.resistors.series)
    except ValueError:
        raise _err(
            spec,
            f"unknown resistor series '{spec.parts.resistors.series}' in parts.resistors; use one of "
            f"{', '.join(eseries.series_names())}",
            _line_of_key(spec, "series"),
        ) from None
    v = spec.voltage
    if v is not None:
        if v.arrangement not in ("chain", "separate"):
            raise _err(spec, f"voltage.arrangement '{v.arrangement}' is not known; use 'chain' or 'separate'", v.line)
        _check_ranges(spec, tuple(v.full_scales), "voltage", v.line, "V")
    c = spec.current
    if c is not None:
        if c.arrangement not in ("ring", "separate"):
            raise _err(spec, f"current.arrangement '{c.arrangement}' is not known; use 'ring' or 'separate'", c.line)
        if c.ring_on_voltage not in ("across", "switched_out"):
            raise _err(
                spec, f"current.ring_on_voltage '{c.ring_on_voltage}' is not known; use 'across' or 'switched_out'", c.line
            )
        if c.ring_on_voltage == "across" and c.arrangement != "ring":
            raise _err(
                spec,
                "current.ring_on_voltage: across applies to an Ayrton ring only; use arrangement: ring or "
                "ring_on_voltage: switched_out",
                c.line,
            )
        if not (c.swamp_ohm >= 0 and math.isfinite(c.swamp_ohm)):
            raise _err(spec, "current.swamp must be zero or a positive resistance", c.line)
        _check_ranges(spec, tuple(c.full_scales), "current", c.line, "A")
        for i in c.full_scales:
            if i <= m.i_fs_a * (1 + 1e-12):
                raise _err(
                    spec,
                    f"current range {_fmt(i, 'A')} is not above the movement's full-scale current "
                    f"I_fs = {_fmt(m.i_fs_a, 'A')}, so no shunt can make it; remove the range or choose a "
                    "more sensitive movement",
                    c.line,
                )
    for cl in spec.clamps:
        if cl.forward is None and cl.reverse is None:
            raise _err(spec, "a clamp needs a forward or a reverse diode model (or both)", cl.line)
        for model in (cl.forward, cl.reverse):
            if model is not None and model not in spec.parts.diodes:
                known = ", ".join(sorted(spec.parts.diodes)) or "none defined"
                raise _err(
                    spec, f"clamp diode model '{model}' is not in parts.diodes (known: {known}); define it there", cl.line
                )
        if int(cl.count) < 1:
            raise _err(spec, f"clamp count {cl.count} must be at least 1", cl.line)
        if isinstance(cl.at, str):
            if cl.at != "movement":
                raise _err(spec, f"clamp at '{cl.at}': use 'movement' or a resistance above the movement, e.g. '1 kohm'", cl.line)
        else:
            if spec.voltage is None:
                raise _err(
                    spec,
                    "a clamp at a resistance above the movement splits the voltage multiplier, but the project "
                    "has no voltage section; use at: movement",
                    cl.line,
                )
            if not (float(cl.at) > 0 and math.isfinite(float(cl.at))):
                raise _err(spec, f"clamp at {cl.at!r}: give a positive resistance above the movement", cl.line)
    return series


# =====================================================================================
# Layout: segments between nodes, contacts, diodes, positions
# =====================================================================================


@dataclass
class _SegPlan:
    name: str
    role: str
    target: float
    low: str
    high: str
    line: int | None = None


@dataclass
class _Layout:
    segments: list[_SegPlan]
    contacts: list[tuple[str, str, tuple[str, ...]]]  # (a, b, closed_in) in designator order
    diodes: list[tuple[str, str, str, int | None]]  # (anode, cathode, model, line)
    positions: list[Position]
    clamp_nodes: list[str]
    fuse: str | None
    meter_i_a: float
    meter_r_ohm: float
    ideal: dict[str, tuple[float, float | None]]  # position -> (input resistance, burden voltage)


def _layout(spec: Spec) -> _Layout:
    m = spec.movement
    v, c = spec.voltage, spec.current
    swamp = c.swamp_ohm if c is not None else 0.0
    i_node = M_IN if swamp > 0 else M_PLUS  # top of the movement branch on current ranges
    ring = c is not None and c.arrangement == "ring"
    across = ring and (c.ring_on_voltage == "across" or v is None)
    v_base = i_node if (ring and across) else M_PLUS
    segs: list[_SegPlan] = []
    positions: list[Position] = []
    contacts: list[tuple[str, str, tuple[str, ...]]] = []
    ideal: dict[str, tuple[float, float | None]] = {}
    i_m, r_m = voltage_meter(spec)

    v_names = [position_label(x, "V") for x in v.full_scales] if v is not None else []
    i_names = [position_label(x, "A") for x in c.full_scales] if c is not None else []
    names = v_names + i_names
    if len(set(names)) != len(names):
        raise _err(spec, "two ranges give the same dial label; make the full scales differ", (v or c).line)

    # --- clamp taps ---------------------------------------------------------------
    taps = sorted({float(cl.at) for cl in spec.clamps if not isinstance(cl.at, str)})
    tap_node = {r: f"tap{j}" for j, r in enumerate(taps, 1)}

    # --- voltage side ----------------------------------------------------------------
    if v is not None:
        vfs = list(v.full_scales)
        chain = v.arrangement == "chain"
        targets = chain_segments(vfs, i_m, r_m) if chain else separate_multipliers(vfs, i_m, r_m)
        for vk, t in zip(vfs, targets):
            if t <= 0:
                raise _err(
                    spec,
                    f"voltage range {_fmt(vk, 'V')} needs a multiplier of {_fmt(t, 'ohm')}: the lowest range must "
                    f"exceed I_fs*R_m = {_fmt(i_m * r_m, 'V')} (the meter's own full-scale voltage); raise it or "
                    "drop it",
                    v.line,
                )
        first = targets[0] if chain else min(targets)
        for r in taps:
            if r >= first * (1 - 1e-12):
                cl = next(x for x in spec.clamps if not isinstance(x.at, str) and float(x.at) == r)
                where = "first chain segment" if chain else "smallest multiplier"
                raise _err(
                    spec,
                    f"clamp tap at {_fmt(r, 'ohm')} above the movement lies beyond the {where} "
                    f"({_fmt(first, 'ohm')}) it would split; give a value below {_fmt(first, 'ohm')}",
                    cl.line,
                )
        below = v_base
        done = 0.0
        for j, r in enumerate(taps, 1):
            segs.append(_SegPlan(f"tap {j}", "clamp tap", r - done, below, tap_node[r], v.line))
            below, done = tap_node[r], r
        if chain:
            for k, t in enumerate(targets):
                top = f"v{k + 1}"
                tgt = t - done if k == 0 else t
                segs.append(_SegPlan(f"chain {v_names[k]}", "multiplier", tgt, below, top, v.line))
                below = top
        else:
            for k, t in enumerate(targets):
                segs.append(_SegPlan(f"multiplier {v_names[k]}", "multiplier", t - done, below, f"v{k + 1}", v.line))
        for k, vk in enumerate(vfs):
            positions.append(Position(v_names[k], "voltage", float(vk), (PLUS, COM), v.line))
            contacts.append((PLUS, f"v{k + 1}", (v_names[k],)))
            ideal[v_names[k]] = (vk / i_m, None)

    # --- current side ---------------------------------------------------------------
    if c is not None:
        ifs = list(c.full_scales)
        r_b = m.r_coil_ohm + swamp
        feed = FUSED if c.fuse else PLUS  # the current positions' input, behind the fuse if any
        if ring:
            taps_r = ayrton_taps(ifs, m.i_fs_a, r_b)
            ring_segs = ayrton_segments(ifs, m.i_fs_a, r_b)
            n = len(ifs)
            top_node = i_node if across else "t1"
            tnode = [top_node] + [f"t{k + 1}" for k in range(1, n)]
            lows = [COM] + [tnode[k] for k in range(n - 1, 0, -1)]
            highs = [tnode[k] for k in range(n - 1, -1, -1)]
            for j, t in enumerate(ring_segs):
                k = n - 1 - j  # the tap at the segment's upper end belongs to range k
                segs.append(_SegPlan(f"ring {i_names[k]}", "ring", t, lows[j], highs[j], c.line))
            for k, ik in enumerate(ifs):
                positions.append(Position(i_names[k], "current", float(ik), (PLUS, COM), c.line))
                contacts.append((feed, tnode[k], (i_names[k],)))
                burden = m.i_fs_a * (taps_r[0] + r_b - taps_r[k])
                ideal[i_names[k]] = (burden / ik, burden)
            if not across:
                contacts.append(("t1", i_node, tuple(i_names)))
        else:
            shunts = separate_shunts(ifs, m.i_fs_a, r_b)
            for k, t in enumerate(shunts):
                segs.append(_SegPlan(f"shunt {i_names[k]}", "shunt", t, COM, f"s{k + 1}", c.line))
            for k, ik in enumerate(ifs):
                positions.append(Position(i_names[k], "current", float(ik), (PLUS, COM), c.line))
                contacts.append((feed, f"s{k + 1}", (i_names[k],)))
                contacts.append((f"s{k + 1}", i_node, (i_names[k],)))
                burden = m.i_fs_a * r_b
                ideal[i_names[k]] = (burden / ik, burden)
        if swamp > 0:
            segs.append(_SegPlan("swamp", "swamp", swamp, M_PLUS, M_IN, c.line))

    # --- clamps ------------------------------------------------------------------------
    diodes: list[tuple[str, str, str, int | None]] = []
    clamp_nodes: list[str] = []
    for j, cl in enumerate(spec.clamps, 1):
        node = M_PLUS if isinstance(cl.at, str) else tap_node[float(cl.at)]
        if node not in clamp_nodes:
            clamp_nodes.append(node)
        count = int(cl.count)
        for direction, model in (("fwd", cl.forward), ("rev", cl.reverse)):
            if model is None:
                continue
            chain_nodes = [node] + [f"clamp{j}_{direction}{i}" for i in range(1, count)] + [COM]
            for a, b in zip(chain_nodes[:-1], chain_nodes[1:]):
                # forward: anode toward the tap; reverse: cathode toward the tap
                diodes.append((a, b, model, cl.line) if direction == "fwd" else (b, a, model, cl.line))
    fuse = c.fuse if c is not None else None
    return _Layout(segs, contacts, diodes, positions, clamp_nodes, fuse, i_m, r_m, ideal)


# =====================================================================================
# Building the network
# =====================================================================================


def _build(spec: Spec, lay: _Layout, choices: list[Choice], ratings: list[tuple[float, float]], series: str):
    """Elements with designators from the layout and one Choice per segment.

    Returns the NetworkSpec and, per segment, the list of (designator, value, a, b).
    """
    rp = spec.parts.resistors
    elements = []
    seg_parts: list[list[tuple[str, float, str, str]]] = []
    n = 0
    for sp, ch, (p_w, v_max) in zip(lay.segments, choices, ratings):
        names = []
        for unit in ch.units:
            names.append([f"R{n + i + 1}" for i in range(len(unit))])
            n += len(unit)
        nodes = [sp.low] + [f"{names[i][0].lower()}_{names[i + 1][0].lower()}" for i in range(len(names) - 1)] + [sp.high]
        ach = ch.value
        parts = []
        for i, unit in enumerate(ch.units):
            for name, value in zip(names[i], unit):
                a, b = nodes[i + 1], nodes[i]  # upper node first: current flows down toward the movement/common
                elements.append(
                    Resistor(
                        name=name,
                        a=a,
                        b=b,
                        value_ohm=value,
                        tolerance=rp.tolerance,
                        tempco_per_k=rp.tempco_per_k,
                        power_w=p_w,
                        max_voltage_v=v_max,
                        series=series,
                        target_ohm=value * sp.target / ach,
                        group=sp.name,
                        distribution=rp.distribution,
                        line=sp.line,
                    )
                )
                parts.append((name, value, a, b))
        seg_parts.append(parts)
    elements.append(MovementElement("M1", M_PLUS, COM, _line_of_key(spec, "movement")))
    for j, (a, b, model, line) in enumerate(lay.diodes, 1):
        elements.append(Diode(f"D{j}", a, b, model, line))
    if lay.fuse:
        elements.append(Fuse("F1", PLUS, FUSED, lay.fuse, spec.current.line))
    for j, (a, b, closed) in enumerate(lay.contacts, 1):
        elements.append(Contact(f"S{j}", a, b, tuple(closed)))
    net = NetworkSpec(tuple(elements), tuple(lay.positions), None)
    return net, seg_parts


# =====================================================================================
# Linear estimate of stresses and readings
# =====================================================================================


class _Linear:
    """The sized network with its diodes open, or with clamp nodes shorted to common.

    Solved by the same compiler and solver as every analysis (nominal values,
    reference temperature), without an engine: with the diodes taken out the
    network is linear, so the result is the bound the rating rules need.
    """

    def __init__(self, spec: Spec, net: NetworkSpec):
        self.spec = spec
        self.elements = tuple(e for e in net.elements if e.stamp != "junction")
        self.positions = net.positions
        self._nets: dict[tuple, NetworkSpec] = {}

    def solve(self, pos: Position, value: float, shorted=()):
        """Voltage across every element [V] for ``value`` on ``pos``; None when the input is shorted."""
        key = tuple(shorted)
        if key not in self._nets:
            shorts = tuple(Contact(f"__short{j}", node, COM, tuple(p.name for p in self.positions))
                           for j, node in enumerate(shorted))
            self._nets[key] = NetworkSpec(self.elements + shorts, self.positions, None)
        net = self._nets[key]
        st = nw.position_states(net)[[p.name for p in net.positions].index(pos.name)]
        try:
            c = nw.compile_state(self.spec, st, net=net)
            dt = np.zeros((1, 1))
            r = np.concatenate([np.broadcast_to(net.element(br.element).resistance(self.spec, dt), (1, 1))
                                for br in c.branches], axis=1) if c.branches else np.zeros((1, 0))
            z = np.zeros((1, 0))
            sol = solve(c, r, Junctions(z, z, z, z, z, z), np.array([float(value)]))
        except SolveError:
            return None

        def v(node):
            i = c.node_index.get(node)
            return np.zeros((1, 1)) if i is None else sol.node_voltage(i)

        return {e.name: float((v(e.nodes[0]) - v(e.nodes[1]))[0, 0]) for e in self.elements if e.rated}


def _cases(spec: Spec, lay: _Layout):
    """(label, position, value, shorted nodes, is_full_scale) of every rating case."""
    out = []
    vmax = spec.faults.max_input_v
    corners = [
        tuple(s) for r in range(len(lay.clamp_nodes) + 1) for s in itertools.combinations(lay.clamp_nodes, r)
    ]
    for p in lay.positions:
        unit = p.unit
        out.append((f"full scale on {p.name}", p, p.full_scale, (), True))
        if p.measures == "voltage" and vmax is not None and vmax > p.full_scale:
            for sh in corners:
                how = "" if not sh else f", clamp at {'+'.join(sh)} shorted"
                out.append((f"{_fmt(vmax, unit)} max input on {p.name}{how}", p, vmax, sh, False))
    return out


@dataclass
class _Stress:
    v: dict[str, float] = field(default_factory=dict)  # worst |V| per element
    p: dict[str, float] = field(default_factory=dict)  # worst P per element
    v_fs: dict[str, float] = field(default_factory=dict)
    p_fs: dict[str, float] = field(default_factory=dict)
    seg_v: list[float] = field(default_factory=list)
    seg_p: list[float] = field(default_factory=list)
    seg_v_fs: list[float] = field(default_factory=list)
    seg_p_fs: list[float] = field(default_factory=list)
    seg_case: list[str] = field(default_factory=list)
    errors: dict[str, float] = field(default_factory=dict)  # position -> relative error


def _stresses(spec: Spec, lay: _Layout, net: NetworkSpec, seg_parts) -> _Stress:
    lin = _Linear(spec, net)
    st = _Stress()
    nseg = len(seg_parts)
    st.seg_v, st.seg_p = [0.0] * nseg, [0.0] * nseg
    st.seg_v_fs, st.seg_p_fs = [0.0] * nseg, [0.0] * nseg
    st.seg_case = [""] * nseg
    values = {e.name: e.value_ohm for e in net.elements if isinstance(e, Resistor)}
    m = spec.movement
    for label, pos, value, shorted, fs in _cases(spec, lay):
        dv = lin.solve(pos, value, shorted)
        if dv is None:
            continue
        if fs:
            i_m = dv["M1"] / m.r_coil_ohm
            st.errors[pos.name] = i_m / m.i_fs_a - 1.0
        for name, r in values.items():
            vv = abs(dv.get(name, 0.0))
            pp = vv * vv / r
            st.v[name] = max(st.v.get(name, 0.0), vv)
            st.p[name] = max(st.p.get(name, 0.0), pp)
            if fs:
                st.v_fs[name] = max(st.v_fs.get(name, 0.0), vv)
                st.p_fs[name] = max(st.p_fs.get(name, 0.0), pp)
        for j, parts in enumerate(seg_parts):
            # voltage across the whole segment: sum of the series units' voltages
            seen_units = {}
            for name, val, a, b in parts:
                seen_units.setdefault((a, b), dv.get(name, 0.0))
            sv = abs(sum(seen_units.values()))
            sp = sum(dv.get(name, 0.0) ** 2 / val for name, val, _, _ in parts)
            if sp > st.seg_p[j]:
                st.seg_p[j] = sp
                st.seg_case[j] = label
            st.seg_v[j] = max(st.seg_v[j], sv)
            if fs:
                st.seg_v_fs[j] = max(st.seg_v_fs[j], sv)
                st.seg_p_fs[j] = max(st.seg_p_fs[j], sp)
    return st


# =====================================================================================
# Ratings
# =====================================================================================


def _ladder(spec: Spec) -> list[tuple[float, float]]:
    """(power [W], limiting element voltage [V]) the sizer may use, ascending."""
    rp: ResistorParts = spec.parts.resistors
    pw = tuple(rp.power_ratings_w)
    if not pw:
        return [(rp.power_w, rp.max_voltage_v)]
    vs = tuple(rp.max_voltages_v)
    if not vs:
        vs = (rp.max_voltage_v,) * len(pw)
    if len(vs) != len(pw):
        raise _err(
            spec,
            f"parts.resistors lists {len(pw)} power ratings but {len(vs)} max voltages; give one voltage per rating",
            _line_of_key(spec, "ratings"),
        )
    pairs = sorted(zip(pw, vs))
    out = [(p, v) for p, v in pairs if p >= rp.power_w * (1 - 1e-12)]
    if not out or out[0][0] > rp.power_w * (1 + 1e-12):
        out.insert(0, (rp.power_w, rp.max_voltage_v))
    return out


#: Most parts in series one segment is split into.
_MAX_SPLIT = 64


@dataclass
class _Rate:
    index: int
    k: int
    basis: str  # "worst", "full scale" or "none"


def _k_for(v: float, v_max: float) -> int:
    return max(1, math.ceil(v / v_max * (1 - 1e-12)))


def _initial_rate(ladder, v, p, v_fs, p_fs, target, *, misrange: bool = True) -> _Rate:
    """The smallest rating (and split) that carries the worst case, else full scale.

    A misrange that no rating carries is not designed for (splitting a part that
    burns anyway buys nothing): the full-scale stress decides, and a caution is noted.
    """
    k_cat = max(1, math.ceil(target / CATALOG_MAX_OHM * (1 - 1e-12)))
    bases = (("worst", v, p), ("full scale", v_fs, p_fs)) if misrange else (("full scale", v_fs, p_fs),)
    for basis, vv, pp in bases:
        for i, (pr, vr) in enumerate(ladder):
            k = max(_k_for(vv, vr), k_cat)
            if k <= _MAX_SPLIT and pp / k <= pr:
                return _Rate(i, k, basis)
    return _Rate(len(ladder) - 1, min(_MAX_SPLIT, max(_k_for(v_fs, ladder[-1][1]), k_cat)), "none")


# =====================================================================================
# size()
# =====================================================================================


def size(spec: Spec) -> Sizing:
    """Size a project's meter from real parts.

    Parameters
    ----------
    spec : Spec
        A project with ``voltage`` and/or ``current`` sections.

    Returns
    -------
    Sizing
        Segments (targets, chosen parts, ratings), positions and the network.

    Raises
    ------
    ProjectError
        For a request that cannot be built (a current range at or below I_fs, a
        voltage range at or below the meter's own full-scale voltage, ranges not
        ascending, a clamp tap beyond the segment it splits, an unknown series or
        diode model).

    Notes
    -----
    1. Targets by the handbook formulas (:func:`chain_segments`,
       :func:`separate_multipliers`, :func:`ayrton_segments`, :func:`separate_shunts`),
       the multipliers against :func:`voltage_meter`.
    2. Stresses of the ideal network by a linear estimate: every position at full
       scale, and every voltage position under ``faults.max_input`` with each clamp
       node taken open and shorted to common (every combination), the worst kept.
    3. Per segment, the smallest rating (power, limiting voltage) that carries the
       worst power once the segment is split into k = ceil(V / V_max) equal parts in
       series (plus a trim part, the sum on target); when no rating carries the
       misrange, the full-scale stress decides and a caution is noted.
    4. Values: the nearest standard value, or the best series/parallel pair, within
       ``analysis.allowed_share`` x class index; the budget is halved until every
       position's nominal error (linear estimate) is within the allowed share.
    5. Stresses again on the chosen parts; a part beyond its voltage limit gets one
       more split, beyond its power one rating step, until all fit or no step is left.
    """
    series = _validate(spec)
    lay = _layout(spec)
    ladder = _ladder(spec)
    allowed = spec.analysis.allowed_share * spec.movement.class_index / 100.0
    nseg = len(lay.segments)
    for sp in lay.segments:
        if sp.target < CATALOG_MIN_OHM * 0.75:
            raise _err(
                spec,
                f"{sp.name} needs {_fmt(sp.target, 'ohm')}, below the smallest resistor the sizer picks "
                f"({_fmt(CATALOG_MIN_OHM, 'ohm')}); lower the highest current range, add a swamping resistor, "
                "or give an explicit network with a made-to-measure shunt",
                sp.line,
            )

    # stresses of the ideal network (one exact resistor per segment)
    ideal_choices = [Choice(((sp.target,),), "ideal") for sp in lay.segments]
    net0, parts0 = _build(spec, lay, ideal_choices, [ladder[0]] * nseg, series)
    st0 = _stresses(spec, lay, net0, parts0)
    rates = [
        _initial_rate(ladder, st0.seg_v[j], st0.seg_p[j], st0.seg_v_fs[j], st0.seg_p_fs[j], sp.target)
        for j, sp in enumerate(lay.segments)
    ]

    budget = allowed
    for _ in range(40):
        choices = [_split_choice(series, sp.target, r.k, budget) for sp, r in zip(lay.segments, rates)]
        net, seg_parts = _build(spec, lay, choices, [ladder[r.index] for r in rates], series)
        st = _stresses(spec, lay, net, seg_parts)
        changed = False
        for j, r in enumerate(rates):
            pr, vr = ladder[r.index]
            if r.basis == "worst":
                vmap, pmap = st.v, st.p
            else:
                vmap, pmap = st.v_fs, st.p_fs
            names = [x[0] for x in seg_parts[j]]
            if any(vmap.get(n, 0.0) > vr * (1 + 1e-9) for n in names) and r.k < _MAX_SPLIT:
                r.k += 1
                changed = True
            elif r.basis != "none" and any(pmap.get(n, 0.0) > pr * (1 + 1e-9) for n in names):
                changed = True
                if r.index + 1 < len(ladder):
                    r.index += 1
                elif r.basis == "worst":
                    sp = lay.segments[j]
                    rates[j] = _initial_rate(
                        ladder, 0.0, 0.0, st0.seg_v_fs[j], st0.seg_p_fs[j], sp.target, misrange=False
                    )
                else:
                    r.basis = "none"
        if not changed and any(abs(e) > allowed for e in st.errors.values()) and budget > 1e-7:
            budget /= 2.0
            changed = True
        if not changed:
            break

    return _result(spec, lay, series, ladder, allowed, choices, rates, net, seg_parts, st)


def _result(spec, lay, series, ladder, allowed, choices, rates, net, seg_parts, st) -> Sizing:
    vmax = spec.faults.max_input_v
    segments = []
    for j, (sp, ch, r) in enumerate(zip(lay.segments, choices, rates)):
        pr, vr = ladder[r.index]
        parts = tuple(
            PartPlan(
                name=name,
                value_ohm=val,
                series=series,
                target_ohm=val * sp.target / ch.value,
                power_rated_w=pr,
                voltage_rated_v=vr,
                power_required_w=st.p[name],
                voltage_required_v=st.v[name],
                power_fullscale_w=st.p_fs.get(name, 0.0),
                voltage_fullscale_v=st.v_fs.get(name, 0.0),
                a=a,
                b=b,
            )
            for name, val, a, b in seg_parts[j]
        )
        flags, cautions = [], []
        err = ch.error(sp.target)
        if abs(err) > allowed * (1 + 1e-9):
            flags.append(
                f"no {series} single value or pair is within {100 * allowed:.3g} % of {_fmt(sp.target, 'ohm')}; "
                f"best {100 * err:+.3g} %: use a finer series or a trimmer"
            )
        p_part = max(p.power_required_w for p in parts)
        v_part = max(p.voltage_required_v for p in parts)
        p_part_fs = max(p.power_fullscale_w for p in parts)
        v_part_fs = max(p.voltage_fullscale_v for p in parts)
        if p_part_fs > pr * (1 + 1e-9) or v_part_fs > vr * (1 + 1e-9):
            flags.append(
                f"at full scale a part sees {_fmt(p_part_fs, 'W')} / {_fmt(v_part_fs, 'V')}, beyond the largest "
                f"rating {_fmt(pr, 'W')} / {_fmt(vr, 'V')}: add power ratings to parts.resistors or lower the range"
            )
        elif p_part > pr * (1 + 1e-9) or v_part > vr * (1 + 1e-9):
            cautions.append(
                f"under {_fmt(vmax, 'V')} max input a part sees {_fmt(p_part, 'W')} / {_fmt(v_part, 'V')}, beyond "
                f"its rating {_fmt(pr, 'W')} / {_fmt(vr, 'V')} ({st.seg_case[j]}): protect the range (fuse, clamp) "
                "or accept the fault"
            )
        segments.append(
            Segment(
                name=sp.name,
                role=sp.role,
                target_ohm=sp.target,
                achieved_ohm=ch.value,
                parts=parts,
                arrangement=ch.arrangement,
                low=sp.low,
                high=sp.high,
                power_required_w=st.seg_p[j],
                voltage_required_v=st.seg_v[j],
                power_fullscale_w=st.seg_p_fs[j],
                voltage_fullscale_v=st.seg_v_fs[j],
                power_rated_w=pr,
                voltage_rated_v=vr,
                worst_case=st.seg_case[j],
                flags=tuple(flags),
                cautions=tuple(cautions),
            )
        )
    positions = tuple(
        PositionIdeal(
            name=p.name,
            measures=p.measures,
            full_scale=p.full_scale,
            input_resistance_ohm=lay.ideal[p.name][0],
            burden_voltage_v=lay.ideal[p.name][1],
            nominal_error_pct=100.0 * st.errors.get(p.name, float("nan")),
        )
        for p in lay.positions
    )
    notes = [
        "targets: handbook formulas (docs/sizing.md); multipliers sized against a meter of "
        f"{_fmt(lay.meter_i_a, 'A')} and {_fmt(lay.meter_r_ohm, 'ohm')}",
        "ratings: linear estimate, diodes left out; under the max input every clamp node is taken both open "
        "and shorted to common (every combination) and the worst kept, so the figures are an upper bound",
        "nominal errors: linear estimate with the chosen values, clamps ignored; 'planner check' solves them "
        "with the diodes",
    ]
    return Sizing(
        series=series,
        allowed_error_pct=100.0 * allowed,
        meter_current_a=lay.meter_i_a,
        meter_resistance_ohm=lay.meter_r_ohm,
        segments=tuple(segments),
        positions=positions,
        network=net,
        max_input_v=vmax,
        notes=tuple(notes),
    )


def sized_spec(spec: Spec) -> Spec:
    """The spec with its network: the file's explicit one if given, else the sized one."""
    if spec.network is not None:
        return spec
    return dataclasses.replace(spec, network=size(spec).network)


# =====================================================================================
# Output: JSON, project-file text, terminal table
# =====================================================================================


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def sizing_json(sizing: Sizing) -> dict:
    """The sizing as a JSON-ready dict (SI units, unit in each field's name).

    Contract fields: ``segments[]`` with ``name``, ``target_ohm``, ``achieved_ohm``,
    ``parts[]`` (``name``, ``value_ohm``, ``series``, ``trimmer``),
    ``power_required_w``, ``voltage_required_v``.
    """
    segs = []
    for s in sizing.segments:
        segs.append(
            {
                "name": s.name,
                "role": s.role,
                "target_ohm": _num(s.target_ohm),
                "achieved_ohm": _num(s.achieved_ohm),
                "error_pct": _num(s.error_pct),
                "arrangement": s.arrangement,
                "nodes": [s.low, s.high],
                "parts": [
                    {
                        "name": p.name,
                        "value_ohm": _num(p.value_ohm),
                        "series": p.series,
                        "trimmer": bool(p.trimmer),
                        "target_ohm": _num(p.target_ohm),
                        "power_required_w": _num(p.power_required_w),
                        "voltage_required_v": _num(p.voltage_required_v),
                        "power_fullscale_w": _num(p.power_fullscale_w),
                        "voltage_fullscale_v": _num(p.voltage_fullscale_v),
                        "power_rated_w": _num(p.power_rated_w),
                        "voltage_rated_v": _num(p.voltage_rated_v),
                        "nodes": [p.a, p.b],
                    }
                    for p in s.parts
                ],
                "power_required_w": _num(s.power_required_w),
                "voltage_required_v": _num(s.voltage_required_v),
                "power_fullscale_w": _num(s.power_fullscale_w),
                "voltage_fullscale_v": _num(s.voltage_fullscale_v),
                "power_rated_w": _num(s.power_rated_w),
                "voltage_rated_v": _num(s.voltage_rated_v),
                "worst_case": s.worst_case,
                "flags": list(s.flags),
                "cautions": list(s.cautions),
            }
        )
    return {
        "series": sizing.series,
        "allowed_error_pct": _num(sizing.allowed_error_pct),
        "meter_current_a": _num(sizing.meter_current_a),
        "meter_resistance_ohm": _num(sizing.meter_resistance_ohm),
        "max_input_v": _num(sizing.max_input_v),
        "segments": segs,
        "positions": [
            {
                "name": p.name,
                "measures": p.measures,
                "full_scale": _num(p.full_scale),
                "input_resistance_ohm": _num(p.input_resistance_ohm),
                "burden_voltage_v": _num(p.burden_voltage_v),
                "nominal_error_pct": _num(p.nominal_error_pct),
            }
            for p in sizing.positions
        ],
        "flags": list(sizing.flags),
        "cautions": list(sizing.cautions),
        "notes": list(sizing.notes),
        "requirements_met": sizing.requirements_met,
    }


def network_yaml(spec: Spec, sizing: Sizing) -> str:
    """A project file holding the sized network explicitly.

    The file's own text is kept, comments and all, except its ``voltage``,
    ``current``, ``clamps`` and ``network`` sections: those stay as comments (the
    record of what was asked) and the explicit ``network:`` section is appended,
    so the loader reads back exactly the sized network and nothing is sized
    twice. Quantities carry units and parse back to the same floats; each
    resistor's segment and target share follow it as a comment.

    Raises
    ------
    ProjectError
        When the spec carries no file text (it was not loaded from a file).
    """
    if not spec.text:
        raise ProjectError(
            "the project has no file text to extend; load it from a file (planner.project.load) first",
            spec.path,
        )
    header = [
        f"# Network sized by 'planner size' from {sizing.series} values "
        f"(allowed error {sizing.allowed_error_pct:.3g} % per segment); edit the values freely."
    ]
    return writer.replace_sections(
        spec.text, ("voltage", "current", "clamps", "network"), writer.network_lines(sizing.network),
        header=header, record="# The request the network below was sized from (kept for the record):")


def format_sizing_table(sizing: Sizing) -> str:
    """A terminal table of the sizing: targets, parts, achieved value, error, ratings."""
    rows = [("segment", "target", "parts", "achieved", "error %", "P part/rated", "V part/rated")]
    for s in sizing.segments:
        vals = " + ".join(
            _fmt(p.value_ohm, "ohm").replace(" ", "") for p in s.parts
        )
        if s.arrangement == "parallel pair":
            vals = " || ".join(_fmt(p.value_ohm, "ohm").replace(" ", "") for p in s.parts)
        names = ",".join(p.name for p in s.parts) if len(s.parts) <= 3 else f"{s.parts[0].name}..{s.parts[-1].name}"
        rows.append(
            (
                s.name,
                _fmt(s.target_ohm, "ohm"),
                f"{names}: {vals}" if len(s.parts) <= 3 else f"{names}: {s.arrangement}",
                _fmt(s.achieved_ohm, "ohm"),
                f"{s.error_pct:+.4f}",
                f"{_fmt(s.part_power_required_w, 'W')}/{_fmt(s.power_rated_w, 'W')}",
                f"{_fmt(s.part_voltage_required_v, 'V')}/{_fmt(s.voltage_rated_v, 'V')}",
            )
        )
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    out = [f"Sizing from {sizing.series} values, allowed error {sizing.allowed_error_pct:.3g} % per segment"]
    for i, r in enumerate(rows):
        out.append("  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip())
        if i == 0:
            out.append("  ".join("-" * w for w in widths))
    out.append("")
    prow = [("position", "input resistance", "burden", "nominal error %")]
    for p in sizing.positions:
        prow.append(
            (
                p.name,
                _fmt(p.input_resistance_ohm, "ohm"),
                "" if p.burden_voltage_v is None else _fmt(p.burden_voltage_v, "V"),
                f"{p.nominal_error_pct:+.4f}",
            )
        )
    widths = [max(len(r[i]) for r in prow) for i in range(len(prow[0]))]
    for i, r in enumerate(prow):
        out.append("  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip())
        if i == 0:
            out.append("  ".join("-" * w for w in widths))
    if sizing.max_input_v is not None:
        out.append("")
        out.append(f"P and V per part: worst over full scale and {_fmt(sizing.max_input_v, 'V')} max input on every voltage position.")
    for f in sizing.flags:
        out.append(f"FLAG: {f}")
    for c in sizing.cautions:
        out.append(f"CAUTION: {c}")
    for n in sizing.notes:
        out.append(f"note: {n}")
    return "\n".join(out) + "\n"
