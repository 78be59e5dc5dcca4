"""Realising a placement: the split made of standard values, a sized project's ``clamps:`` requests.

The search places a split at a continuous resistance; a buildable plan needs
preferred values. For an explicit network :func:`realise_explicit` replaces the
split resistor by standard-value parts whose sum stays on its value; for a
sized project :func:`realise_sized` writes the placement as ``clamps:`` requests
and lets the sizer lay it out. :func:`final` evaluates a realised point again at
the reported rows' phase resolution.

Public API
----------
:func:`split_values`, :func:`realise_explicit`, :func:`sized_clamps`,
:func:`sized_network`, :func:`sized_watch`, :func:`realise_sized`, :func:`final`.
"""

from __future__ import annotations

import math
from dataclasses import replace

from .. import eseries
from .. import network as nw
from ..errors import ProjectError
from ..model import ClampRequest, Diode, NetworkSpec, Resistor
from ..sizing import choose_value, size
from .candidates import Combo, Site
from .context import SearchContext
from .evaluate import (EXCEED, REPORT_PHASE_POINTS, Point, Topology, feasible, feasible_alone, run, topology,
                       topology_of)
from .ordering import lex_best
from .search import REFINE_XTOL_REL, SPLIT_HI, SPLIT_LO

__all__ = [
    "REALISE_TRIES",
    "failing_hint",
    "final_topology",
    "split_values",
    "realise_explicit",
    "sized_clamps",
    "sized_network",
    "sized_watch",
    "realise_sized",
    "placed_diodes",
    "final",
]

#: Lower split values tried when the split is made of standard values.
REALISE_TRIES = 4


# --- an explicit network ----------------------------------------------------------------------


def split_values(ctx: SearchContext, site: Site, r_star: float, r_cap: float) -> list[tuple[tuple, tuple]]:
    """Standard-value splits near ``r_star`` whose sum stays on the resistor's value.

    Returns up to :data:`REALISE_TRIES` (upper parts, lower parts) pairs, the lower
    value nearest ``r_star`` first, never above ``r_cap``: the lower part a single
    value of the project's series, the upper a single value (or, when no single
    value keeps the sum within the sizer's allowed error, the pair
    :func:`planner.sizing.choose_value` makes).

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors*.
    """
    total = site.r_ohm
    series = ctx.series
    allowed = ctx.allowed
    lows = []
    try:
        lows = eseries.values_in(series, max(r_star / 1.6, total * SPLIT_LO * 0.5), min(r_cap, total * SPLIT_HI))
    except ValueError:
        lows = []
    lows = sorted(set(lows), key=lambda v: (abs(math.log(v / r_star)), v))
    singles, pairs = [], []
    for lo in lows:
        rest = total - lo
        if rest <= 0:
            continue
        up = eseries.nearest(series, rest)
        if abs(lo + up - total) <= allowed * total * EXCEED:
            singles.append(((up,), (lo,)))
        elif len(pairs) < REALISE_TRIES:
            ch = choose_value(series, rest, allowed * total / rest)
            if len(ch.units) <= 2 and all(len(u) == 1 for u in ch.units) and \
                    abs(lo + ch.value - total) <= allowed * total * EXCEED:
                pairs.append((tuple(u[0] for u in ch.units), (lo,)))
        if len(singles) >= REALISE_TRIES:
            break
    return singles[:REALISE_TRIES] if singles else pairs[:REALISE_TRIES]


def realise_explicit(ctx: SearchContext, p: Point, topo: Topology | None) -> Point | None:
    """The point's split made of standard values, evaluated on the realised values.

    The candidates of :func:`split_values` whose upper and lower parts are single
    values are solved in one batch on the combo's grid topology (its two parts
    scaled to the standard values), the others one by one on their own network;
    the feasible one with the least worst multiple is kept.
    """
    if p.combo.site.kind != "split":
        return p
    memo = topo.memo if topo is not None else {}
    cap = p.r  # the feasible edge: the largest feasible r evaluated next to the point
    for x, mx in sorted(memo.items()):
        if x <= p.r:
            continue
        if not feasible(ctx, mx)[0]:
            break
        cap = x
    cands = split_values(ctx, p.combo.site, p.r, cap * (1 + REFINE_XTOL_REL))
    if not cands:
        return None
    out = []
    single = [c for c in cands if len(c[0]) == 1 and len(c[1]) == 1]
    if single and ctx.room(len(single)):
        t = topo if topo is not None else topology(ctx, p.combo)
        m = run(ctx, t, pairs=([c[0][0] for c in single], [c[1][0] for c in single]))
        feas = feasible(ctx, m)
        for i, (upper, lower) in enumerate(single):
            out.append(Point(p.combo, float(sum(lower)), m.row(i), bool(feas[i]), upper, lower, stage="realised"))
    for upper, lower in cands:
        if (upper, lower) in single or not ctx.room(1):
            continue
        t = topology(ctx, p.combo, upper=upper, lower=lower)
        m = run(ctx, t)
        out.append(Point(p.combo, float(sum(lower)), m, bool(feasible(ctx, m)[0]), upper, lower, stage="realised"))
    if not out:
        return None
    pool = [q for q in out if q.feasible] or out
    return min(lex_best(pool, lambda q: q.multiples),
               key=lambda q: (q.score, abs(sum(q.upper) + sum(q.lower) - p.combo.site.r_ohm), q.r))


