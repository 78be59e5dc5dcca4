"""The stimuli of the misrange matrix: the project's own sources and the built-in families.

Generic families, for every kind of range, are built here: the next range's full
scale (``range up`` / ``range down``), the declared maximum input in both
polarities and the impulse of the measurement category. Families that belong to
one kind of range (``mains on A range`` for current ranges) are that range kind's
own (:meth:`planner.ranges.RangeKind.misrange`); :func:`stimuli_for` puts them in
column order.
"""

from __future__ import annotations

from dataclasses import replace

from ..categories import IMPULSE_SOURCE_OHM, IMPULSE_TABLE_V, category_impulse  # noqa: F401 (re-exported)
from ..model import Spec
from ..stimulus import Stimulus
from ..tools import fmt

#: Compliance [V] of the current sources of the matrix when none is given (the built-in
#: ``range up`` / ``range down`` on current ranges, the current transitions, a project's
#: current source without ``compliance``): the top of a common bench supply, the
#: circuit a misranged ammeter is most often in (common practice); never above the
#: declared maximum input. Higher-voltage circuits are the ``max input`` and mains
#: families' business.
DEFAULT_COMPLIANCE_V = 30.0

#: Column order of the built-in stimuli (after the project's own sources); the
#: impulse column, named after the category, comes last.
BUILT_IN_ORDER = ("range up", "range down", "max input", "max input reversed", "max input sine", "mains on A range",
                  "mains on AC range", "mains on ohms range", "battery reversed", "DC on AC range",
                  "DC on AC range reversed", "AC on DC range")

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


def default_compliance_v(spec: Spec) -> float:
    """Compliance of a current source the project does not bound [V]: ``DEFAULT_COMPLIANCE_V``,
    or the declared maximum input where that is lower."""
    m = spec.faults.max_input_v
    return DEFAULT_COMPLIANCE_V if m is None else min(DEFAULT_COMPLIANCE_V, m)


def project_sources(spec: Spec) -> list[Stimulus]:
    """The project's own ``faults.sources`` as stimuli (a current source has no impedance or limit,
    and a compliance: its own or :func:`default_compliance_v`)."""
    out = []
    for s in spec.faults.sources:
        cur = s.kind == "current"
        comp = (s.compliance_v if s.compliance_v is not None else default_compliance_v(spec)) if cur else None
        extra = {"frequency_hz": s.frequency_hz} if s.frequency_hz is not None else {}
        out.append(Stimulus(s.name, s.kind, s.value, s.waveform, 0.0 if cur else s.r_source_ohm,
                            None if cur else s.current_limit_a, compliance_v=comp, **extra))
    return out


def _compliance(spec: Spec, kind: str) -> float | None:
    """The default compliance of a built-in stimulus of a source kind (None for a voltage)."""
    return default_compliance_v(spec) if kind == "current" else None


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
    lower, higher = same_kind_neighbours(net, position) if position.kind.range_steps else (None, None)
    unit = position.unit
    wave = position.kind.waveform  # an AC range's neighbour is a sine of its rms
    if higher:
        out.append(Stimulus("range up", position.kind.source, higher[0], wave,
                            detail=f"{fmt(higher[0], unit, 4)}, full scale of '{higher[1]}'",
                            compliance_v=_compliance(spec, position.kind.source)))
    if lower:
        out.append(Stimulus("range down", position.kind.source, lower[0], wave,
                            detail=f"{fmt(lower[0], unit, 4)}, full scale of '{lower[1]}'",
                            compliance_v=_compliance(spec, position.kind.source)))
    if f.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", f.max_input_v, detail="declared maximum input, DC, ideal source"))
        out.append(Stimulus("max input reversed", "voltage", -f.max_input_v,
                            detail="declared maximum input, reverse polarity"))
    # a range kind's own current stimuli get the default compliance like the built-in ones
    out += [replace(s, compliance_v=_compliance(spec, s.kind)) if s.kind == "current" and s.compliance_v is None
            else s for s in position.kind.misrange(position, f)]
    if wave == "dc" and any(q.kind.waveform != "dc" for q in net.positions):
        out.append(Stimulus("AC on DC range", position.kind.source, position.full_scale, "sine",
                            detail="a sine of the full scale's rms on a DC range (an AC measurement on the wrong "
                                   "position)", compliance_v=_compliance(spec, position.kind.source)))
    if f.category:
        out.append(impulse_stimulus(f.category))
    return out


def column_of(s: Stimulus) -> dict:
    """A stimulus as a matrix column (its JSON, with words that fit every position it applies to)."""
    return dict(s.as_dict(), detail=NEIGHBOUR_COLUMNS.get(s.name, s.detail))


def transition_stimuli(spec: Spec, p) -> list[Stimulus]:
    """What stays applied while the switch turns away from position ``p``: its full scale, the declared input."""
    out = [Stimulus("full scale", p.kind.source, p.kind.full_scale_drive(p), detail="full scale of the position being left",
                    compliance_v=_compliance(spec, p.kind.source))]
    if spec.faults.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", spec.faults.max_input_v, detail="declared maximum input"))
    return out
