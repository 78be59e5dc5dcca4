"""The design dossier: one PDF a reviewer can approve and a builder can build and test from.

:func:`build_dossier` runs the analyses (sizing where the file asks for it, the
accuracy check, the misrange faults), lays the results out with reportlab's
platypus (:mod:`.layout`, :mod:`.sections`: one module per section), draws the charts and the schematic
as vector graphics (:mod:`.charts`, :mod:`.schematic`) and writes the PDF, and,
when asked for by name, the bill of materials as CSV, atomically and together.

The PDF is byte-identical for the same input: reportlab's invariant mode, the
date from the project (or the caller), never the clock, standard fonts only,
seeded Monte Carlo, and every ordering by name or computed value.

An analysis that raises does not stop the dossier: its section prints the
error. A failure of the dossier itself (a section builder, the layout) raises
and leaves no file behind; an existing file at the output path is untouched.
An explicit network that fails validation is bad input (exit 2), not a section
error: nothing is written.

Examples
--------
>>> from planner.project import load                                   # doctest: +SKIP
>>> build_dossier(load("projects/pocket_voltmeter.yaml"), "out.pdf")    # doctest: +SKIP
PosixPath('out.pdf')
"""

from __future__ import annotations

import csv as _csv
import datetime as _dt
import hashlib
import io
import math
import re
from pathlib import Path
from typing import Callable

from ..design import Design, as_design
from ..errors import PlannerError, UsageError
from .. import accuracy, faults
from ..background import Deal, beside
from ..sizing import sizing_json
from ..wiring import choose_style, wire_switch

# The layout (reportlab) is imported where it is used, not here: the dossier starts its misrange
# matrix on a second core first, and the import is made on the first core while it runs.

__all__ = ["build_dossier", "gather", "render", "bom_csv", "DossierLayoutError"]


def __getattr__(name: str):
    if name == "DossierLayoutError":
        from .layout import DossierLayoutError

        return DossierLayoutError
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}$")


class _NotMade:
    """Stands for a plate that raised: in the second core's process (made again in this one), or in
    this one while it waited (``raised``: raised again once the check is done)."""

    def __init__(self, raised: BaseException | None = None):
        self.raised = raised


class _Share:
    """The check's positions shared with the second core (``share`` of :func:`planner.accuracy.check`).

    ``idle()`` is called once this process has no position left, before it waits
    for the second core's (it makes the scale plate there if still free).
    """

    def __init__(self, deal: Deal, pending, idle: Callable[[], None]):
        self.take = deal.front
        self._pending = pending
        self._idle = idle

    def rest(self) -> dict:
        """The positions the second core checked (none where its work failed: they are checked here)."""
        self._idle()
        got, error = self._pending.result()
        return got[2] if error is None else {}


def _error_text(exc: BaseException) -> str:
    if isinstance(exc, PlannerError):
        return exc.one_line()
    return f"{type(exc).__name__}: {' '.join(str(exc).split())}"


def _date(spec, date) -> tuple[str, str]:
    if date is not None:
        if isinstance(date, (_dt.date, _dt.datetime)):
            return date.strftime("%Y-%m-%d"), "caller"
        text = str(date).strip()
        if not _DATE.match(text):
            raise UsageError(f"the dossier date must be written YYYY-MM-DD, e.g. 2026-11-20, not {text!r}")
        try:
            _dt.date.fromisoformat(text)
        except ValueError:
            raise UsageError(f"{text!r} is not a calendar date; write it as YYYY-MM-DD") from None
        return text, "command line"
    if getattr(spec, "date", None):
        return str(spec.date), "project file"
    return "undated", "project file (no date given: add 'date: YYYY-MM-DD')"


