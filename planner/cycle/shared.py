"""One set of source values for many stimuli: product-integration rules in the source value.

A meter's check asks the same network for the cycle mean at ten points of its
scale, and for square, triangle and distorted waves at full scale. Each is an
integral of the same function :math:`g(x)` (the watched quantity against the
instantaneous source value) against a different distribution of x:

.. math:: \\bar q_j = \\int g(x)\\, d\\mu_j(x), \\qquad \\mu_j:\\ x = X_j\\, s_j(t),\\
          t \\text{ uniform over the shape's phase interval.}

So one set of nodes :math:`x_k` serves them all: :math:`g` is replaced by its
piecewise polynomial interpolant on panels of the source range
:math:`[-X, X]` (X the largest peak), and target j gets its own weights
:math:`W_{jk} = \\int \\ell_k(x)\\, d\\mu_j(x)`, the moments of the Lagrange basis
against its distribution (product integration). The sine's density
:math:`1/(\\pi\\sqrt{X_j^2 - x^2})` is singular at its crests; its weights are
computed in the phase variable, where the integrand :math:`\\ell_k(X_j \\sin t)`
is smooth, with Gauss-Legendre points on each phase interval that maps into a
panel. A solved batch of shape (P, S) then gives every target's mean as
``q @ W.T``.

Error control mirrors :mod:`planner.cycle.adaptive`: each panel holds the
15 Gauss-Kronrod nodes; the difference between the product rules of the
interpolants through all 15 and through the 7 Gauss nodes estimates the error
of the lower one, per target; a panel is halved until that is within the
target's share (the target's probability mass on the panel times the
tolerance), then each panel keeps the lowest Gauss-Legendre order whose rule
agrees with the 15-point one, confirmed on solved values.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import lru_cache
from typing import Callable, Sequence

import numpy as np
from scipy.optimize import brentq

from . import adaptive as _ad
from .rules import gauss_kronrod, gauss_legendre
from .shapes import Shape, Sine

__all__ = ["Target", "SharedRule", "adapt_shared", "PHASE_POINTS_PER_PIECE"]

#: Gauss-Legendre points in phase per phase interval when computing weights.
PHASE_POINTS_PER_PIECE = 48
GK_ORDER = _ad.GK_ORDER
TRIM_SAFETY = _ad.TRIM_SAFETY


class _Line:
    """The identity map on [-1, 1], as a shape for the knee finder."""

    domain = (-1.0, 1.0)

    @staticmethod
    def x_of(t):
        return np.asarray(t, dtype=float)

    @staticmethod
    def monotone_pieces():
        return [(-1.0, 1.0)]


_LINE = _Line()


@dataclass(frozen=True)
class Target:
    """One stimulus whose cycle quantities a :class:`SharedRule` gives.

    Attributes
    ----------
    shape : Shape
    peak : float
        Peak of the stimulus [V] or [A] (``shape.peak_of(value)``); signed for DC.
    label : str
        Free text for tables (``'sine 40 %'``).
    """

    shape: Shape
    peak: float
    label: str = ""


def _basis(z, y) -> np.ndarray:
    """Lagrange basis of the nodes z (local, in [-1, 1]) at the points y: shape (len(y), len(z))."""
    n = len(z)
    v = np.polynomial.legendre.legvander(np.asarray(z, dtype=float), n - 1)
    return np.linalg.solve(v.T, np.polynomial.legendre.legvander(np.asarray(y, dtype=float), n - 1).T).T


def _phase_pieces(shape: Shape, scale: float, lo: float, hi: float):
    """Phase intervals on which ``scale * x(t)`` lies in [lo, hi], one per monotone piece."""
    out = []
    for a, b in shape.monotone_pieces():
        ya, yb = scale * float(shape.x_of(a)), scale * float(shape.x_of(b))
        y_lo, y_hi = min(ya, yb), max(ya, yb)
        c_lo, c_hi = max(lo, y_lo), min(hi, y_hi)
        if c_hi <= c_lo:
            continue

        def t_at(y):
            if y <= y_lo:
                return a if ya <= yb else b
            if y >= y_hi:
                return b if ya <= yb else a
            return brentq(lambda t: scale * float(shape.x_of(t)) - y, a, b, xtol=1e-15, rtol=1e-14)

        t1, t2 = sorted((t_at(c_lo), t_at(c_hi)))
        if t2 > t1:
            out.append((t1, t2))
    return out


#: Highest Legendre degree whose moments a panel keeps (the K15 interpolant's degree).
MAX_DEGREE = 2 * _ad.GK_ORDER


def _is_atomic(target: Target, span: float) -> bool:
    """True for a target given by a few values (DC, square, impulse, or a zero peak)."""
    return target.shape.atoms is not None or target.peak / span == 0.0


def _atoms_of(target: Target, span: float):
    """(value as a fraction of span, weight) of an atomic target."""
    scale = target.peak / span
    atoms = target.shape.atoms if target.shape.atoms is not None else ((0.0, 1.0),)
    return [(scale * u, float(w)) for u, w in atoms]


def _panel_moments(target: Target, span: float, lo: float, hi: float) -> tuple[np.ndarray, float]:
    """Legendre moments of a target's distribution on panel [lo, hi] (fractions of span).

    Returns :math:`m_k = \\int P_k(s)\\, d\\mu` for k = 0 .. MAX_DEGREE, with s the
    panel's local coordinate in [-1, 1], and the target's probability mass on the
    panel (:math:`m_0`).
    """
    if _is_atomic(target, span):
        return np.zeros(MAX_DEGREE + 1), 0.0  # solved exactly at its own nodes (see _Shared)
    m = _moments(target.shape, float(target.peak / span), float(lo), float(hi))
    return m, float(m[0])


@lru_cache(maxsize=1 << 16)
def _moments(sh: Shape, scale: float, lo: float, hi: float) -> np.ndarray:
    """The moments of :func:`_panel_moments` (read-only; kept: a rule's verification, its refinements and
    the other rules of the same position ask for the same panels again)."""
    mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    m = np.zeros(MAX_DEGREE + 1)
    length = sh.domain[1] - sh.domain[0]
    ts, tw = gauss_legendre(PHASE_POINTS_PER_PIECE)
    for t1, t2 in _phase_pieces(sh, scale, lo, hi):
        tm, th = 0.5 * (t1 + t2), 0.5 * (t2 - t1)
        y = scale * sh.x_of(tm + th * ts)
        m += (th * tw / length) @ np.polynomial.legendre.legvander((y - mid) / half, MAX_DEGREE)
    m.flags.writeable = False
    return m


def _sine_moments(scales, lo: float, hi: float) -> np.ndarray:
    """:func:`_sine_moments_of` kept by scales and panel (read-only): a rule's verifications ask for the
    panels its build computed, and the same position's requests for them again."""
    s = np.ascontiguousarray(scales, dtype=float)
    return _sine_moments_kept(s.tobytes(), float(lo), float(hi))


