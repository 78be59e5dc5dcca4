"""Rendering a diagnosis: the JSON object and the table (nothing is solved here)."""

from __future__ import annotations

import math

import numpy as np

from ..units import format_si
from .estimate import CONFIDENCE
from .identify import RESOLVED_SV

__all__ = ["diagnosis_json", "format_diagnosis", "replacement_json", "NOISE_MODEL"]

#: The noise model in words (JSON ``noise.model`` and the table's footer).
NOISE_MODEL = ("each reading within +-resolution/2 of the true pointer position (uniform, sd = resolution/sqrt(12)); "
               "the reference source taken as exact; readings at the reference temperature")


def _num(x):
    x = float(x)
    return x if math.isfinite(x) else None


def replacement_json(r) -> dict:
    """One :class:`planner.diagnose.replace.Replacement` as JSON (contract: part, value_ohm, series)."""
    out = {
        "part": r.part,
        "value_ohm": _num(r.value_ohm),
        "series": r.series,
        "arrangement": r.arrangement,
        "parts": [dict(p) for p in r.parts],
        "nominal_ohm": _num(r.nominal_ohm),
        "present_ohm": _num(r.present_ohm),
        "wanted_ohm": _num(r.wanted_ohm),
        "change_pct": _num(r.change_pct),
    }
    if r.trimmer_range_ohm is not None:
        out["trimmer_range_ohm"] = [_num(r.trimmer_range_ohm[0]), _num(r.trimmer_range_ohm[1])]
    return out


def diagnosis_json(d) -> dict:
    """The JSON object of ``planner diagnose --json`` (SI units, unit in each name).

    Contract fields: ``suspects[]`` (``part``, ``nominal_ohm``, ``estimated_ohm``,
    ``change_pct``, ``interval_pct``), most likely first; ``residual_pct``;
    ``unresolved[]`` (groups of parts the readings cannot tell apart, each a list
    of names); ``replacements[]`` (``part``, ``value_ohm``, ``series``).
    """
    m = d.meter
    suspects = []
    for s in d.suspects:
        u = s.unknown
        est = u.nominal * math.exp(s.theta)
        row = {
            "part": u.label,
            "kind": u.kind,
            "nominal_ohm": _num(u.nominal) if u.unit == "ohm" else None,
            "estimated_ohm": _num(est) if u.unit == "ohm" else None,
            "change_pct": _num(s.change_pct),
            "interval_pct": [_num(s.interval_pct[0]), _num(s.interval_pct[1])],
            "tolerance_pct": _num(u.tolerance * 100.0),
            "drifted": s.drifted,
            "resolved": s.resolved,
            "measured": s.seen,
            "score": _num(s.score),
        }
        if u.unit == "A":
            row["nominal_a"], row["estimated_a"] = _num(u.nominal), _num(est)
        suspects.append(row)
    r = d.obs.readings
    readings = []
    for k in range(len(r)):
        status = "unexplained" if d.estimate.unexplained[k] else ("pegged" if d.obs.pegged[k] else "used")
        readings.append({
            "position": r.position[k],
            "line": int(r.lines[k]),
            "applied": _num(r.applied[k]),
            "reading": None if r.pegged[k] else _num(r.reading[k]),
            "predicted": _num(d.estimate.predicted[k]),
            "residual_pct": None if d.obs.pegged[k] else _num(
                (d.estimate.predicted[k] - r.reading[k]) / d.obs.full_scale[k] * 100.0),
            "status": status,
        })
    plan = d.plan
    measured = set(r.position)
    positions = [{
        "name": name,
        "measured": name in measured,
        "error_now_pct": _num(plan.errors_before_pct[k]),
        "error_after_pct": _num(plan.errors_after_pct[k]),
        "target_pct": _num(plan.target_pct[k]),
        "within_class": bool(d.within_class[k]),
        "dead": name in d.dead,
    } for k, name in enumerate(plan.positions)]
    return {
        "title": m.spec.title,
        "confidence": CONFIDENCE,
        "noise": {"model": NOISE_MODEL, "resolution_pct": d.resolution * 100.0},
        "class_index": m.class_index,
        "suspects": suspects,
        "residual_pct": _num(d.residual_pct),
        "consistent": d.consistent,
        "unresolved": [list(g.parts) for g in d.groups],
        "groups": [{
            "parts": list(g.parts),
            "matters": g.significant,
            "separable": g.separable,
            "replaced": g.replaced,
            "next_readings": [{"position": p, "applied": _num(a), "resolves": done} for p, a, done in g.next_readings],
        } for g in d.groups],
        "unmeasured": list(d.unmeasured),
        "below_resolution": list(d.below_resolution),
        "unexplained": d.unexplained,
        "replacements": [replacement_json(x) for x in plan.replacements],
        "positions": positions,
        "readings": readings,
        "singular_values": [_num(x) for x in d.identifiability.singular_values],
        "resolved_singular_value": RESOLVED_SV,
        "notes": list(d.notes),
        "pegged_only": list(d.bounds_only),
        "requirements_met": d.requirements_met,
    }


def _fmt_value(x: float, unit: str) -> str:
    return format_si(x, unit)