def gather(design, *, date=None, samples: int | None = None, seed: int | None = None,
           progress: Callable[[str], None] | None = None, parallel: bool | None = None,
           plate: Callable[[], object] | None = None) -> Context:
    """Run the analyses of a dossier on one design; an analysis that fails is kept as text.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec is
        built into one, and a project whose network cannot be built or checked
        raises here, as every command does).
    date : str or datetime.date, optional
        The dossier's date (YYYY-MM-DD); the project's ``date`` by default.
    samples, seed : int, optional
        Monte Carlo builds and seed; the project's ``analysis`` settings by default.
    progress : callable(str), optional
        Receives a short message before each step.
    parallel : bool, optional
        Run the misrange matrix in a child process beside the check (True), in
        this process after it (False), or the first where a second core allows
        it (None, :func:`planner.background.beside`). The second core, its
        matrix done, checks positions from the last while this process checks
        them from the first (:class:`planner.background.Deal`). The results are
        the same.
    plate : callable, optional
        Makes the scale plate (the command's own: the plate, or its error text);
        called once, by whichever process is free first: this one once its share
        of the check's positions is done, or the one that computes the matrix
        (the second core's) once the matrix is. Its result is ``ctx.plate``. Where it raises in the other
        process, it is called again here, so that what it raises is raised as it
        would be without a second process.

    Returns
    -------
    Context
    """
    from .. import __version__

    say = progress or (lambda message: None)
    design = as_design(design)
    spec = design.spec
    text, source = _date(spec, date)
    sha = hashlib.sha256(spec.text.encode("utf-8")).hexdigest() if spec.text is not None else None
    # the misrange matrix on a second core while this one runs the check (the same answer, computed
    # here when there is no second core); then the scale plate by whichever process is free first, and
    # the check's last positions by the second core once its matrix is done (planner.background.Deal)
    plate_deal = Deal(1) if plate is not None else None
    n_samples = int(spec.analysis.samples if samples is None else samples)
    n_seed = int(spec.analysis.seed if seed is None else seed)
    positions = Deal(len(design.net.positions) if design.net is not None else 0)

    def plate_if_free(end: str):
        """The plate, if this process is the first to ask; an exception is kept, to be raised in this one."""
        if plate_deal is None or getattr(plate_deal, end)() is None:
            return None
        try:
            return plate()
        except Exception as exc:  # noqa: BLE001 - raised in this process once the check is done
            return _NotMade(exc if end == "front" else None)

    def matrix_plate_positions():
        found = faults.faults_project(design, parallel=parallel)
        made = plate_if_free("back")
        checked = accuracy.check_positions(design, positions.back, samples=n_samples, seed=n_seed)
        return found, made, checked

    here = []  # the plate, when made in this process

    def idle():
        here.append(plate_if_free("front"))

    with beside(matrix_plate_positions, _error_text, parallel=parallel) as beside_work:
        from .sections import Context  # the layout's import, made while the matrix runs

        ctx = Context(spec=spec, date=text, version=__version__, sha256=sha, date_source=source,
                      samples=n_samples, seed=n_seed)
        ctx.net = design.net
        if design.sizing is not None:
            ctx.sizing = sizing_json(design.sizing)
            ctx.cautions += list(ctx.sizing.get("cautions", []))
        say("dossier: accuracy check")
        try:
            ctx.accuracy = accuracy.check(design, samples=ctx.samples, seed=ctx.seed,
                                          progress=(lambda m: say(f"dossier: check {m}")),
                                          share=_Share(positions, beside_work, idle))
            ctx.check = ctx.accuracy.json
        except Exception as exc:  # noqa: BLE001 - shown in the dossier
            positions.close()  # the second core starts no further position
            ctx.errors["check"] = _error_text(exc)
        if not here:
            idle()
        say("dossier: misrange faults")
        got, error = beside_work.result()
    ctx.faults, made = (got[0], got[1]) if error is None else (None, None)
    if error is not None:
        ctx.errors["faults"] = error
    if plate is not None:  # made here or beside; made (again) here where it raised or was lost
        made = here[0] if here[0] is not None else made
        if isinstance(made, _NotMade) and made.raised is not None:
            raise made.raised
        ctx.plate = plate() if made is None or isinstance(made, _NotMade) else made
    if design.net is not None:  # the switch wiring: pure, computed here so the sections only draw it
        style, source = choose_style(design.net.contact_style, (ctx.faults or {}).get("contact_style_needed"))
        ctx.wiring = wire_switch(design.net, style, style_source=source)
    extra = [c for c in faults.cautions_for(spec) if c not in ctx.cautions]
    ctx.cautions += extra
    return ctx


def render(ctx: Context, *, progress: Callable[[str], None] | None = None, plate=None,
           diagnosis: dict | None = None, readings: str | None = None) -> bytes:
    """Lay the dossier out and return the PDF bytes.

    Parameters
    ----------
    ctx : Context
        What :func:`gather` found.
    plate : planner.scale.ScaleResult or str, optional
        The scale plate the command computed (:func:`planner.scale.scale_project`),
        or the error text when it could not be made; rendered after the build
        section (:mod:`.scaleplate`).
    diagnosis : dict, optional
        The diagnosis of the meter from its readings, as
        :func:`planner.diagnose.diagnosis_json` gives it; rendered as the
        restoration section after the summary (:mod:`.restoration`).
    readings : str, optional
        The readings file's name, for the restoration section's text.

    Raises
    ------
    DossierLayoutError
        When a flowable does not fit its frame.
    """
    from reportlab.platypus.doctemplate import LayoutError

    from . import layout, restoration as restoration_section, scaleplate, sections

    say = progress or (lambda message: None)
    spec = ctx.spec
    story = []
    units = {q.name: q.kind.unit for q in ctx.net.positions} if ctx.net is not None else {}
    after = {  # the sections of the results the command computed, each after its neighbour
        "summary": lambda: restoration_section.restoration(diagnosis, readings=readings, units=units),
        "build": lambda: scaleplate.scale_plate(ctx.heading(scaleplate.TITLE), plate),
    }
    for name in sections.SECTIONS:
        say(f"dossier: {name}")
        story += getattr(sections, name)(ctx)
        if name in after:
            story += after[name]()
    buf = io.BytesIO()
    head = f"{spec.title} \u2013 revision {spec.revision or 'n/a'}"
    foot = f"planner {ctx.version}  \u00b7  {ctx.date}  \u00b7  file SHA-256 {(ctx.sha256 or 'n/a')[:16]}"
    doc = layout.DossierDoc(buf, title=f"{spec.title} \u2013 design dossier", subject="design dossier",
                            creator=f"planner {ctx.version}", author="", head_text=head, foot_text=foot)
    say("dossier: layout")
    try:
        doc.build_dossier(story)
    except LayoutError as exc:
        raise layout.DossierLayoutError(str(exc)) from exc
    doc.check()
    return buf.getvalue()


