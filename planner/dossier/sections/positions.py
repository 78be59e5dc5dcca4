"""One page per switch position: accuracy table, charts and linearity table (section 5)."""

from __future__ import annotations

import numpy as np
from reportlab.platypus import PageBreak, Spacer, Table, TableStyle

from .. import charts
from ..layout import Heading, caution_box, p, table
from ..text import celsius, hazard_reminder, pct, pct_abs, quantity, value_text
from .context import CHART_H, CHART_W, Context
from .common import axis_scale, error_note, hazardous_position, verdict_fill, why


# --- 5: positions -------------------------------------------------------------------------------------------
def _protection_curves(ctx: Context, name: str) -> list[dict]:
    out = []
    for c in (ctx.faults or {}).get("protection_curves", []) or []:
        if str(c.get("position")) == name:
            out.append(c)
    return out


def _position_charts(ctx: Context, name: str, q: dict | None, pos) -> list:
    cls = ctx.spec.movement.class_index
    unit = pos.unit if pos is not None else (q or {}).get("unit", "")
    fs = pos.full_scale if pos is not None else (q or {}).get("full_scale", 1.0)
    scale, prefix = axis_scale(fs)
    charts_ = []
    # linearity
    if q and q.get("linearity"):
        lin = q["linearity"]
        hot = q.get("linearity_hot") or []
        s = [charts.Series(f"reference {celsius(ctx.spec.ambient.t_ref_k)}", [r["applied"] / scale for r in lin],
                           [r["error_pct"] for r in lin], markers=True)]
        if hot:
            s.append(charts.Series(f"hottest {celsius(q.get('hot_temperature_k', ctx.spec.ambient.t_max_k))}",
                                   [r["applied"] / scale for r in hot], [r["error_pct"] for r in hot], markers=True))
        charts_.append(charts.line_chart(CHART_W, CHART_H, "Linearity: error over the scale",
                                         f"applied [{prefix}{unit}]", "error [% of full scale]", s,
                                         bands=[charts.Band(-cls, cls, f"class {cls:g} limits")]))
    else:
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Linearity", why(ctx, "check")))
    # protection
    curves = _protection_curves(ctx, name)
    if curves:
        charts_.append(_protection_chart(ctx, curves))
    else:
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Protection curve", why(ctx, "faults",
                                              "no protection curve for this position")))
    # temperature
    if q and q.get("temperature_points"):
        tp = q["temperature_points"]
        charts_.append(charts.line_chart(
            CHART_W, CHART_H, "Temperature: change of the full-scale reading", "ambient [\u00b0C]",
            "change [% of full scale]",
            [charts.Series("full-scale reading", [t["temperature_k"] - 273.15 for t in tp],
                           [t["change_pct"] for t in tp], markers=True)],
            bands=[charts.Band(-cls, cls, f"class {cls:g} limits")],
            vlines=[(ctx.spec.ambient.t_ref_k - 273.15, "ref")]))
    else:
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Temperature", why(ctx, "check")))
    # Monte Carlo
    charts_.append(_mc_chart(ctx, name, q, cls))
    grid = Table([[charts_[0], charts_[1]], [charts_[2], charts_[3]]], colWidths=[CHART_W + 6] * 2,
                 hAlign="LEFT")
    grid.setStyle(TableStyle([("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 6),
                              ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 6),
                              ("VALIGN", (0, 0), (-1, -1), "TOP")]))
    return [grid]


