"""The cover, the contents list and the safety cautions (sections 0 and 1)."""

from __future__ import annotations

from reportlab.platypus import PageBreak, Spacer, Table, TableStyle
from reportlab.platypus.tableofcontents import TableOfContents

from ...model import Fuse, Resistor
from .. import layout
from ..layout import FRAME_WIDTH, INK, RULE, STYLES, caution_box, esc, note_box, p, table
from ..text import GENERAL_CAUTIONS, value_text
from .context import Context
from .common import hazardous_position, hazardous_sources


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
        hz = [q.name for q in net.positions if hazardous_position(q)]
        if hz:
            facts.append(f"Hazardous ranges of this instrument: <b>{esc(', '.join(hz))}</b>.")
    hs = hazardous_sources(spec)
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