# --- a sized project --------------------------------------------------------------------------


def sized_clamps(ctx: SearchContext, combo: Combo, r: float | None) -> tuple[ClampRequest, ...]:
    """The ``clamps:`` requests that make a combo in a sized project.

    The sizer orients a request's ``forward`` diodes anode toward the tap and its
    ``reverse`` diodes cathode toward the tap; a zener working in breakdown in the
    forward direction is therefore a ``reverse`` request, and the other way round.
    """
    at = "movement" if combo.site.kind == "movement" else float(r)
    pair = ()
    if combo.site.pair is not None:
        pair = (ClampRequest(at="movement", forward=combo.site.pair, reverse=combo.site.pair, count=1),)
    out = []
    for direction, st in (("forward", combo.forward), ("reverse", combo.reverse)):
        if st is None:
            continue
        anode_toward = (direction == "forward") == (st.mode == "junction")
        key = "forward" if anode_toward else "reverse"
        out.append({"key": key, "model": st.model, "count": st.count})
    if len(out) == 2 and out[0]["key"] != out[1]["key"] and out[0]["model"] == out[1]["model"] \
            and out[0]["count"] == out[1]["count"]:
        kw = {out[0]["key"]: out[0]["model"], out[1]["key"]: out[1]["model"]}
        return pair + (ClampRequest(at=at, forward=kw.get("forward"), reverse=kw.get("reverse"),
                                    count=out[0]["count"]),)
    return pair + tuple(ClampRequest(at=at, forward=o["model"] if o["key"] == "forward" else None,
                                     reverse=o["model"] if o["key"] == "reverse" else None, count=o["count"])
                        for o in out)


def sized_network(ctx: SearchContext, clamps) -> NetworkSpec:
    """The network the sizer builds for the project with these ``clamps:`` requests."""
    return size(replace(ctx.spec, clamps=tuple(clamps))).network


def sized_watch(net: NetworkSpec) -> tuple:
    """The parts of the sizer's clamp-tap segment and of the segment it splits off (their power counts)."""
    tap = {e.name: e for e in net.elements if isinstance(e, Resistor) and e.group and e.group.startswith("tap ")}
    nodes = {n for e in tap.values() for n in e.nodes if n.startswith("tap")}
    above = {e.group for e in net.elements if isinstance(e, Resistor) and e.name not in tap and set(e.nodes) & nodes}
    return tuple(e.name for e in net.elements if isinstance(e, Resistor) and (e.name in tap or e.group in above))


