"""Misrange survival: every position under every foreseeable wrong stimulus.

The matrix crosses the positions with the stimuli a user can plausibly apply:

* the project's own ``faults.sources`` (a wall outlet, a car battery, a bench
  supply with its current limit ...);
* ``range up`` / ``range down``: the full scale of the next higher / lower range of
  the same quantity applied to this position (the switch one step off);
* ``max input`` and ``max input reversed``: the declared maximum input voltage
  (``faults.max_input``), DC from an ideal source, on every position, both
  polarities;
* the range kind's own families (:meth:`planner.ranges.RangeKind.misrange`), e.g.
  ``mains on A range``: when the project has current positions and declares no
  maximum input, 230 V rms sine through 0.5 ohm on every current position (the
  classic "voltage on the current range" misrange; with a declared maximum input
  that case is the ``max input`` column instead);
* ``CAT ... impulse``: when ``faults.category`` is given, the rated impulse voltage
  of the category through its test source impedance, both polarities, judged on
  peak quantities only (see :func:`category_impulse`).

Each case is judged by :func:`planner.stress.assess` (ratings, fuses, verdict).
Besides the matrix: a protection curve per position (movement current over a
sweep, with and without the clamps), the switch transitions (make-before-break
and break-before-make, in both directions of turning, with the left position's
stimuli still applied) and the cautions for hazardous voltages.

Where things live:

``families``
    :func:`stimuli_for` (the stimuli of a position in column order),
    :func:`category_impulse` (the impulse table), ``BUILT_IN_ORDER``;
``cautions``
    :func:`cautions_for` (the project's), :func:`matrix_cautions` (with the
    matrix's own hazardous stimuli);
``curves``
    :func:`protection_curve`, :func:`without_clamps`;
``matrix``
    :func:`faults_project` in named steps, :func:`transition_states`,
    :func:`contact_style`, :func:`matrix_states` (the cases state by state, for a tally);
``report``
    :func:`format_faults`.
"""

from ..ranges.dc_current import MAINS_SOURCE_OHM, MAINS_V_RMS
from ..stress import FAILING
from .cautions import cautions_for, matrix_cautions
from .curves import CURVE_POINTS, protection_curve, without_clamps
from .families import (BUILT_IN_ORDER, IMPULSE_SOURCE_OHM, IMPULSE_TABLE_V, category_impulse, impulse_stimulus,
                       same_kind_neighbours, stimuli_for, transition_stimuli)
from .matrix import (KEEP_AT_LEAST, KEEP_RATIO, contact_style, failing, faults_project, matrix_states,
                     requirements_met, transition_states)
from .report import format_faults

__all__ = [
    "IMPULSE_TABLE_V", "IMPULSE_SOURCE_OHM", "BUILT_IN_ORDER", "CURVE_POINTS", "KEEP_RATIO", "KEEP_AT_LEAST",
    "FAILING", "MAINS_V_RMS", "MAINS_SOURCE_OHM",
    "category_impulse", "impulse_stimulus", "same_kind_neighbours", "stimuli_for", "transition_stimuli",
    "cautions_for", "matrix_cautions", "protection_curve", "without_clamps", "transition_states", "contact_style",
    "failing", "requirements_met",
    "faults_project", "matrix_states", "format_faults",
]
