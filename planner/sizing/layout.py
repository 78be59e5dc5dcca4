"""The sized topology before any value is chosen: segments, positions, contacts, devices.

A :class:`Layout` is filled by the sections of the request, one
:class:`SizingSection` per section of the project file the sizer reads (voltage
ranges, current ranges, clamps, the input fuse; registered in
:data:`planner.sizing.sections.SECTIONS`). :func:`lay_out` runs them in two passes:

1. ``prepare``: a section declares what the others build on (the clamp taps that
   split the multiplier, the node the multipliers start from when an Ayrton ring
   stays across the movement, the node the current positions are fed from behind
   the fuse);
2. ``lay_out``: each section adds its segments (the resistances to be made of
   standard values), positions, contacts and devices (diodes, fuses), in the
   registration order, which is the designator order of ``docs/sizing.md``.

A new range kind or protection part is a new file in ``planner/sizing/sections/``
and one entry in its registry; nothing here changes. Node names and dial labels
are those of ``docs/sizing.md`` (section 5).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, ClassVar

from ..model import Position, Spec
from ..units import format_si
from .formulas import voltage_meter
from .request import request_error

__all__ = [
    "COM",
    "PLUS",
    "M_PLUS",
    "M_IN",
    "FUSED",
    "position_label",
    "SegmentPlan",
    "Tap",
    "Device",
    "Layout",
    "SizingSection",
    "lay_out",
]

#: Node names of the sized topology (see docs/sizing.md).
COM, PLUS, M_PLUS, M_IN, FUSED = "com", "plus", "m_plus", "m_in", "a_fused"


def position_label(value: float, unit: str) -> str:
    """The dial label of a range: ``format_si`` without trailing zeros ('2.5 V', '100 mA', '1 kV')."""
    text = format_si(value, unit, 6)
    num, _, rest = text.partition(" ")
    if "." in num and "e" not in num:
        num = num.rstrip("0").rstrip(".")
    return f"{num} {rest}" if rest else num


@dataclass
class SegmentPlan:
    """One resistance the topology needs, before its parts are chosen.

    ``target`` is the ideal resistance [ohm] between ``low`` (nearer the movement
    or the common end) and ``high``; ``line`` the request's line in the file.
    """

    name: str
    role: str
    target: float
    low: str
    high: str
    line: int | None = None


@dataclass(frozen=True)
class Tap:
    """A node that splits the multiplier at ``ohm`` above the movement [ohm] (a clamp tap)."""

    ohm: float
    node: str
    line: int | None = None


@dataclass(frozen=True)
class Device:
    """A part the layout places as it is (no value to choose): a diode, a fuse.

    The assembler numbers devices per designator ``prefix`` in the order they are
    added (``D1``, ``D2``, ``F1``) and makes each as ``make(name, *args)``.
    """

    prefix: str
    make: Any
    args: tuple

    def build(self, name: str):
        """The network element under its designator ``name``."""
        return self.make(name, *self.args)


@dataclass
class Layout:
    """The topology the sections lay out; :func:`planner.sizing.assemble.assemble` names its parts.

    Attributes
    ----------
    meter_i_a, meter_r_ohm : float
        The meter the voltage multipliers see [A], [ohm] (:func:`planner.sizing.formulas.voltage_meter`).
    segments : list of SegmentPlan
        In designator order.
    positions : list of Position
        In switch order.
    contacts : list of (a, b, closed_in)
        In designator order.
    devices : list of Device
        Diodes, fuses, in designator order per prefix.
    clamp_nodes : list of str
        Nodes a clamp holds down; the rating cases take each open and shorted to common.
    ideal : dict
        Position name -> (ideal input resistance [ohm], burden voltage [V] or None).
    taps : list of Tap
        Splits of the multiplier, ascending (declared in the ``prepare`` pass).
    multiplier_base : str
        The node the voltage multipliers start from (declared in the ``prepare`` pass).
    current_feed : str
        The node the current positions' contacts join: ``plus``, or the far side of
        the input protection (declared in the ``prepare`` pass).
    """

    meter_i_a: float
    meter_r_ohm: float
    segments: list[SegmentPlan] = field(default_factory=list)
    positions: list[Position] = field(default_factory=list)
    contacts: list[tuple[str, str, tuple[str, ...]]] = field(default_factory=list)
    devices: list[Device] = field(default_factory=list)
    clamp_nodes: list[str] = field(default_factory=list)
    ideal: dict[str, tuple[float, float | None]] = field(default_factory=dict)
    taps: list[Tap] = field(default_factory=list)
    multiplier_base: str = M_PLUS
    current_feed: str = PLUS
    #: The node the voltage positions' contacts join, and the series resistance ahead of it [ohm]
    #: (input protection: :mod:`planner.sizing.sections.protection`).
    voltage_feed: str = PLUS
    feed_ohm: float = 0.0
    #: (rated current [A], node): current ranges below that full scale are fed from the node (a mA fuse).
    low_current_feed: tuple | None = None
    #: The node the ohms ranges' batteries hang from, and the series resistance ahead of it [ohm]
    #: (an ohms fuse: :mod:`planner.sizing.sections.protection`).
    ohms_feed: str = PLUS
    ohms_feed_ohm: float = 0.0
    #: Crowbars behind a fuse, (node, positions served, input voltage at which the crowbar carries the
    #: fuse's rated current [V]): see :func:`planner.sizing.ratings.rating_cases`.
    crowbars: list[tuple[str, tuple[str, ...], float]] = field(default_factory=list)
    #: Ohms position name -> index of its battery (0: ``battery``, 1: ``high_battery``).
    ohms_battery: dict[str, int] = field(default_factory=dict)


class SizingSection:
    """One section of the sizer's request and what it adds to the layout.

    Subclasses live one per file in ``planner/sizing/sections/`` and are registered
    in :data:`planner.sizing.sections.SECTIONS`; every hook but :meth:`lay_out` is
    optional.

    Attributes
    ----------
    key : str
        The ``Spec`` field the section reads (``voltage``, ``current``, ``clamps``).
    ranges : bool
        True when the section makes switch positions (a range kind's sizing);
        a request needs at least one such section.
    """

    key: ClassVar[str] = ""
    ranges: ClassVar[bool] = False

    def request(self, spec: Spec):
        """The section's part of the spec (None when the project does not ask for it)."""
        return getattr(spec, self.key, None)

    def asked(self, spec: Spec) -> bool:
        """True when the project asks for this section."""
        return self.request(spec) is not None

    def labels(self, spec: Spec) -> list[str]:
        """The dial labels of the positions it will make, in switch order."""
        return []

    def validate(self, spec: Spec) -> None:
        """Refuse what the section cannot build (:func:`planner.sizing.request.request_error`)."""

    def prepare(self, spec: Spec, layout: Layout) -> None:
        """Declare what other sections build on (taps, nodes) before any lays out."""

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        """Add the section's segments, positions, contacts and devices."""
        raise NotImplementedError

    def __repr__(self) -> str:
        return f"{type(self).__name__}()"


def _check_labels(spec: Spec, active) -> None:
    names = [n for s in active for n in s.labels(spec)]
    if len(set(names)) != len(names):
        first = next(s for s in active if s.ranges)
        raise request_error(spec, "two ranges give the same dial label; make the full scales differ",
                            first.request(spec).line)


def lay_out(spec: Spec, sections) -> Layout:
    """The layout of a validated request.

    Parameters
    ----------
    spec : Spec
        A request that passed :func:`planner.sizing.request.validate`.
    sections : sequence of SizingSection
        The registered sections (:data:`planner.sizing.sections.SECTIONS`), in
        designator order.

    Returns
    -------
    Layout

    Raises
    ------
    ProjectError
        Two ranges with the same dial label, or a section's refusal (a multiplier
        that would be zero or negative, a clamp tap beyond the segment it splits).
    """
    active = [s for s in sections if s.asked(spec)]
    i_m, r_m = voltage_meter(spec)
    _check_labels(spec, active)
    layout = Layout(i_m, r_m)
    for section in active:
        section.prepare(spec, layout)
    for section in active:
        section.lay_out(spec, layout)
    return layout