def realise_sized(ctx: SearchContext, p: Point) -> Point | None:
    """The point as a ``clamps:`` request, sized by the sizer and judged.

    A split's tap goes to the standard value at or below the search's
    resistance, and one step lower each time the sized result is infeasible
    (at most :data:`REALISE_TRIES` tries), unless what failed is the rating
    of a diode the placement does not hold (:func:`placed_diodes`: a
    protection part's, such as a ring crowbar's): a lower tap moves the
    clamp's error and its own diodes' stress, not another part's. Each try
    is judged for feasibility
    alone (:func:`planner.protect.evaluate.feasible_alone`, which stops at the
    first position that fails): the point returned for a split carries no
    metrics (``metrics`` None), :func:`final` evaluates it.
    """
    if p.combo.site.kind != "split":
        clamps = sized_clamps(ctx, p.combo, None)
        net = sized_network(ctx, clamps)
        topo = topology_of(ctx, net)
        if not ctx.room(1):
            return p
        m = run(ctx, topo)
        return Point(p.combo, None, m, bool(feasible(ctx, m)[0]), stage="realised", clamps=clamps, net=net)
    best = None
    # a standard value for the tap, so the sizer makes the tap segment of one part
    r = eseries.at_or_below(ctx.series, p.r)
    first = failing_hint(p)
    for _ in range(REALISE_TRIES):
        if not ctx.room(1):
            break
        clamps = sized_clamps(ctx, p.combo, r)
        try:
            net = sized_network(ctx, clamps)
        except ProjectError:
            break
        topo = topology_of(ctx, net, sized_watch(net))
        ok, _ = feasible_alone(ctx, topo, first=first)
        tap = [e for e in net.elements if isinstance(e, Resistor) and e.group == "tap 1"]
        # the sizer's node of the (only) clamp tap is "tap1"; the segment above it ends there
        above = {e.group for e in net.elements if isinstance(e, Resistor) and e.group not in (None, "tap 1")
                 and "tap1" in e.nodes}
        upper = tuple(e.value_ohm for e in net.elements if isinstance(e, Resistor) and e.group in above)
        q = Point(p.combo, r, None, ok, upper=upper, lower=tuple(e.value_ohm for e in tap),
                  stage="realised", clamps=clamps, net=net)
        if best is None or (q.feasible and not best.feasible):
            best = q
        if q.feasible or (ctx.failed_part is not None and ctx.failed_part not in placed_diodes(net, p.combo)):
            break  # (a part the placement does not hold failed: a lower tap leaves it as it is)
        r = eseries.at_or_below(ctx.series, r * (1.0 - 1e-9))
    return best


def placed_diodes(net: NetworkSpec, combo: Combo) -> set:
    """The diodes of a sized network that make a split placement: those joined by diodes alone, not through
    the movement's common side, to the sizer's clamp tap (``tap1``) or, with a movement pair, to the movement.

    The network's other clamp diodes are protection parts (a ring crowbar's stacks, joined to the rest
    through the common side alone)."""
    mov = nw.movement_element(net)
    reach = {"tap1"} | ({mov.a} if combo.site.pair is not None else set())
    diodes = [e for e in net.elements if isinstance(e, Diode) and e.clamp]
    grown = True
    while grown:
        grown = False
        for d in diodes:
            if d.anode in reach or d.cathode in reach:
                for n in d.nodes:
                    if n != mov.b and n not in reach:
                        reach.add(n)
                        grown = True
    return {d.name for d in diodes if any(n in reach and n != mov.b for n in d.nodes)}


# --- the reported pass ------------------------------------------------------------------------


def failing_hint(p: Point) -> tuple:
    """The position where a point's clamp diodes were stressed most (judged first when it is realised)."""
    case = p.metrics.stress_case[0] if p.metrics is not None and p.metrics.stress_case else None
    return (case[0],) if case else ()


def final_topology(ctx: SearchContext, p: Point) -> tuple[Topology, tuple | None]:
    """The realised network of a point, ready to run, and its ``clamps:`` requests (sized projects)."""
    clamps = None
    if ctx.sized:
        clamps = p.clamps or sized_clamps(ctx, p.combo, p.r)
        net = p.net if p.net is not None else sized_network(ctx, clamps)
        topo = topology_of(ctx, net, sized_watch(net))
    elif p.combo.site.kind == "split" and p.lower is not None:
        topo = topology(ctx, p.combo, upper=p.upper, lower=p.lower)
    else:
        topo = topology(ctx, p.combo)
    return topo, clamps


def final(ctx: SearchContext, p: Point, *, feasible_only: bool = False, first=()) -> Point | None:
    """The point evaluated again on its realised network, :data:`REPORT_PHASE_POINTS` per sine cycle.

    With ``feasible_only``, an infeasible point is only found out (position by
    position, :func:`planner.protect.evaluate.feasible_alone`, the positions in
    ``first`` judged first) and None returned; a feasible one is evaluated in full
    on the positions already solved. Either way it counts one row of the final pass.
    """
    topo, clamps = final_topology(ctx, p)
    if feasible_only:
        ok, _ = feasible_alone(ctx, topo, n_phase=REPORT_PHASE_POINTS, count=False, first=first)
        if not ok:
            return None
        m = run(ctx, topo, n_phase=REPORT_PHASE_POINTS, count=None)
    else:
        m = run(ctx, topo, n_phase=REPORT_PHASE_POINTS, count=False)
    return Point(p.combo, p.r, m, bool(feasible(ctx, m)[0]), p.upper, p.lower, stage="final", clamps=clamps)
