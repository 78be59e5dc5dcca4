"""Where Newton starts: each chain of parts solved behind its Thevenin equivalent.

The parts form *segments*: a single part (or an antiparallel group) between two nodes
with a linear branch, or a chain of such groups through nodes that only parts reach
(a diode stack). A segment of diodes is solved exactly as one composite junction
behind the Thevenin equivalent its two ends see (Banwell and Jayakumar's closed
form), its junction voltage shared out among the junctions by their own laws; a
varistor by the bound of :func:`planner.solve.varistor.start_voltage`. A few
Gauss-Seidel sweeps add the other segments' currents to each end's open-circuit
voltage.
"""

from __future__ import annotations

import math

import numpy as np

from . import varistor as vl
from .junction import SMALL, single_diode
from .memo import Kept
from .newton import GROUND, HELD, Rows, Structure


class Segment:
    """A chain of part groups from ``ends[0]`` to ``ends[1]`` through floating ``nodes``.

    ``steps[k]``: the parts of the k-th group as (part, orientation), orientation +1
    when the part's first terminal faces ``ends[0]``.
    """

    def __init__(self, ends, nodes, steps):
        self.ends, self.nodes, self.steps = ends, nodes, steps
        self.plans = Kept(PLANS_KEEP)  # by the parts of the groups, each shared across calls (:func:`_plan`)


def segments(st: Structure, inject=None):
    """Split the parts into segments (computed once per circuit)."""
    nd = len(st.kinds)
    links = {}
    for d in range(nd):
        a, c = st.pos[d], st.neg[d]
        key = (a, c) if (a, c) <= (c, a) else (c, a)
        links.setdefault(key, []).append(d)
    nbrs = {}
    for a, c in links:
        nbrs.setdefault(a, set()).add(c)
        nbrs.setdefault(c, set()).add(a)

    def inner(node):  # a chain passes through a floating node with exactly two neighbours
        return node >= 0 and st.floating[node] and len(nbrs.get(node, ())) == 2 and node != inject

    def group(x, y):
        key = (x, y) if (x, y) <= (y, x) else (y, x)
        return [(d, 1.0 if st.pos[d] == x else -1.0) for d in links[key]], key

    seen = set()
    out = []
    for key in links:
        if key in seen:
            continue
        x, y = key
        # walk back from x to the chain's first end
        prev, cur = y, x
        while inner(cur):
            nxt = next(iter(nbrs[cur] - {prev}))
            prev, cur = cur, nxt
            if cur == x:
                break
        start = cur
        nodes, steps = [], []
        prev, cur = None, start
        while True:
            cand = sorted(nbrs[cur] - ({prev} if prev is not None else set()), key=lambda v: (v < 0, v))
            if prev is None:  # leave the start along the chain that holds the original link
                cand = [c for c in cand if _on_chain(start, c, key, nbrs, inner)] or cand
            nxt = cand[0]
            g, k = group(cur, nxt)
            seen.add(k)
            steps.append(g)
            prev, cur = cur, nxt
            if not inner(cur) or cur == start:
                break
            nodes.append(cur)
        out.append(Segment((start, cur), nodes, steps))
    return out


def _on_chain(start, first, key, nbrs, inner):
    """Whether walking from ``start`` through ``first`` meets the link ``key``."""
    prev, cur = start, first
    while True:
        k = (prev, cur) if (prev, cur) <= (cur, prev) else (cur, prev)
        if k == key:
            return True
        if not inner(cur):
            return False
        nxt = next(iter(nbrs[cur] - {prev}))
        prev, cur = cur, nxt
        if cur == start:
            return False


