"""The range switch as a graph.

A :class:`networkx.MultiGraph` per network: nodes are circuit nodes, every
element is an edge keyed by its designator with the element in the edge data.
A switch *state* is a set of closed contacts: one per position, plus the two
states between adjacent positions while the switch turns (make-before-break:
the contacts of both positions closed; break-before-make: only the contacts
the two positions share).

This module also compiles one state into the flat arrays the solver works on
(:class:`planner.solve.Circuit`): the part of the graph connected to the input
terminals, zero-resistance contacts merged into single nodes, diodes split into
ports: the node pairs they join (an antiparallel pair shares one port).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import networkx as nx
import numpy as np

from .errors import ProjectError, SolveError
from .model import MovementElement, NetworkSpec, Position, Spec
from .solve.memo import Kept
from .tools import nearest

POSITION = "position"
MAKE_BEFORE_BREAK = "make_before_break"
BREAK_BEFORE_MAKE = "break_before_make"


@dataclass(frozen=True)
class SwitchState:
    """One state of the range switch.

    Attributes
    ----------
    name : str
        The position's name, or ``"A -> B (make-before-break)"`` for a transition.
    kind : str
        ``position``, ``make_before_break`` or ``break_before_make``.
    position : Position
        The position whose input terminals and stimulus apply (the one the switch
        leaves, for a transition).
    closed : frozenset of str
        Designators of the closed contacts.
    target : Position or None
        The position the switch moves to, for a transition.
    """

    name: str
    kind: str
    position: Position
    closed: frozenset
    target: Position | None = None


def graph(net: NetworkSpec) -> nx.MultiGraph:
    """The whole network with every contact present, as a MultiGraph.

    Edges are keyed by designator and carry the element as ``element``.
    """
    g = nx.MultiGraph()
    for e in net.elements:
        a, b = e.nodes
        g.add_edge(a, b, key=e.name, element=e)
    return g


def closed_contacts(net: NetworkSpec, position: str) -> frozenset:
    """Designators of the contacts closed in ``position``."""
    return frozenset(e.name for e in net.elements if e.stamp == "switch" and position in e.closed_in)


def position_states(net: NetworkSpec) -> list[SwitchState]:
    """One state per position, in switch order."""
    return [SwitchState(p.name, POSITION, p, closed_contacts(net, p.name)) for p in net.positions]


def transition_states(net: NetworkSpec) -> list[SwitchState]:
    """The two transition states between each pair of adjacent positions.

    Notes
    -----
    Make-before-break closes the union of both positions' contacts; break-before-make
    keeps only their intersection (the contacts the switch does not move). The
    stimulus of the position being left stays applied (common practice for the
    "switch turned with the probes connected" misrange).
    """
    out = []
    for p, q in zip(net.positions[:-1], net.positions[1:]):
        cp, cq = closed_contacts(net, p.name), closed_contacts(net, q.name)
        out.append(SwitchState(f"{p.name} -> {q.name} (make-before-break)", MAKE_BEFORE_BREAK, p, cp | cq, q))
        out.append(SwitchState(f"{p.name} -> {q.name} (break-before-make)", BREAK_BEFORE_MAKE, p, cp & cq, q))
    return out


def state(net: NetworkSpec, name: str, path: str | None = None) -> SwitchState:
    """The state of a position (or transition) by name; a clear error otherwise.

    ``path`` (the project file) is named in the error, which suggests the nearest
    position name ignoring case and spaces.
    """
    for s in position_states(net) + transition_states(net):
        if s.name == name:
            return s
    names = [p.name for p in net.positions]
    hint = nearest(name, names, forgiving=True)
    more = f" (did you mean '{hint}'?)" if hint else ""
    raise ProjectError(f"no switch position named '{name}'{more}; give one of: {', '.join(names)}", path)


def active_graph(net: NetworkSpec, st: SwitchState) -> nx.MultiGraph:
    """The elements present in a switch state: every non-contact element and the closed contacts."""
    g = nx.MultiGraph()
    for e in net.elements:
        if not e.present(st.closed):
            continue
        a, b = e.nodes
        g.add_edge(a, b, key=e.name, element=e)
    for n in st.position.input:
        g.add_node(n)
    return g


def movement_element(net: NetworkSpec) -> MovementElement:
    """The network's movement element."""
    for e in net.elements:
        if isinstance(e, MovementElement):
            return e
    raise ProjectError("the network has no element of kind 'movement'; add one, e.g. {name: M1, kind: movement, between: [m_plus, com]}")


