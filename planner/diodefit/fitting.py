"""The weighted least-squares fit of the diode model to measured points."""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import least_squares

from ..errors import ProjectError, UsageError
from ..model import DEFAULT_T_REF_K, ZERO_CELSIUS_K
from ..solve import thermal_voltage
from .junction import _check_solution, _solve_terminal
from .params import (_KEYS, _LABELS, _LOG, _LOWER, _NAME_RE, _UPPER, DEFAULT_EG_EV, DEFAULT_XTI,
                     MAX_TEMPERATURE_C, _fmt)
from . import quality
from .points import Points, check_values
from .result import Fit
from .starts import _starts

#: Lowest measurement temperature accepted [K] (above absolute zero).
MIN_TEMPERATURE_K = 0.0
#: Largest |XTI| that may be held: the bound of the fit's own search.
MAX_XTI = _UPPER[5]


def _check_points(points: Points) -> None:
    """Every value of ``points`` as :func:`read_points` accepts it (for Points made in code)."""
    columns = [("voltage_v", points.voltage_v), ("current_a", points.current_a)]
    if points.temperature_k is not None:
        columns.append(("temperature_c", points.temperature_k - ZERO_CELSIUS_K))
    for name, values in columns:
        check_values(name, values, points.path, points.lines)


def _check_xti(xti) -> None:
    """Refuse a held XTI that is not a number from 0 to ``MAX_XTI``."""
    try:
        x = float(xti)
    except (TypeError, ValueError):
        raise UsageError(f"--xti: {xti!r} is not a number; give a number from 0 to {MAX_XTI:g}, e.g. 3") from None
    if not (0.0 <= x <= MAX_XTI):
        raise UsageError(
            f"--xti: {x:g} cannot be held; give a number from 0 to {MAX_XTI:g}, e.g. 3 for a pn junction "
            "or 2 for a Schottky diode")

class _Problem:
    """Residuals and their Jacobian for a set of points (internal)."""

    def __init__(self, v, i, t, t0, forward, floor, free, held):
        self.v, self.i, self.t, self.t0 = v, i, t, t0
        self.forward, self.floor = forward, floor
        self.free, self.held = free, held  # free: indices into _KEYS; held: full vector
        self.vt = thermal_voltage(t)
        self.ln_ratio = np.log(t / t0)
        self.excess = t / t0 - 1.0
        self.target = np.where(forward, np.log(np.where(forward, i, 1.0)), np.arcsinh(i / (2 * floor)))

    def full(self, z):
        """Full parameter vector in natural units from the free vector ``z``."""
        p = self.held.copy()
        for j, k in enumerate(self.free):
            p[k] = math.exp(z[j]) if _LOG[k] else z[j]
        return p

    def _state(self, z):
        i_s0, n, r_s, r_p, eg, xti = self.full(z)
        law = (xti / n) * self.ln_ratio + self.excess * eg / (n * self.vt)
        i_s = i_s0 * np.exp(law)
        nvt = n * self.vt
        cur, vj, ie = _solve_terminal(self.v, i_s, nvt, r_s, r_p)
        return (i_s0, n, r_s, r_p, eg, xti), law, i_s, nvt, cur, vj, ie

    def residuals(self, z):
        *_, cur, _, _ = self._state(z)
        with np.errstate(all="ignore"):
            model = np.where(self.forward, np.log(np.where(self.forward, np.maximum(cur, 1e-300), 1.0)),
                             np.arcsinh(cur / (2 * self.floor)))
        r = model - self.target
        return np.where(np.isfinite(r), r, 1e3)

    def jacobian(self, z):
        """d residual / d free parameter, by implicit differentiation (see ``fit``)."""
        (i_s0, n, r_s, r_p, eg, xti), law, i_s, nvt, cur, vj, ie = self._state(z)
        g_p = 0.0 if math.isinf(r_p) else 1.0 / r_p
        g_d = ie / nvt + g_p  # junction conductance
        f_i = 1.0 + r_s * g_d
        d_lnis = (ie - i_s) / f_i  # dI / d ln I_s(T)
        cols = {
            0: d_lnis,
            1: -ie * vj / (nvt * f_i) - law * d_lnis,
            2: -g_d * cur * r_s / f_i,
            3: -vj * g_p / f_i,
            4: d_lnis * self.excess / (n * self.vt),
            5: d_lnis * self.ln_ratio / n,
        }
        scale = np.where(self.forward, 1.0 / np.maximum(cur, 1e-300),
                         1.0 / np.sqrt((2 * self.floor) ** 2 + cur ** 2))
        jac = np.stack([cols[k] * scale for k in self.free], axis=1)
        # bounded so that J^T J cannot overflow on wild points (no real point comes near 1e150)
        return np.where(np.isfinite(jac), np.clip(jac, -1e150, 1e150), 0.0)


