"""A batch of operating points: where Newton starts, blocks of cases, fallbacks, the entry point."""

from __future__ import annotations

import logging

import numpy as np

from ..errors import SolveError
from . import newton as nt
from .chains import reduce as reduce_chains
from .circuit import Circuit, Junctions, Varistors
from .junction import EXP_MAX
from .linear import LinearPart
from .memo import Kept
from .results import Solution, check_batch
from .start import initial, segments, zero_where_undriven

log = logging.getLogger("planner.solve")

#: Cases per block of the Newton loop: a block's rows (8192 floats, 64 kB each) stay
#: in the processor's cache, where numpy runs several times faster per element than
#: on rows of 100 000 cases, and the interpreter's cost per operation stays small.
NEWTON_BLOCK = 8192
#: Batches of at least this many cases whose parameter sets share their stimuli start
#: from the solution of one representative parameter set.
WARM_MIN_CASES = 512
#: Sweeps of at least this many stimuli start from a solved coarse subset,
#: interpolated.
SWEEP_MIN = 96
#: Every how many (sorted) stimuli of a sweep the coarse subset takes one.
SWEEP_STRIDE = 8
#: Newton iterations allowed from a warm start before a case is restarted cold.
WARM_MAX_ITER = 15
#: Parameter sets start from a representative one only when every resistance and
#: saturation current spans less than this factor across them.
WARM_SPREAD = 1.5


def column(a):
    """A float when every parameter set has the same value, else the contiguous column."""
    a = np.asarray(a, dtype=float)
    if a.size == 1:
        return float(a[0])
    if a.size == 0 or np.all(a == a[0]):
        return float(a[0]) if a.size else 0.0
    return np.ascontiguousarray(a)


def columns(a) -> list:
    """:func:`column` of every column of a (P, K) array."""
    a = np.asarray(a, dtype=float)
    if not a.shape[1]:
        return []
    if not a.shape[0]:
        return [0.0] * a.shape[1]
    if a.shape[0] == 1:
        return a[0].tolist()
    same = np.all(a == a[:1], axis=0)
    first = a[0].tolist()
    return [first[k] if same[k] else np.ascontiguousarray(a[:, k]) for k in range(a.shape[1])]


#: Structures and segments of recently solved circuits, by their topology (an engine solves the
#: same few switch states many times).
_STRUCTURES = Kept(256)


def _structure(circuit: Circuit, lin: LinearPart, pattern, inject):
    key = (circuit.name, circuit.n_nodes, circuit.held, circuit.inject, circuit.source_kind,
           tuple(circuit.lin_a.tolist()), tuple(circuit.lin_b.tolist()), tuple(circuit.port_a.tolist()),
           tuple(circuit.port_c.tolist()), tuple(circuit.diode_port.tolist()), tuple(circuit.diode_sign.tolist()),
           tuple(np.asarray(circuit.varistor_port).tolist()), tuple(np.asarray(circuit.varistor_sign).tolist()),
           tuple(pattern), inject)
    hit = _STRUCTURES.get(key)
    if hit is None:
        st = nt.Structure(circuit, lin, pattern)
        hit = _STRUCTURES.keep(key, (st, segments(st, inject=inject)))
    return hit


