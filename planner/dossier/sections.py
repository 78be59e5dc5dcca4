"""The dossier's sections: each builder takes the :class:`Context` and returns flowables.

A builder only arranges what the analyses found; it computes nothing that an
analysis module owns, except the few operating points the build section needs
(test-point voltages and expected readings, from :class:`planner.engine.Engine`)
and the Monte Carlo histogram (the same seeded builds as the accuracy check).
When an analysis raised, its section prints the error text instead of its
tables; a builder itself is not allowed to fail quietly.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass, field

import numpy as np
from reportlab.platypus import CondPageBreak, PageBreak, Paragraph, Spacer, Table, TableStyle
from reportlab.platypus.tableofcontents import TableOfContents

from ..model import Contact, Diode, Fuse, MovementElement, Resistor
from ..testpoints import pin_names
from . import charts, layout, schematic as sch, wafer
from .layout import (
    FRAME_WIDTH, INK, RULE, STYLES, VERDICT_FILL, VERDICT_TEXT, Heading, caution_box, esc, note_box, p, table,
)
from .text import (
    GENERAL_CAUTIONS, METHODS, REFERENCES, SECTION_TITLES, celsius, hazard_reminder, is_hazardous, pct,
    pct_abs, quantity, value_text,
)

__all__ = ["Context", "SECTIONS", "cover", "contents", "cautions", "summary", "schematic", "bom", "positions",
           "misrange", "build", "methods", "appendix", "bom_rows", "VERDICT_ORDER"]

VERDICT_ORDER = {"ok": 0, "pegs": 1, "overstress": 2, "hazard": 3}
CHART_W = (FRAME_WIDTH - 12) / 2
CHART_H = 158.0


@dataclass
class Context:
    """Everything the section builders read.

    Attributes
    ----------
    spec : Spec
    date : str
        The dossier's date (from the project or the caller; never the clock).
    version : str
        ``planner.__version__``.
    sha256 : str or None
        SHA-256 of the project file's text.
    net, engine : NetworkSpec, Engine or None
        The network analysed and its engine (None when it could not be built).
    sizing, check, faults : dict or None
        The JSON results of the analyses (None when not run or failed).
    errors : dict of str -> str
        Analysis name -> error text, for every analysis that raised.
    cautions : list of str
        Project-specific cautions (from the fault analysis and the sizer).
    samples, seed : int
        Monte Carlo settings used.
    """

    spec: object
    date: str
    version: str
    sha256: str | None
    date_source: str = "project file"
    net: object = None
    engine: object = None
    sizing: dict | None = None
    check: dict | None = None
    faults: dict | None = None
    wiring: object = None  # planner.wiring.Wiring, rendered by planner.dossier.wafer
    errors: dict = field(default_factory=dict)
    cautions: list = field(default_factory=list)
    samples: int = 0
    seed: int = 0
    _cache: dict = field(default_factory=dict)

    def number(self, title: str) -> str:
        """The printed number of a section (``'3'``; the appendix is ``'A'``)."""
        if title.startswith("Appendix"):
            return "A"
        return str(SECTION_TITLES.index(title) + 1)

    def heading(self, title: str) -> Heading:
        n = self.number(title)
        text = title if n == "A" else f"{n}  {title}"
        return Heading(text, 0, f"s{n}")

    def check_position(self, name: str) -> dict | None:
        if not self.check:
            return None
        for q in self.check.get("positions", []):
            if q.get("name") == name:
                return q
        return None

    def fault_cases(self) -> list[dict]:
        return list((self.faults or {}).get("cases", []))

    def position_names(self) -> list[str]:
        if self.net is not None:
            return [q.name for q in self.net.positions]
        if self.check:
            return [q["name"] for q in self.check.get("positions", [])]
        return []


# --- helpers -----------------------------------------------------------------------------------------
def _error_note(ctx: Context, what: str, key: str) -> list:
    text = ctx.errors.get(key, "the analysis did not run")
    return [note_box(f"{what} not available", [esc(f"The {what.lower()} raised an error: {text}"),
                                               "The other sections are unaffected; fix the cause and build "
                                               "the dossier again."])]


def _verdict_cell(verdict: str, extra: str = "") -> Paragraph:
    v = (verdict or "error").lower()
    word = v.upper()
    style = STYLES["cell_c"]
    colour = VERDICT_TEXT.get(v, INK).hexval()[2:]
    text = f"<font color='#{colour}'><b>{esc(word)}</b>{('<br/>' + esc(extra)) if extra else ''}</font>"
    return Paragraph(text, style)


def _verdict_fill(cells: list[tuple[int, int, str]]):
    return [("BACKGROUND", (c, r), (c, r), VERDICT_FILL.get(v, VERDICT_FILL["error"])) for c, r, v in cells]


def _unit(measures: str) -> str:
    return "V" if measures == "voltage" else "A"


def _hazardous_position(pos) -> bool:
    return pos.measures == "voltage" and is_hazardous(pos.full_scale)


def _sources(spec) -> list:
    return list(spec.faults.sources)


def _hazardous_sources(spec) -> list:
    return [s for s in spec.faults.sources if s.kind == "voltage" and is_hazardous(s.value, s.waveform)]


def _worst_case(cases: list[dict]) -> dict | None:
    if not cases:
        return None
    return max(cases, key=lambda c: (VERDICT_ORDER.get(c.get("verdict"), -1), c.get("movement_multiple") or 0))


def _stim_name(case: dict) -> str:
    s = case.get("stimulus")
    if isinstance(s, dict):
        return str(s.get("name", "?"))
    return str(s)


def _stimuli(ctx: Context) -> list[dict]:
    """The stimuli of the fault analysis in its column order (name, kind, waveform, value ...)."""
    out = [dict(s) for s in (ctx.faults or {}).get("stimuli", []) or [] if isinstance(s, dict)]
    names = {s.get("name") for s in out}
    for c in ctx.fault_cases():
        n = _stim_name(c)
        if n not in names:
            names.add(n)
            out.append(dict(c.get("stimulus_detail") or {"name": n}))
    return out


def _stim_desc(s: dict) -> str:
    unit = s.get("unit") or ("V" if s.get("kind") == "voltage" else "A")
    wave = {"sine": "rms sine", "dc": "DC", "impulse": "peak impulse"}.get(s.get("waveform"), s.get("waveform") or "")
    text = f"{value_text(s.get('value'), unit)} {wave}".strip()
    if s.get("kind") == "voltage" and s.get("r_source_ohm"):
        text += f" through {value_text(s.get('r_source_ohm'), 'ohm')}"
    if s.get("current_limit_a"):
        text += f", limited to {value_text(s.get('current_limit_a'), 'A')}"
    if s.get("detail"):
        text += f" ({s['detail']})"
    return text


def _stim_hazardous(s: dict) -> bool:
    if s.get("kind") != "voltage" or not isinstance(s.get("value"), (int, float)):
        return False
    wave = s.get("waveform") or "dc"
    if wave == "impulse":
        return abs(float(s.get("peak", s["value"]))) > 46.7
    return is_hazardous(s["value"], "sine" if wave == "sine" else "dc")


def _accepted_keys(ctx: Context) -> dict:
    out = {}
    for a in ctx.spec.faults.accept:
        out[(a.position, a.stimulus)] = a.reason
    for a in (ctx.faults or {}).get("accepted", []) or []:
        if isinstance(a, dict) and "position" in a and "stimulus" in a:
            out.setdefault((str(a["position"]), str(a["stimulus"])), str(a.get("reason", "")))
    return out


def _is_accepted(ctx: Context, case: dict) -> str | None:
    """The reason a case is accepted in the project file, or None."""
    if case.get("accepted"):
        return str(case.get("accept_reason") or "accepted in the project file")
    return _accepted_keys(ctx).get((str(case.get("position")), _stim_name(case)))


def _stress_text(x: dict) -> str:
    try:
        from ..stress import describe_stress

        return describe_stress(x)
    except Exception:  # noqa: BLE001 - a text helper must not break a section
        return f"{x.get('part')} {x.get('quantity')} {x.get('value')} of {x.get('rating')} ({x.get('ratio')} x)"


def _ratio(x) -> float:
    try:
        r = float(x.get("ratio"))
    except (TypeError, ValueError):
        return 0.0
    return r if math.isfinite(r) else 1e9


# --- 0: cover and contents -------------------------------------------------------------------------
def cover(ctx: Context) -> list:
    """Title, revision, date, file hash, planner version and the sign-off block."""
    spec = ctx.spec
    out = [layout.rule_bar(), Spacer(1, 26)]
    out.append(p("<font color='#33566B'><b>DESIGN DOSSIER</b></font> \u2013 multi-range moving-coil instrument",
                 "cover_sub"))
    out.append(p(esc(spec.title), "cover_title"))
    out.append(p(f"Revision <b>{esc(spec.revision or 'not given')}</b> &nbsp;&nbsp;\u00b7&nbsp;&nbsp; "
                 f"Date <b>{esc(ctx.date)}</b>", "cover_sub"))
    net_text = "explicit network in the project file" if spec.network is not None else (
        "sized by the planner from the voltage/current ranges" if ctx.net is not None else "not available")
    m = spec.movement
    ident = [
        ["Project file", esc(spec.path or "(text given directly)")],
        ["SHA-256 of the file text",
         f"<font face='Courier' size='7.4'>{esc(ctx.sha256 or 'text not available')}</font>"],
        ["Planner version", esc(ctx.version)],
        ["Dossier date", esc(f"{ctx.date} (from the {ctx.date_source})")],
        ["Movement", esc(f"{value_text(m.i_fs_a, 'A')} full scale, {value_text(m.r_coil_ohm, 'ohm')} coil, "
                         f"class {m.class_index:g}")],
        ["Network", esc(net_text)],
        ["Positions", esc(", ".join(ctx.position_names()) or "none")],
        ["Monte Carlo", esc(f"{ctx.samples} builds, seed {ctx.seed}")],
    ]
    out.append(table(None, ident, [0.3, 0.7], escape_text=False, zebra=False,
                     extra=[("FONTNAME", (0, 0), (0, -1), "Helvetica-Bold"),
                            ("LINEABOVE", (0, 0), (-1, 0), 0.8, INK)]))
    out.append(Spacer(1, 16))
    out.append(note_box("Scope", [
        "A planning aid, not a certification. Read the safety cautions (section 1) before using any number; "
        "verify the built instrument by test (section 7) before use.",
    ]))
    out.append(Spacer(1, 22))
    out.append(p("<b>Sign-off</b>", "h2"))
    rows = [[role, "", "", ""] for role in ("Designed by", "Reviewed by", "Approved")]
    t = table(["Role", "Name", "Signature", "Date"], rows, [0.2, 0.3, 0.3, 0.2], zebra=False,
              extra=[("ROWBACKGROUNDS", (0, 1), (-1, -1), [None]),
                     ("LINEBELOW", (1, 1), (-1, -1), 0.6, RULE),
                     ("TOPPADDING", (0, 1), (-1, -1), 16),
                     ("BOTTOMPADDING", (0, 1), (-1, -1), 5),
                     ("VALIGN", (0, 1), (-1, -1), "BOTTOM"),
                     ("FONTNAME", (0, 1), (0, -1), "Helvetica-Bold")])
    out.append(t)
    out.append(Spacer(1, 8))
    out.append(p("Comments and conditions of approval:", "small"))
    lines = Table([[""]] * 3, colWidths=[FRAME_WIDTH], rowHeights=[18] * 3)
    lines.setStyle(TableStyle([("LINEBELOW", (0, 0), (-1, -1), 0.5, RULE)]))
    out.append(lines)
    out.append(PageBreak())
    return out


def contents(ctx: Context) -> list:
    """The contents list (filled in by the multi-pass build)."""
    toc = TableOfContents(dotsMinLevel=0)
    toc.levelStyles = [STYLES["toc1"], STYLES["toc2"]]
    return [p("Contents", "h1"), toc, Spacer(1, 10)]


# --- 1: cautions ---------------------------------------------------------------------------------------
def cautions(ctx: Context) -> list:
    """The safety cautions, before any computed number."""
    spec = ctx.spec
    out = [ctx.heading("Safety cautions")]
    out.append(p("Read these before any number in this dossier. The short form of the hazardous-voltage caution "
                 "is repeated wherever a hazardous range, source or test voltage appears."))
    for title, text in GENERAL_CAUTIONS:
        out.append(caution_box(title, [text]))
        out.append(Spacer(1, 5))
    # the project's own facts
    facts = []
    net = ctx.net
    if net is not None:
        hz = [q.name for q in net.positions if _hazardous_position(q)]
        if hz:
            facts.append(f"Hazardous ranges of this instrument: <b>{esc(', '.join(hz))}</b>.")
    hs = _hazardous_sources(spec)
    if hs:
        facts.append("Foreseeable sources at hazardous voltages: <b>" + esc(", ".join(
            f"{s.name} ({value_text(s.value, 'V')}{' rms' if s.waveform == 'sine' else ' DC'})" for s in hs))
            + "</b>.")
    cat = spec.faults.category
    facts.append(f"Declared measurement category: <b>{esc(cat)}</b>." if cat else
                 "No measurement category is declared: treat the instrument as suitable only for circuits "
                 "not connected to the mains.")
    if spec.faults.max_input_v is not None:
        facts.append(f"Declared maximum input: <b>{esc(value_text(spec.faults.max_input_v, 'V'))}</b>.")
    fuses = [e for e in (net.elements if net is not None else ()) if isinstance(e, Fuse)]
    for f in fuses:
        fm = spec.parts.fuses.get(f.model)
        if fm:
            facts.append(esc(f"Fuse {f.name} ({f.model}): rated {value_text(fm.rated_current_a, 'A')}, breaking "
                             f"capacity {value_text(fm.breaking_capacity_a, 'A')}, rated voltage "
                             f"{value_text(fm.max_voltage_v, 'V')}."))
    if net is not None and not fuses and any(q.measures == "current" for q in net.positions):
        facts.append("The current ranges have no fuse: a voltage source applied to them is limited only by "
                     "the source itself.")
    if net is not None:
        vmax = sorted({e.max_voltage_v for e in net.elements if isinstance(e, Resistor)})
        if vmax:
            facts.append(esc("Resistor limiting element voltages used: " + ", ".join(value_text(v, 'V') for v in vmax)
                             + " (see the bill of materials for the voltage each one needs)."))
    for c in ctx.cautions:
        facts.append(esc(c))
    for key in ("faults", "cautions"):
        if key in ctx.errors:
            facts.append(esc(f"The {key} analysis raised an error, so its cautions are missing: {ctx.errors[key]}"))
    out.append(caution_box("this project", facts))
    out.append(PageBreak())
    return out


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
        budget = q.get("budget_pct")
        if q:
            acc = "within class" if q.get("verdict") == "within class" else "outside class"
            acc_fill = "ok" if acc == "within class" else "overstress"
            acc_cell = _verdict_cell(acc, f"{pct_abs(budget, 2)} of {cls:g} %")
        else:
            acc_fill = "error"
            acc_cell = _verdict_cell("error", "check failed" if "check" in ctx.errors else "not run")
        cases = by_pos.get(name, [])
        worst = _worst_case(cases)
        if worst is not None:
            mis_cell = _verdict_cell(worst.get("verdict", "error"), _stim_name(worst))
            mis_fill = worst.get("verdict", "error")
        else:
            mis_cell = _verdict_cell("error", "faults failed" if "faults" in ctx.errors else "no case")
            mis_fill = "error"
        yf = q.get("yield_fraction")
        rows.append([name, measures, value_text(fs, _unit(measures)), pct(q.get("nominal_error_pct"), 3),
                     pct_abs(q.get("worst_case_error_pct"), 3), pct_abs(q.get("temperature_error_pct"), 3),
                     f"{100 * yf:.1f} %" if yf is not None else None, acc_cell, mis_cell])
        fills += [(7, i, acc_fill), (8, i, mis_fill)]
    hz = [q.name for q in ctx.net.positions if _hazardous_position(q)] if ctx.net is not None else []
    if hz or _hazardous_sources(spec):
        title, lines = hazard_reminder(("Hazardous ranges: " + ", ".join(hz) + "." if hz else
                                        "The foreseeable sources include hazardous voltages."))
        out.append(caution_box(title, [esc(lines[0]), lines[1]]))
        out.append(Spacer(1, 6))
    out.append(p(f"Accuracy class {cls:g} (limit of error {cls:g} % of full scale, IEC 60051). Errors are in % of "
                 "full scale. <i>Budget</i> = worst case + temperature; a position is within class when its budget "
                 "is at most the class index. <i>Worst misrange</i> is the worst verdict over every foreseeable "
                 "source applied to the position (section 6)."))
    out.append(table(["Position", "Measures", "Full scale", "Nominal", "Worst case", "Temperature", "Yield",
                      "Accuracy (budget)", "Worst misrange"], rows,
                     [0.10, 0.10, 0.10, 0.10, 0.10, 0.11, 0.08, 0.16, 0.16], align="llrrrrrcc",
                     extra=_verdict_fill(fills)))
    out.append(p("Verdict words are printed in every cell; the tints (light to dark: ok, pegs, overstress, "
                 "hazard) only repeat them.", "caption"))
    # findings
    out.append(p("Findings that need action", "h2"))
    findings = []
    for name in names:
        q = ctx.check_position(name)
        if q and q.get("verdict") != "within class":
            wc, te = q.get("worst_case_error_pct", 0.0), q.get("temperature_error_pct", 0.0)
            dom = "temperature" if te >= wc else "tolerance and nominal offset"
            findings.append(
                f"<b>{esc(name)}</b>: budget {pct_abs(q.get('budget_pct'), 2)} exceeds class {cls:g} "
                f"(worst case {pct_abs(wc, 2)}, temperature {pct_abs(te, 2)}); the larger term is {dom}. "
                + ("Reduce the coil's share of the temperature drift (swamping resistor, lower-tempco shunts) or "
                   "narrow the ambient range." if dom == "temperature" else
                   "Trim the value or use closer-tolerance parts."))
    bad = [c for c in ctx.fault_cases() if c.get("verdict") in ("overstress", "hazard") and not _is_accepted(ctx, c)]
    for name in names:
        mine = [c for c in bad if str(c.get("position")) == name]
        if not mine:
            continue
        worst = _worst_case(mine)
        dec = worst.get("deciding") if isinstance(worst.get("deciding"), dict) else None
        listing = ", ".join(f"{_stim_name(c)} ({str(c.get('verdict')).upper()})" for c in mine)
        findings.append(f"<b>{esc(name)}</b> does not survive: {esc(listing)}. Worst: {esc(_stim_name(worst))} – "
                        f"{esc(_stress_text(dec)) if dec else 'see section 6'}. Add protection (fuse, clamp, "
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
    for key, text in sorted(ctx.errors.items()):
        findings.append(esc(f"The {key} analysis raised an error: {text}"))
    if not findings:
        findings.append("No finding needs action: every position is within class and every foreseeable misrange "
                        "is survived or accepted. Verify by test before use.")
    for f in findings:
        out.append(Paragraph(f, STYLES["bullet"], bulletText="\u2022"))
    acc = [c for c in ctx.fault_cases() if c.get("verdict") in ("overstress", "hazard") and _is_accepted(ctx, c)]
    if acc:
        out.append(p(f"{len(acc)} failing misrange case(s) are accepted in the project file with a reason "
                     "(section 6).", "small"))
    out.append(PageBreak())
    return out


# --- 3: schematic ---------------------------------------------------------------------------------------
def schematic(ctx: Context) -> list:
    """The circuit drawn from the network graph, the connection list and the switch table."""
    out = [ctx.heading("Schematic")]
    if ctx.net is None:
        return out + _error_note(ctx, "Network", "network") + [PageBreak()]
    net = ctx.net
    drawing, how, merged = sch.schematic(ctx.spec, net, FRAME_WIDTH, layout.FRAME_HEIGHT - 100)
    out.append(drawing)
    if how == "ladder":
        out.append(p("Drawn from the network graph. Each circuit node is a horizontal line (its name in italics, "
                     "the test points of section 7); elements stand between the nodes they join, ordered upwards "
                     "by the resistance from the common terminal. The range switch is drawn with every contact "
                     "open; under each contact are the positions that close it. Designators match the bill of "
                     "materials." + (" Resistors in series through a joint that nothing else touches are drawn as "
                                     "one box naming all of them (the connection list gives every joint); parallel "
                                     "resistors likewise." if merged else ""), "caption"))
    else:
        out.append(p(esc(f"This network does not have the shape of a switched ladder ({how}), so it is drawn as a "
                         "graph: nodes in layers by the number of elements from the common terminal, elements as "
                         "labelled lines (contacts dashed). The connection list below is the authority."),
                     "caption"))
    out.append(CondPageBreak(120))
    out.append(p("Switch positions", "h2"))
    rows = []
    for q in net.positions:
        closed = [e.name for e in net.elements if isinstance(e, Contact) and q.name in e.closed_in]
        rows.append([q.name, q.measures, value_text(q.full_scale, q.unit), f"{q.input[0]} (+), {q.input[1]} (-)",
                     ", ".join(closed) or "none"])
    out.append(table(["Position", "Measures", "Full scale", "Input terminals", "Contacts closed"], rows,
                     [0.14, 0.13, 0.13, 0.3, 0.3]))
    style = getattr(net, "contact_style", None)
    need = (ctx.faults or {}).get("contact_style_needed")
    text = "Contact style: " + (style.replace("_", "-") if style else "not declared") + "."
    if need in ("make_before_break", "break_before_make"):
        text += f" The fault analysis needs {need.replace('_', '-')} contacts (section 6)."
    elif need == "either":
        text += " Either style survives the switch transitions (section 6)."
    else:
        text += " Both make-before-break and break-before-make are checked in section 6."
    out.append(p(esc(text), "caption"))
    out += wafer.wiring_flowables(ctx.wiring)
    out.append(p("Connection list", "h2"))
    out.append(table(["Node", "Pins on it"], [list(r) for r in sch.connection_rows(net)], [0.2, 0.8]))
    out.append(PageBreak())
    return out


# --- 4: bill of materials ----------------------------------------------------------------------------------
def _sized_parts(ctx: Context) -> dict:
    out = {}
    for seg in (ctx.sizing or {}).get("segments", []) or []:
        for part in seg.get("parts", []) or []:
            out[part.get("name")] = dict(part, segment=seg.get("name"), worst_case=seg.get("worst_case", ""))
    return out


def _fullscale_stress(ctx: Context) -> dict:
    """Largest |current|, |voltage| and power of each element over the positions at full scale."""
    if "fs_stress" in ctx._cache:
        return ctx._cache["fs_stress"]
    out = {}
    if ctx.engine is not None:
        for q in ctx.net.positions:
            op = ctx.engine.operate(q.name, [q.full_scale])
            for st in op.stresses():
                i = float(np.nanmax(np.abs(st.current_a)))
                v = float(np.nanmax(np.abs(st.voltage_v)))
                w = float(np.nanmax(np.abs(st.power_w)))
                old = out.get(st.name, (0.0, 0.0, 0.0))
                out[st.name] = (max(old[0], i), max(old[1], v), max(old[2], w))
    ctx._cache["fs_stress"] = out
    return out


def _misrange_worst(ctx: Context) -> dict:
    """Per part: the largest stress ratio over the misrange cases and the case it occurs in."""
    out = {}
    for c in ctx.fault_cases():
        for x in c.get("stresses") or []:
            r = _ratio(x)
            part = x.get("part")
            if part and r > out.get(part, (0.0, ""))[0]:
                out[part] = (r, f"{x.get('quantity')} {r:.3g} x rating: {_stim_name(c)} on {c.get('position')}")
    return out


def bom_rows(ctx: Context) -> list[dict]:
    """The bill of materials as dicts (one per element), SI floats and text; shared by the PDF and the CSV."""
    if "bom" in ctx._cache:
        return ctx._cache["bom"]
    spec, net = ctx.spec, ctx.net
    sized = _sized_parts(ctx)
    fs = _fullscale_stress(ctx)
    mis = _misrange_worst(ctx)
    rows = []
    order = {"resistor": 0, "movement": 1, "diode": 2, "fuse": 3, "contact": 4}
    for e in sorted(net.elements, key=lambda e: (order[e.kind], _natural(e.name))):
        i_fs, v_fs, p_fs = fs.get(e.name, (None, None, None))
        row = {"designator": e.name, "kind": e.kind, "value": "", "value_si": None, "series": "", "tolerance_pct": None,
               "tempco_ppm_per_k": None, "power_rated_w": None, "power_required_w": p_fs, "voltage_rated_v": None,
               "voltage_required_v": v_fs, "notes": []}
        if isinstance(e, Resistor):
            row.update(value=value_text(e.value_ohm, "ohm"), value_si=e.value_ohm, tolerance_pct=100 * e.tolerance,
                       tempco_ppm_per_k=1e6 * e.tempco_per_k, power_rated_w=e.power_w, voltage_rated_v=e.max_voltage_v)
            row["series"] = e.series or _series_of(spec, e.value_ohm)
            sp = sized.get(e.name)
            if sp and sp.get("trimmer"):  # planner.trim: the part is the trimmer, set in calibration
                row.update(value=f"{value_text(sp['value_ohm'], 'ohm')} trimmer", value_si=sp["value_ohm"],
                           series="trimmer", tolerance_pct=None)
                row["notes"].append(f"set to about {value_text(e.value_ohm, 'ohm')} in calibration "
                                    f"(section {ctx.number('Build and acceptance')})")
            elif e.trimmer:
                row["notes"].append("trimmer / select on test")
            if e.target_ohm is not None and abs(e.target_ohm - e.value_ohm) > 1e-9 * e.target_ohm:
                row["notes"].append(f"target {value_text(e.target_ohm, 'ohm', 5)}")
            if sp:
                row["notes"].append(f"{sp.get('segment')}")
                pr = sp.get("power_required_w")
                if pr is not None and p_fs is not None and pr > 1.5 * p_fs:
                    row["notes"].append(f"rated for {value_text(pr, 'W', 3)} / "
                                        f"{value_text(sp.get('voltage_required_v'), 'V', 3)} under max input")
        elif isinstance(e, MovementElement):
            m = spec.movement
            row.update(value=f"{value_text(m.i_fs_a, 'A')} fs, {value_text(m.r_coil_ohm, 'ohm')}",
                       value_si=m.r_coil_ohm, tolerance_pct=100 * m.tolerance, tempco_ppm_per_k=1e6 * m.tempco_per_k,
                       series="meter")
            row["notes"].append(f"class {m.class_index:g}; peg {m.overload.peg:g}x, short time "
                                f"{m.overload.short_time:g}x, continuous {m.overload.continuous:g}x I_fs")
            row["power_required_w"] = None
        elif isinstance(e, Diode):
            d = spec.parts.diodes.get(e.model)
            row.update(value=e.model, series="diode")
            if d:
                row["power_rated_w"] = d.max_power_w if math.isfinite(d.max_power_w) else None
                row["voltage_rated_v"] = d.bv_v
                row["notes"].append(f"I_s {value_text(d.i_s_a, 'A', 3)}, n {d.n:g}; I_F max "
                                    f"{value_text(d.max_current_a, 'A', 3)}, "
                                    f"surge {value_text(d.surge_current_a, 'A', 3)}")
                row["notes"].append(f"anode {e.anode}, cathode {e.cathode}")
        elif isinstance(e, Fuse):
            f = spec.parts.fuses.get(e.model)
            row.update(value=e.model, series="fuse")
            if f:
                row["value"] = f"{value_text(f.rated_current_a, 'A')} ({e.model})"
                row["value_si"] = f.rated_current_a
                row["voltage_rated_v"] = f.max_voltage_v if math.isfinite(f.max_voltage_v) else None
                row["notes"].append(f"breaking capacity {value_text(f.breaking_capacity_a, 'A')}, cold "
                                    f"{value_text(f.r_cold_ohm, 'ohm')}"
                                    + (f", I2t {f.i2t_a2s:g} A2s" if f.i2t_a2s else ""))
                if i_fs is not None:
                    row["notes"].append(f"full-scale current {value_text(i_fs, 'A', 3)}")
        elif isinstance(e, Contact):
            row.update(value=value_text(e.r_ohm, "ohm") if e.r_ohm else "ideal", value_si=e.r_ohm, series="switch")
            row["notes"].append("closed in " + (", ".join(e.closed_in) or "no position"))
            row["power_required_w"] = None
            row["voltage_required_v"] = None
        if e.name in mis and mis[e.name][0] > 1.0:
            row["notes"].append("misrange: " + mis[e.name][1])
        rows.append(row)
    ctx._cache["bom"] = rows
    return rows


def _natural(name: str):
    import re

    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", name)]


def _series_of(spec, value: float) -> str:
    try:
        from .. import eseries

        s = spec.parts.resistors.series
        return s if eseries.is_member(s, value, rel=1e-6) else "custom"
    except Exception:  # noqa: BLE001
        return ""


def _rated_required(rated, required, unit):
    if rated is None and required is None:
        return None, False
    over = rated is not None and required is not None and required > rated * (1 + 1e-9)
    text = f"{value_text(rated, unit, 3) if rated is not None else 'n/a'} / " \
           f"{value_text(required, unit, 3) if required is not None else 'n/a'}"
    return text, over


def bom(ctx: Context) -> list:
    """The bill of materials (the CSV beside the PDF holds the same rows)."""
    out = [ctx.heading("Bill of materials")]
    if ctx.net is None:
        return out + _error_note(ctx, "Network", "network") + [PageBreak()]
    out.append(p("Every element of the network, designators as in the schematic. <i>Rated / required</i>: the part's "
                 "rating, then the largest value it sees at full scale on any position (nominal parts, reference "
                 "temperature). Misrange stresses beyond a rating are noted (section 6). The same rows are in the "
                 "CSV file beside this PDF."))
    rows, fills = [], []
    for i, r in enumerate(bom_rows(ctx), start=1):
        pw, pover = _rated_required(r["power_rated_w"], r["power_required_w"], "W")
        vv, vover = _rated_required(r["voltage_rated_v"], r["voltage_required_v"], "V")
        if pover:
            fills.append((5, i, "overstress"))
            pw += " !"
        if vover:
            fills.append((6, i, "overstress"))
            vv += " !"
        rows.append([r["designator"], r["value"], r["series"] or None,
                     f"{r['tolerance_pct']:g} %" if r["tolerance_pct"] else None,
                     f"{r['tempco_ppm_per_k']:g} ppm/K" if r["tempco_ppm_per_k"] else None, pw, vv,
                     "; ".join(r["notes"]) or None])
    out.append(table(["Ref", "Value", "Series", "Tol.", "Tempco", "Power rated / req.", "Voltage rated / req.",
                      "Notes"], rows, [0.06, 0.13, 0.08, 0.065, 0.095, 0.13, 0.13, 0.31], align="lllrrrrl",
                     extra=_verdict_fill(fills)))
    out.append(p("'!' marks a requirement above the rating at full scale (normal use), which needs a different part. "
                 "n/a: no such rating or no such stress.", "caption"))
    out.append(PageBreak())
    return out


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
    scale, prefix = _axis_scale(fs)
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
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Linearity", _why(ctx, "check")))
    # protection
    curves = _protection_curves(ctx, name)
    if curves:
        charts_.append(_protection_chart(ctx, curves))
    else:
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Protection curve", _why(ctx, "faults",
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
        charts_.append(charts.message_drawing(CHART_W, CHART_H, "Temperature", _why(ctx, "check")))
    # Monte Carlo
    charts_.append(_mc_chart(ctx, name, q, cls))
    grid = Table([[charts_[0], charts_[1]], [charts_[2], charts_[3]]], colWidths=[CHART_W + 6] * 2,
                 hAlign="LEFT")
    grid.setStyle(TableStyle([("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 6),
                              ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 6),
                              ("VALIGN", (0, 0), (-1, -1), "TOP")]))
    return [grid]


def _why(ctx: Context, key: str, default: str = "not available") -> str:
    if key in ctx.errors:
        return f"The {key} analysis raised an error: {ctx.errors[key]}"
    return default


def _axis_scale(fs: float):
    for factor, prefix in ((1e-6, "u"), (1e-3, "m"), (1.0, ""), (1e3, "k")):
        if abs(fs) < 1000 * factor:
            return factor, prefix
    return 1.0, ""


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
        scale, prefix = _axis_scale(max(abs(float(x)) for x in xs))
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


def _mc_errors(ctx: Context, name: str):
    """Full-scale errors [%] of the Monte Carlo builds, the same builds as the accuracy check."""
    from .. import accuracy

    eng = ctx.engine
    params = accuracy.parameters(eng)
    fac_all = accuracy.draw_factors(params, int(ctx.samples), np.random.default_rng(int(ctx.seed)))
    carrying = accuracy.current_carrying(eng, name)
    fac = {p.key: fac_all[p.key] for p in params if p.element is None or p.element in carrying}
    pos = eng.state(name).position
    if fac:
        rd = eng.operate(name, [pos.full_scale], factors=fac).reading()[:, 0]
    else:
        rd = np.full(int(ctx.samples), float(eng.operate(name, [pos.full_scale]).reading()[0, 0]))
    return (rd - pos.full_scale) / pos.full_scale * 100.0


def _mc_chart(ctx: Context, name: str, q: dict | None, cls: float):
    if not q or ctx.engine is None:
        return charts.message_drawing(CHART_W, CHART_H, "Monte Carlo", _why(ctx, "check"))
    try:
        err = _mc_errors(ctx, name)
    except Exception as exc:  # noqa: BLE001 - the chart shows why it is missing
        return charts.message_drawing(CHART_W, CHART_H, "Monte Carlo", f"histogram not available: {exc}")
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
            ["Worst-case error", pct_abs(q.get("worst_case_error_pct")),
             f"{q.get('worst_case_method', '')} over {len(q.get('worst_case_parameters') or [])} toleranced "
             "parameters (nominal offset included)"],
            ["Temperature error", pct_abs(q.get("temperature_error_pct")),
             f"largest change of the full-scale reading, {celsius(amb.t_min_k)} to {celsius(amb.t_max_k)}"],
            ["Budget (worst case + temperature)", pct_abs(q.get("budget_pct")),
             f"class {cls:g}: {q.get('verdict', '')}"]]
    mc = (q.get("monte_carlo") or {}).get("full_scale_error_pct") or {}
    if q.get("yield_fraction") is not None:
        rows.append(["Monte Carlo yield", f"{100 * q['yield_fraction']:.1f} %",
                     f"{(q.get('monte_carlo') or {}).get('samples', ctx.samples)} builds; 1 % to 99 %: "
                     f"{pct(mc.get('p1'))} to {pct(mc.get('p99'))}"])
    if q.get("measures") == "voltage" and q.get("input_resistance_ohm") is not None:
        rows.append(["Input resistance", value_text(q["input_resistance_ohm"], "ohm"),
                     f"{value_text(q.get('ohms_per_volt'), 'ohm/V')} at full scale"])
    if q.get("burden_voltage_v") is not None:
        rows.append(["Burden voltage at full scale", value_text(q["burden_voltage_v"], "V"),
                     f"input resistance {value_text(q.get('input_resistance_ohm'), 'ohm')}"])
    fill = "ok" if q.get("verdict") == "within class" else "overstress"
    return table(["Accuracy", "Value", "Basis"], rows, [0.33, 0.15, 0.52], align="lrl",
                 extra=_verdict_fill([(1, 4, fill)]))


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
        if pos is not None and _hazardous_position(pos):
            title, lines = hazard_reminder(f"This range measures up to {value_text(pos.full_scale, 'V')}.")
            out.append(caution_box(title, lines))
            out.append(Spacer(1, 4))
        if q is None:
            out += _error_note(ctx, "Accuracy check", "check")
        else:
            out.append(_accuracy_table(ctx, q))
        out.append(Spacer(1, 6))
        out += _position_charts(ctx, name, q, pos)
        if q is not None and pos is not None and q.get("linearity"):
            out.append(_linearity_table(ctx, q, pos))
    out.append(PageBreak())
    return out


# --- 6: misrange -------------------------------------------------------------------------------------------
def misrange(ctx: Context) -> list:
    """The misrange matrix in colour and words, failing and accepted cases, switch transitions."""
    spec = ctx.spec
    out = [ctx.heading("Misrange matrix")]
    stims = _stimuli(ctx)
    hz_cases = [c for c in ctx.fault_cases() if c.get("verdict") == "hazard"]
    if any(_stim_hazardous(s) for s in stims) or _hazardous_sources(spec) or hz_cases:
        title, lines = hazard_reminder("Some sources in this matrix are at hazardous voltages." if stims else
                                       "The project's sources include hazardous voltages.")
        out.append(caution_box(title, lines))
        out.append(Spacer(1, 6))
    if ctx.faults is None:
        return out + _error_note(ctx, "Fault analysis", "faults") + [PageBreak()]
    cases = ctx.fault_cases()
    out.append(p("Every foreseeable source applied to every position (rows: positions; columns: sources). Each cell "
                 "gives the verdict in words and the largest movement current as a multiple of full scale. "
                 "<b>OK</b>: every part within ratings, pointer at or below its stop. <b>PEGS</b>: pointer past its "
                 "stop, parts within ratings. <b>OVERSTRESS</b>: a part beyond a rating. <b>HAZARD</b>: a danger "
                 "to the person. <i>(acc.)</i> marks a case accepted in the project file; a dash, a source that "
                 "does not apply to the position."))
    names = ctx.position_names()
    grid = {(str(c.get("position")), _stim_name(c)): c for c in cases}
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
                if _is_accepted(ctx, c):
                    extra += " (acc.)"
                row.append(_verdict_cell(v, extra))
                fills.append((j, i, v))
            rows.append(row)
        widths = [0.16] + [0.84 / per] * len(chunk)
        out.append(table(["Position"] + [str(n) for n in chunk], rows, widths, align="l" + "c" * len(chunk),
                         zebra=False, extra=_verdict_fill(fills) + [("GRID", (0, 0), (-1, -1), 0.4, RULE)]))
        out.append(Spacer(1, 6))
    if stims:
        values = defaultdict(set)
        for c in cases:
            d = c.get("stimulus_detail") or {}
            values[_stim_name(c)].add(repr(d.get("value")))
        rows = []
        for st in stims:
            if len(values.get(st.get("name"), ())) > 1:
                desc = (st.get("detail") or "value depends on the position").capitalize()
                hz = "on some positions" if any(_stim_hazardous(c.get("stimulus_detail") or {}) for c in cases
                                                if _stim_name(c) == st.get("name")) else "no"
            else:
                desc, hz = _stim_desc(st), "yes" if _stim_hazardous(st) else "no"
            rows.append([str(st.get("name")), desc, hz])
        out.append(p("Sources", "h3"))
        out.append(table(["Source", "Stimulus", "Hazardous"], rows, [0.22, 0.64, 0.14]))
    # failing cases in detail
    failing = [c for c in cases if c.get("verdict") in ("overstress", "hazard")]
    failing.sort(key=lambda c: (names.index(c["position"]) if c.get("position") in names else 99,
                                stim_names.index(_stim_name(c)) if _stim_name(c) in stim_names else 99))
    out.append(p("Failing cases", "h2"))
    if not failing:
        out.append(p("No case overstresses a part."))
    else:
        out.append(p("Each failing case with every stress beyond its limit, the largest first. Ratio: value over "
                     "rating.", "small"))
    for c in failing:
        acc = _is_accepted(ctx, c)
        title = (f"{_stim_name(c)} on {c.get('position')}: {str(c.get('verdict')).upper()}"
                 + (" (accepted)" if acc else ""))
        rows = []
        for x in sorted(c.get("stresses") or [], key=lambda x: -_ratio(x)):
            if not x.get("exceeded", _ratio(x) > 1.0):
                continue
            rows.append([str(x.get("part")), str(x.get("quantity")), _num(x.get("value"), x.get("unit")),
                         _num(x.get("rating"), x.get("unit")), f"{_ratio(x):.3g} x", str(x.get("limit", ""))])
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
                               + (f" – {_stress_text(after['deciding'])}" if after.get("deciding") else "")),
                           "small"))
        out.append(layout.keep(*block))
    # accepted cases
    acc_rows = []
    for c in cases:
        reason = _is_accepted(ctx, c)
        if reason:
            acc_rows.append([str(c.get("position")), _stim_name(c), reason, str(c.get("verdict", "")).upper()])
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
                         _stim_name(t), f"{mm:.3g} x" if isinstance(mm, (int, float)) and math.isfinite(mm) else None,
                         _verdict_cell(v), esc(_stress_text(dec)) if isinstance(dec, dict) else None])
            fills.append((4, i, v))
        out.append(table(["Turn", "Contacts", "Stimulus", "Movement", "Verdict", "Deciding stress"], rows,
                         [0.14, 0.16, 0.12, 0.10, 0.14, 0.34], align="lllrcl", extra=_verdict_fill(fills)))
    cs = [c for c in (ctx.faults or {}).get("cautions", []) or [] if c not in ctx.cautions]
    if cs:
        out.append(Spacer(1, 6))
        out.append(caution_box("from the fault analysis", [esc(c) for c in cs]))
    out.append(PageBreak())
    return out


def _num(v, unit) -> str:
    if not isinstance(v, (int, float)):
        return str(v)
    if unit in (None, "", "x I_fs"):
        return f"{v:.4g}" + (" x I_fs" if unit == "x I_fs" else "")
    return value_text(v, unit)


# --- 7: build and acceptance ---------------------------------------------------------------------------------
def _test_points(ctx: Context):
    eng, net = ctx.engine, ctx.net
    volts = {}
    nodes = sorted({n for e in net.elements for n in e.nodes})
    for q in net.positions:
        op = eng.operate(q.name, [q.full_scale])
        for n in nodes:
            if n in op.circuit.node_index:
                volts[(n, q.name)] = float(op.node_voltage(n)[0, 0])
    key = {n: max([abs(volts.get((n, q.name), 0.0)) for q in net.positions]) for n in nodes}
    nodes.sort(key=lambda n: (key[n], _natural(n)))
    return nodes, volts


def build(ctx: Context) -> list:
    """Calibration order and trims, test points, acceptance tables, instruments."""
    spec = ctx.spec
    out = [ctx.heading("Build and acceptance")]
    if ctx.engine is None:
        return out + _error_note(ctx, "Network", "network") + [PageBreak()]
    net = ctx.net
    cls = spec.movement.class_index
    # calibration order
    out.append(p("Calibration order and trims", "h2"))
    steps = ["Measure the movement alone: coil resistance with a low-current ohmmeter (at most the full-scale "
             f"current, {value_text(spec.movement.i_fs_a, 'A')}), then the current for full-scale deflection from a "
             "current source; both should match the project file before any resistor is fitted. Set the mechanical "
             "zero with no input."]
    vpos = [q for q in net.positions if q.measures == "voltage"]
    ipos = [q for q in net.positions if q.measures == "current"]
    trims = [e.name for e in net.elements if isinstance(e, Resistor) and e.trimmer]
    if ipos:
        steps.append("Current ranges first, lowest range first: " + ", ".join(q.name for q in ipos) + ". On an "
                     "Ayrton ring the lowest range uses the whole ring, so its reading checks the ring's total against "
                     "the coil; the higher ranges then check each tap. Measure shunts below 10 ohm with four "
                     "wires (Kelvin).")
    if vpos:
        steps.append("Voltage ranges next, lowest range first: " + ", ".join(q.name for q in vpos) + ". In a "
                     "multiplier chain every higher range includes the lower segments, so a segment is only trimmed "
                     "after the ranges below it read correctly.")
    calibration = (ctx.check or {}).get("calibration") or []
    if calibration:  # planner.trim: the trimmers in order, each at its own position
        steps += [c.split(". ", 1)[1] for c in calibration]
    elif trims:
        steps.append("Trim positions: " + ", ".join(trims) + " (marked in the bill of materials); adjust each "
                     "at full scale of the lowest range that uses it.")
    else:
        steps.append("No trimmer is planned. If a range misses the acceptance limits, select the value of its own "
                     "segment on test (the resistor between its tap and the tap below) rather than touching a lower "
                     "segment.")
    steps.append("Finally repeat the acceptance table below at the reference temperature "
                 f"({celsius(spec.ambient.t_ref_k)}), after the instrument has settled for at least an hour.")
    for i, s in enumerate(steps, start=1):
        out.append(Paragraph(esc(s), STYLES["bullet"], bulletText=f"{i}."))
    # test points
    out.append(p("Test points: node voltages at full scale", "h2"))
    nodes, volts = _test_points(ctx)
    vmax = max([abs(v) for v in volts.values()] + [0.0])
    if is_hazardous(vmax):
        title, lines = hazard_reminder(f"Test voltages, here and in the acceptance tests below, reach "
                                       f"{value_text(vmax, 'V')}.")
        out.append(caution_box(title, lines))
        out.append(Spacer(1, 4))
    out.append(p("Voltage of each node against the input's minus terminal with the full-scale value applied to each "
                 "position (nominal parts, reference temperature). Node names are those of the schematic, each with the part pin to probe. A dash: "
                 "the node is not connected in that position.", "small"))
    names = [q.name for q in net.positions]
    pins = pin_names(net)  # planner.testpoints: each node named by the parts' pins on it
    per = 6
    for start in range(0, len(names), per):
        chunk = names[start:start + per]
        rows = []
        for n in nodes:
            where = f"{n}: {pins[n]['name']}" if n in pins else n
            rows.append([where] + [quantity(volts[(n, q)], "V", 4) if (n, q) in volts else None for q in chunk])
        out.append(table(["Node: probe at"] + chunk, rows, [0.28] + [0.72 / per] * len(chunk),
                         align="l" + "r" * len(chunk)))
        out.append(Spacer(1, 6))
    # acceptance
    out.append(CondPageBreak(220))
    out.append(p("Acceptance tests", "h2"))
    if any(_hazardous_position(q) for q in net.positions) and not is_hazardous(vmax):
        title, lines = hazard_reminder("The acceptance tests of the hazardous ranges apply hazardous voltages.")
        out.append(caution_box(title, lines))
        out.append(Spacer(1, 4))
    out.append(p(f"Apply each value from a source whose uncertainty is at most a quarter of the class "
                 f"({cls / 4:g} % of full scale); the reading must lie within the limits, which are the applied "
                 f"value \u00b1 the class ({cls:g} % of full scale, IEC 60051). <i>Expect</i> is the reading computed "
                 "with nominal parts at the reference temperature, clamp leakage included.", "small"))
    rows, fills, outside, groups = [], [], [], []
    for q in net.positions:
        fr = np.array([0.2, 0.5, 1.0])
        applied = fr * q.full_scale
        reading = np.asarray(ctx.engine.reading(q.name, applied)).ravel()
        tol = cls / 100.0 * q.full_scale
        groups.append(len(rows) + 1)
        for k, (a, r) in enumerate(zip(applied, reading)):
            inside = abs(r - a) <= tol
            if not inside:
                outside.append(f"{q.name} at {quantity(a, q.unit)}")
            limits = f"{quantity(a - tol, q.unit)} to {quantity(a + tol, q.unit)}"
            rows.append([q.name, quantity(a, q.unit), quantity(r, q.unit) + ("" if inside else " !"),
                         "\u00b1 " + value_text(tol, q.unit), limits, "", ""])
            if not inside:
                fills.append((2, len(rows), "overstress"))
    rules = [("LINEABOVE", (0, g), (-1, g), 0.6, RULE) for g in groups[1:]]
    out.append(table(["Position", "Apply", "Expect", "Tolerance", "Limits", "Measured", "Pass"], rows,
                     [0.11, 0.13, 0.13, 0.12, 0.25, 0.15, 0.11], align="lrrrrll", zebra=False,
                     extra=[("GRID", (5, 1), (6, -1), 0.3, RULE)] + rules + _verdict_fill(fills)))
    if outside:
        out.append(p(esc("'!': the computed reading is already outside the limits (" + ", ".join(outside) + "); "
                         "the built instrument will fail there unless the design is changed or trimmed."),
                     "caption"))
    # instruments
    out.append(p("Instruments needed", "h2"))
    inst = []
    if vpos:
        inst.append(f"DC voltage calibrator or stable supply with a reference voltmeter, 0 to "
                    f"{value_text(max(q.full_scale for q in vpos), 'V')}, uncertainty at most {cls / 4:g} % of the "
                    "lowest range's full scale, current-limited.")
    if ipos:
        inst.append(f"DC current source (or supply with series resistor and reference ammeter), "
                    f"{value_text(min(q.full_scale for q in ipos) * 0.2, 'A')} to "
                    f"{value_text(max(q.full_scale for q in ipos), 'A')}, uncertainty at most {cls / 4:g} %.")
    inst.append(f"Current source for the bare movement, up to {value_text(spec.movement.i_fs_a * 1.1, 'A')}.")
    inst.append("Digital multimeter (4\u00bd digits or better) for the test-point voltages and the resistor values; "
                "four-wire resistance for values below 10 ohm.")
    if any(isinstance(e, Diode) for e in net.elements):
        inst.append("Diode test (forward voltage) to check the clamp diodes' orientation before the movement is "
                    "fitted.")
    inst.append("Thermometer for the ambient temperature of the acceptance test.")
    for s in inst:
        out.append(Paragraph(esc(s), STYLES["bullet"], bulletText="\u2022"))
    out.append(PageBreak())
    return out


# --- 8: methods ------------------------------------------------------------------------------------------------
def methods(ctx: Context) -> list:
    """Methods and assumptions with their published sources, and the model parameters."""
    spec = ctx.spec
    out = [ctx.heading("Methods and assumptions")]
    for title, paras in METHODS:
        out.append(p(esc(title), "h3"))
        for t in paras:
            out.append(p(t))
    if ctx.check and ctx.check.get("budget_rule"):
        out.append(p(esc("Budget rule of this build: " + ctx.check["budget_rule"] + "."), "small"))
    for n in (ctx.sizing or {}).get("notes", []) or []:
        out.append(p(esc("Sizing: " + n + "."), "small"))
    out.append(p("Model parameters", "h2"))
    m, amb, r = spec.movement, spec.ambient, spec.parts.resistors
    rows = [
        ["Movement", f"I_fs {value_text(m.i_fs_a, 'A')}, R_m {value_text(m.r_coil_ohm, 'ohm')}, "
                     f"class {m.class_index:g}, "
                     f"coil tempco {m.tempco_per_k * 1e6:g} ppm/K, R_m tolerance {100 * m.tolerance:g} %, "
                     f"I_fs tolerance {100 * m.i_fs_tolerance:g} %"],
        ["Overload", f"end stop {m.overload.peg:g} x, short time {m.overload.short_time:g} x, continuous "
                     f"{m.overload.continuous:g} x I_fs"],
        ["Ambient", f"reference {celsius(amb.t_ref_k)}, range {celsius(amb.t_min_k)} to {celsius(amb.t_max_k)}"],
        ["Resistors (default)", f"{r.series}, {100 * r.tolerance:g} %, {r.tempco_per_k * 1e6:g} ppm/K, "
                                f"{value_text(r.power_w, 'W')}, {value_text(r.max_voltage_v, 'V')}, {r.distribution}"],
    ]
    for d in spec.parts.diodes.values():
        rows.append([f"Diode model {d.name}",
                     f"I_s {value_text(d.i_s_a, 'A', 3)}, n {d.n:g}, R_s {value_text(d.r_s_ohm, 'ohm', 3)}, "
                     f"R_p {value_text(d.r_p_ohm, 'ohm', 3)}, E_g {d.eg_ev:g} eV, XTI {d.xti:g}"
                     + (f", BV {value_text(d.bv_v, 'V')}" if d.bv_v is not None else "")
                     + f"; I_F max {value_text(d.max_current_a, 'A', 3)}, "
                       f"surge {value_text(d.surge_current_a, 'A', 3)}, "
                       f"P max {value_text(d.max_power_w, 'W', 3)}"])
    for f in spec.parts.fuses.values():
        rows.append([f"Fuse model {f.name}",
                     f"rated {value_text(f.rated_current_a, 'A')}, breaking {value_text(f.breaking_capacity_a, 'A')}, "
                     f"cold {value_text(f.r_cold_ohm, 'ohm')}, voltage {value_text(f.max_voltage_v, 'V')}"
                     + (f", I2t {f.i2t_a2s:g} A2s" if f.i2t_a2s else "")])
    rows.append(["Analysis", f"Monte Carlo {ctx.samples} builds, seed {ctx.seed}; sizing share of class "
                             f"{spec.analysis.allowed_share:g}"])
    out.append(table(["Item", "Parameters"], rows, [0.22, 0.78]))
    out.append(p("Sources", "h2"))
    for i, ref in enumerate(REFERENCES, start=1):
        out.append(Paragraph(ref, STYLES["bullet"], bulletText=f"[{i}]"))
    out.append(PageBreak())
    return out


# --- appendix ------------------------------------------------------------------------------------------------------
def appendix(ctx: Context) -> list:
    """The project file, line-numbered and wrapped, as the appendix."""
    spec = ctx.spec
    out = [ctx.heading("Appendix: project file")]
    out.append(p(esc(f"{spec.path or 'project text'} \u2013 SHA-256 {ctx.sha256 or 'n/a'}"), "small"))
    out.append(Spacer(1, 4))
    if not spec.text:
        out.append(p("The text of the project file is not available (the project was not loaded from a file)."))
        return out
    char_w = 0.6 * STYLES["mono"].fontSize
    width = int((FRAME_WIDTH - 8) / char_w)
    lines = spec.text.replace("\t", "    ").splitlines()
    digits = len(str(len(lines)))
    body = width - digits - 3
    chunk = []
    for i, line in enumerate(lines, start=1):
        pieces = [line[k:k + body] for k in range(0, len(line), body)] or [""]
        for j, piece in enumerate(pieces):
            num = f"{i:>{digits}}" if j == 0 else " " * (digits - 1) + "+"
            chunk.append(f"{num} | {piece}")
    from reportlab.platypus import XPreformatted

    block = 60
    for k in range(0, len(chunk), block):
        out.append(XPreformatted(esc("\n".join(chunk[k:k + block])), STYLES["mono"]))
    out.append(p("Lines longer than the column continue on the next line, marked '+'.", "caption"))
    return out


#: Section builders in order (names of functions in this module; looked up at build time).
SECTIONS = ("cover", "contents", "cautions", "summary", "schematic", "bom", "positions", "misrange", "build",
            "methods", "appendix")
