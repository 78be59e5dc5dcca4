"""Schematic drawings of a meter network, from its graph.

Two drawings:

* :func:`ladder` -- the clean drawing for the networks the planner meets in
  practice (multiplier chains, separate multipliers, Ayrton rings, separate
  shunts, clamps, a rotary range switch). Every circuit node becomes a
  horizontal bus on its own row; every element is a vertical stroke between the
  rows of its two nodes. Rows are ordered by the resistance of the lightest path
  from the common terminal (so the movement sits at the bottom and a multiplier
  string climbs upwards tap by tap); elements are packed into columns like
  intervals on a line (no two strokes of a column overlap). The switch is drawn
  to the right: each contact is a horizontal throw from its tap's bus to the
  wiper (pole) bus, which leads up, through any fuse, to the input terminal.
* :func:`graph_drawing` -- for any other network: nodes in layers by hop
  count from the common terminal, elements as straight labelled lines.

Both are deterministic: every ordering is by computed distance, then by name.
Designators are the network's, so they match the bill of materials.
"""

from __future__ import annotations

import math
import re
from collections import defaultdict
from dataclasses import dataclass

import networkx as nx
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Polygon, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import stringWidth

from .layout import ACCENT, INK, MUTED, PALE
from .text import value_text

__all__ = ["Unsuitable", "ladder", "graph_drawing", "schematic", "connection_rows", "common_node"]

ROW = 50.0          # row pitch [pt]
COL = 76.0          # column pitch [pt]
THROW = 140.0       # length of a switch throw [pt]
LEAD = 62.0         # lead from the top row to the input terminals [pt]
_KIND_RANK = {"movement": 0, "resistor": 1, "fuse": 2, "ptc": 2, "contact": 3, "diode": 4, "varistor": 4,
              "battery": 1, "rheostat": 1}
WHITE = colors.white
#: Smallest text size on paper [pt] (6 pt is the least a print reader is asked to read).
MIN_TEXT_PT = 6.3


class Unsuitable(Exception):
    """The network does not fit the ladder drawing; use the generic drawing."""


@dataclass(frozen=True)
class Compound:
    """Resistors drawn as one box: a series string through unbranched nodes, or a parallel group.

    ``how`` is ``series`` or ``parallel``; ``members`` are resistors or compounds,
    in order from node ``a`` to node ``b`` for a series string.
    """

    name: str
    a: str
    b: str
    how: str
    members: tuple

    kind = "resistor"
    symbol = "resistor"
    trimmer = False

    @property
    def nodes(self) -> tuple[str, str]:
        return (self.a, self.b)


def _flat(e) -> list:
    return [x for m in e.members for x in _flat(m)] if isinstance(e, Compound) else [e]


def _names(e) -> str:
    parts = _flat(e)
    names = [x.name for x in parts]
    m = [re.fullmatch(r"([A-Za-z_]+)(\d+)", n) for n in names]
    if len(names) > 2 and all(m) and len({x.group(1) for x in m}) == 1:
        nums = sorted(int(x.group(2)) for x in m)
        if nums == list(range(nums[0], nums[0] + len(nums))):
            return f"{m[0].group(1)}{nums[0]}\u2013{m[0].group(1)}{nums[-1]}"
    sep = " || " if isinstance(e, Compound) and e.how == "parallel" else ", "
    return sep.join(names)


def _value_of(e) -> float:
    if isinstance(e, Compound):
        vals = [_value_of(m) for m in e.members]
        if e.how == "series":
            return sum(vals)
        return 1.0 / sum(1.0 / v for v in vals) if all(v > 0 for v in vals) else 0.0
    return e.value_ohm


def _value_lines(e) -> list[str]:
    if not isinstance(e, Compound):
        return [value_text(e.value_ohm, "ohm") + (" trim" if e.trimmer else "")]
    if e.how == "parallel":
        return [value_text(_value_of(m), "ohm") if i == 0 else "|| " + value_text(_value_of(m), "ohm")
                for i, m in enumerate(e.members)]
    groups = []
    for m in e.members:
        t = value_text(_value_of(m), "ohm") if not isinstance(m, Compound) else "(" + _names(m) + ")"
        if groups and groups[-1][0] == t:
            groups[-1][1] += 1
        else:
            groups.append([t, 1])
    text = " + ".join(f"{k} x {t}" if k > 1 else t for t, k in groups)
    if len(groups) == 1:
        return [text]
    return [text, "= " + value_text(_value_of(e), "ohm")]