@lru_cache(maxsize=1 << 14)
def _sine_moments_kept(key: bytes, lo: float, hi: float) -> np.ndarray:
    m = _sine_moments_of(np.frombuffer(key, dtype=float), lo, hi)
    m.flags.writeable = False
    return m


def _sine_moments_of(scales, lo: float, hi: float) -> np.ndarray:
    r"""The moments of :func:`_moments` for sines of several scales at once: (len(scales), MAX_DEGREE + 1).

    Notes
    -----
    For :math:`y = s \sin t`, t uniform on :math:`[-\pi/2, \pi/2]`, the phases that map into
    [lo, hi] are :math:`[\arcsin(c_{lo}/s), \arcsin(c_{hi}/s)]` with the panel clipped to
    :math:`[-|s|, |s|]` (the distribution of :math:`s \sin t` is that of :math:`|s| \sin t`); the
    same Gauss-Legendre points in phase as :func:`_moments`, the phase ends in closed form
    instead of by root finding, every scale in one Vandermonde evaluation.
    """
    s = np.abs(np.asarray(scales, dtype=float))
    mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    c_lo, c_hi = np.maximum(lo, -s), np.minimum(hi, s)
    live = (c_hi > c_lo) & (s > 0)
    out = np.zeros((s.size, MAX_DEGREE + 1))
    if not np.any(live):
        return out
    s, c_lo, c_hi = s[live], c_lo[live], c_hi[live]
    t1, t2 = np.arcsin(np.clip(c_lo / s, -1.0, 1.0)), np.arcsin(np.clip(c_hi / s, -1.0, 1.0))
    ts, tw = gauss_legendre(PHASE_POINTS_PER_PIECE)
    tm, th = 0.5 * (t1 + t2), 0.5 * (t2 - t1)
    y = s[:, None] * np.sin(tm[:, None] + th[:, None] * ts[None, :])  # (L, 48)
    v = np.polynomial.legendre.legvander((y - mid) / half, MAX_DEGREE)  # (L, 48, D)
    out[live] = np.einsum("lk,lkd->ld", (th[:, None] * tw[None, :]) / np.pi, v)
    return out


