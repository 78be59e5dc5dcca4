"""Outputs of the sizer: the JSON object, the terminal table, the project file with its network.

Rendering only: every number comes from the :class:`planner.sizing.result.Sizing`.
The JSON fields marked contract in the design are listed at :func:`sizing_json`.
"""

from __future__ import annotations

from .. import writer
from ..testpoints import linear_test_points
from ..wiring import wire_switch, wiring_json
from ..errors import ProjectError
from ..model import Spec
from ..tools import fmt, json_safe
from .result import Sizing

__all__ = ["sizing_json", "network_yaml", "format_sizing_table"]


def sizing_json(sizing: Sizing, spec: Spec | None = None) -> dict:
    """The sizing as a JSON-ready dict (SI units, unit in each field's name).

    Contract fields: ``segments[]`` with ``name``, ``target_ohm``, ``achieved_ohm``,
    ``parts[]`` (``name``, ``value_ohm``, ``series``, ``trimmer``),
    ``power_required_w``, ``voltage_required_v``; ``switch.poles[]`` (``deck``,
    ``pole``, ``common``, ``contacts[]`` with ``position`` and ``node``: the
    wiring of :func:`planner.wiring.wire_switch`); with ``spec``, ``test_points[]``
    (:func:`planner.testpoints.linear_test_points`: each node named by the parts'
    pins, its voltage at full scale by the linear estimate). A figure that is not finite
    (the nominal error of a position the estimate could not solve) is null.
    """
    segs = []
    for s in sizing.segments:
        segs.append(
            {
                "name": s.name,
                "role": s.role,
                "target_ohm": s.target_ohm,
                "achieved_ohm": s.achieved_ohm,
                "error_pct": s.error_pct,
                "arrangement": s.arrangement,
                "nodes": [s.low, s.high],
                "parts": [
                    {
                        "name": p.name,
                        "value_ohm": p.value_ohm,
                        "series": p.series,
                        "trimmer": bool(p.trimmer),
                        "target_ohm": p.target_ohm,
                        "power_required_w": p.power_required_w,
                        "voltage_required_v": p.voltage_required_v,
                        "power_fullscale_w": p.power_fullscale_w,
                        "voltage_fullscale_v": p.voltage_fullscale_v,
                        "power_rated_w": p.power_rated_w,
                        "voltage_rated_v": p.voltage_rated_v,
                        "nodes": [p.a, p.b],
                    }
                    for p in s.parts
                ],
                "power_required_w": s.power_required_w,
                "voltage_required_v": s.voltage_required_v,
                "power_fullscale_w": s.power_fullscale_w,
                "voltage_fullscale_v": s.voltage_fullscale_v,
                "power_rated_w": s.power_rated_w,
                "voltage_rated_v": s.voltage_rated_v,
                "worst_case": s.worst_case,
                "flags": list(s.flags),
                "cautions": list(s.cautions),
            }
        )
    extra = {"test_points": linear_test_points(spec, sizing.network)} if spec is not None else {}
    if sizing.trims:  # analysis.trim: the calibration points (planner check simulates them)
        extra["trim"] = [{"order": t.order, "part": t.part, "fixed": t.fixed, "segment": t.segment,
                          "position": t.position, "applied": t.applied, "range_ohm": list(t.range_ohm),
                          "trimmer_ohm": t.span_ohm, "setting_ohm": t.setting_ohm} for t in sizing.trims]
    return json_safe({
        "series": sizing.series,
        "allowed_error_pct": sizing.allowed_error_pct,
        "meter_current_a": sizing.meter_current_a,
        "meter_resistance_ohm": sizing.meter_resistance_ohm,
        "max_input_v": sizing.max_input_v,
        "segments": segs,
        "positions": [
            {
                "name": p.name,
                "measures": p.measures,
                "full_scale": p.full_scale,
                "input_resistance_ohm": p.input_resistance_ohm,
                "burden_voltage_v": p.burden_voltage_v,
                "nominal_error_pct": p.nominal_error_pct,
            }
            for p in sizing.positions
        ],
        "switch": wiring_json(wire_switch(sizing.network, sizing.network.contact_style)),
        "flags": list(sizing.flags),
        "cautions": list(sizing.cautions),
        "notes": list(sizing.notes),
        **extra,
        "requirements_met": sizing.requirements_met,
    })


