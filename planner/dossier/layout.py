"""Page layout of the dossier: palette, paragraph styles, page templates, tables.

Everything that decides how the dossier looks lives here, so the section
builders only say *what* goes on the page. The look is deliberately plain: one
dark slate ink for headings and rules, a pale blue-grey for table heads and
boxes, a warm ochre reserved for cautions, and four verdict tints whose grey
values differ (they stay apart in a grey print, and every tinted cell carries
its verdict in words as well).

Standard PDF fonts only (Helvetica, Courier): nothing is embedded, so two
builds of the same project give the same bytes.
"""

from __future__ import annotations

import weakref
from xml.sax.saxutils import escape

from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER, TA_LEFT, TA_RIGHT
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.platypus import (
    BaseDocTemplate,
    Flowable,
    Frame,
    KeepTogether,
    PageTemplate,
    Paragraph,
    Table,
    TableStyle,
)
from reportlab.platypus.doctemplate import LayoutError

__all__ = [
    "PAGE", "MARGIN", "FRAME_WIDTH", "INK", "ACCENT", "PALE", "RULE", "CAUTION", "CAUTION_PALE",
    "VERDICT_FILL", "VERDICT_TEXT", "styles", "p", "esc", "table", "caution_box", "note_box",
    "DossierDoc", "DossierLayoutError", "Heading", "PageCount",
]

PAGE = A4
MARGIN = 18 * mm
TOP = 24 * mm
BOTTOM = 20 * mm
FRAME_WIDTH = PAGE[0] - 2 * MARGIN
FRAME_HEIGHT = PAGE[1] - TOP - BOTTOM

# --- palette ----------------------------------------------------------------------------
INK = colors.HexColor("#1E2B37")        # text and rules
ACCENT = colors.HexColor("#33566B")     # headings, chart lines
ACCENT2 = colors.HexColor("#8C6A2F")    # second series (hot), dashed as well
MUTED = colors.HexColor("#6B7780")      # secondary text
PALE = colors.HexColor("#E6ECF0")       # table heads, boxes
ZEBRA = colors.HexColor("#F5F7F8")      # alternate table rows
RULE = colors.HexColor("#A7B3BB")       # thin lines
CAUTION = colors.HexColor("#9A4A12")    # caution border and title
CAUTION_PALE = colors.HexColor("#FBF1E6")

#: Fill of a verdict cell; grey values fall from ok to hazard.
VERDICT_FILL = {
    "ok": colors.HexColor("#E3EEDD"),
    "pegs": colors.HexColor("#F2E2A0"),
    "opens": colors.HexColor("#E8D27A"),
    "overstress": colors.HexColor("#D98B55"),
    "hazard": colors.HexColor("#7E1F2C"),
    "error": colors.HexColor("#C9CED2"),
    "accepted": colors.HexColor("#D9DEE8"),
}
#: Text colour on a verdict fill (white on the darkest).
VERDICT_TEXT = {k: (colors.white if k == "hazard" else INK) for k in VERDICT_FILL}


