"""Tests of the PDF design dossier (planner.dossier).

Every example project in projects/ is built once (modest Monte Carlo sample
count) and its PDF is checked: text extracted with pypdf and with pdftotext
holds every section heading, every position, every designator and the
cautions; pdftoppm renders every page and no page is blank; two builds give the
same bytes; a failed build leaves nothing behind.
"""

from __future__ import annotations

import csv
import io
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from pypdf import PdfReader

from planner.dossier import build_dossier
from planner.dossier import layout, schematic as sch, sections
from planner.dossier.text import GENERAL_CAUTIONS, SECTION_TITLES, is_hazardous, value_text
from planner.errors import UsageError
from planner.model import Contact, MovementElement, NetworkSpec, Position, Resistor
from planner.project import load

ROOT = Path(__file__).resolve().parents[1]
PROJECTS = sorted((ROOT / "projects").glob("*.yaml"))
SAMPLES = 200


def _norm(text: str) -> str:
    return " ".join(text.split())


#: Projects whose full analysis takes long (the misrange analysis of the sized
#: ten-position multimeter solves hundreds of diode-clamped cases): marked slow,
#: still run in CI, skipped locally with -m "not slow".
SLOW = {"bench_multimeter"}
STEMS = [pytest.param(p.stem, marks=pytest.mark.slow) if p.stem in SLOW else p.stem for p in PROJECTS]
_BUILT: dict = {}


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """Build an example project once per module: stem -> (spec, pdf path, csv path, designators)."""

    def get(stem: str):
        if stem not in _BUILT:
            spec = load(ROOT / "projects" / f"{stem}.yaml")
            folder = tmp_path_factory.mktemp(stem)
            pdf = build_dossier(spec, folder / f"{stem}.pdf", bom_path=folder / f"{stem}-bom.csv", samples=SAMPLES)
            _BUILT[stem] = (spec, pdf, folder / f"{stem}-bom.csv", _designators(spec))
        return _BUILT[stem]

    yield get
    _BUILT.clear()


def _designators(spec) -> list[str]:
    from planner.design import build

    return [e.name for e in build(spec).net.elements]


def _positions(spec) -> list[str]:
    from planner.design import build

    return [p.name for p in build(spec).net.positions]


def _check_text(text: str, spec, designators) -> None:
    flat = _norm(text)
    for title in SECTION_TITLES:
        assert title in flat, f"heading {title!r} missing"
    for name in _positions(spec):
        assert f"Position {name}" in flat, f"position {name!r} missing"
    words = set(re.findall(r"[A-Za-z_]+\d+", flat))
    for d in designators:
        assert d in words, f"designator {d} missing"
    for title, _ in GENERAL_CAUTIONS:
        assert _norm(title) in flat, f"caution {title!r} missing"
    assert "Verify by test before use" in flat
    assert "not a certification" in flat
    assert "IEC 61010-1" in flat
    assert spec.title in flat
    assert (spec.revision or "n/a") in flat


@pytest.mark.parametrize("stem", STEMS)
def test_pypdf_text_has_every_heading_position_designator_and_caution(built, stem):
    spec, pdf, _, designators = built(stem)
    reader = PdfReader(str(pdf))
    text = "\n".join(page.extract_text() or "" for page in reader.pages)
    _check_text(text, spec, designators)
    # the outline lists the sections in order, the safety cautions before any computed number
    top = [item for item in reader.outline if not isinstance(item, list)]
    titles = [re.sub(r"^(\d+|A)\s+", "", item.title) for item in top]
    assert titles == list(SECTION_TITLES)
    pages = [reader.get_destination_page_number(item) for item in top]
    assert pages == sorted(pages) and pages[0] < pages[1]


@pytest.mark.parametrize("stem", STEMS)
def test_pdftotext_text_has_every_heading_position_designator_and_caution(built, stem):
    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    spec, pdf, _, designators = built(stem)
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True,
                          text=True).stdout
    _check_text(text, spec, designators)


