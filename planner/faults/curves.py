"""Protection curves: the movement current over a sweep of the input, with and without the clamps."""

from __future__ import annotations

from dataclasses import replace

import networkx as nx
import numpy as np

from ..engine import Engine

#: Points of each protection-curve sweep.
CURVE_POINTS = 201


def without_clamps(net):
    """The network with every clamp part removed, and any element left dangling by it.

    Parameters
    ----------
    net : NetworkSpec

    Returns
    -------
    NetworkSpec
        Without the parts that say they are clamps (:attr:`planner.parts.Part.clamp`),
        then without every element one of whose nodes is left joined to nothing
        else (unless it is an input terminal), until none is.
    """
    elems = [e for e in net.elements if not e.clamp]
    terminals = {n for p in net.positions for n in p.input}
    while True:
        g = nx.MultiGraph()
        for e in elems:
            g.add_edge(*e.nodes, key=e.name)
        loose = {n for n in g.nodes if g.degree(n) == 1 and n not in terminals}
        keep = [e for e in elems if not (set(e.nodes) & loose)]
        if len(keep) == len(elems):
            return replace(net, elements=tuple(keep))
        elems = keep


#: Sweep of an ohms position's protection curve without a declared maximum input [V]:
#: the crest of a 230 V rms outlet (common practice for a European outlet).
OHMS_SPAN_V = 230.0 * 2 ** 0.5


def protection_curve(engine: Engine, bare: Engine | None, position, *, span=None, points: int = CURVE_POINTS) -> dict:
    """Movement current over a sweep of the applied quantity, with and without the clamps.

    Parameters
    ----------
    engine : Engine
        The whole network.
    bare : Engine or None
        The same network without its clamps (:func:`without_clamps`; None when it
        has none).
    position : Position
    span : float, optional
        Sweep from ``-span`` to ``+span`` [V] or [A]; by default the declared maximum
        input for a voltage position, else ten times the full scale.
    points : int

    Returns
    -------
    dict
        ``position``, ``quantity``, ``unit``, ``applied``, ``movement_current_a``,
        ``movement_current_unclamped_a``, ``halving_input_positive``,
        ``halving_input_negative`` (the smallest |input| of each polarity at which
        the clamps carry the movement current down to half its unclamped value,
        linearly interpolated; None if never within the sweep).
    """
    spec = engine.spec
    if span is None:
        if position.kind.source == "voltage" and spec.faults.max_input_v is not None:
            span = spec.faults.max_input_v
        else:
            drive = position.kind.full_scale_drive(position)
            # an ohms range is driven by its battery: sweep up to the wall outlet's crest instead
            span = 10.0 * drive if drive > 0 else OHMS_SPAN_V
    x = np.linspace(-span, span, points)
    i_c = engine.operate(position.name, x).movement_current_a[0]
    i_u = bare.operate(position.name, x).movement_current_a[0] if bare is not None else i_c
    return {
        "position": position.name,
        "quantity": position.measures,
        "unit": "V" if position.kind.source == "voltage" else "A",
        "applied": x.tolist(),
        "movement_current_a": i_c.tolist(),
        "movement_current_unclamped_a": i_u.tolist(),
        "has_clamps": bare is not None,
        "halving_input_positive": _halving(x, i_c, i_u, x > 0) if bare is not None else None,
        "halving_input_negative": _halving(x, i_c, i_u, x < 0) if bare is not None else None,
    }


def _halving(x, i_c, i_u, sel) -> float | None:
    """Smallest |input| among ``x[sel]`` where the clamped current is half the unclamped one (linear interpolation)."""
    xs, c, u = x[sel], np.abs(i_c[sel]), np.abs(i_u[sel])
    order = np.argsort(np.abs(xs))
    xs, c, u = xs[order], c[order], u[order]
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(u > 0, c / u, 1.0)
    hit = np.nonzero(r <= 0.5)[0]
    if not len(hit):
        return None
    k = hit[0]
    if k == 0:
        return float(xs[0])
    r0, r1 = r[k - 1], r[k]
    t = (r0 - 0.5) / (r0 - r1) if r0 != r1 else 1.0
    return float(xs[k - 1] + t * (xs[k] - xs[k - 1]))
