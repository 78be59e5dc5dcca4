"""Tests of planner.project: YAML project files to Spec, and line-accurate errors."""

from __future__ import annotations

import math
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from conftest import bad_file_header
from planner import model
from planner.errors import ProjectError
from planner.project import MAX_FILE_BYTES, load, loads

BAD = Path(__file__).parent / "bad"
BAD_FILES = sorted(BAD.glob("*.yaml"))

FULL = textwrap.dedent("""\
    title: Harbour Lane school lab meter   # an invented workshop
    revision: B
    date: 2024-03-18
    movement:
      full_scale_current: 50 uA
      coil_resistance: 2 kohm
      class: 1.5
      tolerance: 1 %
      full_scale_tolerance: 5000 ppm
      tempco: 3930 ppm/K
      overload: {peg: 1.5, short_time: 10, continuous: 1.2}
    ambient: {reference: 73.4 degF, min: -10 degC, max: 318.15 K}
    parts:
      resistors:
        series: E48
        tolerance: 0.5 %
        tempco: 50 ppm/K
        power: 0.25 W
        max_voltage: 250 V
        distribution: normal
        ratings: [{power: 0.25 W, max_voltage: 250 V}, {power: 0.6 W, max_voltage: 350 V}]
      diodes:
        si_generic: &si {saturation_current: 5 nA, emission: 1.9, series_resistance: 0.5 ohm,
                         leakage_resistance: 1 Gohm, max_current: 1 A, max_power: 1 W}
        si_warm:
          <<: *si
          temperature: 50 degC
          saturation_current_spread: 50 %
        zener_5v1: {saturation_current: 1 pA, breakdown_voltage: 5.1 V, breakdown_current: 5 mA,
                    band_gap: 1.11 eV, xti: 3, surge_current: 2 A}
      fuses:
        f_100ma: {cold_resistance: 1.8 ohm, rated_current: 100 mA, breaking_capacity: 1.5 kA,
                  i2t: 0.02 A2s, curve: [[200 mA, 10 s], [1 A, 10 ms]], max_voltage: 600 V}
    voltage:
      arrangement: chain
      full_scales: [0.5 V, 2.5 V, 10 V, 50 V, 250 V]
    current:
      arrangement: ring
      full_scales: [100 uA, 1 mA, 10 mA, 100 mA]
      ring_on_voltage: across
      swamp: 500 ohm
    clamps:
      - {across: movement, forward: si_generic, reverse: si_generic}
      - {at: {above_movement: 10 kohm}, forward: si_warm, count: 2}
    faults:
      sources:
        - {name: wall outlet, voltage: 230 V, waveform: sine, impedance: 0.5 ohm}
        - {name: reversed battery, voltage: -12 V, current_limit: 5 A}
        - {name: bench supply, current: 3 A}
      max_input: 600 V
      category: cat iii 300 V
      accept:
        - {position: 0.5 V, stimulus: wall outlet, reason: fused in the test lead}
    network:
      contact_style: break_before_make
      elements:
        - {name: R1, kind: resistor, between: [vin, t1], value: 9.8 kohm}
        - {name: R2, kind: resistor, between: [t1, t2], value: 40 kohm, tolerance: 0.1 %, tempco: 25 ppm/K,
           power: 0.5 W, max_voltage: 350 V, series: E192, target: 40.02 kohm, group: "chain 2.5 V", trimmer: true}
        - {name: M1, kind: movement, between: [t2, com]}
        - {name: D1, kind: diode, anode: t2, cathode: com, model: zener_5v1}
        - {name: S1, kind: contact, between: [vin, t1], closed_in: ["0.5 V"], resistance: 20 mohm}
        - {name: F1, kind: fuse, between: [vin, com], model: f_100ma}
      positions:
        - {name: "0.5 V", measures: voltage, full_scale: 0.5 V, input: [vin, com]}
        - {name: "2.5 V", measures: voltage, full_scale: 2.5 V, input: [vin, com]}
        - {name: 100 uA, measures: current, full_scale: 100 uA, input: [vin, com]}
    analysis: {samples: 500, seed: 7, allowed_share: 20 %}
    """)


