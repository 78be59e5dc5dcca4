"""The top level of a project file: title, revision, date and the sections, assembled into a Spec.

Each section has its module (:mod:`.movement`, :mod:`.catalogue`, :mod:`.ranges`,
:mod:`.network`, :mod:`.faults`); they are read in the file's documented order so
that the first mistake is the one reported.
"""

from __future__ import annotations

import datetime
import math

from .. import model, values
from ..units import QuantityError, format_si
from .catalogue import read_parts
from .faults import read_analysis, read_faults
from .movement import read_ambient, read_movement
from .network import read_network
from .ranges import read_clamps, read_current, read_voltage
from .reader import Reader
from .tree import Node

__all__ = ["TOP_KEYS", "read_spec", "read_date"]

TOP_KEYS = (
    "title",
    "revision",
    "date",
    "movement",
    "ambient",
    "parts",
    "voltage",
    "current",
    "clamps",
    "faults",
    "network",
    "analysis",
)


def read_spec(ctx: Reader, root: Node) -> model.Spec:
    if root.kind != "map":
        ctx.fail(
            f"the top level must be a mapping of keys ({', '.join(TOP_KEYS[:4])}, ...); it is {root.describe()}",
            root.line,
        )
    top = ctx.mapping(root, "the top level", TOP_KEYS, "title: ...")
    title = top.text("title", example="Workshop bench meter")
    revision = top.text("revision", None, "A")
    date = read_date(ctx, top.get("date"))
    movement = read_movement(ctx, top.req("movement", "{full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}"))
    ambient = read_ambient(ctx, top.get("ambient"))
    parts = read_parts(ctx, top.get("parts"))
    voltage = read_voltage(ctx, top.get("voltage"), top.node.key_lines.get("voltage"))
    current = read_current(ctx, top.get("current"), movement, top.node.key_lines.get("current"), parts)
    clamps = read_clamps(ctx, top.get("clamps"), parts)
    network = read_network(ctx, top.get("network"), parts)
    faults = read_faults(ctx, top.get("faults"))
    analysis = read_analysis(ctx, top.get("analysis"))
    if network is not None and (voltage is not None or current is not None):
        _same_meter(ctx, top, voltage, current, network)
    if voltage is None and current is None and network is None:
        ctx.fail(
            "nothing to plan: give 'voltage:' or 'current:' ranges for the planner to size, or an explicit "
            "'network:' (or both)",
            root.line,
        )
    return model.Spec(
        title=title,
        movement=movement,
        parts=parts,
        ambient=ambient,
        voltage=voltage,
        current=current,
        clamps=clamps,
        faults=faults,
        network=network,
        analysis=analysis,
        revision=revision,
        date=date,
    )


def read_date(ctx: Reader, node: Node | None) -> str | None:
    if node is None:
        return None
    ctx.scalar(node, "date", "2024-03-18")
    if isinstance(node.value, datetime.datetime):
        ctx.fail(f"date is '{node.text}'; give the date alone as YYYY-MM-DD, e.g. 2024-03-18", node.line)
    if isinstance(node.value, datetime.date):
        return node.value.isoformat()
    try:
        return values.calendar_date(node.text or "", "date")
    except QuantityError as e:
        ctx.fail(e.message, node.line)


def _same_meter(ctx: Reader, top, voltage, current, network: model.NetworkSpec) -> None:
    """Ranges to size and an explicit network in one file must describe the same meter.

    The contract allows both sections in one file: the ranges are the request
    ``planner size`` sizes, the network the meter the other commands analyse.
    When the network's positions are not the positions the ranges ask for (each
    measured quantity and full scale), the file describes two meters and every
    command would silently pick one: refused, saying which to remove.
    """
    asked = [("voltage", x) for x in (voltage.full_scales if voltage else ())]
    asked += [("current", x) for x in (current.full_scales if current else ())]
    given = [(p.measures, p.full_scale) for p in network.positions]

    def missing(a, b):
        return [m for m in a if not any(m[0] == n[0] and math.isclose(m[1], n[1], rel_tol=1e-9) for n in b)]

    only_asked, only_given = missing(asked, given), missing(given, asked)
    if not only_asked and not only_given:
        return
    unit = {"voltage": "V", "current": "A"}
    parts = []
    if only_asked:
        parts.append("the ranges ask for " + ", ".join(format_si(x, unit[k]) for k, x in only_asked[:4])
                     + " that the network has no position for")
    if only_given:
        parts.append("the network has " + ", ".join(format_si(x, unit[k]) for k, x in only_given[:4])
                     + " that the ranges do not ask for")
    sections = " and ".join(f"'{k}:'" for k in ("voltage", "current") if top.has(k))
    ctx.fail(
        f"the file gives both {sections} ranges to size (line "
        f"{top.key_line('voltage' if voltage is not None else 'current')}) and an explicit 'network:', and they "
        f"describe different meters ({'; '.join(parts)}); remove {sections} to work on the network as it is, "
        "or remove 'network:' to size the ranges",
        top.key_line("network"),
    )