def fit(points: Points, *, name: str = "fitted", temperature_k: float | None = None,
        xti: float | None = None, current_floor_a: float | None = None) -> Fit:
    """Fit the contract's diode model to measured points.

    Parameters
    ----------
    points : Points
        Measured points (see :func:`read_points`).
    name : str
        Model name for ``parts.diodes``.
    temperature_k : float, optional
        Temperature of the measurement [K] when the points carry none (default
        23 degC, the planner's reference temperature).
    xti : float, optional
        Hold XTI at this value. By default XTI is fitted from three or more
        temperatures and held at 3 (contract default) otherwise.
    current_floor_a : float, optional
        Floor of the asinh scale used for reverse and near-zero points [A]
        (default: half the smallest nonzero |current| measured).

    Returns
    -------
    Fit
        Check ``Fit.usable``: a fit whose points do not follow the diode law
        (see :mod:`planner.diodefit.quality`) lists its ``problems`` and has no
        YAML block.

    Raises
    ------
    ProjectError
        A value no diode measurement gives (:func:`planner.diodefit.points.check_value`),
        too few points for the parameters, no forward points, fewer than two
        forward voltages at some temperature, or a fit that does not converge.
    UsageError
        A held ``xti`` that is not a number from 0 to 20, or a ``temperature_k``
        not above absolute zero or above 500 degC.

    Notes
    -----
    Model (design contract, "Element equations"), at the temperature T of each point:

    .. math:: I = I_s(T)\\,(e^{V_j/nV_t(T)} - 1) + V_j/R_p, \\qquad V = V_j + I R_s,

    .. math:: I_s(T) = I_s(T_0)\\,(T/T_0)^{XTI/n}
              \\exp\\left((T/T_0 - 1)\\frac{E_g}{n V_t(T)}\\right).

    Residuals: :math:`r = \\ln I_{model} - \\ln I_{meas}` for forward points
    (V > 0 and I > 0), which weights every point by the same relative error;
    :math:`r = \\operatorname{asinh}(I_{model}/2F) - \\operatorname{asinh}(I_{meas}/2F)`
    for the others, which equals the log residual for |I| >> F and an absolute
    error of scale 2F near zero (F = ``current_floor_a``). Points at exactly 0 V
    carry no information (every parameter set gives 0 A there) and are left out.

    Parameters: :math:`\\ln I_s(T_0), \\ln n, \\ln R_s, \\ln R_p` and, when fitted,
    :math:`E_g` and XTI, solved by :func:`scipy.optimize.least_squares` (trust
    region reflective, inside wide bounds) from two starting points. The Jacobian
    comes from implicit differentiation of :math:`F = I - I_j(V - I R_s) = 0`:
    :math:`\\partial I/\\partial\\theta = -(\\partial F/\\partial\\theta)/(1 + R_s g_d)`
    with :math:`g_d = I_s e^{V_j/nV_t}/nV_t + 1/R_p`.

    Uncertainty: :math:`\\mathrm{cov} = s^2 (J^T J)^{-1}` with
    :math:`s^2 = \\sum r^2 / (m - p)` at the solution, then
    :math:`\\sigma_X = X\\,\\sigma_{\\ln X}` for the log parameters (first order).
    A parameter on a search bound is held there for the covariance.

    Parasitic resistances the points do not show: R_s and R_p have a one-sided
    likelihood (0 ohm and "no leakage" are their far ends), where the linearised
    sigma means little. Each is therefore tested by refitting without it (R_s = 0,
    R_p = inf); if that raises chi-square by less than 9 s^2 (3 sigma for one
    parameter), it is held at none and reported in ``unresolved``, with the free-fit
    value in a note. The weaker one goes first, then the other is tested again.

    Two temperatures give one ratio I_s(T_1)/I_s(T_0), which fixes one
    combination of E_g and XTI only; so E_g is fitted with XTI held, and both are
    fitted from three temperatures on.

    References
    ----------
    P. Antognetti and G. Massobrio, *Semiconductor Device Modeling with SPICE*,
    2nd ed., McGraw-Hill, 1993, diode model (temperature law).
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press,
    2007, ch. 15.5 (nonlinear least squares, covariance from the Jacobian) and
    15.6 (confidence limits from changes of chi-square; from memory).
    M. A. Branch, T. F. Coleman and Y. Li, "A subspace, interior, and conjugate
    gradient method for large-scale bound-constrained minimization problems",
    SIAM J. Sci. Comput. 21(1), 1-23, 1999 (the ``trf`` method).
    """
    if not isinstance(name, str) or not _NAME_RE.match(name):
        raise UsageError(f"model name {name!r} is not a plain name; use letters, digits and '_', "
                         "starting with a letter (e.g. 'drawer_si')")
    path = points.path
    _check_points(points)
    if xti is not None:
        _check_xti(xti)
    if temperature_k is not None and not (MIN_TEMPERATURE_K < temperature_k <= MAX_TEMPERATURE_C + ZERO_CELSIUS_K):
        raise UsageError(
            f"--temperature: {temperature_k:g} K is not a measurement temperature; give one between absolute "
            f"zero and {MAX_TEMPERATURE_C:g} degC, e.g. '23 degC'")
    v_all, i_all = points.voltage_v, points.current_a
    keep = v_all != 0.0
    notes = []
    if not keep.all():
        notes.append(f"{int((~keep).sum())} point(s) at 0 V left out (they carry no information)")
    v, i, lines = v_all[keep], i_all[keep], points.lines[keep]
    last = int(points.lines.max()) if len(points) else points.header_line

    if points.temperature_k is None:
        t0 = float(DEFAULT_T_REF_K if temperature_k is None else temperature_k)
        t = np.full(v.shape, t0)
        if temperature_k is None:
            notes.append("no temperature column: the points are taken as measured at 23 degC")
    else:
        t = points.temperature_k[keep]
    temps = tuple(float(x) for x in np.unique(t))
    if points.temperature_k is not None:
        t0 = min(temps, key=lambda x: (abs(x - DEFAULT_T_REF_K), x))

    forward = (v > 0) & (i > 0)
    if not forward.any():
        if v.size and np.all(v < 0) and np.all(i <= 0):
            hint = ("every point has negative voltage and current: the diode was measured the other "
                    "way round; change the sign of both columns (voltage is anode minus cathode)")
        else:
            hint = ("give points with positive voltage (anode minus cathode) and positive current; "
                    "a voltage and current of opposite signs means one lead was reversed")
        raise ProjectError(f"no forward points; {hint}", path, points.header_line)
    for tk in temps:
        sel = forward & (t == tk)
        if np.unique(v[sel]).size < 2:
            at = f" at {tk - ZERO_CELSIUS_K:.4g} degC" if len(temps) > 1 else ""
            first = int(lines[t == tk][0]) if np.any(t == tk) else last
            raise ProjectError(
                f"fewer than two forward points at different voltages{at}; measure at least two "
                "forward points (more is better: one every 20 to 50 mV over several decades of current)",
                path, first)

    free = [0, 1, 2, 3]
    held = np.array([np.nan, np.nan, np.nan, np.nan, DEFAULT_EG_EV,
                     DEFAULT_XTI if xti is None else float(xti)])
    if len(temps) >= 2:
        free.append(4)
        if len(temps) >= 3 and xti is None:
            free.append(5)
        else:
            why = ("given" if xti is not None else
                   "two temperatures fix one combination of band gap and XTI; "
                   "measure at a third temperature to fit both")
            notes.append(f"XTI held at {held[5]:g} ({why})")
    else:
        notes.append("one temperature: band gap and XTI not fitted (the model's defaults apply); "
                     "measure at a second temperature to fit the band gap")
    if v.size < len(free) + 1:
        raise ProjectError(
            f"{v.size} usable point(s) for {len(free)} parameters; measure at least {len(free) + 1} "
            "points (one more than the parameters, to estimate the scatter), better 15 or more",
            path, last)

    nonzero = np.abs(i[i != 0])
    floor = float(current_floor_a) if current_floor_a is not None else 0.5 * float(nonzero.min())
    if not (floor > 0 and math.isfinite(floor)):
        raise UsageError("current floor must be a positive current in amperes")

    data = (v, i, t, t0, forward, floor)
    with np.errstate(all="ignore"):  # the starts are estimates; a non-finite one is clipped or replaced
        starts = _starts(v, i, t, t0, forward, free, held)
    run = _least_squares(data, free, held, starts)
    if run is None:
        raise ProjectError(
            "the fit did not converge; check the points for typing errors (units: volts and amperes) "
            "and for readings taken while the diode was heating up", path, points.header_line)
    run, dropped = _drop_unseen(data, free, held, run)
    prob, best = run
    z = best.x
    r = prob.residuals(z)
    p_full = prob.full(z)
    # the closed form is exact; confirm the final model currents satisfy the element equations
    _, _, i_s_t, nvt_t, cur, vj, ie = prob._state(z)
    _check_solution(v, i_s_t, nvt_t, p_full[2], p_full[3], cur, vj, ie)

    lower, upper = _bounds(prob.free)
    tol_b = 1e-6
    pinned = {k: ("lower" if z[j] - lower[j] < tol_b else "upper") for j, k in enumerate(prob.free)
              if z[j] - lower[j] < tol_b or upper[j] - z[j] < tol_b}
    on_bound = list(pinned)
    unresolved = tuple(_KEYS[k] for k in free if k in dropped or k in on_bound)
    cols = [j for j, k in enumerate(prob.free) if k not in on_bound]
    jac = prob.jacobian(z)[:, cols]
    dof = v.size - len(cols)
    s2 = float(r @ r) / dof if dof > 0 else math.nan
    cov, rank_ok = _covariance(jac, s2)
    sig = np.sqrt(np.clip(np.diag(cov), 0.0, None)) if cov.size else np.zeros(0)
    params = {key: float(p_full[k]) for k, key in enumerate(_KEYS)}
    uncertainty = {key: None for key in _KEYS}
    for m, j in enumerate(cols):
        k = prob.free[j]
        value = sig[m] * (p_full[k] if _LOG[k] else 1.0)
        uncertainty[_KEYS[k]] = float(value) if (rank_ok and math.isfinite(value)) else None
    with np.errstate(all="ignore"):
        d = np.sqrt(np.diag(cov))
        corr = cov / np.outer(d, d) if cov.size else cov
    for k, (value, dchi) in dropped.items():
        notes.append(_dropped_note(k, value, dchi))
    for k in on_bound:
        notes.append(f"{_LABELS[_KEYS[k]]} ended on its search bound ({_fmt(_KEYS[k], p_full[k])}): "
                     "the points do not determine it; check them")
    if not rank_ok:
        notes.append("the points do not determine every parameter independently (singular Jacobian); "
                     "uncertainties left out: widen the current range of the measurement")
    mj = [prob.free[j] for j in cols]
    if 4 in mj and 5 in mj and rank_ok:
        rho = corr[mj.index(4), mj.index(5)]
        notes.append(f"band gap and XTI are strongly linked (correlation {rho:+.3f}): "
                     "quote them together")
    fitted = tuple(_KEYS[k] for k in free)
    rms = float(np.sqrt(np.mean(r ** 2)))
    worst = float(np.max(np.abs(r)))
    order = np.argsort(-np.abs(r))[:3]
    with np.errstate(all="ignore"):
        share = float(np.max(np.where(forward, ie / np.where(cur > 0, cur, np.inf), 0.0)))
    gate = quality.problems(params, {_KEYS[k]: side for k, side in pinned.items()}, rms, lines[order],
                            emission_sigma=uncertainty["emission"], junction_share=share,
                            settled=best.status > 0)
    if rms > 0.1 and not gate:
        notes.append("large scatter (rms above 10 % of current): check the points at line(s) "
                     + ", ".join(str(int(lines[k])) for k in order))
    return Fit(
        name=name,
        params=params,
        uncertainty=uncertainty,
        residuals=r,
        n_points=int(v.size),
        temperatures=temps,
        temperature_k=float(t0),
        fitted=fitted,
        unresolved=unresolved,
        residual_rms=rms,
        residual_max=worst,
        lines=lines.copy(),
        forward=forward,
        current_floor_a=floor,
        correlation=corr,
        notes=tuple(notes),
        path=path,
        problems=gate,
    )


