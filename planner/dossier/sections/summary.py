"""The summary: every position with its verdicts, then the findings that need action (section 2)."""

from __future__ import annotations

from collections import defaultdict

from reportlab.platypus import PageBreak, Spacer

from ..layout import STYLES, Para, caution_box, esc, p, table
from ..text import hazard_reminder, pct, pct_abs, value_text
from .context import Context
from .common import (
    hazardous_position, hazardous_sources, is_accepted, stim_name, stress_text, unit_of, verdict_cell,
    verdict_fill, worst_case,
)


def _against(value, limit, within) -> str | None:
    """``'0.46 / 1.5 %'`` with a ``' !'`` when the value is outside its limit."""
    if value is None or limit is None:
        return None
    return f"{pct_abs(value, 2)} / {limit:g} %" + ("" if within else " !")


# --- 2: summary -----------------------------------------------------------------------------------------
def _position_verdicts(ctx: Context):
    by_pos = defaultdict(list)
    for c in ctx.fault_cases():
        by_pos[str(c.get("position"))].append(c)
    return by_pos


def summary(ctx: Context) -> list:
    """One table of every position with its verdicts, then the findings that need action."""
    spec = ctx.spec
    out = [ctx.heading("Summary")]
    cls = spec.movement.class_index
    names = ctx.position_names()
    by_pos = _position_verdicts(ctx)
    rows, fills = [], []
    for i, name in enumerate(names, start=1):
        q = ctx.check_position(name) or {}
        pos = ctx.net.position(name) if ctx.net is not None else None
        measures = q.get("measures") or (pos.measures if pos else "?")
        fs = q.get("full_scale", pos.full_scale if pos else None)
        if q:
            acc = "within class" if q.get("verdict") == "within class" else "outside class"
            acc_fill = "ok" if acc == "within class" else "overstress"
            acc_cell = verdict_cell(acc)
        else:
            acc_fill = "error"
            acc_cell = verdict_cell("error", "check failed" if "check" in ctx.errors else "not run")
        cases = by_pos.get(name, [])
        worst = worst_case(cases)
        if worst is not None:
            mis_cell = verdict_cell(worst.get("verdict", "error"), stim_name(worst))
            mis_fill = worst.get("verdict", "error")
        else:
            mis_cell = verdict_cell("error", "faults failed" if "faults" in ctx.errors else "no case")
            mis_fill = "error"
        yf = q.get("yield_fraction")
        margin = q.get("budget_margin_pct")
        rows.append([name, value_text(fs, unit_of(measures)), pct(q.get("nominal_error_pct"), 3),
                     _against(q.get("intrinsic_error_pct"), cls, q.get("intrinsic_within_class")),
                     _against(q.get("temperature_variation_per_10k_pct"), q.get("temperature_permitted_per_10k_pct"),
                              q.get("temperature_within_limit")),
                     f"{100 * yf:.1f} %" if yf is not None else None,
                     pct(margin, 2) if margin is not None else None, acc_cell, mis_cell])
        fills += [(7, i, acc_fill), (8, i, mis_fill)]
    hz = [q.name for q in ctx.net.positions if hazardous_position(q)] if ctx.net is not None else []
    if hz or hazardous_sources(spec):
        title, lines = hazard_reminder(("Hazardous ranges: " + ", ".join(hz) + "." if hz else
                                        "The foreseeable sources include hazardous voltages."))
        out.append(caution_box(title, [esc(lines[0]), lines[1]]))
        out.append(Spacer(1, 6))
    share = (ctx.check or {}).get("temperature_share_per_10k", 1.0)
    out.append(p(f"Accuracy class {cls:g} (IEC 60051): errors in % of full scale. <i>Intrinsic</i>: the worst case "
                 f"over the part tolerances at the reference temperature, against the class index ({cls:g} %). "
                 "<i>Temp. per 10 K</i>: the largest change of the reading due to the ambient temperature, per "
                 f"10 K, against its permitted variation ({share:g} x the class index per 10 K; from memory of "
                 "IEC 60051-2). A position is within class when both hold. <i>Margin</i>: class index minus the "
                 "combined budget (worst case + the whole temperature change over the ambient range), a stricter "
                 "figure that decides nothing by itself. <i>Worst misrange</i>: the worst verdict over every "
                 "foreseeable source applied to the position (section 6)."))
    out.append(table(["Position", "Full scale", "Nominal", "Intrinsic / class", "Temp. per 10 K / permitted",
                      "Yield", "Margin", "Accuracy", "Worst misrange"], rows,
                     [0.09, 0.09, 0.08, 0.14, 0.15, 0.07, 0.08, 0.14, 0.16], align="lrrrrrrcc",
                     extra=verdict_fill(fills)))
    out.append(p("Verdict words are printed in every cell; the tints (light to dark: ok, pegs, opens, overstress, "
                 "hazard) only repeat them.", "caption"))
    # findings
    out.append(p("Findings that need action", "h2"))
    findings = []
    for name in names:
        q = ctx.check_position(name)
        if q and q.get("verdict") != "within class":
            if not q.get("intrinsic_within_class", True):
                findings.append(
                    f"<b>{esc(name)}</b>: intrinsic error {pct_abs(q.get('intrinsic_error_pct'), 2)} (worst case at "
                    f"the reference temperature) exceeds class {cls:g}. Trim the value or use closer-tolerance parts.")
            if not q.get("temperature_within_limit", True):
                findings.append(
                    f"<b>{esc(name)}</b>: the reading changes by "
                    f"{pct_abs(q.get('temperature_variation_per_10k_pct'), 2)} per 10 K of ambient temperature, more "
                    f"than the permitted {pct_abs(q.get('temperature_permitted_per_10k_pct'), 2)}. Reduce the coil's "
                    "share of the drift (swamping resistor, lower-tempco shunts).")
    bad = [c for c in ctx.fault_cases() if c.get("verdict") in ("overstress", "hazard") and not is_accepted(ctx, c)]
    for name in names:
        mine = [c for c in bad if str(c.get("position")) == name]
        if not mine:
            continue
        worst = worst_case(mine)
        dec = worst.get("deciding") if isinstance(worst.get("deciding"), dict) else None
        listing = ", ".join(f"{stim_name(c)} ({str(c.get('verdict')).upper()})" for c in mine)
        findings.append(f"<b>{esc(name)}</b> does not survive: {esc(listing)}. Worst: {esc(stim_name(worst))} – "
                        f"{esc(stress_text(dec)) if dec else 'see section 6'}. Add protection (fuse, clamp, "
                        "higher-rated part) or accept the case with a reason in the project file.")
    tr = [t for t in (ctx.faults or {}).get("transitions", []) or []
          if t.get("verdict") in ("overstress", "hazard") and not t.get("accepted")]
    if tr:
        styles = sorted({str(t.get("style", "")).replace("_", "-") for t in tr})
        findings.append(f"{len(tr)} switch transition state(s) overstress a part ({esc(', '.join(styles))}); "
                        "section 6, switch transitions.")
    need = (ctx.faults or {}).get("contact_style_needed")
    declared = (ctx.faults or {}).get("contact_style_declared")
    if need in ("make_before_break", "break_before_make") and declared != need:
        findings.append(f"The range switch must be {need.replace('_', '-')} (declared: "
                        f"{esc(str(declared).replace('_', '-')) if declared else 'not declared'}).")
    for f in (ctx.sizing or {}).get("flags", []) or []:
        findings.append(esc(f"Sizing: {f}"))
    for f in (ctx.check or {}).get("findings", []) or []:  # ratings at full scale (planner.findings)
        findings.append(esc(f"Ratings at full scale ({f['severity']}): {f['message']}"))
    for key, text in sorted(ctx.errors.items()):
        findings.append(esc(f"The {key} analysis raised an error: {text}"))
    if not findings:
        findings.append("No finding needs action: every position is within class and every foreseeable misrange "
                        "is survived or accepted. Verify by test before use.")
    for f in findings:
        out.append(Para(f, STYLES["bullet"], bulletText="\u2022"))
    acc = [c for c in ctx.fault_cases() if c.get("verdict") in ("overstress", "hazard") and is_accepted(ctx, c)]
    if acc:
        out.append(p(f"{len(acc)} failing misrange case(s) are accepted in the project file with a reason "
                     "(section 6).", "small"))
    out.append(PageBreak())
    return out
