"""Text on the plate: runs in the standard PDF fonts, their widths and their boxes.

Everything is in millimetres on the plate, angles in degrees counter-clockwise.
Widths come from the Adobe font metrics of the standard PDF fonts that
reportlab ships (Helvetica, Helvetica-Bold, Symbol), so the boxes the layout
keeps apart are the boxes a PDF viewer draws. Two glyphs that Helvetica's
encoding lacks, the ohm sign and infinity, are set in the Symbol font.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: Points per millimetre (1 pt = 1/72 in, 1 in = 25.4 mm).
PT_PER_MM = 72.0 / 25.4

#: Smallest type size on a plate [pt] (readable at arm's length, common practice).
MIN_TEXT_PT = 6.0

#: Box of a line of text in em above and below its baseline: Helvetica's capital and
#: digit height is 0.718 em, round digits overshoot the baseline by 0.019 em, the
#: descender is 0.207 em (Adobe Helvetica AFM).
ASCENT_EM = 0.72
DIGIT_DESCENT_EM = 0.03
DESCENT_EM = 0.21

_SYMBOL_CHARS = {"\u03a9": "\u03a9", "\u2126": "\u03a9", "\u221e": "\u221e"}
_DESCENDERS = set("gjpqy,;()[]{}|/Qµ\u00b5")


def runs_for(text: str, font: str = "Helvetica") -> tuple[tuple[str, str], ...]:
    """Split text into (text, font) runs, the ohm sign and infinity in the Symbol font."""
    runs: list[list[str]] = []
    for ch in text:
        f = "Symbol" if ch in _SYMBOL_CHARS else font
        ch = _SYMBOL_CHARS.get(ch, ch)
        if runs and runs[-1][1] == f:
            runs[-1][0] += ch
        else:
            runs.append([ch, f])
    return tuple((t, f) for t, f in runs)


def plain(runs) -> str:
    return "".join(t for t, _ in runs)


def width_mm(runs, size_pt: float) -> float:
    """Advance width of the runs at ``size_pt`` [mm] (standard font metrics)."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    return sum(stringWidth(t, f, size_pt) for t, f in runs) / PT_PER_MM


def descent_em(runs) -> float:
    return DESCENT_EM if any(ch in _DESCENDERS for t, _ in runs for ch in t) else DIGIT_DESCENT_EM


@dataclass(frozen=True)
class Text:
    """A line of text: baseline anchor (x, y) [mm], rotation [deg], anchor ``start|middle|end``."""

    x: float
    y: float
    runs: tuple[tuple[str, str], ...]
    size_pt: float
    rotation_deg: float = 0.0
    anchor: str = "middle"
    colour: str = "#000000"
    role: str = "label"  # label | tag | title | note

    @property
    def text(self) -> str:
        return plain(self.runs)

    @property
    def width_mm(self) -> float:
        return width_mm(self.runs, self.size_pt)

    def corners(self, pad_mm: float = 0.0) -> list[tuple[float, float]]:
        """The box's four corners on the plate [mm], grown by ``pad_mm`` on every side."""
        w = self.width_mm
        em = self.size_pt / PT_PER_MM
        x0 = {"start": 0.0, "middle": -w / 2.0, "end": -w}[self.anchor] - pad_mm
        x1 = x0 + w + 2.0 * pad_mm
        y0 = -descent_em(self.runs) * em - pad_mm
        y1 = ASCENT_EM * em + pad_mm
        c, s = math.cos(math.radians(self.rotation_deg)), math.sin(math.radians(self.rotation_deg))
        return [(self.x + c * u - s * v, self.y + s * u + c * v) for u, v in ((x0, y0), (x1, y0), (x1, y1), (x0, y1))]


def centred(cx: float, cy: float, runs, size_pt: float, rotation_deg: float, **kw) -> Text:
    """A middle-anchored text whose box centre is at (cx, cy) [mm]."""
    em = size_pt / PT_PER_MM
    lift = (ASCENT_EM - descent_em(runs)) * em / 2.0
    c, s = math.cos(math.radians(rotation_deg)), math.sin(math.radians(rotation_deg))
    return Text(cx + s * lift, cy - c * lift, tuple(runs), size_pt, rotation_deg, "middle", **kw)


def upright(angle_deg: float) -> float:
    """Text rotation for a baseline tangent to an arc at polar angle ``angle_deg``, never upside down."""
    rot = angle_deg - 90.0
    while rot > 90.0:
        rot -= 180.0
    while rot < -90.0:
        rot += 180.0
    return rot


def overlap(p, q) -> bool:
    """Whether two convex polygons overlap (separating axis theorem; touching is no overlap).

    References
    ----------
    .. [1] S. Gottschalk, M. C. Lin, D. Manocha, "OBBTree: a hierarchical structure for rapid
       interference detection", Proc. SIGGRAPH 1996, pp. 171-180 (separating axis test).
    """
    for poly in (p, q):
        n = len(poly)
        for i in range(n):
            (x1, y1), (x2, y2) = poly[i], poly[(i + 1) % n]
            ax, ay = y1 - y2, x2 - x1
            a = [ax * x + ay * y for x, y in p]
            b = [ax * x + ay * y for x, y in q]
            if max(a) <= min(b) or max(b) <= min(a):
                return False
    return True
