"""The dossier's restoration section (from readings) and its scale plate, both computed by the command.

The dossier renders what the command computed: the diagnosis of ``planner diagnose`` (its
JSON object) and the plate of ``planner scale``. The checks compare the PDF's text with
those commands' own results, and the module graph with the rule that outputs do not
compute.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from pypdf import PdfReader

from planner import cli
from planner.design import build
from planner.diagnose import diagnose, diagnosis_json
from planner.dossier import restoration as rs, scaleplate
from planner.dossier.text import SECTION_TITLES
from planner.project import load
from planner.scale import fit_scale, scale_project
from planner.dossier.text import value_text

ROOT = Path(__file__).resolve().parents[1]
WORN = ROOT / "projects" / "worn_multimeter.yaml"
READINGS = ROOT / "projects" / "worn_multimeter_readings.csv"
SAMPLES = 100


def _text(pdf: Path) -> str:
    return " ".join(" ".join(pg.extract_text() or "" for pg in PdfReader(str(pdf)).pages).split())


def _outline(pdf: Path) -> list[str]:
    reader = PdfReader(str(pdf))
    return [re.sub(r"^(\d+|[A-Z])\s+", "", item.title) for item in reader.outline if not isinstance(item, list)]


@pytest.fixture(scope="module")
def with_readings(tmp_path_factory):
    out = tmp_path_factory.mktemp("worn") / "worn.pdf"
    code = cli.main(["dossier", str(WORN), "--readings", str(READINGS), "-o", str(out), "--samples", str(SAMPLES),
                     "--quiet", "--date", "2026-12-01"])
    assert code == 0
    return out


def test_restoration_section_renders_the_diagnosis(with_readings):
    d = diagnosis_json(diagnose(load(WORN), str(READINGS)))
    text = _text(with_readings)
    assert "R Restoration" in text and f"Diagnosis from {len(d['readings'])} readings" in text
    # the parts the diagnosis calls drifted, in its order, marked as such
    drifted = [s["part"] for s in d["suspects"] if s["drifted"]]
    assert drifted, "the example's readings show drifted parts"
    at = [text.index(f"{p} ") for p in drifted]
    assert at == sorted(at)
    assert text.count("DRIFTED") == len(drifted)
    for s in d["suspects"]:
        assert f"{s['change_pct']:+.1f} %" in text
    for r in d["replacements"]:  # every replacement with the values to fit
        fit = " + ".join(value_text(q["value_ohm"], "ohm") for q in r["parts"] if not q.get("trimmer"))
        assert f"{r['part']} {value_text(r['nominal_ohm'], 'ohm')}" in text and fit in text, (r, fit)
    for q in d["positions"]:
        assert f"{q['error_now_pct']:+.2f} %" in text and f"{q['error_after_pct']:+.2f} %" in text
    assert "Residual" in text and ("Verdict: restorable" in text) == d["requirements_met"]
    assert "IEC 61010-1" in text


def test_outline_places_restoration_after_the_summary_and_the_plate_before_methods(with_readings):
    titles = _outline(with_readings)
    i = titles.index("Summary")
    assert titles[i + 1] == rs.TITLE
    assert [t for t in titles if t != rs.TITLE] == list(SECTION_TITLES)
    assert titles.index(scaleplate.TITLE) == titles.index("Methods and assumptions") - 1


def test_without_readings_there_is_no_restoration_section(tmp_path):
    out = tmp_path / "worn.pdf"
    assert cli.main(["dossier", str(WORN), "-o", str(out), "--samples", str(SAMPLES), "--quiet"]) == 0
    titles = _outline(out)
    assert titles == list(SECTION_TITLES)  # the scale plate is always there, restoration only with readings
    text = _text(out)
    assert "Restoration" not in text and "Scale plate" in text


def test_plate_section_shows_the_commands_plate(with_readings):
    result = scale_project(build(load(WORN)))
    text = _text(with_readings)
    k = fit_scale(result.plate, furniture=False, max_width_pt=scaleplate.FRAME_WIDTH,
                  max_height_pt=scaleplate.FRAME_HEIGHT * scaleplate.DRAWING_SHARE)
    assert f"Shown at {100 * k:.0f} % of actual size" in text
    assert f"scale radius {result.plate.radius_mm:g} mm" in text
    scale_json = json.loads(json.dumps(__import__("planner.scale", fromlist=["scale_json"]).scale_json(result)))
    labels = [t["label"] for s in scale_json["scales"] for t in s["ticks"] if t["label"]]
    assert labels and all(lab in text for lab in labels)  # every labelled tick of the JSON is on the page
    for c in result.checks:
        assert f"{c.full_scale_fraction:.7f}" in text


def test_bad_readings_write_nothing(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("position,applied,reading\n2.5 V,2.5,abc\n")
    out = tmp_path / "x.pdf"
    assert cli.main(["dossier", str(WORN), "--readings", str(bad), "-o", str(out), "--quiet"]) == 2
    assert not out.exists()
    # nor may the dossier replace the readings file
    assert cli.main(["dossier", str(WORN), "--readings", str(bad), "-o", str(bad), "--quiet"]) == 2
    assert bad.read_text().startswith("position,applied,reading")


def test_library_call_without_plate_says_so(tmp_path):
    from planner.dossier import build_dossier

    out = build_dossier(load(WORN), tmp_path / "lib.pdf", samples=SAMPLES)
    assert "Scale plate not computed" in _text(out)


def test_sections_only_render():
    # the restoration and plate sections import no analysis: they lay out what the command computed
    from test_architecture import import_graph

    g = import_graph()
    for mod in ("planner.dossier.restoration", "planner.dossier.scaleplate"):
        bad = [t for t in g.successors(mod) if t.startswith(("planner.diagnose", "planner.engine", "planner.solve",
                                                             "planner.scale.solved"))]
        assert not bad, (mod, bad)
