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


def test_voltage_at_full_scale_against_a_hand_calculation(multimeter):
    rows = {r["node"]: r for r in test_points(Engine(multimeter), multimeter.net)}
    at = {v["position"]: v["voltage_v"] for v in rows["r9_r10"]["voltages"]}
    # Hand: at 50 V full scale the chain carries I_fs = 50 uA; below r9_r10 lie R9 and R8
    # (2 x 200 kohm), the 10 V, 2.5 V and 500 mV segments (150 + 40 + 6 kohm), the clamp tap
    # (2 kohm) and the coil (2 kohm): 600 kohm, so 50 uA x 600 kohm = 30 V (Ohm's law).
    np.testing.assert_allclose(at["50 V"], 30.0, rtol=1e-3)  # clamp leakage and E96 rounding
    # on the 250 V range the node lies on the same string: the same 30 V
    np.testing.assert_allclose(at["250 V"], 30.0, rtol=1e-3)
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
    tp = {r["node"]: r for r in sizing_json(size(sized), sized)["test_points"]}
    # the linear estimate (diodes out): 50 uA x 600 kohm = 30 V, as by hand above
    np.testing.assert_allclose({v["position"]: v["voltage_v"] for v in tp["r9_r10"]["voltages"]}["50 V"], 30.0,
                               rtol=1e-9)