def _line(needle: str, text: str = FULL) -> int:
    """1-based line of the first line of ``text`` that contains ``needle`` (counted independently)."""
    return next(i for i, ln in enumerate(text.splitlines(), 1) if needle in ln)


@pytest.fixture(scope="module")
def full() -> model.Spec:
    return loads(FULL, "full.yaml")


def test_movement_in_si(full):
    mv = full.movement
    # 50 uA = 50e-6 A, 2 kohm = 2000 ohm: SI prefixes (SI Brochure, 9th ed., table 7); exact
    assert mv.i_fs_a == 50e-6
    assert mv.r_coil_ohm == 2000.0
    assert mv.class_index == 1.5
    assert mv.tolerance == 0.01
    assert mv.i_fs_tolerance == 0.005  # 5000 ppm = 5000e-6
    assert mv.tempco_per_k == model.COPPER_TEMPCO_PER_K  # 3930 ppm/K, IEC 60028 copper
    assert mv.overload == model.Overload(peg=1.5, short_time=10.0, continuous=1.2)


def test_ambient_in_kelvin(full):
    # T/K = (t/degF + 459.67) * 5/9 and t/degC + 273.15 (NIST SP 811, B.9); exact decimals
    assert full.ambient == model.Ambient(t_ref_k=296.15, t_min_k=263.15, t_max_k=318.15)


def test_parts(full):
    r = full.parts.resistors
    assert (r.series, r.tolerance, r.tempco_per_k, r.power_w, r.max_voltage_v, r.distribution) == (
        "E48",
        0.005,
        50e-6,
        0.25,
        250.0,
        "normal",
    )
    assert r.power_ratings_w == (0.25, 0.6)
    assert r.max_voltages_v == (250.0, 350.0)

    si = full.parts.diodes["si_generic"]
    assert (si.i_s_a, si.n, si.r_s_ohm, si.r_p_ohm, si.max_current_a, si.max_power_w) == (5e-9, 1.9, 0.5, 1e9, 1.0, 1.0)
    assert si.t_nom_k is None and si.bv_v is None and si.surge_current_a == math.inf
    warm = full.parts.diodes["si_warm"]  # a YAML merge key copies si_generic
    assert warm.i_s_a == 5e-9 and warm.n == 1.9 and warm.name == "si_warm"
    assert warm.t_nom_k == 323.15 and warm.i_s_spread == 0.5
    z = full.parts.diodes["zener_5v1"]
    assert (z.i_s_a, z.bv_v, z.ibv_a, z.eg_ev, z.xti, z.surge_current_a) == (1e-12, 5.1, 5e-3, 1.11, 3.0, 2.0)
    assert z.n == 1.0 and z.r_p_ohm == math.inf  # defaults

    f = full.parts.fuses["f_100ma"]
    assert (f.r_cold_ohm, f.rated_current_a, f.breaking_capacity_a, f.i2t_a2s, f.max_voltage_v) == (
        1.8,
        0.1,
        1500.0,
        0.02,
        600.0,
    )
    assert f.curve == ((0.2, 10.0), (1.0, 0.01))


def test_ranges_and_clamps(full):
    lines = FULL.splitlines()
    assert full.voltage == model.VoltageRanges("chain", (0.5, 2.5, 10.0, 50.0, 250.0), line=lines.index("voltage:") + 1)
    assert full.current == model.CurrentRanges(
        "ring", (1e-4, 1e-3, 1e-2, 0.1), "across", 500.0, line=lines.index("current:") + 1
    )
    assert full.clamps == (
        model.ClampRequest(
            at="movement", forward="si_generic", reverse="si_generic", count=1, line=_line("{across: movement")
        ),
        model.ClampRequest(at=10e3, forward="si_warm", reverse=None, count=2, line=_line("{at: {above")),
    )


