"""Checks of trimmers and the simulated calibration (planner.trim), against hand calculations.

The one-range example: a 10 V voltmeter on a 50 uA / 2 kohm movement (coil 2 %, full-scale
current 1 %), E96 resistors of 1 %, 25 ppm/K, no clamps. Its input resistance is
R_in = V / I_fs = 10 V / 50 uA = 200 kohm and the multiplier 198 kohm (handbook formula,
R = V / I_fs - R_m: common practice).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from planner.accuracy import check_project, format_check
from planner.design import build
from planner.project import load
from planner.sizing import size
from planner.trim import DRIFT, END_TOLERANCE, RESOLUTION, TEMPCO, trimmer_value

ONE_RANGE = """\
title: One-range trim example (an invented scenario)
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1, tolerance: 2 %, full_scale_tolerance: 1 %}
ambient: {reference: 23 degC, min: 15 degC, max: 31 degC}
parts:
  resistors: {series: E96, tolerance: 1 %, tempco: 25 ppm/K, power: 0.25 W, max_voltage: 250 V}
voltage: {arrangement: chain, full_scales: [10 V]}
analysis: {trim: TRIM, samples: 200}
"""


@pytest.fixture(scope="module")
def one_range(tmp_path_factory):
    path = tmp_path_factory.mktemp("trim") / "one.yaml"
    path.write_text(ONE_RANGE.replace("TRIM", "true"))
    return load(path)


def test_trimmer_values_are_1_2_5_steps():
    # common trimmer values, 1-2-5 per decade (common practice)
    assert [trimmer_value(x) for x in (0.9, 1.0, 1.1, 4.9, 5.1, 16.7e3, 2.1e5)] == [1, 1, 2, 5, 10, 20e3, 5e5]


def test_one_range_plan_is_a_fixed_part_and_a_trimmer_covering_the_spread(one_range):
    sizing = size(one_range)
    (t,) = sizing.trims
    # hand: the spread to remove is (largest tolerance 2 % + I_fs 1 %) x 200 kohm = 6 kohm either way
    half = (0.02 + 0.01) * 200e3
    assert t.position == "10 V" and t.applied == 10.0 and t.order == 1
    lo, hi = t.range_ohm
    share = t.fixed_ohm + t.setting_ohm  # what the fixed part and the trimmer make at the nominal setting
    assert lo <= share - half and hi >= share + half
    assert t.span_ohm == trimmer_value(t.span_ohm) and t.reach_ohm == pytest.approx(t.span_ohm * (1 - END_TOLERANCE))
    seg = sizing.segment("chain 10 V")
    assert [p.trimmer for p in seg.parts].count(True) == 1
    np.testing.assert_allclose(seg.achieved_ohm, 198e3, rtol=1e-12)  # the nominal setting makes the target
    rv = sizing.network.element(t.part)
    assert rv.trimmer and rv.tolerance == 0.0 and rv.tempco_per_k == TEMPCO


def test_without_the_key_nothing_is_trimmed(tmp_path):
    path = tmp_path / "plain.yaml"
    path.write_text(ONE_RANGE.replace("TRIM", "false"))
    spec = load(path)
    assert size(spec).trims == ()
    assert "trim" not in check_project(build(spec), samples=50)


def test_worst_case_after_trim_is_resolution_plus_drift(one_range):
    design = build(one_range)
    (t,) = design.sizing.trims
    result = check_project(design, samples=200)
    (q,) = result["positions"]
    # Hand calculation. Every corner is calibrated to read 10 V exactly, so what is left is
    # the trimmer: a setting error dR moves the reading of a series voltmeter by
    # dR / (R_in + dR) of full scale (reading = V / (R_in I_fs) x FS), with R_in = 200 kohm
    # at the calibrated setting. Resolution dR = RESOLUTION x span, drift dR = DRIFT x span
    # (planner.trim's stated trimmer figures, "from memory").
    r_in = 10.0 / 50e-6
    hand_res = 100.0 * RESOLUTION * t.span_ohm / (r_in + RESOLUTION * t.span_ohm)
    hand_drift = 100.0 * DRIFT * t.span_ohm / (r_in + DRIFT * t.span_ohm)
    np.testing.assert_allclose(q["trim_resolution_pct"], hand_res, rtol=1e-6)  # solver agreement
    np.testing.assert_allclose(q["trim_drift_pct"], hand_drift, rtol=1e-6)
    # the corners leave nothing but the search tolerance (1e-9 of full scale)
    np.testing.assert_allclose(q["worst_case_after_trim_pct"], hand_res + hand_drift, atol=1e-6)
    # before trimming about 2 %: 1 % parts and 1 % I_fs (the coil's 2 % x 2 kohm is 0.02 % of 200 kohm), first order
    np.testing.assert_allclose(q["worst_case_error_pct"], 1.0 + 1.0 + 2.0 * 2e3 / 200e3, rtol=2e-2)  # first order
    # temperature is not removed by trimming: the budget adds it unchanged
    np.testing.assert_allclose(q["budget_after_trim_pct"], q["worst_case_after_trim_pct"] + q["temperature_error_pct"],
                               rtol=1e-12)
    # hand: temperature change of R_in over 23 -> 15 degC (the larger swing is 8 K): coil
    # 3930 ppm/K x 2 kohm, fixed parts 25 ppm/K, trimmer 100 ppm/K at its setting
    mov = one_range.movement
    fixed = 198e3 - t.setting_ohm
    dr = 8.0 * (mov.tempco_per_k * 2e3 + 25e-6 * fixed + TEMPCO * t.setting_ohm)
    np.testing.assert_allclose(q["temperature_error_pct"], 100.0 * dr / (r_in - dr), rtol=2e-2)  # first order
    assert q["verdict_after_trim"] == "within class" and q["verdict"] == "outside class"
    assert result["requirements_met"]
    (row,) = result["trim"]
    assert {"order", "part", "position", "applied", "range_ohm"} <= set(row)
    assert row["range_ohm"] == [t.fixed_ohm, t.fixed_ohm + t.reach_ohm] and row["short_fraction"] == 0.0
    assert result["calibration"][0].startswith("1. Set the switch to 10 V")


def test_an_explicit_network_gets_no_trimmer(tmp_path):
    text = (Path(__file__).resolve().parent.parent / "projects" / "pocket_voltmeter.yaml").read_text()
    path = tmp_path / "pocket.yaml"
    path.write_text(text.replace("title:", "analysis: {trim: true}\ntitle:", 1))
    result = check_project(build(load(path)), samples=50)
    assert result["trim"] == [] and result["calibration"] == []
    assert all("verdict_after_trim" in q for q in result["positions"])


def test_an_ohmmeter_keeps_its_zero_adjuster_and_gets_the_next_designator(tmp_path):
    """The ohms ranges' zero adjuster is RV1 (a rheostat); the planned trimmer takes the next
    free designator, and the resistance positions (zeroed, not trimmed) keep their verdicts."""
    text = (Path(__file__).resolve().parent.parent / "projects" / "pocket_ohmmeter.yaml").read_text()
    path = tmp_path / "ohms.yaml"
    path.write_text(text.replace("title:", "analysis: {trim: true}\ntitle:", 1))
    design = build(load(path))
    names = [e.name for e in design.net.elements]
    assert len(names) == len(set(names))  # every designator once
    assert design.net.element("RV1").kind == "rheostat"
    assert [t.part for t in design.sizing.trims] == ["RV2"]
    result = check_project(design, samples=20)
    for q in result["positions"]:
        if q["measures"] == "resistance":
            assert "verdict_after_trim" not in q
        else:
            assert q["verdict_after_trim"] in ("within class", "outside class")
    assert "after trimming" in format_check(result)


@pytest.fixture(scope="module")
def bench_trimmed(tmp_path_factory):
    text = (Path(__file__).resolve().parent.parent / "projects" / "bench_multimeter.yaml").read_text()
    path = tmp_path_factory.mktemp("bench") / "bench.yaml"
    path.write_text(text.replace("title:", "analysis: {trim: true}\ntitle:", 1))
    return load(path)


def test_the_first_chain_trimmer_also_covers_the_input_ptc(bench_trimmed):
    """The chain sits behind the input PTC: the half-span of the 500 mV trimmer is the loop's
    stack (t + t_Ifs) V / I_fs plus the PTC's cold-resistance tolerance times its value."""
    spec = bench_trimmed
    sizing = size(spec)
    (t,) = [t for t in sizing.trims if t.segment == "chain 500 mV"]
    ptc = sizing.network.element("RT1").part_row(spec)
    r_in = 0.5 / spec.movement.i_fs_a
    t_all = spec.parts.resistors.tolerance + spec.movement.i_fs_tolerance  # the movement is measured: 0 %
    half = t_all * r_in + ptc["tolerance_pct"] / 100.0 * ptc["value_ohm"]
    assert ptc["tolerance_pct"] > 0  # the example's PTC has a stated tolerance
    share = t.fixed_ohm + t.setting_ohm
    lo, hi = t.range_ohm
    assert lo <= share - half + 1e-9 and hi >= share + half - 1e-9


def test_a_ring_on_a_well_known_movement_gets_no_swamp_trimmer(bench_trimmed):
    """Coil and full-scale current without tolerance (a measured movement) and a ring of four:
    trimming the swamp would trade the ring's spread among the ranges; none is planned."""
    assert bench_trimmed.movement.tolerance == 0.0 and bench_trimmed.movement.i_fs_tolerance == 0.0
    assert [t.segment for t in size(bench_trimmed).trims] == ["chain 500 mV"]


def test_one_current_range_gets_its_swamp_trimmed(tmp_path):
    path = tmp_path / "amm.yaml"
    path.write_text(ONE_RANGE.replace("voltage: {arrangement: chain, full_scales: [10 V]}",
                                      "current: {arrangement: ring, full_scales: [1 mA], swamp: 2 kohm}")
                    .replace("TRIM", "true"))
    sizing = size(load(path))
    assert [(t.segment, t.position) for t in sizing.trims] == [("swamp", "1 mA")]
