"""Quadrature rules over one cycle: nodes (source values) and weights (shares of the cycle).

A :class:`CycleRule` is what an analysis needs to turn the instantaneous DC
states of a memoryless network into cycle quantities: solve the network at the
source values ``rule.points(peak)``, then

* mean :math:`\\bar q = \\sum_k w_k q_k` (the pointer of an average-responding
  meter follows the mean movement current),
* rms :math:`\\sqrt{\\sum_k w_k q_k^2}` (heating),
* mean power :math:`\\sum_k w_k v_k i_k` of a part,
* rectified mean :math:`\\sum_k w_k |q_k|` (a diode's average current),
* peak :math:`\\max_k |q_k|` over every node, including the zero-weight crest
  nodes a rule carries for that purpose.

This module holds the rule type, the Gauss-Legendre and Gauss-Kronrod tables,
and the fixed (non-adaptive) rules of each shape; the adaptive rule is in
:mod:`planner.cycle.adaptive`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from .shapes import Shape, Sine, Triangle

__all__ = ["CycleRule", "gauss_legendre", "gauss_kronrod", "fixed_rule", "equal_rule"]


@lru_cache(maxsize=None)
def gauss_legendre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [-1, 1], ascending.

    Exact for polynomials of degree up to 2n - 1. Up to 100 nodes numpy's ``leggauss``
    (a dense eigenproblem); above, Newton's method on the three-term recurrence from
    Tricomi's estimates (:func:`_legendre_newton`: 15 ms at 1024 nodes where the
    eigenproblem took 50 to 600 ms).
    """
    if n > 100:
        x, w = _legendre_newton(int(n))
    else:
        x, w = np.polynomial.legendre.leggauss(int(n))
    x.flags.writeable = False
    w.flags.writeable = False
    return x, w