def _weights_from_moments(moments, z) -> np.ndarray:
    """Interpolatory weights of the local nodes z from Legendre moments: (T, len(z)).

    The Lagrange basis of z is :math:`\\ell = V^{-T}`-combinations of :math:`P_0 .. P_{n-1}`
    (V the Legendre Vandermonde matrix of z), so :math:`w = V^{-T} m_{0..n-1}`.
    """
    z = np.asarray(z, dtype=float)
    return np.asarray(moments)[:, :z.size] @ _inverse_vandermonde(z.tobytes())


@lru_cache(maxsize=256)
def _inverse_vandermonde(key: bytes) -> np.ndarray:
    """:math:`V^{-1}` of the Legendre Vandermonde matrix of local nodes (their bytes: the few node sets of
    the Gauss rules recur on every panel), so that the weights are :math:`w^T = m^T V^{-1}`."""
    z = np.frombuffer(key, dtype=float)
    inv = np.linalg.inv(np.polynomial.legendre.legvander(z, z.size - 1))
    inv.flags.writeable = False
    return inv


@dataclass
class _SPanel:
    a: float
    b: float
    kq: np.ndarray | None = None
    order: int = GK_ORDER
    min_order: int = 1
    cache: dict = field(default_factory=dict)
    moments: np.ndarray | None = None  # (T, MAX_DEGREE + 1) Legendre moments per target
    wk: np.ndarray | None = None  # (T, 15) weights of the K15 interpolant per target
    w7: np.ndarray | None = None  # (T, 7) weights of the G7 interpolant
    mass: np.ndarray | None = None  # (T,)
    halves: tuple | None = None  # its two halves, made (and solved) ahead of the need for them

    def split(self) -> tuple:
        """The panel's two halves (the same pair on every call)."""
        if self.halves is None:
            m = self.mid
            self.halves = (_SPanel(self.a, m, min_order=self.min_order), _SPanel(m, self.b, min_order=self.min_order))
        return self.halves

    @property
    def mid(self):
        return 0.5 * (self.a + self.b)

    @property
    def half(self):
        return 0.5 * (self.b - self.a)


