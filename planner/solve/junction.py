"""The junction law: constants, temperature law, exact single-junction solution, limiting.

Everything here is a pure function of arrays; the Newton iteration
(:mod:`planner.solve.newton`) evaluates the law through :func:`evaluate`.
"""

from __future__ import annotations

import math

import numpy as np

#: Boltzmann constant [J/K], exact (SI 2019).
BOLTZMANN = 1.380649e-23
#: Elementary charge [C], exact (SI 2019).
CHARGE = 1.602176634e-19

#: Exponent beyond which the junction law is continued linearly (only ever reached by
#: intermediate Newton iterates; a true operating point is far below).
EXP_MAX = 80.0

#: Below this exponent v_j / nV_t a junction is "deep" in reverse: its current is written
#: as I_s e^x plus the constant -I_s, kept apart (see :func:`evaluate`).
DEEP = -1.0


def thermal_voltage(t_k):
    """Thermal voltage V_t = k T / q [V].

    Parameters
    ----------
    t_k : float or ndarray
        Absolute temperature [K].

    References
    ----------
    Exact SI values of k and q (BIPM, SI Brochure, 9th ed., 2019).

    Examples
    --------
    >>> round(thermal_voltage(300.0), 7)
    0.025852
    """
    return BOLTZMANN * np.asarray(t_k, dtype=float) / CHARGE


def saturation_current(i_s_a, n, eg_ev, xti, t_k, t_nom_k):
    """Saturation current at temperature ``t_k`` by the SPICE temperature law [A].

    Notes
    -----
    .. math:: I_s(T) = I_s(T_0) (T/T_0)^{XTI/n}
              \\exp\\left((T/T_0 - 1) \\frac{E_g}{n V_t(T)}\\right)

    References
    ----------
    P. Antognetti and G. Massobrio, *Semiconductor Device Modeling with SPICE*,
    2nd ed., McGraw-Hill, 1993, diode model; the ngspice manual, diode model.
    """
    t = np.asarray(t_k, dtype=float)
    ratio = t / t_nom_k
    vt = thermal_voltage(t)
    return i_s_a * ratio ** (xti / n) * np.exp((ratio - 1.0) * eg_ev / (n * vt))


def wright_omega(z):
    """The Wright omega function for real arguments: the w with w + ln w = z.

    Parameters
    ----------
    z : ndarray

    Returns
    -------
    ndarray
        omega(z), to about 1e-15 relative.

    Notes
    -----
    Start from :math:`e^z` (z < 1), :math:`(z + 1)/2` (1 <= z < 3) or
    :math:`z - \\ln z`, then three steps of the fourth-order iteration of Fritsch,
    Shafer and Crowley:

    .. math:: r = z - w - \\ln w, \\quad t = 2 (1 + w)(1 + w + 2r/3), \\quad
              w \\leftarrow w \\left(1 + \\frac{r}{1 + w} \\frac{t - r}{t - 2r}\\right)

    Below z = -700 omega(z) = e^z to double precision; above 1e12, z - ln z.

    References
    ----------
    R. M. Corless and D. J. Jeffrey, "The Wright omega function", in *Artificial
    Intelligence, Automated Reasoning, and Symbolic Computation*, LNCS 2385, 2002;
    F. N. Fritsch, R. E. Shafer and W. P. Crowley, "Algorithm 443: solution of the
    transcendental equation w e^w = x", Communications of the ACM 16(2), 1973.
    """
    z = np.asarray(z, dtype=float)
    inside = bool(z.size) and z.min() >= -700.0 and z.max() <= 1e12  # no limit acts (NaN: False)
    zc = z if inside else np.clip(z, -700.0, 1e12)
    w = np.exp(np.minimum(zc, 1.0))
    above = zc >= 1.0
    if above.any():
        w = np.where(above, np.where(zc < 3.0, 0.5 * (zc + 1.0), zc - np.log(np.maximum(zc, 1.0))), w)
    for _ in range(3):  # the iteration below, in place (the same operations in the same order)
        r = zc - w
        r -= np.log(w)
        wp1 = w + 1.0
        t = r * 2.0
        t /= 3.0
        t += wp1
        t *= wp1 * 2.0  # t = 2 (1 + w)(1 + w + 2r/3)
        num = t - r
        den = r * 2.0
        np.subtract(t, den, out=den)
        q = r / wp1
        q *= num
        q /= den
        q += 1.0
        w = w * q  # w (1 + r/(1 + w) (t - r)/(t - 2r))
    if inside:
        return w
    w = np.where(z < -700.0, np.exp(np.maximum(z, -800.0)), w)
    return np.where(z > 1e12, z - np.log(np.maximum(z, 1.0)), w)


