"""Where the solver starts a batch of builds: the operating points predicted from solved neighbours.

A cycle of an AC position is solved at the same source values (its rule's nodes) for every
parameter row: the Monte Carlo builds, the tolerance corners, the extreme builds of a
rule's check. Newton's method needs about five steps per case from a neighbouring build's
operating point, one from the answer itself. The worst case's sensitivity rows (the nominal
parts and each toleranced parameter alone at its low and at its high extreme, at the same
source values) give each unknown's dependence on each parameter; :class:`StartModel` adds
those dependences up and starts every build from the sum: two or three Newton steps instead
of five. The start changes no result: every case is iterated to the solver's own step
tolerance from wherever it starts (a case the start leaves unconverged is started again
cold, :func:`planner.solve.solve`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["StartModel", "SolvedPoints", "Curve", "parted"]


def parted(y, split: int):
    """Rows of unknowns (N, C) in the solver's start form: node rows (N, split) and part voltages
    (N, C - split), each contiguous (``start`` of :func:`planner.solve.solve`)."""
    return np.ascontiguousarray(y[:, :split]), np.ascontiguousarray(y[:, split:])


class StartModel:
    """The solver's unknowns as a sum of one quadratic in ln(factor) per parameter.

    Parameters
    ----------
    x : ndarray (S,)
        Source values the rows were solved at [V] or [A].
    y0 : ndarray (S, C)
        The unknowns of the nominal row at each source value (the solver's node rows
        followed by its part voltages, :attr:`planner.solve.Solution.start_rows`).
    keys : list of str
        The parameters (factor keys) with a dependence.
    coef : ndarray (2K, S * C)
        Per parameter the coefficients a_j and b_j of
        :math:`y = y_0 + \\sum_j a_j \\ell_j + b_j \\ell_j^2`, :math:`\\ell_j = \\ln f_j`.
    split : int
        Columns of the node rows (the rest are part voltages).

    Notes
    -----
    Through three rows of each parameter (factor 1, its low and its high extreme,
    the others at 1) the quadratic in :math:`\\ell = \\ln f` is exact there; a build's
    unknowns are the sum over its parameters, which leaves out the products of two
    parameters' deviations (second order in the tolerances). On the example's AC
    ranges this puts a build's junction voltages within about 0.4 mV of its answer
    (median 1e-7 V), where the nearest other build was 10 mV away.
    """

    def __init__(self, x, y0, keys, coef, split):
        self.x = np.asarray(x, dtype=float)
        self.y0 = y0
        self.keys = list(keys)
        self.coef = coef
        self.split = int(split)
        self._order = np.argsort(self.x, kind="stable")
        self._sorted = self.x[self._order]

    @classmethod
    def from_rows(cls, x, factors, start_rows, nominal=None):
        """The model of a solved batch, or None where its rows are not a nominal row and each
        parameter alone at two other values.

        Parameters
        ----------
        x : ndarray (S,)
            Source values of every row [V] or [A].
        factors : dict or None
            The batch's factors, arrays (P,) (None: every row nominal).
        start_rows : tuple of ndarray
            Node rows (P*S, T) and part voltages (P*S, D) of the solution.
        nominal : ndarray of bool (P,), optional
            Rows that may serve as the nominal one (at the temperature the model is for);
            all by default.
        """
        x = np.asarray(x, dtype=float)
        s = x.size
        u, w = start_rows
        y = np.concatenate([u, w], axis=1)
        p = y.shape[0] // s
        y = y.reshape(p, s, -1)
        ok = np.ones(p, dtype=bool) if nominal is None else np.asarray(nominal, dtype=bool)
        if not factors:
            return cls(x, y[int(np.argmax(ok))], [], np.zeros((0, y.shape[1] * y.shape[2])), u.shape[1]) \
                if ok.any() else None
        keys = list(factors)
        f = np.vstack([np.broadcast_to(np.asarray(factors[k], dtype=float), (p,)) for k in keys])  # (K, P)
        moved = f != 1.0
        base = np.nonzero(ok & ~moved.any(axis=0))[0]
        if not base.size:
            return None
        y0 = y[base[0]].copy()  # not a view: the batch's rows are not kept
        coef, used = [], []
        for j, k in enumerate(keys):
            alone = np.nonzero(moved[j] & (moved.sum(axis=0) == 1))[0]
            if alone.size == 0:
                continue
            if alone.size != 2:
                return None
            l1, l2 = np.log(f[j, alone])
            if not (np.isfinite(l1) and np.isfinite(l2)) or l1 == l2:
                return None
            d1, d2 = y[alone[0]] - y0, y[alone[1]] - y0
            if not (d1.any() or d2.any()):  # no dependence (the full-scale current): nothing to add
                continue
            den = l1 * l2 * (l2 - l1)  # y - y0 = a l + b l^2 through (l1, d1) and (l2, d2)
            coef.append(((d1 * l2 * l2 - d2 * l1 * l1) / den).ravel())
            coef.append(((d2 * l1 - d1 * l2) / den).ravel())
            used.append(k)
        c = np.array(coef) if coef else np.zeros((0, y0.size))
        return cls(x, y0, used, c, u.shape[1])

    @property
    def sensitivities(self) -> bool:
        """Whether the model knows any parameter's dependence (else it starts every row at the nominal one)."""
        return bool(self.keys)

    def columns(self, x):
        """Index of each source value among the model's, or None where one is not among them."""
        x = np.asarray(x, dtype=float)
        at = np.minimum(np.searchsorted(self._sorted, x), self._sorted.size - 1)
        if not np.array_equal(self._sorted[at], x):
            return None
        return self._order[at]

    def predict(self, x, factors, rows: int):
        """Start rows for ``rows`` parameter rows at the source values ``x``, in the solver's form
        (node rows (P*S, T), part voltages (P*S, D)), or None where ``x`` is not among the model's."""
        idx = self.columns(x)
        if idx is None:
            return None
        s, c, t = idx.size, self.y0.shape[1], self.split
        ell = None
        if self.keys and factors:
            ell = np.zeros((rows, self.coef.shape[0]))
            for j, k in enumerate(self.keys):
                if k in factors:
                    lf = np.log(np.broadcast_to(np.asarray(factors[k], dtype=float), (rows,)))
                    ell[:, 2 * j] = lf
                    ell[:, 2 * j + 1] = lf * lf
        coef = self.coef.reshape(self.coef.shape[0], self.x.size, c)[:, idx]
        out = []
        for cols in (slice(0, t), slice(t, c)):  # node rows and part voltages, each made in place
            y0 = self.y0[idx, cols].reshape(1, -1)
            if ell is None:
                y = np.repeat(y0, rows, axis=0)
            else:
                y = ell @ coef[:, :, cols].reshape(coef.shape[0], -1)
                y += y0
            out.append(y.reshape(rows * s, -1))
        return out[0], out[1]