def test_faults(full):
    fs = full.faults
    assert fs.sources[0] == model.FaultSource(
        "wall outlet", "voltage", 230.0, "sine", 0.5, None, line=_line("{name: wall outlet")
    )
    assert fs.sources[1] == model.FaultSource(
        "reversed battery", "voltage", -12.0, "dc", 0.0, 5.0, line=_line("{name: reversed")
    )
    assert fs.sources[2].kind == "current" and fs.sources[2].value == 3.0
    assert fs.max_input_v == 600.0
    assert fs.category == "CAT III 300 V"
    assert fs.accept == (
        model.Acceptance("0.5 V", "wall outlet", "fused in the test lead", line=_line("{position: 0.5 V")),
    )


def test_network(full):
    net = full.network
    assert net.contact_style == "break_before_make"
    r1 = net.element("R1")
    # missing tolerance/tempco/power/max_voltage come from parts.resistors
    assert r1 == model.Resistor(
        "R1",
        "vin",
        "t1",
        9800.0,
        tolerance=0.005,
        tempco_per_k=50e-6,
        power_w=0.25,
        max_voltage_v=250.0,
        distribution="normal",
        line=_line("{name: R1,"),
    )
    r2 = net.element("R2")
    assert (r2.value_ohm, r2.tolerance, r2.tempco_per_k, r2.power_w, r2.max_voltage_v, r2.series) == (
        40e3,
        0.001,
        25e-6,
        0.5,
        350.0,
        "E192",
    )
    assert (r2.target_ohm, r2.group, r2.trimmer) == (40.02e3, "chain 2.5 V", True)
    assert (r1.target_ohm, r1.group, r1.trimmer, r1.series) == (None, None, False, None)
    assert net.element("M1") == model.MovementElement("M1", "t2", "com", line=_line("{name: M1,"))
    assert net.element("D1") == model.Diode("D1", "t2", "com", "zener_5v1", line=_line("{name: D1,"))
    assert net.element("S1") == model.Contact("S1", "vin", "t1", ("0.5 V",), 0.02, line=_line("{name: S1,"))
    assert net.element("F1") == model.Fuse("F1", "vin", "com", "f_100ma", line=_line("{name: F1,"))
    assert [p.name for p in net.positions] == ["0.5 V", "2.5 V", "100 uA"]
    assert net.position("100 uA") == model.Position(
        "100 uA", "current", 1e-4, ("vin", "com"), line=_line("{name: 100 uA")
    )


def test_header_and_analysis(full):
    assert full.title == "Harbour Lane school lab meter"
    assert full.revision == "B"
    assert full.date == "2024-03-18"
    assert full.analysis == model.Analysis(samples=500, seed=7, allowed_share=0.2)
    assert full.path == "full.yaml"
    assert full.text == FULL


MINIMAL = textwrap.dedent("""\
    title: Minimal
    movement: {full_scale_current: 1 mA, coil_resistance: 500 ohm, class: 2.5}
    voltage: {arrangement: separate, full_scales: [1 V, 10 V, 100 V, 1000 V]}
    """)


def test_defaults():
    s = loads(MINIMAL)
    assert s.path == "<string>"
    assert s.movement.tempco_per_k == model.COPPER_TEMPCO_PER_K
    assert s.movement.overload == model.Overload()
    assert s.movement.tolerance == 0.0 and s.movement.i_fs_tolerance == 0.0
    assert s.ambient == model.Ambient()
    assert s.parts == model.Parts()
    assert s.current is None and s.network is None and s.clamps == ()
    assert s.faults == model.Faults()
    assert s.analysis == model.Analysis()
    assert s.revision is None and s.date is None
    # Lessons in Electric Circuits, Vol. I, ch. 8 "Voltmeter design": 1 mA, 500 ohm, 1/10/100/1000 V
    assert s.voltage.full_scales == (1.0, 10.0, 100.0, 1000.0)