def _legendre(n: int, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """P_n(x) and P_n'(x) by the three-term recurrence (Abramowitz and Stegun 22.7.10, 22.8.5)."""
    p0, p1 = np.ones_like(x), x.copy()
    for j in range(2, n + 1):
        p0, p1 = p1, ((2 * j - 1) * x * p1 - (j - 1) * p0) / j
    return p1, n * (x * p1 - p0) / (x * x - 1.0)


def _legendre_newton(n: int) -> tuple[np.ndarray, np.ndarray]:
    r"""Gauss-Legendre nodes and weights of n > 1 points by Newton's method on P_n.

    Notes
    -----
    The negative roots from Tricomi's estimates
    :math:`x_k \approx -(1 - \frac{n-1}{8n^3} - \frac{39 - 28/\sin^2\theta_k}{384 n^4})\cos\theta_k`,
    :math:`\theta_k = \pi (4k - 1)/(4n + 2)`, polished by Newton's method until the step is
    below 1e-16; weights :math:`w_k = 2 / ((1 - x_k^2) P_n'(x_k)^2)` (Abramowitz and Stegun
    25.4.29); the positive half by symmetry.

    References
    ----------
    N. Hale and A. Townsend, "Fast and accurate computation of Gauss-Legendre and Gauss-Jacobi
    quadrature nodes and weights", SIAM J. Sci. Comput. 35(2), A652-A674, 2013 (Tricomi's
    estimates; Newton's method on the recurrence), from memory.
    M. Abramowitz and I. A. Stegun, *Handbook of Mathematical Functions*, 1964.
    """
    k = np.arange(1, (n + 1) // 2 + 1)
    theta = np.pi * (4 * k - 1) / (4 * n + 2)
    x = -(1.0 - (n - 1) / (8.0 * n ** 3) - (39.0 - 28.0 / np.sin(theta) ** 2) / (384.0 * n ** 4)) * np.cos(theta)
    for _ in range(50):
        p, dp = _legendre(n, x)
        step = p / dp
        x = x - step
        if np.max(np.abs(step)) < 1e-16:
            break
    if n % 2:
        x[-1] = 0.0  # the middle root
    _, dp = _legendre(n, x)
    w = 2.0 / ((1.0 - x * x) * dp * dp)
    half = n // 2
    return np.concatenate([x, -x[:half][::-1]]), np.concatenate([w, w[:half][::-1]])


@lru_cache(maxsize=None)
def gauss_kronrod(n: int = 7) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The (2n+1)-point Kronrod extension of the n-point Gauss-Legendre rule on [-1, 1].

    Parameters
    ----------
    n : int
        Gauss order (7 gives the G7-K15 pair of QUADPACK).

    Returns
    -------
    nodes : ndarray (2n+1,)
        Ascending; the Gauss nodes are ``nodes[1::2]``.
    kronrod_weights : ndarray (2n+1,)
    gauss_weights : ndarray (2n+1,)
        The Gauss weights at the Gauss nodes, zero at the added ones.

    Notes
    -----
    The n + 1 added nodes are the zeros of the Stieltjes polynomial
    :math:`E_{n+1}`, the monic polynomial of degree n + 1 orthogonal to every
    polynomial of degree up to n with respect to the sign-changing weight
    :math:`P_n(x)` on [-1, 1]:
    :math:`\\int_{-1}^{1} P_n(x) E_{n+1}(x) x^k dx = 0`, k = 0 .. n. Written in
    the Legendre basis these are n + 1 linear equations; the weights are then
    the interpolatory ones (the rule integrates :math:`P_0 .. P_{2n}` exactly).
    For odd n the rule is exact for polynomials of degree 3n + 1.

    References
    ----------
    A. S. Kronrod, *Nodes and Weights of Quadrature Formulas*, Consultants
    Bureau, New York, 1965. R. Piessens, E. de Doncker-Kapenga, C. W. Ueberhuber,
    D. K. Kahaner, *QUADPACK: A Subroutine Package for Automatic Integration*,
    Springer, 1983 (the G7-K15 pair, section 2.2).
    """
    n = int(n)
    xg, wg = gauss_legendre(n)
    # high-order Gauss rule for the moment integrals (degree n + (n+1) + n is exact with 2n+2 points)
    xq, wq = gauss_legendre(2 * n + 4)
    leg = np.polynomial.legendre.legvander(xq, n + 1)  # (Q, n+2): P_0 .. P_{n+1}
    pn = leg[:, n]
    powers = np.polynomial.legendre.legvander(xq, n)  # test functions P_0 .. P_n
    a = np.einsum("q,q,qi,qk->ki", wq, pn, leg[:, :n + 1], powers)  # (n+1, n+1)
    rhs = -np.einsum("q,q,q,qk->k", wq, pn, leg[:, n + 1], powers)
    c = np.linalg.solve(a, rhs)
    coef = np.append(c, 1.0)
    xk = np.sort(np.real(np.polynomial.legendre.legroots(coef)))
    nodes = np.sort(np.concatenate([xg, xk]))
    m = np.polynomial.legendre.legvander(nodes, 2 * n).T  # (2n+1, 2n+1)
    b = np.zeros(2 * n + 1)
    b[0] = 2.0
    wk = np.linalg.solve(m, b)
    gw = np.zeros_like(nodes)
    gw[1::2] = wg
    for arr in (nodes, wk, gw):
        arr.flags.writeable = False
    return nodes, wk, gw


@dataclass(frozen=True)
class CycleRule:
    """Nodes and weights for the cycle quantities of one stimulus shape.

    Attributes
    ----------
    shape : Shape
    nodes : ndarray (S,)
        Instantaneous source values as fractions of the peak.
    weights : ndarray (S,)
        Share of the cycle each node stands for; they sum to 1. Nodes with zero
        weight (the crests) serve the peak only.
    error_mean, error_rms : float
        Estimated absolute error of the mean and the rms of the quantity the rule
        was built for, in its unit; 0 for an exact rule, ``nan`` when not
        estimated (a fixed rule).
    evaluations : int
        Source values solved to build the rule (not counting its use).
    method : str
        How it was made (``'atoms'``, ``'gauss-chebyshev'``, ``'adaptive G7-K15'``).
    """

    shape: Shape
    nodes: np.ndarray
    weights: np.ndarray
    error_mean: float = math.nan
    error_rms: float = math.nan
    evaluations: int = 0
    method: str = ""
    notes: tuple = field(default=())

    @property
    def size(self) -> int:
        """Source values solved per use of the rule."""
        return int(self.nodes.size)

    @property
    def peak_only(self) -> bool:
        return self.shape.peak_only

    def points(self, peak) -> np.ndarray:
        """Source values [V] or [A] for a stimulus of this peak (signed for DC)."""
        return float(peak) * self.nodes

    def points_for(self, value) -> np.ndarray:
        """Source values for a stimulus whose stated value (rms, level, peak) is ``value``."""
        return self.points(self.shape.peak_of(value))

    # --- cycle quantities of solved states, shape (..., S) -> (...) -----------------------
    def mean(self, q) -> np.ndarray:
        """Cycle mean :math:`\\sum_k w_k q_k`."""
        return np.asarray(q, dtype=float) @ self.weights

    def mean_square(self, q) -> np.ndarray:
        q = np.asarray(q, dtype=float)
        return (q * q) @ self.weights

    def rms(self, q) -> np.ndarray:
        """Cycle rms :math:`\\sqrt{\\sum_k w_k q_k^2}`."""
        return np.sqrt(self.mean_square(q))

    def mean_abs(self, q) -> np.ndarray:
        """Rectified mean :math:`\\sum_k w_k |q_k|`."""
        return np.abs(np.asarray(q, dtype=float)) @ self.weights

    def peak(self, q) -> np.ndarray:
        """Largest :math:`|q_k|` over every node (crests included)."""
        return np.max(np.abs(np.asarray(q, dtype=float)), axis=-1)

    def mean_product(self, a, b) -> np.ndarray:
        """Cycle mean of a product, e.g. the mean power :math:`\\sum_k w_k v_k i_k` [W]."""
        return (np.asarray(a, dtype=float) * np.asarray(b, dtype=float)) @ self.weights

    def on_phase_grid(self, q, n: int = 512) -> np.ndarray:
        """The quantity at n equally spaced phases of one cycle, from its values at the nodes.

        Parameters
        ----------
        q : array_like (..., S)
            Solved values at :attr:`nodes`.
        n : int
            Phase points of the cycle (as :meth:`Shape.samples`).

        Returns
        -------
        ndarray (..., n)

        Notes
        -----
        The network is memoryless, so the quantity at a phase is the function
        :math:`g(x)` of the source value there; g is interpolated over the nodes
        (sorted by value) with a monotone piecewise cubic (PCHIP, Fritsch and
        Carlson, SIAM J. Numer. Anal. 17(2), 238-246, 1980), exact at the nodes,
        and evaluated at the values :meth:`Shape.samples` gives. Values beyond the
        outermost nodes are held at the end values: build the rule with its
        crests (the default) so that the whole range is covered. This is what
        time-ordered quantities need (a fuse's Joule integral from an onset,
        :func:`planner.cycle.prearc.pre_arcing_on_grid`).
        """
        from scipy.interpolate import PchipInterpolator

        q = np.asarray(q, dtype=float)
        x_grid = self.shape.samples(n)
        order = np.argsort(self.nodes, kind="stable")
        xs = self.nodes[order]
        keep = np.concatenate([[True], np.diff(xs) > 1e-14])
        xs = xs[keep]
        qs = np.take(q, order, axis=-1)[..., keep]
        if xs.size == 1:
            return np.broadcast_to(qs, q.shape[:-1] + (x_grid.size,)).copy()
        f = PchipInterpolator(xs, qs, axis=-1, extrapolate=False)
        out = f(np.clip(x_grid, xs[0], xs[-1]))
        return out

    def stats(self, q) -> dict:
        """Peak, mean, rms and rectified mean of solved states (floats for a 1-D input)."""
        q = np.asarray(q, dtype=float)
        out = {"peak": self.peak(q), "mean": self.mean(q), "rms": self.rms(q), "mean_abs": self.mean_abs(q)}
        if q.ndim == 1:
            out = {k: float(v) for k, v in out.items()}
        return out


def _with_crests(nodes, weights, crests: bool):
    if not crests:
        return nodes, weights
    extra = [c for c in (1.0, -1.0) if not np.any(nodes == c)]
    return np.concatenate([nodes, extra]), np.concatenate([weights, np.zeros(len(extra))])


def fixed_rule(shape: Shape, n: int = 64, *, crests: bool = True) -> CycleRule:
    """A rule that does not look at the network: exact for atoms, else n points.

    Parameters
    ----------
    shape : Shape
    n : int
        Points for a continuous distribution (ignored for atoms).
    crests : bool
        Add the crests (+1 and -1, zero weight) so that the peak is exact.

    Returns
    -------
    CycleRule

    Notes
    -----
    * Atoms (DC, square, impulse): their values and weights, exact.
    * Sine and other quarter-wave symmetric waves: the midpoint rule in phase on
      :math:`[-\\pi/2, \\pi/2]`, :math:`t_k = -\\pi/2 + (k - 1/2)\\pi/n`. For the sine
      these are the Gauss-Chebyshev nodes :math:`x_k = \\cos((2k-1)\\pi/(2n))`,
      weights 1/n, exact for polynomials in x of degree 2n - 1; for a smooth
      response the periodic integrand converges geometrically.
    * Triangle: Gauss-Legendre in x (its distribution is uniform).

    References
    ----------
    Abramowitz and Stegun, *Handbook of Mathematical Functions*, 1964, 25.4.38
    (Gauss-Chebyshev) and 25.4.29 (Gauss-Legendre).
    """
    if shape.atoms is not None:
        nodes = np.array([a[0] for a in shape.atoms], dtype=float)
        weights = np.array([a[1] for a in shape.atoms], dtype=float)
        return CycleRule(shape, nodes, weights, 0.0, 0.0, 0, "atoms")
    n = int(n)
    if isinstance(shape, Triangle):
        x, w = gauss_legendre(n)
        nodes, weights, method = np.array(x), 0.5 * np.array(w), "gauss-legendre"
    else:
        t0, t1 = shape.domain
        t = t0 + (np.arange(n) + 0.5) * (t1 - t0) / n
        nodes, weights = shape.x_of(t), np.full(n, 1.0 / n)
        method = "gauss-chebyshev" if isinstance(shape, Sine) else "midpoint in phase"
    nodes, weights = _with_crests(nodes, weights, crests)
    return CycleRule(shape, nodes, weights, math.nan, math.nan, 0, method)


def equal_rule(shape: Shape, n: int) -> CycleRule:
    """The n equally spaced instants of one cycle, equal values merged.

    Returns the rule whose mean is exactly :math:`\\frac1n \\sum_k g(x(2\\pi k/n))`
    (the rectangle rule that a cycle of n phase points gives), with each distinct
    value solved once: a sine of n = 4096 points (a multiple of 4) has
    n/2 + 1 = 2049 distinct values, the crests weighted 1/n and the others 2/n.
    """
    x = np.sort(shape.samples(n))
    # values equal up to round-off (1e-13 of the peak) are one node
    start = np.concatenate([[True], np.diff(x) > 1e-13])
    group = np.cumsum(start) - 1
    counts = np.bincount(group)
    vals = np.bincount(group, weights=x) / counts
    weights = counts / float(x.size)
    return CycleRule(shape, vals.astype(float), weights, math.nan, math.nan, 0, f"{n} equally spaced phases")