def _merge(elements, keep_nodes) -> list:
    """Parallel resistors into one box, then series strings through unbranched nodes."""
    items = list(elements)
    changed = True
    while changed:
        changed = False
        pairs = defaultdict(list)
        for e in items:
            if e.symbol == "resistor":
                pairs[frozenset(e.nodes)].append(e)
        for key, group in sorted(pairs.items(), key=lambda kv: sorted(kv[0])):
            if len(group) > 1 and len(key) == 2:
                a, b = group[0].nodes
                members = tuple(sorted(group, key=lambda x: _natural(x.name)))
                comp = Compound("+".join(x.name for x in members), a, b, "parallel", members)
                items = [e for e in items if e not in group] + [comp]
                changed = True
                break
        if changed:
            continue
        touch = defaultdict(list)
        for e in items:
            for n in e.nodes:
                touch[n].append(e)
        for n in sorted(touch):
            es = touch[n]
            if n in keep_nodes or len(es) != 2 or not all(e.symbol == "resistor" for e in es):
                continue
            e1, e2 = es
            if e1.nodes.count(n) != 1 or e2.nodes.count(n) != 1:
                continue
            a = e1.nodes[0] if e1.nodes[1] == n else e1.nodes[1]
            b = e2.nodes[0] if e2.nodes[1] == n else e2.nodes[1]
            if a == b:
                continue
            m1 = e1.members if isinstance(e1, Compound) and e1.how == "series" else (e1,)
            m2 = e2.members if isinstance(e2, Compound) and e2.how == "series" else (e2,)
            if isinstance(e1, Compound) and e1.how == "series" and e1.a != a:
                m1 = tuple(reversed(m1))
            if isinstance(e2, Compound) and e2.how == "series" and e2.a != n:
                m2 = tuple(reversed(m2))
            comp = Compound(e1.name + "+" + e2.name, a, b, "series", tuple(m1) + tuple(m2))
            items = [e for e in items if e is not e1 and e is not e2] + [comp]
            changed = True
            break
    order = {e.name: i for i, e in enumerate(elements)}
    return sorted(items, key=lambda e: min(order.get(x.name, 0) for x in _flat(e)) if isinstance(e, Compound)
                  else order[e.name])


