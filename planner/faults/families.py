"""The stimuli of the misrange matrix: the project's own sources and the built-in families.

Generic families, for every kind of range, are built here: the next range's full
scale (``range up`` / ``range down``), the declared maximum input in both
polarities and the impulse of the measurement category. Families that belong to
one kind of range (``mains on A range`` for current ranges) are that range kind's
own (:meth:`planner.ranges.RangeKind.misrange`); :func:`stimuli_for` puts them in
column order.
"""

from __future__ import annotations

from ..categories import IMPULSE_SOURCE_OHM, IMPULSE_TABLE_V, category_impulse  # noqa: F401 (re-exported)
from ..model import Spec
from ..stimulus import Stimulus
from ..tools import fmt

#: Column order of the built-in stimuli (after the project's own sources); the
#: impulse column, named after the category, comes last.
BUILT_IN_ORDER = ("range up", "range down", "max input", "max input reversed", "mains on A range")

#: What the matrix column of a neighbouring range's full scale says (each
#: position's own stimulus names its range).
NEIGHBOUR_COLUMNS = {
    "range up": "full scale of the next higher range of the same quantity",
    "range down": "full scale of the next lower range of the same quantity",
}


def impulse_stimulus(category: str) -> Stimulus:
    """The rated impulse of a measurement category as a stimulus (see :func:`category_impulse`)."""
    v, r, label = category_impulse(category)
    return Stimulus(f"{label} impulse", "voltage", v, "impulse", r,
                    detail=f"rated impulse {v:g} V peak through {r:g} ohm, both polarities (secondary source, verify)")


def same_kind_neighbours(net, p):
    """Next lower and next higher full scale among positions measuring the same quantity.

    Returns
    -------
    lower, higher : (float, str) or None
        Full scale and name of the neighbouring position, None at either end.
    """
    same = sorted({q.full_scale for q in net.positions if q.measures == p.measures})
    lower = [x for x in same if x < p.full_scale]
    higher = [x for x in same if x > p.full_scale]
    name = {q.full_scale: q.name for q in net.positions if q.measures == p.measures}
    return ((lower[-1], name[lower[-1]]) if lower else None), ((higher[0], name[higher[0]]) if higher else None)


def project_sources(spec: Spec) -> list[Stimulus]:
    """The project's own ``faults.sources`` as stimuli (a current source has no impedance or limit)."""
    return [Stimulus(s.name, s.kind, s.value, s.waveform, s.r_source_ohm if s.kind == "voltage" else 0.0,
                     s.current_limit_a if s.kind == "voltage" else None) for s in spec.faults.sources]


def stimuli_for(spec: Spec, net, position) -> list[Stimulus]:
    """Every stimulus of the matrix that applies to one position, in column order.

    Parameters
    ----------
    spec : Spec
    net : NetworkSpec
    position : Position

    Returns
    -------
    list of Stimulus
        The project's sources, ``range up`` and ``range down``, ``max input`` and
        ``max input reversed``, the range kind's own families, the category's impulse.
    """
    f = spec.faults
    out = project_sources(spec)
    lower, higher = same_kind_neighbours(net, position)
    unit = position.unit
    if higher:
        out.append(Stimulus("range up", position.kind.source, higher[0],
                            detail=f"{fmt(higher[0], unit, 4)}, full scale of '{higher[1]}'"))
    if lower:
        out.append(Stimulus("range down", position.kind.source, lower[0],
                            detail=f"{fmt(lower[0], unit, 4)}, full scale of '{lower[1]}'"))
    if f.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", f.max_input_v, detail="declared maximum input, DC, ideal source"))
        out.append(Stimulus("max input reversed", "voltage", -f.max_input_v,
                            detail="declared maximum input, reverse polarity"))
    out += position.kind.misrange(position, f)
    if f.category:
        out.append(impulse_stimulus(f.category))
    return out


def column_of(s: Stimulus) -> dict:
    """A stimulus as a matrix column (its JSON, with words that fit every position it applies to)."""
    return dict(s.as_dict(), detail=NEIGHBOUR_COLUMNS.get(s.name, s.detail))


def transition_stimuli(spec: Spec, p) -> list[Stimulus]:
    """What stays applied while the switch turns away from position ``p``: its full scale, the declared input."""
    out = [Stimulus("full scale", p.kind.source, p.full_scale, detail="full scale of the position being left")]
    if spec.faults.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", spec.faults.max_input_v, detail="declared maximum input"))
    return out
