"""The diode model's terminal current, exactly (Wright omega), and its check."""

from __future__ import annotations

import math

import numpy as np
from scipy.special import wrightomega

from ..errors import SolveError

def _arrays(*xs):
    return np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in xs))


def _solve_terminal(v, i_s, nvt, r_s, r_p):
    """Exact terminal current and junction quantities of the diode model.

    Returns ``(i, vj, ie)``: terminal current [A], junction voltage [V] and the
    exponential part of the junction current ``ie = I_s exp(V_j / nV_t)`` [A].
    """
    v, i_s, nvt, r_s, r_p = _arrays(v, i_s, nvt, r_s, r_p)
    g_p = np.where(np.isinf(r_p), 0.0, 1.0 / np.where(np.isinf(r_p), 1.0, r_p))
    has_rs = r_s > 0.0
    rs = np.where(has_rs, r_s, 1.0)
    den = 1.0 + r_s * g_p
    b = i_s / den
    c = (g_p * v - i_s) / den
    # ln of the Wright omega argument: ln(b R_s / nV_t) + (V - c R_s) / nV_t
    lin = (v - c * r_s) / nvt
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        x = np.log(b * rs / nvt) + lin
        w = np.where(has_rs, np.real(wrightomega(x)), 0.0)
        # junction voltage over nV_t: ln(w) - ln(b R_s / nV_t) when w is not small
        # (no cancellation at high current), else (V - c R_s)/nV_t - w (exact, no underflow)
        big = w >= 1.0
        y = np.where(big, np.log(np.where(big, w, 1.0)) - (x - lin), lin - w)
        y = np.where(has_rs, y, v / nvt)
        em1 = np.expm1(y)
        i_small = (g_p * v + i_s * em1) / den
        i_big = c + (nvt / rs) * w
        i = np.where(big & has_rs, i_big, i_small)
        ie = np.where(big & has_rs, w * nvt * den / rs, i_s * (em1 + 1.0))
    return i, nvt * y, ie


def diode_current(v_v, i_s_a, nvt_v, r_s_ohm=0.0, r_p_ohm=math.inf):
    """Terminal current of a junction with series and leakage resistance [A].

    Vectorised and exact: no iteration, valid from deep reverse bias to high
    forward current (the exponential never overflows).

    Parameters
    ----------
    v_v : float or ndarray
        Terminal voltage, anode minus cathode [V].
    i_s_a : float or ndarray
        Saturation current [A].
    nvt_v : float or ndarray
        Emission coefficient times thermal voltage, n V_t [V].
    r_s_ohm : float or ndarray
        Series resistance [ohm] (0 for none).
    r_p_ohm : float or ndarray
        Leakage resistance across the junction [ohm] (``inf`` for none).

    Returns
    -------
    ndarray
        Current into the anode [A].

    Raises
    ------
    SolveError
        If the result does not satisfy the element equations to 1e-9 (relative),
        e.g. for non-finite inputs.

    Notes
    -----
    The element equations (design contract) are

    .. math:: I = I_s (e^{V_j/nV_t} - 1) + V_j / R_p, \\qquad V = V_j + I R_s .

    With :math:`G_p = 1/R_p`, :math:`D = 1 + R_s G_p`, :math:`b = I_s / D` and
    :math:`c = (G_p V - I_s)/D` they reduce to :math:`I - c = b\\,e^{(V - I R_s)/nV_t}`,
    whose solution is

    .. math:: I = c + \\frac{nV_t}{R_s}\\,
              \\omega\\!\\left(\\ln\\frac{b R_s}{nV_t} + \\frac{V - c R_s}{nV_t}\\right)

    with :math:`\\omega` the Wright omega function (:math:`\\omega e^\\omega = e^x`,
    the Lambert W function of :math:`e^x` on its principal branch). Where
    :math:`\\omega < 1` the current is evaluated as
    :math:`(G_p V + I_s\\,\\mathrm{expm1}(V_j/nV_t))/D` with
    :math:`V_j/nV_t = (V - cR_s)/nV_t - \\omega`, which keeps full relative
    precision near zero bias. The result is checked against both element
    equations.

    References
    ----------
    T. C. Banwell and A. Jayakumar, "Exact analytical solution for current flow
    through diode with series resistance", Electronics Letters 36(4), 291-292, 2000.
    A. Ortiz-Conde, F. J. Garcia Sanchez and J. Muci, "Exact analytical solutions of
    the forward non-ideal diode equation with series and shunt parasitic
    resistances", Solid-State Electronics 44 (2000) 1861-1864 (from memory; the
    closed form above is derived here directly from the element equations).
    P. W. Lawrence, R. M. Corless and D. J. Jeffrey, "Algorithm 917: Complex
    double-precision evaluation of the Wright omega function", ACM Transactions on
    Mathematical Software 38(3), 2012 (the algorithm of ``scipy.special.wrightomega``).
    """
    i, vj, ie = _solve_terminal(v_v, i_s_a, nvt_v, r_s_ohm, r_p_ohm)
    _check_solution(v_v, i_s_a, nvt_v, r_s_ohm, r_p_ohm, i, vj, ie)
    return i


def _check_solution(v, i_s, nvt, r_s, r_p, i, vj, ie):
    """Raise SolveError unless (i, vj) satisfy both element equations."""
    v, i_s, nvt, r_s, r_p = _arrays(v, i_s, nvt, r_s, r_p)
    g_p = np.where(np.isinf(r_p), 0.0, 1.0 / np.where(np.isinf(r_p), 1.0, r_p))
    with np.errstate(all="ignore"):
        kvl = np.abs(v - vj - i * r_s) / (np.abs(v) + np.abs(vj) + nvt)
        junction = i_s * np.expm1(np.minimum(vj / nvt, 700.0)) + g_p * vj
        kcl = np.abs(i - junction) / (np.abs(i) + i_s + np.abs(g_p * vj) + 1e-300)
        # the junction law is evaluated at a rounded vj: allow for its conditioning
        tol_kcl = 1e-9 + 64 * np.finfo(float).eps * np.abs(vj / nvt)
        bad = ~(np.isfinite(i) & (kvl <= 1e-9) & (kcl <= tol_kcl))
    if np.any(bad):
        k = np.flatnonzero(np.ravel(bad))[0]
        raise SolveError(
            f"diode current at V = {np.ravel(v)[k]:.6g} V did not satisfy the element equations "
            f"(I_s = {np.ravel(i_s)[k]:.4g} A, nV_t = {np.ravel(nvt)[k]:.4g} V, "
            f"R_s = {np.ravel(r_s)[k]:.4g} ohm, R_p = {np.ravel(r_p)[k]:.4g} ohm)")