def _protection_chart(ctx: Context, curves: list[dict]):
    """|movement current| / I_fs against the applied input, with and without the clamps (log scale)."""
    i_fs = ctx.spec.movement.i_fs_a
    series = []
    unit = "V"
    for c in curves:
        xs = c.get("applied")
        if not isinstance(xs, list) or not xs:
            continue
        unit = c.get("unit") or unit
        scale, prefix = axis_scale(max(abs(float(x)) for x in xs))
        x = [float(v) / scale for v in xs]
        with_c = c.get("movement_current_a")
        without = c.get("movement_current_unclamped_a")
        if isinstance(with_c, list) and c.get("has_clamps", True):
            series.append(charts.Series("with clamps", x, [abs(float(v)) / i_fs for v in with_c]))
        if isinstance(without, list):
            series.append(charts.Series("without clamps", x, [abs(float(v)) / i_fs for v in without]))
        elif isinstance(with_c, list) and not c.get("has_clamps", True):
            series.append(charts.Series("no clamps fitted", x, [abs(float(v)) / i_fs for v in with_c]))
        unit = f"{prefix}{unit}"
        break
    if not series:
        return charts.message_drawing(CHART_W, CHART_H, "Protection curve", "no curve data")
    ol = ctx.spec.movement.overload
    return charts.line_chart(CHART_W, CHART_H, "Protection: movement current against input",
                             f"applied [{unit}]", "|movement current| [x I_fs]", series, log_y=True,
                             y_floor=1e-2, hlines=[(ol.peg, "end stop"), (ol.short_time, "short-time limit")])


def _mc_chart(ctx: Context, name: str, q: dict | None, cls: float):
    """Histogram of the full-scale errors of the accuracy check's Monte Carlo builds."""
    arr = ctx.arrays(name)
    if not q or arr is None or arr.mc_error_pct.size == 0:
        return charts.message_drawing(CHART_W, CHART_H, "Monte Carlo", why(ctx, "check"))
    err = arr.mc_error_pct
    lo, hi = float(np.min(err)), float(np.max(err))
    if hi - lo < 1e-9:
        lo, hi = lo - 0.01, hi + 0.01
    edges = np.linspace(lo, hi, 25)
    counts, _ = np.histogram(err, bins=edges)
    mc = (q.get("monte_carlo") or {}).get("full_scale_error_pct") or {}
    note = (f"yield {100 * q.get('yield_fraction', float('nan')):.1f} % of {ctx.samples} builds; "
            f"mean {mc.get('mean', float('nan')):+.3f} %, sd {mc.get('std', float('nan')):.3f} %")
    limits = [(v, lab) for v, lab in ((-cls, f"-{cls:g} %"), (cls, f"+{cls:g} %"))
              if lo - 1.5 * (hi - lo) <= v <= hi + 1.5 * (hi - lo)]
    return charts.histogram(CHART_W, CHART_H, "Monte Carlo: full-scale error of the builds",
                            "error at full scale [% of full scale]", list(edges), list(counts), limits=limits,
                            note=note)


