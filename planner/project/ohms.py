"""The ``resistance`` section of a project file: the ohms ranges the sizer makes (docs/ohms.md)."""

from __future__ import annotations

from .. import model
from ..parts.battery import battery_values
from .ranges import _ascending
from .reader import Reader
from .tree import Node

__all__ = ["RESISTANCE_KEYS", "BATTERY_KEYS", "read_resistance"]

RESISTANCE_KEYS = ("centers", "battery", "high_battery", "zero_adjust")
BATTERY_KEYS = ("voltage", "min", "max", "internal_resistance")


def read_resistance(ctx: Reader, node: Node | None, key_line: int | None) -> model.ResistanceRanges | None:
    """The ``resistance`` section (None when absent), every error with file and line."""
    if node is None:
        return None
    ex = "[10 ohm, 100 ohm, 1 kohm]"
    bex = "{voltage: 1.5 V, min: 1.2 V, max: 1.6 V, internal_resistance: 0.5 ohm}"
    m = ctx.mapping(node, "resistance", RESISTANCE_KEYS, f"{{centers: {ex}, battery: {bex}}}")
    centers, _ = _ascending(ctx, m.req("centers", ex), "resistance", "resistance.centers", ex)
    bats = []
    for key in ("battery", "high_battery"):
        b = m.sub(key, BATTERY_KEYS, bex)
        if b is None:
            if key == "battery":
                ctx.fail(f"resistance needs a battery, e.g. battery: {bex}", m.line)
            bats.append(None)
            continue
        v, lo, hi, r = battery_values(b, f"resistance.{key}")
        bats.append(model.BatteryRequest(v, lo, hi, r, b.line))
    adj = m.choice("zero_adjust", ("shunt", "series"), "shunt")
    return model.ResistanceRanges(tuple(centers), bats[0], bats[1], adj, key_line or m.line)
