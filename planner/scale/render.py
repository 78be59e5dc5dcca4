"""Render a plate at 1:1: a reportlab Drawing (for the PDF and the dossier) and an SVG.

The PDF is reportlab's canvas in invariant mode with the standard fonts only,
so the same plate gives the same bytes. The SVG is written directly as text:
it needs no further dependency, and its user unit is the millimetre
(``width="...mm"`` with a matching ``viewBox``), so every coordinate in the
file is the plate's own dimension, with no point-to-millimetre conversion
left to a library.
"""

from __future__ import annotations

import io
import math
from xml.sax.saxutils import escape, quoteattr

from .plate import Arc, Circle, Line, Plate, Poly, Rect, Sector
from .text import PT_PER_MM, Text

__all__ = ["fit_scale", "plate_drawing", "plate_pdf", "plate_svg"]


def _colour(hexstr: str):
    from reportlab.lib import colors

    return colors.HexColor(hexstr)



def _rl_items(items, ox: float, oy: float, f: float):
    """reportlab shapes for plate items; (ox, oy) the pivot on the page [mm], f points per mm."""
    from reportlab.graphics.shapes import ArcPath, Group, Polygon, Rect as RRect, String
    from reportlab.graphics.shapes import Circle as RCircle, Line as RLine

    def X(x):
        return (x + ox) * f

    def Y(y):
        return (y + oy) * f

    out = []
    for it in items:
        if isinstance(it, Line):
            out.append(RLine(X(it.x1), Y(it.y1), X(it.x2), Y(it.y2), strokeColor=_colour(it.colour),
                             strokeWidth=it.width * f, strokeDashArray=[d * f for d in it.dash] if it.dash else None,
                             strokeLineCap=0))
        elif isinstance(it, Arc):
            p = ArcPath(strokeColor=_colour(it.colour), strokeWidth=it.width * f, fillColor=None)
            p.addArc(X(it.cx), Y(it.cy), it.r * f, it.start_deg, it.end_deg, moveTo=True)
            out.append(p)
        elif isinstance(it, Sector):
            p = ArcPath(strokeColor=_colour(it.stroke), strokeWidth=it.width * f, fillColor=_colour(it.fill))
            p.addArc(X(it.cx), Y(it.cy), it.r_out * f, it.start_deg, it.end_deg, moveTo=True)
            p.addArc(X(it.cx), Y(it.cy), it.r_in * f, it.start_deg, it.end_deg, reverse=True)
            p.closePath()
            out.append(p)
        elif isinstance(it, Poly):
            pts = [c for x, y in it.points for c in (X(x), Y(y))]
            out.append(Polygon(pts, fillColor=_colour(it.fill), strokeColor=None, strokeWidth=0))
        elif isinstance(it, Circle):
            out.append(RCircle(X(it.cx), Y(it.cy), it.r * f, strokeColor=_colour(it.colour),
                               strokeWidth=it.width * f, fillColor=None))
        elif isinstance(it, Rect):
            out.append(RRect(X(it.x), Y(it.y), it.w * f, it.h * f, strokeColor=_colour(it.colour),
                             strokeWidth=it.width * f, fillColor=None,
                             strokeDashArray=[d * f for d in it.dash] if it.dash else None))
        elif isinstance(it, Text):
            from reportlab.pdfbase.pdfmetrics import stringWidth

            size = it.size_pt * f / PT_PER_MM
            total = sum(stringWidth(t, fn, size) for t, fn in it.runs)
            x = {"start": 0.0, "middle": -total / 2.0, "end": -total}[it.anchor]
            c, s = math.cos(math.radians(it.rotation_deg)), math.sin(math.radians(it.rotation_deg))
            g = Group(transform=(c, s, -s, c, X(it.x), Y(it.y)))
            for t, fn in it.runs:
                g.add(String(x, 0.0, t, fontName=fn, fontSize=size, fillColor=_colour(it.colour), textAnchor="start"))
                x += stringWidth(t, fn, size)
            out.append(g)
        else:  # pragma: no cover - every item kind is listed above
            raise TypeError(type(it).__name__)
    return out


