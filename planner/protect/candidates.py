"""Candidate clamp placements: stacks, sites, their combinations, and the network with one placed.

A candidate is a :class:`Combo`: a :class:`Site` (across the movement, an
existing tap of the multiplier string, or a split of a resistor next to the
movement) with a forward and a reverse :class:`Stack` of diodes.
:func:`sites` and :func:`stacks` list what the search may try for a project;
:func:`place_clamp` makes the base network with a combo placed (fresh
designators, the split resistor replaced by its two parts).

Public API
----------
:class:`Stack`, :class:`Site`, :class:`Combo`, :func:`clamp_diodes`, :func:`sites`,
:func:`stacks`, :func:`place_clamp`, :func:`fresh_number`, :func:`fresh_node`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import networkx as nx

from .. import network as nw
from ..model import Contact, Diode, NetworkSpec, Resistor

if TYPE_CHECKING:  # annotations only: the context imports this module
    from .context import SearchContext

__all__ = [
    "MAX_STACK",
    "MAX_ZENER_STACK",
    "MAX_TAPS",
    "Stack",
    "Site",
    "Combo",
    "clamp_diodes",
    "fresh_number",
    "fresh_node",
    "sites",
    "stacks",
    "place_clamp",
]

#: Longest series stack per direction (junction mode).
MAX_STACK = 3
#: Longest zener stack (breakdown mode).
MAX_ZENER_STACK = 2
#: Existing taps of the multiplier string tried as sites, nearest to the movement first.
MAX_TAPS = 3


@dataclass(frozen=True)
class Stack:
    """A series stack of identical diodes in one direction.

    Attributes
    ----------
    model : str
        Diode model in ``parts.diodes``.
    count : int
        Diodes in series.
    mode : {'junction', 'breakdown'}
        ``junction``: the stack conducts forward-biased (anodes toward the tap for
        a forward clamp); ``breakdown``: a zener stack conducting in breakdown
        (cathodes toward the tap for a forward clamp), which also conducts
        forward-biased in the other direction.
    """

    model: str
    count: int
    mode: str = "junction"

    def label(self) -> str:
        z = " zener" if self.mode == "breakdown" else ""
        return f"{self.model}{z} x{self.count}"

    def as_dict(self) -> dict:
        return {"model": self.model, "count": int(self.count), "mode": self.mode, "label": self.label()}


@dataclass(frozen=True)
class Site:
    """Where a clamp can go.

    Attributes
    ----------
    kind : {'movement', 'tap', 'split'}
    label : str
        ``'movement'``, ``'tap t1'``, ``'split R1'``.
    node : str
        The clamp node (movement and tap sites) or the low end of the split resistor.
    element : str or None
        The resistor that is split (split sites).
    r_ohm : float
        Resistance above the movement (taps) or the split resistor's value [ohm].
    pair : str or None
        A diode model of which a one-diode pair (one each way) also stays across
        the movement: two-level clamping, for networks where some positions (the
        current ranges of a multimeter) do not pass through the tapped segment.
    """

    kind: str
    label: str
    node: str
    element: str | None = None
    r_ohm: float = 0.0
    pair: str | None = None


@dataclass(frozen=True)
class Combo:
    """A site with a forward and a reverse stack (either may be None, not both)."""

    site: Site
    forward: Stack | None
    reverse: Stack | None

    @property
    def diodes(self) -> int:
        return ((self.forward.count if self.forward else 0) + (self.reverse.count if self.reverse else 0)
                + (2 if self.site.pair else 0))

    @property
    def parts_count(self) -> int:
        """Parts the clamp adds: its diodes (a movement pair included), plus one resistor for a split."""
        return self.diodes + (1 if self.site.kind == "split" else 0)

    def key(self) -> tuple:
        def k(s):
            return ("", 0, "") if s is None else (s.model, s.count, s.mode)

        return (self.site.label, k(self.forward), k(self.reverse))

    def signature(self) -> tuple:
        """The diodes the combo places, as oriented stacks: two combos with one signature are one circuit.

        A forward zener working in breakdown (cathodes toward the tap) is the same
        part the same way round as a reverse junction stack of that model.
        """
        out = []
        for direction, st in (("forward", self.forward), ("reverse", self.reverse)):
            if st is not None:
                out.append((st.model, st.count, (direction == "forward") == (st.mode == "junction")))
        return (self.site.label, tuple(sorted(out)))


# --- names and clamp diodes of a network -------------------------------------------------------


def fresh_number(names, prefix: str) -> int:
    """One more than the largest number of the designators ``<prefix><n>``."""
    top = 0
    for n in names:
        m = re.fullmatch(rf"{prefix}(\d+)", n)
        if m:
            top = max(top, int(m.group(1)))
    return top + 1


def fresh_node(base: str, taken: set) -> str:
    """``base``, or ``base`` with the least number from 2 up that no node in ``taken`` has."""
    if base not in taken:
        return base
    k = 2
    while f"{base}{k}" in taken:
        k += 1
    return f"{base}{k}"


def clamp_diodes(net: NetworkSpec) -> list[str]:
    """Designators of the network's clamp diodes.

    A clamp diode is one whose diode-only connected group (a stack and its
    intermediate nodes) reaches the movement's second node: a clamp to the
    movement's common side, at the movement or at a tap. A rectifier's diodes
    (``role: rectifier``) are part of the measurement, never a clamp.

    Parameters
    ----------
    net : NetworkSpec

    Returns
    -------
    list of str
    """
    mov = nw.movement_element(net)
    g = nx.MultiGraph()
    clamps = [e for e in net.elements if isinstance(e, Diode) and e.clamp]
    for e in clamps:
        g.add_edge(e.anode, e.cathode, key=e.name)
    if mov.b not in g:
        return []
    comp = nx.node_connected_component(g, mov.b)
    return [e.name for e in clamps if e.anode in comp]


# --- what the search may try -------------------------------------------------------------------


def sites(ctx: SearchContext) -> list[Site]:
    """Across the movement, the nearest taps, and a split of each resistor next to the movement.

    Parameters
    ----------
    ctx : SearchContext

    Returns
    -------
    list of Site
        The movement site first; then taps (nearest first, at most
        :data:`MAX_TAPS`) and splits; then each tap and split again with a
        one-diode pair kept across the movement. A sized project offers the
        sizer's clamp tap in the first multiplier segment (``docs/sizing.md``).
    """
    mov = ctx.movement
    out = [Site("movement", "movement", mov.a)]
    net = ctx.base
    if ctx.sized:
        # the sizer's clamp taps split the first multiplier segment (docs/sizing.md)
        roles = {s.name: s.role for s in ctx.base_sizing.segments}
        seg = next((s for s in ctx.base_sizing.segments if s.role == "multiplier" and s.parts), None)
        if seg is not None:
            low = seg.low
            for p in seg.parts:
                e = net.element(p.name)
                if low in e.nodes and roles.get(e.group) == "multiplier":
                    out.append(Site("split", "chain tap", low, e.name, float(min(e.value_ohm, seg.target_ohm))))
                    break
        return out + _paired(ctx, out)
    terminals = {n for p in net.positions for n in p.input}
    g = nx.Graph()
    for e in net.elements:
        if isinstance(e, Resistor) and mov.b not in e.nodes:
            a, b = e.nodes
            w = g.get_edge_data(a, b, {}).get("weight")
            g.add_edge(a, b, weight=e.value_ohm if w is None else 1.0 / (1.0 / w + 1.0 / e.value_ohm))
    if mov.a in g:
        dist = nx.single_source_dijkstra_path_length(g, mov.a, weight="weight")
        taps = sorted(((d, n) for n, d in dist.items() if d > 0 and n not in terminals and n != mov.b),
                      key=lambda x: (x[0], x[1]))
        for d, n in taps[:MAX_TAPS]:
            out.append(Site("tap", f"tap {n}", n, None, float(d)))
    for e in net.elements:
        if isinstance(e, Resistor) and mov.a in e.nodes and mov.b not in e.nodes and e.a != e.b:
            out.append(Site("split", f"split {e.name}", mov.a, e.name, float(e.value_ohm)))
    return out + _paired(ctx, out)


def _paired(ctx: SearchContext, found: list[Site]) -> list[Site]:
    """Each tap and split site again, with a one-diode pair kept across the movement."""
    pair = ctx.default_model()
    return [replace(s, label=f"{s.label} + movement pair", pair=pair) for s in found if s.kind != "movement"]


def stacks(ctx: SearchContext, direction: str) -> list[Stack]:
    """Every stack of one direction, strongest (fewest diodes) first within a model."""
    out = [Stack(m, k) for k in range(1, MAX_STACK + 1) for m in ctx.models]
    out += [Stack(z, k, "breakdown") for k in range(1, MAX_ZENER_STACK + 1) for z in ctx.zeners]
    return out


# --- the network with a clamp placed ----------------------------------------------------------


def _stack_elements(node: str, ref: str, stack: Stack, direction: str, names, taken) -> list[Diode]:
    """The diodes of one stack between the clamp node and the movement's common side."""
    toward = (direction == "forward") == (stack.mode == "junction")  # anodes toward the clamp node
    tag = "f" if direction == "forward" else "r"
    inner = []
    for i in range(1, stack.count):
        n = fresh_node(f"clamp_{tag}{i}", taken)
        taken.add(n)
        inner.append(n)
    chain = [node] + inner + [ref]
    out = []
    for hi, lo in zip(chain[:-1], chain[1:]):
        name = next(names)
        out.append(Diode(name, hi, lo, stack.model) if toward else Diode(name, lo, hi, stack.model))
    return out