@pytest.mark.parametrize("stem", STEMS)
def test_every_page_renders_and_none_is_blank(built, stem, tmp_path):
    if shutil.which("pdftoppm") is None:
        pytest.skip("pdftoppm (poppler-utils) is not installed")
    from PIL import Image

    _, pdf, _, _ = built(stem)
    n_pages = len(PdfReader(str(pdf)).pages)
    subprocess.run(["pdftoppm", "-png", "-r", "30", str(pdf), str(tmp_path / "page")], check=True)
    pngs = sorted(tmp_path.glob("page-*.png"))
    assert len(pngs) == n_pages
    for png in pngs:
        img = np.asarray(Image.open(png).convert("L"), dtype=float)
        h = img.shape[0]
        # the running head ends 15 mm and the foot starts 13 mm from the edges of a 297 mm page
        body = img[int(h * 17 / 297): int(h * (297 - 15) / 297), :]
        assert (body < 200).sum() > 50, f"{png.name} has nothing below its running head"


@pytest.mark.parametrize("stem", STEMS)
def test_bom_csv_lists_every_element(built, stem):
    spec, pdf, csv_path, designators = built(stem)
    assert csv_path.exists() and sorted(p.name for p in pdf.parent.iterdir()) == sorted([pdf.name, csv_path.name])
    rows = list(csv.DictReader(io.StringIO(csv_path.read_text(encoding="utf-8"))))
    assert sorted(r["designator"] for r in rows) == sorted(designators)
    for r in rows:
        if r["kind"] == "resistor":
            assert float(r["value_si"]) > 0
            assert float(r["power_rated_w"]) > 0


def test_two_builds_are_byte_identical(tmp_path):
    import os
    import sys

    for path in [ROOT / "projects" / "bench_ammeter.yaml"]:
        a = build_dossier(load(path), tmp_path / "a.pdf", bom_path=tmp_path / "a.csv", samples=SAMPLES).read_bytes()
        # the second build in a fresh interpreter with another hash seed (set and dict orders differ)
        code = ("import sys; from planner.project import load; from planner.dossier import build_dossier; "
                f"build_dossier(load(sys.argv[1]), sys.argv[2], bom_path=sys.argv[2][:-4] + '.csv', samples={SAMPLES})")
        env = dict(os.environ, PYTHONHASHSEED="12345")
        subprocess.run([sys.executable, "-c", code, str(path), str(tmp_path / "b.pdf")], check=True, env=env,
                       cwd=ROOT)
        assert a == (tmp_path / "b.pdf").read_bytes(), f"{path.name}: two builds differ"
        assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()


def test_date_comes_from_the_argument_or_the_project(tmp_path):
    spec = load(ROOT / "projects" / "bench_ammeter.yaml")
    pdf = build_dossier(spec, tmp_path / "d.pdf", date="2031-02-03", samples=20)
    text = _norm("\n".join(p.extract_text() for p in PdfReader(str(pdf)).pages[:1]))
    assert "2031-02-03" in text and spec.date not in text
    assert not (tmp_path / "d.csv").exists()  # the CSV only when named
    with pytest.raises(UsageError):
        build_dossier(spec, tmp_path / "e.pdf", date="03/02/2031", samples=20)
    with pytest.raises(UsageError):
        build_dossier(spec, tmp_path / "e.pdf", date="2031-02-30", samples=20)
    assert not (tmp_path / "e.pdf").exists()


def test_failed_build_leaves_no_file_and_keeps_an_existing_one(tmp_path, monkeypatch):
    spec = load(ROOT / "projects" / "bench_ammeter.yaml")

    def broken(ctx):
        raise RuntimeError("section builder failed")

    monkeypatch.setattr(sections, "misrange", broken)
    out = tmp_path / "new.pdf"
    with pytest.raises(RuntimeError, match="section builder failed"):
        build_dossier(spec, out, bom_path=out.with_suffix(".csv"), samples=20)
    assert not out.exists() and not out.with_suffix(".csv").exists()
    old = tmp_path / "old.pdf"
    old.write_bytes(b"previous dossier")
    old.with_suffix(".csv").write_text("previous table")
    with pytest.raises(RuntimeError):
        build_dossier(spec, old, bom_path=old.with_suffix(".csv"), samples=20)
    assert old.read_bytes() == b"previous dossier"
    assert old.with_suffix(".csv").read_text() == "previous table"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["old.csv", "old.pdf"]  # no temporary files left


