"""Batched nonlinear DC solver: nodal analysis reduced to the nodes the nonlinear parts touch.

A compiled switch state (:class:`Circuit`) is a set of linear branches (resistors,
the movement's coil, fuses, contacts, the source resistance; each optionally with an
EMF in series, a battery) and nonlinear two-terminal parts on *ports* (node pairs):
diodes (junction law with series resistance, leakage and breakdown) and metal-oxide
varistors (power law). For a batch of parameter sets the linear part is reduced once
per set onto the nodes the parts touch (:mod:`.linear`); Newton's method then solves
Kirchhoff's current law at those nodes for every stimulus at once, each part's own
voltage eliminated inside each step, with junction-voltage limiting (:mod:`.newton`,
:mod:`.sparse`), from each chain of parts solved behind its Thevenin equivalent
(:mod:`.start`); source stepping and gmin stepping take over for the cases that do
not converge (:mod:`.batch`). No auxiliary conductance is added anywhere: the element
equations are exactly those of the design contract.

Speed (see ``docs/performance.md``): the cases run through Newton in blocks of
:data:`NEWTON_BLOCK`, sized so that a block's rows stay in the processor cache;
a parameter that is the same for every case is a number, not a row; big batches
start from a solved subset (:func:`solve` explains which); and the result is
lazy: node voltages and branch currents are formed only when asked for, and
only for the nodes and branches asked for.

Shapes: ``P`` parameter sets (tolerance samples x temperatures), ``S`` stimuli per
set, ``N`` nodes, ``L`` linear branches, ``K`` ports, ``D`` diodes, ``M`` varistors,
``T`` touched nodes.

Modules: :mod:`.circuit` (the inputs), :mod:`.junction` and :mod:`.varistor` (the
laws), :mod:`.linear` (the reduction), :mod:`.sparse` (the step's elimination),
:mod:`.newton` (the iteration), :mod:`.start` (starting points), :mod:`.batch`
(strategies, fallbacks, :func:`solve`), :mod:`.results` (:class:`Solution`).
"""

from __future__ import annotations

from .batch import NEWTON_BLOCK, SWEEP_MIN, SWEEP_STRIDE, WARM_MAX_ITER, WARM_MIN_CASES, WARM_SPREAD, solve
from .circuit import Circuit, Junctions, Varistors
from .junction import BOLTZMANN, CHARGE, EXP_MAX, pnjlim, saturation_current, single_diode, thermal_voltage, wright_omega
from .linear import CHUNK_FLOATS
from .newton import MAX_ITER, STEP_TINY, STEP_TOL
from .results import MAX_RESULT_FLOATS, Solution

__all__ = [
    "BOLTZMANN", "CHARGE", "CHUNK_FLOATS", "Circuit", "EXP_MAX", "Junctions", "MAX_ITER", "MAX_RESULT_FLOATS",
    "NEWTON_BLOCK", "STEP_TINY", "STEP_TOL", "SWEEP_MIN", "SWEEP_STRIDE", "Solution", "Varistors", "WARM_MAX_ITER",
    "WARM_MIN_CASES", "WARM_SPREAD", "pnjlim", "saturation_current", "single_diode", "solve", "thermal_voltage",
    "wright_omega",
]
