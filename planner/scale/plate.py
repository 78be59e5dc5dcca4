"""The plate: nested scale bands, their drawn marks, the pivot, cutting marks and a title block.

Plain geometry in millimetres with the pivot at the origin (y up); the
renderers (:mod:`.render`) turn the items into a PDF or an SVG at 1:1. Both
read the same items, so what the tests measure here is what is printed.

Layout, outside in: the ohms scales, the shared linear scale, the AC scales
of their own. ``radius`` is the base line of the outermost scale; each scale's
ticks rise outward from its base line and its label rows lie inside it; the
next scale's ticks start below the last row, and an optional mirror band sits
under the first scale.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from .text import (ASCENT_EM, DIGIT_DESCENT_EM, MIN_TEXT_PT, PT_PER_MM, Text, centred, overlap, runs_for, upright,
                   width_mm)
from .place import place
from .ticks import Band, Scale, ScaleDef, number_text, rows_of

__all__ = ["PlateError", "PlateInfo", "Plate", "build_plate", "Line", "Arc", "Poly", "Sector", "Circle", "Rect",
           "label_pt_for", "COLOURS"]

#: Drawing colours: scales by kind, furniture. An original palette: slate ink, burnt
#: sienna for AC, deep teal for ohms, silver-grey for the mirror band.
COLOURS = {
    "linear": "#1D2731",
    "ac": "#8E3B16",
    "ohms": "#1E5C58",
    "mirror_fill": "#DDE3E7",
    "mirror_line": "#8795A0",
    "cut": "#6E6E6E",
    "note": "#4A5560",
    "ink": "#1D2731",
}
_ORDER = {"ohms": 0, "linear": 1, "ac": 2}

#: Paper sizes tried in turn [mm] (ISO 216), else a page of the plate's own size.
PAPERS = (("A4", 210.0, 297.0), ("A4 landscape", 297.0, 210.0), ("A3", 297.0, 420.0),
          ("A3 landscape", 420.0, 297.0))
PAGE_MARGIN_MM = 10.0
CHECK_BAR_MM = 50.0


class PlateError(ValueError):
    """The scales do not fit the movement's arc and radius."""


@dataclass(frozen=True)
class Line:
    x1: float
    y1: float
    x2: float
    y2: float
    width: float
    colour: str
    dash: tuple[float, ...] | None = None


@dataclass(frozen=True)
class Arc:
    """A circular arc drawn counter-clockwise from ``start_deg`` to ``end_deg`` [deg]."""

    cx: float
    cy: float
    r: float
    start_deg: float
    end_deg: float
    width: float
    colour: str


@dataclass(frozen=True)
class Poly:
    points: tuple[tuple[float, float], ...]
    fill: str


@dataclass(frozen=True)
class Sector:
    """An annular sector (the mirror band) between two radii, counter-clockwise from start to end."""

    cx: float
    cy: float
    r_in: float
    r_out: float
    start_deg: float
    end_deg: float
    fill: str
    stroke: str
    width: float


@dataclass(frozen=True)
class Circle:
    cx: float
    cy: float
    r: float
    width: float
    colour: str


@dataclass(frozen=True)
class Rect:
    x: float
    y: float
    w: float
    h: float
    width: float
    colour: str
    dash: tuple[float, ...] | None = None


@dataclass(frozen=True)
class PlateInfo:
    """What the title block says: project title and revision, the movement in words."""

    title: str
    revision: str | None = None
    movement: str = ""
    date: str | None = None


@dataclass
class Plate:
    """A laid-out plate; coordinates in mm, pivot at the origin.

    ``art`` is the dial itself (scales, pivot, mirror band, cutting line);
    ``furniture`` the crop marks, title block and check bar outside the cut.
    ``page_mm`` is the page size and ``origin_mm`` the pivot's place on it.
    """

    scales: list[Scale]
    arc_deg: float
    radius_mm: float
    mirror: bool
    art: list = field(default_factory=list)
    furniture: list = field(default_factory=list)
    outline: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)  # x0, y0, x1, y1 of the cut
    page_mm: tuple[float, float] = (210.0, 297.0)
    paper: str = "A4"
    origin_mm: tuple[float, float] = (0.0, 0.0)
    notes: list[str] = field(default_factory=list)

    def texts(self, furniture: bool = True) -> list[Text]:
        items = self.art + (self.furniture if furniture else [])
        return [t for t in items if isinstance(t, Text)]


def label_pt_for(radius_mm: float) -> float:
    """Type size of the scale numbers [pt]: 7 pt at 60 mm, never below 6 pt nor above 10 pt."""
    return min(10.0, max(MIN_TEXT_PT, 5.0 + radius_mm / 30.0))


