"""Retrim an existing network: the fewest parts to change so every range reads right.

``planner size FILE --retrim`` keeps the file's explicit network as it is and
proposes new values for as few resistors as will do, so that every position's
nominal error (full-scale input, marked values, reference temperature) lies
within a tenth of the class: the parts to replace, never a new design. The
search is that of :func:`planner.diagnose.plan_replacements` with every part at
its marked value: the part that brings the largest error down most, one at a
time; values from the E-series, a series or parallel pair, or a fixed part and a
trimmer; every position checked by solving it again.

Public API
----------
:func:`retrim` (Spec -> :class:`Retrim`), :func:`retrim_json`, :func:`format_retrim`.
"""

from __future__ import annotations

from dataclasses import dataclass

from .errors import ProjectError, UsageError
from .model import Resistor, Spec

__all__ = ["RETRIM_SHARE", "Retrim", "retrim", "retrim_json", "format_retrim"]

#: Share of the class each position's nominal error is brought within.
RETRIM_SHARE = 0.1


@dataclass
class Retrim:
    """The parts to replace and each position's nominal error before and after.

    Attributes
    ----------
    title : str
    class_index : float
    share : float
        Share of the class aimed within.
    plan : planner.diagnose.Plan
    """

    title: str
    class_index: float
    share: float
    plan: object

    @property
    def requirements_met(self) -> bool:
        return bool(self.plan.met)


def retrim(spec: Spec, *, series: str | None = None, share: float = RETRIM_SHARE) -> Retrim:
    """Values that bring every position's nominal error within ``share`` of the class.

    Parameters
    ----------
    spec : Spec
        A project with an explicit ``network``.
    series : str, optional
        E-series of the new parts; each part's own (else ``parts.resistors``) by default.
    share : float
        Share of the class index each position's nominal error must stay within.

    Returns
    -------
    Retrim

    Raises
    ------
    ProjectError
        When the project has no explicit network.

    Notes
    -----
    Nominal error of position k (design contract):
    :math:`e_k = (r_k(FS_k) - FS_k) / FS_k \\times 100`, at the marked values and
    the reference temperature, solved through the engine; the target is
    :math:`|e_k| \\le` share x class index.

    References
    ----------
    IEC 60051-1:2016, clause 3 (class index: limits of intrinsic error in % of the
    fiducial value).
    """
    if spec.network is None:
        raise ProjectError("--retrim keeps an existing network, and this project has none: give the meter's "
                           "'network' section, or run 'planner size' without --retrim to size a new one",
                           spec.path)
    if not 0.0 < share <= 1.0:
        raise UsageError("the retrim share must lie between 0 and 1 (a share of the class index)")
    from .diagnose import Meter, plan_replacements

    meter = Meter(spec)
    default = series or spec.parts.resistors.series
    resistors = [e for e in meter.net.elements if isinstance(e, Resistor)]
    series_for = {e.name: series or e.series or default for e in resistors}
    target = share * meter.class_index
    plan = plan_replacements(meter, {}, [e.name for e in resistors], [], target, series_for)
    return Retrim(spec.title, meter.class_index, share, plan)


def retrim_json(r: Retrim) -> dict:
    """The JSON object of ``planner size --retrim --json`` (SI units, unit in each name)."""
    from .diagnose import replacement_json

    p = r.plan
    return {
        "title": r.title,
        "retrim": True,
        "class_index": r.class_index,
        "share": r.share,
        "target_pct": float(p.target_pct[0]) if len(p.target_pct) else None,
        "positions": [{
            "name": name,
            "nominal_error_pct": float(p.errors_before_pct[k]),
            "error_after_pct": float(p.errors_after_pct[k]),
            "within_target": bool(abs(p.errors_after_pct[k]) <= p.limit_pct[k] * (1 + 1e-9)),
        } for k, name in enumerate(p.positions)],
        "replacements": [replacement_json(x) for x in p.replacements],
        "requirements_met": r.requirements_met,
    }


def format_retrim(r: Retrim) -> str:
    """The readable report of ``planner size --retrim``."""
    from .units import format_si

    p = r.plan
    target = float(p.target_pct[0]) if len(p.target_pct) else float("nan")
    lines = [f"{r.title}: retrim of the existing network (class {r.class_index:g}; every position's nominal "
             f"error within {target:.3g} % of full scale, a {r.share:g} share of the class)", ""]
    if p.replacements:
        lines.append("replace:")
        for x in p.replacements:
            parts = " + ".join(("trimmer " if q["trimmer"] else "") + format_si(q["value_ohm"], "ohm")
                               for q in x.parts)
            how = "" if x.arrangement == "single" else f" ({x.arrangement})"
            rng = ""
            if x.trimmer_range_ohm is not None:
                rng = (f", set on the bench within {format_si(x.trimmer_range_ohm[0], 'ohm')} to "
                       f"{format_si(x.trimmer_range_ohm[1], 'ohm')}")
            lines.append(f"  {x.part:<8} {format_si(x.nominal_ohm, 'ohm'):>10} -> {parts}{how}, {x.series} "
                         f"({format_si(x.value_ohm, 'ohm')}, wanted {format_si(x.wanted_ohm, 'ohm')}){rng}")
    else:
        lines.append("replace: nothing - every position is within the target already")
    lines.append("")
    lines.append(f"{'position':<12}{'nominal %':>11}{'after %':>10}  verdict")
    for k, name in enumerate(p.positions):
        ok = abs(p.errors_after_pct[k]) <= p.limit_pct[k] * (1 + 1e-9)
        lines.append(f"{name:<12}{p.errors_before_pct[k]:>+11.3f}{p.errors_after_pct[k]:>+10.3f}  "
                     f"{'within target' if ok else 'OUTSIDE TARGET'}")
    lines.append("")
    lines.append("RESULT: " + ("every position within the target after the replacements" if r.requirements_met
                               else "some position stays outside the target: see above"))
    lines.append("CAUTION: disconnect the meter from any circuit before opening it; mains and high-voltage ranges "
                 "follow IEC 61010-1, local codes and licensed practice.")
    return "\n".join(lines) + "\n"