def test_an_analysis_that_raises_is_reported_in_its_section(tmp_path, monkeypatch):
    import planner.faults

    def failing(spec, **kwargs):
        raise RuntimeError("fault analysis exploded")

    monkeypatch.setattr(planner.faults, "faults_project", failing)
    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    pdf = build_dossier(spec, tmp_path / "x.pdf", samples=20)
    text = _norm("\n".join(p.extract_text() for p in PdfReader(str(pdf)).pages))
    assert "fault analysis exploded" in text
    assert "Misrange matrix" in text and "Fault analysis not available" in text


def test_the_matrix_beside_the_check_gives_the_same_dossier_context():
    """The misrange matrix computed in a child beside the check equals the one computed after it."""
    from jsontree import assert_same_json

    from planner.dossier import gather

    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    beside = gather(spec, samples=20, parallel=True)
    after = gather(spec, samples=20, parallel=False)
    assert beside.errors == after.errors == {}
    assert_same_json(beside.faults, after.faults)
    assert_same_json(beside.check, after.check)


def test_positions_checked_by_the_second_core_give_the_same_check(monkeypatch):
    """The second core, its matrix done, checks positions from the last while this process checks them
    from the first: the check is the same, bit for bit, as the check done in one process. The matrix
    is made instant and this process slow, so that the second core surely takes some positions."""
    import time

    from jsontree import assert_same_json

    import planner.faults
    from planner.design import build
    from planner.dossier import gather

    design = build(load(ROOT / "projects" / "bench_multimeter.yaml"))
    monkeypatch.setattr(planner.faults, "faults_project", lambda design, parallel=None: {"positions": []})
    here = []

    def slow(message):
        if message.endswith("nominal, linearity, temperature"):
            here.append(message)
            time.sleep(0.5)

    beside = gather(design, samples=50, parallel=True, progress=slow)
    n_here = len(here)
    after = gather(design, samples=50, parallel=False)
    assert beside.errors == after.errors == {}
    assert 0 < n_here < len(design.net.positions)  # some positions were checked on the second core
    assert_same_json(beside.check, after.check)


def test_the_plate_made_beside_the_check_is_the_one_made_here():
    """The scale plate, made after the matrix in its child, equals the plate made in this process; a
    plate that raises there is made again here, so that its exception is raised as without a child."""
    from planner.cli import _dossier_plate
    from planner.design import build
    from planner.dossier import gather
    from planner.scale import plate_svg, scale_json

    design = build(load(ROOT / "projects" / "pocket_voltmeter.yaml"))
    beside = gather(design, samples=20, parallel=True, plate=lambda: _dossier_plate(design))
    after = gather(design, samples=20, parallel=False, plate=lambda: _dossier_plate(design))
    assert beside.plate is not None and not isinstance(beside.plate, str)
    assert scale_json(beside.plate) == scale_json(after.plate)
    assert plate_svg(beside.plate.plate, title="t") == plate_svg(after.plate.plate, title="t")

    calls = []

    def fails_once_made_anywhere():
        calls.append(os.getpid())
        raise RuntimeError("plate exploded")

    with pytest.raises(RuntimeError, match="plate exploded"):
        gather(design, samples=20, parallel=True, plate=fails_once_made_anywhere)
    assert calls == [os.getpid()]  # raised here; the child's attempt is not seen by this process


def test_the_first_pass_lays_out_without_drawing_and_changes_no_byte(tmp_path, monkeypatch):
    """The pass that only finds the pages is not drawn: the PDF is the one drawn in every pass."""
    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    fast = build_dossier(spec, tmp_path / "fast.pdf", samples=20).read_bytes()
    monkeypatch.setattr(layout.DossierDoc, "draw_first_pass", True)
    full = build_dossier(spec, tmp_path / "full.pdf", samples=20).read_bytes()
    assert fast == full


def test_shared_parses_and_line_breaks_change_no_byte(tmp_path, monkeypatch):
    """Paragraphs of one text and style share reportlab's parse and line breaks: the same PDF as each its own."""
    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    monkeypatch.setattr(layout.Para, "_kept", {})
    shared = build_dossier(spec, tmp_path / "shared.pdf", samples=20).read_bytes()
    assert any(k[0] == "wrap" for k in layout.Para._kept)  # the sharing was used
    monkeypatch.setattr(layout.Para, "share", False)
    monkeypatch.setattr(layout.Para, "_kept", {})
    alone = build_dossier(spec, tmp_path / "alone.pdf", samples=20).read_bytes()
    assert not layout.Para._kept
    assert shared == alone