class Problem:
    """The reduced equations of a whole batch: P parameter sets x S stimuli.

    Cases are numbered ``p * S + s``. :meth:`rows` gathers the rows of any set of
    cases; the per-set quantities (reduced admittances, part parameters) are kept
    per parameter set, not per case.
    """

    def __init__(self, circuit: Circuit, lin: LinearPart, jn: Junctions, var: Varistors | None, stim, r, emf):
        self.circuit = circuit
        self.lin = lin
        self.stim = stim
        self.r = r
        self.jn = jn
        self.var = var
        self.p, self.s = stim.shape
        self.voltage = circuit.source_kind == "voltage"
        anchors = [int(a) for a in lin.anchors]
        pattern = []
        self.ycols = {}
        for ia, i in enumerate(anchors):
            for ja, j in enumerate(anchors):
                col = lin.ys[:, ia, ja]
                if i == j or np.any(col != 0.0):
                    pattern.append((i, j))
                    self.ycols[(i, j)] = column(col)
        inj = lin.t_pos.get(circuit.inject) if not self.voltage else None
        self.st, self.segs = _structure(circuit, lin, pattern, inj)
        self.t, self.nd = self.st.t, len(self.st.kinds)
        self.dcols = columns(lin.d)
        self.decols = columns(lin.de) if lin.de is not None else None
        # for the starting point: the anchors' impedance and open-circuit voltages. An anchor in an
        # island (no linear path to the reference) gets a conductance of 1e-6 of the largest to the
        # reference for the start only: a current driven into the island then meets a Thevenin
        # source of about that current; the island takes no part in the voltage scale below
        na = len(anchors)
        if na:
            ys = lin.ys
            level = (1.0 / r).max(axis=1)[:, None]  # the largest branch conductance
            reg = np.maximum(1e-12 * level, np.where(lin.grounded[None, :], 0.0, 1e-6 * level))
            wmat = np.linalg.inv(ys + reg[:, :, None] * np.eye(na))
            oc = np.einsum("pij,pj->pi", wmat, lin.d[:, anchors])
            oce = np.einsum("pij,pj->pi", wmat, lin.de[:, anchors]) if lin.de is not None else np.zeros_like(oc)
        else:
            wmat = np.zeros((self.p, 0, 0))
            oc = oce = np.zeros((self.p, 0))
        self.wcols = {(i, j): column(wmat[:, ia, ja]) for ia, i in enumerate(anchors) for ja, j in enumerate(anchors)}
        self.occols = {i: (column(oc[:, ia]), column(oce[:, ia])) for ia, i in enumerate(anchors)}
        ground_oc = np.abs(oc[:, lin.grounded]) if na else np.zeros((self.p, 0))
        ground_oce = np.abs(oce[:, lin.grounded]) if na else np.zeros((self.p, 0))
        self.sigma = (ground_oc.max(axis=1) if ground_oc.shape[1] else np.zeros(self.p)) + (1.0 if self.voltage else 0.0)
        self.eps = ground_oce.max(axis=1) if ground_oce.shape[1] else np.zeros(self.p)
        self.has_emf = np.any(emf != 0.0, axis=1) if emf is not None else np.zeros(self.p, dtype=bool)
        self.jcols = {f: columns(getattr(jn, f)) for f in nt.JUNCTION_FIELDS}
        self.vcols = {f: columns(getattr(var, f)) for f in nt.VARISTOR_FIELDS} if var is not None else None
        self.iterations = 0
        self.fallbacks = {"source_stepping": 0, "gmin_stepping": 0}

    def rows(self, cases) -> nt.Rows:
        s_count = self.s
        p = cases // s_count
        stim = self.stim[p, cases - p * s_count]
        held = stim if self.voltage else 0.0
        drive = []
        for m in range(self.t):
            dm = self.dcols[m]
            x = stim * nt.take(dm, p) if nt.nonzero(dm) else 0.0
            if self.decols is not None and nt.nonzero(self.decols[m]):
                x = x + nt.take(self.decols[m], p)
            drive.append(x)
        y = {k: nt.take(v, p) for k, v in self.ycols.items()}
        parts = [nt.junction(*(nt.take(self.jcols[f][d], p) for f in nt.JUNCTION_FIELDS))
                 for d in range(len(self.circuit.diodes))]
        if self.vcols is not None:
            parts += [nt.Varistor(*(nt.take(self.vcols[f][m], p) for f in nt.VARISTOR_FIELDS))
                      for m in range(len(self.circuit.varistors))]
        vscale = np.abs(stim) * self.sigma[p] + self.eps[p]
        undriven = (stim == 0.0) & ~self.has_emf[p]
        return nt.Rows(self.st, held, drive, y, parts, vscale, undriven)

    def start(self, rows: nt.Rows, cases):
        p = cases // self.s
        stim = self.stim[p, cases - p * self.s]
        w_inv = {k: nt.take(v, p) for k, v in self.wcols.items()}
        oc = {}
        for m, (c1, c2) in self.occols.items():
            oc[m] = stim * nt.take(c1, p) + nt.take(c2, p)
        return initial(rows, self.segs, w_inv, oc)

    # --- strategies ----------------------------------------------------------------------------
    def solve(self, start=None):
        """Every case: node rows (P*S, T), part voltages (P*S, D) and part currents (P*S, D).

        ``start``: node rows (P*S, T) and part voltages (P*S, D) to start every case from.
        """
        p, s = self.p, self.s
        b = p * s
        if start is not None:
            u0, w0 = start
            return self.solve_cases(np.arange(b), lambda c: (u0[c].T, w0[c].T), finish=True)
        if p > 1 and b >= WARM_MIN_CASES and np.all(self.stim == self.stim[:1]) and self.close_sets():
            # one representative parameter set first; every set starts from it
            rep = self.representative()
            u_r, w_r = self.solve_sweep(np.array([rep]))
            return self.solve_cases(np.arange(b), lambda c: (u_r[c % s].T, w_r[c % s].T), finish=True)
        if s >= SWEEP_MIN:
            return self.solve_sweep(np.arange(p), finish=True)
        return self.solve_cases(np.arange(b), finish=True)

    def close_sets(self) -> bool:
        """Whether the parameter sets are close enough for one of them to start all the others.

        Within a factor WARM_SPREAD in every resistance, saturation current and varistor
        voltage, and within 10 K of temperature (n V_t within 3.5 %), the EMFs within 1 %
        of their largest: tolerance draws and corners are, a sweep of source impedances or
        of the ambient over its full range is not (there a warm start would cost more
        iterations than it saves).
        """
        r = self.r
        if np.any(r.max(axis=0) > WARM_SPREAD * r.min(axis=0)):
            return False
        if self.jn.i_s.shape[1]:
            i_s, nvt = self.jn.i_s, self.jn.nvt
            if np.any(i_s.max(axis=0) > WARM_SPREAD * i_s.min(axis=0)) or np.any(nvt.max(axis=0) > 1.035 * nvt.min(axis=0)):
                return False
        if self.var is not None and self.var.v1.shape[1]:
            v1 = self.var.v1
            if np.any(v1.max(axis=0) > 1.01 * v1.min(axis=0)):
                return False
        if self.lin.de is not None:
            de = self.lin.de
            if np.any(de.max(axis=0) - de.min(axis=0) > 1e-2 * np.abs(de).max()):
                return False
        return True

    def representative(self) -> int:
        """The parameter set nearest the median of all of them (log resistances, log I_s, n V_t)."""
        feats = [np.log(self.r)]
        if self.jn.i_s.shape[1]:
            feats += [np.log(np.maximum(self.jn.i_s, 1e-300)), self.jn.nvt / np.maximum(self.jn.nvt.mean(), 1e-300)]
        f = np.concatenate(feats, axis=1)
        dev = f - np.median(f, axis=0)
        scale = np.std(f, axis=0) + 1e-300
        return int(np.argmin(np.sum((dev / scale) ** 2, axis=1)))

    def solve_sweep(self, sets, finish=False):
        """Every stimulus of the given parameter sets, shapes (len(sets) * S, T) and (.., D).

        With at least :data:`SWEEP_MIN` stimuli, every :data:`SWEEP_STRIDE`-th stimulus in
        ascending order (and the last) is solved first; the others start from the
        straight-line interpolation of its node and part voltages in the stimulus.
        """
        s = self.s
        sets = np.asarray(sets)
        base = sets[:, None] * s
        if s < SWEEP_MIN:
            return self.solve_cases((base + np.arange(s)).ravel(), finish=finish)
        stim = self.stim[sets]  # (M, S)
        order = np.argsort(stim, axis=1, kind="stable")
        ranks = np.unique(np.append(np.arange(0, s, SWEEP_STRIDE), s - 1))
        coarse = order[:, ranks]  # (M, C) stimulus indices
        u_c, w_c = self.solve_cases((base + coarse).ravel())
        m, c = coarse.shape
        u_c = u_c.reshape(m, c, -1)
        w_c = w_c.reshape(m, c, -1)
        xs = np.take_along_axis(stim, order, axis=1)  # sorted stimuli
        seg = np.minimum(np.searchsorted(ranks, np.arange(s), side="right") - 1, c - 2)  # (S,) by rank
        lo, hi = ranks[seg], ranks[seg + 1]
        x_lo, x_hi = xs[:, lo], xs[:, hi]
        span = x_hi - x_lo
        wt = np.where(span > 0, (xs - x_lo) / np.where(span > 0, span, 1.0), 0.0)[:, :, None]  # (M, S, 1)
        rows = np.arange(m)[:, None]
        u_s = u_c[rows, seg[None, :]] * (1.0 - wt) + u_c[rows, seg[None, :] + 1] * wt  # by rank
        w_s = w_c[rows, seg[None, :]] * (1.0 - wt) + w_c[rows, seg[None, :] + 1] * wt
        u0 = np.empty_like(u_s)
        w0 = np.empty_like(w_s)
        np.put_along_axis(u0, order[:, :, None], u_s, axis=1)
        np.put_along_axis(w0, order[:, :, None], w_s, axis=1)
        u0 = u0.reshape(m * s, -1)
        w0 = w0.reshape(m * s, -1)
        cases = (base + np.arange(s)).ravel()
        return self.solve_cases(cases, lambda cc: (u0[_local(cc, sets, s)].T, w0[_local(cc, sets, s)].T), finish)

    def solve_cases(self, cases, start=None, finish=False):
        """Solve the given cases block by block; ``start(cases)`` gives warm starting rows.

        Returns node rows (n, T) and part voltages (n, D); with ``finish``, node rows,
        part voltages and part currents (n, D).
        """
        n = len(cases)
        u_out = np.empty((n, self.t))
        w_out = np.empty((n, self.nd))
        if finish:
            i_out = np.empty((n, self.nd))
        for lo in range(0, n, NEWTON_BLOCK):
            blk = cases[lo:lo + NEWTON_BLOCK]
            rows = self.rows(blk)
            if start is not None:
                u0, w0 = zero_where_undriven(rows, *start(blk))
                u, w, ok, it = nt.newton(rows, u0, w0, max_iter=WARM_MAX_ITER)
                self.iterations = max(self.iterations, it)
                if not ok.all():
                    bad = np.nonzero(~ok)[0]
                    sub = rows.subset(bad)
                    u2, w2 = self.start(sub, blk[bad])
                    u2, w2, ok2, it = nt.newton(sub, u2, w2)
                    self.iterations = max(self.iterations, it)
                    u[:, bad], w[:, bad], ok[bad] = u2, w2, ok2
            else:
                u, w = self.start(rows, blk)
                u, w, ok, it = nt.newton(rows, u, w)
                self.iterations = max(self.iterations, it)
            if not ok.all():
                u, w, ok = self._fallbacks(rows, u, w, ok)
            if not ok.all():
                bad = int(blk[np.nonzero(~ok)[0][0]])
                raise SolveError(
                    f"{self.circuit.name}: no operating point found for stimulus "
                    f"{self.stim.reshape(-1)[bad]:g} (parameter set {bad // self.s}) after Newton, "
                    "source stepping and gmin stepping")
            u_out[lo:lo + NEWTON_BLOCK] = u.T
            w_out[lo:lo + NEWTON_BLOCK] = w.T
            if finish:
                i_out[lo:lo + NEWTON_BLOCK] = np.array([p.current(w[d]) for d, p in enumerate(rows.parts)]).T \
                    if self.nd else np.empty((len(blk), 0))
        if finish:
            return u_out, w_out, i_out
        return u_out, w_out

    def _fallbacks(self, rows: nt.Rows, u, w, ok):
        """Source stepping, then gmin stepping, on the cases Newton left unconverged."""
        idx = np.nonzero(~ok)[0]
        self.fallbacks["source_stepping"] += len(idx)
        log.info("%s: source stepping on %d cases", self.circuit.name, len(idx))
        sub = rows.subset(idx)
        us, ws = np.zeros((sub.st.t, len(idx))), np.zeros((self.nd, len(idx)))
        good = np.zeros(len(idx), dtype=bool)
        for alpha in np.linspace(0.02, 1.0, 50):
            us, ws, good, _ = nt.newton(sub, us, ws, scale=alpha)
        if not good.all():
            sel = np.nonzero(~good)[0]
            self.fallbacks["gmin_stepping"] += len(sel)
            log.info("%s: gmin stepping on %d cases", self.circuit.name, len(sel))
            sub2 = sub.subset(sel)
            ug, wg = np.zeros((sub2.st.t, len(sel))), np.zeros((self.nd, len(sel)))
            g_ok = np.zeros(len(sel), dtype=bool)
            for gm in [1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 0.0]:
                ug, wg, g_ok, _ = nt.newton(sub2, ug, wg, extra_g=gm)
            us[:, sel], ws[:, sel] = ug, wg
            good[sel] = g_ok
        u, w, ok = u.copy(), w.copy(), ok.copy()
        u[:, idx], w[:, idx], ok[idx] = us, ws, good
        return u, w, ok


