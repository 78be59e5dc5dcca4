"""The misrange matrix, failing and accepted cases and the switch transitions (section 6)."""

from __future__ import annotations

import math
from collections import defaultdict

from reportlab.platypus import CondPageBreak, PageBreak, Spacer

from .. import layout
from ..layout import RULE, caution_box, esc, p, table
from ..text import hazard_reminder
from .context import Context
from .common import (
    error_note, hazardous_sources, is_accepted, number_text, ratio, stim_desc, stim_hazardous, stim_name,
    stimuli, stress_text, verdict_cell, verdict_fill,
)


# --- 6: misrange -------------------------------------------------------------------------------------------
def misrange(ctx: Context) -> list:
    """The misrange matrix in colour and words, failing and accepted cases, switch transitions."""
    spec = ctx.spec
    out = [ctx.heading("Misrange matrix")]
    stims = stimuli(ctx)
    hz_cases = [c for c in ctx.fault_cases() if c.get("verdict") == "hazard"]
    if any(stim_hazardous(s) for s in stims) or hazardous_sources(spec) or hz_cases:
        title, lines = hazard_reminder("Some sources in this matrix are at hazardous voltages." if stims else
                                       "The project's sources include hazardous voltages.")
        out.append(caution_box(title, lines))
        out.append(Spacer(1, 6))
    if ctx.faults is None:
        return out + error_note(ctx, "Fault analysis", "faults") + [PageBreak()]
    cases = ctx.fault_cases()
    out.append(p("Every foreseeable source applied to every position (rows: positions; columns: sources). Each cell "
                 "gives the verdict in words and the largest movement current as a multiple of full scale. "
                 "<b>OK</b>: every part within ratings, pointer at or below its stop. <b>PEGS</b>: pointer past its "
                 "stop, parts within ratings. <b>OVERSTRESS</b>: a part beyond a rating. <b>HAZARD</b>: a danger "
                 "to the person. <i>(acc.)</i> marks a case accepted in the project file; a dash, a source that "
                 "does not apply to the position."))
    names = ctx.position_names()
    grid = {(str(c.get("position")), stim_name(c)): c for c in cases}
    stim_names = [s.get("name") for s in stims]
    per = 6
    if not stim_names:
        out.append(p("No foreseeable sources: add faults.sources (or faults.max_input) to the project file."))
    for start in range(0, len(stim_names), per):
        chunk = stim_names[start:start + per]
        rows, fills = [], []
        for i, name in enumerate(names, start=1):
            row = [name]
            for j, sname in enumerate(chunk, start=1):
                c = grid.get((name, sname))
                if c is None:
                    row.append(None)
                    continue
                v = c.get("verdict", "error")
                mm = c.get("movement_multiple")
                extra = f"{mm:.3g} x I_fs" if isinstance(mm, (int, float)) and math.isfinite(mm) else ""
                if is_accepted(ctx, c):
                    extra += " (acc.)"
                row.append(verdict_cell(v, extra))
                fills.append((j, i, v))
            rows.append(row)
        widths = [0.16] + [0.84 / per] * len(chunk)
        out.append(table(["Position"] + [str(n) for n in chunk], rows, widths, align="l" + "c" * len(chunk),
                         zebra=False, extra=verdict_fill(fills) + [("GRID", (0, 0), (-1, -1), 0.4, RULE)]))
        out.append(Spacer(1, 6))
    if stims:
        values = defaultdict(set)
        for c in cases:
            d = c.get("stimulus_detail") or {}
            values[stim_name(c)].add(repr(d.get("value")))
        rows = []
        for st in stims:
            if len(values.get(st.get("name"), ())) > 1:
                desc = (st.get("detail") or "value depends on the position").capitalize()
                hz = "on some positions" if any(stim_hazardous(c.get("stimulus_detail") or {}) for c in cases
                                                if stim_name(c) == st.get("name")) else "no"
            else:
                desc, hz = stim_desc(st), "yes" if stim_hazardous(st) else "no"
            rows.append([str(st.get("name")), desc, hz])
        out.append(p("Sources", "h3"))
        out.append(table(["Source", "Stimulus", "Hazardous"], rows, [0.22, 0.64, 0.14]))
    # failing cases in detail
    failing = [c for c in cases if c.get("verdict") in ("overstress", "hazard")]
    failing.sort(key=lambda c: (names.index(c["position"]) if c.get("position") in names else 99,
                                stim_names.index(stim_name(c)) if stim_name(c) in stim_names else 99))
    out.append(p("Failing cases", "h2"))
    if not failing:
        out.append(p("No case overstresses a part."))
    else:
        out.append(p("Each failing case with every stress beyond its limit, the largest first. Ratio: value over "
                     "rating.", "small"))
    for c in failing:
        acc = is_accepted(ctx, c)
        title = (f"{stim_name(c)} on {c.get('position')}: {str(c.get('verdict')).upper()}"
                 + (" (accepted)" if acc else ""))
        rows = []
        for x in sorted(c.get("stresses") or [], key=lambda x: -ratio(x)):
            if not x.get("exceeded", ratio(x) > 1.0):
                continue
            rows.append([str(x.get("part")), str(x.get("quantity")), number_text(x.get("value"), x.get("unit")),
                         number_text(x.get("rating"), x.get("unit")), f"{ratio(x):.3g} x", str(x.get("limit", ""))])
        block = [p(esc(title), "h3")]
        if acc:
            block.append(p(esc(f"Accepted: {acc}"), "small"))
        for n in c.get("notes") or []:
            block.append(p(esc(str(n)), "small"))
        if rows:
            block.append(table(["Part", "Quantity", "Value", "Limit", "Ratio", "Kind of limit"], rows[:6],
                               [0.1, 0.3, 0.17, 0.17, 0.11, 0.15], align="llrrrl"))
            if len(rows) > 6:
                block.append(p(f"... and {len(rows) - 6} more stresses beyond their limits (planner faults "
                               "--json lists them all).", "small"))
        after = c.get("after_fuse_opens")
        if isinstance(after, dict) and after.get("verdict"):
            block.append(p(esc(f"After the fuse opens: {str(after['verdict']).upper()}"
                               + (f" – {stress_text(after['deciding'])}" if after.get("deciding") else "")),
                           "small"))
        out.append(layout.keep(*block))
    # accepted cases
    acc_rows = []
    for c in cases:
        reason = is_accepted(ctx, c)
        if reason:
            acc_rows.append([str(c.get("position")), stim_name(c), reason, str(c.get("verdict", "")).upper()])
    for a in (ctx.faults or {}).get("accept_unmatched", []) or []:
        if isinstance(a, dict):
            acc_rows.append([str(a.get("position")), str(a.get("stimulus")), str(a.get("reason", "")),
                             "matches no case"])
        else:
            acc_rows.append(["", str(a), "", "matches no case"])
    if acc_rows or spec.faults.accept:
        out.append(p("Accepted cases", "h2"))
        out.append(p("Cases the designer accepts in the project file, with the reason given there.", "small"))
        out.append(table(["Position", "Source", "Reason", "Verdict"], acc_rows, [0.14, 0.2, 0.5, 0.16]))
    # transitions
    out.append(CondPageBreak(140))
    out.append(p("Switch transitions", "h2"))
    tr = (ctx.faults or {}).get("transitions", []) or []
    need, declared = (ctx.faults or {}).get("contact_style_needed"), (ctx.faults or {}).get("contact_style_declared")
    if not tr:
        out.append(p("No transition states (a single position, or no contacts)."))
    else:
        words = {"make_before_break": "make-before-break", "break_before_make": "break-before-make",
                 "either": "either style", None: "not declared"}
        out.append(p(esc("The states between neighbouring positions while the switch turns, with the stimulus of the "
                         "position being left still applied: make-before-break closes both positions' contacts, "
                         "break-before-make neither. Contact style needed: "
                         f"{words.get(need, str(need))}; declared: {words.get(declared, str(declared))}.")))
        rows, fills = [], []
        for i, t in enumerate(tr, start=1):
            v = str(t.get("verdict", "error"))
            mm = t.get("movement_multiple")
            dec = t.get("deciding")
            rows.append([str(t.get("turn") or t.get("state")), words.get(t.get("style"), str(t.get("style"))),
                         stim_name(t), f"{mm:.3g} x" if isinstance(mm, (int, float)) and math.isfinite(mm) else None,
                         verdict_cell(v), esc(stress_text(dec)) if isinstance(dec, dict) else None])
            fills.append((4, i, v))
        out.append(table(["Turn", "Contacts", "Stimulus", "Movement", "Verdict", "Deciding stress"], rows,
                         [0.14, 0.16, 0.12, 0.10, 0.14, 0.34], align="lllrcl", extra=verdict_fill(fills)))
    cs = [c for c in (ctx.faults or {}).get("cautions", []) or [] if c not in ctx.cautions]
    if cs:
        out.append(Spacer(1, 6))
        out.append(caution_box("from the fault analysis", [esc(c) for c in cs]))
    out.append(PageBreak())
    return out
