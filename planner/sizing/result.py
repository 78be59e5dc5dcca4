"""What the sizer returns: segments with their parts and ratings, positions, the network.

Frozen dataclasses in SI floats; :func:`planner.sizing.report.sizing_json` and
:func:`planner.sizing.report.format_sizing_table` render them.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..model import NetworkSpec

__all__ = ["PartPlan", "Segment", "PositionIdeal", "Sizing"]


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
    """The result of :func:`planner.sizing.size`."""

    series: str
    allowed_error_pct: float
    meter_current_a: float
    meter_resistance_ohm: float
    segments: tuple[Segment, ...]
    positions: tuple[PositionIdeal, ...]
    network: NetworkSpec
    max_input_v: float | None = None
    notes: tuple[str, ...] = ()
    trims: tuple = ()  # planner.trim.Trim, in calibration order (analysis.trim)

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
            if p.nominal_error_pct is not None  # ohms positions: proved by planner check after zeroing
        )

    def segment(self, name: str) -> Segment:
        for s in self.segments:
            if s.name == name:
                return s
        raise KeyError(name)
