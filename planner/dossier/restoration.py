"""The dossier's restoration section: what the readings say about the meter, rendered only.

The diagnosis is computed by the command (``planner dossier FILE --readings
READINGS.csv`` runs :func:`planner.diagnose.diagnose` and hands its JSON object,
:func:`planner.diagnose.diagnosis_json`, to the dossier); this module lays that
object out and computes nothing: the parts most likely drifted with their
intervals, the groups the readings cannot tell apart with the next reading to
take, the replacements, each position's error now and after, the residual, and
the verdict. The method is in ``docs/diagnose.md``.
"""

from __future__ import annotations

from reportlab.platypus import PageBreak

from .layout import Heading, caution_box, esc, keep, note_box, p, table
from .text import value_text

__all__ = ["TITLE", "NUMBER", "restoration"]

#: The section's heading, and its letter (it is there only when readings are given, so it
#: stands beside the numbered sections as the appendix does).
TITLE = "Restoration"
NUMBER = "R"


def _pct(x, digits: int = 1) -> str:
    return "\u2013" if x is None else f"{x:+.{digits}f} %"


def _value(row: dict, key: str) -> str:
    if row.get(f"{key}_ohm") is not None:
        return value_text(row[f"{key}_ohm"], "ohm")
    if row.get(f"{key}_a") is not None:
        return value_text(row[f"{key}_a"], "A")
    return "\u2013"


def _note(row: dict, below: set) -> str:
    if row.get("drifted"):
        return "DRIFTED " + ("up" if (row.get("change_pct") or 0) > 0 else "down")
    if not row.get("measured"):
        return "not measured"
    if row["part"] in below:
        return "below the readings' resolution"
    if not row.get("resolved"):
        return "cannot be told apart (below)"
    return "within tolerance" if abs(row.get("change_pct") or 0) <= (row.get("tolerance_pct") or 0) + 1e-9 else ""


def _unit_of(positions: dict, name: str) -> str:
    return positions.get(name, "")