def fit_scale(plate: Plate, *, furniture: bool = True, max_width_pt: float | None = None,
              max_height_pt: float | None = None, scale: float = 1.0) -> float:
    """The drawing scale :func:`plate_drawing` uses: ``scale``, shrunk to fit the limits [pt]."""
    if furniture:
        w_mm, h_mm = plate.page_mm
    else:
        x0, y0, x1, y1 = plate.outline
        w_mm, h_mm = x1 - x0 + 1.0, y1 - y0 + 1.0
    for limit, size in ((max_width_pt, w_mm), (max_height_pt, h_mm)):
        if limit is not None:
            scale = min(scale, limit / (size * PT_PER_MM))
    return scale


def plate_drawing(plate: Plate, *, scale: float = 1.0, furniture: bool = True, max_width_pt: float | None = None,
                  max_height_pt: float | None = None):
    """The plate as a reportlab Drawing.

    Parameters
    ----------
    plate : Plate
    scale : float
        Drawing scale (1 = actual size).
    furniture : bool
        With the page, crop marks and title block (True, the printable page) or
        the dial alone, cropped to its cutting line (False, e.g. for a dossier).
    max_width_pt, max_height_pt : float, optional
        Shrink ``scale`` so the drawing fits [pt].

    Returns
    -------
    reportlab.graphics.shapes.Drawing
        Its size in points; at ``scale=1`` one plate millimetre is 72/25.4 pt.
    """
    from reportlab.graphics.shapes import Drawing

    if furniture:
        w_mm, h_mm = plate.page_mm
        ox, oy = plate.origin_mm
        items = plate.art + plate.furniture
    else:
        x0, y0, x1, y1 = plate.outline
        w_mm, h_mm = x1 - x0 + 1.0, y1 - y0 + 1.0
        ox, oy = -x0 + 0.5, -y0 + 0.5
        items = plate.art
    scale = fit_scale(plate, furniture=furniture, max_width_pt=max_width_pt, max_height_pt=max_height_pt,
                      scale=scale)
    f = PT_PER_MM * scale
    d = Drawing(w_mm * f, h_mm * f)
    for shape in _rl_items(items, ox, oy, f):
        d.add(shape)
    return d


def plate_pdf(plate: Plate, *, title: str = "scale plate", creator: str = "planner") -> bytes:
    """The printable plate as PDF bytes: one page at 1:1, byte-identical for the same plate."""
    from reportlab.graphics import renderPDF
    from reportlab.pdfgen.canvas import Canvas

    w, h = plate.page_mm
    c = Canvas(io.BytesIO(), pagesize=(w * PT_PER_MM, h * PT_PER_MM), invariant=1, pageCompression=1)
    c.setTitle(title)
    c.setSubject("scale plate at 1:1")
    c.setCreator(creator)
    c.setAuthor("")
    renderPDF.draw(plate_drawing(plate), c, 0, 0)
    c.showPage()
    return c.getpdfdata()  # the bytes, not a file: the caller writes them atomically


def _n(x: float) -> str:
    s = f"{x:.4f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def _pt(x, y, ox, oy, h):
    return f"{_n(x + ox)},{_n(h - (y + oy))}"


_FAMILY = "Helvetica, Arial, 'Liberation Sans', sans-serif"
_SVG_FONT = {"Helvetica": ("", ""), "Helvetica-Bold": ("bold", ""), "Helvetica-Oblique": ("", "italic"),
             "Symbol": ("", "")}