def format_diagnosis(d) -> str:
    """The readable report of ``planner diagnose``."""
    j = diagnosis_json(d)
    m = d.meter
    lines = [f"{m.spec.title}: diagnosis from {len(d.obs.readings)} readings "
             f"(resolution {d.resolution * 100:.3g} % of full scale, class {m.class_index:g})", ""]
    lines.append(f"{'part':<24}{'nominal':>12}{'estimate':>12}{'change':>9}  {'95 % interval':<20} note")
    for s in d.suspects:
        u = s.unknown
        unit = u.unit
        est = u.nominal * math.exp(s.theta)
        if s.drifted:
            note = "DRIFTED" + (" (up)" if s.theta > 0 else " (down)")
        elif not s.seen:
            note = "not measured"
        elif u.label in d.below_resolution:
            note = "below the readings' resolution"
        elif not s.resolved:
            note = "cannot be told apart (see below)"
        else:
            note = "within tolerance" if abs(s.change_pct) <= u.tolerance * 100 + 1e-9 else ""
        lo, hi = s.interval_pct
        lines.append(f"{u.label:<24}{_fmt_value(u.nominal, unit):>12}{_fmt_value(est, unit):>12}"
                     f"{s.change_pct:>+8.1f}%  [{lo:+.1f}, {hi:+.1f}] %{'':<4} {note}")
    lines.append("")
    lines.append(f"residual: {d.residual_pct:.3g} % of full scale (rms); "
                 f"{'consistent with the readings' if d.consistent else 'NOT consistent with the readings'}")
    for u in d.unexplained:
        rd = "pegged" if u["reading"] is None else f"{u['reading']:g}"
        more = f"; an open part or contact: look at {', '.join(u['open_suspects'])}" if u["open_suspects"] else ""
        lines.append(f"UNEXPLAINED: line {u['line']}: {u['position']} read {rd} for {u['applied']:g} applied "
                     f"(no drift explains it){more}")
    for g in d.groups:
        head = (f"cannot tell apart: {', '.join(g.parts)}" if len(g.parts) > 1 else
                f"not pinned down by the readings beyond its tolerance: {g.parts[0]}")
        steps = "; then ".join(f"{p} at {_fmt_value(a, m.position[p].unit)}" for p, a, _ in g.next_readings)
        if g.significant and g.next_readings:
            lines.append(f"{head} - it matters: read {steps}")
        elif g.significant:
            lines.append(f"{head} - no reading at the terminals separates them; {g.replaced or 'one of them'} is "
                         "replaced (measure them out of circuit to be sure)")
        elif g.next_readings:
            lines.append(f"{head} - their estimates barely move the readings (to separate them: {steps})")
        else:
            lines.append(f"{head} - always together at the terminals; their estimates barely move the readings")
    if d.unmeasured:
        lines.append(f"not measured by any reading: {', '.join(d.unmeasured)}")
    if d.below_resolution:
        lines.append(f"a change of one tolerance is below the readings' resolution: {', '.join(d.below_resolution)} "
                     "(finer readings, --resolution, would tell more)")
    for n in d.notes:
        lines.append(f"note: {n}")
    lines.append("")
    if d.plan.replacements:
        lines.append("replace:")
        for r in d.plan.replacements:
            parts = " + ".join(("trimmer " if p["trimmer"] else "") + _fmt_value(p["value_ohm"], "ohm")
                               for p in r.parts)
            how = "" if r.arrangement == "single" else f" ({r.arrangement})"
            lines.append(f"  {r.part:<8} {_fmt_value(r.nominal_ohm, 'ohm'):>10} -> {parts}{how}, {r.series}"
                         f"  [now {_fmt_value(r.present_ohm, 'ohm')}, wanted {_fmt_value(r.wanted_ohm, 'ohm')}]")
    else:
        lines.append("replace: nothing")
    lines.append("")
    lines.append(f"{'position':<12}{'error now':>11}{'after':>9}  verdict")
    for p in j["positions"]:
        v = "within class" if p["within_class"] else "OUTSIDE CLASS"
        if p["name"] in d.dead:
            lines.append(f"{p['name']:<12}{'-':>11}{'-':>9}  DEAD: readings no drift explains (see above)")
            continue
        if not p["measured"]:
            v += " (no readings: predicted from the estimate)"
        lines.append(f"{p['name']:<12}{p['error_now_pct']:>+10.2f}%{p['error_after_pct']:>+8.2f}%  {v}")
    lines.append("")
    lines.append(f"intervals: {CONFIDENCE:.0%}, linearised at the estimate; noise: {NOISE_MODEL}")
    if d.requirements_met:
        lines.append("verdict: restorable - a consistent explanation, and every position within class after the "
                     "replacements")
    else:
        why = []
        if not d.consistent:
            why.append("the readings are not explained by drift alone")
        if d.ambiguous:
            why.append("take the readings named above to tell the parts apart")
        if not np.all(d.within_class):
            why.append("some position stays outside its class")
        if d.bounds_only:
            why.append(f"{', '.join(d.bounds_only)} read only pegged: take readings on the scale there")
        lines.append(f"verdict: NOT restored as proposed - {'; '.join(why)}")
    lines.append("CAUTION: disconnect the meter from any circuit before opening it; mains and high-voltage ranges "
                 "follow IEC 61010-1, local codes and licensed practice.")
    return "\n".join(lines) + "\n"