def _local(cases, sets, s):
    """Position of global cases among the cases of the given parameter sets (in order)."""
    p = cases // s
    if len(sets) == 1:
        return cases - int(sets[0]) * s
    where = np.searchsorted(sets, p)
    return where * s + (cases - p * s)


def _spread(a, shape):
    """``a`` broadcast to ``shape`` (itself where it has that shape already); read, never written."""
    return a if a.shape == shape else np.broadcast_to(a, shape)


def _params(x, p, m, name, what):
    """A parameter array (P, M) from (P, M), (M,) or a scalar."""
    a = np.atleast_2d(np.asarray(x, dtype=float))
    if a.shape[-1] not in (m, 1):
        raise SolveError(f"{name}: {what} has {a.shape[-1]} columns for {m} parts")
    return np.ascontiguousarray(np.broadcast_to(a, (p, m)))


def solve(circuit: Circuit, r_branch, junctions: Junctions, stimulus, *, varistors: Varistors | None = None,
          emf=None, start: tuple | None = None) -> Solution:
    """Solve a batch of operating points of one compiled switch state.

    Parameters
    ----------
    circuit : Circuit
    r_branch : array_like, shape (P, L) or (L,)
        Resistance of each linear branch [ohm].
    junctions : Junctions
        Diode parameters, shapes (P, D) or (D,).
    stimulus : array_like, shape (P, S) or (S,)
        Volts at the held node (voltage stimulus) or amperes injected (current stimulus).
    varistors : Varistors, optional
        Varistor parameters, shapes (P, M) or (M,), for ``circuit.varistors``.
    emf : array_like, shape (P, L) or (L,), optional
        EMF in series with each linear branch [V] (0 for none): branch j is its
        resistance in series with a source whose plus side faces its first node, so
        that with no current ``v_a - v_b = e_j``, and its current from a to b is
        ``(v_a - v_b - e_j) / r_j``.
    start : tuple of ndarray, optional
        Where every case starts: node rows (P*S, T) and part voltages (P*S, D) in the
        form of :attr:`Solution.start_rows` of an earlier solution of the same circuit,
        one row per case (a neighbouring parameter set: the next step of an iteration
        over a part's value). Ignored where the reduced equations differ in shape.

    Returns
    -------
    Solution

    Raises
    ------
    SolveError
        For a singular linear part (a node with no path to the reference), a
        Newton iteration that did not converge after source and gmin stepping, a
        part driven beyond its law's range, or a batch whose results would exceed
        ``MAX_RESULT_FLOATS``.

    Notes
    -----
    Where Newton starts, by batch:

    * parameter sets that share their stimuli (Monte Carlo builds, tolerance
      corners), at least :data:`WARM_MIN_CASES` cases: the representative set
      (nearest the median parameters) is solved first and every case starts from
      its node and part voltages at the same stimulus: a 0.25 % tolerance moves
      a conducting junction by about 0.1 mV, which Newton removes in two or three
      steps;
    * sweeps of at least :data:`SWEEP_MIN` stimuli: a coarse subset first, the rest
      from its straight-line interpolation;
    * rows of an earlier solution given as ``start``: every case from its own row;
    * otherwise, and for any case that a warm start leaves unconverged after
      :data:`WARM_MAX_ITER` steps: each chain of parts solved behind its Thevenin
      equivalent (:mod:`planner.solve.start`).

    The solution does not depend on the start: every case is iterated to the same
    step tolerance.
    """
    r = np.atleast_2d(np.asarray(r_branch, dtype=float))
    stim = np.atleast_2d(np.asarray(stimulus, dtype=float))
    d = len(circuit.diodes)
    m = len(circuit.varistors)
    lin_count = len(circuit.branches)
    jn = junctions.map(lambda x: np.atleast_2d(np.asarray(x, dtype=float)))
    e = None if emf is None else np.atleast_2d(np.asarray(emf, dtype=float))
    p = max(r.shape[0], stim.shape[0], jn.i_s.shape[0], 1 if e is None else e.shape[0])
    if varistors is not None:
        varistors = varistors.map(lambda x: np.atleast_2d(np.asarray(x, dtype=float)))
        p = max(p, varistors.v1.shape[0], varistors.alpha.shape[0], varistors.i1.shape[0])
    elif m:
        raise SolveError(f"{circuit.name}: the circuit has {m} varistors but no varistor parameters were given")
    jn = jn.map(lambda x: _spread(x, (p, d)))
    r = np.ascontiguousarray(_spread(r, (p, r.shape[1])))
    stim = np.ascontiguousarray(_spread(stim, (p, stim.shape[1])))
    if not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise SolveError(f"{circuit.name}: a branch resistance is zero, negative or not finite")
    if not np.all(np.isfinite(stim)):
        raise SolveError(f"{circuit.name}: a stimulus is not finite")
    if e is not None:
        e = _params(e, p, lin_count, circuit.name, "the EMF array")
        if not np.all(np.isfinite(e)):
            raise SolveError(f"{circuit.name}: a branch EMF is not finite")
        if not np.any(e != 0.0):
            e = None
    if varistors is not None:
        varistors = Varistors(*(_params(x, p, m, circuit.name, "a varistor parameter")
                                for x in (varistors.v1, varistors.alpha, varistors.i1)))
        ok = (np.all(np.isfinite(varistors.v1)) and np.all(varistors.v1 > 0) and np.all(np.isfinite(varistors.i1))
              and np.all(varistors.i1 > 0) and np.all(np.isfinite(varistors.alpha)) and np.all(varistors.alpha >= 1.0))
        if not ok:
            raise SolveError(f"{circuit.name}: a varistor needs a finite voltage and current at its reference "
                             "point (> 0) and an exponent alpha of at least 1")
        if not m:
            varistors = None
    n = circuit.n_nodes
    s_count = stim.shape[1]
    t_count = len({int(x) for x in circuit.port_a} | {int(x) for x in circuit.port_c})
    # held per case: touched node voltages, part voltages and currents and a few columns an
    # analysis forms; per parameter set: the linear responses
    check_batch(circuit.name, p * s_count, p * s_count * (t_count + 2 * (d + m) + 2) + p * n * 3)
    red = reduce_chains(circuit, jn) if d >= 2 else None
    flat, fjn = (red.circuit, red.junctions) if red is not None else (circuit, jn)
    lin = LinearPart(flat, r, e, skip=red.between if red is not None else ())
    t = len(lin.touched)
    fd = len(flat.diodes)
    empty = np.zeros((p, s_count, 0))
    if (not fd and not m) or s_count == 0:
        return Solution(circuit, stim, lin, r, np.zeros((p, s_count, t)), np.zeros((p, s_count, d)),
                        np.zeros((p, s_count, d)), emf=e, v_varistor=np.zeros((p, s_count, m)),
                        i_varistor=np.zeros((p, s_count, m)), between=red.between if red is not None else None)
    prob = Problem(flat, lin, fjn, varistors, stim, r, e)
    warm = start
    if warm is not None and (warm[0].shape != (p * s_count, t) or warm[1].shape != (p * s_count, fd + m)):
        warm = None
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        u, w, i = prob.solve(warm)
    _beyond(flat, fjn, varistors, w, stim, p, s_count)
    rows = (u, w)
    u = u.reshape(p, s_count, t)
    w = w.reshape(p, s_count, fd + m)
    i = i.reshape(p, s_count, fd + m)
    vj, i_d = w[:, :, :fd], i[:, :, :fd]
    if red is not None:  # each junction of a stack: the composite's voltage over N, its current
        vj = vj[:, :, red.source] / red.divisor
        i_d = i_d[:, :, red.source]
    sol = Solution(circuit, stim, lin, r, u, vj, i_d, prob.iterations, prob.fallbacks, emf=e,
                   v_varistor=w[:, :, fd:] if m else empty, i_varistor=i[:, :, fd:] if m else empty,
                   between=red.between if red is not None else None)
    sol.start_rows = rows
    return sol


