"""One page per switch position: accuracy table, charts and linearity table (section 5)."""

from __future__ import annotations

import numpy as np
from reportlab.platypus import PageBreak, Spacer, Table, TableStyle

from .. import charts
from ..layout import MUTED, RULE, Heading, caution_box, p, table
from ..text import celsius, hazard_reminder, pct, pct_abs, quantity, value_text
from .context import CHART_H, CHART_W, Context
from . import ohms
from .common import axis_scale, error_note, hazardous_position, mc_histogram, verdict_fill, why


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
    arr = ctx.arrays(name)
    t_ref = celsius(ctx.spec.ambient.t_ref_k)
    t_hot = celsius(q.get("hot_temperature_k", ctx.spec.ambient.t_max_k)) if q else ""
    # error over the scale: the error at the reference; at the hottest ambient only what is left once
    # the gain change with temperature is taken out (that change has its own chart)
    if q and ohms.is_ohms(q):  # a reversed, non-linear scale: its own charts (section ohms)
        return _grid([ohms.scale_chart(ctx, q), _protection_or_message(ctx, name), ohms.error_chart(ctx, q),
                      ohms.mc_chart(ctx, name, q)])
    if q and q.get("linearity") and arr is not None:
        lin = q["linearity"]
        x = [r["applied"] / scale for r in lin]
        s = [charts.Series(f"error at {t_ref} (reference)", x, [r["error_pct"] for r in lin], markers=True),
             charts.Series(f"non-linearity at {t_hot}", x, list(arr.nonlinearity_pct[arr.i_hot]), markers=True)]
        charts_.append(charts.line_chart(CHART_W, CHART_H, "Error over the scale", f"applied [{prefix}{unit}]",
                                         "error [% of full scale]", s,
                                         bands=[charts.Band(-cls, cls, f"class {cls:g} limits")]))
    else:
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Error over the scale", why(ctx, "check")))
    charts_.append(_protection_or_message(ctx, name))
    # temperature: the gain change (full-scale reading) apart from the non-linearity, against the
    # permitted variation (a share of the class per 10 K from the reference)
    if q and arr is not None and arr.temperatures_k.size > 1:
        tc = list(arr.temperatures_k - 273.15)
        t0 = ctx.spec.ambient.t_ref_k - 273.15
        share = q.get("temperature_permitted_per_10k_pct", cls)
        env = [share * abs(tt - t0) / 10.0 for tt in tc]
        nonlin = np.max(np.abs(arr.nonlinearity_pct), axis=1)
        charts_.append(charts.line_chart(
            CHART_W, CHART_H, "Temperature: gain change and non-linearity", "ambient [\u00b0C]",
            "[% of full scale]",
            [charts.Series("gain change (full-scale reading)", tc, list(arr.gain_change_pct), markers=True),
             charts.Series("largest non-linearity over the scale", tc, list(nonlin), markers=True),
             charts.Series(f"permitted variation ({share:g} % per 10 K)", tc, env, colour=MUTED, dash=(2, 2)),
             charts.Series("", tc, [-v for v in env], colour=MUTED, dash=(2, 2))],
            vlines=[(t0, "ref")]))
    else:
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Temperature", why(ctx, "check")))
    # Monte Carlo
    charts_.append(_mc_chart(ctx, name, q, cls))
    return _grid(charts_)


def _protection_or_message(ctx: Context, name: str):
    curves = _protection_curves(ctx, name)
    if curves:
        return _protection_chart(ctx, curves)
    return charts.message_drawing(CHART_W, CHART_H, "Protection curve", why(ctx, "faults",
                                  "no protection curve for this position"))


