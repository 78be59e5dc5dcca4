"""Scale definitions from a project: the solver seam, the shared DC scale, the command's result.

The only code that touches the solver is the seam at the top of this module:
:func:`nominal_response` (the deflection fraction D(value) = I_m / I_fs of one
position at nominal part values and the reference temperature) and
:func:`has_junction` (whether the position's active circuit holds a diode).
Everything else takes numbers.

Shared DC scale: its fractions are value / full scale exactly, computed from
the numbers, not from the solved response. That is the contract's definition
of a DC reading (reading = full scale x I_m / I_fs), and a scale shared by
several ranges cannot follow any one range's response anyway. The solved
response is still computed for every position and compared with that line:
where the position's active circuit holds no junction the network is linear
and D(v) = D(FS) v / FS holds exactly, so the solver must agree within 1e-9
(reported as ``agrees``); where clamps are in circuit the bend they cause is
reported (``linearity_deviation``), since it is the instrument's error, not the
dial's (``planner check`` weighs it against the class).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .plate import Plate, PlateError, PlateInfo, build_plate, scale_lines
from .numbers import M1225, display_number, div, is_nice, number_text, unit_text
from .ticks import Response, Scale, ScaleDef, ScalePosition, rows_of

__all__ = ["nominal_response", "has_junction", "sampled_response", "PositionCheck", "linear_definitions",
           "ScaleResult", "scale_project", "scale_json", "format_scale", "LINEAR_TOLERANCE"]

#: Largest |D(v) - D(FS) v / FS| a junction-free (linear) position may show [fraction of FS].
LINEAR_TOLERANCE = 1e-9


# --- the solver seam ---------------------------------------------------------------------------


def nominal_response(engine, position: str, values) -> np.ndarray:
    """Deflection fraction D(value) of one position: nominal parts, reference temperature.

    Parameters
    ----------
    engine : planner.engine.Engine
        The project's engine.
    position : str
        A position name.
    values : array_like, shape (S,)
        Applied values of the position's own quantity [V] or [A].

    Returns
    -------
    numpy.ndarray, shape (S,)
        I_m / I_fs, the movement current over its full-scale current.

    Notes
    -----
    D = I_m / I_fs; the reading of a DC position is FS x D (design contract). An
    AC position's D is the cycle mean of I_m / I_fs at the sine's rms
    (:func:`planner.ranges.ac.nominal_response`: solved at a grid of the full
    scale, exact there, a cubic spline between).
    """
    if engine.state(position).position.kind.waveform != "dc":
        from ..ranges.ac import nominal_response as cycle_response

        return np.asarray(cycle_response(engine, position)(np.asarray(values, dtype=float)), dtype=float)
    return np.asarray(engine.operate(position, np.asarray(values, dtype=float)).movement_multiple[0], dtype=float)


def has_junction(engine, position: str) -> bool:
    """Whether the position's active circuit holds a junction (its response may bend): its compiled circuit's."""
    st = engine.state(position)
    return bool(engine.circuit(st, st.position.kind.source, False).diodes)


def sampled_response(evaluate, full_scale: float, kind: str, n: int = 401) -> Response:
    """Sample a response densely for :class:`Response`, keeping ``evaluate`` for the final ticks.

    Parameters
    ----------
    evaluate : callable
        D(values) for an array of values (e.g. ``lambda v: nominal_response(engine, name, v)``).
    full_scale : float
        The position's full scale [V] or [A], or its centre resistance [ohm].
    kind : {'ac', 'ohms'}
    n : int
        Samples: uniform on 0..FS (``ac``); uniform in t = R / (R + R_c) on
        0..1, open at 1 (``ohms``: R = R_c t / (1 - t)).
    """
    if kind == "ohms":
        t = np.arange(n, dtype=float) / n
        values = full_scale * t / (1.0 - t)
    else:
        values = np.linspace(0.0, full_scale, n)
    return Response(values, np.asarray(evaluate(values), dtype=float), evaluate)


# --- the shared DC scale -----------------------------------------------------------------------


@dataclass(frozen=True)
class PositionCheck:
    """The solved nominal response of a position on the shared linear scale, against the line.

    ``full_scale_fraction`` is D(FS) (1 for an exactly sized network);
    ``linearity_deviation`` the largest |D(v) - D(FS) v / FS| over 101 points
    [fraction of FS]; ``linear_by_theory`` whether no junction is in circuit;
    ``agrees`` whether, being linear by theory, the solver keeps within
    :data:`LINEAR_TOLERANCE` (None where clamps are in circuit).
    """

    name: str
    unit: str
    full_scale: float
    full_scale_fraction: float
    linearity_deviation: float
    linear_by_theory: bool
    agrees: bool | None


def _shareable(labels) -> bool:
    return any(all(is_nice(div(lf, n), M1225) for lf in labels) for n in range(2, 101))


def linear_definitions(engine, positions=None) -> tuple[list[ScaleDef], list[PositionCheck]]:
    """The shared linear scale(s) of a project's DC positions, and the solver's check of each.

    Parameters
    ----------
    engine : planner.engine.Engine
    positions : iterable of planner.model.Position, optional
        The positions to serve (DC voltage and current); all of the engine's by default.

    Returns
    -------
    defs : list of ScaleDef
        One ``linear`` scale named ``DC``; when some ranges' full scales admit no
        common 1-2-5 division with the others, they go on further scales
        (``DC 2`` ...).
    checks : list of PositionCheck
    """
    pos = [p for p in (positions if positions is not None else engine.positions) if p.kind.plate_scale(p) == "linear"]
    sps = [ScalePosition(p.name, p.kind.unit, p.full_scale) for p in pos]
    groups: list[list[ScalePosition]] = []
    for row in rows_of(tuple(sps)):
        members = [sp for sp in sps if sp.name in {rp.name for rp in row.positions}]
        for g in groups:
            if _shareable([r.label_full_scale for r in rows_of(tuple(g + members))]):
                g += members
                break
        else:
            groups.append(members)
    order = {sp.name: i for i, sp in enumerate(sps)}
    defs = [ScaleDef("DC" if i == 0 else f"DC {i + 1}", "linear", tuple(sorted(g, key=lambda s: order[s.name])))
            for i, g in enumerate(groups)]
    checks = []
    for sp in sps:
        v = np.linspace(0.0, sp.full_scale, 101)
        d = nominal_response(engine, sp.name, v)
        dev = float(np.max(np.abs(d - d[-1] * v / sp.full_scale)))
        linear = not has_junction(engine, sp.name)
        checks.append(PositionCheck(sp.name, sp.unit, sp.full_scale, float(d[-1]), dev, linear,
                                    (dev <= LINEAR_TOLERANCE) if linear else None))
    return defs, checks


# --- the command -----------------------------------------------------------------------------------


@dataclass
class ScaleResult:
    """What ``planner scale`` computed: the plate and the solver's checks of the linear scale."""

    plate: Plate
    checks: list[PositionCheck] = field(default_factory=list)
    title: str = ""