def network_yaml(spec: Spec, sizing: Sizing) -> str:
    """A project file holding the sized network explicitly.

    The file's own text is kept, comments and all, except its ``voltage``,
    ``current``, ``resistance``, ``clamps`` and ``network`` sections: those stay as comments (the
    record of what was asked) and the explicit ``network:`` section is appended,
    so the loader reads back exactly the sized network and nothing is sized
    twice. Quantities carry units and parse back to the same floats; each
    resistor's segment and target share follow it as a comment.

    Raises
    ------
    ProjectError
        When the spec carries no file text (it was not loaded from a file).
    """
    if not spec.text:
        raise ProjectError(
            "the project has no file text to extend; load it from a file (planner.project.load) first",
            spec.path,
        )
    header = [
        f"# Network sized by 'planner size' from {sizing.series} values "
        f"(allowed error {sizing.allowed_error_pct:.3g} % per segment); edit the values freely."
    ]
    return writer.replace_sections(
        spec.text, ("voltage", "current", "resistance", "clamps", "network", "protection"),
        writer.network_lines(sizing.network),
        header=header, record="# The request the network below was sized from (kept for the record):")


def _columns(rows) -> list[str]:
    """Rows of text as left-aligned columns two spaces apart, a rule under the first (the header)."""
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    out = []
    for i, r in enumerate(rows):
        out.append("  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip())
        if i == 0:
            out.append("  ".join("-" * w for w in widths))
    return out


def format_sizing_table(sizing: Sizing) -> str:
    """A terminal table of the sizing: targets, parts, achieved value, error, ratings."""
    rows = [("segment", "target", "parts", "achieved", "error %", "P part/rated", "V part/rated")]
    for s in sizing.segments:
        joint = " || " if s.arrangement == "parallel pair" else " + "
        vals = joint.join(fmt(p.value_ohm, "ohm").replace(" ", "") for p in s.parts)
        names = ",".join(p.name for p in s.parts) if len(s.parts) <= 3 else f"{s.parts[0].name}..{s.parts[-1].name}"
        rows.append(
            (
                s.name,
                fmt(s.target_ohm, "ohm"),
                f"{names}: {vals}" if len(s.parts) <= 3 else f"{names}: {s.arrangement}",
                fmt(s.achieved_ohm, "ohm"),
                f"{s.error_pct:+.4f}",
                f"{fmt(s.part_power_required_w, 'W')}/{fmt(s.power_rated_w, 'W')}",
                f"{fmt(s.part_voltage_required_v, 'V')}/{fmt(s.voltage_rated_v, 'V')}",
            )
        )
    out = [f"Sizing from {sizing.series} values, allowed error {sizing.allowed_error_pct:.3g} % per segment"]
    out += _columns(rows)
    out.append("")
    prow = [("position", "input resistance", "burden", "nominal error %")]
    for p in sizing.positions:
        prow.append(
            (
                p.name,
                fmt(p.input_resistance_ohm, "ohm"),
                "" if p.burden_voltage_v is None else fmt(p.burden_voltage_v, "V"),
                "(check)" if p.nominal_error_pct is None else f"{p.nominal_error_pct:+.4f}",
            )
        )
    out += _columns(prow)
    if sizing.max_input_v is not None:
        out.append("")
        out.append(f"P and V per part: worst over full scale and {fmt(sizing.max_input_v, 'V')} max input on every "
                   "voltage position.")
    for f in sizing.flags:
        out.append(f"FLAG: {f}")
    for c in sizing.cautions:
        out.append(f"CAUTION: {c}")
    for n in sizing.notes:
        out.append(f"note: {n}")
    return "\n".join(out) + "\n"
