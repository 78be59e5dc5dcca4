"""Estimating the parts' present values from readings: least squares with a prior.

The unknowns are the log values of the parts (:class:`planner.diagnose.meter.Unknown`),
relative to nominal. Each reading gives a residual in units of its noise, each
unknown a prior residual in units of its tolerance, and
:func:`scipy.optimize.least_squares` minimises the sum of squares within bounds.
A pointer at its end stop only says the reading is at or beyond the stop: its
residual is one-sided. A reading no change of the parts within the bounds can
explain (a dead range: an open part or contact) is found by a first, robust pass
and set aside before the final pass, so it cannot drag the estimate.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from .meter import Meter, Unknown, jacobian
from .readings import Readings

__all__ = ["BOUND", "CONFIDENCE", "Z_CONFIDENCE", "OUTLIER_Z", "Observations", "Estimate",
           "PRIOR_WIDENING", "observations", "estimate", "consistent", "data_jacobian", "soft"]

#: Bounds on every unknown: a tenth to ten times its nominal value.
BOUND = math.log(10.0)
#: Confidence level of the reported intervals.
CONFIDENCE = 0.95
#: Two-sided normal quantile of :data:`CONFIDENCE` (scipy.stats.norm.ppf(0.975)).
Z_CONFIDENCE = 1.959963984540054
#: Residual, in noise standard deviations, beyond which the robust pass calls a
#: reading unexplained (a consistent reading stays within sqrt(3): uniform noise).
OUTLIER_Z = 6.0
#: Scale of the robust pass's soft-L1 loss, in noise standard deviations.
ROBUST_SCALE = 3.0
#: Widening of the prior tried in turn until the fit is consistent with the readings:
#: the prior only decides between explanations the readings allow, it never
#: overrules them.
PRIOR_WIDENING = (1.0, 10.0, 100.0)
#: Width of the Gaussian core of the prior, in tolerances: beyond it the prior's cost
#: grows linearly (a drifted part is one that left its tolerance).
PRIOR_CORE = 1.0


@dataclass(frozen=True)
class Observations:
    """Readings prepared for the fit: grouped by position, with their noise.

    Attributes
    ----------
    readings : Readings
    full_scale : ndarray (N,)
        Full scale of each reading's position.
    sigma : ndarray (N,)
        Standard deviation of each reading's error, same unit as the reading.
    pegged : ndarray of bool (N,)
        The pointer was at its end stop (the file said so, or the reading is at or
        beyond ``overload.peg`` x full scale).
    stop : ndarray (N,)
        Reading at the end stop, ``peg`` x full scale.
    by_position : dict
        Position name -> indices of its readings, in file order.
    resolution : float
        Reading resolution, fraction of full scale.
    """

    readings: Readings
    full_scale: np.ndarray
    sigma: np.ndarray
    pegged: np.ndarray
    stop: np.ndarray
    by_position: dict
    resolution: float


def observations(meter: Meter, readings: Readings, resolution: float) -> Observations:
    """Prepare readings for the fit.

    Parameters
    ----------
    meter : Meter
    readings : Readings
    resolution : float
        Reading resolution as a fraction of full scale: every reading is taken to
        lie within +-resolution/2 of the true pointer position (uniform), so its
        standard deviation is resolution x FS / sqrt(12).

    Notes
    -----
    A uniform error of width w has standard deviation :math:`w / \\sqrt{12}`
    (GUM, JCGM 100:2008, 4.3.7, rectangular distribution).
    """
    fs = np.array([meter.position[p].full_scale for p in readings.position])
    sigma = resolution * fs / math.sqrt(12.0)
    stop = meter.peg * fs
    pegged = readings.pegged | (np.nan_to_num(readings.reading, nan=0.0) >= stop)
    by_pos: dict[str, list[int]] = {}
    for k, p in enumerate(readings.position):
        by_pos.setdefault(p, []).append(k)
    return Observations(readings, fs, sigma, pegged, stop, {p: np.array(v) for p, v in by_pos.items()},
                        float(resolution))


def _predict(meter: Meter, obs: Observations, keys, theta_rows: np.ndarray, fixed=None) -> np.ndarray:
    """Predicted readings (P, N) for parameter rows (P, k)."""
    theta_rows = np.atleast_2d(theta_rows)
    out = np.empty((theta_rows.shape[0], len(obs.readings)))
    factors = meter.factors(keys, theta_rows, fixed)
    for pos, idx in obs.by_position.items():
        out[:, idx] = meter.reading(pos, obs.readings.applied[idx], factors)
    return out


def _data_residual(obs: Observations, pred: np.ndarray) -> np.ndarray:
    """Residuals of the readings in noise units; one-sided for pegged readings."""
    r = (pred - np.nan_to_num(obs.readings.reading)) / obs.sigma
    below = np.minimum(pred - obs.stop, 0.0) / obs.sigma
    return np.where(obs.pegged, below, r)


def data_jacobian(meter: Meter, obs: Observations, keys, theta, use=None, fixed=None):
    """Whitened data residuals and their Jacobian at ``theta`` (one engine call per position).

    Returns
    -------
    r : ndarray (n,)
    J : ndarray (n, k)
        Rows of the readings in ``use`` (all by default).
    """
    use = np.ones(len(obs.readings), bool) if use is None else use
    pred, jp = jacobian(lambda rows: _predict(meter, obs, keys, rows, fixed), theta)
    r = _data_residual(obs, pred)
    jr = jp / obs.sigma[:, None]
    # a pegged reading at or beyond the stop has no gradient (the one-sided residual is flat)
    flat = obs.pegged & (pred >= obs.stop)
    jr[flat] = 0.0
    return r[use], jr[use]


@dataclass
class Estimate:
    """The fit and what it says about each unknown.

    Attributes
    ----------
    unknowns : list of Unknown
    theta : ndarray (k,)
        Estimated log factors.
    sd : ndarray (k,)
        Standard deviation of each log factor (linearised, see :func:`estimate`).
    covariance : ndarray (k, k)
    used : ndarray of bool (N,)
        Readings the final fit used.
    unexplained : ndarray of bool (N,)
        Readings set aside: no change of the parts within the bounds explains them.
    predicted : ndarray (N,)
        Predicted readings at the estimate.
    residual : ndarray (N,)
        Whitened residual of every reading at the estimate (noise units).
    data_jacobian : ndarray (n_measured, k)
        Whitened sensitivity at the estimate of the used readings that are not
        pegged (:attr:`measured`).
    inflation : float
        Factor by which the covariance was widened because the residuals were
        larger than the noise model says (1 when they were not).
    evaluations : int
        Residual evaluations of every pass.
    keys : list of str
        The unknowns' keys.
    widen : float
        Factor by which the prior widths were widened to reach a consistent fit
        (1: the tolerances as they are).
    consistent : bool
        No reading set aside, every used reading within the resolution.
    """

    unknowns: list
    theta: np.ndarray
    sd: np.ndarray
    covariance: np.ndarray
    used: np.ndarray
    unexplained: np.ndarray
    predicted: np.ndarray
    residual: np.ndarray
    data_jacobian: np.ndarray
    inflation: float = 1.0
    evaluations: int = 0
    keys: list = field(default_factory=list)
    widen: float = 1.0
    consistent: bool = False
    pegged: np.ndarray | None = None

    @property
    def measured(self) -> np.ndarray:
        """Readings used as measurements (used and not pegged), bool (N,)."""
        return self.used & ~self.pegged

    def interval(self, j: int) -> tuple[float, float]:
        """Confidence interval of unknown j's log factor."""
        h = Z_CONFIDENCE * self.sd[j]
        return (self.theta[j] - h, self.theta[j] + h)


