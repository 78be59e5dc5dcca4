"""Diode models fitted to measured (voltage, current) points.

``planner fit-diode POINTS.csv`` reads a bench measurement of one diode and fits
the parameters of the contract's diode model (see the design notes, "Element
equations"): saturation current I_s, emission coefficient n, series resistance
R_s and leakage resistance R_p across the junction, and, when the points were
taken at more than one temperature, the band gap E_g (and, from three
temperatures on, XTI) of the SPICE temperature law of I_s.

The fit is weighted least squares on a logarithmic current scale
(:func:`scipy.optimize.least_squares`), with the positive parameters carried as
their logarithms. Forward points (V > 0, I > 0) give the residual
ln(I_model) - ln(I_meas); reverse and near-zero points use an inverse
hyperbolic sine scale that is logarithmic for currents well above a floor and
linear below it. The model current at a given terminal voltage is computed
exactly with the Wright omega function (no iteration). Parameter uncertainties
are the 1-sigma values of the linearised covariance at the solution. A quality
gate (:mod:`.quality`) marks a fit whose points do not follow the diode law as
not usable: it then has no YAML block to paste.

Everything here works in SI floats; units appear only in :func:`format_fit` and
:func:`yaml_block`, which write quantities the project file reads back.

Modules: :mod:`.points` (reading the points file), :mod:`.junction` (the exact
terminal current), :mod:`.fitting` (the fit), :mod:`.starts` (its starting
points), :mod:`.quality` (the gate), :mod:`.result` (:class:`Fit`),
:mod:`.report` (text, JSON, YAML), :mod:`.params` (parameter names and bounds).
"""

from __future__ import annotations

from . import quality
from .fitting import _Problem, fit
from .junction import diode_current
from .params import COLUMNS, DEFAULT_EG_EV, DEFAULT_XTI, MAX_POINTS_BYTES
from .points import Points, read_points
from .report import fit_json, format_fit, yaml_block
from .result import Fit

__all__ = [
    "Points",
    "Fit",
    "read_points",
    "diode_current",
    "fit",
    "fit_json",
    "format_fit",
    "yaml_block",
    "COLUMNS",
    "DEFAULT_EG_EV",
    "DEFAULT_XTI",
    "MAX_POINTS_BYTES",
]
