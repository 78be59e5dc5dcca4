"""Adaptive cycle rules: nodes placed where the network's response needs them.

The cycle mean of a branch quantity of a memoryless network is an integral over
the shape's phase interval (see :mod:`planner.cycle.shapes`),

.. math:: \\bar q = \\frac{1}{t_1 - t_0} \\int_{t_0}^{t_1} g(X_{pk}\\, x(t))\\, dt ,

whose integrand is smooth except near the diodes' conduction onsets (the knees),
where it bends within a few :math:`n V_t` of source voltage. :func:`adapt` builds a
rule for one stimulus (shape and peak) from a callable that solves the network:

1. **Coarse scan.** A few equally spaced phases locate the knees: on each
   interval where the shape is monotone, the slope :math:`\\Delta q / \\Delta x`
   between neighbouring points jumps at a knee; the corner of the two straight
   lines either side is taken as a breakpoint.
2. **Gauss-Kronrod.** Each panel between breakpoints gets the G7-K15 pair; a
   panel is accepted when :math:`|K_{15} - G_7|` of both the mean and the mean
   square is within its share of the tolerance (shares proportional to panel
   length), else it is halved. Every panel still open is solved in one batch.
3. **Order trimming.** :math:`|K_{15} - G_7|` is the error of the 7-point rule; the
   15-point result is far better. So each accepted panel keeps the smallest
   Gauss-Legendre order n (1 .. 7) whose result agrees with its K15 result
   within the panel's share: chosen from the degree-14 interpolant of the 15
   values, then confirmed on the solved values of the n nodes.
4. **Verification.** A rule is built on the nominal case; :meth:`AdaptiveRule.verify`
   checks it on a few extreme rows of a batch (the Monte Carlo builds with the
   largest and smallest results, the temperature extremes) against their own
   K15 results and refines it where they miss.

The mean square is controlled so that the rms meets the same absolute tolerance:
:math:`\\delta(\\overline{q^2}) \\le \\epsilon (2 q_{rms} + \\epsilon)`.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Callable

import numpy as np
from scipy.optimize import brentq

from .rules import CycleRule, fixed_rule, gauss_kronrod, gauss_legendre
from .shapes import Shape

__all__ = ["AdaptiveRule", "adapt", "extreme_rows", "KNEE_BEND", "COARSE_POINTS", "BUILD_MARGIN"]

#: Phase points of the coarse scan over the shape's phase interval.
COARSE_POINTS = 33
#: A slope change larger than this share of the largest slope marks a knee.
KNEE_BEND = 0.02
#: The rule is built to this share of the tolerance, leaving the rest for the
#: spread of the knees between Monte Carlo builds and temperatures.
BUILD_MARGIN = 0.5
#: Share of a panel's tolerance the predicted error of a trimmed order must meet (the
#: prediction comes from an interpolant; the solved values then confirm it).
TRIM_SAFETY = 1.0
#: Most panels before the refinement gives up (and says so in ``notes``).
MAX_PANELS = 400
#: Gauss order of the Gauss-Kronrod pair.
GK_ORDER = 7


def _rows(q, s: int) -> np.ndarray:
    q = np.asarray(q, dtype=float)
    if q.shape[-1] != s:
        raise ValueError(f"evaluate returned shape {q.shape}; its last axis must hold the {s} source values")
    return q.reshape(-1, s)


@dataclass
class _Panel:
    a: float
    b: float
    kq: np.ndarray | None = None  # K15 values per row, (R, 15)
    order: int = GK_ORDER
    min_order: int = 1
    cache: dict = field(default_factory=dict)

    @property
    def mid(self):
        return 0.5 * (self.a + self.b)

    @property
    def half(self):
        return 0.5 * (self.b - self.a)


class _Problem:
    """The integrand over the phase interval, with a count of solved source values."""

    def __init__(self, shape: Shape, evaluate: Callable, peak: float):
        self.shape = shape
        self.evaluate = evaluate
        self.peak = float(peak)
        self.t0, self.t1 = (float(v) for v in shape.domain)
        self.length = self.t1 - self.t0
        self.count = 0

    def __call__(self, t) -> np.ndarray:
        t = np.asarray(t, dtype=float)
        if t.size == 0:
            return np.zeros((1, 0))
        x = self.peak * self.shape.x_of(t)
        self.count += t.size
        return _rows(self.evaluate(x), t.size)


def _knees(shape, t, q) -> list[float]:
    """Breakpoints (phases) at the corners of the coarse response, per monotone piece.

    ``shape`` needs ``x_of`` and ``monotone_pieces``; ``t`` are the coarse phases
    (ascending) and ``q`` the solved values, shape (R, len(t)).
    """
    out = []
    x_all = shape.x_of(t)
    for a, b in shape.monotone_pieces():
        sel = np.nonzero((t >= a - 1e-12) & (t <= b + 1e-12))[0]
        if sel.size < 4:
            continue
        x = x_all[sel]
        order = np.argsort(x)
        sel, x = sel[order], x[order]
        qq = q[:, sel]
        dx = np.diff(x)
        s = np.diff(qq, axis=1) / dx  # (R, m-1)
        scale = np.max(np.abs(s), axis=1, keepdims=True)
        scale[scale == 0.0] = 1.0
        bend = np.max(np.abs(np.diff(s, axis=1)) / scale, axis=0)  # at interior points 1..m-2
        m = x.size
        for j in range(bend.size):
            i = j + 1
            if bend[j] < KNEE_BEND:
                continue
            if (j > 0 and bend[j - 1] > bend[j]) or (j + 1 < bend.size and bend[j + 1] >= bend[j]):
                continue
            xk = x[i]
            if 2 <= i <= m - 3:
                r = int(np.argmax(np.abs(np.diff(s[:, i - 1:i + 1], axis=1))))
                sl, sr = s[r, i - 2], s[r, i + 1]
                if sl != sr:
                    # corner of the line through points i-2, i-1 and the line through i+1, i+2
                    xc = (qq[r, i + 1] - sr * x[i + 1] - qq[r, i - 1] + sl * x[i - 1]) / (sl - sr)
                    if x[i - 1] < xc < x[i + 1]:
                        xk = xc
            f = lambda tt: shape.x_of(tt) - xk  # noqa: E731
            lo, hi = t[sel[0]], t[sel[-1]]
            lo, hi = min(lo, hi), max(lo, hi)
            if f(lo) * f(hi) < 0.0:
                out.append(float(brentq(f, lo, hi, xtol=1e-13)))
    return out


def _gk_values(p: _Panel):
    """K15, G7 results of q and q^2 per row over the panel (integrals in t)."""
    xk, wk, gw = gauss_kronrod(GK_ORDER)
    q = p.kq
    k1, g1 = p.half * (q @ wk), p.half * (q @ gw)
    k2, g2 = p.half * ((q * q) @ wk), p.half * ((q * q) @ gw)
    return k1, g1, k2, g2


def _resasc_error(k, g, absdev):
    """Error estimate of a K15 result: QUADPACK's heuristic, capped at |K15 - G7|.

    QUADPACK (Piessens et al. 1983, routine QK15) estimates the error of K15 as
    :math:`I_{|dev|} \\min(1, (200 |K_{15} - G_7| / I_{|dev|})^{3/2})` with
    :math:`I_{|dev|} = \\int |f - \\bar f|`; K15 is never assumed worse than G7.
    """
    err = np.abs(k - g)
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = np.where(absdev > 0, absdev * np.minimum(1.0, (200.0 * err / absdev) ** 1.5), err)
    return np.minimum(scaled, err)


def _k15_error(p: _Panel):
    """Estimated error of the panel's K15 results of q and q^2 (per row)."""
    xk, wk, gw = gauss_kronrod(GK_ORDER)
    out = []
    for q in (p.kq, p.kq * p.kq):
        k = p.half * (q @ wk)
        g = p.half * (q @ gw)
        mean = (q @ wk) / 2.0
        absdev = p.half * (np.abs(q - mean[:, None]) @ wk)
        out.append(_resasc_error(k, g, absdev))
    return out