def plate_svg(plate: Plate, *, title: str = "scale plate") -> str:
    """The printable plate as SVG text, in millimetres (1 user unit = 1 mm), y flipped to point down."""
    w, h = plate.page_mm
    ox, oy = plate.origin_mm
    out = ['<?xml version="1.0" encoding="UTF-8"?>',
           f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{_n(w)}mm" height="{_n(h)}mm" '
           f'viewBox="0 0 {_n(w)} {_n(h)}">',
           f"<title>{escape(title)}</title>",
           '<g fill="none" stroke-linecap="butt">']
    for it in plate.art + plate.furniture:
        if isinstance(it, Line):
            dash = f' stroke-dasharray="{" ".join(_n(d) for d in it.dash)}"' if it.dash else ""
            out.append(f'<line x1="{_n(it.x1 + ox)}" y1="{_n(h - it.y1 - oy)}" x2="{_n(it.x2 + ox)}" '
                       f'y2="{_n(h - it.y2 - oy)}" stroke="{it.colour}" stroke-width="{_n(it.width)}"{dash}/>')
        elif isinstance(it, Arc):
            a0, a1 = math.radians(it.start_deg), math.radians(it.end_deg)
            p0 = _pt(it.cx + it.r * math.cos(a0), it.cy + it.r * math.sin(a0), ox, oy, h)
            p1 = _pt(it.cx + it.r * math.cos(a1), it.cy + it.r * math.sin(a1), ox, oy, h)
            large = 1 if it.end_deg - it.start_deg > 180.0 else 0
            # counter-clockwise on the plate is counter-clockwise on screen too: sweep-flag 0 once y is flipped
            out.append(f'<path d="M {p0} A {_n(it.r)} {_n(it.r)} 0 {large} 0 {p1}" stroke="{it.colour}" '
                       f'stroke-width="{_n(it.width)}"/>')
        elif isinstance(it, Sector):
            a0, a1 = math.radians(it.start_deg), math.radians(it.end_deg)
            large = 1 if it.end_deg - it.start_deg > 180.0 else 0
            po0 = _pt(it.r_out * math.cos(a0), it.r_out * math.sin(a0), ox, oy, h)
            po1 = _pt(it.r_out * math.cos(a1), it.r_out * math.sin(a1), ox, oy, h)
            pi1 = _pt(it.r_in * math.cos(a1), it.r_in * math.sin(a1), ox, oy, h)
            pi0 = _pt(it.r_in * math.cos(a0), it.r_in * math.sin(a0), ox, oy, h)
            out.append(f'<path d="M {po0} A {_n(it.r_out)} {_n(it.r_out)} 0 {large} 0 {po1} L {pi1} '
                       f'A {_n(it.r_in)} {_n(it.r_in)} 0 {large} 1 {pi0} Z" fill="{it.fill}" stroke="{it.stroke}" '
                       f'stroke-width="{_n(it.width)}"/>')
        elif isinstance(it, Poly):
            pts = " ".join(_pt(x, y, ox, oy, h) for x, y in it.points)
            out.append(f'<polygon points="{pts}" fill="{it.fill}" stroke="none"/>')
        elif isinstance(it, Circle):
            out.append(f'<circle cx="{_n(it.cx + ox)}" cy="{_n(h - it.cy - oy)}" r="{_n(it.r)}" '
                       f'stroke="{it.colour}" stroke-width="{_n(it.width)}"/>')
        elif isinstance(it, Rect):
            dash = f' stroke-dasharray="{" ".join(_n(d) for d in it.dash)}"' if it.dash else ""
            out.append(f'<rect x="{_n(it.x + ox)}" y="{_n(h - it.y - it.h - oy)}" width="{_n(it.w)}" '
                       f'height="{_n(it.h)}" stroke="{it.colour}" stroke-width="{_n(it.width)}"{dash}/>')
        elif isinstance(it, Text):
            anchor = {"start": "start", "middle": "middle", "end": "end"}[it.anchor]
            weight, style = _SVG_FONT.get(it.runs[0][1], ("", "")) if it.runs else ("", "")
            attrs = f' font-weight="{weight}"' if weight else ""
            attrs += f' font-style="{style}"' if style else ""
            body = escape("".join(t for t, _ in it.runs))
            out.append(f'<text transform="translate({_n(it.x + ox)} {_n(h - it.y - oy)}) '
                       f'rotate({_n(-it.rotation_deg)})" font-family={quoteattr(_FAMILY)} '
                       f'font-size="{_n(it.size_pt / PT_PER_MM)}" text-anchor="{anchor}" fill="{it.colour}" '
                       f'stroke="none"{attrs}>{body}</text>')
        else:  # pragma: no cover - every item kind is listed above
            raise TypeError(type(it).__name__)
    out += ["</g>", "</svg>", ""]
    return "\n".join(out)
