"""The ``network:`` section: an explicit network of elements and switch positions.

Each element's keys are read by its part kind (``planner.parts``: the class of
``parts.KINDS`` for its ``kind``, its ``file_keys`` and ``read``); this module
checks what spans elements: unique names, exactly one movement, position inputs on
nodes of the network and contacts closed in positions that exist.
"""

from __future__ import annotations

from .. import model
from ..parts import KINDS
from .limits import MAX_ELEMENTS, MAX_POSITIONS
from .reader import Reader, capped, distinct_name, pair, suggest
from .tree import Node

__all__ = ["NETWORK_KEYS", "ELEMENT_KEYS", "POSITION_KEYS", "read_network"]

NETWORK_KEYS = ("contact_style", "elements", "positions")
#: Keys of a network element by its ``kind`` (each part kind's ``file_keys``).
ELEMENT_KEYS = {kind: cls.file_keys for kind, cls in KINDS.items()}
POSITION_KEYS = ("name", "measures", "full_scale", "center", "input", "scale")
#: The element key that names switch positions (checked against ``network.positions``).
_POSITION_REFS = "closed_in"


def read_network(ctx: Reader, node: Node | None, parts: model.Parts) -> model.NetworkSpec | None:
    """The explicit network, or None when the file has no ``network:``."""
    if node is None:
        return None
    m = ctx.mapping(node, "network", NETWORK_KEYS, "{elements: [...], positions: [...]}")
    style = m.choice("contact_style", ("make_before_break", "break_before_make"), None)
    el_ex = "[{name: R1, kind: resistor, between: [vin, t1], value: 9.8 kohm}, ...]"
    pos_ex = "[{name: '2.5 V', measures: voltage, full_scale: 2.5 V, input: [vin, com]}]"
    el_items = ctx.seq(m.req("elements", el_ex), "network.elements", el_ex)
    capped(ctx, el_items, MAX_ELEMENTS, "network.elements", "elements", m.key_line("elements"))
    if not el_items:
        ctx.fail(f"network.elements is empty; list the meter's parts, e.g. {el_ex}", m.key_line("elements"))
    pos_items = ctx.seq(m.req("positions", pos_ex), "network.positions", pos_ex)
    capped(ctx, pos_items, MAX_POSITIONS, "network.positions", "positions", m.key_line("positions"))
    if not pos_items:
        ctx.fail(f"network.positions is empty; list the switch positions, e.g. {pos_ex}", m.key_line("positions"))

    elements, closed_refs = _elements(ctx, m, el_items, parts)
    nodes = {n for el in elements for n in el.nodes}
    positions, pnames = _positions(ctx, pos_items, pos_ex, nodes)
    for el_name, pn in closed_refs:
        ref = pn.text.strip() if pn.text else ""
        if ref not in pnames:
            ctx.fail(
                f"network element '{el_name}': closed_in names position '{ref}', which is not in network.positions"
                f"{suggest(ref, pnames)}; positions: {', '.join(pnames)}",
                pn.line,
            )
    return model.NetworkSpec(elements=tuple(elements), positions=tuple(positions), contact_style=style)


def _elements(ctx: Reader, m, el_items: list[Node], parts: model.Parts):
    """The elements, each read by its kind, and the (element, position node) references of contacts."""
    elements: list[model.Element] = []
    keys: dict[str, tuple[str, int]] = {}
    closed_refs: list[tuple[str, Node]] = []
    movement_line: int | None = None
    for i, item in enumerate(el_items, 1):
        e = ctx.mapping(
            item, f"network.elements[{i}]", tuple(item.value) if item.kind == "map" else (), "{name: R1, ...}"
        )
        name = e.text("name", example="R1")
        where = f"network element '{name}'"
        distinct_name(ctx, name, e.line, keys, "element")
        e.where = where
        kind = e.choice("kind", tuple(ELEMENT_KEYS))
        allowed = ELEMENT_KEYS[kind]
        for k, kline in item.key_lines.items():
            if k not in allowed:
                ctx.unknown_key(k, f"{where} ({kind})", allowed, kline)
        if kind == model.MovementElement.kind:
            if movement_line is not None:
                ctx.fail(
                    f"{where} is a second movement (the first is at line {movement_line}); a network has exactly "
                    "one movement element",
                    e.line,
                )
            movement_line = e.line
        elements.append(KINDS[kind].read(e, name, parts))
        if _POSITION_REFS in allowed:
            closed_refs.extend((name, pn) for pn in e.get(_POSITION_REFS).value)
    if movement_line is None:
        ctx.fail(
            "network has no movement element; add one, e.g. {name: M1, kind: movement, between: [m_plus, com]}",
            m.key_line("elements"),
        )
    return elements, closed_refs


def _positions(ctx: Reader, pos_items: list[Node], pos_ex: str, nodes: set[str]):
    """The switch positions and their names, in order."""
    positions: list[model.Position] = []
    keys: dict[str, tuple[str, int]] = {}
    for i, item in enumerate(pos_items, 1):
        p = ctx.mapping(item, f"network.positions[{i}]", POSITION_KEYS, pos_ex[1:-1])
        name = p.text("name", example="'2.5 V'")
        distinct_name(ctx, name, p.line, keys, "position")
        p.where = f"position '{name}'"
        measures = p.choice("measures", ("voltage", "current", "resistance", "ac_voltage", "ac_current"))
        center = None
        if measures == "resistance":  # an ohms range has a centre value, no full scale
            center = fs = p.qty("center", "resistance", check="pos", example="1 kohm")
        else:
            fs = p.qty("full_scale", measures.removeprefix("ac_"), check="pos")
        scale = p.choice("scale", ("shared", "own"), "shared")
        if scale != "shared" and not measures.startswith("ac_"):
            ctx.fail(f"{p.at('scale')}: an own scale is for AC positions (measures: ac_voltage or ac_current); "
                     "remove scale or change measures", p.get("scale").line)
        inp_node = p.req("input", "[vin, com]")
        inp = pair(ctx, inp_node, p.at("input"), "[vin, com]")
        for nd in inp:
            if nd not in nodes:
                ctx.fail(
                    f"{p.at('input')}: node '{nd}' appears in no element{suggest(nd, sorted(nodes))}; "
                    "use a node of the network",
                    inp_node.line,
                )
        positions.append(model.Position(name=name, measures=measures, full_scale=fs, input=inp, line=p.line,
                                        center=center, scale=scale))
    return positions, [p.name for p in positions]
