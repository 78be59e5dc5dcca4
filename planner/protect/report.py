"""The search's report: JSON rows of evaluated placements, and the table for a terminal.

:func:`placement_row` and :func:`as_given_row` make the rows of the result
(:func:`planner.protect.plan.protect_project`): protection per position and
polarity, the clamp error at the hottest ambient, parts, power and stress.
:func:`format_protect` renders a result as text.

Public API
----------
:func:`placement_row`, :func:`as_given_row`, :func:`position_rows`,
:func:`format_protect`, :func:`si_text`, :func:`multiple_text`.
"""

from __future__ import annotations

from ..model import ZERO_CELSIUS_K
from ..tools import fmt, json_safe
from .candidates import Combo
from .context import SearchContext
from .evaluate import (EXCEED, REPORT_PHASE_POINTS, Metrics, Point, accuracy_ok, feasible, run, share_of_class,
                       topology_of)

__all__ = ["row_key", "placement_row", "as_given_row", "position_rows", "format_protect", "si_text", "multiple_text"]


# --- rows -------------------------------------------------------------------------------------


def position_rows(ctx: SearchContext, m: Metrics) -> list[dict]:
    """One row per position of a one-row :class:`Metrics`: multiples, clamp error, its limit."""
    out = []
    for q in ctx.positions:
        f, r = float(m.pos_forward[q.name][0]), float(m.pos_reverse[q.name][0])
        out.append({"name": q.name, "movement_multiple": json_safe(max(f, r)),
                    "movement_multiple_forward": json_safe(f), "movement_multiple_reverse": json_safe(r),
                    "hot_linearity_error_pct": json_safe(float(m.error_pct[q.name][0])),
                    "limit_pct": ctx.limits[q.name],
                    "within": bool(m.error_pct[q.name][0] <= ctx.limits[q.name] * EXCEED),
                    "hot_linearity_total_pct": json_safe(float(m.total_pct[q.name][0]))})
    return out


def _figures(ctx: SearchContext, m: Metrics) -> dict:
    """The protection and accuracy figures every row has, from a one-row :class:`Metrics`."""
    fcase, rcase = m.forward_case[0], m.reverse_case[0]
    max_input = ctx.spec.faults.max_input_v
    return {
        "worst_movement_multiple": json_safe(float(m.worst[0])),
        "worst_movement_multiple_forward": json_safe(float(m.forward[0])),
        "worst_movement_multiple_reverse": json_safe(float(m.reverse[0])),
        "worst_case_forward": None if fcase is None else {"position": fcase[0], "stimulus": fcase[1]},
        "worst_case_reverse": None if rcase is None else {"position": rcase[0], "stimulus": rcase[1]},
        "max_input_multiple_forward": json_safe(float(m.max_input_forward[0])) if max_input else None,
        "max_input_multiple_reverse": json_safe(float(m.max_input_reverse[0])) if max_input else None,
        "hot_linearity_error_pct": json_safe(max(float(m.error_pct[q.name][0]) for q in ctx.positions)),
        "share_of_class": json_safe(float(share_of_class(ctx, m)[0])),
        "hot_linearity_total_pct": json_safe(max(float(m.total_pct[q.name][0]) for q in ctx.positions)),
        "positions": position_rows(ctx, m),
    }


def row_key(combo: Combo, r: float | None) -> str:
    """The ``key`` of a row: the placement (site, stacks) and its split resistance."""
    return "|".join(str(x) for x in combo.key()) + f"|{r!r}"


