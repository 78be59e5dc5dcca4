"""Cautions for a project whose ranges, sources, declared input or misrange stimuli are hazardous.

References
----------
IEC 61010-1:2010, clause 6.3.1: hazardous-live limits 33 V rms, 46.7 V peak, 70 V DC.
"""

from __future__ import annotations

from ..model import Spec
from ..stimulus import HAZARD_DC_V, HAZARD_PEAK_V, HAZARD_RMS_V, Stimulus
from ..stress import STANDARD_CAUTIONS, stimulus_cautions
from ..tools import fmt
from .families import impulse_stimulus


def cautions_for(spec: Spec) -> list[str]:
    """Cautions for a project whose ranges, sources or declared input are hazardous.

    Parameters
    ----------
    spec : Spec

    Returns
    -------
    list of str
        Empty when nothing in the project exceeds the hazardous-live limits and no
        measurement category is declared; otherwise what is hazardous, followed by
        the standard cautions (verify by test; IEC 61010-1, local codes and licensed
        practice; a planning aid, not a certification).

    References
    ----------
    IEC 61010-1:2010, clause 6.3.1: hazardous-live limits 33 V rms, 46.7 V peak,
    70 V DC.
    """
    out = []
    ranges = set()
    if spec.network is not None:
        ranges |= {(p.name, p.full_scale) for p in spec.network.positions if p.kind.source == "voltage"}
    if spec.voltage is not None:
        ranges |= {(fmt(v, "V", 4), v) for v in spec.voltage.full_scales}
    hot = sorted({v for _, v in ranges if v > HAZARD_DC_V})
    limits = f"({HAZARD_RMS_V:g} V rms, {HAZARD_PEAK_V:g} V peak, {HAZARD_DC_V:g} V DC)"
    if hot:
        names = ", ".join(fmt(v, "V", 4) for v in hot)
        many = len(hot) > 1
        out.append(f"Hazardous voltage: the range{'s' if many else ''} {names} measure{'' if many else 's'} "
                   f"voltages above the hazardous-live limits of IEC 61010-1 {limits}.")
    if spec.faults.max_input_v is not None and spec.faults.max_input_v > HAZARD_DC_V:
        out.append(f"Hazardous voltage: the declared maximum input {fmt(spec.faults.max_input_v, 'V', 4)} exceeds "
                   f"the hazardous-live limits of IEC 61010-1 {limits}.")
    srcs = [Stimulus(s.name, s.kind, s.value, s.waveform, s.r_source_ohm, s.current_limit_a)
            for s in spec.faults.sources if s.kind == "voltage"]
    out += [c for c in stimulus_cautions(srcs) if c not in STANDARD_CAUTIONS]
    if spec.faults.category:
        out.append(f"Measurement category {spec.faults.category}: the impulse voltages used are from secondary "
                   "sources; check them, the clearances and the creepage distances against IEC 61010-1 and "
                   "IEC 61010-2-030.")
    if out:
        out += list(STANDARD_CAUTIONS)
    return out


def matrix_cautions(spec: Spec, positions) -> list[str]:
    """:func:`cautions_for` plus the built-in stimuli of the matrix that are hazardous.

    The ranges, the declared input and the project's sources are in
    :func:`cautions_for`; what the matrix adds are the range kinds' own families
    (:meth:`planner.ranges.RangeKind.misrange`, e.g. the wall outlet on a current
    range) and the category's impulse, on the positions judged.
    """
    base = [c for c in cautions_for(spec) if c not in STANDARD_CAUTIONS]
    seen, extra = set(), []
    for p in positions:
        stims = list(p.kind.misrange(p, spec.faults))
        if spec.faults.category:
            stims.append(impulse_stimulus(spec.faults.category))
        for s in stims:
            key = (s.name, s.kind, s.value, s.waveform)
            if key in seen:
                continue
            seen.add(key)
            extra += [c for c in stimulus_cautions([s]) if c not in STANDARD_CAUTIONS]
    out = list(dict.fromkeys(base + extra))
    return out + list(STANDARD_CAUTIONS) if out else []
