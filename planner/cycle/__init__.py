"""Cycle quantities of periodic stimuli on memoryless networks.

The planner's networks are resistive with diodes: every branch quantity is a
function of the instantaneous source value, so a waveform is solved as a set of
DC states and its cycle mean, rms, peak and mean power are quadratures over the
source values. This package holds:

* :mod:`~planner.cycle.shapes` - stimulus shapes as objects (DC, sine, square,
  triangle, impulse, a flat-topped mains wave) with their crest and form
  factors and amplitude distributions;
* :mod:`~planner.cycle.rules` - the rule type (nodes and weights) and the fixed
  rules (exact atoms, Gauss-Chebyshev, equally spaced reference);
* :mod:`~planner.cycle.adaptive` - rules placed by the network's knees with
  Gauss-Kronrod error control, verified on extreme builds;
* :mod:`~planner.cycle.shared` - one node set for many stimuli (the points of a
  scale, other waveforms), each with its own weights (product integration);
* :mod:`~planner.cycle.starts` - where the solver starts a batch of builds (their
  operating points predicted from the sensitivity rows);
* :mod:`~planner.cycle.prearc` - time-ordered quantities: the Joule integral of a
  sine from any onset phase and the pre-arcing time of a fuse.

See ``docs/cycle.md``.
"""

from .adaptive import AdaptiveRule, adapt, extreme_rows
from .prearc import (Onsets, PreArcing, joule_integral_sine, onsets_on_grid, pre_arcing_on_grid, pre_arcing_sine,
                     pre_arcing_time_sine, window_integral)
from .rules import CycleRule, equal_rule, fixed_rule, gauss_kronrod, gauss_legendre
from .shapes import DC, SHAPES, FlatTopMains, Impulse, OddHarmonics, Shape, Sine, Square, Triangle, shape_named
from .shared import SharedRule, Target, adapt_shared
from .starts import SolvedPoints, StartModel

__all__ = ["Shape", "DC", "Sine", "Square", "Triangle", "Impulse", "OddHarmonics", "FlatTopMains", "SHAPES",
           "shape_named", "CycleRule", "fixed_rule", "equal_rule", "gauss_legendre", "gauss_kronrod",
           "AdaptiveRule", "adapt", "extreme_rows", "PreArcing", "joule_integral_sine", "pre_arcing_time_sine",
           "pre_arcing_sine", "pre_arcing_on_grid", "Onsets", "onsets_on_grid", "window_integral", "Target", "SharedRule", "adapt_shared",
           "StartModel", "SolvedPoints"]