class _Shared:
    """The targets, the evaluator, and the atomic targets' own nodes and weights."""

    def __init__(self, targets, evaluate, span):
        self.targets = targets
        self.evaluate = evaluate
        self.span = span
        self.count = 0
        T = len(targets)
        values = sorted({round(y, 15) for t in targets if _is_atomic(t, span) for y, _ in _atoms_of(t, span)})
        self.atom_y = np.array(values, dtype=float)
        A = self.atom_y.size
        self.atom_w = np.zeros((T, A))
        self.atom_crest = np.zeros((T, 2, A))
        self.atomic = np.array([_is_atomic(t, span) for t in targets])
        # continuous targets: the sines' moments in closed-form phase, the other shapes' by root finding
        sine = np.array([not self.atomic[j] and type(t.shape) is Sine for j, t in enumerate(targets)], dtype=bool)
        self.sines = np.nonzero(sine)[0]
        self.sine_scales = np.array([targets[j].peak / span for j in self.sines], dtype=float)
        self.others = [j for j in range(T) if not sine[j] and not self.atomic[j]]
        for j, t in enumerate(targets):
            if not self.atomic[j]:
                continue
            idx = []
            for y, w in _atoms_of(t, span):
                k = int(np.argmin(np.abs(self.atom_y - y)))
                self.atom_w[j, k] += w
                idx.append(k)
            # crests: the largest and the smallest atom (a DC level is both)
            ys = self.atom_y[idx]
            self.atom_crest[j, 0, idx[int(np.argmax(ys))]] = 1.0
            self.atom_crest[j, 1, idx[int(np.argmin(ys))]] = 1.0

    def atom_part(self, q_atoms):
        """Means and mean squares of the atomic targets from their nodes' values, (R, T) each."""
        return q_atoms @ self.atom_w.T, (q_atoms * q_atoms) @ self.atom_w.T

    def __call__(self, y):
        y = np.asarray(y, dtype=float)
        self.count += y.size
        return _ad._rows(self.evaluate(self.span * y), y.size)

    def weights(self, p: _SPanel, z):
        """Weights (T, len(z)) of the panel's interpolant through local nodes z, per target."""
        self.prepare(p)
        return _weights_from_moments(p.moments, z)

    def prepare(self, p: _SPanel):
        if p.moments is None:
            p.moments = np.zeros((len(self.targets), MAX_DEGREE + 1))
            if self.sines.size:
                p.moments[self.sines] = _sine_moments(self.sine_scales, p.a, p.b)
            for j in self.others:
                p.moments[j] = _panel_moments(self.targets[j], self.span, p.a, p.b)[0]
            p.mass = p.moments[:, 0].copy()
            xk, _, _ = gauss_kronrod(GK_ORDER)
            p.wk = _weights_from_moments(p.moments, xk)
            p.w7 = _weights_from_moments(p.moments, xk[1::2])


def _estimates(p: _SPanel, w_low, q_low):
    """|high - low| for the mean and the mean square, shape (R, T)."""
    q = p.kq
    hi1, hi2 = q @ p.wk.T, (q * q) @ p.wk.T
    lo1, lo2 = q_low @ w_low.T, (q_low * q_low) @ w_low.T
    return np.abs(hi1 - lo1), np.abs(hi2 - lo2)


def _shares(p: _SPanel, tol, ms_tol, factor):
    """Error shares of a panel per target: (T,) for the mean, (R, T) for the mean square."""
    return factor * p.mass * tol, factor * p.mass[None, :] * ms_tol


#: Levels of halves solved ahead with a panel that has to be solved: a solve costs its Newton iterations
#: more than its points, and a knee is reached by several halvings in a row.
LOOKAHEAD = 3


def _ahead(panels, depth: int) -> list:
    """The panels and their halves down to ``depth`` levels, those not yet solved."""
    out, level = [], list(panels)
    for _ in range(depth + 1):
        out += [p for p in level if p.kq is None]
        level = [h for p in level for h in p.split()]
    return out


def _refine_shared(prob: _Shared, panels, tol, ms_tol, factor, notes):
    """Halve panels until each meets its share of the tolerance (every panel's K15 values solved).

    A panel solved for the first time is solved with its halves down to :data:`LOOKAHEAD` levels (one
    solve for several halvings); the panels kept are those the plain halving keeps.
    """
    xk, _, _ = gauss_kronrod(GK_ORDER)
    todo = list(panels)
    done = []
    while todo:
        fresh = _ahead([p for p in todo if p.kq is None], LOOKAHEAD)
        if fresh:
            q = prob(np.concatenate([p.mid + p.half * xk for p in fresh]))
            for i, p in enumerate(fresh):
                p.kq = q[:, i * xk.size:(i + 1) * xk.size]
        nxt = []
        for p in todo:
            prob.prepare(p)
            e1, e2 = _estimates(p, p.w7, p.kq[:, 1::2])
            s1, s2 = _shares(p, tol, ms_tol, factor)
            ok = np.all(e1 <= s1[None, :]) and np.all(e2 <= s2)
            if ok or len(done) + len(nxt) + 2 > _ad.MAX_PANELS or p.half < 1e-12:
                if not ok:
                    notes.append(f"panel [{p.a:.6g}, {p.b:.6g}] kept above its share of the tolerance "
                                 "(refinement limit reached)")
                done.append(p)
            else:
                nxt += list(p.split())
        todo = nxt
    done.sort(key=lambda p: p.a)
    return done


