"""Scale plates: tick placement against closed forms, the printed plate against its geometry.

The shared DC scale is checked against the contract's definition (fraction = value /
full scale, angle = fraction x arc) and the solver against Ohm's law where the network
is linear; the ohms scale against the series ohmmeter D = R_int / (R_int + R) [1]; an
AC scale of its own against the mean of the rectified current computed by quadrature
(scipy.integrate.quad). The drawn plate is measured from outside: pdftoppm renders the
PDF at a known resolution and the arc's radius is fitted to the pixels; the SVG is
parsed as XML; the label boxes are rebuilt here from the font metrics and tested for
overlap with a separating-axis test written for this file.

[1] T. R. Kuphaldt, Lessons in Electric Circuits, Vol. I (DC), ch. 8, "Ohmmeter design".
"""

from __future__ import annotations

import io
import itertools
import json
import math
import re
import shutil
import subprocess
import xml.etree.ElementTree as ET
from decimal import Decimal
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad

from planner.cli import main
from planner.design import build
from planner.engine import Engine
from planner.errors import ProjectError
from planner.model import Contact, MovementElement, NetworkSpec, Position, Resistor
from planner.project import load, loads
from planner.scale import (PlateInfo, Response, ScaleDef, ScalePosition, ScaleResult, build_plate, fit_scale,
                           linear_definitions, plate_drawing, plate_pdf, plate_svg, sampled_response, scale_json,
                           scale_project)
from planner.scale.plate import Line, Poly
from planner.scale.text import Text

ROOT = Path(__file__).resolve().parent.parent
MULTIMETER = ROOT / "projects" / "bench_multimeter.yaml"
VOLTMETER = ROOT / "projects" / "pocket_voltmeter.yaml"
PT_PER_MM = 72.0 / 25.4  # 1 pt = 1/72 in, 1 in = 25.4 mm (exact)


# --- closed forms and independent computations --------------------------------------------------


def series_ohmmeter(r_int):
    """Deflection of a series ohmmeter with an ideal battery, zeroed: D = R_int / (R_int + R) [1]."""
    return lambda r: r_int / (r_int + np.asarray(r, dtype=float))


def bridge_mean_closed(v_rms, v_d, r):
    """Mean current of a bridge rectifier with two constant-drop diodes in the path and series R.

    i(theta) = (V_p sin(theta) - 2 v_d) / R while positive, V_p = sqrt(2) V_rms; its mean over a
    half cycle is (2 V_p cos(theta0) - 2 v_d (pi - 2 theta0)) / (pi R), sin(theta0) = 2 v_d / V_p.
    """
    vp = np.sqrt(2.0) * np.asarray(v_rms, dtype=float)
    on = vp > 2.0 * v_d
    th = np.arcsin(np.where(on, 2.0 * v_d / np.where(on, vp, 1.0), 0.0))
    return np.where(on, (2.0 * vp * np.cos(th) - 2.0 * v_d * (np.pi - 2.0 * th)) / (np.pi * r), 0.0)


def bridge_mean_quad(v_rms, v_d, r):
    """The same mean by numerical quadrature of the instantaneous current (independent of the closed form)."""
    vp = math.sqrt(2.0) * v_rms
    if vp <= 2.0 * v_d:
        return 0.0
    th = math.asin(2.0 * v_d / vp)
    val, _ = quad(lambda t: max(0.0, vp * math.sin(t) - 2.0 * v_d) / r, 0.0, math.pi, points=[th, math.pi - th],
                  epsabs=1e-15, epsrel=1e-13)
    return val / math.pi


def demo_defs(*, evaluate=True):
    """A shared DC scale, an AC 2.5 V scale of its own (silicon bridge), an ohms scale (centre 10 ohm)."""
    ac = lambda v: bridge_mean_closed(v, 0.6, 1e3) / bridge_mean_closed(2.5, 0.6, 1e3)  # noqa: E731
    ohm = series_ohmmeter(10.0)
    ac_resp = sampled_response(ac, 2.5, "ac")
    ohm_resp = sampled_response(ohm, 10.0, "ohms")
    if not evaluate:
        ac_resp = Response(ac_resp.values, ac_resp.fractions)
        ohm_resp = Response(ohm_resp.values, ohm_resp.fractions)
    return [
        ScaleDef("DC", "linear", (ScalePosition("2.5 V", "V", 2.5), ScalePosition("10 V", "V", 10.0),
                                  ScalePosition("50 V", "V", 50.0), ScalePosition("250 V", "V", 250.0),
                                  ScalePosition("50 mA", "A", 0.05))),
        ScaleDef("AC 2.5 V", "ac", (ScalePosition("2.5 V~", "V", 2.5),), ac_resp),
        ScaleDef("\u03a9", "ohms", (ScalePosition("R\u00d71", "ohm", 10.0), ScalePosition("R\u00d7100", "ohm", 1000.0)),
                 ohm_resp),
    ]


