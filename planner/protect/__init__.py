"""Clamp placement search (``planner protect``): where the diodes go, how many, and what it costs.

Diodes straight across the movement start to conduct only when the coil already
carries several times its full-scale current: a silicon junction needs a few
hundred millivolts, while the movement's full-scale voltage I_fs R_m is often
only 50 to 200 mV (common practice). Splitting the multiplier segment next to
the movement and clamping at the tap lets the diodes see the voltage across the
coil *and* the lower part of the split, so they take over at a lower multiple;
but the junction's forward current grows exponentially with its voltage
(Shockley), so the higher the tap, the more reading current the clamp steals at
full scale, and more so when warm (the saturation current rises several-fold per
10 K). Series stacks of diodes move the knee up again. This package searches
that trade-off for a project:

* **sites**: across the movement; each existing tap of the multiplier string
  (nearest first); a split of each resistor next to the movement at a resistance
  ``r`` above it (continuous); each tap and split again with a one-diode pair
  kept across the movement (two-level clamping, for the positions - the current
  ranges of a multimeter - that do not pass through the tapped segment);
* **parts**: the project's diode models, as series stacks of 1 to 3, chosen
  separately for the forward (over-range) and the reverse (reversed leads)
  direction; a model with a breakdown voltage also as a zener stack working in
  breakdown;
* **objective**: the worst movement-current multiple over the project's fault
  stimuli (:func:`planner.faults.stimuli_for`: ``faults.sources``, each DC
  source also reversed, the declared maximum input in both polarities, the range
  up/down misranges, the impulse of the measurement category); where it ties
  (within :data:`planner.protect.ordering.TIE`), the next worst position's, and
  so on (leximax, :func:`lex_compare`); then the least power in the clamp's parts;
* **constraints**: on every position, the change of reading the clamps cause
  at the hottest ambient, at 10 % ... 100 % of full scale, within a share of
  the class index (1/4 by default); every clamp diode within its continuous
  ratings under every fault stimulus (a clamp that burns open protects
  nothing).

The discrete choices are searched by a bounded enumeration (a branch-and-bound
over sites and stacks, with bounds from the monotonicity of a stack's clamping
voltage in its diode count); the continuous split by a batched grid, then a
finer batched grid (1.5 % steps) over the bracket of the edge of the feasible
range or of the minimum inside it; the split is then made of standard values
(:func:`planner.sizing.choose_value`) and the result evaluated again on the
realised network. Every evaluation is a batched call of
:meth:`planner.engine.Engine.operate` (one call per position and stimulus
group solves every split resistance of a grid at once, and the combos of one
family, alike but for their stacks' models and lengths, together). ``docs/protection.md``
has the method, its sources and how to read the table.

What lives where
----------------
``candidates.py``
    :class:`Stack`, :class:`Site`, :class:`Combo`; :func:`clamp_diodes`; the
    sites and stacks a project offers; the base network with a clamp placed
    (:func:`place_clamp`).
``context.py``
    :class:`SearchContext`: the project prepared once (base network without
    clamps, positions and their limits, fault stimuli, models, fresh names,
    seeded generator, counters against the cap).
``evaluate.py``
    :class:`Metrics`, :class:`Topology`, :class:`Point`: a candidate run over
    the fault stimuli and positions in batches (:func:`run`), and judged
    (:func:`feasible`, :func:`slack`, :func:`share_of_class`).
``family.py``
    A family's combos (alike but for their stacks' models and lengths) as the
    rows of one batch on one network (:func:`run_family`).
``ordering.py``
    :func:`lex_compare`, :func:`lex_best`, :func:`lex_score`; the Pareto set,
    order and choice of the reported rows.
``search.py``
    :func:`branch_and_bound` over sites and stacks (each family evaluated
    ahead of its members' turns, :class:`Batches`), the split grid, the
    refinement of the split resistance (batched grids over a bracket).
``realise.py``
    Standard values for a split; a sized project's ``clamps:`` requests; the
    final evaluation of a realised point.
``report.py``
    The JSON rows and :func:`format_protect`.
``plan.py``
    :func:`protect_project`: the steps above, end to end.
``write.py``
    :func:`protected_text`, :func:`write_protected`.

Public API
----------
:func:`protect_project`, :func:`format_protect`, :func:`write_protected`,
:func:`protected_text`; the building blocks :class:`SearchContext`,
:class:`Stack`, :class:`Site`, :class:`Combo`, :func:`clamp_diodes`,
:func:`place_clamp`, :func:`lex_compare`, :func:`lex_best`, :func:`lex_score`.
"""

from __future__ import annotations

from .candidates import Combo, Site, Stack, clamp_diodes, place_clamp
from .context import DEFAULT_SHARE, MAX_CANDIDATES, SearchContext
from .ordering import lex_best, lex_compare, lex_score
from .plan import protect_project
from .report import format_protect
from .write import protected_text, write_protected

__all__ = [
    "DEFAULT_SHARE",
    "MAX_CANDIDATES",
    "Combo",
    "SearchContext",
    "Site",
    "Stack",
    "clamp_diodes",
    "format_protect",
    "lex_best",
    "lex_compare",
    "lex_score",
    "place_clamp",
    "protect_project",
    "protected_text",
    "write_protected",
]
