"""Switch wiring: every contact of the network on a pole of a deck of a rotary wafer switch.

A rotary wafer switch has decks (wafers) on one shaft; each deck has two faces
and each face a ring of fixed terminals (:data:`WAYS` of them at 30 degree
indexing). A *pole* is a rotor blade with its own common terminal: in each
position it joins the common to the fixed terminal of that position, or to
nothing. A face carries ``WAYS // n`` poles when the switch has ``n`` positions.

A contact of the network (``planner.parts.contact.Contact``: two nodes, closed
in a set of positions) goes on a pole whose common is one of its nodes; its
other node is wired to the pole's fixed terminals of the positions that close
it (terminals jumpered together when it closes in several positions). So the
contacts of one pole share a node (the common) and are never closed in the same
position: two closed at once would join their other nodes through the common.

Between two positions the blade either bridges the two terminals (a shorting
blade: make-before-break, the contacts of both positions closed) or touches
neither (a non-shorting blade: break-before-make). The faults analysis
(:func:`planner.network.transition_states`) models make-before-break as the
union of both positions' contacts and break-before-make as their intersection:
a contact closed in both positions stays closed. On a non-shorting blade such a
contact would open for a moment, so under break-before-make a contact closed in
two adjacent positions goes on a shorting pole of its own kind (it stays made
through its run, as the analysis assumes), and no two contacts of such a pole
close in adjacent positions. Shorting and non-shorting poles are never on one
deck (a deck's rotor is one kind).

:func:`wire_switch` finds the fewest poles by an exact branch-and-bound search
(greedy colouring of the conflict graph as the first bound), then packs them into
the fewest decks. Pure: it takes a network and returns frozen data; the JSON
(:func:`wiring_json`) and the dossier's wafer drawings render it.
"""

from __future__ import annotations

from dataclasses import dataclass

import networkx as nx

from .model import NetworkSpec
from .network import BREAK_BEFORE_MAKE, MAKE_BEFORE_BREAK

__all__ = ["WAYS", "FACES", "SHORTING", "NON_SHORTING", "PoleContact", "Pole", "Wiring", "wire_switch",
           "wiring_json", "choose_style", "problems"]

#: Fixed terminals per face of a wafer at 30 degree indexing (common practice).
WAYS = 12
#: Faces of one deck that carry poles (front and rear; common practice).
FACES = 2
#: Blade kinds.
SHORTING, NON_SHORTING = "shorting", "non-shorting"
#: Search budget (branches tried) of the exact search; past it the best found is kept.
SEARCH_BUDGET = 200_000


@dataclass(frozen=True)
class PoleContact:
    """One fixed terminal of a pole in use.

    Attributes
    ----------
    position : str
        The switch position in which the blade rests on this terminal.
    terminal : int
        The terminal's number on its face (1 to :data:`WAYS`, clockwise).
    node : str
        The network node wired to the terminal.
    contact : str
        The network contact this terminal makes (its designator).
    """

    position: str
    terminal: int
    node: str
    contact: str


@dataclass(frozen=True)
class Pole:
    """A pole: a rotor blade, its common terminal and the fixed terminals in use."""

    deck: int
    face: str
    pole: int
    common: str
    blade: str
    contacts: tuple[PoleContact, ...]

    @property
    def members(self) -> tuple[str, ...]:
        """The network contacts on this pole, in order of their first position."""
        seen: list[str] = []
        for c in self.contacts:
            if c.contact not in seen:
                seen.append(c.contact)
        return tuple(seen)


@dataclass(frozen=True)
class Wiring:
    """The wiring of the range switch.

    Attributes
    ----------
    positions : tuple of str
        Switch positions in order (position k rests on terminal k of the first pole of a face).
    style : str or None
        ``make_before_break``, ``break_before_make`` or None (not decided: every
        blade shorting is assumed only for packing; see ``notes``).
    style_source : str
        Where the style came from (``declared``, ``faults``, ``chosen`` or ``undecided``).
    ways : int
        Fixed terminals per face.
    poles_per_face : int
    decks : int
    poles : tuple of Pole
    exact : bool
        Whether the search proved the pole count the fewest.
    notes : tuple of str
    """

    positions: tuple[str, ...]
    style: str | None
    style_source: str
    ways: int
    poles_per_face: int
    decks: int
    poles: tuple[Pole, ...]
    exact: bool
    notes: tuple[str, ...] = ()

    def deck_poles(self, deck: int) -> list[Pole]:
        """The poles of one deck, front face first."""
        return [p for p in self.poles if p.deck == deck]