def _rows_needed(d: ScaleDef) -> int:
    return 1 if d.kind == "ohms" else len(rows_of(d.positions))


def _polar(r: float, deg: float) -> tuple[float, float]:
    a = math.radians(deg)
    return r * math.cos(a), r * math.sin(a)


def _stack(defs, arc_deg: float, radius_mm: float, mirror: bool):
    """Bands outside in; returns (bands, mirror radii or None, size factor k, innermost radius used)."""
    k = min(1.6, max(0.6, radius_mm / 60.0))
    pt = label_pt_for(radius_mm)
    h = (ASCENT_EM + DIGIT_DESCENT_EM) * pt / PT_PER_MM
    r = radius_mm
    out, sector, inner = [], None, radius_mm
    for idx, d in enumerate(defs):
        n = _rows_needed(d)
        rows = tuple(r - 1.0 * k - h / 2.0 - j * (h + 0.9 * k) for j in range(n))
        out.append((d, Band(r, rows, arc_deg, pt)))
        bottom = rows[-1] - h / 2.0 - 0.4 * k
        if idx == 0 and mirror:
            r_out = bottom - 1.0 * k
            sector = (r_out - 3.0 * k, r_out)
            bottom = sector[0]
        r = bottom - 2.4 * k - 3.6 * k
        inner = bottom
    return out, sector, k, inner


def _hub_mm(radius_mm: float) -> float:
    """Radius kept clear around the pivot for the pointer's hub and counterweight [mm]."""
    return max(0.3 * radius_mm, 5.0)


def _bands(defs, arc_deg: float, radius_mm: float, mirror: bool):
    out, sector, k, inner = _stack(defs, arc_deg, radius_mm, mirror)
    if inner < _hub_mm(radius_mm):
        need = next((r for r in range(math.ceil(radius_mm), 501)
                     if _stack(defs, arc_deg, r, mirror)[3] >= _hub_mm(r)), None)
        rows = sum(_rows_needed(d) for d in defs)
        advice = (f"give movement.scale.radius of at least {need} mm" if need is not None
                  else "split the ranges over fewer label rows or scales")
        raise PlateError(f"{len(defs)} scale(s) with {rows} label row(s) do not fit between a {radius_mm:g} mm "
                         f"radius and the pointer's hub ({_hub_mm(radius_mm):.3g} mm); {advice}")
    return out, sector, k


def _tick_items(scale: Scale, colour: str, k: float) -> list:
    band = scale.band
    r = band.radius_mm
    items = []
    lengths = {"major": 3.6 * k, "medium": 2.6 * k, "minor": 1.7 * k}
    widths = {"medium": max(0.15, 0.22 * k), "minor": max(0.15, 0.18 * k)}
    for t in list(scale.ticks) + list(scale.end_marks):
        phi = band.polar_deg(t.fraction)
        ln = lengths[t.size]
        if t.size == "major":
            a = math.radians(phi)
            ux, uy = math.cos(a), math.sin(a)
            tx, ty = -uy, ux
            wb, wt = max(0.3, 0.5 * k) / 2.0, max(0.12, 0.16 * k) / 2.0
            pts = ((r * ux + wb * tx, r * uy + wb * ty), ((r + ln) * ux + wt * tx, (r + ln) * uy + wt * ty),
                   ((r + ln) * ux - wt * tx, (r + ln) * uy - wt * ty), (r * ux - wb * tx, r * uy - wb * ty))
            items.append(Poly(pts, colour))
        else:
            x1, y1 = _polar(r, phi)
            x2, y2 = _polar(r + ln, phi)
            items.append(Line(x1, y1, x2, y2, widths[t.size], colour))
    fr = [t.fraction for t in scale.ticks] + [0.0, 1.0]
    lo, hi = band.polar_deg(max(fr)), band.polar_deg(min(fr))
    items.append(Arc(0.0, 0.0, r, lo, hi, 0.25, colour))
    for t in list(scale.ticks) + list(scale.end_marks):
        for j, lab in enumerate(t.labels):
            if lab is not None:
                font = "Helvetica-Oblique" if j % 2 else "Helvetica"
                items.append(band.label(t.fraction, j, runs_for(lab, font), colour))
    return items