def _quantity_text(x: float, unit: str) -> str:
    d, e3 = display_number(x)
    return f"{number_text(d)} {unit_text(unit, e3)}"


def scale_project(design, *, engine=None, defs: list[ScaleDef] | None = None) -> ScaleResult:
    """Plan the scale plate of a project.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec is
        built into one); ``movement.scale`` gives the arc and radius.
    engine : Engine, optional
        An engine on ``design`` (made when not given).
    defs : list of ScaleDef, optional
        Extra scales to draw beside those of the positions. A position's range
        kind says which scale marks it (:meth:`planner.ranges.RangeKind.plate_scale`):
        the shared linear scale, or one of its own that the kind defines
        (:meth:`planner.ranges.RangeKind.scale_definition`; AC scales of their own,
        ohms scales).

    Raises
    ------
    ProjectError
        When the scales do not fit the radius (points at ``movement.scale``).
    """
    from ..errors import ProjectError

    from ..design import as_design
    from ..engine import Engine

    design = engine.design if engine is not None else as_design(design)
    spec = design.spec
    engine = engine or Engine(design)
    linear, checks = linear_definitions(engine)
    own = []  # scales of their own (AC, ohms): each range kind draws its own from the solved response
    for p in engine.positions:
        if p.kind.plate_scale(p) == "own":
            d = p.kind.scale_definition(lambda v, name=p.name: nominal_response(engine, name, v), p)
            if d is not None:
                own.append(d)
    geo = spec.movement.scale
    m = spec.movement
    info = PlateInfo(title=spec.title, revision=spec.revision, date=spec.date,
                     movement=f"{_quantity_text(m.i_fs_a, 'A')}, {_quantity_text(m.r_coil_ohm, 'ohm')}, "
                              f"class {m.class_index:g}")
    all_defs = linear + own + list(defs or [])
    if not all_defs:
        raise ProjectError("the project has no position a scale can serve; add voltage or current ranges",
                           spec.path, geo.line)
    try:
        plate = build_plate(all_defs, arc_deg=geo.arc_deg, radius_mm=geo.radius_m * 1e3, mirror=geo.mirror,
                            info=info)
    except PlateError as exc:
        raise ProjectError(f"movement.scale: {exc}", spec.path, geo.line) from None
    return ScaleResult(plate, checks, spec.title)


