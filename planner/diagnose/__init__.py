"""Restoration: find the drifted parts of an existing meter from its readings.

``planner diagnose FILE READINGS.csv`` estimates the present values of the
network's resistors (and of the movement's coil resistance and full-scale
current where the readings allow) from readings taken against a reference
source, reports the parts most likely drifted with confidence intervals, the
groups of parts the readings cannot tell apart with the reading that would, and
replacement values that bring every position back within class. The method is
in ``docs/diagnose.md``.

Modules
-------
readings   the readings file (CSV) with file:line errors
meter      the one place that builds the engine; unknowns; readings as functions of them
estimate   least squares with the tolerances as prior, robust to pegged or dead ranges
identify   singular values of the sensitivity matrix: groups, separating readings
replace    replacement values (E-series single, pair, fixed + trimmer), checked by re-solving
diagnosis  the whole run: :func:`diagnose` -> :class:`Diagnosis`
report     JSON and table

Public API
----------
:func:`diagnose`, :class:`Diagnosis`, :func:`read_readings`, :func:`diagnosis_json`,
:func:`format_diagnosis`, :func:`plan_replacements` (also used by :mod:`planner.retrim`).
"""

from .diagnosis import DEFAULT_SHARE, Diagnosis, diagnose
from .meter import Meter
from .readings import Readings, read_readings
from .replace import Plan, Replacement, plan_replacements
from .report import diagnosis_json, format_diagnosis, replacement_json

__all__ = [
    "DEFAULT_SHARE",
    "Diagnosis",
    "diagnose",
    "Meter",
    "Readings",
    "read_readings",
    "Plan",
    "Replacement",
    "plan_replacements",
    "diagnosis_json",
    "format_diagnosis",
    "replacement_json",
]
