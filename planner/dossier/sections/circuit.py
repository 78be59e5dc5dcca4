"""The schematic section: the drawing, the switch positions and the connection list (section 3)."""

from __future__ import annotations

from reportlab.platypus import CondPageBreak, PageBreak

from ...model import Contact
from .. import layout, schematic as sch, wafer
from ..layout import FRAME_WIDTH, esc, p, table
from ..text import value_text
from .context import Context
from .common import error_note


# --- 3: schematic ---------------------------------------------------------------------------------------
def schematic(ctx: Context) -> list:
    """The circuit drawn from the network graph, the connection list and the switch table."""
    out = [ctx.heading("Schematic")]
    if ctx.net is None:
        return out + error_note(ctx, "Network", "network") + [PageBreak()]
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
