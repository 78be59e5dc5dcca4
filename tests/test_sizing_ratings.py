"""Tests of planner.sizing.ratings: the linear estimate's compiled cases, kept per network.

:class:`LinearNetwork` compiles each (shorted nodes, position) case once and solves it again
for every input value. The reference is the uncached solve: each rating case on a fresh
network, one case per instance. A cache that handed back another case's circuit (another
position, other nodes shorted) would change the voltages.
"""

from __future__ import annotations

import numpy as np

from planner.project import load
from planner.sizing import SECTIONS, lay_out, size
from planner.sizing.ratings import LinearNetwork, impulse_cases, rating_cases

from test_sizing_protection import FLAGSHIP


def _flagship_cases():
    """The sized flagship, its network and every rating and impulse case as (position, value, shorted)."""
    spec = load(FLAGSHIP)
    layout = lay_out(spec, SECTIONS)
    net = size(spec).network
    cases = [(pos, value, shorted) for _, pos, value, shorted, _ in rating_cases(spec, layout)]
    cases += [(pos, value, shorted) for _, pos, value, shorted in impulse_cases(spec, layout)]
    return spec, net, cases


def test_cached_cases_solve_as_fresh_networks():
    spec, net, cases = _flagship_cases()
    shared = LinearNetwork(spec, net)
    assert len({(p.name, s) for p, _, s in cases}) > 10  # several positions and shorted nodes share one instance
    assert any(s for _, _, s in cases)
    for pos, value, shorted in cases + cases[::-1]:  # each case twice, in both orders
        got = shared.solve(pos, value, shorted)
        fresh = LinearNetwork(spec, net)
        want = fresh.solve(pos, value, shorted)
        assert (got is None) == (want is None)
        if want is not None:
            assert got == want  # the same circuit solved: bit for bit
            assert shared.last_input_v == fresh.last_input_v


def test_full_scale_voltage_across_the_movement():
    """At full scale on a voltage position the movement carries its full-scale current (Ohm's law:
    V = I_fs R_m, within the sizer's allowed share of the class; the linear estimate leaves the
    diodes out)."""
    spec = load(FLAGSHIP)
    layout = lay_out(spec, SECTIONS)
    net = size(spec).network
    lin = LinearNetwork(spec, net)
    m = spec.movement
    allowed = spec.analysis.allowed_share * m.class_index / 100.0
    for _, pos, value, shorted, fs in rating_cases(spec, layout):
        if fs and pos.measures == "voltage":
            dv = lin.solve(pos, value, shorted)
            # tolerance: the allowed share of the class (the values are E96 parts), relative
            np.testing.assert_allclose(abs(dv["M1"]), m.i_fs_a * m.r_coil_ohm, rtol=allowed)
            np.testing.assert_allclose(lin.last_input_v, value, rtol=1e-12)  # an ideal source: the input itself


def test_cases_solved_ahead_as_one_by_one():
    """:meth:`LinearNetwork.solve_ahead` solves the values of one circuit as the columns of one stimulus;
    the answers are those of each value solved alone (the reference: a fresh instance, one solve a case)."""
    spec, net, cases = _flagship_cases()
    ahead = LinearNetwork(spec, net)
    ahead.solve_ahead(cases)
    assert len({(p.name, s) for p, _, s in cases}) < len(cases)  # circuits solved at several values
    for pos, value, shorted in cases:
        got = ahead.solve(pos, value, shorted)
        fresh = LinearNetwork(spec, net)
        want = fresh.solve(pos, value, shorted)
        assert (got is None) == (want is None)
        if want is not None:
            assert got.keys() == want.keys()
            # tolerance: the same equations, a column of a multi-column solve against a one-column one
            np.testing.assert_allclose([got[k] for k in want], [want[k] for k in want], rtol=1e-12, atol=1e-15)
            np.testing.assert_allclose(ahead.last_input_v, fresh.last_input_v, rtol=1e-12, atol=1e-15)