def soft(z: np.ndarray, scale: float) -> tuple[np.ndarray, np.ndarray]:
    """Pseudo-Huber residual and its derivative: quadratic cost within ``scale``, linear beyond.

    Returns r(z) with :math:`r^2 = 2 c^2 (\\sqrt{1 + (z/c)^2} - 1)` (the soft-L1 cost
    of scipy's ``least_squares``) and :math:`dr/dz`; r = z for small z.
    """
    z = np.asarray(z, dtype=float)
    s = z / scale
    q = np.sqrt(1.0 + s * s)
    w = np.sqrt(2.0 / (1.0 + q))
    dr = w - (s * s / q) / np.sqrt(2.0) * (1.0 + q) ** -1.5
    return z * w, dr


def _fit(meter, obs, unknowns, theta0, use, robust, widen):
    keys = [u.key for u in unknowns]
    sig = np.array([u.sigma for u in unknowns]) * widen
    cache: dict = {}

    def both(theta):
        key = theta.tobytes()
        if key not in cache:
            cache.clear()
            r, j = data_jacobian(meter, obs, keys, theta, use)
            if robust:
                r, d = soft(r, ROBUST_SCALE)
                j = j * d[:, None]
            p, dp = soft(theta / sig, PRIOR_CORE)
            cache[key] = (np.concatenate([r, p]), np.vstack([j, np.diag(dp / sig)]))
        return cache[key]

    return least_squares(lambda t: both(t)[0], theta0, jac=lambda t: both(t)[1], bounds=(-BOUND, BOUND),
                         method="trf", x_scale=sig, xtol=1e-10, ftol=1e-12, gtol=1e-10, max_nfev=100), both