def validate(spec: Spec, net: NetworkSpec | None = None) -> None:
    """Graph-level checks of a network, each error naming the element and its line.

    Checks: a node that only one element touches and that is no input terminal (a
    dangling wire, usually a misspelt node name); elements connected to no input
    terminal (an island); a position that no contact serves; a position whose input
    terminals are not joined by any path; a movement that is not in the current-carrying part of a
    position (the block of the graph that holds the source).

    Raises
    ------
    ProjectError

    Notes
    -----
    A network that passes every check is found so without networkx
    (:func:`_passes`); only one that fails some check is checked again here, with
    the graph, to name what is wrong.
    """
    net = net if net is not None else spec.network
    if _passes(net):
        return
    path = spec.path
    movement = movement_element(net)
    full = graph(net)
    terminals = {n for p in net.positions for n in p.input}
    for node in full.nodes:
        if full.degree(node) == 1 and node not in terminals:
            (a, b, key, data), = full.edges(node, keys=True, data=True)
            e = data["element"]
            others = sorted(n for n in full.nodes if n != node)
            hint = nearest(node, others)
            more = f" Did you mean '{hint}'?" if hint else " Connect it or remove the element."
            raise ProjectError(f"node '{node}' is floating: only {key} touches it.{more}", path, e.line)
    reach: set = set()
    for t in terminals:
        if t in full:
            reach |= nx.node_connected_component(full, t)
    stray = [e for e in net.elements if e.nodes[0] not in reach]
    if stray:  # an island: parts that no switch position can ever put in circuit
        island = nx.node_connected_component(full, stray[0].nodes[0])
        names = [e.name for e in stray if e.nodes[0] in island]
        raise ProjectError(
            f"{', '.join(names)} {'is' if len(names) == 1 else 'are'} connected to no input terminal "
            f"(nodes {', '.join(sorted(map(str, island)))} form an island), so no position ever puts "
            f"{'it' if len(names) == 1 else 'them'} in circuit; connect the island to the meter or remove it",
            path, stray[0].line)
    has_contacts = any(e.stamp == "switch" for e in net.elements)
    for st in position_states(net):
        p = st.position
        if has_contacts and not st.closed:
            raise ProjectError(
                f"position '{p.name}' is served by no contact; list it in the closed_in of the contacts that select it",
                path, p.line)
        g = active_graph(net, st)
        plus, minus = p.input
        if not nx.has_path(g, plus, minus):
            raise ProjectError(
                f"position '{p.name}': no path joins its input terminals {plus} and {minus}; check the contacts closed in it",
                path, p.line)
        main, _ = _current_carrying(g, plus, minus)
        if movement.a not in main or movement.b not in main:
            raise ProjectError(
                f"position '{p.name}': the movement {movement.name} is not in the path from {plus} to {minus}, "
                f"so it would never deflect; check the contacts closed in it", path, p.line)


def _reached(adj: dict, starts) -> set:
    """The nodes joined to any of ``starts`` in the graph ``adj`` (node -> neighbours)."""
    seen = {n for n in starts if n in adj}
    todo = list(seen)
    while todo:
        for w in adj[todo.pop()]:
            if w not in seen:
                seen.add(w)
                todo.append(w)
    return seen