def test_current_only_and_network_only_are_enough():
    loads(
        "title: A\nmovement: {full_scale_current: 1 mA, coil_resistance: 50 ohm, class: 1}\n"
        "current: {arrangement: separate, full_scales: [2 mA, 10 mA]}\n"
    )
    s = loads(
        "title: B\nmovement: {full_scale_current: 1 mA, coil_resistance: 50 ohm, class: 1}\n"
        "network:\n  elements: [{name: M, kind: movement, between: [a, b]}]\n"
        "  positions: [{name: direct, measures: current, full_scale: 1 mA, input: [a, b]}]\n"
    )
    assert s.network.positions[0].full_scale == 1e-3


def test_yaml_1_1_words_stay_text():
    # Plain YAML 1.1 would turn these node names into booleans and the position name
    # into a float; the loader keeps the text as written.
    s = loads(
        "title: 2024\nrevision: 3\ndate: '2024-03-18'\n"
        "movement: {full_scale_current: 1 mA, coil_resistance: 50 ohm, class: 1}\n"
        "network:\n  elements: [{name: M, kind: movement, between: [yes, no]}]\n"
        "  positions: [{name: 1.50, measures: current, full_scale: 1 mA, input: [yes, no]}]\n"
    )
    assert s.title == "2024" and s.revision == "3" and s.date == "2024-03-18"
    assert s.network.element("M").nodes == ("yes", "no")
    assert s.network.positions[0].name == "1.50"


def test_bytes_bom_and_crlf():
    data = ("\ufeff" + MINIMAL).replace("\n", "\r\n").encode("utf-8")
    s = loads(data, "x.yaml")
    assert s.movement.r_coil_ohm == 500.0
    assert not s.text.startswith("\ufeff")


def test_load_from_path(tmp_path):
    p = tmp_path / "meter.yaml"
    p.write_text(MINIMAL, encoding="utf-8")
    s = load(p)
    assert s.path == str(p) and s.text == MINIMAL


# --- malformed files -------------------------------------------------------------------------


def test_enough_distinct_bad_files():
    expects = {bad_file_header(p)[0] for p in BAD_FILES}
    assert len(BAD_FILES) >= 20 and len(expects) >= 20


@pytest.mark.parametrize("path", BAD_FILES, ids=[p.stem for p in BAD_FILES])
def test_bad_file(path):
    expect, line = bad_file_header(path)
    with pytest.raises(ProjectError) as ei:
        load(path)
    msg = ei.value.one_line()
    assert str(path) in msg
    assert f":{line}:" in msg, msg
    assert expect in msg, msg
    assert ei.value.line == line and ei.value.path == str(path)
    assert "\n" not in msg and "Traceback" not in msg


def test_missing_file(tmp_path):
    with pytest.raises(ProjectError, match="no such file"):
        load(tmp_path / "nope.yaml")


def test_folder(tmp_path):
    with pytest.raises(ProjectError, match="is a folder"):
        load(tmp_path)


def test_zero_byte_file(tmp_path):
    p = tmp_path / "empty.yaml"
    p.write_bytes(b"")
    with pytest.raises(ProjectError, match=r"empty\.yaml:1: the file is empty"):
        load(p)


def test_too_big(tmp_path):
    p = tmp_path / "big.yaml"
    p.write_bytes(b"#" * (MAX_FILE_BYTES + 1))
    with pytest.raises(ProjectError, match=r"file is 5\.0 MB; a project file is at most 5 MB"):
        load(p)
    with pytest.raises(ProjectError, match="at most 5 MB"):
        loads("#" * (MAX_FILE_BYTES + 1))


def test_utf16(tmp_path):
    p = tmp_path / "u16.yaml"
    p.write_bytes(MINIMAL.encode("utf-16"))
    with pytest.raises(ProjectError, match="UTF-16"):
        load(p)


