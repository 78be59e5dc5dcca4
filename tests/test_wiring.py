"""Checks of the switch wiring (planner.wiring): every contact on one pole, no pole closed twice.

Trade facts used (common practice): a rotary wafer switch has 12 fixed terminals per face
at 30 degree indexing and poles on both faces of a wafer, so a face carries 12 // n poles
of an n-position switch; a pole's rotor blade joins its common terminal to one fixed
terminal per position; a shorting blade bridges two terminals while it passes
(make-before-break), a non-shorting one touches neither (break-before-make).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from planner import network as nw
from planner.design import build
from planner.model import Contact, MovementElement, NetworkSpec, Position, Resistor
from planner.project import load
from planner.wiring import (NON_SHORTING, SHORTING, WAYS, choose_style, problems, wire_switch,
                            wiring_json)

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((ROOT / "projects").glob("*.yaml"))
STYLES = (None, nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE)


def _independent_check(net: NetworkSpec, wiring) -> None:
    """Every contact exactly once and no pole with two contacts closed in one position."""
    contacts = {e.name: e for e in net.elements if e.stamp == "switch"}
    seen: dict[str, tuple] = {}
    for pole in wiring.poles:
        ident = (pole.deck, pole.face, pole.pole)
        per_position: dict[str, set] = {}
        for t in pole.contacts:
            assert seen.setdefault(t.contact, ident) == ident, f"{t.contact} on two poles"
            per_position.setdefault(t.position, set()).add(t.contact)
            e = contacts[t.contact]
            assert {pole.common, t.node} == set(e.nodes)
            assert t.position in e.closed_in
            assert 1 <= t.terminal <= wiring.ways
        assert all(len(v) == 1 for v in per_position.values()), per_position
        terminals = [t.terminal for t in pole.contacts]
        assert len(terminals) == len(set(terminals))
    assert set(seen) == set(contacts)
    for name, e in contacts.items():  # wired in every position that closes it
        got = sorted(t.position for p in wiring.poles for t in p.contacts if t.contact == name)
        assert got == sorted(e.closed_in)
    # poles of one deck share one blade kind, and a deck holds at most 2 faces of 12 // n poles
    for d in range(1, wiring.decks + 1):
        poles = wiring.deck_poles(d)
        assert poles and len({p.blade for p in poles}) == 1
        assert len(poles) <= 2 * wiring.poles_per_face


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
@pytest.mark.parametrize("style", STYLES, ids=["undecided", "mbb", "bbm"])
def test_every_example_wired_once_and_never_closed_twice(path, style):
    net = build(load(path)).net
    w = wire_switch(net, style)
    _independent_check(net, w)
    assert problems(net, w) == []
    assert w.exact


def _physical(wiring, p: int, q: int) -> set:
    """Contacts a rotor passing from position index p to q closes, pole by pole."""
    out = set()
    names = wiring.positions
    for pole in wiring.poles:
        for t in pole.contacts:
            if pole.blade == SHORTING and t.position in (names[p], names[q]):
                out.add(t.contact)
    return out


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_transitions_are_those_the_faults_analysis_solves(path):
    """Make-before-break: the union of both positions' contacts, exactly
    (planner.network.transition_states). Break-before-make: every contact the model keeps
    closed stays closed; the only extra ones are shorting-blade contacts at the end of a run."""
    net = build(load(path)).net
    states = {(s.position.name, s.kind): s for s in nw.transition_states(net)}
    mbb = wire_switch(net, nw.MAKE_BEFORE_BREAK)
    bbm = wire_switch(net, nw.BREAK_BEFORE_MAKE)
    for i in range(len(net.positions) - 1):
        name = net.positions[i].name
        assert _physical(mbb, i, i + 1) == set(states[(name, nw.MAKE_BEFORE_BREAK)].closed)
        model = set(states[(name, nw.BREAK_BEFORE_MAKE)].closed)
        got = _physical(bbm, i, i + 1)
        assert model <= got
        runs = {c for p in bbm.poles if p.blade == SHORTING for c in p.members}
        assert got - model <= runs


# --- a chain of six ranges and a ring of four, against a hand assignment ---------------------

VOLTS = ("0.5 V", "2.5 V", "10 V", "50 V", "250 V", "1 kV")
AMPS = ("1 mA", "10 mA", "100 mA", "1 A")


def chain_and_ring(fused: bool) -> NetworkSpec:
    """Six chain taps v1..v6 and four ring taps t1..t4 on one input; the ring's 1 mA end joins
    the movement (through the swamp) on the current positions only. ``fused``: the current
    taps are fed from the far side of an input fuse (node a_fused), as the sizer lays it out."""
    feed = "a_fused" if fused else "plus"
    elements = [MovementElement("M1", "m_plus", "com"), Resistor("R1", "v1", "m_plus", 8e3)]
    elements += [Resistor(f"RV{k}", f"v{k + 1}", f"v{k}", 1e4 * (k + 1)) for k in range(1, 6)]
    elements += [Resistor(f"RA{k}", f"t{k}", f"t{k + 1}", 10.0 ** (3 - k)) for k in range(1, 4)]
    elements += [Resistor("RA4", "t4", "com", 0.1), Resistor("RS", "m_in", "m_plus", 6e3)]
    if fused:
        elements.append(Resistor("F1", "plus", "a_fused", 0.08))
    elements += [Contact(f"S{k}", "plus", f"v{k}", (v,)) for k, v in enumerate(VOLTS, start=1)]
    elements += [Contact(f"S{6 + k}", feed, f"t{k}", (a,)) for k, a in enumerate(AMPS, start=1)]
    elements.append(Contact("S11", "t1", "m_in", AMPS))
    positions = [Position(v, "voltage", 1.0, ("plus", "com")) for v in VOLTS]
    positions += [Position(a, "current", 1e-3, ("plus", "com")) for a in AMPS]
    return NetworkSpec(tuple(elements), tuple(positions))


#: Hand assignment (10 positions: one pole per face of a 12-way wafer, two faces a deck).
#: Unfused, make-before-break: pole A (common plus) takes the six chain taps and the four
#: ring taps (ten positions, one closed in each), pole B (common t1) the ring link: one deck.
#: Break-before-make: the ring link closes in four adjacent positions and must stay made
#: between them, so it needs a shorting blade, on a deck of its own: two decks.
#: Fused: the ring taps hang on a_fused, not plus: poles A (plus, chain), A' (a_fused, ring),
#: B (ring link): two decks either way (A and A' on one deck; B on the second).
HAND_DECKS = {(False, nw.MAKE_BEFORE_BREAK): 1, (False, nw.BREAK_BEFORE_MAKE): 2,
              (True, nw.MAKE_BEFORE_BREAK): 2, (True, nw.BREAK_BEFORE_MAKE): 2}


@pytest.mark.parametrize("fused,style", sorted(HAND_DECKS), ids=lambda v: str(v))
def test_chain_of_six_and_ring_of_four_no_more_decks_than_by_hand(fused, style):
    net = chain_and_ring(fused)
    w = wire_switch(net, style)
    _independent_check(net, w)
    assert w.decks <= HAND_DECKS[(fused, style)]
    assert len(w.poles) == (3 if fused else 2)


#: Hand assignment of the sized, protected bench multimeter (chain of six behind the input PTC,
#: ring of four with the mA fuse before the three mA taps and the ring crowbar's link; docs/builder.md):
#: A (p_ptc: S1-S6), B (a_ma: the mA taps S7-S9), C (a_fused: the 1 A tap S10), D (t1: the ring
#: link S11, four current positions), E (the crowbar link S12, the three mA positions). B and E
#: share a_ma but close together; C, D and E share no node with another pole's contacts: five
#: poles, one a face: three decks. Break-before-make: D and E shorting (one deck), A, B, C
#: non-shorting (two decks): three.
HAND_DECKS_PROTECTED = {nw.MAKE_BEFORE_BREAK: 3, nw.BREAK_BEFORE_MAKE: 3}


def test_sized_bench_multimeter_is_a_chain_of_six_and_a_ring_of_four():
    net = build(load(ROOT / "projects" / "bench_multimeter.yaml")).net
    assert len(net.positions) == 10
    for style in (nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE):
        w = wire_switch(net, style)
        _independent_check(net, w)
        assert w.decks <= HAND_DECKS_PROTECTED[style]
        assert len(w.poles) == 5  # A to E above: no pole can be saved


def test_ring_of_four_alone_is_one_pole():
    """A four-range ammeter (four taps off the fused lead): one pole; 12 // 4 = 3 poles a face."""
    net = build(load(ROOT / "projects" / "bench_ammeter.yaml")).net
    w = wire_switch(net, nw.BREAK_BEFORE_MAKE)
    assert (len(w.poles), w.decks, w.poles_per_face) == (1, 1, 3)
    assert w.poles[0].common == "fused" and w.poles[0].blade == NON_SHORTING
    assert [t.terminal for t in w.poles[0].contacts] == [1, 2, 3, 4]


