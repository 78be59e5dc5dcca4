"""The top level of a project file: title, revision, date and the sections, assembled into a Spec.

Each section has its module (:mod:`.movement`, :mod:`.catalogue`, :mod:`.ranges`,
:mod:`.network`, :mod:`.faults`); they are read in the file's documented order so
that the first mistake is the one reported.
"""

from __future__ import annotations

import datetime

from .. import model, values
from ..units import QuantityError
from .catalogue import read_parts
from .faults import read_analysis, read_faults
from .movement import read_ambient, read_movement
from .network import read_network
from .ohms import read_resistance
from .protection import read_protection
from .ranges import read_ac_ranges, read_clamps, read_current, read_voltage
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
    "resistance",
    "clamps",
    "faults",
    "network",
    "analysis",
    "ac_voltage",
    "ac_current",
    "protection",
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
    resistance = read_resistance(ctx, top.get("resistance"), top.node.key_lines.get("resistance"))
    clamps = read_clamps(ctx, top.get("clamps"), parts)
    ac_voltage = read_ac_ranges(ctx, top.get("ac_voltage"), "ac_voltage", parts, top.node.key_lines.get("ac_voltage"))
    ac_current = read_ac_ranges(ctx, top.get("ac_current"), "ac_current", parts, top.node.key_lines.get("ac_current"))
    network = read_network(ctx, top.get("network"), parts)
    faults = read_faults(ctx, top.get("faults"))
    analysis = read_analysis(ctx, top.get("analysis"))
    protection = read_protection(ctx, top.get("protection"), parts)
    if (voltage is None and current is None and resistance is None and network is None and ac_voltage is None
            and ac_current is None):
        ctx.fail(
            "nothing to plan: give 'voltage:', 'current:', 'resistance:', 'ac_voltage:' or 'ac_current:' ranges for "
            "the planner to size, or an explicit 'network:' (or both)",
            root.line,
        )
    return model.Spec(
        title=title,
        movement=movement,
        parts=parts,
        ambient=ambient,
        voltage=voltage,
        current=current,
        resistance=resistance,
        clamps=clamps,
        ac_voltage=ac_voltage,
        ac_current=ac_current,
        faults=faults,
        network=network,
        analysis=analysis,
        protection=protection,
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