def initial(rows: Rows, segs, w_inv, oc, sweeps: int = 3):
    """A starting point: node rows (T, n) and part rows (D, n).

    The segment helpers below run inside this function's ``errstate`` (an exponential
    that overflows, a log of zero: each is replaced by a finite value where it matters).

    ``w_inv[(i, j)]``: the anchors' impedance (rows per case), ``oc[m]``: each anchor's
    open-circuit voltage (rows per case).
    """
    st = rows.st
    n, t, nd = rows.n, st.t, len(st.kinds)
    held = rows.held
    anchors = st.anchors
    inj = {m: np.zeros(n) for m in anchors}  # current the parts feed into each anchor
    hub = {}
    u = [np.zeros(n) for _ in range(t)]
    w = [np.zeros(n) for _ in range(nd)]
    seg_i = [np.zeros(n) for _ in segs]

    def volt(ref):
        if ref == GROUND:
            return np.zeros(n)
        if ref == HELD:
            return np.broadcast_to(held, (n,)) + 0.0
        if st.floating[ref]:
            return hub.get(ref, np.zeros(n))
        acc = oc[ref]
        for m in anchors:
            acc = acc + w_inv[(ref, m)] * inj[m]
        return acc

    def zz(x, y):
        if x >= 0 and y >= 0 and not st.floating[x] and not st.floating[y]:
            return w_inv[(x, y)]
        return 0.0

    with np.errstate(all="ignore"):
        plans = [_plan(rows.parts, sg) for sg in segs]
        for _ in range(sweeps if len(segs) > 1 else 1):
            for k, sg in enumerate(segs):
                e0, e1 = sg.ends
                for e, sgn in ((e0, 1.0), (e1, -1.0)):  # take this segment's own current out
                    if e >= 0 and not st.floating[e]:
                        inj[e] = inj[e] + sgn * seg_i[k]
                v0, v1 = volt(e0), volt(e1)
                r_th = np.maximum(zz(e0, e0) + zz(e1, e1) - 2.0 * zz(e0, e1), 0.0)
                cur, steps_v = _segment(rows, sg, plans[k], v0 - v1, r_th, w)
                cur = np.where(np.isfinite(cur), cur, 0.0)
                seg_i[k] = cur
                for e, sgn in ((e0, -1.0), (e1, 1.0)):
                    if e >= 0 and not st.floating[e]:
                        inj[e] = inj[e] + sgn * cur
                acc = v0
                for node, dv in zip(sg.nodes, steps_v):
                    acc = acc - dv
                    u[node] = acc
            for m in hub.keys() | {x for sg in segs for x in sg.ends if x >= 0 and st.floating[x]}:
                far = [volt(sg.ends[1] if sg.ends[0] == m else sg.ends[0]) for sg in segs if m in sg.ends]
                hub[m] = sum(far) / max(len(far), 1)
        for m in anchors:
            u[m] = volt(m)
        for m, v in hub.items():
            u[m] = v
    u = [np.where(np.isfinite(x), x, 0.0) for x in u]
    w = [np.where(np.isfinite(x), x, 0.0) for x in w]
    return zero_where_undriven(rows, np.array(u).reshape(t, n), np.array(w).reshape(nd, n))


#: Plans kept per segment (for parts shared across calls, :attr:`Segment.plans`).
PLANS_KEEP = 64


def _plan(parts, sg: Segment) -> "_Plan":
    """The segment's :class:`_Plan`; made once for junctions shared across calls
    (:attr:`planner.solve.newton.Junction.shared`: every parameter one float)."""
    mine = tuple(parts[d] for g in sg.steps for d, _ in g)
    if not all(p.shared for p in mine):
        return _Plan(parts, sg)
    hit = sg.plans.get(mine)
    return hit if hit is not None else sg.plans.keep(mine, _Plan(parts, sg))


class _Plan:
    """What a segment's start needs of its parts' laws, the same in every sweep.

    ``forward``: per direction o in which every group has a part biased forward,
    (o, the most conducting such part of each group, the composite's n V_t, I_s and
    series resistance); ``blocks``: with no such direction, which groups block each
    polarity; ``breakdown``: per direction in which the segment conducts with some
    groups in breakdown (:func:`_breakdown_chains`), (o, [(part, in breakdown)],
    the sum of those breakdown voltages, the composite's n V_t, I_s and R_s).
    """

    def __init__(self, parts, sg: Segment):
        self.has_var = any(parts[d].kind == "varistor" for g in sg.steps for d, _ in g)
        self.forward, self.breakdown, self.blocks = [], [], None
        if self.has_var:
            return
        for o in (1.0, -1.0):
            chosen = []
            for g in sg.steps:
                best = _most_conducting(parts, g, o)
                if best is None:
                    chosen = None
                    break
                chosen.append(best)
            if chosen is None:
                continue
            nvt = sum(parts[d].nvt for d in chosen)
            ln_is = sum(parts[d].nvt * parts[d].ln_is for d in chosen) / nvt
            self.forward.append((o, chosen, nvt, np.exp(ln_is), sum(parts[d].r_s for d in chosen)))
        if not self.forward:
            self.blocks = {o: [all(od != o for _, od in g) for g in sg.steps] for o in (1.0, -1.0)}
        for o, chosen in _breakdown_chains(parts, sg):
            offset = nvt = acc = r_s = 0.0
            for d, bd in chosen:
                p = parts[d]
                nvt = nvt + p.nvt
                acc = acc + p.nvt * (p.ln_ibv if bd else p.ln_is)
                r_s = r_s + p.r_s
                if bd:
                    offset = offset + p.bv
            self.breakdown.append((o, chosen, offset, nvt, np.exp(acc / nvt), r_s))