@dataclass(frozen=True)
class _Contact:
    name: str
    nodes: tuple[str, str]
    closed: frozenset  # position indices
    blade: str


def _contacts(net: NetworkSpec, style: str | None) -> list[_Contact]:
    index = {p.name: i for i, p in enumerate(net.positions)}
    out = []
    for e in net.elements:
        if e.stamp != "switch":
            continue
        closed = frozenset(index[n] for n in e.closed_in if n in index)
        runs = any(i + 1 in closed for i in closed)
        blade = SHORTING if style != BREAK_BEFORE_MAKE or runs else NON_SHORTING
        out.append(_Contact(e.name, tuple(e.nodes), closed, blade))
    return out


def _compatible(a: _Contact, b: _Contact, style: str | None) -> bool:
    """Whether two contacts may share a blade (ignoring the common node)."""
    if a.blade != b.blade or a.closed & b.closed:
        return False
    if style == BREAK_BEFORE_MAKE and a.blade == SHORTING:
        # a shorting blade would join them while it passes from one to the other
        return not any(i + 1 in b.closed or i - 1 in b.closed for i in a.closed)
    return True


def _fewest_poles(items: list[_Contact], style: str | None) -> tuple[list[list[_Contact]], bool]:
    """Partition contacts into the fewest poles; exact unless the search budget runs out.

    Notes
    -----
    A pole is a set of pairwise compatible contacts (:func:`_compatible`) that
    share a node. With the common node fixed this is the colouring of the
    conflict graph; the common nodes make it a set partition, solved by
    depth-first branch and bound (each contact into an open pole or a new one,
    most constrained contact first), starting from the bound of networkx's
    greedy colouring of the conflict graph per node.

    References
    ----------
    D. Brelaz, "New methods to color the vertices of a graph", Communications of
    the ACM 22(4), 251-256, 1979 (most-constrained-first order, bound by colouring).
    """
    n = len(items)
    if n == 0:
        return [], True
    ok = [[i != j and _compatible(items[i], items[j], style) for j in range(n)] for i in range(n)]
    share = [[bool(set(items[i].nodes) & set(items[j].nodes)) for j in range(n)] for i in range(n)]
    # first bound: a greedy pole per node, contacts taken by the node most of them touch
    best = _greedy(items, ok)
    degree = [sum(1 for j in range(n) if share[i][j] and not ok[i][j]) for i in range(n)]
    order = sorted(range(n), key=lambda i: (-degree[i], -len(items[i].closed), items[i].name))
    poles: list[tuple[list[int], set]] = []  # (members, candidate commons)
    budget = [SEARCH_BUDGET]

    def search(k: int) -> None:
        nonlocal best
        if budget[0] <= 0 or len(poles) >= len(best):
            return
        if k == n:
            best = [[items[i] for i in members] for members, _ in poles]
            return
        budget[0] -= 1
        i = order[k]
        for members, commons in poles:
            shared = commons & set(items[i].nodes)
            if shared and all(ok[i][j] for j in members):
                members.append(i)
                old = set(commons)
                commons.intersection_update(shared)
                search(k + 1)
                members.pop()
                commons.clear()
                commons.update(old)
        if len(poles) + 1 < len(best):
            poles.append(([i], set(items[i].nodes)))
            search(k + 1)
            poles.pop()

    search(0)
    return best, budget[0] > 0


