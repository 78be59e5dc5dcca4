"""The sizer's protection section (planner/sizing/sections/protection.py) on the flagship example.

Checked against hand computations: the multiplier chain formula (segment k =
(V_k - V_(k-1)) / I_fs, the first less R_m; *Lessons in Electric Circuits*, Vol. I, ch. 8)
with the input PTC's cold resistance taken off the first segment; a fuse's pre-arcing time
t = I2t / I^2 (IEC 60127-1 definitions); the short-time overload of IEC 60115-1 (from
memory: 6.25 x the rated power for up to 5 s) against the maker's pulse energy.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from planner import model as m
from planner.design import build
from planner.errors import ProjectError
from planner.parts.fuse import pre_arcing_time_s
from planner.project import load, loads
from planner.sizing.ratings import equivalent_power_w

ROOT = Path(__file__).resolve().parents[1]
FLAGSHIP = ROOT / "projects" / "bench_multimeter.yaml"


@pytest.fixture(scope="module")
def flagship():
    spec = load(FLAGSHIP)
    return spec, build(spec).net


def test_input_ptc_feeds_the_voltage_positions_and_comes_off_the_first_segment(flagship):
    spec, net = flagship
    rt = net.element("RT1")
    assert rt.kind == "ptc" and (rt.a, rt.b) == ("plus", "p_ptc")
    volts = [p.name for p in net.positions if p.measures == "voltage"]
    for e in net.elements:
        if e.kind == "contact" and set(e.closed_in) <= set(volts):
            assert e.a == "p_ptc"
    # 500 mV node: 0.5 V / 50 uA - R_m = 8 kohm above the movement, less the PTC's 1 kohm cold
    # resistance: the chain from m_plus to v1 sums to 7 kohm
    chain = [e for e in net.elements if isinstance(e, m.Resistor) and e.group in ("tap 1", "chain 500 mV")]
    np.testing.assert_allclose(sum(e.value_ohm for e in chain), 0.5 / 50e-6 - 2e3 - 1e3, rtol=2e-3)  # E96 values
    # the clamp 100 ohm below the node: the 'chain 500 mV' segment is 100 ohm, a 1 W pulse-rated part
    (r,) = [e for e in chain if e.group == "chain 500 mV"]
    assert r.value_ohm == 100.0 and r.power_w == 1.0


def test_ma_fuse_and_crowbar_serve_the_ma_ranges_only(flagship):
    spec, net = flagship
    f2 = net.element("F2")
    assert (f2.a, f2.b) == ("a_fused", "a_ma")
    by_pos = {}
    for e in net.elements:
        if e.kind == "contact":
            for p in e.closed_in:
                by_pos.setdefault(p, set()).add((e.a, e.b))
    for p in ("1 mA", "10 mA", "100 mA"):
        assert ("a_ma", "crowbar") in by_pos[p]  # the crowbar's pole
        assert any(a == "a_ma" for a, b in by_pos[p] if b != "crowbar")
    assert ("a_ma", "crowbar") not in by_pos["1 A"] and ("a_ma", "crowbar") not in by_pos["500 mV"]
    crowbar = [e for e in net.elements if e.kind == "diode" and "crowbar" in (e.anode, e.cathode)]
    assert len(crowbar) == 2 and all(e.model == "si_6a" for e in crowbar)


def test_second_fuse_time_to_open_at_two_currents_by_hand():
    fm = load(FLAGSHIP).parts.fuses["ma_315"]
    # t = I2t / I^2 with I2t = 0.05 A^2 s: 1 A -> 50 ms, 5 A -> 2 ms
    np.testing.assert_allclose(pre_arcing_time_s(fm, 1.0), 0.050, rtol=1e-12)
    np.testing.assert_allclose(pre_arcing_time_s(fm, 5.0), 0.002, rtol=1e-12)


def test_pulse_rating_until_the_protection_acts():
    ladder = [(0.25, 250.0), (1.0, 500.0), (2.0, 750.0)]
    pulses = [0.010, 2.0, 0.050]
    # 83 W for 10 ms = 0.83 J: 0.25 W stands 6.25 x 0.25 W x 10 ms = 15.6 mJ (or its 10 mJ pulse),
    # the 1 W wirewound its 2 J pulse: the 1 W rating
    assert equivalent_power_w(83.0, 0.010, ladder, pulses) == 1.0
    # 1 W for 1 ms = 1 mJ: within the 0.25 W part's 10 mJ pulse
    assert equivalent_power_w(1.0, 1e-3, ladder, pulses) == 0.25
    # 1 kW for 1 s = 1 kJ: no rating carries it: the power itself (the sizer falls back)
    assert equivalent_power_w(1e3, 1.0, ladder, pulses) == 1e3


def test_protection_needs_what_it_guards():
    text = FLAGSHIP.read_text(encoding="utf-8")
    with pytest.raises(ProjectError, match="behind the current ranges' fuse"):
        build(loads(text.replace("  fuse: ceramic_1A6\n", ""), "x.yaml"))
    with pytest.raises(ProjectError, match="not defined in parts.ptcs"):
        loads(text.replace("input_ptc: ptc_meter", "input_ptc: ptc_other"), "x.yaml")
    with pytest.raises(ProjectError, match="lies on a range's node"):
        build(loads(text.replace("above_movement: 46.9 kohm", "above_movement: 47 kohm"), "x.yaml"))


def test_bidirectional_clamp_is_back_to_back_pairs(flagship):
    spec, net = flagship
    tvs = [e for e in net.elements if e.kind == "diode" and e.model == "tvs_6v8"]
    assert len(tvs) == 2
    (mid,) = {e.anode for e in tvs}  # anode to anode
    assert {e.cathode for e in tvs} == {"tap2", "com"} and mid.startswith("clamp")