def estimate(meter: Meter, obs: Observations, unknowns: list[Unknown]) -> Estimate:
    """Estimate the unknowns from the readings.

    Parameters
    ----------
    meter : Meter
    obs : Observations
    unknowns : list of Unknown

    Returns
    -------
    Estimate

    Notes
    -----
    With :math:`\\theta_j = \\ln(x_j / x_{j,nom})`, readings :math:`y_i` of noise
    :math:`\\sigma_i` and prior widths :math:`s_j` (the tolerances) the fit
    minimises

    .. math:: \\sum_i \\left(\\frac{f_i(\\theta) - y_i}{\\sigma_i}\\right)^2
              + \\sum_j \\rho\\left(\\frac{\\theta_j}{s_j}\\right),
              \\qquad \\rho(z) = 2 \\left(\\sqrt{1 + z^2} - 1\\right),
              \\qquad |\\theta_j| \\le \\ln 10:

    a maximum a posteriori estimate under Gaussian noise, with a prior centred on
    the marked values that is Gaussian within about one tolerance
    (:math:`\\rho(z) \\approx z^2`) and falls off exponentially beyond it
    (:math:`\\rho(z) \\approx 2|z|`): a part that drifted many tolerances is
    unusual, not impossible, and a purely Gaussian prior would push its drift onto
    parts with wider tolerances. A pegged reading contributes
    :math:`\\min(f_i - y_{stop}, 0) / \\sigma_i`. The first pass puts the readings'
    residuals through the same soft-L1 cost (scale :data:`ROBUST_SCALE` sigma);
    readings whose residual there exceeds :data:`OUTLIER_Z` sigma are set aside
    and the second pass takes the rest at face value. Each cost term is written
    as one residual :math:`r` with :math:`r^2` the term, so Gauss-Newton applies
    as it is. The covariance is the inverse of :math:`J^T J` at the solution
    (prior rows included), widened by :math:`\\max(1, \\chi^2_{data}/n)`; the
    intervals are :math:`\\hat\\theta \\pm 1.96\\,\\mathrm{sd}` (95 %, linearised).
    When the fit leaves a reading unexplained or beyond the resolution, it is run
    again with the prior widths widened by the factors of :data:`PRIOR_WIDENING`,
    and the first consistent fit is kept (else the first one).

    References
    ----------
    J. J. More, "The Levenberg-Marquardt algorithm: implementation and theory",
    in *Numerical Analysis*, Lecture Notes in Mathematics 630, Springer, 1978,
    pp. 105-116, doi:10.1007/BFb0067700 (the trust-region form of the method).
    M. A. Branch, T. F. Coleman, Y. Li, "A subspace, interior, and conjugate
    gradient method for large-scale bound-constrained minimization problems",
    SIAM J. Sci. Comput. 21(1), 1999, pp. 1-23, doi:10.1137/S1064827595289108
    (scipy's bounded ``trf`` method).
    A. Tarantola, *Inverse Problem Theory and Methods for Model Parameter
    Estimation*, SIAM, 2005, doi:10.1137/1.9780898717921, ch. 3 (least squares
    with a prior; posterior covariance of the linearised problem).
    B. Triggs, P. McLauchlan, R. Hartley, A. Fitzgibbon, "Bundle adjustment - a
    modern synthesis", Vision Algorithms: Theory and Practice, LNCS 1883,
    Springer, 2000, doi:10.1007/3-540-44480-7_21, sec. 3.3 (robust costs as
    residuals for Gauss-Newton).
    """
    first = None
    evaluations = 0
    for widen in PRIOR_WIDENING:
        est = _passes(meter, obs, unknowns, widen)
        evaluations += est.evaluations
        first = first or est
        if est.consistent:
            est.evaluations = evaluations
            return est
    first.evaluations = evaluations
    return first


