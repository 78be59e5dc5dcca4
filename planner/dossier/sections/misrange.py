"""The misrange matrix, failing and accepted cases and the switch transitions (section 6)."""

from __future__ import annotations

import math
from collections import defaultdict

from reportlab.platypus import CondPageBreak, PageBreak, Spacer

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
    out += _failing(ctx, cases, names, stim_names)
    out += _accepted(ctx, cases)
    out += _transitions(ctx)
    cs = [c for c in (ctx.faults or {}).get("cautions", []) or [] if c not in ctx.cautions]
    if cs:
        out.append(Spacer(1, 6))
        out.append(caution_box("from the fault analysis", [esc(c) for c in cs]))
    out.append(PageBreak())
    return out


#: Words of the contact styles.
STYLE_WORDS = {"make_before_break": "make-before-break", "break_before_make": "break-before-make",
               "either": "either style", None: "not declared"}


def _exceeded(case: dict) -> list[dict]:
    """The stresses of a case beyond their limits, the largest ratio first."""
    return sorted((x for x in case.get("stresses") or [] if x.get("exceeded", ratio(x) > 1.0)),
                  key=lambda x: -ratio(x))


def _case_rows(ctx: Context, case: dict, first_row: int) -> tuple[list, list]:
    """Table rows of one failing case (one per stress beyond its limit) and their style commands.

    The case's name and verdict stand in its first row only; its notes (a fuse
    opening, the movement's short-time judgement, what follows the fuse) follow
    in one row across the table.
    """
    title = f"{stim_name(case)} on {case.get('position')}"
    verdict = str(case.get("verdict", "error"))
    rows, cmds = [], []
    for k, x in enumerate(_exceeded(case)):
        rows.append([title if k == 0 else "", verdict_cell(verdict) if k == 0 else "", str(x.get("part")),
                     str(x.get("quantity")), number_text(x.get("value"), x.get("unit")),
                     number_text(x.get("rating"), x.get("unit")), f"{ratio(x):.3g} x",
                     str(x.get("limit", ""))])
    if rows:
        cmds += verdict_fill([(1, first_row, verdict)])
    notes = [str(n) for n in case.get("notes") or []]
    after = case.get("after_fuse_opens")
    if isinstance(after, dict) and after.get("verdict"):
        notes.append(f"After the fuse opens: {str(after['verdict']).upper()}"
                     + (f" \u2013 {stress_text(after['deciding'])}" if after.get("deciding") else ""))
    if notes:
        if not rows:
            rows.append([title, verdict_cell(verdict), None, None, None, None, None, None])
            cmds += verdict_fill([(1, first_row, verdict)])
        r = first_row + len(rows)
        rows.append([p(esc("; ".join(notes)), "small")] + [""] * 7)
        cmds += [("SPAN", (0, r), (-1, r))]
    cmds.append(("LINEABOVE", (0, first_row), (-1, first_row), 0.6, RULE))
    return rows, cmds


def _failing(ctx: Context, cases: list[dict], names: list, stim_names: list) -> list:
    """The failing cases grouped by the reason they are accepted (printed once), every stress beyond a limit."""
    failing = [c for c in cases if c.get("verdict") in ("overstress", "hazard")]
    failing.sort(key=lambda c: (names.index(c["position"]) if c.get("position") in names else 99,
                                stim_names.index(stim_name(c)) if stim_name(c) in stim_names else 99))
    out = [p("Failing cases", "h2")]
    if not failing:
        return out + [p("No case overstresses a part.")]
    out.append(p("Every failing case with every stress beyond its limit, the largest first (ratio: value over "
                 "limit), grouped by the reason the project file gives for accepting it; cases without one come "
                 "first and need action.", "small"))
    groups: dict = {}
    for c in failing:
        groups.setdefault(is_accepted(ctx, c) or "", []).append(c)
    for reason in sorted(groups, key=lambda r: (r != "", r)):
        mine = groups[reason]
        head = (f"Accepted ({len(mine)} case{'s' if len(mine) > 1 else ''}): {reason}" if reason else
                f"Not accepted ({len(mine)} case{'s' if len(mine) > 1 else ''}): these need action")
        rows, cmds = [], []
        for c in mine:
            r, k = _case_rows(ctx, c, len(rows) + 1)
            rows += r
            cmds += k
        block = [CondPageBreak(90), p(esc(head), "h3"),
                 table(["Case", "Verdict", "Part", "Quantity", "Value", "Limit", "Ratio", "Kind of limit"], rows,
                       [0.17, 0.14, 0.07, 0.19, 0.12, 0.1, 0.1, 0.11], align="lcllrrrl", zebra=False, extra=cmds)]
        out += block
    return out


