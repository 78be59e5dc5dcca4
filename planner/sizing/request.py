"""Validation of the sizer's request: what it can build, refused with file, line and a fix.

The checks common to every request (something to size, the movement, the
resistor series) live here; each section of the request (voltage ranges,
current ranges, clamps, ...) checks its own keys in its
:meth:`planner.sizing.layout.SizingSection.validate`, called in the order the
sections are registered (:data:`planner.sizing.sections.SECTIONS`).
"""

from __future__ import annotations

import math

from .. import eseries
from ..errors import ProjectError
from ..model import Spec
from ..tools import fmt

__all__ = ["request_error", "line_of_key", "check_ranges", "validate"]


def request_error(spec: Spec, message: str, line: int | None) -> ProjectError:
    """A :class:`ProjectError` on the project's file at ``line`` (None: the file as a whole)."""
    return ProjectError(message, spec.path, line)


def line_of_key(spec: Spec, key: str) -> int | None:
    """1-based line of the first ``key:`` in the file's text, for messages."""
    if not spec.text:
        return None
    for i, text in enumerate(spec.text.splitlines(), 1):
        stripped = text.split("#", 1)[0]
        if f"{key}:" in stripped:
            return i
    return None


def check_ranges(spec: Spec, values, what: str, line: int | None, unit: str) -> None:
    """Refuse full scales that are empty, not positive and finite, or not strictly ascending.

    Parameters
    ----------
    spec : Spec
    values : sequence of float
        The section's ``full_scales`` [V] or [A].
    what : str
        The section's name in messages (``voltage``).
    line : int or None
        The section's line in the file.
    unit : str
        ``V`` or ``A``.
    """
    if not values:
        raise request_error(
            spec, f"{what}.full_scales is empty; list at least one range, e.g. [{'2.5 V' if unit == 'V' else '10 mA'}]",
            line)
    for v in values:
        if not (v > 0 and math.isfinite(v)):
            raise request_error(spec, f"{what}.full_scales has {v!r}; every range must be a positive {unit} value", line)
    for a, b in zip(values[:-1], values[1:]):
        if not b > a:
            raise request_error(
                spec,
                f"{what}.full_scales must be ascending, each range once: {fmt(a, unit)} is followed by "
                f"{fmt(b, unit)}; list the ranges from the lowest to the highest",
                line,
            )


def _check_something_to_size(spec: Spec, sections) -> None:
    if any(s.ranges and s.asked(spec) for s in sections):
        return
    if spec.network is not None:
        raise request_error(
            spec,
            "nothing to size: the project gives an explicit network and no 'voltage'/'current' ranges; "
            "check it with 'planner check', retrim its values with 'planner size --retrim', or add ranges "
            "for the sizer",
            None,
        )
    raise request_error(
        spec,
        "nothing to size: give a 'voltage' and/or 'current' section, or an explicit 'network'",
        None,
    )


def _series(spec: Spec) -> str:
    try:
        return eseries.normalise(spec.parts.resistors.series)
    except ValueError:
        raise request_error(
            spec,
            f"unknown resistor series '{spec.parts.resistors.series}' in parts.resistors; use one of "
            f"{', '.join(eseries.series_names())}",
            line_of_key(spec, "series"),
        ) from None


def validate(spec: Spec, sections) -> str:
    """Check the request; returns the canonical series name.

    Parameters
    ----------
    spec : Spec
    sections : sequence of SizingSection
        The registered sections (:data:`planner.sizing.sections.SECTIONS`); each
        one the project asks for checks its own keys, in this order.

    Returns
    -------
    str
        The IEC 60063 series the parts come from (``'E96'``).

    Raises
    ------
    ProjectError
        Nothing to size, a movement without a positive full-scale current and coil
        resistance, an unknown series, or a section's own refusal.
    """
    _check_something_to_size(spec, sections)
    m = spec.movement
    if not (m.i_fs_a > 0 and m.r_coil_ohm > 0):
        raise request_error(
            spec, "the movement needs a positive full_scale_current and coil_resistance", line_of_key(spec, "movement"))
    series = _series(spec)
    for section in sections:
        if section.asked(spec):
            section.validate(spec)
    return series