def _trim_shared(prob: _Shared, panels, tol, ms_tol, factor):
    xk, _, _ = gauss_kronrod(GK_ORDER)
    for p in panels:
        coef = np.linalg.solve(np.polynomial.legendre.legvander(xk, xk.size - 1), p.kq.T)
        s1, s2 = _shares(p, tol, ms_tol, factor)
        p.order = GK_ORDER
        if not np.any(p.mass > 0):
            p.order = 0  # no target spends time here: no nodes
            continue
        for n in range(max(1, p.min_order), GK_ORDER):
            xg, _ = gauss_legendre(n)
            w = prob.weights(p, xg)
            qn = np.polynomial.legendre.legval(xg, coef)
            e1, e2 = _estimates(p, w, qn)
            if np.all(e1 <= TRIM_SAFETY * s1[None, :]) and np.all(e2 <= TRIM_SAFETY * s2):
                p.order = n
                break
    for p in panels:
        p.cache = {GK_ORDER: p.kq[:, 1::2], 1: p.kq[:, GK_ORDER:GK_ORDER + 1]}
    while True:
        need = [p for p in panels if p.order not in p.cache and p.order > 0]
        if need:
            q = prob(np.concatenate([p.mid + p.half * gauss_legendre(p.order)[0] for p in need]))
            pos = 0
            for p in need:
                p.cache[p.order] = q[:, pos:pos + p.order]
                pos += p.order
        bad = False
        for p in panels:
            n = p.order
            if n == 0:
                p.err = (np.zeros((p.kq.shape[0], len(prob.targets))),) * 2
                continue
            w = prob.weights(p, gauss_legendre(n)[0])
            e1, e2 = _estimates(p, w, p.cache[n])
            s1, s2 = _shares(p, tol, ms_tol, factor)
            p.err = (e1, e2)
            if n < GK_ORDER and not (np.all(e1 <= s1[None, :]) and np.all(e2 <= s2)):
                p.order = n + 1
                bad = True
        if not bad:
            break
    # error per row and target: the trimmed rule against K15, plus K15 against the truth,
    # estimated by QUADPACK's heuristic applied to the panel's K15-G7 difference
    e1 = sum(p.err[0] for p in panels)
    e2 = sum(p.err[1] for p in panels)
    for p in panels:
        d1, d2 = _estimates(p, p.w7, p.kq[:, 1::2])
        k1 = np.abs(p.kq) @ np.abs(p.wk.T)
        k2 = (p.kq * p.kq) @ np.abs(p.wk.T)
        e1 = e1 + _quadpack(d1, k1)
        e2 = e2 + _quadpack(d2, k2)
    return e1, e2


def _quadpack(err, scale):
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(scale > 0, np.minimum(err, scale * np.minimum(1.0, (200.0 * err / scale) ** 1.5)), err)