def _segment(rows: Rows, sg: Segment, plan: _Plan, v_th, r_th, w):
    """Current (ends[0] -> ends[1]) and the voltage of each group (ends[0] side less the other)
    of one segment behind a Thevenin source; fills the parts' voltages into ``w``.

    A chain that can conduct with some of its groups in breakdown (a zener or a
    suppressor pair) is also solved that way, and takes that answer in the cases
    where it carries more current in its direction than the forward-only one.
    """
    cur, steps_v = _segment_plain(rows, sg, plan, v_th, r_th, w)
    for bd in plan.breakdown:
        o = bd[0]
        wb = list(w)
        cur_b, sv_b = _through_breakdown(rows, sg, bd, o * v_th, r_th, wb)
        take = (cur_b > 0.0) & (cur_b > o * cur)
        if not np.any(take):
            continue
        for d in range(len(w)):
            if wb[d] is not w[d]:
                w[d] = np.where(take, wb[d], w[d])
        cur = np.where(take, o * cur_b, cur)
        steps_v = [np.where(take, b_, a_) for a_, b_ in zip(steps_v, sv_b)]
    return cur, steps_v


def _most_conducting(parts, group, o):
    """The part of a group biased forward in direction o with the largest I_s (None: no such part)."""
    fwd = [d for d, od in group if od == o]
    return max(fwd, key=lambda d: float(np.max(parts[d].i_s))) if fwd else None


def _breakdown_chains(parts, sg: Segment) -> list:
    """The ways a segment conducts with some groups in breakdown: (direction, [(part, in breakdown)]).

    In direction o each group conducts through its most conducting part biased forward,
    or, with none, through the part with the lowest breakdown voltage biased in reverse.
    """
    out = []
    for o in (1.0, -1.0):
        chosen, any_bd = [], False
        for g in sg.steps:
            fwd = _most_conducting(parts, g, o)
            if fwd is not None:
                chosen.append((fwd, False))
                continue
            rev = [d for d, od in g if od != o and parts[d].has_bv]
            if not rev:
                chosen = None
                break
            chosen.append((min(rev, key=lambda d: float(np.min(parts[d].bv))), True))
            any_bd = True
        if chosen is not None and any_bd:
            out.append((o, chosen))
    return out


def _through_breakdown(rows: Rows, sg: Segment, chain, v_dir, r_th, w):
    r"""A chain conducting in its direction o with some groups in breakdown (``chain``, an entry
    of :attr:`_Plan.breakdown`): the current in that direction and each group's voltage
    (ends[0] side less the other); fills ``w``.

    Notes
    -----
    A junction in breakdown carries :math:`I_{BV} e^{(-v - BV)/nV_t}` (the contract's
    reverse law): the law of a forward junction of saturation current I_BV shifted by
    BV. The chain is one composite junction of :math:`nV_t = \sum nV_{t,k}` and
    :math:`\ln I_s = \sum nV_{t,k} \ln I_k / nV_t` behind :math:`V - \sum BV_k`, solved in
    closed form (:func:`planner.solve.junction.single_diode`); each group then sits at
    its own law's voltage at that current.
    """
    parts = rows.parts
    o, chosen, offset, nvt, i_s, r_s = chain
    cur = single_diode(v_dir - offset, r_th + r_s, i_s, nvt)
    cur = np.where(np.isfinite(cur), cur, 0.0)
    pos = np.maximum(cur, 1e-300)
    steps_v = []
    for g, (d, bd) in zip(sg.steps, chosen):
        p = parts[d]
        if bd:
            vk = np.maximum(p.bv + p.nvt * (np.log(pos) - p.ln_ibv), 0.0)
            own = np.maximum(-vk, -(p.bv + np.maximum(p.vcr_bv, 1.5)))
        else:
            vk = p.nvt * np.log1p(pos / p.i_s)
            own = p.start_limits(vk)
        gv = o * (vk + p.r_s * pos)
        steps_v.append(gv)
        for dd, od in g:
            w[dd] = own if dd == d else parts[dd].start_limits(od * gv)
    return cur, steps_v