def _natural(name: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", name)]


def common_node(net) -> str:
    """The input terminal most positions return through (the common, minus)."""
    count = defaultdict(int)
    for p in net.positions:
        count[p.input[1]] += 1
    if not count:
        raise Unsuitable("no positions")
    return sorted(count, key=lambda n: (-count[n], n))[0]


def _weight(spec, e) -> float:
    if isinstance(e, Compound):
        return max(_value_of(e), 1e-9)
    if e.symbol == "resistor":
        return max(e.value_ohm, 1e-9)
    if e.symbol == "movement":
        return max(spec.movement.r_coil_ohm, 1e-9)
    if e.symbol == "fuse":
        f = spec.parts.fuses.get(e.model)
        return max(f.r_cold_ohm if f else 0.0, 1e-9)
    if e.symbol == "contact":
        return max(e.r_ohm, 1e-9)
    return math.inf


def _wrap_list(items, width=15) -> list[str]:
    lines, cur = [], ""
    for it in items:
        if cur and len(cur) + len(it) + 2 > width:
            lines.append(cur + ",")
            cur = it
        else:
            cur = f"{cur}, {it}" if cur else it
    if cur:
        lines.append(cur)
    return lines


def _label_lines(spec, e) -> list[str]:
    if isinstance(e, Compound):
        return [_names(e)] + _value_lines(e)
    if e.symbol == "resistor":
        extra = " trim" if e.trimmer else ""
        return [e.name, value_text(e.value_ohm, "ohm") + extra]
    if e.symbol == "movement":
        m = spec.movement
        return [e.name, value_text(m.i_fs_a, "A") + " fs", value_text(m.r_coil_ohm, "ohm")]
    if e.symbol == "diode":
        return [e.name, e.model]
    if e.symbol == "fuse":
        f = spec.parts.fuses.get(e.model)
        return [e.name, value_text(f.rated_current_a, "A") if f else e.model]
    if e.symbol == "contact":
        return [e.name] + (_wrap_list(e.closed_in) or ["never closed"])
    if e.symbol == "battery":
        return [e.name, value_text(e.voltage_v, "V")]
    if e.symbol == "rheostat":
        return [e.name, value_text(e.max_ohm, "ohm") + " adj"]
    return [e.name]


def text_factor(scale: float) -> float:
    """How much to enlarge a drawing's text so it prints at :data:`MIN_TEXT_PT` or more once scaled.

    The drawing's smallest text is 6.2 units; a drawing scaled by ``scale`` to fit
    the page prints it at ``6.2 * scale`` pt, so below ``MIN_TEXT_PT / 6.2`` the
    text (and its line spacing) grows by the inverse.
    """
    return max(1.0, MIN_TEXT_PT / (6.2 * scale))


# --- symbols (drawn about a centre (x, y) on a vertical or horizontal stroke) ----------------------
def _resistor(g, x, y, vertical=True, trim=False):
    w, h = (8.0, 22.0) if vertical else (22.0, 8.0)
    g.add(Rect(x - w / 2, y - h / 2, w, h, fillColor=WHITE, strokeColor=INK, strokeWidth=0.9))
    if trim:
        g.add(Line(x - 9, y - 9, x + 9, y + 9, strokeColor=INK, strokeWidth=0.7))
        g.add(Polygon([x + 9, y + 9, x + 4.5, y + 7.5, x + 7.5, y + 4.5], fillColor=INK, strokeColor=None))


def _fuse(g, x, y):
    g.add(Rect(x - 4, y - 11, 8, 22, fillColor=WHITE, strokeColor=INK, strokeWidth=0.9))
    g.add(Line(x, y - 11, x, y + 11, strokeColor=INK, strokeWidth=0.7))


def _nonlinear_resistor(g, x, y, hooked: bool):
    """A resistor crossed by a slanted bar (IEC 60617 variable by its own nature): with a foot for a PTC."""
    _resistor(g, x, y, True, False)
    g.add(Line(x - 8, y - 11, x + 8, y + 11, strokeColor=INK, strokeWidth=0.8))
    if hooked:
        g.add(Line(x - 8, y - 11, x - 13, y - 11, strokeColor=INK, strokeWidth=0.8))


def _movement(g, x, y, plus_up: bool, tf: float = 1.0):
    g.add(Circle(x, y, 10, fillColor=WHITE, strokeColor=INK, strokeWidth=0.9))
    g.add(Line(x - 5, y - 5, x + 5.5, y + 5.5, strokeColor=ACCENT, strokeWidth=0.9))
    g.add(Polygon([x + 6.5, y + 6.5, x + 1.8, y + 5.0, x + 5.0, y + 1.8], fillColor=ACCENT, strokeColor=None))
    sy = y + 13 if plus_up else y - 11 - 7 * tf
    g.add(String(x - 7.5 - 2 * (tf - 1), sy, "+", fontName="Helvetica-Bold", fontSize=7 * tf, fillColor=INK))


def _battery(g, x, y, plus_up: bool, tf: float = 1.0):
    """A cell: the long plate is plus."""
    s = 1 if plus_up else -1
    g.add(Rect(x - 9, y - 4, 18, 8, fillColor=WHITE, strokeColor=None))
    g.add(Line(x - 9, y + 2.5 * s, x + 9, y + 2.5 * s, strokeColor=INK, strokeWidth=1.1))
    g.add(Line(x - 5, y - 2.5 * s, x + 5, y - 2.5 * s, strokeColor=INK, strokeWidth=2.0))
    g.add(String(x + 11, y + 2 * s - 2, "+", fontName="Helvetica-Bold", fontSize=7 * tf, fillColor=INK))


def _diode(g, x, y, up: bool):
    s = 1 if up else -1
    g.add(Polygon([x - 6, y - 5 * s, x + 6, y - 5 * s, x, y + 5 * s], fillColor=WHITE, strokeColor=INK,
                  strokeWidth=0.9))
    g.add(Line(x - 6, y + 5 * s, x + 6, y + 5 * s, strokeColor=INK, strokeWidth=1.1))


def _contact(g, x, y, vertical: bool):
    if vertical:
        g.add(Circle(x, y - 7, 1.7, fillColor=WHITE, strokeColor=INK, strokeWidth=0.8))
        g.add(Circle(x, y + 7, 1.7, fillColor=WHITE, strokeColor=INK, strokeWidth=0.8))
        g.add(Line(x, y - 5.3, x + 6, y + 6, strokeColor=INK, strokeWidth=0.9))
    else:
        g.add(Circle(x - 7, y, 1.7, fillColor=WHITE, strokeColor=INK, strokeWidth=0.8))
        g.add(Circle(x + 7, y, 1.7, fillColor=WHITE, strokeColor=INK, strokeWidth=0.8))
        g.add(Line(x - 5.3, y, x + 6, y + 6, strokeColor=INK, strokeWidth=0.9))


def _gap(e) -> float:
    """Half the length of the stroke a symbol covers (the wire stops there)."""
    if e.symbol == "movement":
        return 10.0
    if e.symbol == "contact":
        return 8.7
    if e.symbol == "diode":
        return 5.0
    return 11.0


def _compound(g, e, x, y):
    _resistor(g, x, y, True, False)
    if e.how == "parallel":
        g.add(Line(x - 4, y - 11, x + 4, y + 11, strokeColor=INK, strokeWidth=0.5))
        g.add(Line(x - 4, y + 11, x + 4, y - 11, strokeColor=INK, strokeWidth=0.5))
    else:
        for k in range(1, min(len(e.members), 4)):
            yy = y - 11 + 22 * k / min(len(e.members), 4)
            g.add(Line(x - 4, yy, x + 4, yy, strokeColor=INK, strokeWidth=0.5))


#: How each part's symbol (:attr:`planner.parts.Part.symbol`) is drawn on a vertical stroke:
#: ``draw(group, element, x, y, node_below, node_above, text_factor)``.
SYMBOLS = {
    "resistor": lambda g, e, x, y, lo, hi, tf: (_compound(g, e, x, y) if isinstance(e, Compound)
                                                else _resistor(g, x, y, True, e.trimmer)),
    "fuse": lambda g, e, x, y, lo, hi, tf: _fuse(g, x, y),
    "movement": lambda g, e, x, y, lo, hi, tf: _movement(g, x, y, plus_up=(e.a == hi), tf=tf),
    "diode": lambda g, e, x, y, lo, hi, tf: _diode(g, x, y, up=(e.cathode == hi)),
    "contact": lambda g, e, x, y, lo, hi, tf: _contact(g, x, y, True),
    "rheostat": lambda g, e, x, y, lo, hi, tf: _resistor(g, x, y, True, True),
    "battery": lambda g, e, x, y, lo, hi, tf: _battery(g, x, y, plus_up=(e.a == hi), tf=tf),
    "ptc": lambda g, e, x, y, lo, hi, tf: _nonlinear_resistor(g, x, y, hooked=True),
    "varistor": lambda g, e, x, y, lo, hi, tf: _nonlinear_resistor(g, x, y, hooked=False),
}


def _symbol(g, spec, e, x, y, lo_node, hi_node, tf=1.0):
    """Draw the symbol the part names; a part without a drawing of its own is a plain box."""
    draw = SYMBOLS.get(e.symbol, lambda g, e, x, y, lo, hi, tf: _resistor(g, x, y, True, False))
    draw(g, e, x, y, lo_node, hi_node, tf)


def _labels(g, lines, x, y, anchor="start", tf=1.0):
    n = len(lines)
    top = y + 4.0 * tf * (n - 1) - 2
    for i, t in enumerate(lines):
        g.add(String(x, top - 8.0 * tf * i, t, fontName="Helvetica-Bold" if i == 0 else "Helvetica",
                     fontSize=(6.8 if i == 0 else 6.3) * tf, fillColor=INK if i == 0 else MUTED,
                     textAnchor=anchor))


def _dot(g, x, y):
    g.add(Circle(x, y, 1.9, fillColor=INK, strokeColor=None))


def _terminal(g, x, y, text, anchor="middle", above=True, tf=1.0):
    g.add(Circle(x, y, 3.2, fillColor=WHITE, strokeColor=INK, strokeWidth=1.0))
    ty = y + 6 if above else y - 4 - 7 * tf
    lines = text.split("\n")
    for i, t in enumerate(lines):
        g.add(String(x, ty + 8 * tf * (len(lines) - 1 - i) if above else ty - 8 * tf * i, t,
                     fontName="Helvetica-Bold" if i == 0 else "Helvetica", fontSize=(7 if i == 0 else 6.2) * tf,
                     fillColor=INK if i == 0 else MUTED, textAnchor=anchor))


# --- the ladder -------------------------------------------------------------------------------------
def _plan(spec, net):
    """Rows, columns and switch layout of the ladder drawing (no geometry yet)."""
    ground = common_node(net)
    elements = list(net.elements)
    contacts = [e for e in elements if e.symbol == "contact"]
    degree = defaultdict(int)
    for c in contacts:
        degree[c.a] += 1
        degree[c.b] += 1
    fixed = nx.MultiGraph()
    fixed.add_node(ground)
    for e in elements:
        if not e.symbol == "contact":
            fixed.add_edge(*e.nodes, key=e.name)
    grounded = nx.node_connected_component(fixed, ground)
    # a pole (switch wiper) carries several contacts and reaches the common only through them
    poles = {n for n, k in degree.items() if k >= 2 and n not in grounded}

    def is_throw(c):
        return (c.a in poles) != (c.b in poles)

    while True:
        ladder_elems = [e for e in elements if not (e.symbol == "contact" and is_throw(e))]
        g = nx.MultiGraph()
        g.add_node(ground)
        for e in ladder_elems:
            g.add_edge(*e.nodes, key=e.name)
        comp = nx.node_connected_component(g, ground)
        demote = {n for n in poles if n in comp}
        if not demote:
            break
        poles -= demote
    ladder_elems = [e for e in elements if all(n in comp for n in e.nodes)
                    and not (e.symbol == "contact" and is_throw(e))]
    throws = [c for c in contacts if is_throw(c)]
    terminals0 = {n for p in net.positions for n in p.input}
    keep = terminals0 | {n for c in contacts for n in c.nodes}
    ladder_elems = _merge(ladder_elems, keep)
    comp = {ground} | {n for e in ladder_elems for n in e.nodes}
    for c in throws:
        tap = c.b if c.a in poles else c.a
        if tap not in comp:
            raise Unsuitable(f"contact {c.name} joins two nodes off the main ladder")
    # feed of each pole: a simple path of non-contact elements off the ladder, ending at a terminal
    terminals = {n for p in net.positions for n in p.input}
    placed = {x.name for e in ladder_elems for x in _flat(e)}
    off = [e for e in elements if e.name not in placed and e not in throws]
    feeds = {}
    used = set()
    for pole in sorted(poles):
        path_nodes, path_elems, node = [pole], [], pole
        while True:
            nxt = [e for e in off if e.name not in used and node in e.nodes]
            if not nxt:
                break
            if len(nxt) > 1:
                raise Unsuitable(f"node {node} branches off the ladder")
            e = nxt[0]
            used.add(e.name)
            node = e.nodes[1] if e.nodes[0] == node else e.nodes[0]
            if node in comp:
                raise Unsuitable(f"{e.name} joins the switch to the ladder")
            path_elems.append(e)
            path_nodes.append(node)
        if node not in terminals:
            raise Unsuitable(f"the switch pole {pole} leads to no input terminal")
        feeds[pole] = (path_nodes, path_elems)
    if len(used) != len(off):
        raise Unsuitable("elements off the ladder that the drawing cannot place")
    for t in terminals:
        if t not in comp and not any(t in f[0] for f in feeds.values()):
            raise Unsuitable(f"terminal {t} is not on the ladder")

    # distances from the common node by the lightest resistive path
    wg = nx.Graph()
    wg.add_node(ground)
    for e in ladder_elems:
        if e.symbol == "diode":
            continue
        a, b = e.nodes
        w = _weight(spec, e)
        if wg.has_edge(a, b):
            w = min(w, wg[a][b]["weight"])
        wg.add_edge(a, b, weight=w)
    dist = nx.single_source_dijkstra_path_length(wg, ground, weight="weight")
    rest = sorted(n for n in comp if n not in dist)
    for _ in range(len(rest) + 1):
        if not rest:
            break
        left = []
        for n in rest:
            known = sorted(dist[m] for m in g.neighbors(n) if m in dist)
            if known:
                dist[n] = sum(known) / len(known) + 1e-12
            else:
                left.append(n)
        rest = left
    if rest:
        raise Unsuitable("nodes reached by no element")
    order = sorted(comp, key=lambda n: (dist[n], n != ground, n))
    row = {n: i for i, n in enumerate(order)}

    # columns: interval packing
    spans = []
    for e in ladder_elems:
        ra, rb = row[e.nodes[0]], row[e.nodes[1]]
        if ra == rb:
            raise Unsuitable(f"{e.name} joins a node to itself")
        spans.append((min(ra, rb), max(ra, rb), _KIND_RANK.get(e.kind, 5), e.name, e))
    spans.sort(key=lambda s: (s[0], s[1] - s[0], s[2], s[3]))
    columns: list[list] = []
    for lo, hi, _, _, e in spans:
        for col in columns:
            if all(hi <= l2 or lo >= h2 for l2, h2, _ in col):
                col.append((lo, hi, e))
                break
        else:
            columns.append([(lo, hi, e)])
    tapped = defaultdict(list)
    for c in throws:
        tap = c.b if c.a in poles else c.a
        tapped[tap].append(c)

    def taps_in(col):
        nodes = {n for _, _, e in col for n in e.nodes}
        return sum(1 for n in nodes if n in tapped)

    if columns:
        spine = max(range(len(columns)), key=lambda i: (taps_in(columns[i]), -i))
        others = [i for i in range(len(columns)) if i != spine]
        columns = [columns[i] for i in reversed(others)] + [columns[spine]]
    return dict(ground=ground, rows=order, row=row, columns=columns, throws=throws, poles=poles,
                feeds=feeds, tapped=tapped, terminals=terminals, comp=comp)


def ladder(spec, net, max_width: float, max_height: float, *, report: bool = False):
    """The ladder drawing of a network, scaled to fit ``max_width`` x ``max_height`` [pt].

    Returns
    -------
    Drawing, or (Drawing, bool) with ``report``: whether resistors were merged.

    Raises
    ------
    Unsuitable
        When the network has a shape the ladder cannot show cleanly.
    """
    plan = _plan(spec, net)
    rows, row, columns = plan["rows"], plan["row"], plan["columns"]
    if len(columns) > 10 or len(rows) > 32:
        raise Unsuitable("too large for a ladder")
    pitch = ROW if len(rows) <= 10 else 44.0
    g = Group()
    x_left = 60.0
    y_base = 40.0

    def X(c):
        return x_left + COL * c

    def Y(r):
        return y_base + pitch * r

    # which columns touch each node (for the bus extent)
    touch = defaultdict(list)
    for ci, col in enumerate(columns):
        for lo, hi, e in col:
            for n in e.nodes:
                touch[n].append(ci)
    n_cols = max(len(columns), 1)
    x_spine = X(n_cols - 1)
    # poles: order by their highest tapped row, the highest nearest
    pole_rows = {}
    for c in plan["throws"]:
        pole = c.a if c.a in plan["poles"] else c.b
        tap = c.b if pole == c.a else c.a
        pole_rows.setdefault(pole, []).append(row[tap])
    poles = sorted(pole_rows, key=lambda p: (-max(pole_rows[p]), p))
    top_y = Y(len(rows) - 1)
    term_y = top_y + LEAD
    # text grows when the drawing shrinks to fit (text_factor); the throws lengthen with it so the
    # spine's labels keep clear of the contacts' (a few rounds settle the scale)
    tf = 1.0
    for _ in range(4):
        throw = THROW * tf
        x_pole = {p: x_spine + throw + 60.0 * i for i, p in enumerate(poles)}
        width = (max(x_pole.values()) if x_pole else x_spine) + 110.0
        height = term_y + 40.0
        scale = min(1.0, max_width / width, max_height / height)
        tf = text_factor(scale)

    # elements
    for ci, col in enumerate(columns):
        x = X(ci)
        for lo, hi, e in col:
            ya, yb = Y(lo), Y(hi)
            ym = (ya + yb) / 2
            gap = _gap(e)
            g.add(Line(x, ya, x, ym - gap, strokeColor=INK, strokeWidth=0.9))
            g.add(Line(x, ym + gap, x, yb, strokeColor=INK, strokeWidth=0.9))
            _symbol(g, spec, e, x, ym, rows[lo], rows[hi], tf)
            _labels(g, _label_lines(spec, e), x + 13, ym, tf=tf)
    # buses and junction dots
    for n in rows:
        r = row[n]
        cols = sorted(set(touch.get(n, [])))
        xs = [X(c) for c in cols]
        if n in plan["tapped"]:
            xs.append(max(xs + [x_spine]))
        if not xs:
            continue
        x0, x1 = min(xs), max(xs)
        if n == plan["ground"] or (n in plan["terminals"] and n not in plan["tapped"]):
            x0 = min(x0, x_left - 38)
        y = Y(r)
        if x1 > x0:
            g.add(Line(x0, y, x1, y, strokeColor=INK, strokeWidth=1.0))
        conns = defaultdict(int)
        for c in cols:
            conns[c] += sum(1 for lo, hi, e in columns[c] for m in e.nodes if m == n)
        for c in cols:
            ends = conns[c]
            inner = x0 < X(c) < x1
            if ends >= 2 or (inner and ends >= 1):
                _dot(g, X(c), y)
        if not (n == plan["ground"] or (n in plan["terminals"] and n not in plan["tapped"])):
            g.add(String(x0 + 3, y + 3, n, fontName="Helvetica-Oblique", fontSize=6.2 * tf, fillColor=ACCENT))
    # throws and poles
    for p in poles:
        xp = x_pole[p]
        throws = [c for c in plan["throws"] if p in c.nodes]
        rs = []
        for c in sorted(throws, key=lambda c: (row[c.b if c.a == p else c.a], c.name)):
            tap = c.b if c.a == p else c.a
            y = Y(row[tap])
            rs.append(y)
            x_start = max([X(ci) for ci in touch.get(tap, [])] + [x_spine])
            cx = xp - 26.0
            g.add(Line(x_start, y, cx - 8.7, y, strokeColor=INK, strokeWidth=0.9))
            g.add(Line(cx + 8.7, y, xp, y, strokeColor=INK, strokeWidth=0.9))
            _contact(g, cx, y, vertical=False)
            g.add(String(cx, y + 5 + 4 * tf, c.name, fontName="Helvetica-Bold", fontSize=6.6 * tf, fillColor=INK,
                         textAnchor="middle"))
            g.add(String(cx, y - 4 - 6 * tf, _clip(", ".join(c.closed_in), 48, 6.2 * tf), fontName="Helvetica",
                         fontSize=6.2 * tf, fillColor=MUTED, textAnchor="middle"))
            _dot(g, xp, y)
        y_hi = max(rs)
        g.add(Line(xp, min(rs), xp, y_hi, strokeColor=INK, strokeWidth=1.2))
        nodes, elems = plan["feeds"][p]
        # lead up through the feed elements to the terminal
        y = y_hi
        step = (term_y - y_hi) / (len(elems) + 1)
        for k, e in enumerate(elems):
            yc = y_hi + step * (k + 1)
            gap = _gap(e)
            g.add(Line(xp, y, xp, yc - gap, strokeColor=INK, strokeWidth=0.9))
            _symbol(g, spec, e, xp, yc, nodes[k], nodes[k + 1], tf)
            _labels(g, _label_lines(spec, e), xp + 12, yc, tf=tf)
            y = yc + gap
        g.add(Line(xp, y, xp, term_y - 3.2, strokeColor=INK, strokeWidth=0.9))
        served = [q.name for q in net.positions if q.input[0] == nodes[-1]]
        which = "all positions" if len(served) == len(net.positions) else _clip(", ".join(served), 150, 6.2 * tf)
        _terminal(g, xp, term_y, f"{nodes[-1]} (+)\n" + which, tf=tf)
        g.add(String(xp + 6, y_hi + 3, p, fontName="Helvetica-Oblique", fontSize=6.2 * tf, fillColor=ACCENT))
    # terminals on the ladder itself
    for n in sorted(plan["terminals"]):
        if n not in row:
            continue
        y = Y(row[n])
        roles = []
        if any(q.input[1] == n for q in net.positions):
            roles.append("-")
        if any(q.input[0] == n for q in net.positions):
            roles.append("+")
        x = x_left - 38
        if n in plan["tapped"] and n != plan["ground"]:
            continue
        _terminal(g, x, y, f"{n} ({'/'.join(roles)})", anchor="middle", above=False, tf=tf)
    g.scale(scale, scale)
    d = Drawing(width * scale, height * scale)
    d.add(g)
    if report:
        return d, any(isinstance(e, Compound) for col in columns for _, _, e in col)
    return d


def _clip(text: str, width: float, size: float = 6.3) -> str:
    if stringWidth(text, "Helvetica", size) <= width:
        return text
    while text and stringWidth(text + "...", "Helvetica", size) > width:
        text = text[:-1]
    return text + "..."


# --- generic drawing ------------------------------------------------------------------------------
def graph_drawing(spec, net, max_width: float, max_height: float) -> Drawing:
    """A generic drawing: nodes in layers by hop count from the common node, elements as lines.

    Layout: layer = shortest hop count from the common terminal (any element,
    contacts included); within a layer nodes sit in name order. Parallel
    elements between one pair of nodes are bowed apart. Deterministic.
    """
    ground = common_node(net)
    g = nx.MultiGraph()
    g.add_node(ground)
    for e in net.elements:
        g.add_edge(*e.nodes, key=e.name, element=e)
    hops = {}
    for comp in sorted(nx.connected_components(g), key=lambda c: (ground not in c, sorted(c)[0])):
        root = ground if ground in comp else sorted(comp)[0]
        base = max(hops.values(), default=-1) + 1 if root != ground else 0
        for n, k in nx.single_source_shortest_path_length(g, root).items():
            hops[n] = base + k
    layers = defaultdict(list)
    for n in sorted(hops, key=lambda n: (hops[n], n)):
        layers[hops[n]].append(n)
    gap_x, gap_y = 150.0, 70.0
    wide = max(len(v) for v in layers.values())
    pos = {}
    for k, nodes in layers.items():
        off = (wide - len(nodes)) * gap_x / 2
        for i, n in enumerate(nodes):
            pos[n] = (50 + off + gap_x * i, 30 + gap_y * k)
    width = 100 + gap_x * (wide - 1) + 60
    height = 60 + gap_y * max(layers)
    scale = min(1.0, max_width / width, max_height / height)
    tf = text_factor(scale)
    grp = Group()
    pair_count = defaultdict(int)
    for e in net.elements:
        a, b = e.nodes
        key = tuple(sorted((a, b)))
        idx = pair_count[key]
        pair_count[key] += 1
        (xa, ya), (xb, yb) = pos[a], pos[b]
        mx, my = (xa + xb) / 2, (ya + yb) / 2
        length = math.hypot(xb - xa, yb - ya) or 1.0
        nx_, ny_ = -(yb - ya) / length, (xb - xa) / length
        bow = 16.0 * ((idx + 1) // 2) * (1 if idx % 2 else -1)
        cx, cy = mx + nx_ * bow, my + ny_ * bow
        dash = (2, 2) if e.symbol == "contact" else None
        colour = ACCENT if e.symbol in ("diode", "movement") else INK
        grp.add(Line(xa, ya, cx, cy, strokeColor=colour, strokeWidth=0.9, strokeDashArray=dash))
        grp.add(Line(cx, cy, xb, yb, strokeColor=colour, strokeWidth=0.9, strokeDashArray=dash))
        text = " ".join(_label_lines(spec, e)[:2])
        tw = stringWidth(text, "Helvetica", 6.2 * tf) + 4
        grp.add(Rect(cx - tw / 2, cy - 4 * tf, tw, 9 * tf, fillColor=WHITE, strokeColor=PALE, strokeWidth=0.5))
        grp.add(String(cx, cy - 1.5 * tf, text, fontName="Helvetica", fontSize=6.2 * tf, fillColor=INK,
                       textAnchor="middle"))
    for n, (x, y) in pos.items():
        grp.add(Circle(x, y, 2.4, fillColor=INK, strokeColor=None))
        grp.add(String(x + 4, y + 4, n, fontName="Helvetica-Oblique", fontSize=6.8 * tf, fillColor=ACCENT))
    grp.scale(scale, scale)
    d = Drawing(width * scale, height * scale)
    d.add(grp)
    return d


def schematic(spec, net, max_width: float, max_height: float) -> tuple[Drawing, str]:
    """The ladder drawing when the network suits it, else the generic one.

    Returns
    -------
    (Drawing, str, bool)
        The drawing; ``'ladder'`` or the reason the generic drawing was used; whether
        resistors were drawn merged into one box (series strings, parallel groups).
    """
    try:
        d, merged = ladder(spec, net, max_width, max_height, report=True)
        return d, "ladder", merged
    except Unsuitable as exc:
        return graph_drawing(spec, net, max_width, max_height), str(exc), False


def connection_rows(net) -> list[tuple[str, str]]:
    """The connection list: each node and the element pins on it, in name order."""
    pins = defaultdict(list)
    for e in net.elements:
        if e.symbol == "diode":
            pins[e.anode].append(f"{e.name} anode")
            pins[e.cathode].append(f"{e.name} cathode")
        elif e.symbol == "movement":
            pins[e.a].append(f"{e.name} +")
            pins[e.b].append(f"{e.name} -")
        else:
            pins[e.a].append(f"{e.name}.1")
            pins[e.b].append(f"{e.name}.2")
    return [(n, ", ".join(pins[n])) for n in sorted(pins)]