def _accuracy_table(ctx: Context, q: dict) -> Table:
    cls = ctx.spec.movement.class_index
    amb = ctx.spec.ambient
    rows = [["Nominal error at full scale", pct(q.get("nominal_error_pct")),
             "nominal parts, reference temperature, clamp leakage included"],
            ["Intrinsic error (worst case)", pct_abs(q.get("intrinsic_error_pct", q.get("worst_case_error_pct"))),
             f"{q.get('worst_case_method', '')} over {len(q.get('worst_case_parameters') or [])} toleranced "
             f"parameters at the reference temperature (nominal offset included); class index {cls:g} %: "
             + ("within" if q.get("intrinsic_within_class") else "OUTSIDE")],
            ["Variation due to temperature", pct_abs(q.get("temperature_variation_per_10k_pct")) + " / 10 K",
             f"largest change of the reading per 10 K of ambient; permitted "
             f"{q.get('temperature_permitted_per_10k_pct', cls):g} % per 10 K (IEC 60051-2, from memory): "
             + ("within" if q.get("temperature_within_limit") else "OUTSIDE")],
            ["Class verdict", str(q.get("verdict", "")), "intrinsic error and temperature variation both within"],
            ["Temperature change over the ambient range", pct_abs(q.get("temperature_error_pct")),
             f"largest change of the full-scale reading, {celsius(amb.t_min_k)} to {celsius(amb.t_max_k)}"],
            ["Budget margin (extra)", pct(q.get("budget_margin_pct")),
             f"class index minus budget {pct_abs(q.get('budget_pct'))} (worst case + the whole temperature "
             "change); decides nothing by itself"]]
    mc = (q.get("monte_carlo") or {}).get("full_scale_error_pct") or {}
    if q.get("yield_fraction") is not None:
        rows.append(["Monte Carlo yield", f"{100 * q['yield_fraction']:.1f} %",
                     f"{(q.get('monte_carlo') or {}).get('samples', ctx.samples)} builds at the reference "
                     f"temperature; 1 % to 99 %: {pct(mc.get('p1'))} to {pct(mc.get('p99'))}"
                     + (f"; 99 % of builds within \u00b1{pct_abs(q['intrinsic_monte_carlo_pct'])}"
                        if q.get("intrinsic_monte_carlo_pct") is not None else "")])
    if q.get("measures") == "voltage" and q.get("input_resistance_ohm") is not None:
        rows.append(["Input resistance", value_text(q["input_resistance_ohm"], "ohm"),
                     f"{value_text(q.get('ohms_per_volt'), 'ohm/V')} at full scale"])
    if q.get("burden_voltage_v") is not None:
        rows.append(["Burden voltage at full scale", value_text(q["burden_voltage_v"], "V"),
                     f"input resistance {value_text(q.get('input_resistance_ohm'), 'ohm')}"])
    fill = "ok" if q.get("verdict") == "within class" else "overstress"
    return table(["Accuracy", "Value", "Basis"], rows, [0.33, 0.15, 0.52], align="lrl",
                 extra=verdict_fill([(1, 4, fill)]))


def _linearity_table(ctx: Context, q: dict, pos) -> Table:
    unit = pos.unit
    lin, hot = q.get("linearity") or [], q.get("linearity_hot") or []
    rows = []
    for k, r in enumerate(lin):
        h = hot[k] if k < len(hot) else {}
        rows.append([quantity(r["applied"], unit), quantity(r["reading"], unit), pct(r["error_pct"]),
                     quantity(h.get("reading"), unit), pct(h.get("error_pct"))])
    t_hot = celsius(q.get("hot_temperature_k", ctx.spec.ambient.t_max_k))
    return table(["Applied", f"Reading at {celsius(ctx.spec.ambient.t_ref_k)}", "Error",
                  f"Reading at {t_hot}", "Error"], rows, [0.2, 0.2, 0.2, 0.2, 0.2], align="rrrrr")


def positions(ctx: Context) -> list:
    """Per position: accuracy budget, linearity, protection, temperature and Monte Carlo charts."""
    out = [ctx.heading("Positions")]
    out.append(p("One page per switch position. Charts: the error over the scale at the reference and the hottest "
                 "ambient; the movement current against the input with and without the clamps (misrange "
                 "protection); the change of the full-scale reading over the ambient range; the spread of the "
                 "full-scale error over the Monte Carlo builds. Shaded bands and dashed lines mark the class limits."))
    for k, name in enumerate(ctx.position_names()):
        if k:
            out.append(PageBreak())
        pos = ctx.net.position(name) if ctx.net is not None else None
        q = ctx.check_position(name)
        head = f"Position {name}"
        if pos is not None:
            head += f" \u2013 {pos.measures}, full scale {value_text(pos.full_scale, pos.unit)}"
        out.append(Heading(head, 1, f"pos{k + 1}"))
        if pos is not None and hazardous_position(pos):
            title, lines = hazard_reminder(f"This range measures up to {value_text(pos.full_scale, 'V')}.")
            out.append(caution_box(title, lines))
            out.append(Spacer(1, 4))
        if q is None:
            out += error_note(ctx, "Accuracy check", "check")
        else:
            out.append(_accuracy_table(ctx, q))
        out.append(Spacer(1, 6))
        out += _position_charts(ctx, name, q, pos)
        if q is not None and pos is not None and q.get("linearity"):
            out.append(_linearity_table(ctx, q, pos))
    out.append(PageBreak())
    return out