def placement_row(ctx: SearchContext, label: str, p: Point, combo: Combo | None = None, *, clamps=None) -> dict:
    """The JSON row of an evaluated placement.

    Parameters
    ----------
    ctx : SearchContext
    label : str
    p : Point
        Evaluated (one row of metrics).
    combo : Combo, optional
        The placement to describe; the point's own by default.
    clamps : sequence of ClampRequest, optional
        The ``clamps:`` requests of a sized project (written as ``clamps``).

    Returns
    -------
    dict
        Site, split, stacks, the figures of :func:`position_rows` and the
        worst over the positions, parts, power, stress, feasibility and a
        ``key`` that names the placement.
    """
    m = p.metrics
    combo = combo or p.combo
    site = combo.site
    scase = m.stress_case[0]
    fig = _figures(ctx, m)
    row = {
        "label": label,
        "site": site.label,
        "site_kind": site.kind,
        "node": site.node if site.kind != "split" else ctx.tap_node,
        "split_element": site.element,
        "split_ohm": json_safe(float(p.r)) if p.r is not None else None,
        "split_parts_ohm": None if p.lower is None else {"upper": [float(v) for v in (p.upper or ())],
                                                          "lower": [float(v) for v in p.lower]},
        "split_of_ohm": site.r_ohm if site.kind == "split" else None,
        "forward": combo.forward.as_dict() if combo.forward else None,
        "reverse": combo.reverse.as_dict() if combo.reverse else None,
        "forward_part": combo.forward.label() if combo.forward else None,
        "forward_count": combo.forward.count if combo.forward else 0,
        "reverse_part": combo.reverse.label() if combo.reverse else None,
        "reverse_count": combo.reverse.count if combo.reverse else 0,
        **fig,
        "parts_count": int(combo.parts_count),
        "power_w": json_safe(float(m.power_w[0])),
        "clamp_stress_ratio": json_safe(float(m.stress[0])),
        "clamp_stress_case": None if scase is None else {"position": scase[0], "stimulus": scase[1], "part": scase[2]},
        "accuracy_ok": bool(accuracy_ok(ctx, m)[0]),
        "stress_ok": bool(m.stress[0] <= EXCEED),
        "feasible": bool(p.feasible),
        "stage": p.stage,
        "key": row_key(combo, p.r),
    }
    if m.failed:
        row["solver_error"] = m.failed
    if clamps is not None:
        row["clamps"] = [{"at": c.at if isinstance(c.at, str) else float(c.at), "forward": c.forward,
                          "reverse": c.reverse, "count": int(c.count)} for c in clamps]
    return row


def as_given_row(ctx: SearchContext) -> dict:
    """The JSON row of the project as given (its own clamps), evaluated at the reported resolution."""
    topo = topology_of(ctx, ctx.orig_net)
    m = run(ctx, topo, n_phase=REPORT_PHASE_POINTS, count=False)
    clamp = topo.clamp
    fig = _figures(ctx, m)
    row = {
        "label": "as given",
        "site": "as given",
        "site_kind": "as given",
        "clamp_diodes": list(clamp),
        **fig,
        "parts_count": len(clamp),
        "power_w": json_safe(float(m.power_w[0])),
        "clamp_stress_ratio": json_safe(float(m.stress[0])),
        "accuracy_ok": bool(accuracy_ok(ctx, m)[0]),
        "stress_ok": bool(m.stress[0] <= EXCEED),
        "feasible": bool(feasible(ctx, m)[0]),
    }
    if m.failed:
        row["solver_error"] = m.failed
    return row


# --- text ---------------------------------------------------------------------------------------


def si_text(x, unit: str, digits: int = 3) -> str:
    """A value with an SI prefix (:func:`planner.tools.fmt`), ``-`` for None."""
    return "-" if x is None else fmt(x, unit, digits)


def multiple_text(x) -> str:
    """A movement multiple: three significant digits, whole numbers from 1000 up; ``-`` for None."""
    return "-" if x is None else (f"{x:.3g}" if x < 1000 else f"{x:.0f}")


def _hundred(x):
    return None if x is None else 100.0 * x


def _pct(x, spec: str = ".3f") -> str:
    return "-" if x is None else format(x, spec)


def _split_text(row: dict) -> str:
    if row.get("site_kind") != "split":
        return "-"
    return si_text(row.get("split_ohm"), "ohm")


def _parts_text(row: dict) -> str:
    parts = row.get("split_parts_ohm")
    if not parts:
        return ""
    up = " + ".join(si_text(v, "ohm", 4) for v in parts["upper"])
    lo = " + ".join(si_text(v, "ohm", 4) for v in parts["lower"])
    if row.get("clamps") is not None:  # sized: the sizer lays the two segments out
        return f"sized as {lo} from the movement to the tap and {up} from the tap to the first range"
    whole = si_text(row["split_of_ohm"], "ohm", 4)
    return f"{row['split_element']} ({whole}) made of {up} above the tap and {lo} below it"


