"""The network from a layout and its chosen values: designators, elements, positions.

Designators as in ``docs/sizing.md`` (section 6): ``R1..`` segment by segment in
the layout's order (within a segment from its lower node upward), ``M1``, the
devices numbered per prefix (``D1..``, ``F1``), then the contacts ``S1..``.
"""

from __future__ import annotations

from ..model import Contact, MovementElement, NetworkSpec, Resistor, Spec
from .layout import COM, M_PLUS, Layout, SegmentPlan
from .request import line_of_key
from .values import Choice

__all__ = ["PartRow", "assemble"]

#: One resistor of a segment as assembled: (designator, value [ohm], upper node, lower node).
PartRow = tuple[str, float, str, str]


def _segment_resistors(spec: Spec, sp: SegmentPlan, ch: Choice, rating: tuple[float, float], series: str,
                       first: int) -> tuple[list[Resistor], list[PartRow]]:
    """The resistors of one segment, numbered from ``R<first + 1>``, from its lower node upward."""
    rp = spec.parts.resistors
    p_w, v_max = rating
    names, n = [], first
    for unit in ch.units:
        names.append([f"R{n + i + 1}" for i in range(len(unit))])
        n += len(unit)
    nodes = [sp.low] + [f"{names[i][0].lower()}_{names[i + 1][0].lower()}" for i in range(len(names) - 1)] + [sp.high]
    ach = ch.value
    elements, parts = [], []
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
    return elements, parts


def assemble(spec: Spec, layout: Layout, choices: list[Choice], ratings: list[tuple[float, float]],
             series: str) -> tuple[NetworkSpec, list[list[PartRow]]]:
    """Elements with designators from the layout and one Choice per segment.

    Parameters
    ----------
    spec : Spec
    layout : Layout
    choices : list of Choice
        One per segment of the layout, in its order.
    ratings : list of (float, float)
        Per segment, the rating of each of its parts: power [W], limiting voltage [V].
    series : str
        The IEC 60063 series the values come from.

    Returns
    -------
    net : NetworkSpec
    seg_parts : list of list of PartRow
        Per segment, its resistors as (designator, value, a, b).
    """
    elements = []
    seg_parts: list[list[PartRow]] = []
    n = 0
    for sp, ch, rating in zip(layout.segments, choices, ratings):
        resistors, parts = _segment_resistors(spec, sp, ch, rating, series, n)
        elements += resistors
        seg_parts.append(parts)
        n += len(resistors)
    elements.append(MovementElement("M1", M_PLUS, COM, line_of_key(spec, "movement")))
    count: dict[str, int] = {}
    for device in layout.devices:
        count[device.prefix] = count.get(device.prefix, 0) + 1
        elements.append(device.build(f"{device.prefix}{count[device.prefix]}"))
    for j, (a, b, closed) in enumerate(layout.contacts, 1):
        elements.append(Contact(f"S{j}", a, b, tuple(closed)))
    net = NetworkSpec(tuple(elements), tuple(layout.positions), None)
    return net, seg_parts
