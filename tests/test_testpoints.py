"""Checks of the test points (planner.testpoints): nodes named by the parts' pins, voltages at full scale."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from planner.design import build
from planner.engine import Engine
from planner.project import load
from planner.testpoints import pin_names, test_points

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def multimeter():
    return build(load(ROOT / "projects" / "bench_multimeter.yaml"))


def test_nodes_named_by_the_pins_on_them(multimeter):
    names = pin_names(multimeter.net)
    assert names["r9_r10"]["name"] == "R9 end toward R10"
    assert names["r9_r10"]["pins"] == ["R9.1", "R10.2"]
    assert names["m_plus"]["name"] == "M1 + terminal"
    assert names["com"]["name"].startswith("input - terminal") and names["com"]["terminal"] == "-"
    assert names["plus"]["terminal"] == "+"
    # every pin of every element appears exactly once
    pins = sorted(p for v in names.values() for p in v["pins"])
    want = sorted(f"{e.name}.{i}" for e in multimeter.net.elements for i in (1, 2))
    assert pins == want


def _below(net, names) -> float:
    """Resistance of the listed resistors in series [ohm] (they form one string: checked)."""
    els = [net.element(n) for n in names]
    for lower, upper in zip(els, els[1:]):
        assert upper.b == lower.a  # each part's lower end is the next one's upper end
    return sum(e.value_ohm for e in els)


#: The chain from the movement's + terminal up to the node between R9 and R10 (the sized
#: bench multimeter: 500 mV, 2.5 V and the first parts of the 10 V segment).
BELOW_R9_R10 = [f"R{k}" for k in range(1, 10)]


def test_voltage_at_full_scale_against_a_hand_calculation(multimeter):
    rows = {r["node"]: r for r in test_points(Engine(multimeter), multimeter.net)}
    at = {v["position"]: v["voltage_v"] for v in rows["r9_r10"]["voltages"]}
    # Hand (Ohm's law): on every range at or above 10 V the chain carries I_fs = 50 uA; below
    # r9_r10 lie R1 to R9 and the coil (2 kohm): V = I_fs (R1 + ... + R9 + R_m).
    mov = multimeter.spec.movement
    hand = mov.i_fs_a * (_below(multimeter.net, BELOW_R9_R10) + mov.r_coil_ohm)
    np.testing.assert_allclose(hand, 8.06, rtol=1e-3)  # 50 uA x 161.2 kohm, by hand from the parts list
    np.testing.assert_allclose(at["10 V"], hand, rtol=1e-3)  # clamp leakage
    # on the 250 V range the node lies on the same string: the same voltage
    np.testing.assert_allclose(at["250 V"], hand, rtol=1e-3)
    # the movement's + terminal: I_fs x R_m = 50 uA x 2 kohm = 100 mV on a voltage range
    m = {v["position"]: v["voltage_v"] for v in rows["m_plus"]["voltages"]}
    np.testing.assert_allclose(m["10 V"], 0.1, rtol=1e-3)  # clamp leakage


def test_check_and_size_json_carry_the_test_points():
    from planner.accuracy import check_project
    from planner.sizing import size, sizing_json

    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    rows = check_project(build(spec), samples=20)["test_points"]
    assert {r["node"] for r in rows} == {n for e in build(spec).net.elements for n in e.nodes}
    t1 = next(r for r in rows if r["node"] == "t1")
    assert t1["name"] == "R1 end toward R2"
    # hand: on the 0.5 V range t1 is the input itself (S1 closed): 0.5 V
    np.testing.assert_allclose({v["position"]: v["voltage_v"] for v in t1["voltages"]}["0.5 V"], 0.5, rtol=1e-9)
    sized = load(ROOT / "projects" / "bench_multimeter.yaml")
    sizing = size(sized)
    tp = {r["node"]: r for r in sizing_json(sizing, sized)["test_points"]}
    # the linear estimate (diodes out): I_fs (R1 + ... + R9 + R_m), as by hand above
    mov = sized.movement
    hand = mov.i_fs_a * (_below(sizing.network, BELOW_R9_R10) + mov.r_coil_ohm)
    np.testing.assert_allclose({v["position"]: v["voltage_v"] for v in tp["r9_r10"]["voltages"]}["50 V"], hand,
                               rtol=1e-5)  # the E96 values carry a little less than I_fs (nominal error)


def test_a_battery_is_probed_at_its_terminals():
    """The ohmmeter's cells: each node on a battery pin is named by the battery's + or - terminal
    (written [plus, minus], as the movement); every pin of every element still named once."""
    net = build(load(ROOT / "projects" / "pocket_ohmmeter.yaml")).net
    names = pin_names(net)
    for b in (e for e in net.elements if e.kind == "battery"):
        assert names[b.a]["name"].endswith(f"{b.name} + terminal")
        assert names[b.b]["name"].endswith("- terminal")  # this cell's or its neighbour's on the same node
    pins = sorted(p for v in names.values() for p in v["pins"])
    assert pins == sorted(f"{e.name}.{i}" for e in net.elements for i in (1, 2))
