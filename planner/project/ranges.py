"""The sizing request sections: ``voltage:``, ``current:``, ``ac_voltage:``, ``ac_current:`` ranges and ``clamps:``.

The sizer (:mod:`planner.sizing`) lays these out as a network; here they are read
and checked on their own: full scales rising, current ranges above the movement's
full-scale current, models named that the catalogue defines.
"""

from __future__ import annotations

from .. import model
from ..units import format_si
from .limits import MAX_POSITIONS
from .reader import Reader, capped, model_ref
from .tree import Node

__all__ = ["VOLTAGE_KEYS", "CURRENT_KEYS", "CLAMP_KEYS", "CLAMP_AT_KEYS", "read_voltage", "read_current",
           "read_clamps", "read_ac_ranges", "AC_KEYS", "diode_ref", "fuse_ref"]

VOLTAGE_KEYS = ("arrangement", "full_scales")
CURRENT_KEYS = ("arrangement", "full_scales", "ring_on_voltage", "swamp", "fuse")
AC_KEYS = ("arrangement", "full_scales", "rectifier", "diode", "scale", "swamp")
CLAMP_KEYS = ("across", "at", "forward", "reverse", "count", "bidirectional")
CLAMP_AT_KEYS = ("above_movement",)


#: Relative distance from I_fs within which a current range is the bare movement.
BARE_RANGE_REL = 1e-9


def _ascending(ctx: Reader, node: Node, dim: str, where: str, example: str) -> tuple[list[float], list[Node]]:
    items = capped(ctx, ctx.seq(node, where, example), MAX_POSITIONS, where, "ranges", node.line)
    if not items:
        ctx.fail(f"{where} is an empty list; give at least one range, e.g. {example}", node.line)
    values: list[float] = []
    for i, item in enumerate(items, 1):
        x = ctx.qty(item, dim, f"{where}[{i}]", "pos")
        if values and x <= values[-1]:
            ctx.fail(
                f"{where}: '{item.text}' does not rise above '{items[i - 2].text}' before it; list the ranges "
                "from the lowest to the highest, each once",
                item.line,
            )
        values.append(x)
    return values, items


def read_voltage(ctx: Reader, node: Node | None, key_line: int | None) -> model.VoltageRanges | None:
    if node is None:
        return None
    ex = "[0.5 V, 2.5 V, 10 V]"
    m = ctx.mapping(node, "voltage", VOLTAGE_KEYS, f"{{arrangement: chain, full_scales: {ex}}}")
    arr = m.choice("arrangement", ("chain", "separate"))
    fs, _ = _ascending(ctx, m.req("full_scales", ex), "voltage", "voltage.full_scales", ex)
    return model.VoltageRanges(arrangement=arr, full_scales=tuple(fs), line=key_line or m.line)


def read_current(
    ctx: Reader, node: Node | None, movement: model.Movement, key_line: int | None, parts: model.Parts
) -> model.CurrentRanges | None:
    if node is None:
        return None
    ex = "[1 mA, 10 mA, 100 mA]"
    m = ctx.mapping(node, "current", CURRENT_KEYS, f"{{arrangement: ring, full_scales: {ex}}}")
    arr = m.choice("arrangement", ("ring", "separate"))
    fs, items = _ascending(ctx, m.req("full_scales", ex), "current", "current.full_scales", ex)
    for x, item in zip(fs, items):
        if x < movement.i_fs_a * (1.0 - BARE_RANGE_REL):
            ctx.fail(
                f"current.full_scales: '{item.text}' is below the movement's full-scale current "
                f"{format_si(movement.i_fs_a, 'A')}; a shunt can only raise the range, so every current range "
                "must be at least I_fs (I_fs itself is the bare movement)",
                item.line,
            )
    ring_on_v = m.choice("ring_on_voltage", ("switched_out", "across"), "switched_out")
    swamp = m.qty("swamp", "resistance", 0.0, check="nonneg")
    fuse_node = m.get("fuse")
    fuse = None if fuse_node is None else fuse_ref(ctx, fuse_node, parts, "current.fuse")
    return model.CurrentRanges(
        arrangement=arr,
        full_scales=tuple(fs),
        ring_on_voltage=ring_on_v,
        swamp_ohm=swamp,
        fuse=fuse,
        line=key_line or m.line,
    )