def test_stresses_shared_by_networks_that_differ_in_their_diodes():
    """Two clamp requests that differ only in their diode models and counts size the same linear network,
    so they share one Stress; each caller gets its own copy, equal to the one computed afresh."""
    from dataclasses import replace

    from planner.model import ClampRequest
    from planner.sizing.ratings import _STRESSES, _stresses, stresses
    from planner.sizing.sizer import size as size_fresh

    spec = load(FLAGSHIP)
    models = list(spec.parts.diodes)
    specs = [replace(spec, clamps=(ClampRequest(at="movement", forward=m, reverse=m, count=1),
                                   ClampRequest(at=4120.0, forward=m, reverse=None, count=n)))
             for m, n in ((models[0], 1), (models[1], 3))]
    nets = [size_fresh(s).network for s in specs]
    assert nets[0] != nets[1]  # other diodes
    layout = lay_out(specs[0], SECTIONS)
    rows = [[(e.name, e.value_ohm, e.nodes[0], e.nodes[1])] for e in nets[0].elements if e.kind == "resistor"]
    _STRESSES.clear()
    first = stresses(specs[0], layout, nets[0], rows)
    again = stresses(specs[1], lay_out(specs[1], SECTIONS), nets[1], rows)
    assert len(_STRESSES) == 1
    assert again == first and again is not first
    again.v.clear()
    assert stresses(specs[0], layout, nets[0], rows) == _stresses(specs[0], layout, nets[0], rows, True)


def _worst_one_by_one(rows, values, seg_parts):
    """The reference reduction: each case added in turn (docs/sizing.md, section 4).

    Per part the worst |V| (times the case's crest) and P = V^2 / R (or the pulse's equivalent
    power); per segment the worst |sum of its series units' V| and the worst sum of its parts'
    powers, the first case that reaches it named.
    """
    from planner.sizing.ratings import Stress

    st = Stress(seg_v=[0.0] * len(seg_parts), seg_p=[0.0] * len(seg_parts), seg_v_fs=[0.0] * len(seg_parts),
                seg_p_fs=[0.0] * len(seg_parts), seg_case=[""] * len(seg_parts))
    for dv, fs, powers, crest, label in rows:
        for name, r in values.items():
            vv = abs(dv.get(name, 0.0))
            pp = vv * vv / r if powers is None else powers.get(name, vv * vv / r)
            vv *= crest
            st.v[name] = max(st.v.get(name, 0.0), vv)
            st.p[name] = max(st.p.get(name, 0.0), pp)
            if fs:
                st.v_fs[name] = max(st.v_fs.get(name, 0.0), vv)
                st.p_fs[name] = max(st.p_fs.get(name, 0.0), pp)
        for j, parts in enumerate(seg_parts):
            units = {}
            for name, val, a, b in parts:
                units.setdefault((a, b), dv.get(name, 0.0))
            sv = abs(sum(units.values())) * crest
            sp = sum(dv.get(name, 0.0) ** 2 / val if powers is None else
                     powers.get(name, dv.get(name, 0.0) ** 2 / val) for name, val, _, _ in parts)
            if sp > st.seg_p[j]:
                st.seg_p[j], st.seg_case[j] = sp, label
            st.seg_v[j] = max(st.seg_v[j], sv)
            if fs:
                st.seg_v_fs[j] = max(st.seg_v_fs[j], sv)
                st.seg_p_fs[j] = max(st.seg_p_fs[j], sp)
    return st


