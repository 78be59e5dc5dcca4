"""The metal-oxide varistor law: current, conductance, step limiting and a starting voltage.

.. math:: I = I_1 \\,\\mathrm{sgn}(V) \\left(\\frac{|V|}{V_1}\\right)^{\\alpha}
          = I_1 \\,\\mathrm{sgn}(V)\\, e^{y}, \\qquad y = \\alpha \\ln\\frac{|V|}{V_1}

References
----------
L. M. Levinson and H. R. Philipp, "The physics of metal oxide varistors", Journal of
Applied Physics 46(3), 1332-1341, 1975; T. K. Gupta, "Application of zinc oxide
varistors", Journal of the American Ceramic Society 73(7), 1817-1840, 1990.
"""

from __future__ import annotations

import numpy as np

from .junction import EXP_MAX

#: Smallest magnitude the law's logarithm sees [V] (the law is 0 there to double precision).
_TINY_V = 1e-300


def log_ratio(v, p):
    """ln(min(|v|, V_max) / V_1) and |v|, with V_max = V_1 e^{EXP_MAX / alpha} (beyond it the
    law is continued linearly: only Newton iterates go there)."""
    a = np.abs(v)
    lu = np.log(np.maximum(a, _TINY_V) * p.inv_v1)
    return np.minimum(lu, p.lu_max), a


def current(v, p):
    """Varistor current [A] (sign of ``v``), continued linearly beyond V_max."""
    lu, a = log_ratio(v, p)
    y = p.alpha * lu
    mag = p.i1 * np.exp(y) * (1.0 + np.fmax(a - p.v_max, 0.0) * (p.alpha / p.v_max))
    return np.copysign(mag, v)


def conductance(lu, p):
    """dI/dV [S] at ln(|v|/V_1) = ``lu`` (the tangent's slope beyond V_max).

    Notes
    -----
    .. math:: \\frac{dI}{dV} = \\frac{\\alpha I_1}{V_1}\\left(\\frac{|V|}{V_1}\\right)^{\\alpha - 1}
    """
    return p.g1 * np.exp((p.alpha - 1.0) * lu)


def limit(new, old, p):
    """Step limiting of a varistor's voltage, the power-law counterpart of ``pnjlim``.

    Notes
    -----
    Where a step would raise the current by more than e^2 beyond the critical voltage
    ``V_crit`` (where dI/dV = 1/sqrt(2) S, as for a junction), the new voltage is the one
    at which the law equals its own linear prediction from the old point:

    .. math:: |V| = |V_{old}| \\left(1 + \\alpha\\frac{|V_{new}| - |V_{old}|}{|V_{old}|}\\right)^{1/\\alpha}

    From zero or the other polarity, :math:`|V| = V_{crit} (|V_{new}|/V_{crit})^{1/\\alpha}`
    (the counterpart of pnjlim's :math:`nV_t \\ln(v/nV_t)`).

    References
    ----------
    L. W. Nagel, *SPICE2*, UC Berkeley ERL-M520, 1975, junction voltage limiting (the
    principle: never let a step's current exceed its linearised value).
    """
    an, ao = np.abs(new), np.abs(old)
    same = (np.sign(new) == np.sign(old)) & (ao > 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        growth = np.where(same, p.alpha * np.log(an / np.where(same, ao, 1.0)), np.inf)
        big = (an > p.vcrit) & (an > ao) & (growth > 2.0)
        if not big.any():
            return new
        grown = ao * np.exp(np.log1p(p.alpha * (an - ao) / np.where(same, ao, 1.0)) / p.alpha)
        fresh = p.vcrit * np.exp(np.log(an / p.vcrit) / p.alpha)
        lim = np.where(same, grown, fresh)
    return np.where(big, np.copysign(lim, new), new)


def start_voltage(v_th, r_th, p):
    """A starting voltage for a varistor behind a Thevenin source [V].

    The smaller of the two bounds of the true solution: the open-circuit voltage, and
    the voltage at which the varistor alone carries the short-circuit current.
    """
    a = np.abs(v_th)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        i_sc = a / np.maximum(r_th, 1e-300)
        v_sc = p.v1 * np.exp(np.log(np.maximum(i_sc, 1e-300) / p.i1) / p.alpha)
    return np.copysign(np.minimum(a, v_sc), v_th)


def critical_voltage(v1, alpha, i1):
    """V_crit where dI/dV = 1/sqrt(2) S [V] (no limiting for alpha <= 1: the law is then linear)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        am1 = np.asarray(alpha, dtype=float) - 1.0
        v = v1 * np.exp(np.log(v1 / (np.sqrt(2.0) * alpha * i1)) / np.where(am1 > 0, am1, 1.0))
    return np.where(am1 > 0, v, np.inf)


__all__ = ["EXP_MAX", "current", "conductance", "limit", "start_voltage", "critical_voltage", "log_ratio"]