@dataclass(frozen=True)
class SharedRule:
    """Nodes shared by several stimuli, with one row of weights per stimulus.

    Attributes
    ----------
    targets : tuple of Target
    span : float
        Largest |peak| of the targets [V] or [A]; nodes are fractions of it.
    nodes : ndarray (S,)
        Source values as fractions of ``span``.
    weights : ndarray (T, S)
        Cycle-mean weights of each target (each row sums to 1).
    crest_weights : ndarray (T, 2, S)
        Interpolation weights that give the quantity at each target's +peak and
        -peak (its crests; for DC both rows are the level).
    error_mean, error_rms : ndarray (T,)
        Estimated absolute errors per target (largest over the rows built or
        verified on).
    evaluations : int
        Source values solved to build the rule.
    panels : ndarray (m, 2)
        Panels of the source range, fractions of ``span``.
    orders : ndarray of int (m,)
        Gauss-Legendre order of each panel (0 where no target spends time).
    tol, tol_rms : float
    refined : bool
    rows_checked, verify_evaluations : int
    n_atoms : int
        The last ``n_atoms`` nodes are the values of the atomic targets (DC levels,
        square-wave and impulse crests), solved exactly rather than interpolated.
    """

    targets: tuple
    span: float
    nodes: np.ndarray
    weights: np.ndarray
    crest_weights: np.ndarray
    error_mean: np.ndarray
    error_rms: np.ndarray
    evaluations: int
    panels: np.ndarray
    orders: np.ndarray
    tol: float
    tol_rms: float
    refined: bool = False
    rows_checked: int = 0
    verify_evaluations: int = 0
    notes: tuple = ()
    n_atoms: int = 0

    @property
    def size(self) -> int:
        return int(self.nodes.size)

    def points(self) -> np.ndarray:
        """Source values to solve [V] or [A]."""
        return self.span * self.nodes

    def mean(self, q) -> np.ndarray:
        """Cycle mean per target: (..., S) -> (..., T)."""
        return np.asarray(q, dtype=float) @ self.weights.T

    def mean_square(self, q) -> np.ndarray:
        q = np.asarray(q, dtype=float)
        return (q * q) @ self.weights.T

    def rms(self, q) -> np.ndarray:
        return np.sqrt(np.maximum(self.mean_square(q), 0.0))

    def mean_abs(self, q) -> np.ndarray:
        return np.abs(np.asarray(q, dtype=float)) @ self.weights.T

    def mean_product(self, a, b) -> np.ndarray:
        return (np.asarray(a, dtype=float) * np.asarray(b, dtype=float)) @ self.weights.T

    def crest_values(self, q) -> np.ndarray:
        """The quantity at each target's +peak and -peak: (..., S) -> (..., T, 2)."""
        return np.einsum("...s,tcs->...tc", np.asarray(q, dtype=float), self.crest_weights)

    def peak(self, q) -> np.ndarray:
        """Largest |q| at the crests of each target (the peak of a monotone response)."""
        return np.max(np.abs(self.crest_values(q)), axis=-1)

    def check_nodes(self) -> np.ndarray:
        """The source values :meth:`verify` solves first, fractions of ``span``: the 15 Gauss-Kronrod
        nodes of every panel, in panel order (a batch may solve them with the rule's nodes, then hand
        them to :meth:`verify` through its ``evaluate``)."""
        xk, _, _ = gauss_kronrod(GK_ORDER)
        panels = [_SPanel(float(a), float(b)) for a, b in self.panels]
        return np.concatenate([p.mid + p.half * xk for p in panels]) if panels else np.empty(0)

    def padded(self, extra) -> "SharedRule":
        """The same rule over its nodes followed by other solved values ``extra`` (fractions of ``span``),
        weighted zero: a batch solved on the rule's nodes and its :meth:`check_nodes` reduces through it.
        Reductions only: its last nodes are no longer its atoms, so it is not verified or refined."""
        n = np.asarray(extra, dtype=float).size
        return replace(self, nodes=np.concatenate([self.nodes, np.asarray(extra, dtype=float)]),
                       weights=np.pad(self.weights, ((0, 0), (0, n))),
                       crest_weights=np.pad(self.crest_weights, ((0, 0), (0, 0), (0, n))))

    def verify(self, evaluate: Callable, *, margin: float = _ad.BUILD_MARGIN, known=None) -> "SharedRule":
        """Check the rule on other rows (extreme builds); refine where they miss.

        Same contract as :meth:`planner.cycle.adaptive.AdaptiveRule.verify`: returns
        ``self`` (check recorded) or a refined rule (``refined`` True) whose nodes
        must be solved again. ``known``, the rows' values at the rule's own nodes
        when the batch has solved them already (shape (R, S)), spares solving them
        again: only the Kronrod points of the panels are solved.
        """
        prob = _Shared(self.targets, evaluate, self.span)
        panels = [_SPanel(float(a), float(b)) for a, b in self.panels]
        xk, _, _ = gauss_kronrod(GK_ORDER)
        q = prob(self.check_nodes())
        for i, p in enumerate(panels):
            p.kq = q[:, i * xk.size:(i + 1) * xk.size]
            prob.prepare(p)
        qn = prob(self.nodes) if known is None else _ad._rows(np.asarray(known, dtype=float), self.nodes.size)
        a1, a2 = prob.atom_part(qn[:, qn.shape[1] - self.n_atoms:])
        mean = sum((p.kq @ p.wk.T for p in panels), a1)  # (R, T): K15 panels + exact atoms
        ms = sum(((p.kq * p.kq) @ p.wk.T for p in panels), a2)
        ms_tol = self.tol_rms * (2.0 * np.sqrt(np.maximum(ms, 0.0)) + self.tol_rms)
        e1 = np.abs(qn @ self.weights.T - mean)
        e2 = np.abs((qn * qn) @ self.weights.T - ms)
        for p in panels:
            d1, d2 = _estimates(p, p.w7, p.kq[:, 1::2])
            e1 = e1 + _quadpack(d1, np.abs(p.kq) @ np.abs(p.wk.T))
            e2 = e2 + _quadpack(d2, (p.kq * p.kq) @ np.abs(p.wk.T))
        err_rms = _ad._rms_error(e2, ms)
        if np.all(e1 <= self.tol) and np.all(err_rms <= self.tol_rms):
            return replace(self, error_mean=np.maximum(self.error_mean, e1.max(axis=0)),
                           error_rms=np.maximum(self.error_rms, err_rms.max(axis=0)), refined=False,
                           rows_checked=self.rows_checked + q.shape[0],
                           verify_evaluations=self.verify_evaluations + prob.count)
        old = [(float(a), float(b), int(n)) for (a, b), n in zip(self.panels, self.orders)]
        notes = list(self.notes)
        panels = _refine_shared(prob, panels, self.tol, ms_tol, margin, notes)
        for p in panels:
            parent = [n for a, b, n in old if a <= p.a + 1e-15 and p.b <= b + 1e-15]
            p.min_order = max(parent) if parent else 1
        e1, e2 = _trim_shared(prob, panels, self.tol, ms_tol, margin)
        rule = _assemble_shared(prob, panels, self.tol, self.tol_rms, e1, e2, ms, self.evaluations, notes)
        return replace(rule, error_mean=np.maximum(rule.error_mean, self.error_mean),
                       error_rms=np.maximum(rule.error_rms, self.error_rms), refined=True,
                       rows_checked=self.rows_checked + q.shape[0],
                       verify_evaluations=self.verify_evaluations + prob.count)