#: Value that means "no such element" for the series (0 ohm) and leakage (none) resistance.
_NONE_VALUE = {2: 0.0, 3: math.inf}
#: Increase of chi-square (in units of the scatter) below which a parasitic resistance
#: counts as not shown by the points: 9, i.e. less than 3 sigma for one parameter. A
#: parasitic resistance has a one-sided likelihood (none is its far end), so the
#: linearised sigma of a weakly shown one is not to be trusted; 3 sigma keeps false
#: detections rare (about 0.3 % of noise-only cases).
_SIGNIFICANCE = 9.0
#: Scatter floor for that test (ln scale): below it residuals are rounding, not data.
_S2_FLOOR = 1e-18


def _bounds(free):
    lower = np.array([math.log(_LOWER[k]) if _LOG[k] else _LOWER[k] for k in free])
    upper = np.array([math.log(_UPPER[k]) if _LOG[k] else _UPPER[k] for k in free])
    return lower, upper


#: Budget of model evaluations per least-squares run. Points that follow the diode law
#: converge in at most about 120 (1 % to 15 % scatter, 120 invented diodes over wide
#: parameter ranges); points that do not can wander for thousands, at about 0.5 ms each.
MAX_EVALUATIONS = 400


def _least_squares(data, free, held, starts):
    """Best of least-squares runs from ``starts`` (full natural vectors); None if all fail.

    A run that used up ``MAX_EVALUATIONS`` (status 0) still counts: its end point is
    the best found, and :mod:`.quality` reports that the fit did not settle.
    """
    prob = _Problem(*data, free, held)
    lower, upper = _bounds(free)
    best = None
    for start in starts:
        with np.errstate(all="ignore"):
            z0 = np.array([np.log(start[k]) if _LOG[k] else start[k] for k in free], dtype=float)
        z0 = np.clip(np.where(np.isfinite(z0), z0, 0.5 * (lower + upper)), lower + 1e-9, upper - 1e-9)
        try:
            with np.errstate(all="ignore"):
                res = least_squares(prob.residuals, z0, jac=prob.jacobian, bounds=(lower, upper),
                                    method="trf", x_scale="jac", ftol=1e-14, xtol=1e-14, gtol=1e-14,
                                    max_nfev=MAX_EVALUATIONS)
        except (ValueError, ArithmeticError, np.linalg.LinAlgError):  # points so wild the step overflows
            continue
        # status 0: the evaluation budget ran out; kept as a candidate, the quality gate says so
        if res.status >= 0 and np.isfinite(res.cost) and (best is None or res.cost < best.cost):
            best = res
    return None if best is None else (prob, best)