def consistent(obs: Observations, predicted: np.ndarray, used: np.ndarray) -> bool:
    """Whether every used reading lies within the resolution of the prediction.

    A pegged reading is consistent when the prediction reaches the stop less one
    resolution.
    """
    tol = obs.resolution * obs.full_scale * (1 + 1e-9)
    plain = used & ~obs.pegged
    dev = np.abs(predicted - np.nan_to_num(obs.readings.reading))
    peg = used & obs.pegged
    return bool(np.all(dev[plain] <= tol[plain]) and np.all(predicted[peg] >= obs.stop[peg] - tol[peg]))


def _passes(meter: Meter, obs: Observations, unknowns, widen: float) -> Estimate:
    """The robust pass, the outliers set aside, the final pass, the covariance."""
    k = len(unknowns)
    n = len(obs.readings)
    keys = [u.key for u in unknowns]
    theta0 = np.zeros(k)
    use = np.ones(n, bool)
    first, _ = _fit(meter, obs, unknowns, theta0, use, True, widen)
    r_all, _ = data_jacobian(meter, obs, keys, first.x)
    unexplained = np.abs(r_all) > OUTLIER_Z
    use = ~unexplained
    evaluations = first.nfev
    theta = first.x
    if use.any():
        second, _ = _fit(meter, obs, unknowns, first.x, use, False, widen)
        theta, evaluations = second.x, evaluations + second.nfev
    pred = _predict(meter, obs, keys, theta[None, :])[0]
    r_all = _data_residual(obs, pred)
    # a pegged reading is a bound, not a measurement: it shapes the estimate but neither
    # the intervals nor what the readings are said to tell apart
    measured = use & ~obs.pegged
    r_used, j_used = data_jacobian(meter, obs, keys, theta, measured)
    sig = np.array([u.sigma for u in unknowns]) * widen
    jf = np.vstack([j_used, np.diag(soft(theta / sig, PRIOR_CORE)[1] / sig)])
    cov = np.linalg.pinv(jf.T @ jf)
    n_used = int(measured.sum())
    inflation = max(1.0, float(r_used @ r_used) / n_used) if n_used else 1.0
    cov = cov * inflation
    ok = not unexplained.any() and consistent(obs, pred, use)
    return Estimate(unknowns, theta, np.sqrt(np.diag(cov)), cov, use, unexplained, pred, r_all, j_used,
                    inflation, evaluations, keys, widen, ok, obs.pegged)