# --- styles -------------------------------------------------------------------------------
def _styles() -> dict[str, ParagraphStyle]:
    base = ParagraphStyle("body", fontName="Helvetica", fontSize=9.2, leading=12.2, textColor=INK,
                          spaceAfter=4)
    s = {"body": base}
    s["small"] = ParagraphStyle("small", parent=base, fontSize=7.8, leading=9.6, spaceAfter=0)
    s["cell"] = ParagraphStyle("cell", parent=base, fontSize=7.8, leading=9.4, spaceAfter=0)
    s["cell_r"] = ParagraphStyle("cell_r", parent=s["cell"], alignment=TA_RIGHT)
    s["cell_c"] = ParagraphStyle("cell_c", parent=s["cell"], alignment=TA_CENTER)
    s["head"] = ParagraphStyle("head", parent=s["cell"], fontName="Helvetica-Bold", textColor=INK)
    s["head_r"] = ParagraphStyle("head_r", parent=s["head"], alignment=TA_RIGHT)
    s["h1"] = ParagraphStyle("h1", parent=base, fontName="Helvetica-Bold", fontSize=15, leading=19,
                             textColor=ACCENT, spaceBefore=2, spaceAfter=8)
    s["h2"] = ParagraphStyle("h2", parent=base, fontName="Helvetica-Bold", fontSize=11.2, leading=14,
                             textColor=INK, spaceBefore=9, spaceAfter=4)
    s["h3"] = ParagraphStyle("h3", parent=base, fontName="Helvetica-Bold", fontSize=9.4, leading=12,
                             textColor=ACCENT, spaceBefore=6, spaceAfter=3)
    s["caption"] = ParagraphStyle("caption", parent=base, fontSize=7.8, leading=9.6, textColor=MUTED,
                                  alignment=TA_LEFT, spaceBefore=2, spaceAfter=6)
    s["bullet"] = ParagraphStyle("bullet", parent=base, leftIndent=11, bulletIndent=2, spaceAfter=2.5)
    s["mono"] = ParagraphStyle("mono", parent=base, fontName="Courier", fontSize=7.4, leading=8.9,
                               spaceAfter=0)
    s["cover_title"] = ParagraphStyle("cover_title", parent=base, fontName="Helvetica-Bold", fontSize=24,
                                      leading=29, textColor=INK, spaceAfter=6)
    s["cover_sub"] = ParagraphStyle("cover_sub", parent=base, fontName="Helvetica", fontSize=13,
                                    leading=17, textColor=ACCENT, spaceAfter=18)
    s["toc1"] = ParagraphStyle("toc1", parent=base, fontSize=9.6, leading=13, leftIndent=0)
    s["toc2"] = ParagraphStyle("toc2", parent=base, fontSize=8.4, leading=10.5, leftIndent=14,
                               textColor=MUTED)
    s["caution_title"] = ParagraphStyle("caution_title", parent=base, fontName="Helvetica-Bold",
                                        textColor=CAUTION, fontSize=9.4, spaceAfter=2)
    return s


STYLES = _styles()


def styles() -> dict[str, ParagraphStyle]:
    """The paragraph styles by name (``body``, ``cell``, ``h1`` ...)."""
    return STYLES


def esc(text) -> str:
    """Text made safe for a Paragraph's mini-markup."""
    return escape(str(text))


class Para(Paragraph):
    """A paragraph that parses its markup and breaks its lines once per text, style and width.

    The layout asks a paragraph for its size again and again at the same width (a
    table's row heights, again for each piece of a table split over pages, again in
    the second pass), and a dossier repeats the same short texts in many cells (a
    dash, a tolerance, a value). Reportlab's parse of a text in a style, and the
    lines it broke at a width, are kept and given to every paragraph of the same
    text and style. Both depend on the text, the style and the width only, so the
    pages are the same, byte for byte (tests compare with :attr:`share` off).
    """

    #: Share parses and line breaks between paragraphs (off: each paragraph its own, as reportlab).
    share = True
    #: Kept parses and line breaks; emptied at :data:`KEEP` entries.
    _kept: dict = {}
    KEEP = 50_000

    def _setup(self, text, style, bulletText, frags, cleaner):
        if frags is not None or not self.share:
            return super()._setup(text, style, bulletText, frags, cleaner)
        key = ("parse", text, id(style), bulletText)
        hit = self._kept.get(key)
        if hit is None:
            super()._setup(text, style, bulletText, frags, cleaner)
            if len(self._kept) >= self.KEEP:
                self._kept.clear()
            # the style itself is kept with it, so its id names no other style while the entry lives
            self._kept[key] = (self.text, self.frags, self.style, self.bulletText, style)
        else:
            self.text, self.frags, self.style, self.bulletText = hit[:4]
            self.debug = 0
        self._shared_as = key[1:]

    def wrap(self, availWidth, availHeight):
        if availWidth < 1e-8:  # reportlab's "cannot fit here" answer, nothing to keep
            return super().wrap(availWidth, availHeight)
        shared = self.__dict__.get("_shared_as")
        if shared is not None:
            key, kept = ("wrap", *shared, availWidth), self._kept
        else:
            key, kept = availWidth, self.__dict__.setdefault("_dossier_wrapped", {})
        hit = kept.get(key)
        if hit is None:
            w, h = super().wrap(availWidth, availHeight)
            kept[key] = (w, h, self._wrapWidths, self.blPara)
            return w, h
        self.width, self.height, self._wrapWidths, self.blPara = hit
        return hit[0], hit[1]


