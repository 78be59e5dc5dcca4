"""Ranges to size and an explicit network in one file: the same meter, or a refusal.

The contract allows a file to give both the ``voltage:``/``current:`` ranges (the
request ``planner size`` sizes) and an explicit ``network:`` (the meter the other
commands analyse), and the loader reads both. A command, though, works on one of
them; when the network's positions are not the positions the ranges ask for (each
measured quantity and full scale), the file describes two meters and the command
would silently pick one. :func:`same_meter` refuses that, saying which to remove;
the command line asks it of every project it loads.
"""

from __future__ import annotations

import math

from ..errors import ProjectError
from ..model import Spec
from ..units import format_si

__all__ = ["same_meter"]

_UNITS = {"voltage": "V", "current": "A", "resistance": "ohm", "ac_voltage": "V~", "ac_current": "A~"}


def same_meter(spec: Spec) -> None:
    """Refuse a project whose ranges and explicit network describe different meters.

    Raises
    ------
    planner.errors.ProjectError
        At the line of the first range section, naming what differs and what to remove.
    """
    net = spec.network
    sections = [(k, getattr(spec, k)) for k in ("voltage", "current", "resistance", "ac_voltage", "ac_current")]
    sections = [(k, s) for k, s in sections if s is not None]
    if net is None or not sections:
        return
    # a resistance position's full_scale: its centre
    asked = [(k, x) for k, s in sections for x in (s.centers if k == "resistance" else s.full_scales)]
    given = [(p.measures, p.full_scale) for p in net.positions]

    def missing(a, b):
        return [m for m in a if not any(m[0] == n[0] and math.isclose(m[1], n[1], rel_tol=1e-9) for n in b)]

    only_asked, only_given = missing(asked, given), missing(given, asked)
    if not only_asked and not only_given:
        return
    what = []
    if only_asked:
        what.append("the ranges ask for " + ", ".join(format_si(x, _UNITS.get(k, "")) for k, x in only_asked[:4])
                    + " that the network has no position for")
    if only_given:
        what.append("the network has " + ", ".join(format_si(x, _UNITS.get(k, "")) for k, x in only_given[:4])
                    + " that the ranges do not ask for")
    line = sections[0][1].line
    sections = " and ".join(f"'{k}:'" for k, _ in sections)
    first = net.positions[0].line if net.positions else None
    raise ProjectError(
        f"the file gives both {sections} ranges to size and an explicit 'network:'"
        + (f" (positions from line {first})" if first else "")
        + f", and they describe different meters ({'; '.join(what)}); remove {sections} to work on the network "
        "as it is, or remove 'network:' to size the ranges",
        spec.path,
        line,
    )