def _assemble_shared(prob: _Shared, panels, tol, tol_rms, e1, e2, ms, evaluations, notes) -> SharedRule:
    blocks = [(p, gauss_legendre(p.order)[0]) for p in panels if p.order > 0]
    y = np.concatenate([p.mid + p.half * xg for p, xg in blocks] + [prob.atom_y])
    T = len(prob.targets)
    A = prob.atom_y.size
    W = np.zeros((T, y.size))
    C = np.zeros((T, 2, y.size))
    pos = 0
    for p, xg in blocks:
        n = xg.size
        W[:, pos:pos + n] = prob.weights(p, xg)
        pos += n
    W[:, pos:] = prob.atom_w
    C[:, :, pos:] = prob.atom_crest
    # crests of the continuous targets: the interpolant of the panel that holds each one
    for j, t in enumerate(prob.targets):
        if prob.atomic[j]:
            continue
        for c, yc in enumerate((abs(t.peak) / prob.span, -abs(t.peak) / prob.span)):
            pos = 0
            for p, xg in blocks:
                if p.a - 1e-15 <= yc <= p.b + 1e-15:
                    C[j, c, pos:pos + xg.size] = _basis(xg, [(yc - p.mid) / p.half])[0]
                    break
                pos += xg.size
    err_rms = _ad._rms_error(e2, ms)
    return SharedRule(tuple(prob.targets), float(prob.span), y, W, C, np.max(e1, axis=0), np.max(err_rms, axis=0),
                      int(evaluations), np.array([[p.a, p.b] for p in panels]).reshape(-1, 2),
                      np.array([p.order for p in panels], dtype=int), float(tol), float(tol_rms),
                      rows_checked=int(ms.shape[0]), notes=tuple(notes), n_atoms=int(A))