def p(text: str, style: str = "body") -> Paragraph:
    """A paragraph of (already escaped) markup in a named style."""
    return Para(text, STYLES[style])


# --- headings that feed the contents list and the PDF outline --------------------------------
class Heading(Para):
    """A section heading: registers itself in the contents and the PDF outline.

    Parameters
    ----------
    text : str
        Plain heading text (escaped here).
    level : int
        0 for a section, 1 for a subsection.
    key : str
        A stable bookmark key (derived from the section number, never random).
    """

    def __init__(self, text: str, level: int, key: str):
        style = STYLES["h1"] if level == 0 else STYLES["h2"]
        super().__init__(esc(text), style)
        self.plain = text
        self.level = level
        self.key = key

    def draw(self):
        super().draw()
        c = self.canv
        c.bookmarkPage(self.key)
        c.addOutlineEntry(self.plain, self.key, level=self.level, closed=self.level > 0)
        if self.level == 0:
            c.saveState()
            c.setStrokeColor(RULE)
            c.setLineWidth(0.6)
            c.line(0, -3, self.width, -3)
            c.restoreState()


# --- tables ---------------------------------------------------------------------------------
def _cellify(value, style: str):
    if isinstance(value, Flowable):
        return value
    if value is None:
        value = "\u2013"
    return Para(str(value), STYLES[style])


def table(header, rows, widths, *, align=None, zebra=True, extra=(), header_rows=1,
          escape_text=True, font_size=None) -> Table:
    """A splitting table whose cells wrap, with a repeated head row.

    Parameters
    ----------
    header : list of str
        Column heads (plain text).
    rows : list of list
        Cell values: str (plain text unless ``escape_text`` is False), None (a dash),
        or flowables.
    widths : list of float
        Column widths as fractions of the frame width (they are scaled to sum to 1).
    align : str, optional
        One letter per column, ``l``, ``r`` or ``c``.
    extra : sequence
        More TableStyle commands (row indices count the head row as 0).
    """
    total = float(sum(widths))
    col_w = [FRAME_WIDTH * w / total for w in widths]
    align = align or "l" * len(col_w)
    body_style = {"l": "cell", "r": "cell_r", "c": "cell_c"}
    head_style = {"l": "head", "r": "head_r", "c": "head"}
    data = []
    if header is not None:
        data.append([_cellify(esc(h) if escape_text else h, head_style[a]) for h, a in zip(header, align)])
    for r in rows:
        cells = []
        for v, a in zip(r, align):
            if isinstance(v, str) and escape_text:
                v = esc(v)
            cells.append(_cellify(v, body_style[a]))
        data.append(cells)
    t = Table(data, colWidths=col_w, repeatRows=header_rows if header is not None else 0,
              hAlign="LEFT")
    cmds = [
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ("TOPPADDING", (0, 0), (-1, -1), 2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2.5),
        ("LINEBELOW", (0, -1), (-1, -1), 0.6, RULE),
    ]
    if header is not None:
        cmds += [
            ("BACKGROUND", (0, 0), (-1, header_rows - 1), PALE),
            ("LINEBELOW", (0, header_rows - 1), (-1, header_rows - 1), 0.8, INK),
            ("LINEABOVE", (0, 0), (-1, 0), 0.8, INK),
        ]
    if zebra:
        first = header_rows if header is not None else 0
        for i in range(first + 1, len(data), 2):
            cmds.append(("BACKGROUND", (0, i), (-1, i), ZEBRA))
    cmds += list(extra)
    t.setStyle(TableStyle(cmds))
    return t


