"""The faults result as text for a terminal of 100 columns (``planner faults``).

:func:`format_faults` renders what :func:`planner.faults.faults_project`
computed: the matrix with a legend for its column codes, the summary, the cases a
fuse saves, the failing cases grouped by the part that fails first, the accepted
cases, the switch transitions and the contact style, the protection curves and
the cautions.
"""

from __future__ import annotations

import math
import re
import textwrap

from .. import network as nw
from ..stimulus import Stimulus
from ..stress import FAILING, describe_stress, ratio_text, worst_ratio, wrap
from ..tools import fmt
from .families import NEIGHBOUR_COLUMNS

#: Verdict words of the matrix cells.
_WORD = {"ok": "ok", "pegs": "pegs", "opens": "opens", "overstress": "OVER", "hazard": "HAZ"}
#: Width of the terminal report [columns].
_WIDTH = 100


def _case_ratio(case: dict) -> float:
    """The worst ratio of a case: its largest stress over a rating or safety limit."""
    return worst_ratio(case["stresses"])


def _short_ratio(r: float) -> str:
    if not math.isfinite(r):
        return "inf"
    if r < 1.0:
        return f"{r:.2f}"
    if r < 10.0:
        return f"{r:.1f}"
    if r < 1000.0:
        return f"{r:.0f}"
    if r < 999500.0:
        return f"{r / 1000:.0f}k"
    return f"{r:.0e}"


def _cell(case: dict | None) -> str:
    if case is None:
        return "-"
    return f"{_WORD[case['verdict']]} {_short_ratio(_case_ratio(case))}{'*' if case.get('accepted') else ''}"


def format_faults(result: dict) -> str:
    """The faults result as text for a terminal of 100 columns.

    A matrix (positions down, stimuli across, a legend for the column codes) with
    the verdict and the worst ratio (value / rating) in each cell, then the failing
    cases (the part that dies first and by how much), the transitions and the
    contact style they call for, the protection curves, the accepted cases and
    the cautions.
    """
    cols = result["stimuli"]
    codes = [f"S{i + 1}" for i in range(len(cols))]
    lines = [f"Misrange survival: {result.get('title', '')}".rstrip(), ""]
    lines += _matrix_lines(result, codes)
    lines += _column_lines(cols, codes)
    marks = "".join(lines)
    legend = ("Cells: verdict and largest stress/rating; pegs: pointer past its stop; opens: the fuse opens "
              "safely; HAZ: a person at risk (a named rule); * accepted")
    legend += "; - not applicable" if " - " in marks or marks.endswith("-") else ""
    legend += "; . not shown (only failing)" if ". " in marks else ""
    lines += _wrap_flat("", legend + ".")

    code_of = {col["name"]: code for code, col in zip(codes, cols)}
    lines += _case_sections(result["cases"], code_of, result.get("only_failing", False))
    lines.append("")
    lines += _switch_lines(result)
    if result["protection_curves"]:
        lines += _curve_lines(result["protection_curves"])
    for a in result.get("accept_unmatched", []):
        lines.append(f"Note: faults.accept names no case: {a['position']} | {a['stimulus']}"[:_WIDTH])
    if result["cautions"]:
        lines += [""]
        for c in _merged_cautions(result["cautions"]):
            lines += wrap("CAUTION: ", c)
    lines += ["Requirements met." if result["requirements_met"] else "Requirements NOT met."]
    return "\n".join(lines)