#: Parameter rows up to which a request without a usable sensitivity model is started row by row
#: from the rows solved before (a larger one is left to the solver's own start).
ROW_BY_ROW = 64


def _signature(temperature: float, factors, p: int) -> tuple:
    """A parameter row's identity: its temperature and the factors that move it."""
    moved = []
    for k, v in (factors or {}).items():
        a = np.asarray(v, dtype=float).reshape(-1)
        f = float(a[p] if a.size > 1 else a[0])
        if f != 1.0:
            moved.append((k, f))
    return float(temperature), tuple(sorted(moved))


class Curve:
    """The unknowns of one parameter row against the source value: solved points, merged and sorted."""

    def __init__(self):
        self.parts = []
        self._merged = None

    def add(self, x, y):
        """Solved source values ``x`` (S,) [V] or [A] and the unknowns there ``y`` (S, C) [V]."""
        self.parts.append((np.asarray(x, dtype=float), y))
        self._merged = None

    def merged(self):
        """Every solved source value once, ascending, and its unknowns: ((N,), (N, C))."""
        if self._merged is None:
            x = np.concatenate([p[0] for p in self.parts])
            y = np.concatenate([p[1] for p in self.parts])
            xs, first = np.unique(x, return_index=True)
            self._merged = (xs, y[first])
            self.parts = [self._merged]  # held once
        return self._merged

    def at(self, x):
        """Piecewise linear in the source value through the solved points (exact at them), straight on
        beyond the ends along the last panel of at least 5 % of the solved range."""
        xs, ys = self.merged()
        x = np.asarray(x, dtype=float)
        if xs.size == 1:
            return np.broadcast_to(ys[0], (x.size, ys.shape[1])).copy()
        i = np.clip(np.searchsorted(xs, x), 1, xs.size - 1)
        lo, hi = i - 1, i.copy()
        reach = 0.05 * (xs[-1] - xs[0])
        below, above = x < xs[0], x > xs[-1]
        if below.any():
            lo[below], hi[below] = 0, min(int(np.searchsorted(xs, xs[0] + reach)), xs.size - 1)
        if above.any():
            lo[above], hi[above] = max(int(np.searchsorted(xs, xs[-1] - reach, side="right")) - 1, 0), xs.size - 1
        x0, x1 = xs[lo], xs[hi]
        t = ((x - x0) / np.where(x1 > x0, x1 - x0, 1.0))[:, None]
        return ys[lo] * (1.0 - t) + ys[hi] * t