def _beyond(circuit, jn, var, w, stim, p, s_count):
    """Refuse an operating point where a part's law had to be continued linearly."""
    d = len(circuit.diodes)
    if d:
        vj3, nvt3 = w[:, :d].reshape(p, s_count, d), jn.nvt[:, None, :]
        with np.errstate(invalid="ignore"):  # forward, or (for a finite BV) into breakdown
            beyond = (vj3 > EXP_MAX * nvt3) | (-(vj3 + jn.bv[:, None, :]) > EXP_MAX * nvt3)
        beyond = beyond.reshape(p * s_count, d)
        if beyond.any():
            case, j = (int(q[0]) for q in np.nonzero(beyond))
            way = "conduction" if w[case, j] > 0 else "breakdown"
            raise SolveError(
                f"{circuit.name}: diode {circuit.diodes[j]} would be driven {w[case, j]:.3g} V into {way} "
                f"at stimulus {stim.reshape(-1)[case]:g} (no resistance limits its current); give the diode model "
                "a series_resistance or put a resistor in series with it")
    m = len(circuit.varistors)
    if m:
        vv = np.abs(w[:, d:]).reshape(p, s_count, m)
        v_max = var.v1 * np.exp(EXP_MAX / var.alpha)
        beyond = (vv > v_max[:, None, :]).reshape(p * s_count, m)
        if beyond.any():
            case, j = (int(q[0]) for q in np.nonzero(beyond))
            raise SolveError(
                f"{circuit.name}: varistor {circuit.varistors[j]} would be driven to {w[case, d + j]:.3g} V at "
                f"stimulus {stim.reshape(-1)[case]:g}, beyond its law's range (no resistance limits its current); "
                "put a resistor in series with it")