def single_diode(v_oc, r, i_s, nvt):
    r"""Terminal current of a junction behind a resistance, exactly [A].

    Notes
    -----
    .. math:: I = \frac{nV_t}{R}\,\omega\!\left(\ln\frac{I_s R}{nV_t} + \frac{V + I_s R}{nV_t}\right) - I_s

    with :math:`\omega` the Wright omega function (the Lambert-W form without overflow);
    for :math:`|V| < 10^{-4} nV_t`, :math:`I = V I_s / (nV_t + I_s R)` (the first-order term,
    free of the cancellation above).

    References
    ----------
    T. C. Banwell and A. Jayakumar, "Exact analytical solution for current flow
    through diode with series resistance", Electronics Letters 36(4), 291-292, 2000.
    """
    args = (v_oc, r, i_s, nvt)
    shape = max((np.shape(a) for a in args), key=len)
    if len(shape) <= 1 and (not shape or shape[0] <= SMALL):
        # a few cases: one float at a time (numpy's cost per call is most of the time there)
        out = _few_in_floats(args, shape)
        if out is not None:
            return out
    arg = np.log(i_s * r / nvt) + (v_oc + i_s * r) / nvt
    exact = (nvt / r) * wright_omega(arg) - i_s
    # near zero the difference above cancels to rounding residue; there the junction's
    # small-signal conductance I_s / nV_t in series with R (relative error ~ V / nV_t) keeps
    # the current proportional to V, so that a tiny stimulus gets a tiny start
    small = np.abs(v_oc) < 1e-4 * nvt
    return np.where(small, v_oc * i_s / (nvt + i_s * r), exact)


#: Batches of at most this many cases take :func:`single_diode`'s float-at-a-time form.
SMALL = 8


def _few_in_floats(args, shape):
    """:func:`single_diode` of at most :data:`SMALL` cases in floats, or None where a case needs
    the array form's limits (a zero or infinite resistance, an overflow)."""
    n = shape[0] if shape else 1
    try:
        cols = [a.tolist() if isinstance(a, np.ndarray) and a.ndim == 1 and a.shape[0] == n else [float(a)] * n
                for a in args]
        out = np.array([_single_diode_float(*x) for x in zip(*cols)])
    except (ValueError, ZeroDivisionError, OverflowError, TypeError):
        return None
    return out if shape else out[0]


def _single_diode_float(v_oc, r, i_s, nvt):
    """:func:`single_diode` of one case in floats (the same formula and branches)."""
    if abs(v_oc) < 1e-4 * nvt:
        return v_oc * i_s / (nvt + i_s * r)
    return (nvt / r) * _omega_float(math.log(i_s * r / nvt) + (v_oc + i_s * r) / nvt) - i_s


def _omega_float(z):
    """:func:`wright_omega` of one float (the same start, iteration and limits)."""
    if z < -700.0:
        return math.exp(max(z, -800.0))
    if z > 1e12:
        return z - math.log(z)
    w = math.exp(z) if z < 1.0 else (0.5 * (z + 1.0) if z < 3.0 else z - math.log(z))
    for _ in range(3):
        r = z - w - math.log(w)
        wp1 = w + 1.0
        t = 2.0 * wp1 * (wp1 + 2.0 * r / 3.0)
        w = w * (1.0 + r / wp1 * (t - r) / (t - 2.0 * r))
    return w


def pnjlim(v_new, v_old, nvt, vcrit):
    """One-sided junction-voltage limiting (the classic SPICE ``pnjlim``).

    References
    ----------
    L. W. Nagel, *SPICE2: A Computer Program to Simulate Semiconductor Circuits*,
    UC Berkeley ERL-M520, 1975, junction voltage limiting.
    """
    big = (v_new > vcrit) & (np.abs(v_new - v_old) > 2.0 * nvt)
    if not big.any():
        return v_new
    arg = 1.0 + (v_new - v_old) / nvt
    from_pos = np.where(arg > 0, v_old + nvt * np.log(np.maximum(arg, 1e-300)), vcrit)
    from_neg = nvt * np.log(np.maximum(v_new / nvt, 1e-300))
    return np.where(big, np.where(v_old > 0, from_pos, from_neg), v_new)


def limit(new, old, p):
    """Junction-voltage limiting of one diode's Newton update, forward and into breakdown.

    ``p`` holds the diode's rows (:class:`planner.solve.newton.Junction`): the forward
    limit is :func:`pnjlim` at ``vcrit``; with a finite breakdown voltage the same
    limit acts on -(v + BV) at the breakdown's own critical voltage. (Neither acts on a
    step of at most 2 nV_t; the caller skips those.)
    """
    new = pnjlim(new, old, p.nvt, p.vcrit)
    if p.has_bv:
        bvd = p.bv
        fin = np.isfinite(bvd)
        bv0 = np.where(fin, bvd, 0.0)
        w_new = -(new + bv0)
        wl = pnjlim(w_new, -(old + bv0), p.nvt, p.vcr_bv)
        # map back only where limiting acted: the round trip via -BV costs ulp(BV)
        new = np.where(fin & (wl != w_new), -(wl + bv0), new)
    return new


def current(vj, p):
    """Exact junction current (leakage included) [A].

    .. math:: i = I_s (e^{v/nV_t} - 1) - I_{BV} e^{-(v + BV)/nV_t} + G_p v

    with ``expm1`` (no cancellation near zero), continued linearly beyond an exponent of
    :data:`EXP_MAX` (reached only by Newton iterates).
    """
    x = vj * p.inv_nvt
    xe = np.minimum(x, EXP_MAX)
    em = np.expm1(xe)
    i = em + (em + 1.0) * (x - xe)
    i *= p.i_s
    if p.has_bv:
        w = (vj + p.bv) * (-p.inv_nvt)
        we = np.minimum(w, EXP_MAX)
        i -= p.ibv * np.exp(we) * (1.0 + np.fmax(w - we, 0.0))  # no BV: -inf - -inf -> 0
    if _nonzero(p.g_p):
        i = i + p.g_p * vj
    return i


def _nonzero(a) -> bool:
    return isinstance(a, np.ndarray) or a != 0.0