def test_worst_over_all_cases_at_once_as_one_by_one():
    """The rows reduced at once give, bit for bit, what adding the cases one by one gives: the same
    products, the same sums in the same order, the first worst case named (ties included)."""
    from planner.sizing.ratings import Stress, _Tally

    rng = np.random.default_rng(7)
    names = [f"R{k}" for k in range(1, 13)] + ["M1"]
    values = {n: float(v) for n, v in zip(names[:-1], 10.0 ** rng.uniform(0, 6, 12))}
    values["R13"] = 1e3  # a resistor no row holds: no voltage across it
    seg_parts = [[("R1", values["R1"], "a", "b"), ("R2", values["R2"], "b", "c"), ("R3", values["R3"], "b", "c")],
                 [("R4", values["R4"], "c", "d")],
                 [(n, values[n], f"n{k}", f"n{k + 1}") for k, n in enumerate(names[4:12])] +
                 [("R13", 1e3, "x", "y")]]
    rows = []
    for k in range(40):
        row = rng.normal(0.0, 10.0 ** rng.uniform(-3, 3), len(names))
        if k % 7 == 3:
            row = rows[k - 1][0].copy()  # a tie: the first of equal cases is named
        if k == 5:
            row[4:12] = -103382.13303590062  # the worst, and x ** 2 != x * x in the last place: the powers as summed
        powers = None
        if k % 5 == 1:
            powers = {n: float(x) for n, x in zip(values, rng.uniform(0, 2, len(values)))}
        elif k % 5 == 2:
            powers = {n: 0.0 for n in values}  # an impulse: no heating
        rows.append((row, k % 3 == 0, powers, float(np.sqrt(2.0)) if k % 4 == 0 else 1.0, f"case {k}"))
    tally = _Tally(names, values, seg_parts)
    for row in rows:
        tally.add(*row)
    got = Stress(seg_v=[0.0] * 3, seg_p=[0.0] * 3, seg_v_fs=[0.0] * 3, seg_p_fs=[0.0] * 3, seg_case=[""] * 3)
    tally.into(got)
    want = _worst_one_by_one([(dict(zip(names, r.tolist())), *rest) for r, *rest in rows], values, seg_parts)
    assert got == want  # bit for bit, the dictionaries in the same order
    assert list(got.v) == list(values)
    assert len(set(got.seg_case)) > 1 and all(got.seg_case)


def test_compiled_cases_shared_by_networks_that_differ_in_values():
    """A network with other values (every resistor 7 % higher) reuses the compiled cases of the first,
    and solves as it does with nothing kept (the reference: each case compiled afresh); a contact
    closed in other positions is another shape."""
    from dataclasses import replace

    from planner.model import Contact, NetworkSpec, Resistor
    from planner.sizing.ratings import _CASES, _SOLVED

    spec, net, cases = _flagship_cases()
    other = NetworkSpec(tuple(replace(e, value_ohm=e.value_ohm * 1.07) if isinstance(e, Resistor) else e
                              for e in net.elements), net.positions, net.contact_style)
    _CASES.clear()
    _SOLVED.clear()  # no case solved before: each is compiled
    first = LinearNetwork(spec, net)
    first.solve_ahead(cases)
    kept = len(_CASES)
    assert kept == len({(p.name, s) for p, _, s in cases})
    shared = LinearNetwork(spec, other)
    assert shared._shape() == first._shape()
    got = [shared.solve(p, v, s) for p, v, s in cases]
    assert len(_CASES) == kept  # nothing compiled again
    want = []
    for p, v, s in cases:
        _CASES.clear()
        _SOLVED.clear()
        want.append(LinearNetwork(spec, other).solve(p, v, s))
    assert got == want  # bit for bit
    assert got != [first.solve(p, v, s) for p, v, s in cases]  # the values did change the voltages
    contacts = [e for e in net.elements if isinstance(e, Contact)]
    moved = replace(contacts[0], closed_in=tuple(p.name for p in net.positions))
    third = NetworkSpec(tuple(moved if e is contacts[0] else e for e in net.elements), net.positions)
    assert LinearNetwork(spec, third)._shape() != first._shape()


def test_value_choices_kept_as_made():
    """A kept value choice is the one :func:`planner.sizing.values.split_choice` makes; a target of
    another number type is another entry."""
    from planner.sizing.sizer import _CHOICES, _choice
    from planner.sizing.values import split_choice

    _CHOICES.clear()
    for target, k in ((4120.0, 1), (9.0e6, 3), (0.51, 1)):
        got = _choice("E96", target, k, 1e-3)
        assert got == split_choice("E96", target, k, 1e-3)
        assert _choice("E96", target, k, 1e-3) is got
    n = len(_CHOICES)
    _choice("E96", np.float64(4120.0), 1, 1e-3)
    assert len(_CHOICES) == n + 1