def _matrix_lines(result: dict, codes: list) -> list[str]:
    """The matrix in blocks of columns that fit the width, each block followed by an empty line."""
    cols = result["stimuli"]
    by = {(c["position"], c["stimulus"]): c for c in result["cases"]}
    applicable = result.get("matrix", {})
    pos_w = max([len("position")] + [len(p) for p in result["positions"]]) + 2
    cell_w = 11
    per_block = max(1, (_WIDTH - pos_w) // cell_w)
    lines = []
    for lo in range(0, len(cols), per_block):
        block = list(range(lo, min(len(cols), lo + per_block)))
        lines.append("position".ljust(pos_w) + "".join(codes[i].ljust(cell_w) for i in block).rstrip())
        for p in result["positions"]:
            cells = []
            for i in block:
                c = by.get((p, cols[i]["name"]))
                if c is not None:
                    txt = _cell(c)
                else:
                    txt = "." if cols[i]["name"] in applicable.get(p, ()) else "-"
                cells.append(txt.ljust(cell_w))
            lines.append(p.ljust(pos_w) + "".join(cells).rstrip())
        lines.append("")
    return lines


def _column_lines(cols: list, codes: list) -> list[str]:
    """What each column code stands for; the pairs (range up/down, max input and reversed) on one line."""
    names = [c["name"] for c in cols]
    lines = []
    k = 0
    while k < len(cols):
        col, code = cols[k], codes[k]
        pair = {"range up": "range down", "max input": "max input reversed"}.get(col["name"])
        if pair is not None and k + 1 < len(cols) and names[k + 1] == pair:
            if col["name"] == "range up":
                text = (f"{code}/{codes[k + 1]} = range up/down: full scale of the next higher/lower range of "
                        "the same quantity")
            else:
                st = Stimulus(col["name"], col["kind"], col["value"], col["waveform"], col["r_source_ohm"] or 0.0)
                text = f"{code}/{codes[k + 1]} = max input (reversed): +-{st.describe()}"
            lines.append(f"  {text}"[:_WIDTH])
            k += 2
            continue
        if col["name"] in NEIGHBOUR_COLUMNS:
            desc = col.get("detail", "")
        else:
            st = Stimulus(col["name"], col["kind"], col["value"], col["waveform"], col["r_source_ohm"] or 0.0,
                          col.get("current_limit_a"))
            desc = st.describe()
        lines.append(f"{code:>4} = {col['name']}: {desc}"[:_WIDTH])
        k += 1
    return lines


def _case_sections(cases: list, code_of: dict, only_failing: bool) -> list[str]:
    """The summary, the cases a fuse saves, the failing cases by part, the accepted ones by reason."""
    lines = [""] + _summary_lines(cases, only_failing)
    lines += _fuse_lines(cases, code_of)
    bad = [c for c in cases if c["verdict"] in FAILING and not c.get("accepted")]
    if bad:
        lines += ["", "Failing, grouped by the part that fails first (worst first):"]
        lines += _failing_groups(bad, code_of)
    acc = [c for c in cases if c.get("accepted")]
    if acc:
        lines += ["", f"Accepted ({len(acc)} case{'s' if len(acc) != 1 else ''}), by reason:"]
        lines += _accepted_groups(acc, code_of)
    return lines


def _switch_lines(result: dict) -> list[str]:
    """The transitions and the contact style they call for."""
    lines = []
    if result["transitions"]:
        lines.append("Switch transitions (both ways, with the full scale and max input of the position left):")
        lines += _transition_lines(result["transitions"])
    need = result["contact_style_needed"]
    text = {"either": "either contact style is safe", "make_before_break": "the switch needs make-before-break "
            "contacts", "break_before_make": "the switch needs break-before-make contacts",
            "neither": "neither contact style is safe: change the arrangement or protect the movement"}[need]
    decl = result.get("contact_style_declared")
    lines += [f"Contact style: {text}" + (f" (declared: {decl.replace('_', '-')})" if decl else "") + "."]
    return lines


def _wrap_flat(prefix: str, text: str, indent: str | None = None) -> list[str]:
    """``text`` wrapped to the terminal width, continuation lines indented like the first (or ``indent``)."""
    return textwrap.wrap(text, width=_WIDTH, initial_indent=prefix, subsequent_indent=indent or " " * len(prefix),
                         break_long_words=False, break_on_hyphens=False) or [prefix.rstrip()]


def _quantity_head(q: str) -> str:
    """A stress quantity without its phase words (``'power after F1 opens'`` -> ``'power'``)."""
    for w in (" while ", " until ", " after "):
        if w in q:
            q = q.split(w)[0]
    return q


def _deciding_ratio(case: dict) -> float:
    d = case.get("deciding")
    return float(d["ratio"]) if d else 0.0


def _case_list(cases, code_of, with_ratio=False) -> str:
    """``'10 V: S1 S3; 50 V: S1'``: cases by position, stimuli by their column codes.

    With ``with_ratio``, each stimulus is followed by the ratio of the case's deciding stress.
    """
    by: dict[str, list[str]] = {}
    for c in cases:
        code = code_of.get(c["stimulus"], c["stimulus"])
        if with_ratio:
            code += f" ({_short_ratio(_deciding_ratio(c))}x)"
        by.setdefault(c.get("state", c["position"]) if c.get("style") else c["position"], []).append(code)
    return "; ".join(f"{p}: {' '.join(v)}" for p, v in by.items())


def _summary_lines(cases, only_failing: bool = False) -> list[str]:
    n = len(cases)
    if only_failing:
        acc = sum(1 for c in cases if c.get("accepted"))
        return wrap("", f"{n} failing case{'s' if n != 1 else ''} shown (only failing): {acc} accepted, "
                        f"{n - acc} not.", _WIDTH)
    count = {v: sum(1 for c in cases if c["verdict"] == v) for v in ("ok", "pegs", "opens", "overstress", "hazard")}
    acc = sum(1 for c in cases if c.get("accepted") and c["verdict"] in FAILING)
    fail = count["overstress"] + count["hazard"] - acc
    text = (f"{n} cases: {count['ok'] + count['pegs'] + count['opens']} survive ({count['ok']} ok, "
            f"{count['pegs']} pegs, {count['opens']} as a fuse opens), {count['overstress']} overstress and "
            f"{count['hazard']} hazard, of which {acc} accepted: " + (f"{fail} FAIL." if fail else "0 fail."))
    return wrap("", text, _WIDTH)


def _fuse_lines(cases, code_of) -> list[str]:
    """The cases the instrument survives because a fuse opens: when, how much, the closest part."""
    ok = [c for c in cases if c.get("fuse_opens") and c["verdict"] not in FAILING and c.get("event_time_s")]
    if not ok:
        return []
    out = ["Survived because a protective part acts (replace a fuse that opens; a PTC resets):"]
    by: dict[tuple, list[dict]] = {}
    for c in ok:
        by.setdefault((c["position"], c["fuse"]), []).append(c)
    for (pos, fuse), group in by.items():
        t = [c["event_time_s"] for c in group]
        i2t = max(c["let_through_i2t_a2s"] for c in group)
        close = [x for c in group for x in c["stresses"] if x["limit"] == "rating"]
        worst = max(close, key=lambda x: x["ratio"]) if close else None
        duty = [x for c in group for x in c["stresses"] if x["limit"] == "safety"]
        when = fmt(min(t), "s", 3) + ("" if max(t) == min(t) else f" to {fmt(max(t), 's', 3)}")
        stims = " ".join(code_of.get(c["stimulus"], c["stimulus"]) for c in group)
        ptc = any(f.get("kind") == "ptc" and f["name"] == fuse for c in group for f in c["fuses"])
        text = (f"{pos} ({stims}): {fuse} {'trips (and resets)' if ptc else 'opens'} in {when}, let-through up to "
                f"{i2t:.3g} A^2 s; closest part: "
                f"{describe_stress(worst)}")
        for q in ("prospective current", "voltage across the open fuse"):
            xs = [x for x in duty if x["quantity"].startswith(q)]
            if xs:
                x = max(xs, key=lambda x: x["ratio"])
                text += f"; {q} {fmt(x['value'], x['unit'], 3)} of {fmt(x['rating'], x['unit'], 3)}"
        out += _wrap_flat("  ", text)
    return out


def _failing_groups(bad, code_of) -> list[str]:
    groups: dict[tuple, list[dict]] = {}
    for c in bad:
        d = c["deciding"] or {}
        groups.setdefault((d.get("part", "?"), _quantity_head(d.get("quantity", "?"))), []).append(c)
    order = sorted(groups.items(), key=lambda kv: -max(_deciding_ratio(c) for c in kv[1]))
    out = []
    for (part, q), group in order:
        worst = max(group, key=_deciding_ratio)
        verdicts = "/".join(sorted({_WORD[c["verdict"]] for c in group}))
        out += _wrap_flat("  ", f"{verdicts} {describe_stress(worst['deciding'])}")
        out += _wrap_flat("      ", _case_list(sorted(group, key=lambda c: -_deciding_ratio(c)), code_of, True))
    return out


def _accepted_groups(acc, code_of) -> list[str]:
    groups: dict[str, list[dict]] = {}
    for c in acc:
        groups.setdefault(c["accept_reason"] or "", []).append(c)
    out = []
    for reason, group in groups.items():
        failing = [c for c in group if c["verdict"] in FAILING]
        out += _wrap_flat("  - ", reason, "    ")
        tail = ""
        if failing:
            worst = max(failing, key=_deciding_ratio)
            d = worst["deciding"] or {}
            tail = (f"; worst {d.get('part', '?')} {_quantity_head(d.get('quantity', '?'))} "
                    f"{ratio_text(d.get('ratio', 0.0))} ({worst['position']} "
                    f"{code_of.get(worst['stimulus'], worst['stimulus'])})")
        out += _wrap_flat("      ", _case_list(group, code_of) + tail)
    return out


def _transition_lines(transitions) -> list[str]:
    out = []
    for sty in (nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE):
        ts = [t for t in transitions if t["style"] == sty]
        if not ts:
            continue
        bad = [t for t in ts if t["verdict"] in FAILING and not t.get("accepted")]
        name = sty.replace("_", "-")
        if not bad:
            out.append(f"  {name}: all {len(ts)} cases survive")
            continue
        worst = max(bad, key=_case_ratio)
        turns = len(set(t["turn"] for t in bad))
        out += _wrap_flat("  ", f"{name}: {len(bad)} of {len(ts)} cases fail ({turns} turns); worst {worst['turn']} "
                                f"| {worst['stimulus']}: {_WORD[worst['verdict']]} "
                                f"{describe_stress(worst['deciding'])}", "    ")
    return out


_HAZ_CAUTION = re.compile(r"Hazardous voltage: (.+?) (?:exceeds|measures?) (?:voltages above )?the hazardous-live "
                          r"limits of IEC 61010-1 \((.+?)\)\.")


def _merged_cautions(cautions) -> list[str]:
    """The cautions with the hazardous-voltage ones merged into one (for the terminal only)."""
    items, limits, out, at = [], None, [], None
    for c in cautions:
        mt = _HAZ_CAUTION.fullmatch(c)
        if mt is None:
            out.append(c)
            continue
        if at is None:
            at = len(out)
        items.append(mt.group(1))
        limits = mt.group(2)
    if len(items) > 1:
        out.insert(at, f"Hazardous voltages, beyond the hazardous-live limits of IEC 61010-1 ({limits}): "
                       + "; ".join(items) + ".")
        return out
    return list(cautions)


def _curve_lines(curves) -> list[str]:
    halves, never, bare = [], [], []
    for c in curves:
        if not c["has_clamps"]:
            bare.append(c["position"])
            continue
        hp, hn = c["halving_input_positive"], c["halving_input_negative"]
        if hp is None and hn is None:
            never.append(c["position"])
            continue
        f = (lambda v: "never" if v is None else fmt(abs(v), c["unit"], 3))  # noqa: E731
        both = f"+-{f(hp)}" if (hp is not None and hn is not None and math.isclose(abs(hp), abs(hn), rel_tol=1e-3)) \
            else f"+{f(hp)}/-{f(hn)}"
        halves.append(f"{c['position']} {both}")
    parts = []
    if halves:
        parts.append("Clamps halve the unclamped movement current at: " + ", ".join(halves))
    if never:
        parts.append(("not within the sweep on " if halves else
                      "Clamps do not halve the unclamped movement current within the sweep on ") + ", ".join(never))
    if bare:
        parts.append(("no clamps on " if parts else "No clamps on ") + ", ".join(bare))
    return wrap("", "; ".join(parts) + ".", _WIDTH)