def test_a_paragraph_asked_again_at_a_width_breaks_as_a_fresh_one():
    """The kept line breaks equal reportlab's own at every width, asked in any order."""
    from reportlab.platypus import Paragraph

    text = "A fuse in the ohms feed, a diode crowbar on its own pole behind it; " * 6
    kept = layout.Para(text, layout.STYLES["body"])
    for width in (400.0, 120.0, 400.0, 55.0, 120.0):
        fresh = Paragraph(text, layout.STYLES["body"])
        assert kept.wrap(width, 800.0) == fresh.wrap(width, 800.0)
        assert [line.words if hasattr(line, "words") else line for line in kept.blPara.lines] == \
            [line.words if hasattr(line, "words") else line for line in fresh.blPara.lines]


def test_project_file_is_never_overwritten(tmp_path):
    src = tmp_path / "meter.yaml"
    src.write_text((ROOT / "projects" / "bench_ammeter.yaml").read_text())
    spec = load(src)
    with pytest.raises(UsageError):
        build_dossier(spec, src, samples=20)
    assert src.read_text() == (ROOT / "projects" / "bench_ammeter.yaml").read_text()


def test_the_csv_is_written_only_when_named(tmp_path):
    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    mine = tmp_path / "drawer_diode.csv"  # a file of the user's that happens to share the PDF's stem
    mine.write_text("voltage_v,current_a\n0.6,1e-3\n", encoding="utf-8")
    build_dossier(spec, tmp_path / "drawer_diode.pdf", samples=20)
    assert mine.read_text(encoding="utf-8") == "voltage_v,current_a\n0.6,1e-3\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["drawer_diode.csv", "drawer_diode.pdf"]


def test_pdf_and_csv_are_checked_together_before_anything_is_written(tmp_path):
    src = tmp_path / "meter.csv"  # a project whose file name ends in .csv
    src.write_text((ROOT / "projects" / "pocket_voltmeter.yaml").read_text())
    spec = load(src)
    with pytest.raises(UsageError, match="refusing to overwrite the input file"):
        build_dossier(spec, tmp_path / "meter.pdf", bom_path=src, samples=20)
    with pytest.raises(UsageError, match="named for two outputs"):
        build_dossier(spec, tmp_path / "x.pdf", bom_path=tmp_path / "x.pdf", samples=20)
    with pytest.raises(UsageError, match="the dossier is a PDF: name its output x.pdf"):
        build_dossier(spec, tmp_path / "x.csv", samples=20)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["meter.csv"]


def test_an_invalid_network_is_bad_input_and_writes_nothing(tmp_path):
    from planner.errors import ProjectError

    spec = load(ROOT / "tests" / "bad" / "network" / "floating_node.yaml")
    with pytest.raises(ProjectError, match="is floating"):
        build_dossier(spec, tmp_path / "f.pdf", bom_path=tmp_path / "f.csv", samples=20)
    assert list(tmp_path.iterdir()) == []


def test_overflow_detector_rejects_a_flowable_wider_than_the_frame():
    from reportlab.platypus import Table

    buf = io.BytesIO()
    doc = layout.DossierDoc(buf, title="t", subject="s", creator="c")
    wide = Table([["x" * 10]], colWidths=[layout.FRAME_WIDTH + 40])
    doc.build([wide])
    with pytest.raises(layout.DossierLayoutError):
        doc.check()
    ok = layout.DossierDoc(io.BytesIO(), title="t", subject="s", creator="c")
    ok.build([layout.table(["a", "b"], [["1", "2"]] * 200, [1, 1])])  # splits over pages, fits the width
    ok.check()


def test_ladder_orders_nodes_by_resistance_from_common():
    spec = load(ROOT / "projects" / "pocket_voltmeter.yaml")
    plan = sch._plan(spec, spec.network)
    # common practice: the movement at the bottom, the multiplier string climbing tap by tap
    assert plan["rows"] == ["com", "m_plus", "t1", "t2", "t3", "t4", "t5"]
    assert plan["poles"] == {"plus"}
    spine = plan["columns"][-1]
    assert [e.name for _, _, e in spine] == ["M1", "R1", "R2", "R3", "R4", "R5"]
    d, how, merged = sch.schematic(spec, spec.network, layout.FRAME_WIDTH, 600)
    assert how == "ladder" and not merged
    assert d.width <= layout.FRAME_WIDTH + 1e-6 and d.height <= 600 + 1e-6