def _box(title: str, lines, border, fill, title_style="caution_title") -> Table:
    content = [Para(title, STYLES[title_style])]
    lines = [x for x in lines if x]
    if len(lines) == 1:
        content.append(Para(lines[0], STYLES["body"]))
    else:
        for line in lines:
            content.append(Para(line, STYLES["bullet"], bulletText="\u2022"))
    t = Table([[content]], colWidths=[FRAME_WIDTH], hAlign="LEFT")
    t.setStyle(TableStyle([
        ("BOX", (0, 0), (-1, -1), 1.1, border),
        ("LINEBEFORE", (0, 0), (0, -1), 4, border),
        ("BACKGROUND", (0, 0), (-1, -1), fill),
        ("LEFTPADDING", (0, 0), (-1, -1), 9),
        ("RIGHTPADDING", (0, 0), (-1, -1), 8),
        ("TOPPADDING", (0, 0), (-1, -1), 5),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 5),
    ]))
    return t


def caution_box(title: str, lines) -> Table:
    """A caution: ochre rule on the left, pale fill, title in ochre; lines are markup."""
    return _box(esc("CAUTION \u2013 " + title), lines, CAUTION, CAUTION_PALE)


def note_box(title: str, lines) -> Table:
    """A neutral boxed note (slate rule)."""
    return _box(esc(title), lines, ACCENT, PALE, "h3")


def rule_bar(height: float = 5.0, colour=None) -> Table:
    """A full-width coloured bar (the cover's top edge)."""
    t = Table([[""]], colWidths=[FRAME_WIDTH], rowHeights=[height], hAlign="LEFT")
    t.setStyle(TableStyle([("BACKGROUND", (0, 0), (-1, -1), colour or ACCENT)]))
    return t


def keep(*flowables):
    """Keep a small group together on one page."""
    return KeepTogether(list(flowables))


# --- document template ------------------------------------------------------------------------
class DossierLayoutError(LayoutError):
    """A flowable did not fit its frame (wider than the text column)."""


def _used_width(flowable) -> float | None:
    """The width a flowable occupies once wrapped [pt], where it can be known."""
    if isinstance(flowable, Table):
        return float(getattr(flowable, "_width", 0.0) or 0.0)
    w = getattr(flowable, "width", None)
    return float(w) if isinstance(w, (int, float)) else None


def _skip_draw(*_args, **_kwargs) -> None:
    """Stands in for a flowable's ``drawOn`` in a pass whose pages are thrown away."""


class _CheckedFrame(Frame):
    """A frame that records any flowable drawn wider than it is.

    In the first pass of the build (which only finds the page of each heading and
    the page total, and is never the pass that is saved: see :class:`PageCount`)
    flowables are laid out but not drawn; the pass's layout is the same, its
    pages are discarded.
    """

    def _add(self, flowable, canv, trySplit=0):
        doc = self._dossier_doc()
        if not doc.draw_first_pass and doc.page_count.previous is None:  # the first pass: lay out only
            flowable.__dict__["drawOn"] = _skip_draw  # past a Drawing's attribute check
            try:
                done = super()._add(flowable, canv, trySplit)
            finally:
                flowable.__dict__.pop("drawOn", None)
        else:
            done = super()._add(flowable, canv, trySplit)
        if done:
            aw = self._getAvailableWidth()
            w = _used_width(flowable)
            if w is not None and w > aw + 0.5:
                self._dossier_overflow.append(
                    f"{flowable.__class__.__name__} is {w:.1f} pt wide in a {aw:.1f} pt column")
        return done

    add = _add


