"""Resistance (ohms) positions in the dossier: accuracy table, scale and error charts, marks, acceptance.

Renders only what the accuracy check computed for a resistance position
(:mod:`planner.ohms_check`: ``center_ohm``, ``center_error_pct``, ``zero_adjust_span_v``,
``open_circuit_voltage_v``, ``short_circuit_current_a``, ``marks[]``, ``scale_points[]``,
``acceptance[]`` ...). An ohms scale is non-linear and reversed (full deflection at
0 ohm, the infinity mark at rest), so its errors are in % of scale length (the fiducial
value of such a scale, IEC 60051-1, from memory) and its acceptance limits are the values
the arc marks that far either side of the reference resistor's mark.
"""

from __future__ import annotations

from reportlab.platypus import Table

from .. import charts
from ..layout import table
from ..text import pct, pct_abs, quantity, value_text
from .common import axis_scale, mc_histogram, verdict_fill, why
from .context import CHART_H, CHART_W, Context


def is_ohms(q) -> bool:
    """True for a resistance position (a network position or a check entry)."""
    measures = q.get("measures") if isinstance(q, dict) else getattr(q, "measures", None)
    return measures == "resistance"


def accuracy_table(ctx: Context, q: dict) -> Table:
    """Centre, centre error, intrinsic error, temperature, zero span, open-circuit voltage, short-circuit current."""
    cls = ctx.spec.movement.class_index
    lo, hi = q.get("zero_adjust_span_v") or (None, None)
    blo, bhi = q.get("battery_span_v") or (None, None)
    ref = q.get("read_on")
    arc = ("its own arc" if ref in (None, q.get("name")) else
           f"the arc of {ref} x {q.get('scale_factor', 1.0):g}")
    rows = [["Centre (half deflection)", quantity(q.get("center_ohm"), "ohm"),
             f"asked {value_text(q.get('center_target_ohm'), 'ohm')} ({pct(q.get('center_deviation_pct'))}); "
             f"nominal parts and battery, zeroed; read on {arc}"],
            ["Centre error (worst case)", pct_abs(q.get("center_error_pct")) + " of reading",
             f"battery {value_text(blo, 'V')} to {value_text(bhi, 'V')} and {q.get('worst_case_corners', 0)} "
             "tolerance cases, each re-zeroed first"],
            ["Intrinsic error (worst case)", pct_abs(q.get("intrinsic_error_pct", q.get("worst_case_error_pct")))
             + " of scale", f"the same cases at every mark (0.1 to 10 x the centre), % of scale length; class "
             f"index {cls:g} %: " + ("within" if q.get("intrinsic_within_class") else "OUTSIDE")],
            ["Variation due to temperature", pct_abs(q.get("temperature_variation_per_10k_pct")) + " / 10 K",
             f"change of the centre deflection per 10 K, re-zeroed at each ambient; permitted "
             f"{q.get('temperature_permitted_per_10k_pct', cls):g} % per 10 K (IEC 60051-2, from memory): "
             + ("within" if q.get("temperature_within_limit") else "OUTSIDE")],
            ["Class verdict", str(q.get("verdict", "")),
             "intrinsic error and temperature variation within, the adjuster zeroes the whole battery span"],
            ["Zero adjustment span", f"{value_text(lo, 'V')} to {value_text(hi, 'V')}",
             f"battery EMFs the adjuster {q.get('zero_adjuster') or ''} can zero; the battery spans "
             f"{value_text(blo, 'V')} to {value_text(bhi, 'V')}: "
             + ("covered" if q.get("zeroable_over_battery_span") else "NOT covered")],
            ["Open-circuit voltage", quantity(abs(q.get("open_circuit_voltage_v") or 0.0), "V"),
             f"fresh battery, probes open; the {q.get('positive_terminal', '')} terminal is positive on this range"],
            ["Short-circuit current", quantity(q.get("short_circuit_current_a"), "A"),
             "fresh battery, zeroed, probes shorted: what a junction or a fragile part under test may carry"]]
    if q.get("yield_fraction") is not None:
        rows.append(["Monte Carlo yield", f"{100 * q['yield_fraction']:.1f} %",
                     f"{(q.get('monte_carlo') or {}).get('samples', ctx.samples)} builds, battery uniform over its "
                     "span, re-zeroed; within the class at every mark"])
    fill = "ok" if q.get("verdict") == "within class" else "overstress"
    return table(["Accuracy", "Value", "Basis"], rows, [0.27, 0.17, 0.56], align="lrl",
                 extra=verdict_fill([(1, 5, fill)]))


def _log_axis(q: dict, unit: str):
    """The SI prefix of the position's centre for a log axis of R_x (the centre reads as 1 to 999)."""
    scale, prefix = axis_scale(float(q.get("center_target_ohm") or q.get("center_ohm") or 1.0))
    return scale, f"{prefix}{unit}"