def test_second_pole_of_a_face_starts_a_third_of_the_way_round():
    """Three 4-position poles on a 12-way face use terminals 1-4, 5-8 and 9-12 (common practice)."""
    pos = [Position(f"P{k}", "voltage", 1.0, ("plus", "com")) for k in range(4)]
    els = [MovementElement("M1", "m", "com")]
    els += [Contact(f"S{j}{k}", f"c{j}", f"n{j}{k}", (f"P{k}",)) for j in range(3) for k in range(4)]
    w = wire_switch(NetworkSpec(tuple(els), tuple(pos)), nw.MAKE_BEFORE_BREAK)
    assert w.decks == 1 and len(w.poles) == 3
    assert sorted(t.terminal for p in w.poles for t in p.contacts) == list(range(1, WAYS + 1))


def test_exact_search_beats_the_busiest_node_first():
    """Contacts X (a-b, P0) and Y (a-c, P0) conflict on node a; U (b-d, P1) and V (c-e, P1).
    Greedy on the busiest node a splits X and Y onto two poles, then U and V need two more
    unless they join them: the fewest is two poles (b: X+U, c: Y+V), found by the search."""
    pos = [Position(f"P{k}", "voltage", 1.0, ("plus", "com")) for k in range(2)]
    els = (MovementElement("M1", "m", "com"), Contact("X", "a", "b", ("P0",)), Contact("Y", "a", "c", ("P0",)),
           Contact("U", "b", "d", ("P1",)), Contact("V", "c", "e", ("P1",)))
    w = wire_switch(NetworkSpec(els, tuple(pos)), nw.MAKE_BEFORE_BREAK)
    assert len(w.poles) == 2 and w.exact
    assert {frozenset(p.members) for p in w.poles} == {frozenset("XU"), frozenset("YV")}