def _segment_plain(rows: Rows, sg: Segment, plan: _Plan, v_th, r_th, w):
    """:func:`_segment` with each group conducting forward only (varistor chains: by their laws)."""
    parts = rows.parts
    n = rows.n
    k = len(sg.steps)
    if plan.has_var:
        if k == 1:
            est = None
            for d, o in sg.steps[0]:
                p = parts[d]
                v = vl.start_voltage(v_th, r_th + 0.0, p) if p.kind == "varistor" else v_th
                est = v if est is None else np.where(np.abs(v) < np.abs(est), v, est)
            for d, o in sg.steps[0]:
                w[d] = parts[d].start_limits(o * est)
            cur = np.where(r_th > 0, (v_th - est) / np.where(r_th > 0, r_th, 1.0), 0.0)
            return cur, [est]
        return _chain_by_bisection(rows, sg, v_th, r_th, w)
    if plan.blocks is not None:  # back to back: no direction conducts forward
        # the groups that block the case's polarity share its voltage; a group that the
        # polarity biases forward starts at 0 V (it carries only the blocking ones' leakage
        # or breakdown current; started on its exponential, Newton would walk it down by
        # about n V_t a step)
        blocks = plan.blocks
        positive = v_th >= 0
        steps_v = [np.where(positive, v_th / sum(blocks[1.0]) if bp else 0.0,
                            v_th / sum(blocks[-1.0]) if bn else 0.0)
                   for bp, bn in zip(blocks[1.0], blocks[-1.0])]
        steps_v = _carry_leak(parts, sg, blocks, positive, steps_v)
        for g, v in zip(sg.steps, steps_v):
            for d, o in g:
                w[d] = parts[d].start_limits(o * v)
        return np.zeros(n), steps_v
    results = []
    currents = _forward_currents(plan.forward, v_th, r_th, n)
    for (o, chosen, nvt, i_s, r_s), cur in zip(plan.forward, currents):
        r = r_th + r_s
        cur = np.where(np.isfinite(cur), cur, 0.0)
        wd = list(w)
        c, sv = _share(rows, sg, o * v_th, o, chosen, cur, nvt, r, wd)
        results.append((cur, c, sv, wd))
    if len(results) == 1:
        cur, c, sv, wd = results[0]
        w[:] = wd
        return c, sv
    (cp, c_p, sv_p, w_p), (cn, c_n, sv_n, w_n) = results
    better = cn > cp  # per case, the direction that conducts more forward
    for d in range(len(w)):
        if w_p[d] is not w_n[d]:
            w[d] = np.where(better, w_n[d], w_p[d])
    return np.where(better, c_n, c_p), [np.where(better, b_, a_) for a_, b_ in zip(sv_p, sv_n)]


def _forward_currents(forward, v_th, r_th, n):
    """The composite junction's current in each direction of ``forward`` (:attr:`_Plan.forward`).

    The two directions of an antiparallel segment go into one :func:`single_diode` call with
    their cases side by side: the same values as a call each, at half the calls (a few cases,
    at most :data:`planner.solve.junction.SMALL`, keep a call each: the float form).
    """
    if len(forward) != 2 or n <= SMALL:
        return [single_diode(o * v_th, r_th + r_s, i_s, nvt) for o, _, nvt, i_s, r_s in forward]
    (o1, _, nvt1, is1, rs1), (o2, _, nvt2, is2, rs2) = forward
    both = single_diode(*(_side_by_side(a, b, n) for a, b in
                          ((o1 * v_th, o2 * v_th), (r_th + rs1, r_th + rs2), (is1, is2), (nvt1, nvt2))))
    return [both[:n], both[n:]]


def _side_by_side(a, b, n):
    """One float where both directions share it, else both directions' rows end to end."""
    if not isinstance(a, np.ndarray) and not isinstance(b, np.ndarray) and a == b:
        return a
    out = np.empty(2 * n)
    out[:n] = a
    out[n:] = b
    return out


def _carry_leak(parts, sg, blocks, positive, steps_v):
    """Back-to-back groups: a group biased forward starts where it carries what the blocking ones pass.

    The blocking groups' current at their share (leakage, or breakdown clipped to BV) is
    the series current; a group biased forward then sits at n V_t ln(1 + I / I_s) of its
    most conducting part in that direction (its own law, R_s and G_p left out).
    """
    for o, mask in ((1.0, positive), (-1.0, ~positive)):
        if not np.any(mask):
            continue
        i_series = None
        for g, v, blocking in zip(sg.steps, steps_v, blocks[o]):
            if not blocking:
                continue
            i_g = sum(np.abs(parts[d].current(parts[d].start_limits(od * v))) for d, od in g)
            i_series = i_g if i_series is None else np.minimum(i_series, i_g)
        if i_series is None:
            continue
        out = []
        for g, v, blocking in zip(sg.steps, steps_v, blocks[o]):
            if blocking:
                out.append(v)
                continue
            pb = parts[_most_conducting(parts, g, o)]
            vf = pb.nvt * np.log1p(i_series / pb.i_s)
            out.append(np.where(mask & np.isfinite(vf), o * vf, v))
        steps_v = out
    return steps_v


