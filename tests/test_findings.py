"""Tests of planner.findings: ratings at full scale, the derating policy, a fuse below a range's full scale."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from planner import model as m
from planner import sizing as sz
from planner.accuracy import check_project
from planner.design import build
from planner.errors import ProjectError
from planner.findings import design_findings, sizing_findings
from planner.project import loads
from stress_circuits import movement, res

#: A fuse rated 500 mA (an invented catalogue part).
F500 = m.FuseModel("f500", r_cold_ohm=0.2, rated_current_a=0.5, breaking_capacity_a=35.0, i2t_a2s=0.1,
                   max_voltage_v=250.0)


def _shunt_meter(r_shunt_power_w: float, fuse: m.FuseModel | None = None, full_scale=1.0):
    """A 100 uA, 1 kohm movement with one shunt for ``full_scale`` amps, optionally a fuse in the input lead."""
    i_fs, r_m = 100e-6, 1e3
    r_sh = r_m * i_fs / (full_scale - i_fs)  # shunt formula R = R_m I_fs / (I - I_fs), common practice
    els = [m.MovementElement("M1", "f", "com"), res("RSH", "f", "com", r_sh, power=r_shunt_power_w)]
    fuses, inp = {}, "f"
    if fuse is not None:
        els.append(m.Fuse("F1", "a", "f", fuse.name))
        fuses, inp = {fuse.name: fuse}, "a"
    pos = (m.Position("1 A", "current", full_scale, (inp, "com")),)
    spec = m.Spec("shunt meter", movement(i_fs, r_m), m.Parts(fuses=fuses), network=m.NetworkSpec(tuple(els), pos))
    return spec, r_sh


def test_a_fuse_rated_below_a_range_full_scale_is_found():
    # a 500 mA fuse in the input lead of a 1 A range carries 1 A at full scale (Kirchhoff): it opens
    # in normal use (IEC 60127-1, rated current)
    spec, _ = _shunt_meter(1.0, F500)
    found = design_findings(build(spec))
    (f,) = [f for f in found if f["code"] == "fuse below full scale"]
    assert f["part"] == "F1" and f["position"] == "1 A" and f["severity"] == "error"
    np.testing.assert_allclose(f["value"], 1.0, rtol=1e-12)
    np.testing.assert_allclose(f["share"], 2.0, rtol=1e-12)
    # check carries them in its JSON
    assert any(x["code"] == "fuse below full scale" for x in check_project(build(spec), samples=20)["findings"])


@pytest.mark.parametrize("power, code", [(1.0, None), (0.15, "above derating"), (0.08, "above rating at full scale")])
def test_shunt_power_at_full_scale_against_rating_and_derating(power, code):
    # Joule's law: the shunt carries I_sh = 1 A - I_fs at full scale, P = I_sh^2 R_sh = 0.09999 W;
    # common practice derates to 50 % of the power rating
    spec, r_sh = _shunt_meter(power)
    p_hand = (1.0 - 100e-6) ** 2 * r_sh
    found = [f for f in design_findings(build(spec)) if f["part"] == "RSH" and f["quantity"] == "power"]
    if code is None:
        assert found == []  # 10 % of 1 W
        return
    (f,) = found
    assert f["code"] == code
    np.testing.assert_allclose(f["value"], p_hand, rtol=1e-9)
    np.testing.assert_allclose(f["share"], p_hand / power, rtol=1e-9)
    assert f["allowed_share"] == 0.5


def test_derating_policy_is_the_project_s():
    spec, _ = _shunt_meter(0.15)
    loose = replace(spec, parts=replace(spec.parts, resistors=m.ResistorParts(derating_power=0.8)))
    assert not [f for f in design_findings(build(loose)) if f["part"] == "RSH"]  # 67 % of 0.15 W, under 80 %


TEXT = """title: derating test
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
parts:
  resistors: {power: 0.25 W, derating: {power: 60 %, voltage: 90 %}}
  fuses:
    f500: {cold_resistance: 0.2 ohm, rated_current: 500 mA, breaking_capacity: 35 A, i2t: 0.1 A^2*s}
current: {arrangement: ring, full_scales: [10 mA, 1 A], fuse: f500}
"""


def test_derating_key_and_the_sizer_s_findings():
    spec = loads(TEXT, "t.yaml")
    assert (spec.parts.resistors.derating_power, spec.parts.resistors.derating_voltage) == (0.6, 0.9)
    found = sizing_findings(spec, sz.size(spec))
    (f,) = [f for f in found if f["code"] == "fuse below full scale"]
    assert f["part"] == "F1" and f["position"] == "1 A"
    np.testing.assert_allclose([f["value"], f["rating"]], [1.0, 0.5], rtol=0)
    with pytest.raises(ProjectError, match="derating.power is 0 %"):
        loads(TEXT.replace("power: 60 %", "power: 0 %"), "t.yaml")