class PageCount(Flowable):
    """An invisible indexing flowable: the page total of the previous pass.

    The running foot says 'page N of M'. M is known only after a whole pass, so
    the multi-pass build (which also fills the contents) repeats until the total
    drawn in the foot equals the total the pass produced.
    """

    _ZEROSIZE = True

    def __init__(self, doc):
        super().__init__()
        self._dossier_doc = doc
        self.total = None
        self.previous = None

    def wrap(self, aw, ah):
        return 0, 0

    def draw(self):
        pass

    def isIndexing(self):
        return 1

    def isSatisfied(self):
        return self.previous is not None and self.previous == self.total

    def notify(self, kind, stuff):
        pass

    def beforeBuild(self):
        self.previous = self.total

    def afterBuild(self):
        self.total = self._dossier_doc.page


def _running(canvas, doc):
    """Running head (from page 2) and foot with the page number, drawn after the page's content."""
    n = doc.page
    total = doc.page_count.previous
    w, h = PAGE
    canvas.saveState()
    if n > 1:
        canvas.setFont("Helvetica-Bold", 8)
        canvas.setFillColor(INK)
        canvas.drawString(MARGIN, h - 13 * mm, doc.head_text)
        canvas.setFont("Helvetica", 8)
        canvas.setFillColor(MUTED)
        canvas.drawRightString(w - MARGIN, h - 13 * mm, "Design dossier")
        canvas.setStrokeColor(RULE)
        canvas.setLineWidth(0.5)
        canvas.line(MARGIN, h - 15 * mm, w - MARGIN, h - 15 * mm)
    canvas.setStrokeColor(RULE)
    canvas.setLineWidth(0.5)
    canvas.line(MARGIN, 13 * mm, w - MARGIN, 13 * mm)
    canvas.setFont("Helvetica", 7.5)
    canvas.setFillColor(MUTED)
    canvas.drawString(MARGIN, 9 * mm, doc.foot_text)
    canvas.setFillColor(INK)
    canvas.drawRightString(w - MARGIN, 9 * mm, f"page {n} of {total}" if total else f"page {n}")
    canvas.restoreState()


class DossierDoc(BaseDocTemplate):
    """The dossier's document template: one text column, contents, checked widths.

    Parameters
    ----------
    buffer : file-like
        Where the PDF goes (a BytesIO; the caller writes the file atomically).
    title, subject, creator : str
        PDF metadata.
    """

    #: Draw the flowables in the first pass too (its pages are discarded either way).
    draw_first_pass = False

    def __init__(self, buffer, *, title: str, subject: str, creator: str, author: str = "",
                 head_text: str = "", foot_text: str = ""):
        super().__init__(buffer, pagesize=PAGE, leftMargin=MARGIN, rightMargin=MARGIN, topMargin=TOP,
                         bottomMargin=BOTTOM, title=title, subject=subject, creator=creator,
                         author=author, invariant=1, pageCompression=1)
        self.overflow: list[str] = []
        self.head_text = head_text
        self.foot_text = foot_text
        self.page_count = PageCount(self)
        frame = _CheckedFrame(MARGIN, BOTTOM, FRAME_WIDTH, FRAME_HEIGHT, id="body",
                              leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)
        frame._dossier_overflow = self.overflow
        frame._dossier_doc = weakref.ref(self)  # a weak reference: KeepTogether deep-copies the frame
        self.addPageTemplates([PageTemplate(id="page", frames=[frame], onPageEnd=_running)])

    def build_dossier(self, story, max_passes: int = 8):
        """Build in as many passes as the contents and the page total need."""
        return self.multiBuild([self.page_count] + list(story), maxPasses=max_passes)

    def afterFlowable(self, flowable):
        if isinstance(flowable, Heading):
            self.notify("TOCEntry", (flowable.level, flowable.plain, self.page, flowable.key))

    def check(self):
        """Raise :class:`DossierLayoutError` when any flowable overflowed its frame."""
        if self.overflow:
            raise DossierLayoutError("; ".join(sorted(set(self.overflow))))