def test_either_style_takes_the_fewer_decks_and_json_carries_the_contract_fields():
    net = chain_and_ring(False)
    w = wire_switch(net, "either")
    assert (w.style, w.decks) == (nw.MAKE_BEFORE_BREAK, 1)
    j = wiring_json(w)
    for pole in j["poles"]:
        assert {"deck", "pole", "common", "contacts"} <= set(pole)
        assert all({"position", "node"} <= set(c) for c in pole["contacts"])
    assert choose_style(None, "break_before_make") == ("break_before_make", "faults")
    assert choose_style("make_before_break", "break_before_make") == ("make_before_break", "declared")


def test_size_json_carries_the_switch(capsys, monkeypatch):
    """planner size --json: switch.poles[] (deck, pole, common, contacts[] with position and node)."""
    import json

    from planner.cli import main

    monkeypatch.chdir(ROOT)
    main(["size", "projects/bench_multimeter.yaml", "--json"])
    switch = json.loads(capsys.readouterr().out)["switch"]
    net = build(load(ROOT / "projects" / "bench_multimeter.yaml")).net
    contacts = {e.name: e for e in net.elements if e.stamp == "switch"}
    seen = set()
    for pole in switch["poles"]:
        per_position = [c["position"] for c in pole["contacts"]]
        assert len(per_position) == len(set(per_position))  # never two closed in one position
        for c in pole["contacts"]:
            assert {pole["common"], c["node"]} == set(contacts[c["contact"]].nodes)
            seen.add(c["contact"])
    assert seen == set(contacts) and switch["decks"] == HAND_DECKS_PROTECTED[nw.MAKE_BEFORE_BREAK]