def _tag(scale: Scale, colour: str, placed: list[Text]) -> Text | None:
    """The scale's name set before its rest end, on its first label row; None if it has no room."""
    band = scale.band
    size = max(MIN_TEXT_PT, band.label_pt - 0.5)
    runs = runs_for(scale.name, "Helvetica-Bold")
    w = width_mm(runs, size)
    first = min([t.fraction for t in scale.ticks + scale.end_marks] + [0.0])
    for extra in (2.5, 4.0):
        f = first - (w / 2.0 + extra) / band.length_mm
        phi = band.polar_deg(f)
        x, y = _polar(band.row_radii_mm[0], phi)
        t = centred(x, y, runs, size, upright(phi), colour=colour, role="tag")
        box = t.corners(0.6)
        if not any(overlap(box, o.corners(0.6)) for o in placed):
            return t
    return None


def _bbox(items) -> tuple[float, float, float, float]:
    xs, ys = [], []
    for it in items:
        if isinstance(it, Text):
            pts = it.corners()
        elif isinstance(it, Line):
            pts = [(it.x1, it.y1), (it.x2, it.y2)]
        elif isinstance(it, Poly):
            pts = list(it.points)
        elif isinstance(it, (Arc, Sector)):
            r = it.r if isinstance(it, Arc) else it.r_out
            a0, a1 = it.start_deg, it.end_deg
            angs = [a0, a1] + [a for a in range(-720, 721, 90) if a0 < a < a1]
            pts = [_polar(r, a) for a in angs]
            if isinstance(it, Sector):
                pts += [_polar(it.r_in, a) for a in (a0, a1)]
        elif isinstance(it, Circle):
            pts = [(it.cx - it.r, it.cy - it.r), (it.cx + it.r, it.cy + it.r)]
        elif isinstance(it, Rect):
            pts = [(it.x, it.y), (it.x + it.w, it.y + it.h)]
        else:  # pragma: no cover - every item kind is listed above
            raise TypeError(type(it).__name__)
        xs += [p[0] for p in pts]
        ys += [p[1] for p in pts]
    return min(xs), min(ys), max(xs), max(ys)


def _wrap(text: str, font: str, size: float, width: float) -> list[str]:
    out, line = [], ""
    for word in text.split(" "):
        trial = f"{line} {word}".strip()
        if line and width_mm(runs_for(trial, font), size) > width:
            out.append(line)
            line = word
        else:
            line = trial
    if line:
        out.append(line)
    return out


def _factor_text(d) -> str:
    return "\u00d7" + number_text(d, suffix=True)


def scale_lines(scale: Scale) -> list[str]:
    """How to read each range on a scale, in words (title block and terminal table)."""
    parts = []
    for j, row in enumerate(scale.rows):
        reads = ", ".join(f"{rp.name}: {_factor_text(rp.factor)} {rp.unit_text}" for rp in row.positions)
        if row.label_full_scale is None:
            parts.append(f"read the numbers {reads}")
        else:
            parts.append(f"row {j + 1} (0\u2013{number_text(row.label_full_scale)}): {reads}")
    kind = {"linear": "linear", "ac": "AC, own scale", "ohms": "ohms, reversed"}[scale.kind]
    return [f"{scale.name} ({kind}): " + "; ".join(parts)]


def _title_block(plate: Plate, info: PlateInfo, x0: float, y_top: float, width: float) -> list:
    ink, note = COLOURS["ink"], COLOURS["note"]
    items: list = []
    y = y_top
    title = info.title + (f" \u00b7 revision {info.revision}" if info.revision else "")
    paras = [(title, "Helvetica-Bold", 9.0, ink)]
    geom = (f"Scale plate at 1:1 \u00b7 pointer swing {plate.arc_deg:g}\u00b0 \u00b7 radius {plate.radius_mm:g} mm "
            "(base line of the outer scale)")
    if info.movement:
        geom = f"Movement {info.movement} \u00b7 " + geom
    paras.append((geom, "Helvetica", 7.0, ink))
    for s in plate.scales:
        for line in scale_lines(s):
            paras.append((line, "Helvetica", 7.0, ink))
    how = (f"Print at 100 % (actual size, no fit-to-page) on {plate.paper} paper and check that the bar "
           f"below measures {CHECK_BAR_MM:g} mm. Cut on the dashed line; the cross marks the pivot.")
    if plate.mirror:
        how += " Cut out the grey band and back it with a mirror strip."
    if info.date:
        how += f" Drawn {info.date}."
    paras.append((how, "Helvetica", 6.5, note))
    for text, font, size, colour in paras:
        for line in _wrap(text, font, size, width):
            y -= size / PT_PER_MM * 1.3
            items.append(Text(x0, y, runs_for(line, font), size, 0.0, "start", colour, "title"))
    y -= 4.0
    items.append(Line(x0, y, x0 + CHECK_BAR_MM, y, 0.3, ink))
    for i in range(6):
        xi = x0 + i * CHECK_BAR_MM / 5.0
        items.append(Line(xi, y, xi, y + (2.0 if i in (0, 5) else 1.2), 0.25, ink))
    items.append(Text(x0 + CHECK_BAR_MM + 2.0, y, runs_for(f"{CHECK_BAR_MM:g} mm"), 7.0, 0.0, "start", ink, "title"))
    return items


