"""The dossier's scale-plate section: the plate of ``planner scale``, scaled to the page, rendered only.

The command computes the plate (:func:`planner.scale.scale_project`: ticks placed
by the solved nominal response) and hands the result to the dossier; this module
draws the dial cropped to its cutting line and shrunk to the frame
(:func:`planner.scale.plate_drawing`), lists the scales with their ranges, and
prints the solver's check of the linear scale. The printable 1:1 plate is
``planner scale FILE -o PLATE.pdf``.
"""

from __future__ import annotations

from reportlab.platypus import PageBreak

from ..scale import fit_scale, plate_drawing
from ..scale.plate import scale_lines
from .layout import FRAME_HEIGHT, FRAME_WIDTH, esc, note_box, p, table

__all__ = ["TITLE", "scale_plate"]

TITLE = "Scale plate"
#: Largest share of the frame's height the drawing may take.
DRAWING_SHARE = 0.5


def scale_plate(heading, result) -> list:
    """The section's flowables.

    Parameters
    ----------
    heading : Flowable
        The section heading (numbered by the dossier).
    result : planner.scale.ScaleResult, str or None
        The plate the command computed; the error text when it could not be made;
        None when the caller computed none (a library call without ``plate=``).
    """
    out = [heading]
    if result is None:
        out.append(note_box("Scale plate not computed", [esc(
            "The caller passed no plate to the dossier; planner dossier computes it (or pass "
            "plate=planner.scale.scale_project(design) to build_dossier).")]))
        return out + [PageBreak()]
    if isinstance(result, str):
        out.append(note_box("Scale plate not available", [esc(f"The plate could not be laid out: {result}"),
                                                          "The other sections are unaffected."]))
        return out + [PageBreak()]
    plate = result.plate
    k = fit_scale(plate, furniture=False, max_width_pt=FRAME_WIDTH, max_height_pt=FRAME_HEIGHT * DRAWING_SHARE)
    out.append(p(esc(f"Pointer swing {plate.arc_deg:g} deg, scale radius {plate.radius_mm:g} mm"
                     + (", with a mirror band" if plate.mirror else "")
                     + f"; ticks placed by the solved nominal response. Shown at {100 * k:.0f} % of actual size, "
                       f"cropped to the cutting line; print it at 1:1 with planner scale FILE -o PLATE.pdf "
                       f"({plate.paper} page).")))
    out.append(plate_drawing(plate, furniture=False, scale=k))
    rows = []
    for s in plate.scales:
        lines = scale_lines(s)
        rows.append([s.name, s.kind, "; ".join(lines) if lines else ", ".join(q.name for q in s.definition.positions),
                     str(len(s.ticks) + len(s.end_marks))])
    out.append(table(["Scale", "Kind", "Ranges marked", "Ticks"], rows, [0.12, 0.1, 0.66, 0.12], align="lllr"))
    if result.checks:
        rows = []
        for c in result.checks:
            if c.linear_by_theory:
                what = "linear: agrees within 1e-9" if c.agrees else "linear: DISAGREES with the line"
            else:
                what = "clamps in circuit: bend shown (weighed against the class in Positions)"
            rows.append([c.name, f"{c.full_scale_fraction:.7f}", f"{c.linearity_deviation:.2e}", what])
        out.append(p("The solved response against the linear scale (D = I_m / I_fs, nominal parts)", "h3"))
        out.append(table(["Position", "D(full scale)", "Largest bend", "Circuit"], rows, [0.16, 0.16, 0.16, 0.52],
                         align="lrrl"))
    for n in plate.notes:
        out.append(p(esc(f"Note: {n}."), "small"))
    out.append(PageBreak())
    return out