def test_ladder_draws_an_ayrton_ring_with_a_fused_pole():
    spec = load(ROOT / "projects" / "bench_ammeter.yaml")
    plan = sch._plan(spec, spec.network)
    rows = plan["rows"]
    # the ring's taps climb by resistance from the common end (Ayrton shunt: smallest part at common)
    ring = [n for n in rows if n in ("com", "t4", "t3", "t2", "t1")]
    assert ring == ["com", "t4", "t3", "t2", "t1"] and rows[0] == "com"
    nodes, elems = plan["feeds"]["fused"]
    assert nodes == ["fused", "a_in"] and [e.name for e in elems] == ["F1"]


def test_series_strings_and_parallel_pairs_are_merged_for_the_drawing():
    r = lambda n, a, b, v: Resistor(n, a, b, v)  # noqa: E731
    elements = (
        MovementElement("M1", "top", "com"),
        r("R1", "top", "x1", 1e3), r("R2", "x1", "x2", 1e3), r("R3", "x2", "tap", 2e3),
        r("R4", "tap", "com", 10.0), r("R5", "tap", "com", 10.0),
        Contact("S1", "plus", "tap", ("A",)), Contact("S2", "plus", "top", ("B",)),
    )
    net = NetworkSpec(elements, (Position("A", "current", 1e-3, ("plus", "com")),
                                 Position("B", "current", 1e-4, ("plus", "com"))))
    spec = load(ROOT / "projects" / "bench_ammeter.yaml")
    plan = sch._plan(spec, net)
    names = sorted(sch._names(e) for col in plan["columns"] for _, _, e in col)
    assert "R1\u2013R3" in names and "R4 || R5" in names
    merged = [e for col in plan["columns"] for _, _, e in col if isinstance(e, sch.Compound)]
    values = sorted(sch._value_of(e) for e in merged)
    np.testing.assert_allclose(values, [5.0, 4e3], rtol=1e-12)  # Ohm's law: series sum, parallel 10 || 10


def test_generic_drawing_for_a_network_off_the_ladder_pattern():
    spec = load(ROOT / "projects" / "bench_ammeter.yaml")
    elements = (
        MovementElement("M1", "a", "com"),
        Resistor("R1", "in", "a", 1e3),
        Contact("S1", "in", "b", ("X",)), Contact("S2", "b", "c", ("X",)),
        Resistor("R2", "c", "a", 1e3),
    )
    net = NetworkSpec(elements, (Position("X", "voltage", 1.0, ("in", "com")),))
    d, how, _ = sch.schematic(spec, net, layout.FRAME_WIDTH, 400)
    assert how != "ladder"
    assert 0 < d.width <= layout.FRAME_WIDTH + 1e-6


def test_value_text_and_hazard_limits():
    assert value_text(8000.0, "ohm") == "8 kohm"
    assert value_text(0.1111, "ohm") == "111.1 mohm"
    assert value_text(float("inf"), "A") == "none"
    # IEC 61010-1:2010, 6.3.1: hazardous live above 70 V DC, 33 V rms or 46.7 V peak
    assert not is_hazardous(70.0) and is_hazardous(70.1)
    assert not is_hazardous(33.0, "sine") and is_hazardous(33.1, "sine")
    assert is_hazardous(-250.0)


@pytest.mark.slow
def test_the_dossier_command_sizes_once_and_renders_without_solving(tmp_path, monkeypatch):
    """``planner dossier`` of the multimeter: one sizing, one Design, no solve while rendering.

    The analyses (check, faults) solve; the rendering only lays their results out
    (the Monte Carlo histogram, test points and acceptance readings come from the
    accuracy check's arrays). Counted by wrapping the sizer, ``planner.design.build``,
    every entry to the solver and the Engine's constructor.
    """
    out = tmp_path / "multimeter.pdf"
    counts = _dossier_counting_solves(monkeypatch, ROOT / "projects" / "bench_multimeter.yaml", out, 50)
    assert out.stat().st_size > 0
    assert counts["size"] == 1 and counts["build"] == 1
    assert counts["solve_analyses"] > 0  # the counter sees the analyses' solves
    assert counts["solve_render"] == 0 and counts["engine_render"] == 0