def _split_parts(e: Resistor, site: Site, tap: str, upper, lower, r_names, taken):
    """The split resistor's parts in series, above and below the clamp tap.

    Returns the parts, their designators and the factor info of a grid split
    (None when the values are given).
    """
    low = site.node
    high = e.b if e.a == low else e.a
    grid = upper is None
    ups = (e.value_ohm / 2.0,) if grid else tuple(upper)
    lows = (e.value_ohm / 2.0,) if grid else tuple(lower)
    chain_nodes = [high]
    for i in range(len(ups) - 1):
        n = fresh_node(f"clamp_up{i + 1}", taken)
        taken.add(n)
        chain_nodes.append(n)
    chain_nodes.append(tap)
    for i in range(len(lows) - 1):
        n = fresh_node(f"clamp_lo{i + 1}", taken)
        taken.add(n)
        chain_nodes.append(n)
    chain_nodes.append(low)
    parts, names = [], []
    for j, v in enumerate(ups + lows):
        name = next(r_names)
        names.append(name)
        parts.append(replace(e, name=name, a=chain_nodes[j], b=chain_nodes[j + 1], value_ohm=float(v),
                             target_ohm=None, group=f"split of {e.name}", line=None))
    factor = (names[0], names[1], float(e.value_ohm), ups[0], lows[0]) if grid else None
    return parts, names, factor


