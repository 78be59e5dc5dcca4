"""Switch states judged once for the designs of one project that hold them alike (planner/faults/shared.py).

The decisive check: on the flagship and two of its protection combinations, every
state's tally taken from the memo is the tally of the state judged on its own design,
and the memo does answer states (a voltage position is the same circuit whether or not
the ring carries a crowbar and the mA positions a fuse).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from planner.design import build
from planner.faults import matrix_states
from planner.faults.shared import SharedStates, tally_record
from planner.faults.families import stimuli_for
from planner.project import load

from test_sizing_protection import FLAGSHIP


@pytest.fixture(scope="module")
def flagship():
    spec = load(FLAGSHIP)
    return spec, build(spec)


def _combo(spec, **parts):
    given = spec.protection
    return build(replace(spec, protection=replace(given, **parts)))


def _signature(shared, design, name):
    st = design.state(name)
    return shared.signature(design, st, tuple(stimuli_for(design.spec, design.net, st.position)))


def test_tally_record_keeps_what_a_tally_reads():
    case = {"verdict": "overstress", "accepted": False, "deciding": {"ratio": 3.5, "part": "R1"}, "style": None,
            "stresses": [{"ratio": 3.5}], "position": "1 V"}
    assert tally_record(case) == {"verdict": "overstress", "accepted": False, "deciding": {"ratio": 3.5},
                                  "style": None}
    assert tally_record(dict(case, deciding=None))["deciding"] is None


def test_shared_states_give_each_design_the_tally_it_would_judge(flagship):
    spec, given = flagship
    designs = [given, _combo(spec, ring_crowbar=None, ma_fuse=None), _combo(spec, input_ptc=None)]
    shared = SharedStates(spec)
    for design in designs:
        memo = {name: cases for name, cases, _, _ in matrix_states(design, shared=shared)}
        alone = {name: [tally_record(c) for c in cases] for name, cases, _, _ in matrix_states(design)}
        assert list(memo) == list(alone)
        for name in alone:
            assert repr(memo[name]) == repr(alone[name]), name  # exact: verdicts and ratios to the last bit
    # the voltage positions of the PTC-only combination are the project's own: they come from the memo
    assert shared.reused >= 6 and shared.asked == 3 * len(alone)


def test_a_part_outside_the_state_does_not_enter_its_signature(flagship):
    spec, given = flagship
    shared = SharedStates(spec)
    lone_ptc = _combo(spec, ring_crowbar=None, ma_fuse=None)
    # the crowbar and the mA fuse hang on the ring, switched out on the voltage positions
    assert _signature(shared, given, "10 V") == _signature(shared, lone_ptc, "10 V")
    # on a mA position they carry the current: another circuit
    assert _signature(shared, given, "10 mA") != _signature(shared, lone_ptc, "10 mA")
    # a chain resistor's value is read
    chain = given.net.elements
    r = next(e for e in chain if e.kind == "resistor" and e.name == "R4")
    other = given.variant(replace(given.net, elements=tuple(replace(e, value_ohm=e.value_ohm * 1.01) if e is r else e
                                                              for e in chain)))
    assert _signature(shared, other, "10 V") != _signature(shared, given, "10 V")


def test_designs_of_another_project_are_not_shared(flagship):
    spec, given = flagship
    shared = SharedStates(spec)
    other = replace(spec, title="another project")  # any field but the protection parts
    assert not shared.holds(build(other))
    assert _signature(shared, build(other), "10 V") is None
    assert shared.holds(_combo(spec, input_ptc=None))
    # a state with no signature is judged each time
    judged = []

    def judge():
        judged.append(1)
        return [{"verdict": "ok", "accepted": False, "deciding": None}]

    assert shared.tally(None, judge) == [{"verdict": "ok", "accepted": False, "deciding": None, "style": None}]
    shared.tally(None, judge)
    assert len(judged) == 2 and shared.reused == 0 and shared.asked == 2


def test_a_reading_is_kept_by_its_key():
    shared = SharedStates(None)
    calls = []

    def solve():
        calls.append(1)
        return 0.5

    assert shared.reading(("k", 1.0), solve) == 0.5 and shared.reading(("k", 1.0), solve) == 0.5
    assert shared.reading(None, solve) == 0.5
    assert len(calls) == 2  # the kept key once, the unkept one each time