def _dossier_counting_solves(monkeypatch, project, out, samples: int) -> dict:
    """Run ``planner dossier`` with every sizing, Design build, solver entry and Engine counted.

    Returns the counts: ``size``, ``build``, ``solve_analyses`` and ``solve_render`` (solver
    calls while the analyses run and while the PDF is laid out) and ``engine_render``.
    """
    import planner.design
    import planner.dossier
    import planner.engine
    import planner.sizing.ratings
    import planner.solve
    from planner.cli import main

    counts = {"size": 0, "build": 0, "solve_analyses": 0, "solve_render": 0, "engine_render": 0}
    phase = ["analyses"]

    def counting(key, fn):
        def wrapped(*args, **kwargs):
            counts[key() if callable(key) else key] += 1
            return fn(*args, **kwargs)
        return wrapped

    solve_key = lambda: f"solve_{phase[0]}"  # noqa: E731 - the phase at call time
    monkeypatch.setattr(planner.design, "size", counting("size", planner.design.size))
    monkeypatch.setattr(planner.design, "build", counting("build", planner.design.build))
    for mod in (planner.solve, planner.engine, planner.sizing.ratings):
        monkeypatch.setattr(mod, "solve", counting(solve_key, mod.solve))
    engine_init = planner.engine.Engine.__init__

    def init(self, *args, **kwargs):
        if phase[0] == "render":
            counts["engine_render"] += 1
        engine_init(self, *args, **kwargs)

    monkeypatch.setattr(planner.engine.Engine, "__init__", init)
    render = planner.dossier.render

    def rendering(*args, **kwargs):
        phase[0] = "render"
        try:
            return render(*args, **kwargs)
        finally:
            phase[0] = "analyses"

    monkeypatch.setattr(planner.dossier, "render", rendering)
    assert main(["dossier", str(project), "-o", str(out), "--samples", str(samples)]) == 0
    return counts


def test_acceptance_and_histogram_come_from_the_check(tmp_path):
    """The dossier's expected readings and Monte Carlo errors are the accuracy check's own numbers."""
    from planner.accuracy import check
    from planner.design import build
    from planner.dossier import gather
    from planner.scale import plate_svg, scale_json

    design = build(load(ROOT / "projects" / "pocket_voltmeter.yaml"))
    ctx = gather(design, samples=40, seed=3)
    again = check(design, samples=40, seed=3)
    for name in ctx.position_names():
        arr, ref = ctx.arrays(name), again.position(name)
        # the same seeded builds give the same errors (to the last bit: same solves, same order)
        np.testing.assert_array_equal(arr.mc_error_pct, ref.mc_error_pct)
        q = ctx.check_position(name)
        assert arr.mc_error_pct.shape == (40,)
        assert np.mean(np.abs(arr.mc_error_pct) <= q["class_index"]) == q["yield_fraction"]
        # the acceptance readings at 20 %, 50 %, 100 % are the check's linearity rows
        for frac in (0.2, 0.5, 1.0):
            row = [r for r in q["linearity"] if abs(r["applied"] - frac * q["full_scale"]) < 1e-9 * q["full_scale"]]
            assert arr.reading_at(frac) == row[0]["reading"]


#: Smallest text size on paper [pt]: print legibility, common practice (6 pt is the usual floor for
#: footnotes and drawing annotations read at arm's length).
MIN_PRINT_PT = 6.0
#: A page other than the last of its section carries text at least this far down the frame (a fifth).
MIN_PAGE_FILL = 0.2


def _page_texts(pdf) -> list[list[tuple[float, float, str]]]:
    """Per page: (printed size [pt], height of the baseline above the page's foot [pt], text) of every run.

    The size and the position are those of the text matrix times the current transformation
    matrix (PDF 32000-1:2008, 9.4.4), so text drawn inside a scaled drawing counts at its printed size.
    """
    out = []
    for page in PdfReader(str(pdf)).pages:
        runs = []

        def visit(text, cm, tm, font, size, runs=runs):
            if not text.strip():
                return
            m = [tm[0] * cm[0] + tm[1] * cm[2], tm[0] * cm[1] + tm[1] * cm[3],
                 tm[2] * cm[0] + tm[3] * cm[2], tm[2] * cm[1] + tm[3] * cm[3],
                 tm[4] * cm[0] + tm[5] * cm[2] + cm[4], tm[4] * cm[1] + tm[5] * cm[3] + cm[5]]
            runs.append((size * float(np.hypot(m[2], m[3])), float(m[5]), text.strip()))

        page.extract_text(visitor_text=visit)
        out.append(runs)
    return out