def _insertion_index(ctx: SearchContext, elements: list, split_names: list) -> int:
    """Where the new diodes go: where the old clamps were, else before the first contact."""
    orig_names = [e.name for e in ctx.orig_net.elements]
    at = len(elements)
    if ctx.orig_clamp:
        first = orig_names.index(ctx.orig_clamp[0])
        before = {n for n in orig_names[:first]}
        at = sum(1 for e in elements if e.name in before or e.name in split_names)
    else:
        for i, e in enumerate(elements):
            if isinstance(e, Contact):
                at = i
                break
    return at


def place_clamp(ctx: SearchContext, combo: Combo, *, upper=None,
                lower=None) -> tuple[NetworkSpec, tuple, tuple, tuple | None]:
    """The base network with a clamp placed.

    Parameters
    ----------
    ctx : SearchContext
    combo : Combo
    upper, lower : tuple of float, optional
        Values of the split's parts in series [ohm]: above and below the tap. A
        split without them gets two parts of half the resistor each, to be
        scaled by factors (a grid).

    Returns
    -------
    net, clamp diodes, watched parts, factor info (None unless a grid split)
    """
    site = combo.site
    mov = ctx.movement
    taken = set(ctx.nodes)
    r_names = (f"R{k}" for k in range(ctx.next_r, ctx.next_r + 100))
    d_names = (f"D{k}" for k in range(ctx.next_d, ctx.next_d + 100))
    elements = []
    split_names = []
    factor = None
    node = site.node
    for e in ctx.base.elements:
        if site.kind == "split" and e.name == site.element:
            node = ctx.tap_node
            taken.add(node)
            parts, split_names, factor = _split_parts(e, site, node, upper, lower, r_names, taken)
            elements += parts
        else:
            elements.append(e)
    diodes = []
    if site.pair is not None:
        diodes += _stack_elements(mov.a, mov.b, Stack(site.pair, 1), "forward", d_names, taken)
        diodes += _stack_elements(mov.a, mov.b, Stack(site.pair, 1), "reverse", d_names, taken)
    if combo.forward is not None:
        diodes += _stack_elements(node, mov.b, combo.forward, "forward", d_names, taken)
    if combo.reverse is not None:
        diodes += _stack_elements(node, mov.b, combo.reverse, "reverse", d_names, taken)
    at = _insertion_index(ctx, elements, split_names)
    elements = elements[:at] + diodes + elements[at:]
    net = replace(ctx.base, elements=tuple(elements))
    clamp = tuple(d.name for d in diodes)
    return net, clamp, clamp + tuple(split_names), factor