def _chain_by_bisection(rows, sg, v_th, r_th, w, iterations: int = 80):
    """A chain holding varistors: the common current found by bisection on its logarithm.

    Each group's voltage at a current I is that of its most conducting part in the
    current's direction (a varistor's V_1 (I/I_1)^(1/alpha), a forward junction's
    nV_t ln(1 + I/I_s) + R_s I); the current makes R_th I plus their sum equal |V_th|.
    """
    parts = rows.parts
    n = rows.n
    sgn = np.where(v_th < 0, -1.0, 1.0)
    target = np.abs(v_th)

    def group_v(g, i):
        best = None
        for d, o in g:
            p = parts[d]
            if p.kind == "varistor":
                v = p.v1 * np.exp(np.log(i / p.i1) / p.alpha)
            else:
                v = np.where(o * sgn > 0, p.nvt * np.log1p(i / p.i_s) + p.r_s * i, np.inf)
            best = v if best is None else np.minimum(best, v)
        return best

    lo = np.full(n, math.log(1e-300))
    hi = np.log(np.maximum(np.where(r_th > 0, target / np.where(r_th > 0, r_th, 1.0), 1e30), 1e-300)) + 1.0
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        i = np.exp(mid)
        total = r_th * i + sum(np.where(np.isfinite(v), v, 1e300) for v in (group_v(g, i) for g in sg.steps))
        over = total > target
        hi = np.where(over, mid, hi)
        lo = np.where(over, lo, mid)
    i = np.exp(0.5 * (lo + hi))
    steps_v = []
    for g in sg.steps:
        v = group_v(g, i)
        v = np.where(np.isfinite(v), v, target / len(sg.steps))
        steps_v.append(sgn * v)
        for d, o in g:
            w[d] = parts[d].start_limits(o * sgn * v)
    return np.where(target > 0, sgn * i, 0.0), steps_v


def _share(rows, sg, v_dir, o, chosen, cur, nvt_eq, r, w):
    """Share a composite junction's voltage among its junctions; returns the current
    (ends[0] -> ends[1]) and each group's voltage (ends[0] side less the other)."""
    parts = rows.parts
    vj_total = v_dir - r * cur  # the composite junction's voltage, in its own direction
    x_eq = vj_total / nvt_eq
    ps = [parts[d] for d in chosen]
    i0 = ps[0].i_s
    same = all(p.i_s is i0 or (not isinstance(p.i_s, np.ndarray) and not isinstance(i0, np.ndarray) and p.i_s == i0)
               or (isinstance(p.i_s, np.ndarray) and isinstance(i0, np.ndarray) and np.array_equal(p.i_s, i0))
               for p in ps)
    if same:
        xs = [x_eq] * len(ps)
    else:
        # forward: each junction's own law at the common current; reverse: the junction
        # with the least I_s takes what the others, each near its own -I_s, leave
        i_min = ps[0].i_s
        for p in ps[1:]:
            i_min = np.minimum(i_min, p.i_s)
        xs = []
        for p in ps:
            fwd = np.log1p(np.maximum(cur, 0.0) / p.i_s)
            ratio = i_min / p.i_s
            rev = np.where(ratio < 1.0, np.log1p(-np.minimum(ratio, 1.0)), -np.inf)
            xs.append(np.where(x_eq >= 0, fwd, np.maximum(rev, x_eq)))
        rest = vj_total - sum(p.nvt * x for p, x in zip(ps, xs))
        mins = [np.broadcast_to(p.i_s <= i_min, (rows.n,)) for p in ps]
        nvt_min = sum(np.where(m, p.nvt, 0.0) for p, m in zip(ps, mins))
        extra = np.where(x_eq < 0, rest / np.where(nvt_min > 0, nvt_min, 1.0), 0.0)
        xs = [np.where(m, x + extra, x) for x, m in zip(xs, mins)]
    steps_v = []
    for g, d, p, x in zip(sg.steps, chosen, ps, xs):
        vj = p.nvt * x
        v = o * (vj + p.r_s * cur)  # the group's voltage, ends[0] side less the other
        steps_v.append(v)
        for dd, od in g:
            w[dd] = parts[dd].start_limits(vj if dd == d else od * v)
    return o * cur, steps_v


def zero_where_undriven(rows: Rows, u, w):
    """Start cases without drive (zero stimulus, no EMF) at exactly zero, their exact solution
    without breakdown terms (the Wright-omega start leaves rounding residue there)."""
    undriven = rows.undriven
    if undriven.any():
        u = np.where(undriven, 0.0, u)
        w = np.where(undriven, 0.0, w)
    return u, w