@pytest.mark.parametrize("stem", STEMS)
def test_no_text_is_smaller_than_6_pt(built, stem):
    _, pdf, _, _ = built(stem)
    small = [(i + 1, round(size, 2), text[:30]) for i, runs in enumerate(_page_texts(pdf))
             for size, _, text in runs if size < MIN_PRINT_PT - 1e-6]
    assert not small, f"text below {MIN_PRINT_PT} pt (page, size, text): {small[:10]}"


@pytest.mark.parametrize("stem", STEMS)
def test_no_page_is_less_than_a_fifth_full_but_the_last_of_a_section(built, stem):
    _, pdf, _, _ = built(stem)
    reader = PdfReader(str(pdf))
    starts = {0} | {reader.get_destination_page_number(o) for o in reader.outline if not isinstance(o, list)}
    n = len(reader.pages)
    last_of_section = {p - 1 for p in starts if p > 0} | {n - 1}
    frame_top = layout.PAGE[1] - layout.TOP
    thin = []
    for i, runs in enumerate(_page_texts(pdf)):
        body = [y for _, y, _ in runs if layout.BOTTOM <= y <= frame_top + 1]
        fill = (frame_top - min(body)) / layout.FRAME_HEIGHT if body else 0.0
        if i not in last_of_section and fill < MIN_PAGE_FILL:
            thin.append((i + 1, round(fill, 2)))
    assert not thin, f"pages less than a fifth full inside a section (page, fill): {thin}"


@pytest.mark.slow
def test_misrange_pages_say_each_reason_once_and_nothing_empty(built):
    spec, pdf, _, _ = built("bench_multimeter")
    reader = PdfReader(str(pdf))
    starts = {re.sub(r"^(\d+|A)\s+", "", o.title): reader.get_destination_page_number(o)
              for o in reader.outline if not isinstance(o, list)}
    pages = reader.pages[starts["Misrange matrix"]:starts["Build and acceptance"]]
    text = _norm("\n".join(page.extract_text() or "" for page in pages))
    for reason in {a.reason for a in spec.faults.accept}:
        # once over its failing cases, once in the table of accepted cases; never once per case
        assert text.count(_norm(reason)[:60]) <= 2, reason
    everything = _norm("\n".join(page.extract_text() or "" for page in reader.pages))
    assert "--json" not in everything  # nothing on paper points to a command-line option
    assert not re.search(r"\(0x\)|\b0(\.0+)? W of\b", text)  # no row that says nothing


def test_the_dossier_command_names_every_file_it_writes(tmp_path, capsys):
    from planner.cli import main

    pdf, bom = tmp_path / "v.pdf", tmp_path / "v.csv"
    assert main(["dossier", str(ROOT / "projects" / "pocket_voltmeter.yaml"), "-o", str(pdf), "--bom", str(bom),
                 "--samples", "20", "--quiet"]) == 0
    assert capsys.readouterr().err.splitlines() == [f"wrote {pdf}", f"wrote {bom}"]


TRIMMED = """\
title: Trimmed three-range voltmeter (an invented scenario)
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1, tolerance: 2 %, full_scale_tolerance: 1 %}
ambient: {reference: 23 degC, min: 15 degC, max: 31 degC}
parts:
  resistors: {series: E96, tolerance: 1 %, tempco: 25 ppm/K, power: 0.25 W, max_voltage: 250 V}
voltage: {arrangement: chain, full_scales: [2.5 V, 10 V, 50 V]}
analysis: {trim: true, samples: 50}
"""