def _passes(net: NetworkSpec) -> bool:
    """Whether :func:`validate` finds nothing wrong with a network (False: let it say what, or pass).

    The same checks on node pairs instead of networkx graphs: no node but an input
    terminal touched once (a self-loop touches its node twice, as networkx counts
    it), no element out of reach of the input terminals, and in every position a
    closed contact (where the network has contacts), a path between the input
    terminals and the movement in the current-carrying block (:func:`_carrying`,
    which :func:`validate` uses too).
    """
    movement = next((e for e in net.elements if isinstance(e, MovementElement)), None)
    if movement is None:
        return False
    terminals = {n for p in net.positions for n in p.input}
    degree: dict = {}
    adj: dict = {}
    for e in net.elements:
        a, b = e.nodes
        degree[a] = degree.get(a, 0) + 1
        degree[b] = degree.get(b, 0) + 1
        adj.setdefault(a, set()).add(b)
        adj.setdefault(b, set()).add(a)
    if any(d == 1 and n not in terminals for n, d in degree.items()):
        return False
    reach = _reached(adj, terminals)
    if any(e.nodes[0] not in reach for e in net.elements):
        return False
    has_contacts = any(e.stamp == "switch" for e in net.elements)
    for st in position_states(net):
        if has_contacts and not st.closed:
            return False
        plus, minus = st.position.input
        pairs = [e.nodes for e in net.elements if e.present(st.closed)]
        joined: dict = {plus: set(), minus: set()}
        for a, b in pairs:
            joined.setdefault(a, set()).add(b)
            joined.setdefault(b, set()).add(a)
        if minus not in _reached(joined, [plus]):
            return False
        main, _ = _carrying(pairs, plus, minus)
        if movement.a not in main or movement.b not in main:
            return False
    return True


# --- compiling one state for the solver -----------------------------------------------------


class UnionFind:
    """Disjoint sets of node names (merging nodes joined by ideal contacts)."""

    def __init__(self):
        self.parent = {}

    def find(self, x):
        self.parent.setdefault(x, x)
        while self.parent[x] != x:
            self.parent[x] = self.parent[self.parent[x]]
            x = self.parent[x]
        return x

    def union(self, a, b):
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


@dataclass(frozen=True)
class Branch:
    """A linear branch of a compiled circuit and where its value comes from.

    ``role`` is the element's kind (``resistor``, ``movement``, ``fuse``,
    ``contact`` ...) or ``source``; ``element`` the designator it belongs to.
    """

    element: str
    role: str
    a: str
    b: str


def _current_carrying(g: nx.MultiGraph, plus: str, minus: str):
    """Nodes of the part of a state that can carry current, and where the rest hangs.

    With a virtual source edge between the input terminals, only the biconnected
    block that holds it can carry current: every other block hangs on the circuit
    by a single node, and a passive network with one connection carries none, so
    all its nodes sit at that node's potential (exact, not an approximation).

    Returns
    -------
    main : set of str
        Nodes of the current-carrying block.
    alias : dict
        Every other node connected to the input, mapped to the node of ``main`` it hangs on.

    Notes
    -----
    The block is found by Hopcroft and Tarjan's depth-first search (low points, a stack
    of edges) from the plus terminal, stopping at the block that holds the source edge;
    the rest by a breadth-first search over the edges outside the block.

    References
    ----------
    J. Hopcroft and R. Tarjan, "Algorithm 447: efficient algorithms for graph
    manipulation", Communications of the ACM 16(6), 372-378, 1973.
    """
    return _carrying(g.edges(), plus, minus)


def _carrying(edges, plus: str, minus: str):
    """:func:`_current_carrying` of the graph made of ``edges`` (node pairs) and the input terminals."""
    adj: dict = {}
    for a, b in edges:
        if a != b:
            adj.setdefault(a, set()).add(b)
            adj.setdefault(b, set()).add(a)
    adj.setdefault(plus, set()).add(minus)
    adj.setdefault(minus, set()).add(plus)
    main = _block_with(adj, plus, minus)
    alias = {}
    seen = set()
    for start in adj:
        if start in seen or start in main:
            continue
        comp, todo = {start}, [start]
        anchors = set()
        while todo:  # the nodes joined to ``start`` by edges that leave the block
            v = todo.pop()
            for w in adj[v]:
                if w in main:
                    anchors.add(w)
                elif w not in comp:
                    comp.add(w)
                    todo.append(w)
        seen |= comp
        if len(anchors) == 1:
            (at,) = anchors
            alias.update({n: at for n in comp})
    return main, alias


