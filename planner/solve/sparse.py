"""Sparse elimination of the Newton step, one small system per case, over rows of cases.

The node-form Jacobian (the linear part's admittance between the nodes the nonlinear
parts touch, plus each part's conductance) has the structure of the network: a diode
stack is a path, a clamp between two anchors one entry. Its pattern is the same for
every case, so the elimination order and the fill are found once (:class:`Elimination`)
and each Newton step runs the same short program on rows of cases.
"""

from __future__ import annotations

import numpy as np


class Elimination:
    """An elimination program for a structurally symmetric pattern.

    Parameters
    ----------
    n : int
        Number of unknowns.
    edges : iterable of (int, int)
        Off-diagonal entries (either order; both are kept).
    first : iterable of int, optional
        Unknowns to eliminate before the others (among each group, the one with the
        fewest remaining neighbours goes first: the minimum-degree ordering).

    Notes
    -----
    Gaussian elimination without pivoting, on matrices whose rows are each
    diagonally dominant (a nodal admittance plus non-negative conductances, each row
    scaled by a positive factor): the Schur complements stay row diagonally dominant,
    so the growth of the entries is bounded by 2 and no pivoting is needed. A zero
    pivot (a node no conductance reaches, to double precision) gets no step, as a
    pseudo-inverse would give.

    References
    ----------
    G. H. Golub and C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins,
    2013, chapter 3 (Gaussian elimination of diagonally dominant matrices without
    pivoting); A. George and J. W. H. Liu, *Computer Solution of Large Sparse Positive
    Definite Systems*, Prentice-Hall, 1981 (the minimum degree ordering).
    """

    def __init__(self, n: int, edges, first=()):
        self.n = n
        adj = [set() for _ in range(n)]
        for i, j in edges:
            if i != j:
                adj[i].add(j)
                adj[j].add(i)
        self.pattern = {(i, i) for i in range(n)} | {(i, j) for i in range(n) for j in adj[i]}
        first = set(first)
        left = set(range(n))
        order, later = [], []
        while left:
            group = [v for v in left if v in first] or list(left)
            c = min(group, key=lambda v: (len(adj[v] & left), v))
            nb = sorted(adj[c] & left)
            for i in nb:  # the fill: the remaining neighbours become one clique
                for j in nb:
                    if i != j and j not in adj[i]:
                        adj[i].add(j)
                        self.pattern.add((i, j))
            left.discard(c)
            order.append(c)
            later.append(nb)
        self.order = order
        self.later = later

    def solve(self, a: dict, b: list):
        """Solve A x = b for every case; ``a[(i, j)]`` and ``b[i]`` are rows or floats.

        ``a`` holds at least the diagonal and the given off-diagonal entries; fill entries
        may be absent (zero). ``a`` and ``b`` are consumed.
        """
        inv = [None] * self.n
        for c, nb in zip(self.order, self.later):
            piv = a[(c, c)]
            if isinstance(piv, np.ndarray):
                ic = _reciprocal(piv)
            else:
                ic = 1.0 / piv if piv > 0.0 else 0.0
            inv[c] = ic
            if not nb:
                continue
            bc = b[c]
            row = [a.get((c, j), 0.0) for j in nb]
            for i in nb:
                aic = a.get((i, c))
                if aic is None:
                    continue
                f = aic * ic
                for j, acj in zip(nb, row):
                    a[(i, j)] = a.get((i, j), 0.0) - f * acj
                b[i] = b[i] - f * bc
            for j, acj in zip(nb, row):
                a[(c, j)] = acj
        x = [None] * self.n
        for c, nb in zip(reversed(self.order), reversed(self.later)):
            acc = b[c]
            for j in nb:
                acc = acc - a.get((c, j), 0.0) * x[j]
            x[c] = acc * inv[c]
        return x


def _reciprocal(piv):
    """1 / piv where piv > 0, else 0 (no step); the plain division when every pivot is positive."""
    if piv.min() > 0.0:  # NaN: False
        return 1.0 / piv
    return np.divide(1.0, piv, out=np.zeros_like(piv), where=piv > 0.0)
