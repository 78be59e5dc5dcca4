"""Checks of the range-switch graph (planner.network): graph, switch states, validation.

Trade facts used: a make-before-break switch closes the new contact before it opens
the old one, so between two positions both sets of contacts are closed; a
break-before-make switch opens first, so only the contacts the two positions share
stay closed (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from conftest import make_spec
from planner import network as nw
from planner.design import build
from planner.engine import Engine
from planner.errors import PlannerError, ProjectError
from planner.model import Contact, Diode, DiodeModel, MovementElement, Position, Resistor

PATH = "meter.yaml"


def voltmeter_elements():
    """A two-range voltmeter with a contact both positions share (a common-lead wafer).

    Lines are the (invented) project-file lines of each element.
    """
    return [
        MovementElement("M1", "m_plus", "m_minus", line=10),
        Resistor("R1", "t1", "m_plus", 9.5e3, line=11),
        Resistor("R2", "t2", "t1", 90e3, line=12),
        Contact("S1", "plus", "t1", ("10 V",), line=13),
        Contact("S2", "plus", "t2", ("100 V",), line=14),
        Contact("SC", "m_minus", "com", ("10 V", "100 V"), line=15),
    ]


def voltmeter_positions():
    return [
        Position("10 V", "voltage", 10.0, ("plus", "com"), line=20),
        Position("100 V", "voltage", 100.0, ("plus", "com"), line=21),
    ]


def spec_of(elements, positions=None):
    return make_spec(elements, positions or voltmeter_positions(), path=PATH)


# --- graph and states -----------------------------------------------------------------------


def test_graph_keys_every_element(voltmeter_spec):
    g = nw.graph(voltmeter_spec.network)
    keys = {k for _, _, k in g.edges(keys=True)}
    assert keys == {e.name for e in voltmeter_spec.network.elements}
    # the clamp pair and the coil are three parallel edges between the same two nodes
    assert g.number_of_edges("m_plus", "com") == 3
    for a, b, k, data in g.edges(keys=True, data=True):
        assert data["element"].name == k
        assert {a, b} == set(data["element"].nodes)


def test_position_states_close_their_contacts(voltmeter_spec):
    states = nw.position_states(voltmeter_spec.network)
    assert [s.name for s in states] == ["0.5 V", "2.5 V", "10 V", "50 V", "250 V"]
    assert [sorted(s.closed) for s in states] == [["S1"], ["S2"], ["S3"], ["S4"], ["S5"]]
    assert all(s.kind == nw.POSITION for s in states)


def test_transition_states_union_and_intersection():
    # make-before-break: union of both positions' contacts; break-before-make: intersection
    net = spec_of(voltmeter_elements()).network
    mbb, bbm = nw.transition_states(net)
    assert mbb.kind == nw.MAKE_BEFORE_BREAK and bbm.kind == nw.BREAK_BEFORE_MAKE
    assert mbb.closed == {"S1", "S2", "SC"}
    assert bbm.closed == {"SC"}
    # the stimulus of the position being left applies; the target is the next position
    assert mbb.position.name == "10 V" and mbb.target.name == "100 V"
    assert mbb.name == "10 V -> 100 V (make-before-break)"
    assert bbm.name == "10 V -> 100 V (break-before-make)"


def test_transitions_of_example(voltmeter_spec, ammeter_spec):
    for spec in (voltmeter_spec, ammeter_spec):
        net = spec.network
        trans = nw.transition_states(net)
        assert len(trans) == 2 * (len(net.positions) - 1)
        for p, q, mbb, bbm in zip(net.positions, net.positions[1:], trans[0::2], trans[1::2]):
            cp, cq = nw.closed_contacts(net, p.name), nw.closed_contacts(net, q.name)
            assert mbb.closed == cp | cq
            assert bbm.closed == cp & cq


def test_state_by_name_and_unknown_name(voltmeter_spec):
    net = voltmeter_spec.network
    assert nw.state(net, "10 V").closed == {"S3"}
    assert nw.state(net, "10 V -> 50 V (make-before-break)").closed == {"S3", "S4"}
    with pytest.raises(PlannerError) as err:
        nw.state(net, "10V")
    assert "10 V" in err.value.one_line()  # the nearest name is offered


# --- validation: each error names the element and its line ----------------------------------


def test_valid_network_passes():
    nw.validate(spec_of(voltmeter_elements()))


def test_floating_node_misspelt():
    elements = voltmeter_elements()
    elements[2] = Resistor("R2", "t2", "t11", 90e3, line=12)  # misspelt 't1'
    with pytest.raises(ProjectError) as err:
        nw.validate(spec_of(elements))
    msg = err.value.one_line()
    assert "'t11'" in msg and "R2" in msg
    assert "t1" in msg.split("'t11'", 1)[1]  # a suggestion follows
    assert msg.startswith(f"{PATH}:12:")  # the element's line


def test_position_served_by_no_contact():
    positions = voltmeter_positions() + [Position("1000 V", "voltage", 1000.0, ("plus", "com"), line=22)]
    with pytest.raises(ProjectError) as err:
        nw.validate(spec_of(voltmeter_elements(), positions))
    msg = err.value.one_line()
    assert "'1000 V'" in msg and "contact" in msg
    assert msg.startswith(f"{PATH}:22:")


def test_no_path_between_inputs():
    # position "1000 V" reaches a dead-end pair of resistors, never com
    elements = voltmeter_elements() + [
        Contact("S3", "plus", "x", ("1000 V",), line=16),
        Resistor("R3", "x", "y", 1e6, line=17),
        Resistor("R4", "y", "x", 1e6, line=18),
    ]
    positions = voltmeter_positions() + [Position("1000 V", "voltage", 1000.0, ("plus", "com"), line=22)]
    with pytest.raises(ProjectError) as err:
        nw.validate(spec_of(elements, positions))
    msg = err.value.one_line()
    assert "'1000 V'" in msg and "no path" in msg
    assert msg.startswith(f"{PATH}:22:")


def test_movement_not_in_path():
    # position "short" joins the inputs straight through a resistor that bypasses the movement
    elements = voltmeter_elements() + [
        Contact("S3", "plus", "z", ("short",), line=16),
        Resistor("R3", "z", "com", 1e3, line=17),
    ]
    positions = voltmeter_positions() + [Position("short", "voltage", 1.0, ("plus", "com"), line=23)]
    with pytest.raises(ProjectError) as err:
        nw.validate(spec_of(elements, positions))
    msg = err.value.one_line()
    assert "'short'" in msg and "M1" in msg and "deflect" in msg
    assert msg.startswith(f"{PATH}:23:")


def test_no_movement_element():
    elements = [e for e in voltmeter_elements() if e.name != "M1"] + [Resistor("RM", "m_plus", "m_minus", 500.0)]
    with pytest.raises(ProjectError) as err:
        nw.validate(spec_of(elements))
    assert "movement" in err.value.one_line()


def test_island_named():
    elements = voltmeter_elements() + [
        Resistor("R8", "p", "q", 1e3, line=30),
        Resistor("R9", "q", "p", 1e3, line=31),
    ]
    with pytest.raises(ProjectError) as err:
        nw.validate(spec_of(elements))
    msg = err.value.one_line()
    assert "R8" in msg and "R9" in msg
    assert msg.startswith(f"{PATH}:30:")


# --- states through the solver --------------------------------------------------------------


def test_zero_ohm_contacts_merge_nodes(voltmeter):
    # make-before-break 0.5 V -> 2.5 V closes S1 and S2: plus, t1 and t2 become one node
    name = "0.5 V -> 2.5 V (make-before-break)"
    circuit = nw.compile_state(voltmeter.spec, voltmeter.state(name), net=voltmeter.net)
    idx = circuit.node_index
    assert idx["plus"] == idx["t1"] == idx["t2"]
    # R2 (t2 - t1) is shorted and carries nothing; the meter reads as on 0.5 V (R1 only)
    v = np.array([0.1, 0.5, 0.55])
    op = voltmeter.operate(name, v)
    assert np.all(op.element("R2").current_a == 0.0)
    np.testing.assert_allclose(op.movement_current_a, voltmeter.operate("0.5 V", v).movement_current_a,
                               rtol=1e-13)  # the same circuit, to rounding


def test_break_before_make_leaves_movement_dead(voltmeter):
    # no contact closed: the input is open and the movement carries nothing
    op = voltmeter.operate("0.5 V -> 2.5 V (break-before-make)", [-250.0, 10.0, 250.0])
    assert np.all(op.movement_current_a == 0.0)


def test_shared_contact_carries_current_in_transition():
    # the common-lead contact SC stays closed in break-before-make: with the multiplier
    # contacts open the movement still carries nothing (no path from plus)
    eng = Engine(build(spec_of(voltmeter_elements())))
    assert np.all(eng.operate("10 V -> 100 V (break-before-make)", [10.0]).movement_current_a == 0.0)
    # make-before-break bypasses R2: the 100 V stimulus drives the 10 V multiplier
    op = eng.operate("10 V -> 100 V (make-before-break)", [100.0])
    np.testing.assert_allclose(op.movement_current_a[0], [100.0 / 10e3], rtol=1e-12)  # Ohm's law, 9.5 k + 500 ohm


def test_antiparallel_clamp_pair(build_spec):
    # both diodes of a clamp pair are solved; their currents flow in opposite senses
    d = DiodeModel("si", 5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9)
    elements = [
        MovementElement("M1", "m", "com"),
        Resistor("R1", "plus", "m", 10e3),
        Diode("D1", "m", "com", "si"),
        Diode("D2", "com", "m", "si"),
    ]
    eng = Engine(build(build_spec(elements, [Position("P", "voltage", 1.0, ("plus", "com"))], diodes=[d])))
    op = eng.operate("P", [-100.0, 100.0])
    i1, i2 = op.element("D1").current_a[0], op.element("D2").current_a[0]
    assert i1[1] > 1e-3 and i2[0] > 1e-3  # the forward one carries the fault current
    assert -1e-6 < i1[0] < 0 and -1e-6 < i2[1] < 0  # the reverse one leaks


def _carrying_by_networkx(g, plus, minus):
    """The current-carrying block and the dangling nodes by networkx's biconnected components (the reference)."""
    import networkx as nx

    h = nx.Graph()
    h.add_edges_from((a, b) for a, b in g.edges() if a != b)
    h.add_edge(plus, minus)
    main = {plus, minus}
    for block in nx.biconnected_component_edges(h):
        if (plus, minus) in block or (minus, plus) in block:
            main = {n for edge in block for n in edge}
            break
    rest = nx.Graph(h)
    rest.remove_edges_from([(a, b) for a, b in h.edges() if a in main and b in main])
    alias = {}
    for comp in nx.connected_components(rest):
        anchors = comp & main
        if len(anchors) == 1:
            (at,) = anchors
            alias.update({n: at for n in comp if n not in main})
    return main, alias