def _block_with(adj: dict, plus, minus) -> set:
    """The nodes of the biconnected block of a simple graph (``adj``: node -> neighbours) that
    holds the edge plus-minus (depth-first search from ``plus``, Hopcroft and Tarjan)."""
    disc, low = {plus: 0}, {plus: 0}
    edges: list = []
    stack = [(plus, None, iter(adj[plus]))]
    while stack:
        v, parent, it = stack[-1]
        for w in it:
            if w == parent:
                continue
            if w not in disc:
                disc[w] = low[w] = len(disc)
                edges.append((v, w))
                stack.append((w, v, iter(adj[w])))
                break
            if disc[w] < disc[v]:  # a back edge
                low[v] = min(low[v], disc[w])
                edges.append((v, w))
        else:
            stack.pop()
            if not stack:
                break
            u = stack[-1][0]
            low[u] = min(low[u], low[v])
            if low[v] >= disc[u]:  # u separates the block of the tree edge (u, v): pop it
                block = []
                while True:
                    e = edges.pop()
                    block.append(e)
                    if e == (u, v):
                        break
                if any({a, b} == {plus, minus} for a, b in block):
                    return {n for e in block for n in e}
    return {plus, minus}


def _with_sources(net, st, plus, minus, live, alias):
    """The live nodes grown to every node joined to the input when a battery lies outside them.

    A block with an EMF in it (a battery the switch leaves in a loop) carries current
    although it hangs on the rest by one node (a battery that is a bridge of the
    graph closes no loop and carries none), so the dangling-block shortcut of
    :func:`_current_carrying` does not hold for it: the whole part of the state
    joined to the input terminals is then solved, each node at its own potential.
    """
    outside = [e for e in net.elements if e.emf() != 0.0 and e.present(st.closed)
               and not (e.nodes[0] in live and e.nodes[1] in live)]
    if not outside:
        return live, alias
    g = active_graph(net, st)
    simple = nx.Graph((a, b) for a, b in g.edges() if a != b)
    bridges = {frozenset(x) for x in nx.bridges(simple)}
    # a battery that is a bridge (its only path back is through itself) closes no loop: no current
    outside = [e for e in outside if g.number_of_edges(*e.nodes) > 1 or frozenset(e.nodes) not in bridges]
    if not outside:
        return live, alias
    joined = nx.node_connected_component(g, plus) | nx.node_connected_component(g, minus)
    if not any(e.nodes[0] in joined for e in outside):
        return live, alias
    return set(joined), {}


#: Compiled states by topology (:func:`compiled`).
_COMPILED = Kept(4096)
#: The current-carrying parts of states by topology (:func:`live_part`).
_LIVE = Kept(4096)


def _live(net: NetworkSpec, st: SwitchState) -> tuple[set, dict]:
    """The nodes :func:`compile_state` solves (``live``) and the dangling ones with the node each hangs on."""
    plus, minus = st.position.input
    # the state's edges (:func:`active_graph`'s) as node pairs: the graph itself is made only where a battery needs it
    live, alias = _carrying([e.nodes for e in net.elements if e.present(st.closed)], plus, minus)
    return _with_sources(net, st, plus, minus, live, alias)


#: Field names of each model type but ``line`` (:func:`record`).
_FIELDS: dict = {}
#: Records made, each kept once (:func:`record`): the networks of one command repeat their parts.
_RECORDS = Kept(16384)


def record(x) -> tuple:
    """A frozen model object (an element, a position) as a key: its type and every field but ``line``.

    Two elements with the same record are the same part in the same place (the
    file line they were read from aside): a solve or a judgement reads nothing else
    of them.
    """
    names = _FIELDS.get(type(x))
    if names is None:
        names = _FIELDS[type(x)] = tuple(f.name for f in fields(x) if f.name != "line")
    rec = (type(x),) + tuple(getattr(x, n) for n in names)
    try:
        kept = _RECORDS.get(rec)
    except TypeError:  # a field that cannot be hashed: the record as it is
        return rec
    return kept if kept is not None else _RECORDS.keep(rec, rec)