def build_plate(defs: list[ScaleDef], *, arc_deg: float, radius_mm: float, mirror: bool = False,
                info: PlateInfo | None = None) -> Plate:
    """Lay out a plate: place every scale in its band, then the pivot, cutting marks and title block.

    Parameters
    ----------
    defs : list of ScaleDef
        The scales; drawn outside in as ohms, linear, AC (stable within a kind).
    arc_deg : float
        Pointer swing [deg].
    radius_mm : float
        Base-line radius of the outermost scale [mm].
    mirror : bool
        Draw a mirror band under the first scale.
    info : PlateInfo, optional
        Title-block text.

    Raises
    ------
    PlateError
        When the scales need more depth than the radius leaves.
    """
    info = info or PlateInfo(title="")
    ordered = sorted(defs, key=lambda d: _ORDER[d.kind])
    bands, sector, k = _bands(ordered, arc_deg, radius_mm, mirror)
    plate = Plate([], arc_deg, radius_mm, mirror)
    texts: list[Text] = []
    for d, band in bands:
        colour = COLOURS[d.kind]
        scale = place(d, band, colour)
        plate.scales.append(scale)
        items = _tick_items(scale, colour, k)
        plate.art += items
        texts += [t for t in items if isinstance(t, Text)]
        plate.notes += [f"{scale.name}: {n}" for n in scale.notes]
    for scale in plate.scales:
        tag = _tag(scale, COLOURS[scale.kind], texts)
        if tag is None:
            plate.notes.append(f"{scale.name}: no room for the scale's name before its rest end")
        else:
            plate.art.append(tag)
            texts.append(tag)
    if sector is not None:
        lo, hi = 90.0 - arc_deg / 2.0, 90.0 + arc_deg / 2.0
        plate.art.append(Sector(0.0, 0.0, sector[0], sector[1], lo, hi, COLOURS["mirror_fill"],
                                COLOURS["mirror_line"], 0.2))
    ink = COLOURS["ink"]
    c = 4.0 * k
    plate.art += [Circle(0.0, 0.0, 1.2 * k, 0.2, ink), Line(-c, 0.0, c, 0.0, 0.2, ink), Line(0.0, -c, 0.0, c, 0.2, ink)]
    x0, y0, x1, y1 = _bbox(plate.art)
    x0, y0, x1, y1 = x0 - 4.0, y0 - 4.0, x1 + 4.0, y1 + 4.0
    plate.outline = (x0, y0, x1, y1)
    plate.art.append(Rect(x0, y0, x1 - x0, y1 - y0, 0.25, COLOURS["cut"], (2.0, 1.5)))
    for (cx, cy, sx, sy) in ((x0, y0, -1, -1), (x1, y0, 1, -1), (x0, y1, -1, 1), (x1, y1, 1, 1)):
        plate.furniture.append(Line(cx + sx * 2.0, cy, cx + sx * 7.0, cy, 0.25, ink))
        plate.furniture.append(Line(cx, cy + sy * 2.0, cx, cy + sy * 7.0, 0.25, ink))
    width = max(x1 - x0, 110.0)
    # the page: try the paper sizes in turn with a provisional title block for the size
    for paper, pw, ph in PAPERS + (("custom", None, None),):
        plate.paper = paper
        block = _title_block(plate, info, x0, y0 - 10.0, width if pw is None else min(width, pw - 2 * PAGE_MARGIN_MM))
        bx0, by0, bx1, by1 = _bbox(plate.art + plate.furniture + block)
        need_w, need_h = bx1 - bx0 + 2 * PAGE_MARGIN_MM, by1 - by0 + 2 * PAGE_MARGIN_MM
        if pw is None:
            pw, ph = math.ceil(need_w), math.ceil(need_h)
        if need_w <= pw and need_h <= ph:
            plate.furniture += block
            plate.page_mm = (pw, ph)
            plate.origin_mm = (pw / 2.0 - (bx0 + bx1) / 2.0, ph - PAGE_MARGIN_MM - by1)
            break
    return plate