def _heading_lines(result: dict) -> list[str]:
    t_hot_c = result["hot_temperature_k"] - ZERO_CELSIUS_K
    lim = result["limits_pct"]
    same = len(set(lim.values())) == 1
    req = (f"{next(iter(lim.values())):.3g} % of full scale on every position" if same else
           "; ".join(f"{k}: {v:.3g} %" for k, v in lim.items()))
    return [f"Clamp placement: {result['title']}",
            f"{result['candidates_evaluated']} candidates evaluated ({result['pruned']} pruned by bounds"
            + (", stopped at the cap" if result["truncated"] else "") + f"), seed {result['seed']}.",
            f"Requirement: clamp error at {t_hot_c:.1f} degC (hottest ambient) within {req} "
            f"(class {result['class_index']:g}).",
            "Fault stimuli: " + ", ".join(result["stimuli"]) + ".", ""]


def _table_line(tag: str, r: dict) -> str:
    site = r["site"].replace(" + movement pair", " +pair")
    return (f"{tag:>2}  {site:<16}{_split_text(r):<11}{(r.get('forward_part') or '-'):<15}"
            f"{(r.get('reverse_part') or '-'):<15}{multiple_text(r['worst_movement_multiple']):>8}"
            f"{multiple_text(r['worst_movement_multiple_forward']):>7}"
            f"{multiple_text(r['worst_movement_multiple_reverse']):>7}"
            f"{_pct(r['hot_linearity_error_pct']):>7}{_pct(_hundred(r['share_of_class']), '.1f'):>6}%"
            f"{r['parts_count']:>6}"
            f"{si_text(r['power_w'], 'W'):>10}")


def _table_lines(result: dict) -> list[str]:
    head = (f"{'#':>2}  {'site':<16}{'split':<11}{'forward':<15}{'reverse':<15}"
            f"{'worst x':>8}{'fwd x':>7}{'rev x':>7}{'err %':>7}{'class':>7}{'parts':>6}{'power':>10}")
    lines = [head, "-" * len(head)]
    for r in result["pareto"]:
        lines.append(_table_line(str(r["rank"]), r) + ("  <- chosen" if r.get("chosen") else ""))
    if not result["pareto"]:
        lines.append("   no placement meets the accuracy requirement and the clamp diodes' ratings")
    lines += ["Columns: split = resistance from the movement to the clamp tap; worst / fwd / rev x = largest movement",
              "current over the fault stimuli in multiples of full scale (both polarities / reading up / reading",
              "down); err % = change of reading the clamps cause at the hottest ambient, % of full scale; class =",
              "that as a share of the class index; power = largest power in the clamp's parts (diodes, split",
              "resistors) under a fault. +pair: a one-diode pair also stays across the movement."]
    return lines


def _baseline_lines(result: dict) -> list[str]:
    lines = ["", "Baselines:"]
    for key, tag in (("as_given", "as given"), ("across_movement", "across movement, one diode each way")):
        b = result["baseline"][key]
        ok = "meets" if b["feasible"] else "misses"
        fwd = multiple_text(b["worst_movement_multiple_forward"])
        rev = multiple_text(b["worst_movement_multiple_reverse"])
        err, cls = _pct(b["hot_linearity_error_pct"]), _pct(_hundred(b["share_of_class"]), ".1f")
        lines.append(f"  {tag}: worst {multiple_text(b['worst_movement_multiple'])} x (forward {fwd}, reverse {rev}), "
                     f"clamp error {err} % ({cls} % of class), "
                     f"{ok} the requirement")
    return lines