def _accepted(ctx: Context, cases: list[dict]) -> list:
    """The accepted cases, one row per reason (the reason printed once, its cases listed)."""
    by_reason: dict = {}
    for c in cases:
        reason = is_accepted(ctx, c)
        if reason:
            by_reason.setdefault(reason, []).append(f"{c.get('position')}: {stim_name(c)} "
                                                    f"({str(c.get('verdict', '')).upper()})")
    rows = [[reason, "; ".join(items)] for reason, items in by_reason.items()]
    for a in (ctx.faults or {}).get("accept_unmatched", []) or []:
        if isinstance(a, dict):
            rows.append([str(a.get("reason", "")), f"{a.get('position')}: {a.get('stimulus')} (matches no case)"])
        else:
            rows.append(["", f"{a} (matches no case)"])
    if not rows and not ctx.spec.faults.accept:
        return []
    return [p("Accepted cases", "h2"),
            p("Cases the designer accepts in the project file: each reason as given there, once, with the cases it "
              "covers (position: source, verdict).", "small"),
            table(["Reason", "Cases"], rows, [0.55, 0.45])]


def _transitions(ctx: Context) -> list:
    """The switch transitions that stress something; the ones that do not are counted, not listed."""
    out = [CondPageBreak(140), p("Switch transitions", "h2")]
    tr = (ctx.faults or {}).get("transitions", []) or []
    need, declared = (ctx.faults or {}).get("contact_style_needed"), (ctx.faults or {}).get("contact_style_declared")
    if not tr:
        return out + [p("No transition states (a single position, or no contacts).")]
    words = STYLE_WORDS
    shown = [t for t in tr if str(t.get("verdict", "error")) != "ok"]
    quiet = {}
    for t in tr:
        if str(t.get("verdict", "error")) == "ok":
            key = words.get(t.get("style"), str(t.get("style")))
            quiet[key] = quiet.get(key, 0) + 1
    text = ("The states between neighbouring positions while the switch turns, with the stimulus of the position "
            "being left still applied: make-before-break closes both positions' contacts, break-before-make neither. "
            f"Contact style needed: {words.get(need, str(need))}; declared: {words.get(declared, str(declared))}.")
    if quiet:
        text += " Within every rating, not listed: " + ", ".join(f"{n} {k} state{'s' if n > 1 else ''}"
                                                                for k, n in sorted(quiet.items())) + "."
    out.append(p(esc(text)))
    if not shown:
        return out + [p("Every transition state keeps every part within its ratings.")]
    rows, fills = [], []
    for i, t in enumerate(shown, start=1):
        v = str(t.get("verdict", "error"))
        mm = t.get("movement_multiple")
        dec = t.get("deciding")
        rows.append([str(t.get("turn") or t.get("state")), words.get(t.get("style"), str(t.get("style"))),
                     stim_name(t), f"{mm:.3g} x" if isinstance(mm, (int, float)) and math.isfinite(mm) else None,
                     verdict_cell(v), esc(stress_text(dec)) if isinstance(dec, dict) else None])
        fills.append((4, i, v))
    out.append(table(["Turn", "Contacts", "Stimulus", "Movement", "Verdict", "Deciding stress"], rows,
                     [0.14, 0.16, 0.12, 0.10, 0.14, 0.34], align="lllrcl", extra=verdict_fill(fills)))
    return out