def _drop_unseen(data, free, held, run):
    """Hold R_s at 0 and R_p at none where the points do not show them.

    Backward elimination: the parasitic resistance whose removal raises chi-square
    least is removed while that rise is below ``_SIGNIFICANCE`` times the scatter
    of the full fit (a likelihood-ratio test with one degree of freedom).

    Returns the final ``(problem, result)`` and ``{index: (free-fit value, delta chi2)}``.
    """
    prob, res = run
    m = data[0].size
    s2 = max(2.0 * res.cost / max(m - len(free), 1), _S2_FLOOR)
    dropped = {}
    while True:
        trials = []
        for k in (2, 3):
            if k not in prob.free:
                continue
            t_free = [q for q in prob.free if q != k]
            t_held = prob.held.copy()
            t_held[k] = _NONE_VALUE[k]
            start = prob.full(res.x)
            trial = _least_squares(data, t_free, t_held, [start])
            if trial is not None:
                trials.append((2.0 * (trial[1].cost - res.cost) / s2, k, trial, start[k]))
        if not trials:
            break
        dchi, k, trial, value = min(trials, key=lambda x: x[0])
        if dchi >= _SIGNIFICANCE:
            break
        dropped[k] = (value, dchi)
        prob, res = trial
    return (prob, res), dropped