def test_current_carrying_block_against_networkx():
    """The block that holds the source edge and where the rest hangs, against networkx.

    Random multigraphs (parallel edges, self-loops, pendant trees, separate islands, the
    input terminals joined or not) of 3 to 14 nodes; networkx's biconnected components
    (Hopcroft and Tarjan, as networkx implements them) are the reference.
    """
    import networkx as nx

    rng = np.random.default_rng(11)
    for _ in range(400):
        n = int(rng.integers(3, 15))
        g = nx.MultiGraph()
        g.add_nodes_from(range(n))
        for _ in range(int(rng.integers(1, 3 * n))):
            a, b = (int(x) for x in rng.integers(0, n, 2))
            g.add_edge(a, b)
        plus, minus = 0, int(rng.integers(1, n))
        assert nw._current_carrying(g, plus, minus) == _carrying_by_networkx(g, plus, minus)


def test_current_carrying_from_element_pairs_against_networkx():
    """:func:`planner.network.compile_state` finds the current-carrying block from the present
    elements' node pairs, without a graph; networkx's biconnected components of the state's
    graph (:func:`planner.network.active_graph`) are the reference, for every position and
    transition state of the examples with an explicit network and of the sized flagship."""
    from pathlib import Path

    from planner.project import load
    from planner.sizing import sized_spec

    root = Path(__file__).resolve().parent.parent / "projects"
    states = 0
    for name in ("bench_ammeter", "pocket_voltmeter", "worn_multimeter", "bench_multimeter"):
        spec = sized_spec(load(root / f"{name}.yaml"))
        net = spec.network
        for st in nw.position_states(net) + nw.transition_states(net):
            plus, minus = st.position.input
            pairs = [e.nodes for e in net.elements if e.present(st.closed)]
            assert nw._carrying(pairs, plus, minus) == _carrying_by_networkx(nw.active_graph(net, st), plus, minus)
            states += 1
    assert states > 20