def test_unknown_key_lists_allowed_keys():
    text = MINIMAL.replace("class: 2.5", "class: 2.5, tempco: 3930 ppm/K, colour: red")
    with pytest.raises(ProjectError) as ei:
        loads(text, "m.yaml")
    msg = ei.value.one_line()
    assert msg.startswith("m.yaml:2: unknown key 'colour' in movement")
    assert "allowed keys: full_scale_current, coil_resistance, class" in msg


def test_every_iec_class_accepted():
    # IEC 60051-1 class indices (from memory)
    for c in ("0.05", "0.1", "0.2", "0.3", "0.5", "1", "1.5", "2", "2.5", "3", "5", "1.0", "5.00"):
        s = loads(MINIMAL.replace("class: 2.5", f"class: {c}"))
        np.testing.assert_allclose(s.movement.class_index, float(c), rtol=0)  # exact


def test_error_in_merged_mapping_points_at_the_anchor():
    text = textwrap.dedent("""\
        title: T
        movement: {full_scale_current: 1 mA, coil_resistance: 50 ohm, class: 1}
        current: {arrangement: ring, full_scales: [2 mA]}
        parts:
          diodes:
            a: &base
              saturation_current: 5 nA
              emission: -1
            b:
              <<: *base
        """)
    with pytest.raises(ProjectError, match=r"<string>:8: parts\.diodes\.a\.emission is '-1'; it must be above zero"):
        loads(text)


def test_command_line(tmp_path):
    ok = tmp_path / "ok.yaml"
    ok.write_text(MINIMAL, encoding="utf-8")
    r = subprocess.run([sys.executable, "-m", "planner.project", str(ok)], capture_output=True, text=True)
    assert r.returncode == 0 and "ok: 'Minimal'" in r.stdout
    bad = BAD / "class_1_7.yaml"
    r = subprocess.run([sys.executable, "-m", "planner.project", str(bad)], capture_output=True, text=True)
    assert r.returncode == 2
    assert f"{bad}:7: movement.class 1.7 is not an IEC 60051 class index" in r.stderr
    assert "Traceback" not in r.stderr


@pytest.mark.parametrize(
    "path", sorted((Path(__file__).parent.parent / "projects").glob("*.yaml")), ids=lambda p: p.stem
)
def test_bundled_projects_load(path):
    spec = load(path)
    assert spec.title and spec.movement.i_fs_a > 0


PULSE = textwrap.dedent("""\
    title: Pulse ratings
    movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
    parts:
      resistors:
        power: 0.25 W
        pulse_energy: 10 mJ
        ratings:
          - {power: 0.25 W, max_voltage: 250 V}
          - {power: 1 W, max_voltage: 500 V, pulse_energy: 2 J}
      diodes:
        rect: {saturation_current: 10 nA, surge_current: 30 A, i2t: 3.7 A^2 s}
      fuses:
        f1: {cold_resistance: 80 mohm, rated_current: 1.6 A, breaking_capacity: 10 kA, i2t: 1.2 A2s,
             clearing_i2t: 2.5 A^2*s}
    faults:
      accept:
        - {position: [10 V, 50 V], stimulus: [range up, wall outlet], reason: clamped}
        - {position: 1 mA, stimulus: range up, reason: ring rated at full scale}
    network:
      elements:
        - {name: R1, kind: resistor, between: [vin, m], value: 198 kohm, pulse_energy: 50 mJ}
        - {name: R2, kind: resistor, between: [vin, m], value: 198 kohm}
        - {name: M1, kind: movement, between: [m, com]}
      positions:
        - {name: 10 V, measures: voltage, full_scale: 10 V, input: [vin, com]}
    """)