class SolvedPoints:
    """The operating points solved so far on one switch state, by parameter row, and the starts they give.

    A position's check solves the same network many times: the rule's build (the nominal parts at
    three temperatures, every part at its low and at its high extreme), the temperature rows, the
    sensitivity rows, the builds, the extreme builds' check nodes, the other waveforms, an own
    scale's grid. Each request is started from what was solved before: a row solved before, at
    other source values, from the straight line between its two nearest solved values; a nominal
    row at another temperature from the quadratic through the three nearest solved temperatures;
    builds from the sensitivity rows (:class:`StartModel`). Where nothing was solved the solver
    starts on its own.

    Parameters
    ----------
    t_ref : float
        The reference temperature [K] (the sensitivity rows' temperature).
    """

    def __init__(self, t_ref: float):
        self.t_ref = float(t_ref)
        self.curves: dict = {}
        self.model: StartModel | None = None
        self.split: int | None = None

    def add(self, x, temperatures, factors, start_rows) -> None:
        """Keep a solved request: source values (S,), per-row temperatures (P,) [K], factors, and the
        solution's :attr:`planner.solve.Solution.start_rows`."""
        if start_rows is None:
            return
        u, w = start_rows
        x = np.asarray(x, dtype=float)
        p = u.shape[0] // max(x.size, 1)
        if p > ROW_BY_ROW or not x.size:  # the builds: nothing a later request starts from
            return
        if self.split is not None and (self.split != u.shape[1] or self._width != u.shape[1] + w.shape[1]):
            return  # another reduced form of the equations: keep the first
        self.split, self._width = u.shape[1], u.shape[1] + w.shape[1]
        y = np.concatenate([u, w], axis=1).reshape(p, x.size, -1)
        temps = np.broadcast_to(np.asarray(temperatures, dtype=float), (p,))
        for r in range(p):
            self.curves.setdefault(_signature(temps[r], factors, r), Curve()).add(x, y[r])
        if factors:
            model = StartModel.from_rows(x, factors, start_rows, nominal=temps == self.t_ref)
            if model is not None and model.sensitivities:
                self.model = model

    def predict(self, x, temperatures, factors, rows: int):
        """Start rows (node rows (P*S, T), part voltages (P*S, D)) for a request, or None."""
        x = np.asarray(x, dtype=float)
        temps = np.broadcast_to(np.asarray(temperatures, dtype=float), (rows,))
        if factors and self.model is not None and np.all(temps == self.t_ref):
            start = self.model.predict(x, factors, rows)
            if start is not None:
                return start
        if rows > ROW_BY_ROW or self.split is None:
            return None
        out = np.empty((rows, x.size, self._width))
        done: dict = {}  # rows made in this request, by signature (rows never solved share the nominal one)
        for r in range(rows):
            y = self._row(x, _signature(temps[r], factors, r), done)
            if y is None:
                return None
            out[r] = y
        return parted(out.reshape(rows * x.size, -1), self.split)

    def _row(self, x, sig, done):
        if sig not in done:
            done[sig] = self._make_row(x, sig, done)
        return done[sig]

    def _make_row(self, x, sig, done):
        curve = self.curves.get(sig)
        if curve is not None:
            return curve.at(x)
        t, moved = sig
        nominal = sorted(k[0] for k in self.curves if not k[1])
        if not nominal:
            return None
        if moved:  # a row never solved: the nominal one at its temperature
            return self._row(x, (t, ()), done)
        near = sorted(nominal, key=lambda q: abs(q - t))[:3]
        if len(near) < 3:
            return self.curves[(near[0], ())].at(x)
        ys = [self._row(x, (q, ()), done) for q in near]
        out = np.zeros_like(ys[0])
        for i, (qi, yi) in enumerate(zip(near, ys)):  # Lagrange through the three temperatures
            li = 1.0
            for j, qj in enumerate(near):
                if j != i:
                    li *= (t - qj) / (qi - qj)
            out += li * yi
        return out
