"""The switch wiring on paper: a wiring table per deck and a drawing of each wafer.

Renders a :class:`planner.wiring.Wiring` (computed by :func:`planner.wiring.wire_switch`
before the dossier is laid out); computes nothing. Each deck is drawn face by face
as seen from the knob: its fixed terminals on a circle, terminal 1 at the top and
numbered clockwise, each used terminal labelled with the position that rests on it
and the node wired to it, the rotor blade of each pole drawn in its first position
(resting in the first position) with its common terminal at the centre.
"""

from __future__ import annotations

import math

from reportlab.graphics.shapes import Circle, Drawing, Line, String
from reportlab.platypus import CondPageBreak, Spacer

from .layout import ACCENT, FRAME_WIDTH, INK, MUTED, RULE, esc, keep, p, table

__all__ = ["wafer_drawing", "wiring_flowables"]

#: Smallest type on the drawing [pt] (print-readable).
FONT = 7.0


def _face(d: Drawing, wiring, poles, cx: float, cy: float, r: float, title: str) -> None:
    d.add(String(cx, cy + r + 26, title, fontName="Helvetica-Bold", fontSize=FONT + 1, fillColor=INK,
                 textAnchor="middle"))
    d.add(Circle(cx, cy, r, strokeColor=RULE, strokeWidth=0.8, fillColor=None))
    used = {t.terminal: (pole, t) for pole in poles for t in pole.contacts}
    step = 2 * math.pi / wiring.ways
    for k in range(1, wiring.ways + 1):
        a = math.pi / 2 - (k - 1) * step
        x, y = cx + r * math.cos(a), cy + r * math.sin(a)
        hit = used.get(k)
        d.add(Circle(x, y, 2.6, strokeColor=INK, strokeWidth=0.7, fillColor=INK if hit else None))
        b = a - 0.14  # beside the blade's path, not under it
        d.add(String(cx + (r - 11) * math.cos(b), cy + (r - 11) * math.sin(b) - FONT / 3, str(k),
                     fontName="Helvetica", fontSize=FONT, fillColor=MUTED, textAnchor="middle"))
        if hit:
            pole, t = hit
            anchor = "start" if math.cos(a) > 0.2 else "end" if math.cos(a) < -0.2 else "middle"
            lx, ly = cx + (r + 7) * math.cos(a), cy + (r + 7) * math.sin(a)
            dy = 4 if math.sin(a) > -0.2 else -FONT - 4
            d.add(String(lx, ly + dy, f"{t.position}: {t.node}", fontName="Helvetica", fontSize=FONT,
                         fillColor=INK, textAnchor=anchor))
    for j, pole in enumerate(poles):
        if not pole.contacts:
            continue
        first = pole.contacts[0]
        k = first.terminal - wiring.positions.index(first.position)  # where it rests in the first position
        a = math.pi / 2 - (k - 1) * step
        ox, oy = cx + 5 * math.cos(a + math.pi), cy + 5 * math.sin(a + math.pi)
        d.add(Line(ox, oy, cx + (r - 4) * math.cos(a), cy + (r - 4) * math.sin(a), strokeColor=ACCENT,
                   strokeWidth=2.2 if pole.blade == "shorting" else 1.2))
        d.add(String(cx, cy - r - 32 - (FONT + 3) * j, f"pole {pole.pole}: common {pole.common}",
                     fontName="Helvetica", fontSize=FONT, fillColor=ACCENT, textAnchor="middle"))
    d.add(Circle(cx, cy, 3.5, strokeColor=ACCENT, strokeWidth=0.8, fillColor=ACCENT))


def wafer_drawing(wiring, deck: int, width: float = FRAME_WIDTH) -> Drawing:
    """One deck, front face and rear face side by side, as seen from the knob [pt].

    Parameters
    ----------
    wiring : planner.wiring.Wiring
    deck : int
        Deck number (1 nearest the knob).
    width : float
        Drawing width [pt].

    Returns
    -------
    reportlab.graphics.shapes.Drawing
    """
    rows = (FONT + 3) * wiring.poles_per_face  # the common labels under each face
    r = 0.13 * width
    height = 2 * r + 70 + rows
    d = Drawing(width, height)
    poles = wiring.deck_poles(deck)
    for i, face in enumerate(("front", "rear")):
        on = [q for q in poles if q.face == face]
        cx = width * (0.25 + 0.5 * i)
        title = f"Deck {deck}, {face} face ({on[0].blade if on else 'unused'})"
        _face(d, wiring, on, cx, height - r - 36, r, title)
    return d


def wiring_flowables(wiring) -> list:
    """The switch wiring section: how to read it, then per deck its table and its drawing.

    Returns an empty list when the network has no contacts.
    """
    if wiring is None or not wiring.poles:
        return []
    style = (wiring.style or "not decided").replace("_", "-")
    out = [CondPageBreak(200), p("Switch wiring", "h2"),
           p(esc(f"A rotary wafer switch of {len(wiring.positions)} positions, {wiring.decks} deck(s) with "
                 f"{wiring.ways} terminals a face and {wiring.poles_per_face} pole(s) a face; contact style "
                 f"{style} ({wiring.style_source}). Each pole's blade joins its common terminal to the terminal of "
                 "the position it rests on; wire each listed node to its terminal, and jumper the terminals of a "
                 "contact that closes in several positions. Shorting blades (make-before-break) are drawn thick. "
                 "Terminals are numbered clockwise from the top, seen from the knob."), "caption")]
    for note in wiring.notes:
        out.append(p(esc(note), "caption"))
    for deck in range(1, wiring.decks + 1):
        rows = []
        for pole in wiring.deck_poles(deck):
            for t in pole.contacts:
                rows.append([f"{pole.face} {pole.pole}", pole.common, pole.blade, str(t.terminal), t.position,
                             t.node, t.contact])
        tbl = table(["Face, pole", "Common", "Blade", "Terminal", "Position", "Wire to node", "Contact"], rows,
                    [0.13, 0.14, 0.13, 0.1, 0.16, 0.2, 0.14], align="lllrlll")
        out += [CondPageBreak(160), p(esc(f"Deck {deck}"), "h3"), tbl, Spacer(1, 4),
                keep(wafer_drawing(wiring, deck)), Spacer(1, 6)]
    return out