def test_pulse_ratings_and_clearing_i2t():
    s = loads(PULSE, "p.yaml")
    rp = s.parts.resistors
    assert rp.pulse_energy_j == 0.01
    assert rp.pulse_energies_j == (None, 2.0)
    assert s.parts.diodes["rect"].i2t_a2s == 3.7
    f = s.parts.fuses["f1"]
    assert f.i2t_a2s == 1.2 and f.clearing_i2t_a2s == 2.5
    r1, r2 = s.network.elements[:2]
    assert r1.pulse_energy_j == 0.05 and r2.pulse_energy_j is None
    # defaults: no pulse figures anywhere
    d = loads(MINIMAL)
    assert d.parts.resistors.pulse_energy_j is None and d.parts.resistors.pulse_energies_j == ()


def test_accept_entries_listing_several_cases():
    acc = loads(PULSE, "p.yaml").faults.accept
    line = _line("{position: [10 V", PULSE)
    assert acc[:4] == tuple(model.Acceptance(p, st, "clamped", line=line, expanded=True)
                            for p in ("10 V", "50 V") for st in ("range up", "wall outlet"))
    assert acc[4] == model.Acceptance("1 mA", "range up", "ring rated at full scale", line=line + 1)


@pytest.mark.parametrize("old, new, line_of, expect", [
    ("clearing_i2t: 2.5 A^2*s", "clearing_i2t: 1 A^2*s", "clearing_i2t", "below the pre-arcing i2t"),
    ("pulse_energy: 10 mJ", "pulse_energy: 10 mW", "pulse_energy: 10 mW", "needs an energy"),
    ("pulse_energy: 10 mJ", "pulse_energy: 0 J", "pulse_energy: 0 J", "must be above zero"),
    ("pulse_energy: 2 J}", "pulse_enrgy: 2 J}", "pulse_enrgy", "did you mean 'pulse_energy'"),
    ("pulse_energy: 50 mJ}", "pulse_energy: -1 J}", "pulse_energy: -1 J", "must be above zero"),
    ("i2t: 3.7 A^2 s}", "i2t: 3.7 A}", "i2t: 3.7 A}", "needs an I^2 t"),
    ("position: [10 V, 50 V]", "position: []", "position: []", "empty list"),
    ("stimulus: [range up, wall outlet]", "stimulus: [range up, '']", "stimulus: [range up", "empty text"),
])
def test_pulse_and_accept_errors_point_at_the_line(old, new, line_of, expect):
    text = PULSE.replace(old, new, 1)
    assert text != PULSE
    with pytest.raises(ProjectError) as ei:
        loads(text, "p.yaml")
    msg = ei.value.one_line()
    assert expect in msg, msg
    assert ei.value.line == _line(line_of, text), msg


def test_damage_limits_compliance_and_frequency_keys():
    text = """title: keys
movement:
  full_scale_current: 50 uA
  coil_resistance: 2 kohm
  class: 1.5
  overload: {peg: 1.05, short_time: 30, continuous: 8, mechanical: 6, thermal_time: 3 s}
voltage: {arrangement: chain, full_scales: [1 V, 10 V]}
faults:
  sources:
    - {name: calibrator, current: 20 mA, compliance: 12 V}
    - {name: outlet, voltage: 120 V, waveform: sine, frequency: 60 Hz, impedance: 0.5 ohm}
"""
    spec = loads(text, "k.yaml")
    assert spec.movement.overload == model.Overload(peg=1.05, short_time=30.0, continuous=8.0, mechanical=6.0,
                                                    thermal_time_s=3.0)
    cal, out = spec.faults.sources
    assert (cal.compliance_v, cal.frequency_hz, out.frequency_hz) == (12.0, None, 60.0)
    with pytest.raises(ProjectError, match="'compliance' bounds a current source"):
        loads(text.replace("impedance: 0.5 ohm", "impedance: 0.5 ohm, compliance: 5 V"), "k.yaml")
    with pytest.raises(ProjectError, match="'frequency' applies to a sine"):
        loads(text.replace("compliance: 12 V", "compliance: 12 V, frequency: 50 Hz"), "k.yaml")
    with pytest.raises(ProjectError, match="overload.mechanical is 0.5"):
        loads(text.replace("mechanical: 6", "mechanical: 0.5"), "k.yaml")