def test_a_builder_can_wire_trim_and_probe_from_the_dossier(tmp_path):
    """The builder's pages: a wiring table per deck with its wafer drawing, the calibration
    steps of the check in order, and test points named by the parts' pins; still no text
    under 6 pt and no thin page inside a section."""
    from planner.design import build
    from planner.testpoints import pin_names
    from planner.wiring import wire_switch

    if shutil.which("pdftotext") is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    path = tmp_path / "trimmed.yaml"
    path.write_text(TRIMMED, encoding="utf-8")
    spec = load(path)
    pdf = build_dossier(spec, tmp_path / "trimmed.pdf", samples=50)
    text = _norm(subprocess.run(["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True,
                                text=True).stdout)
    design = build(spec)
    wiring = wire_switch(design.net, design.net.contact_style)
    assert "Switch wiring" in text
    for deck in range(1, wiring.decks + 1):
        assert f"Deck {deck}" in text
        for pole in wiring.deck_poles(deck):
            assert f"pole {pole.pole}: common {pole.common}" in text  # the wafer drawing's label
            for t in pole.contacts:
                assert f"{t.position}: {t.node}" in text  # each terminal drawn with its position and node
    trims = design.sizing.trims
    assert trims  # the sizer planned trimmers for this example
    for t in trims:  # each calibration step, in order, names its position and its trimmer
        assert f"adjust {t.part} (" in text and f"Set the switch to {t.position}" in text
    order = [text.index(f"adjust {t.part} (") for t in trims]
    assert order == sorted(order)
    for node, info in pin_names(design.net).items():  # every node named by its pins in the test points
        assert _norm(f"{node}: {info['name']}")[:30] in text
    runs = _page_texts(pdf)
    assert min(size for page in runs for size, _, _ in page) >= MIN_PRINT_PT - 1e-6


def test_ohms_positions_in_every_section_rendered_without_solving(tmp_path, monkeypatch):
    """``planner dossier`` of the pocket multimeter: each ohms position's page (centre, centre error,
    open-circuit voltage, short-circuit current, the non-linear scale), the zeroing step and the reference
    resistors of the acceptance tests, the ohms arc on the plate; no solve and no Engine while rendering."""
    out = tmp_path / "pocket.pdf"
    counts = _dossier_counting_solves(monkeypatch, ROOT / "projects" / "pocket_ohmmeter.yaml", out, 40)
    assert counts["solve_analyses"] > 0 and counts["solve_render"] == 0 and counts["engine_render"] == 0
    text = _norm("\n".join(p.extract_text() or "" for p in PdfReader(str(out)).pages))
    for name in ("R 20 ohm", "R 200 ohm", "R 2 kohm", "R 20 kohm"):
        assert f"Position {name} \u2013 resistance, centre" in text
    for words in ("Centre (half deflection)", "Centre error (worst case)", "Zero adjustment span",
                  "Open-circuit voltage", "Short-circuit current", "Ohms scale: deflection against the resistance",
                  "error at the centre [% of scale length]", "short the probes and set the zero adjuster (RV1)",
                  "Reference resistors", "ohms (ohms, reversed)", "zero-ohms adjuster"):
        assert words in text, words
    # the acceptance limits of the 20 ohm range at its centre: the arc marks R_c (1/D - 1), so 2.5 % of the scale
    # length either side of D = 1/2 is R_c (1/0.525 - 1) to R_c (1/0.475 - 1) (Lessons in Electric Circuits,
    # Vol. I, ch. 8, "Ohmmeter design"): 18.10 ohm to 22.11 ohm with R_c = 20.00 ohm (4 digits)
    assert "18.10 ohm to 22.11 ohm" in text


def test_worst_case_ties_go_to_the_first_column():
    """Both polarities of a symmetric network peg equally but for rounding: the first column's case is named.

    (Common practice: a table names one representative of equal cases, here the first in the
    matrix's column order, not the one rounding happens to favour.)
    """
    from planner.dossier.sections.common import worst_case

    up = {"stimulus": "max input", "verdict": "pegs", "movement_multiple": 9.62517927843754}
    down = {"stimulus": "max input reversed", "verdict": "pegs", "movement_multiple": 9.625179278437543}
    assert worst_case([up, down]) is up and worst_case([down, up]) is down
    bigger = dict(down, movement_multiple=9.6252)
    assert worst_case([up, bigger]) is bigger
    opens = dict(up, verdict="opens", movement_multiple=1.0)
    assert worst_case([up, bigger, opens]) is opens