def _entries(scale: Scale, index: int, arc_deg: float) -> list[dict]:
    """JSON entries of one drawn scale: one per unit it serves (V and A share the DC arc)."""
    positions = scale.definition.positions
    units = list(dict.fromkeys(p.unit for p in positions))
    row_of = {rp.name: j for j, row in enumerate(scale.rows) for rp in row.positions}
    out = []
    for unit in units:
        ref = next(i for i, p in enumerate(positions) if p.unit == unit)
        ref_pos = positions[ref]
        j = row_of[ref_pos.name]
        ticks = []
        for t in scale.ticks:
            value = t.values[ref]
            frac = value / ref_pos.full_scale if scale.kind == "linear" else t.fraction
            ticks.append({"value": value, "fraction": frac, "angle_deg": frac * arc_deg, "major": t.major,
                          "label": t.labels[j], "size": t.size, "labels": list(t.labels)})
        ends = [{"value": None, "fraction": t.fraction, "angle_deg": t.fraction * arc_deg, "major": t.major,
                 "label": t.labels[0], "size": t.size, "labels": list(t.labels)} for t in scale.end_marks]
        name = scale.name if len(units) == 1 else f"{scale.name} ({unit})"
        out.append({
            "name": name, "unit": unit, "kind": scale.kind, "arc": index,
            "radius_m": scale.band.radius_mm * 1e-3,
            "positions": [p.name for p in positions if p.unit == unit],
            "reference_position": ref_pos.name,
            "full_scale": ref_pos.full_scale if scale.kind != "ohms" else None,
            "center_ohm": ref_pos.full_scale if scale.kind == "ohms" else None,
            "rows": [{"label_full_scale": None if r.label_full_scale is None else float(r.label_full_scale),
                      "positions": [{"name": rp.name, "factor": float(rp.factor), "unit": rp.unit_text}
                                    for rp in r.positions if rp.unit == unit]} for r in scale.rows],
            "ticks": ticks,
            "end_marks": ends,
        })
    return out


def scale_json(result: ScaleResult) -> dict:
    """The ``--json`` object of ``planner scale`` (SI units; see docs/scale.md)."""
    plate = result.plate
    scales = []
    for i, s in enumerate(plate.scales):
        scales += _entries(s, i, plate.arc_deg)
    return {
        "arc_deg": plate.arc_deg,
        "radius_m": plate.radius_mm * 1e-3,
        "mirror": plate.mirror,
        "paper": plate.paper,
        "page_mm": list(plate.page_mm),
        "scales": scales,
        "solver_check": [{
            "position": c.name, "unit": c.unit, "full_scale": c.full_scale,
            "full_scale_fraction": c.full_scale_fraction, "linearity_deviation": c.linearity_deviation,
            "linear_by_theory": c.linear_by_theory, "agrees": c.agrees} for c in result.checks],
        "notes": list(plate.notes),
    }


def format_scale(result: ScaleResult) -> str:
    """A terminal summary: the page, each scale's ticks and labels, the solver's check."""
    plate = result.plate
    w, h = plate.page_mm
    lines = [f"Scale plate: {plate.paper} page ({w:g} x {h:g} mm), pointer swing {plate.arc_deg:g} deg, "
             f"radius {plate.radius_mm:g} mm" + (", mirror band" if plate.mirror else ""), ""]
    for s in plate.scales:
        labelled = sum(1 for t in s.ticks if t.major)
        lines.append(f"{s.name}: base line at {s.band.radius_mm:.1f} mm, {len(s.ticks) + len(s.end_marks)} ticks, "
                     f"{labelled + len(s.end_marks)} labelled")
        for text in scale_lines(s):
            lines.append("  " + text)
        for j, _ in enumerate(s.rows):
            every = sorted(list(s.ticks) + list(s.end_marks), key=lambda t: t.fraction)  # as printed, left to right
            marks = [t.labels[j] for t in every if t.labels[j] is not None]
            lines.append(f"  labels{'' if len(s.rows) == 1 else f' row {j + 1}'}: " + " ".join(marks))
    if result.checks:
        lines += ["", "Solved nominal response against the linear scale (D = I_m / I_fs):",
                  f"  {'position':<12} {'D(FS)':>12} {'linearity':>11}  circuit"]
        for c in result.checks:
            what = ("linear, agrees within 1e-9" if c.agrees else "linear, DISAGREES") if c.linear_by_theory \
                else "clamps in circuit (bend shown)"
            lines.append(f"  {c.name:<12} {c.full_scale_fraction:>12.7f} {c.linearity_deviation:>11.2e}  {what}")
    for n in plate.notes:
        lines.append(f"note: {n}")
    return "\n".join(lines) + "\n"