def read_ac_ranges(ctx: Reader, node: Node | None, key: str, parts: model.Parts,
                   key_line: int | None) -> model.ACRanges | None:
    """``ac_voltage`` / ``ac_current``: rectifier ranges, full scales in rms of a sine."""
    if node is None:
        return None
    volts = key == "ac_voltage"
    ex = "[10 V, 50 V, 250 V]" if volts else "[10 mA, 100 mA, 1 A]"
    arrangements = ("chain", "separate") if volts else ("separate", "ring")
    m = ctx.mapping(node, key, AC_KEYS, f"{{arrangement: {arrangements[0]}, full_scales: {ex}, rectifier: bridge, "
                                        "diode: si_generic}")
    arr = m.choice("arrangement", arrangements)
    fs, _ = _ascending(ctx, m.req("full_scales", ex), "voltage" if volts else "current", f"{key}.full_scales", ex)
    rect = m.choice("rectifier", ("bridge", "half_wave"), "bridge")
    diode = diode_ref(ctx, m.req("diode", "si_generic"), parts, f"{key}.diode")
    scale = m.choice("scale", ("shared", "own"), "shared")
    swamp = m.qty("swamp", "resistance", 0.0, check="nonneg")
    if volts and swamp:
        ctx.fail("ac_voltage.swamp: the multiplier already swamps the rectifier of a voltage range; remove swamp "
                 "(it is for ac_current)", m.get("swamp").line)
    return model.ACRanges(arrangement=arr, full_scales=tuple(fs), rectifier=rect, diode=diode, scale=scale,
                          line=key_line or m.line, swamp_ohm=swamp)


def diode_ref(ctx: Reader, node: Node, parts: model.Parts, where: str) -> str:
    return model_ref(ctx, node, parts.diodes, "diode", where, "si_generic")


def fuse_ref(ctx: Reader, node: Node, parts: model.Parts, where: str) -> str:
    return model_ref(ctx, node, parts.fuses, "fuse", where, "f_100ma")


def read_clamps(ctx: Reader, node: Node | None, parts: model.Parts) -> tuple[model.ClampRequest, ...]:
    if node is None:
        return ()
    ex = "[{across: movement, forward: si_generic, reverse: si_generic}]"
    out = []
    for i, item in enumerate(ctx.seq(node, "clamps", ex), 1):
        where = f"clamps[{i}]"
        m = ctx.mapping(item, where, CLAMP_KEYS, "{across: movement, forward: si_generic, reverse: si_generic}")
        if m.has("across") == m.has("at"):
            ctx.fail(f"{where} needs exactly one of 'across: movement' (or 'across: ring') or "
                     "'at: {above_movement: 10 kohm}'", m.line)
        at: str | float
        if m.has("across"):
            at = m.choice("across", ("movement", "ring"))
        else:
            sub = m.sub("at", CLAMP_AT_KEYS, "{above_movement: 10 kohm}")
            assert sub is not None
            at = sub.qty("above_movement", "resistance", check="pos")
        fwd = diode_ref(ctx, m.get("forward"), parts, m.at("forward")) if m.has("forward") else None
        rev = diode_ref(ctx, m.get("reverse"), parts, m.at("reverse")) if m.has("reverse") else None
        if fwd is None and rev is None:
            ctx.fail(f"{where} has no diode; give 'forward:' and/or 'reverse:' with a model from parts.diodes", m.line)
        count = m.integer("count", 1, 1, 50, "2")
        bidir = m.boolean("bidirectional", False)
        if bidir and (fwd is None or rev is None):
            ctx.fail(f"{where}: a bidirectional clamp is a string of back-to-back pairs; give both 'forward:' and "
                     "'reverse:' (zener or TVS models with a breakdown_voltage)", m.line)
        out.append(model.ClampRequest(at=at, forward=fwd, reverse=rev, count=count, line=m.line, bidirectional=bidir))
    return tuple(out)