def restoration(diagnosis: dict | None, *, readings: str | None = None, units: dict | None = None) -> list:
    """The restoration section's flowables (none without a diagnosis).

    Parameters
    ----------
    diagnosis : dict or None
        The JSON object of ``planner diagnose`` (:func:`planner.diagnose.diagnosis_json`).
    readings : str, optional
        The readings file's name, for the text.
    units : dict, optional
        Unit of each position's applied value (``V``, ``A``, ``ohm``) by name.

    Returns
    -------
    list
        Heading, verdict, tables and notes, ending with a page break.
    """
    if diagnosis is None:
        return []
    d = diagnosis
    units = units or {}
    out = [Heading(f"{NUMBER}  {TITLE}", 0, f"s{NUMBER}")]
    n_read = len(d.get("readings", []))
    src = f" in {esc(readings)}" if readings else ""
    out.append(p(f"Diagnosis from {n_read} readings{src} taken against a reference source (resolution "
                 f"{d['noise']['resolution_pct']:.3g} % of full scale, class {d['class_index']:g}). The parts' "
                 f"present values are estimated by least squares with their tolerances as the prior; intervals are "
                 f"{d['confidence']:.0%}, linearised at the estimate (method: docs/diagnose.md)."))
    out.append(p(esc(f"Noise model: {d['noise']['model']}."), "small"))
    if d.get("requirements_met"):
        out.append(note_box("Verdict: restorable", [esc("A consistent explanation of the readings, and every "
                                                        "position within class after the replacements below.")]))
    else:
        why = []
        if not d.get("consistent"):
            why.append("the readings are not explained by drift alone (see the unexplained readings)")
        if any(g["matters"] and g["separable"] for g in d.get("groups", [])):
            why.append("take the readings named below to tell the parts apart before replacing any of them")
        if any(not q["within_class"] for q in d.get("positions", [])):
            why.append("some position stays outside its class after the replacements")
        if d.get("pegged_only"):
            why.append(f"{', '.join(d['pegged_only'])} read only pegged: take readings on the scale there")
        out.append(note_box("Verdict: not restored as proposed", [esc(w) for w in why] or ["see below"]))
    out.append(caution_box("before opening the meter", [esc(
        "Disconnect the meter from every circuit before opening it; mains and high-voltage ranges follow "
        "IEC 61010-1, local codes and licensed practice. After the replacements, check every position against the "
        "reference source before the meter goes back into use.")]))

    below = set(d.get("below_resolution", []))
    rows = []
    for s in d.get("suspects", []):
        lo, hi = s["interval_pct"]
        rows.append([s["part"], _value(s, "nominal"), _value(s, "estimated"), _pct(s["change_pct"]),
                     f"{_pct(lo)} to {_pct(hi)}", f"\u00b1{s['tolerance_pct']:g} %", _note(s, below)])
    out.append(p("Suspects, most likely drifted first", "h2"))
    out.append(table(["Part", "Marked", "Estimate", "Change", "Interval of the change", "Tolerance", "Note"], rows,
                     [0.11, 0.12, 0.12, 0.1, 0.22, 0.1, 0.23], align="lrrrccl"))
    out.append(p(esc(f"Residual: {d['residual_pct']:.3g} % of full scale (rms of the readings against the model "
                     f"at the estimate); " + ("consistent with the readings." if d.get("consistent")
                                              else "NOT consistent with the readings.")) if d.get("residual_pct")
                 is not None else "Residual: no reading on the scale.", "small"))

    groups = d.get("groups", [])
    if groups:
        out.append(p("Parts the readings cannot tell apart", "h2"))
        rows = []
        for g in groups:
            steps = "; then ".join(f"{r['position']} at {value_text(r['applied'], _unit_of(units, r['position']))}"
                                   for r in g["next_readings"])
            if g["matters"] and g["separable"]:
                what = f"it matters: read {steps} next"
            elif g["matters"]:
                what = (f"no reading at the terminals separates them; {g['replaced'] or 'one of them'} is replaced "
                        "(measure them out of circuit to be sure)")
            elif g["separable"]:
                what = f"their estimates barely move the readings (to separate them: {steps})"
            else:
                what = "always together at the terminals; their estimates barely move the readings"
            rows.append([", ".join(g["parts"]), what])
        out.append(table(["Parts", "What to do"], rows, [0.3, 0.7]))
    if d.get("unmeasured"):
        out.append(p(esc("Not measured by any reading: " + ", ".join(d["unmeasured"]) + "."), "small"))
    for u in d.get("unexplained", []):
        rd = "pegged" if u["reading"] is None else f"{u['reading']:g}"
        more = f"; an open part or contact: look at {', '.join(u['open_suspects'])}" if u.get("open_suspects") else ""
        out.append(p(esc(f"Unexplained: line {u['line']}: {u['position']} read {rd} for {u['applied']:g} applied "
                         f"(no drift explains it){more}."), "small"))
    for n in d.get("notes", []):
        out.append(p(esc(f"Note: {n}."), "small"))

    out.append(p("Replacements", "h2"))
    reps = d.get("replacements", [])
    if reps:
        rows = []
        for r in reps:
            fit = " + ".join(("trimmer " if q.get("trimmer") else "") + value_text(q["value_ohm"], "ohm")
                             for q in r["parts"])
            rows.append([r["part"], value_text(r["nominal_ohm"], "ohm"), value_text(r["present_ohm"], "ohm"),
                         value_text(r["wanted_ohm"], "ohm"), fit, r["arrangement"], r["series"]])
        out.append(table(["Part", "Marked", "Now (estimate)", "Wanted", "Fit", "Arrangement", "Series"], rows,
                         [0.1, 0.13, 0.15, 0.13, 0.25, 0.13, 0.1], align="lrrrlll"))
    else:
        out.append(p("Nothing to replace."))
    rows = []
    for q in d.get("positions", []):
        if q.get("dead"):
            rows.append([q["name"], "\u2013", "\u2013", "DEAD: readings no drift explains"])
            continue
        verdict = "within class" if q["within_class"] else "OUTSIDE CLASS"
        if not q.get("measured"):
            verdict += " (no readings: predicted from the estimate)"
        rows.append([q["name"], _pct(q["error_now_pct"], 2), _pct(q["error_after_pct"], 2), verdict])
    out.append(keep(p("Full-scale error of each position, now and after the replacements", "h2"),
                    table(["Position", "Now", "After", "Verdict"], rows, [0.18, 0.15, 0.15, 0.52], align="lrrl")))
    out.append(PageBreak())
    return out
