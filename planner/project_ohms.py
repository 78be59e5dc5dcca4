"""Project-file sections of the ohms ranges: the ``resistance`` request and a battery's voltages.

Read with the loader's context and mapping readers (:mod:`planner.project`), every error
with file and line.
"""

from __future__ import annotations

from planner import model
from planner.parts.battery import DEFAULT_MAX_CURRENT_A
from planner.units import format_si

RESISTANCE_KEYS = ("centers", "battery", "high_battery", "zero_adjust")
BATTERY_KEYS = ("voltage", "min", "max", "internal_resistance")


def battery_values(ctx, m, where: str) -> tuple[float, float, float, float]:
    """Nominal, min and max EMF [V] and internal resistance [ohm] of a battery, checked min <= nominal <= max."""
    v = m.qty("voltage", "voltage", check="pos", example="1.5 V")
    lo = m.qty("min", "voltage", v, check="pos")
    hi = m.qty("max", "voltage", v, check="pos")
    r = m.qty("internal_resistance", "resistance", check="pos", example="0.5 ohm")
    if not lo <= v <= hi:
        ctx.fail(f"{where}: min {format_si(lo, 'V')}, voltage {format_si(v, 'V')} and max {format_si(hi, 'V')} must "
                 "satisfy min <= voltage <= max; give the end-of-life, nominal and fresh voltage", m.line)
    return v, lo, hi, r


def resistance(ctx, node, key_line: int | None, ascending) -> model.ResistanceRanges | None:
    """The ``resistance`` section (None when absent); ``ascending`` reads a list of ascending quantities."""
    if node is None:
        return None
    ex = "[10 ohm, 100 ohm, 1 kohm]"
    bex = "{voltage: 1.5 V, min: 1.1 V, max: 1.6 V, internal_resistance: 0.5 ohm}"
    m = ctx.mapping(node, "resistance", RESISTANCE_KEYS, f"{{centers: {ex}, battery: {bex}}}")
    centers, _ = ascending(ctx, m.req("centers", ex), "resistance", "resistance.centers", ex)
    bats = []
    for key in ("battery", "high_battery"):
        b = m.sub(key, BATTERY_KEYS, bex)
        if b is None:
            if key == "battery":
                ctx.fail(f"resistance needs a battery, e.g. battery: {bex}", m.line)
            bats.append(None)
            continue
        v, lo, hi, r = battery_values(ctx, b, f"resistance.{key}")
        bats.append(model.BatteryRequest(v, lo, hi, r, b.line))
    adj = m.choice("zero_adjust", ("shunt", "series"), "shunt")
    return model.ResistanceRanges(tuple(centers), bats[0], bats[1], adj, key_line or m.line)


def element(ctx, e, kind: str, name: str, where: str, pair, tempco_bound) -> model.Element:
    """A ``battery`` or ``rheostat`` network element; ``pair`` and ``tempco_bound`` are the loader's readers."""
    if kind == "battery":
        a, b = pair(ctx, e.req("between", "[b_plus, b_minus]"), e.at("between"), "[b_plus, b_minus]")
        v, lo, hi, r = battery_values(ctx, e, where)
        return model.Battery(name=name, a=a, b=b, voltage_v=v, v_min_v=lo, v_max_v=hi, r_int_ohm=r,
                             max_current_a=e.qty("max_current", "current", DEFAULT_MAX_CURRENT_A, check="pos"),
                             line=e.line)
    a, b = pair(ctx, e.req("between", "[m_plus, adj]"), e.at("between"), "[m_plus, adj]")
    rmax = e.qty("max", "resistance", check="pos", example="5 kohm")
    setting = e.qty("setting", "resistance", None, check="nonneg")
    if setting is not None and setting > rmax:
        ctx.fail(f"{where}: setting {format_si(setting, 'ohm')} is beyond its max {format_si(rmax, 'ohm')}; "
                 "give a setting from 0 to max", e.line)
    tc = e.qty("tempco", "tempco", 100e-6)
    tempco_bound(ctx, tc, e, "tempco")
    return model.Rheostat(name=name, a=a, b=b, max_ohm=rmax, setting_ohm=setting, tempco_per_k=tc,
                          power_w=e.qty("power", "power", 0.25, check="pos"), series=e.text("series", None, "E3"),
                          line=e.line)