def live_elements(net: NetworkSpec, st: SwitchState, live, records=None) -> tuple:
    """What :func:`compile_state` reads of the elements of a state with live part ``live``, as a key.

    Every element between two live nodes and every closed ideal contact that touches
    one, in network order, each as ``record, present, merges`` in one flat tuple
    (:func:`record`; ``records``: the records of ``net.elements`` when the caller keeps
    them). With the
    live nodes, the input terminals and the source, they decide the compiled state
    and its branch values; every other element has no node in the compiled circuit
    or hangs on it by a single node (no current, no voltage across it).
    """
    closed = st.closed
    out = []
    for k, e in enumerate(net.elements):
        a, b = e.nodes
        if (a in live and b in live) or ((a in live or b in live) and e.merges(closed)):
            out += (record(e) if records is None else records[k], e.present(closed), e.merges(closed))
    return tuple(out)


def live_part(net: NetworkSpec, st: SwitchState, *, keep: bool = True) -> tuple[set, dict]:
    """The part of a state that :func:`compile_state` reads, kept per topology (:func:`topology_key`).

    ``keep`` False: found here and not kept (a caller that keeps it itself).

    Returns
    -------
    live : set of str
        The nodes of the current-carrying block (every node joined to the input
        where a battery outside the block closes a loop, :func:`_with_sources`);
        not to be changed.
    alias : dict
        Every other node joined to the input, mapped to the node of ``live`` it
        hangs on (not to be changed).

    Notes
    -----
    The compiled circuit names these nodes alone (its ``node_index``): an element
    with neither node among them carries no current and has no voltage across it
    in that state, whatever its value.
    """
    if not keep:
        return _live(net, st)
    key = _topology_key_of(net, st)
    hit = _LIVE.get(key)
    if hit is None:
        hit = _LIVE.keep(key, _live(net, st))
    return hit


def topology_key(net: NetworkSpec, st: SwitchState) -> tuple:
    """What :func:`compile_state` reads of a network in one state, as a key.

    Each element's designator, kind, stamp and nodes, whether the state puts it in
    circuit or merges its nodes, and whether it holds an EMF; the state's name and
    input terminals. Values (resistances, junction parameters) are not in it.
    """
    closed = st.closed
    return (st.name, st.position.input,
            tuple((e.name, e.kind, e.stamp, e.nodes, e.present(closed), e.merges(closed), e.emf() != 0.0)
                  for e in net.elements))


#: Topology keys by the network and state objects they were made of (both frozen: a key
#: is made once per pair, not on every call).
_KEYS = Kept(4096)


def _topology_key_of(net: NetworkSpec, st: SwitchState) -> tuple:
    """:func:`topology_key`, kept for these very objects (held with it, so ids are not reused)."""
    hit = _KEYS.get((id(net), id(st)))
    if hit is not None:  # the entry holds net and st, so their ids name no other objects
        return hit[2]
    return _KEYS.keep((id(net), id(st)), (net, st, topology_key(net, st)))[2]


def compiled(spec: Spec, st: SwitchState, *, stimulus: str | None = None, source_resistance: bool = False,
             net: NetworkSpec | None = None):
    """:func:`compile_state`, kept per topology (:func:`topology_key`) for the life of the process.

    A compiled state depends on which element joins which nodes and how, never on the
    values: the networks of one command that differ in values alone (search candidates,
    sizing passes, a tripped PTC at another resistance) share it.
    """
    net = net if net is not None else spec.network
    kind = stimulus or st.position.kind.source
    topology = _topology_key_of(net, st)
    key = (topology, kind, bool(source_resistance))
    circuit = _COMPILED.get(key)
    if circuit is None:  # the live part as found before for this topology (:func:`live_part`), if it was
        circuit = _COMPILED.keep(key, compile_state(spec, st, stimulus=kind, source_resistance=source_resistance,
                                                     net=net, live=_LIVE.get(topology)))
    return circuit