def _legendre_fit(p: _Panel):
    xk, _, _ = gauss_kronrod(GK_ORDER)
    v = np.polynomial.legendre.legvander(xk, xk.size - 1)
    return np.linalg.solve(v, p.kq.T)  # (15, R) Legendre coefficients of each row


def _gauss_on(p: _Panel, n: int, q) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre n-point results of q and q^2 over the panel from values at its nodes."""
    _, w = gauss_legendre(n)
    return p.half * (q @ w), p.half * ((q * q) @ w)


class _Tolerance:
    def __init__(self, tol, tol_rms, rms_rows, length):
        self.tol = float(tol)
        self.tol_rms = float(tol_rms)
        self.ms = self.tol_rms * (2.0 * np.asarray(rms_rows) + self.tol_rms)  # per row, on the mean square
        self.length = length

    def share(self, p: _Panel, factor=1.0):
        f = factor * (p.b - p.a) / self.length
        return f * self.tol * self.length, f * self.ms * self.length  # in integral (not mean) units


def _refine(prob: _Problem, panels: list[_Panel], tolc: _Tolerance, factor: float, notes: list) -> list[_Panel]:
    """Halve panels until |K15 - G7| of each is within its share (all rows)."""
    xk, _, _ = gauss_kronrod(GK_ORDER)
    todo = list(panels)
    done: list[_Panel] = []
    while todo:
        fresh = [p for p in todo if p.kq is None]
        if fresh:
            q = prob(np.concatenate([p.mid + p.half * xk for p in fresh]))
            for i, p in enumerate(fresh):
                p.kq = q[:, i * xk.size:(i + 1) * xk.size]
        nxt = []
        for p in todo:
            k1, g1, k2, g2 = _gk_values(p)
            s1, s2 = tolc.share(p, factor)
            ok = np.all(np.abs(k1 - g1) <= s1) and np.all(np.abs(k2 - g2) <= s2)
            if ok or len(done) + len(nxt) + 2 > MAX_PANELS or p.half < 1e-12 * prob.length:
                if not ok:
                    notes.append(f"panel [{p.a:.6g}, {p.b:.6g}] kept above its share of the tolerance "
                                 "(refinement limit reached)")
                done.append(p)
            else:
                m = p.mid
                nxt += [_Panel(p.a, m, min_order=p.min_order), _Panel(m, p.b, min_order=p.min_order)]
        todo = nxt
    done.sort(key=lambda p: p.a)
    return done


def _trim(prob: _Problem, panels: list[_Panel], tolc: _Tolerance, factor: float) -> dict:
    """Pick the lowest Gauss order per panel that meets its share; confirm on solved values.

    Returns the per-row error estimates (sums over panels) of the mean and mean square.
    """
    xk, _, _ = gauss_kronrod(GK_ORDER)
    for p in panels:
        coef = _legendre_fit(p)
        k1, _, k2, _ = _gk_values(p)
        s1, s2 = tolc.share(p, factor)
        p.order = GK_ORDER
        for n in range(max(1, p.min_order), GK_ORDER):
            xg, _ = gauss_legendre(n)
            qn = np.polynomial.legendre.legval(xg, coef)  # (R, n)
            g1, g2 = _gauss_on(p, n, qn)
            if np.all(np.abs(g1 - k1) <= TRIM_SAFETY * s1) and np.all(np.abs(g2 - k2) <= TRIM_SAFETY * s2):
                p.order = n
                break
    # confirm on solved values; raise the order where the prediction was optimistic
    for p in panels:
        p.cache = {GK_ORDER: p.kq[:, 1::2], 1: p.kq[:, GK_ORDER:GK_ORDER + 1]}
    while True:
        need = [p for p in panels if p.order not in p.cache]
        if need:
            q = prob(np.concatenate([p.mid + p.half * gauss_legendre(p.order)[0] for p in need]))
            pos = 0
            for p in need:
                p.cache[p.order] = q[:, pos:pos + p.order]
                pos += p.order
        bad = False
        for p in panels:
            n = p.order
            g1, g2 = _gauss_on(p, n, p.cache[n])
            k1, _, k2, _ = _gk_values(p)
            s1, s2 = tolc.share(p, factor)
            p._err = (np.abs(g1 - k1), np.abs(g2 - k2))
            if n < GK_ORDER and not (np.all(p._err[0] <= s1) and np.all(p._err[1] <= s2)):
                p.order = n + 1
                bad = True
        if not bad:
            break
    e1 = sum(p._err[0] + ek[0] for p, ek in ((p, _k15_error(p)) for p in panels))
    e2 = sum(p._err[1] + ek[1] for p, ek in ((p, _k15_error(p)) for p in panels))
    return {"mean": e1 / prob.length, "mean_square": e2 / prob.length}


def _rms_error(e_ms, ms):
    """Bound on the rms error from the mean-square error: min(sqrt(e), e / rms)."""
    rms = np.sqrt(np.maximum(ms, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.minimum(np.sqrt(e_ms), np.where(rms > 0, e_ms / rms, np.inf))


@dataclass(frozen=True)
class AdaptiveRule(CycleRule):
    """A :class:`CycleRule` built by :func:`adapt` for one shape and peak.

    Attributes (besides those of CycleRule)
    ----------------------------------------
    amplitude : float
        Source peak [V] or [A] the rule was built for; its nodes are fractions of
        it, valid at this peak (the knees move with the amplitude).
    panels : ndarray (m, 2)
        Phase panels [rad] of the shape's phase interval.
    orders : ndarray of int (m,)
        Gauss-Legendre order used on each panel.
    tol, tol_rms : float
        Requested absolute tolerances of the mean and the rms.
    rows_checked : int
        Rows (parameter sets) the rule has been built or verified on.
    refined : bool
        True when the last :meth:`verify` had to refine the rule (solve the batch
        again on the new nodes).
    verify_evaluations : int
        Source values solved by verifications.
    """

    amplitude: float = 1.0
    panels: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    orders: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))
    tol: float = 0.0
    tol_rms: float = 0.0
    rows_checked: int = 0
    refined: bool = False
    verify_evaluations: int = 0

    def verify(self, evaluate: Callable, *, margin: float = BUILD_MARGIN) -> "AdaptiveRule":
        """Check the rule on other rows (extreme builds); refine it where they miss.

        Parameters
        ----------
        evaluate : callable
            Source values [V] or [A] -> the watched quantity, shape (..., S), for
            the rows to check (e.g. the Monte Carlo builds chosen by
            :func:`extreme_rows`, and the temperature extremes).
        margin : float
            Share of the tolerance a refined rule is built to.

        Returns
        -------
        AdaptiveRule
            ``self`` with the check recorded when every row meets the tolerance;
            otherwise a refined rule (``refined`` True) whose nodes differ: solve
            the batch again on its nodes.

        Notes
        -----
        For each row, each panel's K15 result is the reference; the row passes
        when :math:`\\sum_p |G_{n_p} - K_{15,p}| + \\epsilon_{K15,p}` is within the
        tolerance, for the mean and for the mean square. A panel whose
        :math:`|K_{15} - G_7|` itself misses its share is halved; a panel whose
        order is too low is raised. Orders only rise, so the rows the rule was
        built on stay within tolerance.
        """
        prob = _Problem(self.shape, evaluate, self.amplitude)
        panels = [_Panel(float(a), float(b)) for a, b in self.panels]
        xk, _, _ = gauss_kronrod(GK_ORDER)
        q = prob(np.concatenate([p.mid + p.half * xk for p in panels]))
        for i, p in enumerate(panels):
            p.kq = q[:, i * xk.size:(i + 1) * xk.size]
        rms_rows = np.sqrt(np.maximum(sum(_gk_values(p)[2] for p in panels) / prob.length, 0.0))
        tolc = _Tolerance(self.tol, self.tol_rms, rms_rows, prob.length)
        # how the current rule does on these rows
        e1 = np.zeros(q.shape[0])
        e2 = np.zeros(q.shape[0])
        extra = []
        for p, n in zip(panels, self.orders):
            n = int(n)
            if n == GK_ORDER:
                qn = p.kq[:, 1::2]
            elif n == 1:
                qn = p.kq[:, GK_ORDER:GK_ORDER + 1]
            else:
                extra.append((p, n))
                continue
            g1, g2 = _gauss_on(p, n, qn)
            k1, _, k2, _ = _gk_values(p)
            ek = _k15_error(p)
            e1 += np.abs(g1 - k1) + ek[0]
            e2 += np.abs(g2 - k2) + ek[1]
        if extra:
            qx = prob(np.concatenate([p.mid + p.half * gauss_legendre(n)[0] for p, n in extra]))
            pos = 0
            for p, n in extra:
                g1, g2 = _gauss_on(p, n, qx[:, pos:pos + n])
                pos += n
                k1, _, k2, _ = _gk_values(p)
                ek = _k15_error(p)
                e1 += np.abs(g1 - k1) + ek[0]
                e2 += np.abs(g2 - k2) + ek[1]
        e1, e2 = e1 / prob.length, e2 / prob.length
        ms_rows = rms_rows ** 2
        err_mean = float(np.max(e1))
        err_rms = float(np.max(_rms_error(e2, ms_rows)))
        if err_mean <= self.tol and err_rms <= self.tol_rms:
            return replace(self, error_mean=max(self.error_mean, err_mean), error_rms=max(self.error_rms, err_rms),
                           rows_checked=self.rows_checked + q.shape[0], refined=False,
                           verify_evaluations=self.verify_evaluations + prob.count)
        # refine on these rows: halve where K15 is not trusted, raise orders where too low
        old = {(float(a), float(b)): int(n) for (a, b), n in zip(self.panels, self.orders)}
        notes = list(self.notes)
        panels = _refine(prob, panels, tolc, margin, notes)
        for p in panels:
            parent = [n for (a, b), n in old.items() if a <= p.a + 1e-15 and p.b <= b + 1e-15]
            p.min_order = max(parent) if parent else 1
        errs = _trim(prob, panels, tolc, margin)
        rule = _assemble(self.shape, panels, self.amplitude, self.tol, self.tol_rms, errs, rms_rows ** 2,
                         self.evaluations, notes, crests=False, extra_peak=self.nodes[self.weights == 0.0])
        return replace(rule, error_mean=max(rule.error_mean, self.error_mean),
                       error_rms=max(rule.error_rms, self.error_rms),
                       rows_checked=self.rows_checked + q.shape[0], refined=True,
                       verify_evaluations=self.verify_evaluations + prob.count)


def _assemble(shape, panels, peak, tol, tol_rms, errs, ms_rows, evaluations, notes, crests, extra_peak=()):
    t_all, w_all = [], []
    length = shape.domain[1] - shape.domain[0]
    for p in panels:
        xg, wg = gauss_legendre(p.order)
        t_all.append(p.mid + p.half * xg)
        w_all.append(p.half * wg / length)
    t = np.concatenate(t_all)
    nodes = shape.x_of(t)
    weights = np.concatenate(w_all)
    peaks = [1.0, -1.0] if crests else []
    peaks += [float(v) for v in extra_peak]
    extra = [c for c in peaks if not np.any(np.abs(nodes - c) <= 1e-15)]
    if extra:
        nodes = np.concatenate([nodes, extra])
        weights = np.concatenate([weights, np.zeros(len(extra))])
    err_mean = float(np.max(errs["mean"]))
    err_rms = float(np.max(_rms_error(errs["mean_square"], ms_rows)))
    return AdaptiveRule(shape, nodes, weights, err_mean, err_rms, int(evaluations), "adaptive G7-K15",
                        tuple(notes), amplitude=float(peak),
                        panels=np.array([[p.a, p.b] for p in panels]),
                        orders=np.array([p.order for p in panels], dtype=int), tol=float(tol),
                        tol_rms=float(tol_rms), rows_checked=int(ms_rows.size))


def adapt(shape: Shape, evaluate: Callable, peak: float, tol: float, *, tol_rms: float | None = None,
          crests: bool = True, coarse: int = COARSE_POINTS, margin: float = BUILD_MARGIN) -> CycleRule:
    """Build a cycle rule for one stimulus that meets an absolute tolerance.

    Parameters
    ----------
    shape : Shape
        The stimulus shape (atoms give their exact rule at once).
    evaluate : callable
        ``evaluate(x)``: instantaneous source values [V] or [A], shape (S,) ->
        the watched quantity (e.g. the movement current [A]), shape (..., S);
        leading axes are parameter rows (nominal, temperature extremes), all of
        which must meet the tolerance.
    peak : float
        Peak of the stimulus [V] or [A] (``shape.peak_of(rms)``).
    tol : float
        Absolute tolerance of the cycle mean, in the unit of the quantity
        (e.g. ``1e-6 * i_fs``).
    tol_rms : float, optional
        Absolute tolerance of the cycle rms; ``tol`` by default.
    crests : bool
        Add the crests (zero weight) so that the peak of a monotone response is
        exact; a coarse point whose |q| exceeds the crests' is added too.
    coarse : int
        Points of the coarse scan.
    margin : float
        Share of the tolerance the rule is built to (the rest is left for other
        rows, see :meth:`AdaptiveRule.verify`).

    Returns
    -------
    AdaptiveRule (or the exact CycleRule of an atomic shape)
        Nodes (fractions of ``peak``), weights, estimated errors of the mean and
        the rms (largest over the rows) and the number of source values solved.

    Notes
    -----
    See the module notes. The error estimate of a panel is
    :math:`|G_n - K_{15}| + \\epsilon_{K15}`, with :math:`\\epsilon_{K15}` QUADPACK's
    heuristic :math:`I_{|dev|} \\min(1, (200 |K_{15} - G_7| / I_{|dev|})^{3/2})`.

    References
    ----------
    R. Piessens, E. de Doncker-Kapenga, C. W. Ueberhuber, D. K. Kahaner,
    *QUADPACK: A Subroutine Package for Automatic Integration*, Springer, 1983
    (QK15, QAG: globally adaptive Gauss-Kronrod with panel bisection).
    P. J. Davis and P. Rabinowitz, *Methods of Numerical Integration*, 2nd ed.,
    Academic Press, 1984 (Gauss-Legendre rules; breakpoints at singularities).
    """
    if shape.atoms is not None:
        return fixed_rule(shape)
    tol = float(tol)
    tol_rms = tol if tol_rms is None else float(tol_rms)
    if not (tol > 0 and tol_rms > 0):
        raise ValueError("tolerances must be above zero")
    prob = _Problem(shape, evaluate, peak)
    t0, t1 = prob.t0, prob.t1
    tc = np.linspace(t0, t1, int(coarse))
    qc = prob(tc)
    rms_rows = np.sqrt(np.mean(qc * qc, axis=1))
    tolc = _Tolerance(tol, tol_rms, rms_rows, prob.length)
    breaks = {t0, t1}
    for a, b in shape.monotone_pieces():
        breaks.update((float(a), float(b)))
    breaks.update(_knees(shape, tc, qc))
    bk = sorted(breaks)
    panels = [_Panel(a, b) for a, b in zip(bk[:-1], bk[1:]) if b - a > 1e-12 * prob.length]
    notes: list[str] = []
    panels = _refine(prob, panels, tolc, margin, notes)
    # the mean square per row from K15, for the rms tolerance and error
    ms_rows = sum(_gk_values(p)[2] for p in panels) / prob.length
    tolc = _Tolerance(tol, tol_rms, np.sqrt(np.maximum(ms_rows, 0.0)), prob.length)
    errs = _trim(prob, panels, tolc, margin)
    extra_peak = []
    if crests:
        crest_vals = np.abs(qc[:, [0, -1]]).max(axis=1)
        inner = np.abs(qc).max(axis=1)
        if np.any(inner > crest_vals * (1 + 1e-9) + 1e-300):
            k = int(np.argmax(np.abs(qc).max(axis=0)))
            extra_peak.append(float(shape.x_of(tc[k])))
    return _assemble(shape, panels, peak, tol, tol_rms, errs, ms_rows, prob.count, notes, crests, extra_peak)


def extreme_rows(values, k: int = 2) -> np.ndarray:
    """Indices of the k largest and k smallest of a batch's results (for :meth:`AdaptiveRule.verify`).

    Parameters
    ----------
    values : array_like (P,)
        One result per row, e.g. the mean movement current of each Monte Carlo build.
    k : int

    Returns
    -------
    ndarray of int, ascending, without repeats.
    """
    v = np.asarray(values, dtype=float).ravel()
    order = np.argsort(v, kind="stable")
    return np.unique(np.concatenate([order[:k], order[-k:]]))