def _greedy(items: list[_Contact], ok) -> list[list[_Contact]]:
    """A first partition: colour the conflict graph of the contacts on each node, busiest node first."""
    left = set(range(len(items)))
    out: list[list[_Contact]] = []
    while left:
        counts: dict[str, int] = {}
        for i in left:
            for nd in items[i].nodes:
                counts[nd] = counts.get(nd, 0) + 1
        node = min(counts, key=lambda nd: (-counts[nd], nd))
        here = sorted(i for i in left if node in items[i].nodes)
        g = nx.Graph()
        g.add_nodes_from(here)
        g.add_edges_from((i, j) for i in here for j in here if i < j and not ok[i][j])
        colours = nx.greedy_color(g, strategy="largest_first")
        for c in sorted(set(colours.values())):
            out.append([items[i] for i in here if colours[i] == c])
        left -= set(here)
    return out


def _common(members: list[_Contact], terminals: set) -> str:
    commons = set(members[0].nodes)
    for c in members[1:]:
        commons &= set(c.nodes)
    inputs = sorted(commons & terminals)
    return inputs[0] if inputs else next(nd for nd in members[0].nodes if nd in commons)


def wire_switch(net: NetworkSpec, style: str | None = None, *, style_source: str | None = None) -> Wiring:
    """Assign every contact of a network to a deck and a pole of a rotary wafer switch.

    Parameters
    ----------
    net : NetworkSpec
        The network (its contacts and positions in switch order).
    style : {'make_before_break', 'break_before_make', 'either', None}, optional
        The contact style the switch must have (the faults analysis's
        ``contact_style_needed``, or the network's declared ``contact_style``).
        ``either``: both styles pass; the one that needs fewer decks is taken
        (break-before-make on a tie). None: not decided yet (the wiring is that
        of make-before-break, and a note says the faults analysis decides);
        ``neither``: likewise, with a note that no style survives.
    style_source : str, optional
        Where ``style`` came from, for the record.

    Returns
    -------
    Wiring

    Notes
    -----
    Rules (see the module text): each pole's contacts share its common node and
    are never closed in one position; under break-before-make a contact closed in
    adjacent positions goes on a shorting blade and no two contacts of a shorting
    blade close in adjacent positions; shorting and non-shorting blades on
    separate decks. With :math:`n` positions a face carries
    :math:`\\lfloor W/n \\rfloor` poles (:math:`W` = :data:`WAYS`, or :math:`n`
    when :math:`n > W`), a deck :data:`FACES` faces; the decks are
    :math:`\\sum_b \\lceil P_b / (F \\lfloor W/n \\rfloor) \\rceil` over the blade
    kinds :math:`b` with :math:`P_b` poles each, fewest when every
    :math:`P_b` is.

    References
    ----------
    Rotary wafer switches, 30 degree indexing, shorting and non-shorting rotors:
    common practice.
    """
    if style == "either":
        a = wire_switch(net, MAKE_BEFORE_BREAK, style_source="chosen")
        b = wire_switch(net, BREAK_BEFORE_MAKE, style_source="chosen")
        return a if a.decks < b.decks else b
    neither = style == "neither"
    if neither:
        style = None
    source = style_source or ("declared" if style is not None else "undecided")
    positions = tuple(p.name for p in net.positions)
    n = max(1, len(positions))
    ways = WAYS if n <= WAYS else n
    per_face = ways // n
    per_deck = per_face * FACES
    terminals = {t for p in net.positions for t in p.input}
    contacts = _contacts(net, style)
    exact = True
    groups: list[tuple[str, list[list[_Contact]]]] = []
    for blade in (NON_SHORTING, SHORTING):
        items = [c for c in contacts if c.blade == blade]
        found, done = _fewest_poles(items, style)
        exact = exact and done
        found = sorted(found, key=lambda m: min(min(c.closed, default=n) for c in m))
        groups.append((blade, found))
    poles: list[Pole] = []
    deck = 0
    for blade, found in groups:
        for k, members in enumerate(found):
            if k % per_deck == 0:
                deck += 1
            slot = k % per_deck
            face = "front" if slot < per_face else "rear"
            on_face = slot % per_face
            common = _common(members, terminals)
            pins = []
            for c in members:
                node = c.nodes[1] if c.nodes[0] == common else c.nodes[0]
                for i in sorted(c.closed):
                    pins.append(PoleContact(positions[i], on_face * (ways // per_face) + i + 1, node, c.name))
            pins.sort(key=lambda t: t.terminal)
            poles.append(Pole(deck, face, len([p for p in poles if p.deck == deck]) + 1, common, blade, tuple(pins)))
    notes = []
    if neither:
        notes.append("neither contact style survives every switch transition (planner faults): every blade is "
                     "drawn shorting (make-before-break) until the protection is improved")
    elif style is None:
        notes.append("contact style not decided: every blade is drawn shorting (make-before-break); "
                     "planner faults reports the style the transitions need (contact_style_needed)")
    if style == BREAK_BEFORE_MAKE and any(p.blade == SHORTING for p in poles):
        runs = sorted({c for p in poles if p.blade == SHORTING for c in p.members})
        verb = "closes" if len(runs) == 1 else "close"
        notes.append(f"break-before-make switch: {', '.join(runs)} {verb} in adjacent "
                     "positions and must stay made between them "
                     "(as the faults analysis assumes), so each is on a shorting blade of a deck of its own kind; "
                     "at the ends of a run it makes before and breaks after the other poles")
    if n > WAYS:
        notes.append(f"{n} positions: a wafer of {n} ways (more than the usual {WAYS}) is needed")
    if not exact:
        notes.append("the pole count is the best found within the search budget, not proved the fewest")
    return Wiring(positions, style, source, ways, per_face, deck, tuple(poles), exact, tuple(notes))


def choose_style(declared: str | None, needed: str | None) -> tuple[str | None, str]:
    """The contact style to wire: the declared one, else what the faults analysis needs.

    Returns
    -------
    style : str or None
    source : str
        ``declared``, ``faults`` or ``undecided``.
    """
    if declared is not None:
        return declared, "declared"
    if needed is not None:
        return needed, "faults"
    return None, "undecided"


def problems(net: NetworkSpec, wiring: Wiring) -> list[str]:
    """Every way the wiring breaks the rules (empty when it keeps them); for tests and checks.

    Checks: each contact on exactly one pole, on a terminal of every position that
    closes it and no other; the common is one of its nodes; no pole closed on two
    terminals in one position.
    """
    out = []
    where: dict[str, list] = {}
    for p in wiring.poles:
        seen: dict[str, str] = {}
        for t in p.contacts:
            where.setdefault(t.contact, []).append((p, t))
            if t.position in seen and seen[t.position] != t.contact:
                out.append(f"deck {p.deck} pole {p.pole}: {seen[t.position]} and {t.contact} "
                           f"both closed in {t.position}")
            seen[t.position] = t.contact
    for e in net.elements:
        if e.stamp != "switch":
            continue
        rows = where.get(e.name, [])
        if len({(p.deck, p.face, p.pole) for p, _ in rows}) != 1:
            out.append(f"{e.name} is on {len({(p.deck, p.face, p.pole) for p, _ in rows})} poles, not one")
            continue
        pole = rows[0][0]
        if pole.common not in e.nodes:
            out.append(f"{e.name}: the common {pole.common} is not one of its nodes")
        if sorted(t.position for _, t in rows) != sorted(e.closed_in):
            out.append(f"{e.name}: wired in {sorted(t.position for _, t in rows)}, closed in {sorted(e.closed_in)}")
        for _, t in rows:
            if {t.node, pole.common} != set(e.nodes):
                out.append(f"{e.name}: terminal wired to {t.node}, common {pole.common}; it joins {e.nodes}")
    return out


def wiring_json(w: Wiring) -> dict:
    """The ``switch`` object of ``planner size --json``: ``poles[]`` (``deck``, ``pole``, ``common``,
    ``contacts[]`` with ``position`` and ``node``) and the style, decks and notes."""
    return {
        "style": w.style,
        "style_source": w.style_source,
        "positions": list(w.positions),
        "ways": w.ways,
        "poles_per_face": w.poles_per_face,
        "decks": w.decks,
        "exact": w.exact,
        "poles": [{"deck": p.deck, "face": p.face, "pole": p.pole, "common": p.common, "blade": p.blade,
                   "contacts": [{"position": t.position, "terminal": t.terminal, "node": t.node, "contact": t.contact}
                                for t in p.contacts]} for p in w.poles],
        "notes": list(w.notes),
    }