def demo_plate(arc=90.0, radius=60.0, mirror=True, evaluate=True):
    return build_plate(demo_defs(evaluate=evaluate), arc_deg=arc, radius_mm=radius, mirror=mirror,
                       info=PlateInfo("Test bench plate", "A", "50 uA, 2 kohm, class 1.5", "2026-01-05"))


def entries(plate):
    return scale_json(ScaleResult(plate))["scales"]


# --- independent geometry -------------------------------------------------------------------------


def text_box(t: Text):
    """Corners of a text's box from the Adobe metrics (width; cap height 0.718 em, descender 0.207 em)."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    w = sum(stringWidth(s, f, t.size_pt) for s, f in t.runs) / PT_PER_MM
    em = t.size_pt / PT_PER_MM
    x0 = {"start": 0.0, "middle": -w / 2, "end": -w}[t.anchor]
    desc = 0.207 if re.search(r"[gjpqy,()]", t.text) else 0.02  # digits overshoot by 0.019 em (AFM)
    a = math.radians(t.rotation_deg)
    return [(t.x + math.cos(a) * u - math.sin(a) * v, t.y + math.sin(a) * u + math.cos(a) * v)
            for u, v in ((x0, -desc * em), (x0 + w, -desc * em), (x0 + w, 0.718 * em), (x0, 0.718 * em))]


def separated(p, q) -> bool:
    """True when some edge normal of either convex polygon separates them (separating axis theorem)."""
    for poly in (p, q):
        for (x1, y1), (x2, y2) in zip(poly, poly[1:] + poly[:1]):
            nx, ny = y2 - y1, x1 - x2
            if nx == 0 and ny == 0:
                continue
            pa = [nx * x + ny * y for x, y in p]
            pb = [nx * x + ny * y for x, y in q]
            if max(pa) <= min(pb) + 1e-12 or max(pb) <= min(pa) + 1e-12:
                return True
    return False


def _require(tool):
    if shutil.which(tool) is None:
        import os

        if os.environ.get("PLANNER_REQUIRE_TOOLS", "") not in ("", "0"):
            pytest.fail(f"{tool} is not installed and PLANNER_REQUIRE_TOOLS=1 forbids skipping")
        pytest.skip(f"{tool} (poppler-utils) is not installed")


# --- the shared DC scale --------------------------------------------------------------------------


@pytest.fixture(scope="module")
def multimeter():
    spec = load(MULTIMETER)
    return spec, scale_project(spec)


def test_dc_fraction_is_value_over_full_scale_and_angle_is_fraction_times_arc(multimeter):
    spec, result = multimeter
    data = scale_json(result)
    linear = [s for s in data["scales"] if s["kind"] == "linear"]
    assert {s["unit"] for s in linear} == {"V", "A"}
    assert sorted(n for s in linear for n in s["positions"]) == sorted(p.name for p in Engine(build(spec)).positions)
    for s in linear:
        fs = s["full_scale"]
        n = len(s["ticks"]) - 1
        for k, t in enumerate(s["ticks"]):
            assert t["fraction"] == t["value"] / fs  # design contract: fraction = value / full scale, exactly
            assert t["angle_deg"] == t["fraction"] * data["arc_deg"]  # design contract: angle = fraction x arc
            np.testing.assert_allclose(t["fraction"], k / n, rtol=0, atol=1e-15)  # uniform divisions
        assert s["ticks"][-1]["value"] == fs and s["ticks"][0]["value"] == 0.0
    # what a row prints at a tick is its full-scale number x fraction (reading = FS x I_m / I_fs, contract)
    scale = result.plate.scales[0]
    for j, row in enumerate(scale.rows):
        for t in scale.ticks:
            if t.labels[j] is not None:
                np.testing.assert_allclose(float(t.labels[j]), float(row.label_full_scale) * t.fraction,
                                           rtol=1e-12, atol=1e-12)


def test_dc_rows_group_ranges_a_power_of_ten_apart(multimeter):
    # ranges whose full scales differ by a power of ten read on one row (common practice)
    _, result = multimeter
    rows = [{rp.name for rp in row.positions} for row in result.plate.scales[0].rows]
    assert rows == [{"500 mV", "50 V"}, {"2.5 V", "250 V"}, {"10 V", "1 kV", "1 mA", "10 mA", "100 mA", "1 A"}]
    for row in result.plate.scales[0].rows:
        for rp in row.positions:  # the printed number x factor, in the row's unit, is the reading
            disp = float(rp.factor * row.label_full_scale)
            prefix = {"m": 1e-3, "k": 1e3, "\u00b5": 1e-6}.get(rp.unit_text[:-1], 1.0)
            np.testing.assert_allclose(disp * prefix, rp.full_scale, rtol=1e-12)


def test_dc_divisions_follow_the_1_2_5_rule_and_keep_one_millimetre(multimeter):
    # division steps of 1, 2 (2.5) or 5 times a power of ten on every row; at least 1 mm apart
    # at the base line (common practice for printed scales)
    _, result = multimeter
    s = result.plate.scales[0]
    n = len(s.ticks) - 1
    for row in s.rows:
        for step in (row.label_full_scale / n,):
            assert step.scaleb(-step.adjusted()).normalize() in (Decimal(1), Decimal(2), Decimal("2.5"), Decimal(5))
    gap_mm = s.band.radius_mm * math.radians(result.plate.arc_deg) / n
    assert gap_mm >= 1.0 and n <= 100


def _network_without_junctions(i_fs=50e-6, r_m=2000.0):
    """Two multiplier ranges and a shunt range, exact values, no diode (a linear network)."""
    elements = [MovementElement("M1", "m", "com")]
    positions = []
    for k, v in enumerate((2.5, 10.0)):
        # multiplier R = V / I_fs - R_m (Lessons in Electric Circuits, Vol. I, ch. 8, "Voltmeter design")
        elements += [Resistor(f"R{k + 1}", f"v{k}", "m", v / i_fs - r_m, tolerance=0.0),
                     Contact(f"S{k + 1}", "vin", f"v{k}", (f"{v:g} V",))]
        positions.append(Position(f"{v:g} V", "voltage", v, ("vin", "com")))
    i = 1e-3
    # shunt R_sh = R_m I_fs / (I - I_fs) (Lessons in Electric Circuits, Vol. I, ch. 8, "Ammeter design")
    elements += [Resistor("R3", "s", "com", r_m * i_fs / (i - i_fs), tolerance=0.0),
                 Contact("S3", "m", "s", ("1 mA",)), Contact("S4", "iin", "m", ("1 mA",))]
    positions.append(Position("1 mA", "current", i, ("iin", "com")))
    return elements, positions


def test_solver_agrees_with_the_linear_scale_where_no_junction_is_in_circuit(build_spec):
    elements, positions = _network_without_junctions()
    spec = build_spec(elements, positions, i_fs_a=50e-6, r_coil_ohm=2000.0)
    defs, checks = linear_definitions(Engine(build(spec)))
    assert [d.name for d in defs] == ["DC"]
    assert len(checks) == 3
    for c in checks:
        assert c.linear_by_theory and c.agrees
        assert c.linearity_deviation <= 1e-9  # a linear network: D(v) = D(FS) v / FS (superposition)
        np.testing.assert_allclose(c.full_scale_fraction, 1.0, rtol=1e-12)  # Ohm's law at full scale


def test_clamps_in_circuit_are_reported_not_asserted():
    result = scale_project(load(VOLTMETER))
    for c in result.checks:
        assert not c.linear_by_theory and c.agrees is None
        assert 0.0 < c.linearity_deviation < 0.015  # the clamps' bend is within class 1.5 (the file's class)


# --- ohms and AC scales -----------------------------------------------------------------------------


@pytest.mark.parametrize("evaluate", [True, False], ids=["exact", "interpolated"])
def test_ohms_fraction_is_the_series_ohmmeter_closed_form(evaluate):
    plate = demo_plate(evaluate=evaluate)
    ohm = [e for e in entries(plate) if e["unit"] == "ohm"]
    assert len(ohm) == 1
    e = ohm[0]
    assert e["positions"] == ["R\u00d71", "R\u00d7100"] and e["center_ohm"] == 10.0
    values = np.array([t["value"] for t in e["ticks"]])
    fractions = np.array([t["fraction"] for t in e["ticks"]])
    # D = R_int / (R_int + R) for a series ohmmeter with an ideal battery [1]
    np.testing.assert_allclose(fractions, 10.0 / (10.0 + values), rtol=0, atol=1e-9)
    np.testing.assert_allclose([t["angle_deg"] for t in e["ticks"]], fractions * 90.0, rtol=1e-15)
    assert values[np.argmax(fractions)] == 0.0 and fractions.max() == pytest.approx(1.0, abs=1e-12)  # 0 ohm: full
    assert np.all(np.diff(values[np.argsort(fractions)]) < 0)  # reversed: higher resistance, less deflection
    ends = e["end_marks"]
    assert [(m["fraction"], m["label"], m["value"]) for m in ends] == [(0.0, "\u221e", None)]  # infinity at rest
    centre = [t for t in e["ticks"] if t["value"] == 10.0]
    assert centre and centre[0]["label"] == "10" and abs(centre[0]["fraction"] - 0.5) <= 1e-9  # half deflection
    second = plate.scales[0]
    assert second.kind == "ohms"
    for t in second.ticks:  # the R x100 range reads 100 times the printed number
        assert t.values[1] == pytest.approx(100.0 * t.values[0], rel=1e-15)


def test_ohms_labels_are_round_values_that_thin_toward_infinity():
    plate = demo_plate()
    s = plate.scales[0]
    labels = [t.labels[0] for t in s.ticks if t.labels[0] is not None]
    # a practitioner's ohms scale marks the decades and their 2 and 5 steps about the centre (common practice)
    for must in ("0", "1", "2", "5", "10", "20", "50", "100"):
        assert must in labels
    for lab in labels:
        m = Decimal(lab.replace("k", "e3")).normalize()
        if m != 0:
            assert m.scaleb(-m.adjusted()).normalize() in {Decimal(x) for x in ("1", "1.5", "2", "3", "4", "5", "6",
                                                                                "7", "8", "9")}
    fr = sorted([t.fraction for t in s.ticks] + [0.0])
    assert min(np.diff(fr)) * s.band.length_mm >= 1.0 - 1e-9  # crowding handled: never closer than 1 mm


def test_ohms_interpolation_with_an_offset_centre_stays_within_1e_9():
    # the caller's centre 2 % off the true one: D(t) is no longer a straight line in t = R / (R + R_c);
    # PCHIP on 401 samples keeps within 1e-9 of the closed form [1]
    true = series_ohmmeter(10.2)
    r = sampled_response(true, 10.0, "ohms")
    d = ScaleDef("\u03a9", "ohms", (ScalePosition("R\u00d71", "ohm", 10.0),), Response(r.values, r.fractions))
    plate = build_plate([d], arc_deg=90.0, radius_mm=60.0)
    e = entries(plate)[0]
    v = np.array([t["value"] for t in e["ticks"]])
    np.testing.assert_allclose([t["fraction"] for t in e["ticks"]], true(v), rtol=0, atol=1e-9)


def test_ac_own_scale_against_the_mean_rectified_current_by_quadrature():
    plate = demo_plate()
    e = [x for x in entries(plate) if x["kind"] == "ac"][0]
    assert e["positions"] == ["2.5 V~"] and e["full_scale"] == 2.5
    i_fs = bridge_mean_quad(2.5, 0.6, 1e3)
    for t in e["ticks"]:
        expect = bridge_mean_quad(t["value"], 0.6, 1e3) / i_fs  # pointer follows the mean current (contract)
        assert abs(t["fraction"] - expect) <= 1e-9
        assert t["angle_deg"] == pytest.approx(t["fraction"] * 90.0, rel=1e-15)
    fr = [t["fraction"] for t in e["ticks"]]
    assert fr == sorted(fr) and fr[0] == 0.0 and abs(fr[-1] - 1.0) <= 1e-12
    # the threshold compresses the scale near zero: no tick between rest and the first one 1 mm up
    length = plate.scales[2].band.length_mm
    assert min(np.diff(fr)) * length >= 1.0 - 1e-9
    # a silicon bridge conducts only above 2 x 0.6 V peak: below 0.85 V rms only the rest mark remains
    assert all(t["value"] == 0.0 or t["value"] > 2 * 0.6 / math.sqrt(2) for t in e["ticks"])


def test_ac_scale_of_an_ideal_average_responding_rectifier_is_linear():
    # ideal diodes: mean of |sin| is 2/pi, so D = V / FS (average-responding, calibrated in rms of a sine)
    ideal = lambda v: bridge_mean_closed(v, 0.0, 1e3) / bridge_mean_closed(10.0, 0.0, 1e3)  # noqa: E731
    r = sampled_response(ideal, 10.0, "ac")
    d = ScaleDef("AC 10 V", "ac", (ScalePosition("10 V~", "V", 10.0),), Response(r.values, r.fractions))
    e = entries(build_plate([d], arc_deg=90.0, radius_mm=60.0))[0]
    for t in e["ticks"]:
        assert abs(t["fraction"] - t["value"] / 10.0) <= 1e-9
        assert abs(t["fraction"] - bridge_mean_quad(t["value"], 0.0, 1.0) / bridge_mean_quad(10.0, 0.0, 1.0)) <= 1e-9


def test_ac_interpolation_away_from_the_threshold_is_within_1e_6():
    # the accuracy docs/scale.md states for samples alone (no evaluate): PCHIP on 401 samples
    from planner.scale.ticks import Curve

    f = lambda v: bridge_mean_closed(v, 0.6, 1e3) / bridge_mean_closed(2.5, 0.6, 1e3)  # noqa: E731
    r = sampled_response(f, 2.5, "ac")
    curve = Curve("ac", Response(r.values, r.fractions), 2.5)
    v = np.linspace(1.0, 2.5, 3001)
    q = np.array([bridge_mean_quad(x, 0.6, 1e3) for x in v]) / bridge_mean_quad(2.5, 0.6, 1e3)
    assert np.max(np.abs(curve.interp(v) - q)) <= 1e-6
    v = np.linspace(0.0, 2.5, 2001)
    assert np.max(np.abs(curve.interp(v) - f(v))) <= 1e-4  # near the conduction threshold too


# --- the drawn plate ----------------------------------------------------------------------------------


GEOMETRIES = [(30.0, 35.0), (90.0, 60.0), (180.0, 60.0), (250.0, 40.0), (300.0, 120.0), (90.0, 400.0)]


@pytest.mark.parametrize("arc,radius", GEOMETRIES)
def test_labels_never_overlap_each_other_nor_the_ticks(arc, radius):
    plate = demo_plate(arc, radius)
    texts = [t for t in plate.art if isinstance(t, Text)]
    assert len(texts) >= 12
    boxes = [text_box(t) for t in texts]
    for (a, ba), (b, bb) in itertools.combinations(zip(texts, boxes), 2):
        assert separated(ba, bb), f"labels {a.text!r} and {b.text!r} overlap"
    marks = [list(m.points) if isinstance(m, Poly) else [(m.x1, m.y1), (m.x2, m.y2)]
             for m in plate.art if isinstance(m, (Poly, Line))]
    for t, box in zip(texts, boxes):
        for m in marks:
            assert separated(box, m), f"label {t.text!r} crosses a mark"


@pytest.mark.parametrize("arc,radius", GEOMETRIES[:4])
def test_no_text_below_6_pt_in_the_plate_and_in_the_pdf(arc, radius):
    from pypdf import PdfReader
    from pypdf.generic import ContentStream

    plate = demo_plate(arc, radius)
    assert min(t.size_pt for t in plate.texts()) >= 6.0
    page = PdfReader(io.BytesIO(plate_pdf(plate))).pages[0]
    ops = ContentStream(page.get_contents(), page.pdf).operations
    ctm, stack, size, tm, sizes = np.eye(3), [], None, np.eye(3), []
    for operands, op in ops:  # PDF 1.7 (ISO 32000-1) 8.4.4 and 9.4: text space = Tm x CTM
        if op == b"q":
            stack.append(ctm.copy())
        elif op == b"Q":
            ctm = stack.pop()
        elif op == b"cm":
            a, b, c, d, e, f = map(float, operands)
            ctm = np.array([[a, b, 0], [c, d, 0], [e, f, 1]]) @ ctm
        elif op == b"Tf":
            size = float(operands[1])
        elif op == b"Tm":
            a, b, c, d, e, f = map(float, operands)
            tm = np.array([[a, b, 0], [c, d, 0], [e, f, 1]])
        elif op == b"BT":
            tm = np.eye(3)
        elif op in (b"Tj", b"TJ", b"'", b'"'):
            m = (tm @ ctm)[:2, :2]
            sizes.append(size * math.sqrt(abs(np.linalg.det(m))))
    assert len(sizes) >= 12
    # nothing below 6 pt at print size (1:1); the PDF writes rotations to 6 decimals, hence 1e-5
    assert min(sizes) >= 6.0 * (1.0 - 1e-5)


def _fit_circle(points):
    """Least-squares circle through points (Kasa): x^2 + y^2 = a x + b y + c."""
    p = np.asarray(points, dtype=float)
    a, b, c = np.linalg.lstsq(np.c_[p, np.ones(len(p))], (p ** 2).sum(axis=1), rcond=None)[0]
    cx, cy = a / 2, b / 2
    return cx, cy, math.sqrt(c + cx * cx + cy * cy)


def _render(pdf_path, out_stem, dpi):
    from PIL import Image

    subprocess.run(["pdftoppm", "-gray", "-png", "-r", str(dpi), "-singlefile", str(pdf_path), str(out_stem)],
                   check=True)
    return np.asarray(Image.open(f"{out_stem}.png").convert("L"), dtype=float)


@pytest.mark.parametrize("arc,radius,with_all", [(90.0, 60.0, False), (250.0, 40.0, True)])
def test_pdf_holds_the_arc_at_the_stated_radius(tmp_path, arc, radius, with_all):
    _require("pdftoppm")
    dpi = 300
    if with_all:
        plate = demo_plate(arc, radius)
    else:
        key = f"class: 1.5\n  scale: {{arc: {arc:g} deg, radius: {radius:g} mm}}"
        spec = loads(MULTIMETER.read_text().replace("class: 1.5", key, 1), str(MULTIMETER))
        plate = scale_project(spec).plate
    pdf = tmp_path / "plate.pdf"
    pdf.write_bytes(plate_pdf(plate))
    img = _render(pdf, tmp_path / "page", dpi)
    px = dpi / 25.4
    h_mm = plate.page_mm[1]
    assert abs(img.shape[0] / px - h_mm) < 0.2 and abs(img.shape[1] / px - plate.page_mm[0]) < 0.2
    # the pivot mark, measured: centroid of the dark pixels within 6 mm of where the page puts it
    ex, ey = plate.origin_mm[0] * px, (h_mm - plate.origin_mm[1]) * px
    w = int(6 * px)
    win = img[int(ey) - w:int(ey) + w, int(ex) - w:int(ex) + w] < 128
    ys, xs = np.nonzero(win)
    pivot = (xs.mean() + int(ex) - w, ys.mean() + int(ey) - w)
    # the outer base line, measured: the dark run nearest the stated radius on rays between ticks
    outer = plate.scales[0]
    angles = sorted(outer.band.polar_deg(t.fraction) for t in list(outer.ticks) + list(outer.end_marks))
    pts = []
    r_px = radius * px
    for a0, a1 in zip(angles, angles[1:]):
        if (a1 - a0) * math.pi / 180 * radius < 0.8:
            continue
        phi = math.radians((a0 + a1) / 2)
        rs = np.arange(0.9 * r_px, 1.1 * r_px, 0.25)
        xs_ = pivot[0] + rs * math.cos(phi)
        ys_ = pivot[1] - rs * math.sin(phi)
        dark = img[np.round(ys_).astype(int), np.round(xs_).astype(int)] < 128
        runs, start = [], None
        for i, d in enumerate(dark):
            if d and start is None:
                start = i
            if not d and start is not None:
                runs.append((start, i - 1))
                start = None
        if not runs:
            continue
        lo, hi = min(runs, key=lambda r: abs(rs[(r[0] + r[1]) // 2] - r_px))
        rm = (rs[lo] + rs[hi]) / 2
        pts.append((pivot[0] + rm * math.cos(phi), pivot[1] - rm * math.sin(phi)))
    assert len(pts) >= 20
    cx, cy, r_fit = _fit_circle(pts)
    np.testing.assert_allclose(r_fit / px, radius, rtol=0.005)  # the requirement: within 0.5 %
    assert math.hypot(cx - pivot[0], cy - pivot[1]) / px < 0.3  # the arc is centred on the pivot mark [mm]


def test_svg_is_well_formed_and_holds_the_arc_at_the_radius():
    plate = demo_plate(120.0, 50.0)
    svg = plate_svg(plate, title="Test & plate")
    root = ET.fromstring(svg.encode("utf-8"))  # well-formed XML
    ns = "{http://www.w3.org/2000/svg}"
    w, h = plate.page_mm
    assert root.tag == ns + "svg" and root.get("width") == f"{w:g}mm" and root.get("height") == f"{h:g}mm"
    assert root.get("viewBox") == f"0 0 {w:g} {h:g}"  # one user unit = 1 mm
    pivot = [c for c in root.iter(ns + "circle")][0]
    cx, cy = float(pivot.get("cx")), float(pivot.get("cy"))
    radii = []
    for p in root.iter(ns + "path"):
        m = re.fullmatch(r"M ([-\d.]+),([-\d.]+) A ([\d.]+) ([\d.]+) 0 ([01]) ([01]) ([-\d.]+),([-\d.]+)", p.get("d"))
        if m:
            x0, y0, rx, ry, large, sweep, x1, y1 = map(float, m.groups())
            for x, y in ((x0, y0), (x1, y1)):
                assert math.hypot(x - cx, y - cy) == pytest.approx(rx, abs=2e-4)  # endpoints on the circle
            # the centre the flags select (SVG 1.1, appendix F.6.5, circle without rotation) is the pivot
            hx, hy = (x0 - x1) / 2, (y0 - y1) / 2
            k = math.sqrt(max(0.0, rx * rx - hx * hx - hy * hy) / (hx * hx + hy * hy))
            k = -k if large == sweep else k
            assert (k * hy + (x0 + x1) / 2, -k * hx + (y0 + y1) / 2) == pytest.approx((cx, cy), abs=2e-3)
            radii.append(rx)
    assert max(radii) == pytest.approx(50.0, abs=1e-4)  # the outer base line at the stated radius
    assert len(radii) == 3  # one arc per distinct scale
    texts = ["".join(t.itertext()) for t in root.iter(ns + "text")]
    assert "\u221e" in texts and "DC" in texts


def test_same_plate_gives_the_same_bytes(tmp_path):
    a = demo_plate()
    b = demo_plate()
    assert plate_pdf(a) == plate_pdf(b)
    assert plate_svg(a) == plate_svg(b)
    for run in ("one", "two"):
        assert main(["scale", str(VOLTMETER), "-o", str(tmp_path / f"{run}.pdf"),
                     "--svg", str(tmp_path / f"{run}.svg")]) == 0
    assert (tmp_path / "one.pdf").read_bytes() == (tmp_path / "two.pdf").read_bytes()
    assert (tmp_path / "one.svg").read_bytes() == (tmp_path / "two.svg").read_bytes()


def test_dossier_drawing_fits_a_frame_and_keeps_the_proportions():
    from reportlab.graphics import renderPDF

    plate = demo_plate()
    d = plate_drawing(plate, furniture=False, max_width_pt=300.0)
    x0, y0, x1, y1 = plate.outline
    assert d.width <= 300.0 + 1e-9
    s = fit_scale(plate, furniture=False, max_width_pt=300.0)
    np.testing.assert_allclose(d.width, (x1 - x0 + 1.0) * PT_PER_MM * s, rtol=1e-12)  # 1 mm = 72/25.4 pt
    np.testing.assert_allclose(d.width / d.height, (x1 - x0 + 1.0) / (y1 - y0 + 1.0), rtol=1e-12)
    assert renderPDF.drawToString(d).startswith(b"%PDF")
    full = plate_drawing(plate)
    np.testing.assert_allclose((full.width, full.height), np.array(plate.page_mm) * PT_PER_MM, rtol=1e-12)


# --- the project key and the command -----------------------------------------------------------------

_BASE = """title: Bench test meter
movement:
  full_scale_current: 50 uA
  coil_resistance: 2 kohm
  class: 1.5
{scale}voltage: {{arrangement: chain, full_scales: [0.5 V, 2.5 V, 10 V, 50 V]}}
current: {{arrangement: ring, full_scales: [1 mA, 10 mA]}}
"""


def test_scale_key_defaults_and_values():
    g = loads(_BASE.format(scale=""), "m.yaml").movement.scale
    assert (g.arc_deg, g.radius_m, g.mirror) == (90.0, 0.060, False)  # documented defaults
    g = loads(_BASE.format(scale="  scale: {arc: 250 deg, radius: 4.5 cm, mirror: true}\n"), "m.yaml").movement.scale
    assert (g.arc_deg, g.radius_m, g.mirror, g.line) == (250.0, 0.045, True, 6)
    g = loads(_BASE.format(scale="  scale: {arc: 1.5 rad}\n"), "m.yaml").movement.scale
    np.testing.assert_allclose(g.arc_deg, 1.5 * 180 / math.pi, rtol=1e-15)  # 1 rad = 180/pi deg


@pytest.mark.parametrize("text,words", [
    ("{arc: 20 deg}", "movement.scale.arc is 20 deg"),
    ("{arc: 301}", "movement.scale.arc is 301 deg"),
    ("{arc: 90 %}", "give an angle in degrees"),
    ("{radius: 9 mm}", "movement.scale.radius is 9 mm"),
    ("{radius: 501 mm}", "movement.scale.radius is 501 mm"),
    ("{radius: 60 V}", "needs a length"),
    ("{radius: 60}", "has no unit"),
    ("{mirror: 2}", "give true or false"),
    ("{radious: 60 mm}", "did you mean 'radius'"),
])
def test_scale_key_errors_name_the_line(text, words):
    with pytest.raises(ProjectError) as err:
        loads(_BASE.format(scale=f"  scale: {text}\n"), "m.yaml")
    assert err.value.line == 6 and words in str(err.value)


def test_scales_that_do_not_fit_are_a_one_line_error_and_nothing_is_written(tmp_path, capsys):
    proj = tmp_path / "m.yaml"
    proj.write_text(_BASE.format(scale="  scale: {arc: 90 deg, radius: 11 mm}\n"))
    out = tmp_path / "plate.pdf"
    assert main(["scale", str(proj), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and f"{proj}:6: movement.scale:" in err and "radius of at least" in err
    assert not out.exists()


def test_command_writes_pdf_and_svg_and_prints_the_contract_json(tmp_path, capsys):
    out, svg = tmp_path / "p.pdf", tmp_path / "p.svg"
    assert main(["scale", str(MULTIMETER), "-o", str(out), "--svg", str(svg), "--json"]) == 0
    cap = capsys.readouterr()
    assert cap.err == f"wrote {out}\nwrote {svg}\n"
    data = json.loads(cap.out)
    assert out.read_bytes().startswith(b"%PDF") and svg.read_text().startswith("<?xml")
    for s in data["scales"]:
        assert {"name", "unit", "positions", "ticks"} <= set(s) and s["unit"] in ("V", "A", "ohm")
        for t in s["ticks"]:
            assert {"value", "fraction", "angle_deg", "major", "label"} <= set(t)
            assert 0.0 <= t["fraction"] <= 1.0 and isinstance(t["major"], bool)
            assert t["label"] is None or isinstance(t["label"], str)
    assert main(["scale", str(MULTIMETER), "-o", str(tmp_path / "q.pdf")]) == 0
    table = capsys.readouterr().out
    assert "DC: base line at 60.0 mm" in table and "row 3 (0\u201310)" in table


def test_range_kind_hook_gives_a_scale_of_its_own(monkeypatch):
    # a range kind that asks for a scale of its own (as AC and ohms kinds do) gets one drawn
    # from the solved nominal response; the worn multimeter's current ranges hold no junction,
    # so D(v) = D(FS) v / FS exactly (Ohm's law), the check of the fractions (to 1e-9)
    from planner.design import build
    from planner.project import load
    from planner.ranges.dc_current import DCCurrent
    from planner.scale import ScaleDef, ScalePosition, sampled_response, scale_json, scale_project

    def own(self, position):
        return "own"

    def definition(self, response, position):
        sp = ScalePosition(position.name, "A", position.full_scale)
        return ScaleDef(f"own {position.name}", "ac", (sp,), sampled_response(response, position.full_scale, "ac"))

    monkeypatch.setattr(DCCurrent, "plate_scale", own)
    monkeypatch.setattr(DCCurrent, "scale_definition", definition)
    design = build(load(Path(__file__).resolve().parents[1] / "projects" / "worn_multimeter.yaml"))
    result = scale_project(design)
    js = scale_json(result)
    names = [s["name"] for s in js["scales"]]
    amps = [p.name for p in design.positions if p.measures == "current"]
    assert names == ["DC"] + [f"own {n}" for n in amps]  # the DC scale keeps the voltage ranges only
    assert js["scales"][0]["positions"] == [p.name for p in design.positions if p.measures == "voltage"]
    from planner.engine import Engine

    eng = Engine(design)
    for s in js["scales"][1:]:
        p = design.state(s["positions"][0]).position
        d_fs = float(eng.operate(p.name, [p.full_scale]).movement_multiple[0, 0])
        for t in s["ticks"]:
            np.testing.assert_allclose(t["fraction"], d_fs * t["value"] / p.full_scale, rtol=0, atol=1e-9)


def test_pocket_ohmmeter_plate_draws_its_ohms_arc_reversed_from_the_solved_response():
    """projects/pocket_ohmmeter.yaml, the plate of planner scale and the dossier: one ohms arc for its four
    ranges (centres a decade apart), reversed (0 ohm at full deflection, infinity at rest), non-linear
    (the centre at half deflection, D = R_c / (R_c + R) of a series ohmmeter [1] to within the crowbar's
    leakage), every tick on the solved nominal response, no two labels or a label and a mark overlapping."""
    from planner import ohms
    from planner.cli import _plate

    design = ohms.zeroed_design(build(load(ROOT / "projects" / "pocket_ohmmeter.yaml")))
    result = _plate(design)
    scales = scale_json(result)["scales"]
    (arc,) = [s for s in scales if s["unit"] == "ohm"]
    assert arc["positions"] == ["R 20 ohm", "R 200 ohm", "R 2 kohm", "R 20 kohm"]
    ticks = [t for t in arc["ticks"] if t["value"] is not None]
    values = np.array([t["value"] for t in ticks])
    fractions = np.array([t["fraction"] for t in ticks])
    order = np.argsort(values)
    assert np.all(np.diff(fractions[order]) < 0)  # reversed: more ohms, less deflection
    assert fractions[values == 0.0] == pytest.approx(1.0, abs=1e-9)
    eng = Engine(design)
    scale = ohms.Scale(eng, ohms.parts_of(eng, "R 20 ohm"))
    # each tick where the solved nominal response puts it (planner.ohms.Scale; interpolation to 1e-9)
    np.testing.assert_allclose(fractions, scale.deflection(values), atol=1e-9)
    rc = scale.center_ohm
    # the series ohmmeter's closed form [1] to within the crowbar's leakage across R_x: 1e-3 of the scale
    np.testing.assert_allclose(fractions, rc / (rc + values), atol=1e-3)
    texts = [t for t in result.plate.art if isinstance(t, Text)]
    boxes = [text_box(t) for t in texts]
    for (a, ba), (b, bb) in itertools.combinations(zip(texts, boxes), 2):
        assert separated(ba, bb), f"labels {a.text!r} and {b.text!r} overlap"
    marks = [list(m.points) if isinstance(m, Poly) else [(m.x1, m.y1), (m.x2, m.y2)]
             for m in result.plate.art if isinstance(m, (Poly, Line))]
    for t, box in zip(texts, boxes):
        for m in marks:
            assert separated(box, m), f"label {t.text!r} crosses a mark"