def _csv_num(x) -> str:
    if x is None:
        return ""
    x = float(x)
    if not math.isfinite(x):
        return ""
    return f"{x:.6g}"


def bom_csv(ctx: Context) -> str:
    """The bill of materials as CSV text (SI units, unit in each column's name)."""
    from . import sections

    out = io.StringIO()
    w = _csv.writer(out, lineterminator="\n")
    w.writerow(["designator", "kind", "value", "value_si", "series", "tolerance_pct", "tempco_ppm_per_k",
                "power_rated_w", "power_required_w", "voltage_rated_v", "voltage_required_v", "notes"])
    if ctx.net is not None:
        for r in sections.bom_rows(ctx):
            w.writerow([r["designator"], r["kind"], r["value"], _csv_num(r["value_si"]), r["series"],
                        _csv_num(r["tolerance_pct"]), _csv_num(r["tempco_ppm_per_k"]), _csv_num(r["power_rated_w"]),
                        _csv_num(r["power_required_w"]), _csv_num(r["voltage_rated_v"]),
                        _csv_num(r["voltage_required_v"]), "; ".join(r["notes"])])
    return out.getvalue()


def build_dossier(design, out_path, *, bom_path=None, date=None,
                  progress: Callable[[str], None] | None = None, samples: int | None = None,
                  seed: int | None = None, plate=None, diagnosis: dict | None = None, readings=None,
                  protect=()) -> Path:
    """Build the design dossier of a project and write it atomically.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec,
        :func:`planner.project.load`, is built into one).
    out_path : str or path-like
        The PDF to write.
    bom_path : str or path-like, optional
        Where to write the bill of materials as CSV as well. Written only when
        given: the planner never picks a file name of its own beside the PDF, so
        it cannot replace a file the caller did not name (the PDF holds the bill
        of materials in any case).
    date : str or datetime.date, optional
        The date printed on the dossier (YYYY-MM-DD); the project's ``date`` by
        default. The clock is never read, so the same input gives the same bytes.
    progress : callable(str), optional
        Receives a short message before each step.
    samples, seed : int, optional
        Monte Carlo builds and seed; the project's ``analysis`` settings by default.
    plate, diagnosis, readings : optional
        Results the command computed for the scale-plate and restoration
        sections (see :func:`render`); the dossier renders them and computes
        neither. ``plate`` may be a callable that computes it: it is called
        by whichever core is free first, this one after the check or the
        second after the misrange matrix (:func:`gather`).
    protect : sequence of path-like
        More inputs never to be overwritten (the readings file).

    Returns
    -------
    pathlib.Path
        The PDF written.

    Raises
    ------
    UsageError
        For a bad date, or an output refused by :func:`planner.fsio.check_targets`
        (the project file itself, a device or other non-regular file, a missing
        folder, the PDF and the CSV being one file). Both outputs are checked
        before anything is computed, and written together by
        :func:`planner.fsio.write_all`: nothing is written unless both can be.
    ProjectError
        For an explicit network that fails :func:`planner.network.validate`
        (a floating node, an island, ...), as ``check`` and ``faults`` report it;
        nothing is written.
    DossierLayoutError
        When the layout fails (a bug; nothing is written).
    """
    from ..fsio import check_targets, write_all

    spec = design.spec if isinstance(design, Design) else design
    out = Path(out_path)
    protect = ([spec.path] if getattr(spec, "path", None) else []) + list(protect)
    if out.suffix.lower() == ".csv":
        raise UsageError(f"the dossier is a PDF: name its output {out.with_suffix('.pdf').name} instead of "
                         f"{out.name}, and give --bom {out.name} for the bill of materials as CSV")
    outputs = [out] + ([Path(bom_path)] if bom_path is not None else [])
    check_targets(outputs, protect)
    _date(spec, date)
    design = as_design(design)  # a project whose network cannot be built or checked is bad input
    ctx = gather(design, date=date, samples=samples, seed=seed, progress=progress,
                 plate=plate if callable(plate) else None)
    pdf = render(ctx, progress=progress, plate=ctx.plate if callable(plate) else plate, diagnosis=diagnosis,
                 readings=None if readings is None else str(readings))
    items = [(out, pdf)] + ([(bom_path, bom_csv(ctx))] if bom_path is not None else [])
    write_all(items, protect=protect)
    return out