def _grid(charts_: list) -> list:
    """Four charts, two by two."""
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
    return mc_histogram(ctx, name, q, "Monte Carlo: full-scale error of the builds",
                        "error at full scale [% of full scale]")


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
    if q.get("measures") in ("voltage", "ac_voltage") and q.get("input_resistance_ohm") is not None:
        what = "Input impedance (rms V / rms I)" if q.get("measures") == "ac_voltage" else "Input resistance"
        rows.append([what, value_text(q["input_resistance_ohm"], "ohm"),
                     f"{value_text(q.get('ohms_per_volt'), 'ohm/V')} at full scale"])
    waves = q.get("waveform_errors") or ()
    if waves:  # one row: the page keeps room for the linearity table below the charts
        dcs = q.get("dc_readings") or ()
        rows.append(["Other waveforms at full-scale rms", pct(waves[0]["error_pct"]),
                     ", ".join(f"{w['waveform']} {pct(w['error_pct'], 2)}" for w in waves)
                     + (", DC +/\u2013 " + " / ".join(pct(d["error_pct"], 2) for d in dcs) if dcs else "")
                     + " (mean-responding, scale in rms of a sine)"])
    if q.get("burden_voltage_v") is not None:
        rows.append(["Burden voltage at full scale", value_text(q["burden_voltage_v"], "V"),
                     f"input resistance {value_text(q.get('input_resistance_ohm'), 'ohm')}"])
    fill = "ok" if q.get("verdict") == "within class" else "overstress"
    return table(["Accuracy", "Value", "Basis"], rows, [0.33, 0.15, 0.52], align="lrl",
                 extra=verdict_fill([(1, 4, fill)]))


def _linearity_table(ctx: Context, q: dict, pos, arr) -> Table:
    """The sweep over the scale in two halves side by side: reading and error at the reference, error and
    non-linearity (the error with the gain change taken out) at the hottest ambient."""
    unit = pos.unit
    lin, hot = q.get("linearity") or [], q.get("linearity_hot") or []
    nonlin = arr.nonlinearity_pct[arr.i_hot] if arr is not None else [None] * len(lin)
    cells = []
    for k, r in enumerate(lin):
        h = hot[k] if k < len(hot) else {}
        cells.append([quantity(r["applied"], unit), quantity(r["reading"], unit), pct(r["error_pct"]),
                      pct(h.get("error_pct")), pct(nonlin[k]) if nonlin[k] is not None else None])
    half = (len(cells) + 1) // 2
    rows = [a + b for a, b in zip(cells[:half], cells[half:] + [[None] * 5] * (2 * half - len(cells)))]
    t_ref = celsius(ctx.spec.ambient.t_ref_k)
    t_hot = celsius(q.get("hot_temperature_k", ctx.spec.ambient.t_max_k))
    head = ["Applied", f"Reading {t_ref}", f"Error {t_ref}", f"Error {t_hot}", f"Non-lin. {t_hot}"]
    return table(head * 2, rows, [0.09, 0.105, 0.095, 0.095, 0.115] * 2, align="r" * 10,
                 extra=[("LINEBEFORE", (5, 0), (5, -1), 0.8, RULE)])


def positions(ctx: Context) -> list:
    """Per position: accuracy budget, linearity, protection, temperature and Monte Carlo charts."""
    out = [ctx.heading("Positions")]
    out.append(p("One page per position. Charts: the error over the scale (at the reference temperature, and the "
                 "non-linearity at the hottest ambient with the gain change taken out); the movement current against "
                 "the input with and without the clamps; the gain change and the non-linearity over the ambient "
                 "range against the permitted variation per 10 K; the full-scale error of the check's Monte Carlo "
                 "builds.", "small"))
    for k, name in enumerate(ctx.position_names()):
        if k:
            out.append(PageBreak())
        pos = ctx.net.position(name) if ctx.net is not None else None
        q = ctx.check_position(name)
        head = f"Position {name}"
        if pos is not None and ohms.is_ohms(pos):
            head += f" \u2013 resistance, centre {value_text(pos.center or pos.full_scale, 'ohm')}"
        elif pos is not None:
            head += f" \u2013 {pos.measures}, full scale {value_text(pos.full_scale, pos.unit)}"
        out.append(Heading(head, 1, f"pos{k + 1}"))
        if pos is not None and hazardous_position(pos):
            title, lines = hazard_reminder(f"This range measures up to {value_text(pos.full_scale, 'V')}.")
            out.append(caution_box(title, lines))
            out.append(Spacer(1, 4))
        if q is None:
            out += error_note(ctx, "Accuracy check", "check")
        elif ohms.is_ohms(q):
            out.append(ohms.accuracy_table(ctx, q))
        else:
            out.append(_accuracy_table(ctx, q))
        out.append(Spacer(1, 6))
        out += _position_charts(ctx, name, q, pos)
        if q is not None and ohms.is_ohms(q):
            out.append(ohms.marks_table(ctx, q))
        elif q is not None and pos is not None and q.get("linearity"):
            out.append(_linearity_table(ctx, q, pos, ctx.arrays(name)))
    out.append(PageBreak())
    return out