def test_solved_cases_shared_by_networks_that_hold_them_alike():
    """A network with a part changed off some positions' circuits (the mA fuse's resistance: it is on
    the mA positions alone) reads the voltage positions' cases from the first network's solves and
    solves the rest; every answer is what a fresh network solves with nothing kept, bit for bit."""
    from dataclasses import replace

    from planner.model import NetworkSpec
    from planner.sizing.ratings import _CASES, _SOLVED

    spec, net, cases = _flagship_cases()
    fuse = next(e for e in net.elements if e.name == "F2")
    parts = replace(spec.parts, fuses=dict(spec.parts.fuses, other_315=replace(spec.parts.fuses[fuse.model],
                                                                                  r_cold_ohm=3.0)))
    spec2 = replace(spec, parts=parts)  # another catalogue: nothing shared with the first spec
    other = NetworkSpec(tuple(replace(e, model="other_315") if e is fuse else e for e in net.elements),
                        net.positions, net.contact_style)
    _SOLVED.clear()
    lin = LinearNetwork(spec2, net)
    lin.solve_ahead(cases)
    first = len(_SOLVED)
    # one solve per position and shorted nodes, kept where the shorts join live nodes (:meth:`_live`)
    keyed = {(p.name, s) for p, v, s in cases if lin._live(s, p.name) is not None}
    assert first == len(keyed) > 0.5 * len({(p.name, s) for p, v, s in cases})
    second = LinearNetwork(spec2, other)
    second.solve_ahead(cases)
    got = [second.solve(p, v, s) for p, v, s in cases]
    # only the cases whose circuit holds the fuse (the mA positions') were solved again
    holds = {p.name for p in net.positions if set(fuse.nodes) <= lin._live((), p.name)[0]}
    assert holds == {"1 mA", "10 mA", "100 mA"}
    assert len(_SOLVED) - first == len({k for k in keyed if k[0] in holds})
    _CASES.clear()
    _SOLVED.clear()
    fresh = LinearNetwork(spec2, other)  # nothing kept
    fresh.solve_ahead(cases)
    assert repr(got) == repr([fresh.solve(p, v, s) for p, v, s in cases])  # bit for bit
    # the same network under another spec's catalogue is not read from the memo
    _SOLVED.clear()
    LinearNetwork(spec2, net).solve_ahead(cases)
    LinearNetwork(spec, net).solve_ahead(cases)
    assert len(_SOLVED) == 2 * first


def test_live_parts_shared_by_networks_that_differ_in_values():
    """A case's live part is a matter of topology: a network with other values takes the first network's
    (the same objects, none found again), and they are those planner.network.live_part finds afresh."""
    from dataclasses import replace

    from planner import network as nw
    from planner.model import NetworkSpec, Resistor
    from planner.sizing.ratings import _LIVES

    spec, net, cases = _flagship_cases()
    other = NetworkSpec(tuple(replace(e, value_ohm=e.value_ohm * 1.07) if isinstance(e, Resistor) else e
                              for e in net.elements), net.positions, net.contact_style)
    _LIVES.clear()
    first = LinearNetwork(spec, net)
    lives = {(p.name, s): first._live(s, p.name) for p, _, s in cases}
    kept = len(_LIVES)
    assert kept >= len(net.positions)
    shared = LinearNetwork(spec, other)
    assert all(shared._live(s, p.name) is lives[(p.name, s)] for p, _, s in cases)
    assert len(_LIVES) == kept  # none found again
    def afresh(shorted, name):
        case_net = shared._net(shorted)
        p = case_net.position(name)
        return nw.live_part(case_net, nw.SwitchState(p.name, nw.POSITION, p, nw.closed_contacts(case_net, p.name)),
                            keep=False)

    for (name, shorted), live in lives.items():
        # a case whose shorts stay inside the block takes its open position's live part
        assert live == (afresh((), name) if live is first._open[name] else afresh(shorted, name))