def _dropped_note(k: int, value: float, dchi: float) -> str:
    key = _KEYS[k]
    free_fit = f"free fit {_fmt(key, value)}, improving the fit by {math.sqrt(max(dchi, 0.0)):.1f} sigma"
    if key == "series_resistance_ohm":
        return ("series resistance not resolved by the points (" + free_fit + "): held at 0 ohm; "
                "add points at higher forward current to fit it")
    return ("leakage resistance not resolved by the points (" + free_fit + "): left out (no leakage); "
            "add reverse or very low-current points to fit it")


def _covariance(jac: np.ndarray, s2: float):
    """``s2 (J^T J)^-1`` via the SVD of the column-scaled J, and whether J has full rank.

    Scaling each column to unit norm first makes the rank test independent of the
    parameters' units: a weakly determined parameter gets a large sigma, and only
    a truly degenerate combination counts as rank deficient.
    """
    if jac.size == 0:
        return np.zeros((0, 0)), True
    norm = np.linalg.norm(jac, axis=0)
    norm = np.where(norm > 0, norm, 1.0)
    _, sv, vt = np.linalg.svd(jac / norm, full_matrices=False)
    rank_ok = bool(sv.size and sv[-1] > sv[0] * 1e-8)
    with np.errstate(all="ignore"):  # a zero singular value (a degenerate column) gives inf, then 0
        inv = np.where(sv > sv[0] * 1e-15, 1.0 / np.maximum(sv, 1e-300) ** 2, 0.0)
        cov = s2 * ((vt.T * inv) @ vt) / np.outer(norm, norm)
    return cov, rank_ok

