"""Accuracy proof per switch position: nominal, linearity, tolerance, temperature, loading.

Every figure is an error in percent of the position's full scale (the fiducial
value of IEC 60051 for a meter with zero at one end of the scale). The operating
points all come from :class:`planner.engine.Engine`; this package only chooses the
batches (stimuli, temperatures, tolerance factors), calls the engine once per
position and analysis family, and reduces the answers.

Analyses of one position (definitions are the design contract):

* **nominal and linearity** - readings at 10 %, 20 %, ..., 100 % of full scale at
  every ambient temperature point (one engine call): the nominal error is the
  100 % point at the reference temperature; the linearity tables are the rows at
  the reference and at the hottest ambient; the temperature error is the largest
  change of the 100 % point from its reference value.
* **worst case** - the full-scale error over the parts' tolerance extremes:
  every corner of the tolerance box when at most :data:`MAX_CORNER_PARAMETERS`
  parameters vary, otherwise a first-order sensitivity bound checked against a
  sample of corners and never smaller than any of them.
* **Monte Carlo** - one set of builds (every part drawn once per build, so the
  positions of one build share their parts, as in a real instrument), seeded.
* **input resistance / burden voltage / loading** - at full scale, nominal.

The class verdict (:mod:`.classes`) is decided from these figures.

:func:`check` returns a :class:`CheckResult`: the JSON object of ``planner
check`` and the arrays behind it, which the dossier draws from without solving
again. The package's modules: :mod:`.tolerances` (toleranced parameters, Monte
Carlo draws, worst case), :mod:`.position` (the analyses of one position),
:mod:`.classes` (the class verdict), :mod:`.result` (what the check keeps),
:mod:`.check` (the whole instrument) and :mod:`.report` (the terminal table).
"""

from .check import MAX_SAMPLES, check, check_positions, check_project
from .classes import BUDGET_RULE, TEMPERATURE_SHARE_PER_10K, class_figures, variation_per_10k_pct
from .position import LINEARITY_FRACTIONS, MIN_TEMPERATURE_POINTS, PERCENTILES, temperature_points
from .report import format_check
from .result import CheckResult, PositionArrays
from .tolerances import (
    MAX_CORNER_PARAMETERS, VERIFY_CORNERS, CountingEngine, current_carrying, draw_factors, parameters, worst_case,
)

__all__ = ["check", "check_positions", "check_project", "format_check", "CheckResult", "PositionArrays", "parameters",
           "current_carrying", "draw_factors", "worst_case", "temperature_points", "class_figures",
           "CountingEngine", "LINEARITY_FRACTIONS", "MAX_CORNER_PARAMETERS", "MAX_SAMPLES",
           "MIN_TEMPERATURE_POINTS", "PERCENTILES", "VERIFY_CORNERS", "BUDGET_RULE",
           "TEMPERATURE_SHARE_PER_10K", "variation_per_10k_pct"]