def adapt_shared(targets: Sequence[Target], evaluate: Callable, tol: float, *, tol_rms: float | None = None,
                 coarse: int = 65, margin: float = _ad.BUILD_MARGIN) -> SharedRule:
    """Build one set of source values that gives every target's cycle mean and rms to a tolerance.

    Parameters
    ----------
    targets : sequence of Target
        The stimuli (shape and peak), e.g. a sine at 10 %, 20 %, ..., 100 % of
        full scale and a square and a triangle wave at full-scale rms.
    evaluate : callable
        Source values [V] or [A], shape (S,) -> the watched quantity, shape
        (..., S); leading axes are parameter rows that must all meet the
        tolerance.
    tol : float
        Absolute tolerance of every target's mean (unit of the quantity).
    tol_rms : float, optional
        Absolute tolerance of the rms; ``tol`` by default.
    coarse : int
        Points of the coarse scan of the source range that locates the knees.
    margin : float
        Share of the tolerance the rule is built to.

    Returns
    -------
    SharedRule

    Notes
    -----
    See the module notes. For target j the error of its mean is at most the
    interpolation error of g integrated against :math:`\\mu_j`, so a single
    node set bounds every target at once; the estimate per panel and target is
    :math:`|\\int (P_{15} - P_n)\\, d\\mu_j|` with :math:`P_m` the interpolant through
    m of the panel's solved values.

    References
    ----------
    P. J. Davis and P. Rabinowitz, *Methods of Numerical Integration*, 2nd ed.,
    Academic Press, 1984, section 2.5 (product integration: integrating an
    interpolant of the smooth factor against the singular weight exactly).
    R. Piessens et al., *QUADPACK*, Springer, 1983 (Gauss-Kronrod error
    estimates, adaptive bisection).
    """
    targets = tuple(targets)
    if not targets:
        raise ValueError("give at least one target")
    tol = float(tol)
    tol_rms = tol if tol_rms is None else float(tol_rms)
    span = max(abs(float(t.peak)) for t in targets)
    if not span > 0:
        raise ValueError("the targets' peaks must not all be zero")
    prob = _Shared(targets, evaluate, span)
    if prob.atomic.all():
        zero = np.zeros((1, len(targets)))
        return _assemble_shared(prob, [], tol, tol_rms, zero, zero, zero, 0, [])
    yc = np.linspace(-1.0, 1.0, int(coarse))
    qc = prob(yc)

    breaks = {-1.0, 1.0, 0.0}
    breaks.update(_ad._knees(_LINE, yc, qc))
    bk = sorted(breaks)
    panels = [_SPanel(a, b) for a, b in zip(bk[:-1], bk[1:]) if b - a > 1e-12]
    # a first pass with the mean-square tolerance of the largest |q| (above every rms), then
    # a second with each target's own rms
    big = np.max(np.abs(qc), axis=1, keepdims=True) * np.ones((1, len(targets)))
    notes: list[str] = []
    panels = _refine_shared(prob, panels, tol, tol_rms * (2.0 * big + tol_rms), margin, notes)
    ms = sum((p.kq * p.kq) @ p.wk.T for p in panels)
    ms_tol = tol_rms * (2.0 * np.sqrt(np.maximum(ms, 0.0)) + tol_rms)
    panels = _refine_shared(prob, panels, tol, ms_tol, margin, notes)
    e1, e2 = _trim_shared(prob, panels, tol, ms_tol, margin)
    return _assemble_shared(prob, panels, tol, tol_rms, e1, e2, ms, prob.count + prob.atom_y.size, notes)
