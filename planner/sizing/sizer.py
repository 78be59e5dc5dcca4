"""The sizer: from a project's request to standard parts, ratings and the network.

:func:`size` runs the steps of ``docs/sizing.md``: validate the request, lay out
the topology (the registered sections), rate the ideal network, then choose
values and rate them again until the parts fit and every position's nominal
error is within the allowed share; :func:`sized_spec` gives a spec its network.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from ..model import NetworkSpec, Spec
from ..solve.memo import Kept
from ..tools import fmt
from ..trim import plan_trims
from .assemble import PartRow, assemble
from .layout import Layout, SegmentPlan, lay_out
from .ratings import Rate, Stress, initial_rate, rating_ladder, revise_rates, stresses
from .request import request_error, validate
from .result import PartPlan, PositionIdeal, Segment, Sizing
from .sections import SECTIONS
from .values import CATALOG_MIN_OHM, Choice, split_choice

__all__ = ["size", "sized_spec"]

#: Most rounds of value choice and re-rating.
_ROUNDS = 40
#: Value choices kept (:func:`_choice`).
_CHOICES = Kept(4096)


@dataclass(frozen=True)
class _Request:
    """What every step needs: the spec, its layout, the series, the ladder, the allowed error."""

    spec: Spec
    layout: Layout
    series: str
    ladder: list[tuple[float, float]]
    allowed: float  # fraction


def size(spec: Spec) -> Sizing:
    """Size a project's meter from real parts.

    Parameters
    ----------
    spec : Spec
        A project with ``voltage`` and/or ``current`` sections.

    Returns
    -------
    Sizing
        Segments (targets, chosen parts, ratings), positions and the network.

    Raises
    ------
    ProjectError
        For a request that cannot be built (a current range at or below I_fs, a
        voltage range at or below the meter's own full-scale voltage, ranges not
        ascending, a clamp tap beyond the segment it splits, an unknown series or
        diode model).

    Notes
    -----
    1. Targets by the handbook formulas (:func:`planner.sizing.formulas.chain_segments`,
       :func:`~planner.sizing.formulas.separate_multipliers`,
       :func:`~planner.sizing.formulas.ayrton_segments`,
       :func:`~planner.sizing.formulas.separate_shunts`), the multipliers against
       :func:`~planner.sizing.formulas.voltage_meter`.
    2. Stresses of the ideal network by a linear estimate: every position at full
       scale, and every voltage position under ``faults.max_input`` with each clamp
       node taken open and shorted to common (every combination), the worst kept.
    3. Per segment, the smallest rating (power, limiting voltage) that carries the
       worst power once the segment is split into k = ceil(V / V_max) equal parts in
       series (plus a trim part, the sum on target); when no rating carries the
       misrange, the full-scale stress decides and a caution is noted.
    4. Values: the nearest standard value, or the best series/parallel pair, within
       ``analysis.allowed_share`` x class index; the budget is halved until every
       position's nominal error (linear estimate) is within the allowed share.
    5. Stresses again on the chosen parts; a part beyond its voltage limit gets one
       more split, beyond its power one rating step, until all fit or no step is left.

    References
    ----------
    The formulas' sources are in their docstrings and in ``docs/sizing.md``.
    """
    series = validate(spec, SECTIONS)
    layout = lay_out(spec, SECTIONS)
    req = _Request(spec, layout, series, rating_ladder(spec),
                   spec.analysis.allowed_share * spec.movement.class_index / 100.0)
    _check_catalogue(req)
    rates, st0 = _first_rates(req)
    choices, net, seg_parts, st = _settle(req, rates, st0)
    return plan_trims(spec, _result(req, choices, rates, net, seg_parts, st))


def _check_catalogue(req: _Request) -> None:
    """Refuse a segment below the smallest resistor the sizer picks."""
    for sp in req.layout.segments:
        if sp.target < CATALOG_MIN_OHM * 0.75:
            raise request_error(
                req.spec,
                f"{sp.name} needs {fmt(sp.target, 'ohm')}, below the smallest resistor the sizer picks "
                f"({fmt(CATALOG_MIN_OHM, 'ohm')}); lower the highest current range, add a swamping resistor, "
                "or give an explicit network with a made-to-measure shunt",
                sp.line,
            )


def _first_rates(req: _Request) -> tuple[list[Rate], Stress]:
    """Rates from the stresses of the ideal network (one exact resistor per segment)."""
    segs = req.layout.segments
    ideal_choices = [Choice(((sp.target,),), "ideal") for sp in segs]
    net0, parts0 = assemble(req.spec, req.layout, ideal_choices, [req.ladder[0]] * len(segs), req.series)
    st0 = stresses(req.spec, req.layout, net0, parts0, errors=False)  # the rates need no nominal errors
    rates = [
        initial_rate(req.ladder, st0.seg_v[j], st0.seg_p[j], st0.seg_v_fs[j], st0.seg_p_fs[j], sp.target)
        for j, sp in enumerate(segs)
    ]
    return rates, st0


def _settle(req: _Request, rates: list[Rate], st0: Stress):
    """Choose values, rate them, revise the rates or halve the error budget, until nothing changes.

    Returns the last choices, network, parts per segment and stresses; ``rates``
    holds the last rates.
    """
    budget = req.allowed
    for _ in range(_ROUNDS):
        choices = [_choice(req.series, sp.target, r.k, budget) for sp, r in zip(req.layout.segments, rates)]
        net, seg_parts = assemble(req.spec, req.layout, choices, [req.ladder[r.index] for r in rates], req.series)
        st = stresses(req.spec, req.layout, net, seg_parts)
        changed = revise_rates(rates, req.ladder, st, st0, seg_parts, req.layout.segments)
        if not changed and any(abs(e) > req.allowed for e in st.errors.values()) and budget > 1e-7:
            budget /= 2.0
            changed = True
        if not changed:
            break
    return choices, net, seg_parts, st


def _choice(series: str, target: float, k: int, budget: float) -> Choice:
    """:func:`planner.sizing.values.split_choice`, kept for the process.

    A choice depends on its arguments alone (the series' tables are fixed), and the
    sizings of one command (the protect search's clamp placements, its protection
    parts) ask for the same segments' values again. The arguments' types are in the
    key, so a choice made of one number type is never handed back for another.
    """
    key = (series, target, type(target), k, budget, type(budget))
    got = _CHOICES.get(key)
    return got if got is not None else _CHOICES.keep(key, split_choice(series, target, k, budget))


def _findings(req: _Request, sp: SegmentPlan, ch: Choice, parts: tuple[PartPlan, ...], rating, case: str):
    """A segment's flags (requirements not met) and cautions (misrange beyond its rating)."""
    pr, vr = rating
    flags, cautions = [], []
    err = ch.error(sp.target)
    if abs(err) > req.allowed * (1 + 1e-9):
        flags.append(
            f"no {req.series} single value or pair is within {100 * req.allowed:.3g} % of {fmt(sp.target, 'ohm')}; "
            f"best {100 * err:+.3g} %: use a finer series or a trimmer"
        )
    p_part = max(p.power_required_w for p in parts)
    v_part = max(p.voltage_required_v for p in parts)
    p_part_fs = max(p.power_fullscale_w for p in parts)
    v_part_fs = max(p.voltage_fullscale_v for p in parts)
    if p_part_fs > pr * (1 + 1e-9) or v_part_fs > vr * (1 + 1e-9):
        flags.append(
            f"at full scale a part sees {fmt(p_part_fs, 'W')} / {fmt(v_part_fs, 'V')}, beyond the largest "
            f"rating {fmt(pr, 'W')} / {fmt(vr, 'V')}: add power ratings to parts.resistors or lower the range"
        )
    elif p_part > pr * (1 + 1e-9) or v_part > vr * (1 + 1e-9):
        cautions.append(
            f"under {fmt(req.spec.faults.max_input_v, 'V')} max input a part sees {fmt(p_part, 'W')} / "
            f"{fmt(v_part, 'V')}, beyond its rating {fmt(pr, 'W')} / {fmt(vr, 'V')} ({case}): protect the range "
            "(fuse, clamp) or accept the fault"
        )
    return tuple(flags), tuple(cautions)


def _segment(req: _Request, j: int, ch: Choice, r: Rate, rows: list[PartRow], st: Stress) -> Segment:
    sp = req.layout.segments[j]
    pr, vr = req.ladder[r.index]
    parts = tuple(
        PartPlan(
            name=name,
            value_ohm=val,
            series=req.series,
            target_ohm=val * sp.target / ch.value,
            power_rated_w=pr,
            voltage_rated_v=vr,
            power_required_w=st.p[name],
            voltage_required_v=st.v[name],
            power_fullscale_w=st.p_fs.get(name, 0.0),
            voltage_fullscale_v=st.v_fs.get(name, 0.0),
            a=a,
            b=b,
        )
        for name, val, a, b in rows
    )
    flags, cautions = _findings(req, sp, ch, parts, (pr, vr), st.seg_case[j])
    return Segment(
        name=sp.name,
        role=sp.role,
        target_ohm=sp.target,
        achieved_ohm=ch.value,
        parts=parts,
        arrangement=ch.arrangement,
        low=sp.low,
        high=sp.high,
        power_required_w=st.seg_p[j],
        voltage_required_v=st.seg_v[j],
        power_fullscale_w=st.seg_p_fs[j],
        voltage_fullscale_v=st.seg_v_fs[j],
        power_rated_w=pr,
        voltage_rated_v=vr,
        worst_case=st.seg_case[j],
        flags=flags,
        cautions=cautions,
    )


def _result(req: _Request, choices, rates, net: NetworkSpec, seg_parts, st: Stress) -> Sizing:
    lay = req.layout
    segments = tuple(_segment(req, j, ch, r, seg_parts[j], st) for j, (ch, r) in enumerate(zip(choices, rates)))
    positions = tuple(
        PositionIdeal(
            name=p.name,
            measures=p.measures,
            full_scale=p.full_scale,
            input_resistance_ohm=lay.ideal[p.name][0],
            burden_voltage_v=lay.ideal[p.name][1],
            nominal_error_pct=100.0 * st.errors[p.name] if p.name in st.errors else None,
        )
        for p in lay.positions
    )
    notes = (
        "targets: handbook formulas (docs/sizing.md); multipliers sized against a meter of "
        f"{fmt(lay.meter_i_a, 'A')} and {fmt(lay.meter_r_ohm, 'ohm')}",
        "ratings: linear estimate, diodes left out; under the max input every clamp node is taken both open "
        "and shorted to common (every combination) and the worst kept, so the figures are an upper bound",
        "nominal errors: linear estimate with the chosen values, clamps ignored; 'planner check' solves them "
        "with the diodes",
    )
    return Sizing(
        series=req.series,
        allowed_error_pct=100.0 * req.allowed,
        meter_current_a=lay.meter_i_a,
        meter_resistance_ohm=lay.meter_r_ohm,
        segments=segments,
        positions=positions,
        network=net,
        max_input_v=req.spec.faults.max_input_v,
        notes=notes,
    )


def sized_spec(spec: Spec) -> Spec:
    """The spec with its network: the file's explicit one if given, else the sized one."""
    if spec.network is not None:
        return spec
    return dataclasses.replace(spec, network=size(spec).network)