def compile_state(spec: Spec, st: SwitchState, *, stimulus: str | None = None,
                  source_resistance: bool = False, net: NetworkSpec | None = None, live: tuple | None = None):
    """Compile a switch state into a :class:`planner.solve.Circuit`.

    Parameters
    ----------
    spec : Spec
    st : SwitchState
    stimulus : {'voltage', 'current'}, optional
        What drives the input terminals; the position's own quantity by default.
    source_resistance : bool
        Add a source-resistance branch (role ``source``) in series with input[0]
        for a voltage stimulus.
    net : NetworkSpec, optional
        Defaults to ``spec.network``.
    live : tuple, optional
        The state's ``(live, alias)`` (:func:`live_part`) when the caller knows them;
        found here otherwise.

    Returns
    -------
    planner.solve.Circuit
    """
    from .solve import Circuit

    net = net if net is not None else spec.network
    kind = stimulus or st.position.kind.source
    plus, minus = st.position.input
    live, alias = _live(net, st) if live is None else live
    uf = UnionFind()
    for n in live:
        uf.find(n)
    for e in net.elements:
        if e.merges(st.closed) and e.nodes[0] in live:
            uf.union(*e.nodes)

    branches: list[Branch] = []
    diodes: list[tuple[str, str, str]] = []  # (designator, anode, cathode)
    varistors: list[tuple[str, str, str]] = []  # (designator, first node, second node)
    for e in net.elements:
        a, b = e.nodes
        if a not in live or b not in live:
            continue
        if not e.present(st.closed) or e.merges(st.closed):
            continue
        if e.stamp == "junction":
            diodes.append((e.name, a, b))
        elif e.stamp == "varistor":
            varistors.append((e.name, a, b))
        else:
            branches.append(Branch(e.name, e.kind, a, b))

    ground = uf.find(minus)
    top = uf.find(plus)
    held = None
    if kind == "voltage":
        if source_resistance:
            held = "__source__"
            branches.append(Branch("__source__", "source", held, plus))
        else:
            if top == ground:
                raise SolveError(
                    f"{st.name}: the input terminals {plus} and {minus} are shorted in this state "
                    "and the voltage source has no impedance; give the source an impedance")
            held = top
    names = [ground] + ([held] if held is not None else [])
    index_of = {n: names.index(n) for n in names}  # each name's index in names

    def idx(n):
        r = uf.find(n) if n in uf.parent else n
        if r not in index_of:
            index_of[r] = len(names)
            names.append(r)
        return index_of[r]

    lin_a = np.array([idx(br.a) for br in branches], dtype=np.intp)
    lin_b = np.array([idx(br.b) for br in branches], dtype=np.intp)
    # diodes on the same pair of nodes (an antiparallel clamp pair) share one port
    # (and a varistor on the same pair of nodes joins that port)
    port_of: dict[tuple[int, int], int] = {}
    port_a, port_c = [], []

    def port(first, second):
        ia, ic = idx(first), idx(second)
        if (ia, ic) in port_of:
            return port_of[(ia, ic)], 1
        if (ic, ia) in port_of:
            return port_of[(ic, ia)], -1
        port_of[(ia, ic)] = len(port_a)
        port_a.append(ia)
        port_c.append(ic)
        return port_of[(ia, ic)], 1

    diode_port, diode_sign = map(list, zip(*(port(an, ca) for _, an, ca in diodes))) if diodes else ([], [])
    var_port, var_sign = map(list, zip(*(port(x, y) for _, x, y in varistors))) if varistors else ([], [])
    node_index = {n: index_of[uf.find(n)] for n in uf.parent if uf.find(n) in index_of}
    for n, at in alias.items():  # dangling parts carry no current: at their attachment's potential
        if at in node_index:
            node_index[n] = node_index[at]
    inject = idx(plus)
    return Circuit(
        name=st.name,
        node_names=tuple(names),
        node_index=node_index,
        branches=tuple(branches),
        lin_a=lin_a,
        lin_b=lin_b,
        diodes=tuple(d[0] for d in diodes),
        diode_port=np.array(diode_port, dtype=np.intp),
        diode_sign=np.array(diode_sign, dtype=np.intp),
        port_a=np.array(port_a, dtype=np.intp),
        port_c=np.array(port_c, dtype=np.intp),
        source_kind=kind,
        held=1 if held is not None else None,
        inject=inject,
        varistors=tuple(v[0] for v in varistors),
        varistor_port=np.array(var_port, dtype=np.intp),
        varistor_sign=np.array(var_sign, dtype=np.intp),
    )
