"""Vector charts for the dossier, drawn with :mod:`reportlab.graphics`.

A small plotting helper of our own (:func:`line_chart`, :func:`histogram`):
nice 1-2-5 ticks, a light grid, lines told apart by dash pattern *and* colour
(so a grey print keeps them apart), an optional shaded band for a limit such as
the accuracy class, and a legend under the plot. Everything is computed from
the data handed in; nothing is random, so the same data draw the same bytes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from reportlab.graphics.shapes import Drawing, Group, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import stringWidth

from .layout import ACCENT, ACCENT2, INK, MUTED, PALE, RULE

#: Text sizes of the charts [pt]: tick labels, legends and notes; axis labels (drawn at 1:1, so
#: these are the printed sizes).
TICK_PT = 7.0
LABEL_PT = 7.6

__all__ = ["Series", "nice_ticks", "line_chart", "histogram", "message_drawing"]

_DASHES = [None, (4, 2), (1.2, 1.8), (6, 2, 1.5, 2)]
_COLOURS = [ACCENT, ACCENT2, colors.HexColor("#5E7F4E"), colors.HexColor("#7A4E74")]


@dataclass
class Series:
    """One line of a chart: x and y values [chart units] and its legend label."""

    label: str
    x: list
    y: list
    dash: tuple | None = None
    colour: object = None
    width: float = 1.3
    markers: bool = False


@dataclass
class Band:
    """A shaded horizontal band from ``lo`` to ``hi`` with a legend label."""

    lo: float
    hi: float
    label: str
    fill: object = field(default_factory=lambda: PALE)


def _finite(values):
    return [float(v) for v in values if v is not None and math.isfinite(float(v))]


def nice_ticks(lo: float, hi: float, n: int = 5) -> list[float]:
    """About ``n`` round tick values (1, 2, 5 times a power of ten) covering [lo, hi]."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        lo, hi = 0.0, 1.0
    if hi < lo:
        lo, hi = hi, lo
    if hi - lo < 1e-300 or hi - lo <= 1e-9 * max(abs(lo), abs(hi)):
        pad = abs(lo) * 0.05 if lo != 0 else 1.0
        lo, hi = lo - pad, hi + pad
    raw = (hi - lo) / max(n, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    start = math.floor(lo / step + 1e-9) * step
    stop = math.ceil(hi / step - 1e-9) * step
    count = int(round((stop - start) / step))
    return [start + i * step for i in range(count + 1)]


def _log_ticks(lo: float, hi: float) -> list[float]:
    a = math.floor(math.log10(lo) + 1e-9)
    b = math.ceil(math.log10(hi) - 1e-9)
    if b <= a:
        b = a + 1
    return [10.0 ** k for k in range(a, b + 1)]


def _tick_label(v: float, step: float) -> str:
    if v == 0:
        return "0"
    if abs(v) >= 1e5 or abs(v) < 1e-3:
        m, e = f"{v:.0e}".split("e")
        return f"{m}e{int(e)}"
    decimals = max(0, -math.floor(math.log10(step) + 1e-9)) if step > 0 else 0
    decimals = min(decimals, 4)
    return f"{v:.{decimals}f}"


def message_drawing(width: float, height: float, title: str, message: str) -> Drawing:
    """A framed placeholder saying why a chart could not be drawn."""
    d = Drawing(width, height)
    d.add(Rect(0.5, 0.5, width - 1, height - 1, strokeColor=RULE, fillColor=None, strokeWidth=0.6))
    d.add(String(8, height - 14, title, fontName="Helvetica-Bold", fontSize=8, fillColor=INK))
    y = height - 32
    words, line = message.split(), ""
    for w in words:
        if len(line) + len(w) > int(width / 4.2):
            d.add(String(8, y, line, fontName="Helvetica", fontSize=7.2, fillColor=MUTED))
            y -= 9.5
            line = ""
        line = f"{line} {w}".strip()
    if line:
        d.add(String(8, y, line, fontName="Helvetica", fontSize=7.2, fillColor=MUTED))
    return d


def line_chart(width: float, height: float, title: str, xlabel: str, ylabel: str, series,
               *, bands=(), log_x: bool = False, log_y: bool = False, hlines=(), vlines=(),
               y_floor: float | None = None) -> Drawing:
    """A line chart as a Drawing of the given size [pt].

    Parameters
    ----------
    series : list of Series
    bands : list of Band
        Shaded horizontal bands drawn under the lines (e.g. the class limits).
    log_x, log_y : bool
        Logarithmic axes (non-positive values are dropped).
    hlines, vlines : list of (value, label)
        Thin reference lines with a short label.
    y_floor : float, optional
        Smallest y shown on a log axis.
    """
    series = [s for s in series if s is not None]
    d = Drawing(width, height)
    left, right, top = 44.0, 8.0, 16.0
    labels = [s.label for s in series if s.label] + [b.label for b in bands]
    per_row = 2 if all(stringWidth(lab, "Helvetica", TICK_PT) <= (width - left - right) / 2 - 22
                       for lab in labels) else 1
    legend_rows = (len(labels) + per_row - 1) // per_row
    bottom = 28.0 + 10.0 * legend_rows
    pw, ph = width - left - right, height - top - bottom
    d.add(String(0, height - 10, title, fontName="Helvetica-Bold", fontSize=8, fillColor=INK))

    xs, ys = [], []
    for s in series:
        for x, y in zip(s.x, s.y):
            if x is None or y is None or not (math.isfinite(x) and math.isfinite(y)):
                continue
            if (log_x and x <= 0) or (log_y and y <= 0):
                continue
            xs.append(float(x))
            ys.append(float(y))
    for b in bands:
        ys += [b.lo, b.hi]
    for v, _ in hlines:
        ys.append(v)
    for v, _ in vlines:
        xs.append(v)
    if log_y and y_floor is not None:
        ys = [max(y, y_floor) for y in ys if y > 0] + [y_floor]
    if not xs or not ys:
        return message_drawing(width, height, title, "no data to plot")

    if log_x:
        xt = _log_ticks(min(xs), max(xs))
    else:
        xt = nice_ticks(min(xs), max(xs))
    if log_y:
        yt = _log_ticks(min(y for y in ys if y > 0), max(ys))
    else:
        yt = nice_ticks(min(ys), max(ys))
    x0, x1, y0, y1 = xt[0], xt[-1], yt[0], yt[-1]

    def fx(x):
        if log_x:
            return left + pw * (math.log10(x) - math.log10(x0)) / (math.log10(x1) - math.log10(x0))
        return left + pw * (x - x0) / (x1 - x0)

    def fy(y):
        if log_y:
            y = max(y, y0)
            return bottom + ph * (math.log10(y) - math.log10(y0)) / (math.log10(y1) - math.log10(y0))
        return bottom + ph * (y - y0) / (y1 - y0)

    for b in bands:
        lo, hi = max(min(b.lo, b.hi), y0), min(max(b.lo, b.hi), y1)
        if hi > lo:
            d.add(Rect(left, fy(lo), pw, fy(hi) - fy(lo), fillColor=b.fill, strokeColor=None))
    # grid and ticks
    ystep = (yt[1] - yt[0]) if len(yt) > 1 else 1.0
    xstep = (xt[1] - xt[0]) if len(xt) > 1 else 1.0
    for v in yt:
        y = fy(v)
        d.add(Line(left, y, left + pw, y, strokeColor=RULE, strokeWidth=0.3))
        lab = _tick_label(v, ystep) if not log_y else _tick_label(v, v)
        d.add(String(left - 3, y - 2.5, lab, fontName="Helvetica", fontSize=TICK_PT, fillColor=MUTED,
                     textAnchor="end"))
    for v in xt:
        x = fx(v)
        d.add(Line(x, bottom, x, bottom + ph, strokeColor=RULE, strokeWidth=0.3))
        lab = _tick_label(v, xstep) if not log_x else _tick_label(v, v)
        d.add(String(x, bottom - 9, lab, fontName="Helvetica", fontSize=TICK_PT, fillColor=MUTED,
                     textAnchor="middle"))
    if not log_y and y0 < 0 < y1:
        d.add(Line(left, fy(0), left + pw, fy(0), strokeColor=MUTED, strokeWidth=0.6))
    d.add(Rect(left, bottom, pw, ph, fillColor=None, strokeColor=INK, strokeWidth=0.6))
    for v, lab in hlines:
        if y0 <= v <= y1:
            d.add(Line(left, fy(v), left + pw, fy(v), strokeColor=INK, strokeWidth=0.5,
                       strokeDashArray=(2, 2)))
            d.add(String(left + pw - 2, fy(v) + 2, lab, fontName="Helvetica", fontSize=TICK_PT,
                         fillColor=INK, textAnchor="end"))
    for v, lab in vlines:
        if x0 <= v <= x1:
            d.add(Line(fx(v), bottom, fx(v), bottom + ph, strokeColor=INK, strokeWidth=0.5,
                       strokeDashArray=(2, 2)))
            d.add(String(fx(v) + 2, bottom + ph - 8, lab, fontName="Helvetica", fontSize=TICK_PT,
                         fillColor=INK))
    # lines
    for i, s in enumerate(series):
        colour = s.colour or _COLOURS[i % len(_COLOURS)]
        dash = s.dash if s.dash is not None else _DASHES[i % len(_DASHES)]
        pts = []
        for x, y in zip(s.x, s.y):
            if x is None or y is None or not (math.isfinite(x) and math.isfinite(y)):
                continue
            if (log_x and x <= 0) or (log_y and y <= 0 and y_floor is None):
                continue
            if log_y and y <= 0:
                y = y0
            pts += [fx(x), fy(min(max(y, y0), y1))]
        if len(pts) >= 4:
            d.add(PolyLine(pts, strokeColor=colour, strokeWidth=s.width, strokeDashArray=dash,
                           strokeLineJoin=1))
        if s.markers or len(pts) == 2:
            for k in range(0, len(pts), 2):
                d.add(Rect(pts[k] - 1.4, pts[k + 1] - 1.4, 2.8, 2.8, fillColor=colour, strokeColor=None))
    # axis labels
    d.add(String(left + pw / 2, bottom - 19, xlabel, fontName="Helvetica", fontSize=LABEL_PT, fillColor=INK,
                 textAnchor="middle"))
    g = Group(String(0, 0, ylabel, fontName="Helvetica", fontSize=LABEL_PT, fillColor=INK, textAnchor="middle"))
    g.rotate(90)
    g.translate(bottom + ph / 2, -10)
    d.add(g)
    # legend
    items = [(s.label, s.colour or _COLOURS[i % len(_COLOURS)],
              s.dash if s.dash is not None else _DASHES[i % len(_DASHES)], None)
             for i, s in enumerate(series) if s.label]
    items += [(b.label, None, None, b.fill) for b in bands]
    for k, (label, colour, dash, fill) in enumerate(items):
        col, row = k % per_row, k // per_row
        lx = left + col * pw / 2
        ly = bottom - 30 - 10 * row
        if fill is not None:
            d.add(Rect(lx, ly - 1, 14, 6, fillColor=fill, strokeColor=RULE, strokeWidth=0.4))
        else:
            d.add(Line(lx, ly + 2, lx + 14, ly + 2, strokeColor=colour, strokeWidth=1.3,
                       strokeDashArray=dash))
        d.add(String(lx + 18, ly, _clip(label, pw / per_row - 22, TICK_PT), fontName="Helvetica", fontSize=TICK_PT,
                     fillColor=INK))
    return d


def _clip(text: str, width: float, size: float = 7.0) -> str:
    if stringWidth(text, "Helvetica", size) <= width:
        return text
    while text and stringWidth(text + "...", "Helvetica", size) > width:
        text = text[:-1]
    return text + "..."


def histogram(width: float, height: float, title: str, xlabel: str, edges, counts,
              *, limits=(), note: str = "") -> Drawing:
    """A histogram as a Drawing: bars over ``edges`` (len(counts)+1), limit lines.

    Parameters
    ----------
    edges : sequence of float
        Bin edges [chart units], ascending.
    counts : sequence of int
        Builds per bin.
    limits : list of (value, label)
        Vertical dashed lines (e.g. the class limits).
    note : str
        A line of text under the axis label (e.g. the yield).
    """
    edges = _finite(edges)
    counts = [float(c) for c in counts]
    if len(edges) != len(counts) + 1 or not counts:
        return message_drawing(width, height, title, "no Monte Carlo data")
    d = Drawing(width, height)
    left, right, top, bottom = 44.0, 8.0, 16.0, 38.0 if note else 30.0
    pw, ph = width - left - right, height - top - bottom
    d.add(String(0, height - 10, title, fontName="Helvetica-Bold", fontSize=8, fillColor=INK))
    xt = nice_ticks(min(edges), max(edges))  # the axis spans the data; limits beyond it are named at its edge
    yt = nice_ticks(0.0, max(max(counts), 1.0))
    x0, x1, y1 = xt[0], xt[-1], yt[-1]

    def fx(x):
        return left + pw * (x - x0) / (x1 - x0)

    def fy(y):
        return bottom + ph * y / y1

    ystep = (yt[1] - yt[0]) if len(yt) > 1 else 1.0
    for v in yt:
        d.add(Line(left, fy(v), left + pw, fy(v), strokeColor=RULE, strokeWidth=0.3))
        d.add(String(left - 3, fy(v) - 2.5, _tick_label(v, max(ystep, 1.0)), fontName="Helvetica",
                     fontSize=TICK_PT, fillColor=MUTED, textAnchor="end"))
    xstep = (xt[1] - xt[0]) if len(xt) > 1 else 1.0
    for v in xt:
        d.add(String(fx(v), bottom - 9, _tick_label(v, xstep), fontName="Helvetica", fontSize=TICK_PT,
                     fillColor=MUTED, textAnchor="middle"))
        d.add(Line(fx(v), bottom, fx(v), bottom - 2, strokeColor=INK, strokeWidth=0.5))
    for a, b, c in zip(edges[:-1], edges[1:], counts):
        if c > 0:
            d.add(Rect(fx(a), bottom, max(fx(b) - fx(a), 0.3), fy(c) - bottom, fillColor=ACCENT,
                       strokeColor=colors.white, strokeWidth=0.3))
    for v, lab in limits:
        if x0 <= v <= x1:
            d.add(Line(fx(v), bottom, fx(v), bottom + ph, strokeColor=ACCENT2, strokeWidth=0.9,
                       strokeDashArray=(3, 2)))
            anchor = "end" if fx(v) > left + pw / 2 else "start"
            dx = -2 if anchor == "end" else 2
            d.add(String(fx(v) + dx, bottom + ph - 8, lab, fontName="Helvetica", fontSize=TICK_PT,
                         fillColor=INK, textAnchor=anchor))
        else:  # off the axis: named inside the plot at the side it lies on
            side_right = v > x1
            d.add(String(left + pw - 3 if side_right else left + 3, bottom + ph - 9,
                         ("" if side_right else "< ") + f"{lab} off the axis" + (" >" if side_right else ""),
                         fontName="Helvetica",
                         fontSize=TICK_PT, fillColor=INK, textAnchor="end" if side_right else "start"))
    d.add(Rect(left, bottom, pw, ph, fillColor=None, strokeColor=INK, strokeWidth=0.6))
    d.add(String(left + pw / 2, bottom - 19, xlabel, fontName="Helvetica", fontSize=LABEL_PT, fillColor=INK,
                 textAnchor="middle"))
    if note:
        d.add(String(left + pw / 2, bottom - 29, _clip(note, pw + 2 * right, TICK_PT), fontName="Helvetica", fontSize=TICK_PT,
                     fillColor=MUTED, textAnchor="middle"))
    g = Group(String(0, 0, "builds", fontName="Helvetica", fontSize=LABEL_PT, fillColor=INK, textAnchor="middle"))
    g.rotate(90)
    g.translate(bottom + ph / 2, -10)
    d.add(g)
    return d