def _chosen_lines(result: dict) -> list[str]:
    c = result["chosen"]
    if c is None:
        return ["No clamp placement is chosen: none meets the accuracy share and protects at least as well as the "
                "project as given."]
    b = result["baseline"]["across_movement"]
    where = c["site"]
    if c["site_kind"] == "split":
        where += f" at {si_text(c['split_ohm'], 'ohm')} above the movement"
    lines = [f"Chosen: {where}, forward {c.get('forward_part') or 'none'}, reverse "
             f"{c.get('reverse_part') or 'none'}."]
    if _parts_text(c):
        lines.append(f"  {_parts_text(c)}")
    for cl in c.get("clamps") or ():
        at = "across the movement" if isinstance(cl["at"], str) else f"at {si_text(cl['at'], 'ohm', 4)} above it"
        lines.append(f"  clamps: {at}: forward {cl['forward'] or '-'}, reverse {cl['reverse'] or '-'}, "
                     f"count {cl['count']}")
    lines.append(f"  worst movement multiple {multiple_text(b['worst_movement_multiple'])} -> "
                 f"{multiple_text(c['worst_movement_multiple'])} x full scale (clamps across the movement -> chosen)")
    if c.get("max_input_multiple_forward") is not None:
        bf, cf = multiple_text(b["max_input_multiple_forward"]), multiple_text(c["max_input_multiple_forward"])
        br, cr = multiple_text(b["max_input_multiple_reverse"]), multiple_text(c["max_input_multiple_reverse"])
        lines.append(f"  at the declared maximum input: forward {bf} -> {cf}, reverse {br} -> {cr}")
    fwd_worse = (c["worst_movement_multiple_forward"] or 0.0) >= (c["worst_movement_multiple_reverse"] or 0.0)
    wc = (c.get("worst_case_forward") if fwd_worse else c.get("worst_case_reverse")) or {}
    err, cls = _pct(c["hot_linearity_error_pct"]), _pct(_hundred(c["share_of_class"]), ".1f")
    lines.append(f"  worst case: {wc.get('position')} | {wc.get('stimulus')}; clamp error at the hottest ambient "
                 f"{err} % ({cls} % of class); diode stress {_pct(c['clamp_stress_ratio'], '.2f')} of rating")
    lines.append("  " + ("the chosen placement protects the movement better than clamps across it"
                         if result["improves_on_across_movement"] else
                         "no placement protects the movement better than clamps across it"))
    return lines


def format_protect(result: dict) -> str:
    """The protection search as text for a terminal of about 100 columns.

    A Pareto table of the best placements (protection: worst movement multiple,
    forward and reverse polarity; accuracy cost: the clamp error at the hottest
    ambient in % of full scale and as a share of the class; part count; power in
    the clamp's parts), the two baselines on the same footing, the chosen
    placement and how many candidates were evaluated.

    Parameters
    ----------
    result : dict
        What :func:`planner.protect.protect_project` returned.

    Returns
    -------
    str
    """
    lines = _heading_lines(result) + _table_lines(result) + _baseline_lines(result) + [""] + _chosen_lines(result)
    lines += _matrix_lines(result)
    return "\n".join(lines) + "\n"


def _matrix_text(m: dict) -> str:
    return f"{m['failing']} failing ({m['failing_cases']} cases, {m['failing_transitions']} transitions), " \
           f"worst ratio {m['worst_ratio']:.3g}"


def _matrix_lines(result: dict) -> list[str]:
    """The plans judged on the misrange matrix: as given, the clamp plan, the protection parts, the result."""
    j = result.get("matrix")
    if not j:
        return []
    lines = ["", "Judged on the misrange matrix (planner faults):", f"  as given: {_matrix_text(j['as_given'])}"]
    if j["clamp_plan"] is not None:
        lines.append(f"  clamp placement: {_matrix_text(j['clamp_plan'])}")
    best = j["parts"][0] if j["parts"] and result.get("writes") else None
    for r in j["parts"][:6]:
        mark = " <- chosen" if r is best else (" (as given)" if r["as_given"] else "")
        judged = _matrix_text(r["matrix"]) if not r.get("stopped") else \
            (f"at least {r['stopped']['failing_at_least']} failing, more than the best plan's "
             f"{r['stopped']['bound']} (stopped after {r['stopped']['states_judged']} of "
             f"{r['stopped']['states']} states)")
        lines.append(f"  {r['clamps']} clamps, protection {r['label']}: {judged}; price "
                     f"{r['price_pct']:.3f} % ({100 * r['price_share']:.0f} % of the share), {r['parts_added']} "
                     f"parts{mark}")
    lines += ["  " + n for n in j["notes"]]
    if not result.get("writes"):
        lines.append("  nothing protects better than the project as given: the file stays as it is")
    lines.append(f"  the plan: {_matrix_text(j['planned'])}")
    lines.append("RESULT: " + ("requirement met: no failing case in the misrange matrix" if result["requirements_met"]
                               else "requirement NOT met: failing cases remain in the misrange matrix"))
    return lines
