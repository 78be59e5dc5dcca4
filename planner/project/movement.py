"""The ``movement:`` section (coil, class, overload, scale geometry) and ``ambient:``.

The class must be an IEC 60051 class index; overload multiples are at least 1 and
the short-time one at least the continuous one; the ambient range holds its
reference temperature.
"""

from __future__ import annotations

import math
import re

from .. import model, values
from ..units import QuantityError
from .limits import IEC_CLASSES
from .reader import Reader, Section, tempco_bound
from .tree import Node

__all__ = ["MOVEMENT_KEYS", "OVERLOAD_KEYS", "SCALE_KEYS", "SCALE_ARC_DEG", "SCALE_RADIUS_M", "AMBIENT_KEYS",
           "read_movement", "read_ambient"]

MOVEMENT_KEYS = (
    "full_scale_current",
    "coil_resistance",
    "class",
    "tempco",
    "tolerance",
    "full_scale_tolerance",
    "overload",
    "scale",
)
OVERLOAD_KEYS = ("peg", "short_time", "continuous", "mechanical", "thermal_time")
SCALE_KEYS = ("arc", "radius", "mirror")
#: Limits of movement.scale: the pointer swing [deg] and the outer scale radius [m].
SCALE_ARC_DEG = (30.0, 300.0)
SCALE_RADIUS_M = (0.010, 0.500)
AMBIENT_KEYS = ("reference", "min", "max")


def read_movement(ctx: Reader, node: Node) -> model.Movement:
    m = ctx.mapping(node, "movement", MOVEMENT_KEYS, "{full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}")
    i_fs = m.qty("full_scale_current", "current", check="pos")
    r_m = m.qty("coil_resistance", "resistance", check="pos")
    cls_node = m.req("class", "1.5")
    cls = ctx.qty(cls_node, "dimensionless", "movement.class")
    if cls not in IEC_CLASSES:
        ctx.fail(
            f"movement.class {cls_node.text} is not an IEC 60051 class index; use one of "
            + ", ".join(f"{c:g}" for c in IEC_CLASSES),
            cls_node.line,
        )
    tempco = m.qty("tempco", "tempco", model.COPPER_TEMPCO_PER_K)
    tempco_bound(ctx, tempco, m, "tempco")
    tol = m.qty("tolerance", "fraction", 0.0, check="frac")
    fs_tol = m.qty("full_scale_tolerance", "fraction", 0.0, check="frac")
    overload = model.Overload()
    ov = m.sub("overload", OVERLOAD_KEYS, "{peg: 1.1, short_time: 20, continuous: 10, mechanical: 10}")
    if ov is not None:
        overload = _overload(ctx, ov)
    scale = _scale_geometry(ctx, m)
    return model.Movement(
        i_fs_a=i_fs,
        r_coil_ohm=r_m,
        class_index=cls,
        tempco_per_k=tempco,
        tolerance=tol,
        i_fs_tolerance=fs_tol,
        overload=overload,
        scale=scale,
    )


def _overload(ctx: Reader, ov: Section) -> model.Overload:
    """``movement.overload``: the end stop and the damage limits (multiples of I_fs), the thermal time."""
    d = model.Overload()
    peg = ov.qty("peg", "dimensionless", d.peg, check="pos")
    short = ov.qty("short_time", "dimensionless", d.short_time, check="pos")
    cont = ov.qty("continuous", "dimensionless", d.continuous, check="pos")
    mech = ov.qty("mechanical", "dimensionless", d.mechanical, check="pos")
    tau = ov.qty("thermal_time", "time", d.thermal_time_s, check="pos")
    for key, v in (("peg", peg), ("continuous", cont), ("mechanical", mech)):
        if v < 1:
            n = ov.get(key)
            ctx.fail(
                f"movement.overload.{key} is {v:g} times full scale; it must be at least 1 "
                "(the movement carries full-scale current by design)",
                n.line if n is not None else ov.line,
            )
    if short < cont:
        n = ov.get("short_time") or ov.get("continuous")
        ctx.fail(
            f"movement.overload.short_time ({short:g}) is below continuous ({cont:g}); what a movement "
            "survives briefly is at least what it survives continuously",
            n.line if n is not None else ov.line,
        )
    return model.Overload(peg=peg, short_time=short, continuous=cont, mechanical=mech, thermal_time_s=tau)


_ANGLE = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(deg|degrees?|°|rad)?\s*$")


def _scale_geometry(ctx: Reader, m: Section) -> model.ScaleGeometry:
    """``movement.scale``: the pointer's swing (arc) and the outer scale radius."""
    d = model.ScaleGeometry()
    sc = m.sub("scale", SCALE_KEYS, "{arc: 90 deg, radius: 60 mm}")
    if sc is None:
        return d
    arc = d.arc_deg
    n = sc.get("arc")
    if n is not None:
        ctx.scalar(n, sc.at("arc"), "'90 deg'")
        mt = _ANGLE.match(n.text or "")
        if mt is None:
            ctx.fail(f"{sc.at('arc')} is '{' '.join((n.text or '').split())}'; give an angle in degrees, e.g. "
                     "'90 deg' (a bare number is read as degrees; 'rad' is accepted too)", n.line)
        arc = float(mt.group(1)) * (180.0 / math.pi if mt.group(2) == "rad" else 1.0)
        lo, hi = SCALE_ARC_DEG
        if not lo <= arc <= hi:
            ctx.fail(f"{sc.at('arc')} is {arc:g} deg; give the pointer's swing from {lo:g} to {hi:g} deg, "
                     "e.g. '90 deg' (most panel meters) or '250 deg' (long-scale meters)", n.line)
    radius = sc.qty("radius", "length", d.radius_m, check="pos")
    lo, hi = SCALE_RADIUS_M
    if not lo <= radius <= hi:
        ctx.fail(f"{sc.at('radius')} is {radius * 1e3:g} mm; give the outer scale radius between "
                 f"{lo * 1e3:g} mm and {hi * 1e3:g} mm, e.g. '60 mm'", sc.get("radius").line)
    mirror = sc.boolean("mirror", d.mirror)
    return model.ScaleGeometry(arc_deg=arc, radius_m=radius, mirror=mirror, line=sc.line)


def read_ambient(ctx: Reader, node: Node | None) -> model.Ambient:
    d = model.Ambient()
    if node is None:
        return d
    m = ctx.mapping(node, "ambient", AMBIENT_KEYS, "{reference: 23 degC, min: 0 degC, max: 40 degC}")
    ref = m.qty("reference", "temperature", d.t_ref_k, check="pos")
    lo = m.qty("min", "temperature", d.t_min_k, check="pos")
    hi = m.qty("max", "temperature", d.t_max_k, check="pos")
    for key, v in (("reference", ref), ("min", lo), ("max", hi)):
        try:
            values.ambient_temperature(v, f"ambient.{key}")
        except QuantityError as e:
            ctx.fail(e.message, m.get(key).line)
    if not lo <= ref <= hi:
        if lo > hi:
            culprit, what = "min", "min is above max"
        elif ref < lo:
            culprit, what = "reference", "reference is below min"
        else:
            culprit, what = "reference", "reference is above max"
        n = m.get(culprit) or m.get("min") or m.get("max")
        ctx.fail(
            f"ambient: {what} ({_degc(lo)} / {_degc(ref)} / {_degc(hi)} for min / reference / max); "
            "give min <= reference <= max",
            n.line if n is not None else m.line,
        )
    return model.Ambient(t_ref_k=ref, t_min_k=lo, t_max_k=hi)


def _degc(t_k: float) -> str:
    return f"{t_k - model.ZERO_CELSIUS_K:.6g} degC"
