"""Tests of planner.protect.candidates: stacks, sites, combos and the network with a clamp placed."""

from __future__ import annotations

from dataclasses import replace

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.project import load
from planner.protect import Combo, SearchContext, Site, Stack, clamp_diodes, place_clamp

from conftest import PROJECTS


def test_stack_orientation_junction_and_breakdown(voltmeter_spec):
    spec = voltmeter_spec
    zener = m.DiodeModel("z", i_s_a=1e-12, n=1.2, r_s_ohm=2.0, bv_v=2.4)
    spec2 = replace(spec, parts=replace(spec.parts, diodes={**spec.parts.diodes, "z": zener}))
    ctx = SearchContext(build(spec2), 0.25, None, 100, None)
    site = Site("movement", "movement", "m_plus")
    cases = {
        # (direction, mode): is the anode at the clamp node?  A forward clamp conducts for a
        # positive clamp node: forward-biased with its anode there, in breakdown with its cathode
        ("forward", "junction"): True,
        ("forward", "breakdown"): False,
        ("reverse", "junction"): False,
        ("reverse", "breakdown"): True,
    }
    for (direction, mode), anode_at_node in cases.items():
        st = Stack("z", 2, mode)
        combo = Combo(site, st if direction == "forward" else None, st if direction == "reverse" else None)
        net, clamp, _, _ = place_clamp(ctx, combo)
        diodes = [net.element(n) for n in clamp]
        assert len(diodes) == 2
        at_node = [d for d in diodes if "m_plus" in (d.anode, d.cathode)]
        assert len(at_node) == 1
        assert (at_node[0].anode == "m_plus") is anode_at_node
        Engine(build(replace(spec2, network=net)))  # a valid network: the stack's middle node joins two diodes
    # a forward zener in breakdown is the same part the same way round as a reverse junction stack
    assert Combo(site, Stack("z", 1, "breakdown"), None).signature() == \
        Combo(site, None, Stack("z", 1, "junction")).signature()


def test_clamp_diodes_of_the_examples():
    spec = load(PROJECTS / "bench_multimeter.yaml")
    net = build(spec).net
    # the movement pair, two four-diode stacks at the first chain tap, a back-to-back TVS pair
    # at each of the two other taps and the ring crowbar's two two-diode stacks
    assert sorted(clamp_diodes(net)) == sorted(e.name for e in net.elements if isinstance(e, m.Diode))
    assert len(clamp_diodes(net)) == 2 + 8 + 2 + 2 + 4