def test_live_part_holds_every_node_of_the_compiled_state():
    """:func:`planner.network.live_part` is what :func:`planner.network.compile_state` reads: the
    compiled circuit names no other node, every element between two live nodes is in it, and
    it is kept per topology (the same objects for the same network and state)."""
    from pathlib import Path

    from planner.project import load
    from planner.sizing import sized_spec

    spec = sized_spec(load(Path(__file__).resolve().parent.parent / "projects" / "bench_multimeter.yaml"))
    net = spec.network
    for st in nw.position_states(net) + nw.transition_states(net):
        live, alias = nw.live_part(net, st)
        assert nw.live_part(net, st)[0] is live
        c = nw.compile_state(spec, st, net=net)
        assert set(c.node_index) <= live | alias.keys()
        assert all(alias[n] in live for n in alias)
        inside = {e.name for e in net.elements if e.nodes[0] in live and e.nodes[1] in live
                  and e.present(st.closed) and not e.merges(st.closed)}
        assert inside == {br.element for br in c.branches} | set(c.diodes) | set(c.varistors)


def test_networks_found_valid_without_networkx_pass_validate():
    """:func:`planner.network._passes` (node pairs, no networkx) never passes a network that
    :func:`planner.network.validate` rejects: the examples' networks, and copies with one element
    taken out or one contact closed nowhere (floating nodes, islands, open paths, a position
    served by no contact), each judged both ways."""
    from dataclasses import replace
    from pathlib import Path

    from planner.model import Contact
    from planner.project import load
    from planner.sizing import sized_spec

    root = Path(__file__).resolve().parent.parent / "projects"
    seen = {True: 0, False: 0}
    for name in ("bench_ammeter", "pocket_voltmeter", "worn_multimeter", "bench_multimeter"):
        spec = sized_spec(load(root / f"{name}.yaml"))
        net = spec.network
        assert nw._passes(net)
        variants = [replace(net, elements=net.elements[:k] + net.elements[k + 1:]) for k in range(len(net.elements))]
        variants += [replace(net, elements=tuple(replace(e, closed_in=()) if e is c else e for e in net.elements))
                     for c in net.elements if isinstance(c, Contact)]
        for other in variants:
            try:
                nw.validate(spec, other)
                valid = True
            except ProjectError:
                valid = False
            passes = nw._passes(other)
            assert valid or not passes
            seen[passes] += 1
    assert seen[True] >= 10 and seen[False] >= 100  # both kinds met