def scale_chart(ctx: Context, q: dict):
    """The ohms scale: nominal deflection against R_x (log axis), reversed and non-linear."""
    pts = [x for x in (q.get("scale_points") or []) if x.get("r_ohm", 0.0) > 0.0]
    if not pts:
        return charts.message_drawing(CHART_W, CHART_H, "Ohms scale", why(ctx, "check"))
    scale, unit = _log_axis(q, "ohm")
    x = [v["r_ohm"] / scale for v in pts]
    y = [100.0 * v["deflection"] for v in pts]
    centre = float(q.get("center_ohm") or 0.0) / scale
    return charts.line_chart(CHART_W, CHART_H, "Ohms scale: deflection against the resistance", f"R_x [{unit}]",
                             "deflection [% of scale length]",
                             [charts.Series("nominal scale (solved; nominal battery, zeroed)", x, y)],
                             log_x=True, vlines=[(centre, "centre")], hlines=[(50.0, "")])


def error_chart(ctx: Context, q: dict):
    """Error at the marks in % of scale length: nominal parts (nominal battery) and the worst case."""
    marks, lin = q.get("marks") or [], q.get("linearity") or []
    if not marks:
        return charts.message_drawing(CHART_W, CHART_H, "Error over the scale", why(ctx, "check"))
    cls = ctx.spec.movement.class_index
    scale, unit = _log_axis(q, "ohm")
    x = [m["applied_ohm"] / scale for m in marks]
    s = [charts.Series("worst case (battery span, tolerances)", x, [m["scale_error_pct"] for m in marks],
                       markers=True)]
    if len(lin) == len(marks):
        s.append(charts.Series("nominal parts and battery", x, [r["error_pct"] for r in lin], markers=True))
    return charts.line_chart(CHART_W, CHART_H, "Error over the scale (re-zeroed)", f"R_x [{unit}]",
                             "error [% of scale length]", s, log_x=True,
                             bands=[charts.Band(-cls, cls, f"class {cls:g} limits")])


def mc_chart(ctx: Context, name: str, q: dict):
    """Histogram of the centre error of the Monte Carlo builds [% of scale length]."""
    return mc_histogram(ctx, name, q, "Monte Carlo: error at the centre of the builds",
                        "error at the centre [% of scale length]")


def marks_table(ctx: Context, q: dict) -> Table:
    """The marks: nominal reading, worst error in % of reading and in % of scale length."""
    lin = q.get("linearity") or []
    rows = []
    for k, m in enumerate(q.get("marks") or []):
        nominal = lin[k]["reading"] if k < len(lin) else None
        rows.append([quantity(m["applied_ohm"], "ohm"), quantity(nominal, "ohm"),
                     pct_abs(m["reading_error_pct"]) + " of reading", pct_abs(m["scale_error_pct"]) + " of scale"])
    return table(["R_x", "Nominal reading", "Worst error", "Worst error"], rows, [0.2, 0.2, 0.3, 0.3],
                 align="rrrr")


# --- build and acceptance -------------------------------------------------------------------------------------
def zeroing_step(ctx: Context, positions) -> str:
    """The calibration step of the ohms ranges: zero, then the reference resistors."""
    names = ", ".join(q.name for q in positions)
    adj = sorted({c.get("zero_adjuster") for c in (ctx.check_position(q.name) or {} for q in positions)} - {None})
    how = f"set the zero adjuster ({', '.join(adj)})" if adj else "check"
    return (f"Ohms ranges last: {names}. Fit a battery within its span; on each range short the probes and {how} "
            "for full deflection (the 0 ohm mark), then connect the reference resistors of the acceptance table "
            "and read them on the ohms arc. Re-zero whenever the range or the battery changes.")


def acceptance_rows(ctx: Context, q) -> tuple[list, list]:
    """Acceptance rows of one resistance position and the names of points already outside their limits.

    Rows as the linear ranges' (position, apply, expect, tolerance, limits, measured, pass):
    the reference resistor, the nominal reading (nominal battery, re-zeroed), the class in %
    of scale length and the values the arc marks at those limits.
    """
    c = ctx.check_position(q.name) or {}
    cls = ctx.spec.movement.class_index
    rows, outside = [], []
    for a in c.get("acceptance") or []:
        inside = a["low_ohm"] <= a["expect_ohm"] <= a["high_ohm"]
        if not inside:
            outside.append(f"{q.name} at {quantity(a['applied_ohm'], 'ohm')}")
        rows.append([q.name, quantity(a["applied_ohm"], "ohm"), quantity(a["expect_ohm"], "ohm") + ("" if inside
                     else " !"), f"\u00b1 {cls:g} % of scale",
                     f"{quantity(a['low_ohm'], 'ohm')} to {quantity(a['high_ohm'], 'ohm')}", "", ""])
    return rows, outside


def reference_resistors(ctx: Context, positions) -> str | None:
    """The instruments line for the ohms ranges' acceptance tests."""
    values = sorted({a["applied_ohm"] for q in positions for a in (ctx.check_position(q.name) or {}).get(
        "acceptance") or []})
    if not values:
        return None
    cls = ctx.spec.movement.class_index
    return ("Reference resistors (or a resistance decade box) of " + ", ".join(value_text(v, "ohm") for v in values)
            + f", tolerance at most {cls / 4:g} % (a quarter of the class), and a shorting link for zeroing.")
