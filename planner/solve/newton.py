"""Newton's method in node form on the touched nodes, one row per node or part, over rows of cases.

Unknowns: the voltages u of the touched nodes and each nonlinear part's own voltage w
(a diode's junction voltage, behind its series resistance; a varistor's voltage).
Equations: Kirchhoff's current law at every touched node, with the linear part
reduced onto those nodes (:mod:`planner.solve.linear`), and each part's own equation
``V = w + R_s i(w)``. Each step linearises every part, eliminates its own voltage
into a conductance between its nodes, solves the node system
(:mod:`planner.solve.sparse`), then updates the parts' voltages with limiting.

A node that no linear branch reaches (the middle of a diode stack) balances the
currents of junctions alone: reverse-biased ideal junctions carry -I_s plus a term
I_s e^{v/nV_t} that is far below the rounding of I_s. Its row is therefore formed
with each junction's current split into I_s e^{v/nV_t} and the constant -I_s, the
constants summed first (identical junctions cancel them exactly), and the whole row
divided by its largest term (row scaling leaves the Newton step unchanged and keeps
e^{v/nV_t} from underflowing at hundreds of volts of reverse bias).
"""

from __future__ import annotations

import numpy as np

from . import junction as jl
from . import varistor as vl
from .memo import Kept
from .sparse import Elimination
from .together import Together, nonzero

MAX_ITER = 200
#: A case is converged one Newton step after its step falls below this [V, relative]:
#: Newton converges quadratically there, so the extra step takes the error from
#: about 1e-10 V to round-off (about 1e-16 V).
STEP_TOL = 1e-10
#: A case whose step falls below this [V, relative], also against the size of its node
#: voltages and drives alone, is converged at once: after a step of 1e-12 the quadratic
#: error is far below round-off, and even a linearly converging case is within STEP_TOL.
STEP_TINY = 1e-12

GROUND, HELD = -1, -2

#: Least slope of a varistor in the Newton step, relative to alpha I_1 / V_1.
VARISTOR_FLOOR = 1e-12
#: A case is converged only when the current balance of every touched node, relative to the
#: node's largest current term, is below this at the start of its last step (a vanishing slope
#: or a start far off gives a small step, not convergence).
BALANCE_TOL = 1e-6
#: Absolute current below which a node's balance holds whatever its terms [A]: at a zero
#: stimulus every term is itself next to nothing, and a ratio of such numbers is noise.
BALANCE_FLOOR_A = 1e-24

#: A starting junction voltage is at most this many n V_t above the junction's critical
#: voltage (where it carries n V_t / sqrt(2) A; e^10 times that here): the start of a
#: segment solved in closed form is near its answer also at fault currents, and Newton
#: descends an overestimate by about n V_t a step.
START_ABOVE_VCRIT = 10.0

JUNCTION_FIELDS = ("i_s", "nvt", "bv", "ibv", "r_s", "g_p")
VARISTOR_FIELDS = ("v1", "alpha", "i1")


def take(a, idx):
    """Rows of a per-case array; a float stands for every case."""
    return a[idx] if isinstance(a, np.ndarray) else a


class Junction:
    """Per-case parameters of one diode (each a float when every case shares it)."""

    kind = "junction"
    #: Made by :func:`junction` for floats alone and shared by every call that has them.
    shared = False

    def __init__(self, i_s, nvt, bv, ibv, r_s, g_p):
        self.i_s, self.nvt, self.bv, self.ibv, self.r_s, self.g_p = i_s, nvt, bv, ibv, r_s, g_p
        self.inv_nvt = 1.0 / nvt
        self.neg_inv_nvt = -self.inv_nvt
        self.is_nvt = i_s * self.inv_nvt
        self.ibv_nvt = ibv * self.inv_nvt
        self.two_nvt = 2.0 * nvt
        self.ln_is = np.log(i_s)
        self.vcrit = nvt * np.log(nvt / (np.sqrt(2.0) * i_s))
        self.has_bv = bool(np.any(np.isfinite(bv)))
        with np.errstate(divide="ignore"):
            self.ln_ibv = np.log(ibv) if self.has_bv else 0.0
            self.vcr_bv = nvt * np.log(nvt / (np.sqrt(2.0) * ibv)) if self.has_bv else 0.0
        self.w_start_max = np.maximum(self.vcrit + START_ABOVE_VCRIT * nvt, 1.5)

    def subset(self, idx):
        fields = [getattr(self, f) for f in JUNCTION_FIELDS]
        if not any(isinstance(x, np.ndarray) for x in fields):
            return self  # every case shares every parameter
        return Junction(*(take(x, idx) for x in fields))

    def with_leak(self, extra_g):
        if extra_g == 0.0:
            return self
        return Junction(self.i_s, self.nvt, self.bv, self.ibv, self.r_s, self.g_p + extra_g)

    def current(self, w):
        return jl.current(w, self)

    def limit(self, new, old):
        return jl.limit(new, old, self)

    def may_limit(self, step_abs) -> bool:
        """Whether a step of these sizes can meet the limiting (one larger than 2 nV_t)."""
        two = self.two_nvt
        return bool((step_abs.max() > two) if not isinstance(two, np.ndarray) else (step_abs > two).any())

    def start_limits(self, w):
        """Keep a starting junction voltage off the far exponential (forward: at most
        :data:`START_ABOVE_VCRIT` n V_t above the critical voltage) and out of deep breakdown."""
        w = np.minimum(w, self.w_start_max)
        if self.has_bv:
            w = np.maximum(w, -self.bv)
        return w


#: Junctions whose every parameter is one float, by their parameters (a switch state's
#: diodes are the same few in every call).
_SHARED = Kept(1024)


def junction(i_s, nvt, bv, ibv, r_s, g_p) -> Junction:
    """:class:`Junction` of these rows; one made earlier where every parameter is a float."""
    key = (i_s, nvt, bv, ibv, r_s, g_p)
    if any(isinstance(x, np.ndarray) for x in key):
        return Junction(*key)
    hit = _SHARED.get(key)
    if hit is None:
        hit = _SHARED.keep(key, Junction(*key))
        hit.shared = True
    return hit


class Varistor:
    """Per-case parameters of one varistor (each a float when every case shares it)."""

    kind = "varistor"
    r_s = 0.0
    has_bv = False
    shared = False

    def __init__(self, v1, alpha, i1, g_p=0.0):
        self.v1, self.alpha, self.i1, self.g_p = v1, alpha, i1, g_p
        self.inv_v1 = 1.0 / v1
        self.lu_max = jl.EXP_MAX / alpha
        self.v_max = v1 * np.exp(self.lu_max)
        self.g1 = alpha * i1 / v1
        self.ln_i1 = np.log(i1)
        # the law's slope vanishes at 0 V (alpha > 1): the Newton step's conductance is kept
        # above this share of I_1 / V_1 so that a step can leave 0 V (the residual stays exact)
        self.floor_rel = VARISTOR_FLOOR * i1
        self.g_floor = VARISTOR_FLOOR * self.g1
        self.vcrit = vl.critical_voltage(v1, alpha, i1)
        if not isinstance(self.vcrit, np.ndarray) or self.vcrit.ndim == 0:
            self.vcrit = float(self.vcrit)

    def subset(self, idx):
        return Varistor(*(take(getattr(self, f), idx) for f in VARISTOR_FIELDS + ("g_p",)))

    def with_leak(self, extra_g):
        return self if extra_g == 0.0 else Varistor(self.v1, self.alpha, self.i1, self.g_p + extra_g)

    def current(self, w):
        i = vl.current(w, self)
        return i + self.g_p * w if nonzero(self.g_p) else i

    def limit(self, new, old):
        return vl.limit(new, old, self)

    def may_limit(self, step_abs) -> bool:
        return True

    def start_limits(self, w):
        return w


class Structure:
    """What every case of a circuit shares: the touched nodes, the parts' nodes, the elimination.

    ``pos[d]``/``neg[d]``: the touched position of part d's first terminal (a diode's
    anode) and second one, or :data:`GROUND` / :data:`HELD`.
    """

    def __init__(self, circuit, lin, ys_pattern):
        self.t = len(lin.touched)
        self.floating = [bool(f) for f in lin.floating]
        self.anchors = [int(a) for a in lin.anchors]
        self.inject_floating = None
        held = circuit.held

        def ref(node):
            node = int(node)
            if node == 0:
                return GROUND
            if held is not None and node == held:
                return HELD
            return lin.t_pos[node]

        self.kinds, self.pos, self.neg = [], [], []
        parts = [("junction", circuit.diode_port, circuit.diode_sign),
                 ("varistor", circuit.varistor_port, circuit.varistor_sign)]
        for kind, ports, signs in parts:
            for q, sg in zip(ports, signs):
                a, c = ref(circuit.port_a[int(q)]), ref(circuit.port_c[int(q)])
                self.kinds.append(kind)
                self.pos.append(a if sg > 0 else c)
                self.neg.append(c if sg > 0 else a)
        nd = len(self.kinds)
        self.node_parts = [[] for _ in range(self.t)]
        for d in range(nd):
            if self.pos[d] >= 0:
                self.node_parts[self.pos[d]].append((d, 1.0))
            if self.neg[d] >= 0:
                self.node_parts[self.neg[d]].append((d, -1.0))
        fl = self.floating
        self.scaled_ends = [[(m, s) for m, s in ((self.pos[d], 1.0), (self.neg[d], -1.0)) if m >= 0 and fl[m]]
                            for d in range(nd)]
        self.plain_ends = [[(m, s) for m, s in ((self.pos[d], 1.0), (self.neg[d], -1.0)) if m >= 0 and not fl[m]]
                           for d in range(nd)]
        self.floating_nodes = [m for m in range(self.t) if fl[m]]
        edges = set(ys_pattern)
        for d in range(nd):
            if self.pos[d] >= 0 and self.neg[d] >= 0:
                edges.add((self.pos[d], self.neg[d]))
        self.ys_pattern = [(i, j) for i, j in ys_pattern]
        self.elim = Elimination(self.t, edges, first=self.floating_nodes)


class Rows:
    """The reduced equations of ``n`` cases.

    ``held``: the held node's voltage (the stimulus, for a voltage stimulus; else 0);
    ``drive[m]``: current into touched node m from the stimulus and the EMFs;
    ``y[(i, j)]``: the reduced admittance between anchors i and j; ``parts``: the
    per-case parameters of each part; ``vscale``: each case's size of voltages
    (for the convergence test of a case whose whole solution is tiny); ``undriven``:
    the cases with neither stimulus nor EMF (their solution is zero).
    """

    def __init__(self, st: Structure, held, drive, y, parts, vscale, undriven):
        self.st = st
        self.undriven = undriven
        self.held = held
        self.drive = drive
        self.y = y
        self.parts = parts
        self.vscale = vscale
        self.n = len(vscale)

    def subset(self, idx) -> "Rows":
        return Rows(self.st, take(self.held, idx), [take(d, idx) for d in self.drive],
                    {k: take(v, idx) for k, v in self.y.items()}, [p.subset(idx) for p in self.parts],
                    self.vscale[idx], self.undriven[idx])


def part_voltage(st: Structure, u, held, d):
    """Voltage across part d, first terminal less second, from the node rows."""
    a, c = st.pos[d], st.neg[d]
    va = u[a] if a >= 0 else (held if a == HELD else 0.0)
    vc = u[c] if c >= 0 else (held if c == HELD else 0.0)
    return va - vc


def _evaluate(p, w, need_plain, need_log):
    """Current and conductance of one part at its voltage ``w``, and what its scaled rows need.

    Returns (i, y, ell, const, aux): unscaled current and conductance (None unless
    ``need_plain``); the log of the part's largest current term; the constant of the
    current (-I_s for a junction deep in reverse, else 0); and what :func:`_scaled` uses.
    """
    if p.kind == "junction":
        x = w * p.inv_nvt
        xe = np.minimum(x, jl.EXP_MAX) if x.max() > jl.EXP_MAX else x
        i = y = None
        if need_plain:
            em = np.expm1(xe)
            ex = em + 1.0
            i = em + ex * (x - xe) if xe is not x else em
            i *= p.i_s
            ex *= p.is_nvt
            y = ex
        we = wv = None
        if p.has_bv:
            wv = (w + p.bv) * p.neg_inv_nvt
            we = np.minimum(wv, jl.EXP_MAX) if wv.max() > jl.EXP_MAX else wv
            if need_plain:
                ew = np.exp(we)
                if we is wv:  # not continued linearly (no BV: -inf)
                    i = i - p.ibv * ew
                else:
                    i = i - p.ibv * ew * (1.0 + np.fmax(wv - we, 0.0))  # no BV: -inf - -inf -> 0
                y = y + ew * p.ibv_nvt
        if need_plain and nonzero(p.g_p):
            i += p.g_p * w
            y += p.g_p
        ell = const = None
        if need_log:
            ell = p.ln_is + xe
            if p.has_bv:
                ell = np.maximum(ell, p.ln_ibv + we)
            if nonzero(p.g_p):
                ell = np.maximum(ell, np.log(p.g_p * np.abs(w)))
            const = np.where(x < jl.DEEP, -p.i_s, 0.0)
        return i, y, ell, const, (x, xe, wv, we)
    lu, a = vl.log_ratio(w, p)
    i = y = None
    if need_plain:
        i = p.current(w)
        y = vl.conductance(lu, p) + p.g_floor
        if nonzero(p.g_p):
            y = y + p.g_p
    ell = None
    if need_log:
        ell = np.where(a > 0.0, p.ln_i1 + p.alpha * lu, -np.inf)  # exactly 0 V: no current
        if nonzero(p.g_p):
            ell = np.maximum(ell, np.log(p.g_p * a))
    return i, y, ell, 0.0, (lu, a)


def _scaled(p, w, aux, big_l, e_l):
    """The part's current (less its constant) and conductance, divided by e^L of a row."""
    if p.kind == "junction":
        x, xe, wv, we = aux
        t = np.exp(p.ln_is + xe - big_l)
        if xe is x:
            part = np.where(x < jl.DEEP, t, -t * np.expm1(-x))
        else:
            part = t * (x - xe) + np.where(x < jl.DEEP, t, -t * np.expm1(-xe))
        ysc = t * p.inv_nvt
        if p.has_bv:
            tb = np.exp(p.ln_ibv + we - big_l)
            part = part - tb if we is wv else part - tb * (1.0 + np.fmax(wv - we, 0.0))
            ysc = ysc + tb * p.inv_nvt
    else:
        lu, a = aux
        t = np.exp(p.ln_i1 + p.alpha * lu - big_l)
        part = np.copysign(t * (1.0 + np.fmax(a - p.v_max, 0.0) * (p.alpha / p.v_max)), w) * (a > 0.0)
        ysc = (np.exp(p.ln_i1 + (p.alpha - 1.0) * lu - big_l) + p.floor_rel * e_l) * (p.alpha * p.inv_v1)
    if nonzero(p.g_p):
        part = part + p.g_p * w * e_l
        ysc = ysc + p.g_p * e_l
    return part, ysc


def _linearise(st: Structure, parts, U, W, held, together=None):
    """Every part at its voltage: (i, y, ell, const, aux, den, r) per part.

    ``r`` is the residual of the part's own equation V = w + R_s i(w) and ``den``
    1 + R_s y (None without R_s): eliminating w, the part conducts i + (y/den)(r + dV).
    ``together``: the :class:`Together` of these parts, evaluated in one array.
    """
    ev = []
    shared = together.evaluate(W) if together is not None else {}
    for d, p in enumerate(parts):
        vq = part_voltage(st, U, held, d)
        got = shared.get(d)
        if got is None:
            got = _evaluate(p, W[d], bool(st.plain_ends[d]) or nonzero(p.r_s), bool(st.scaled_ends[d]))
        i, y, ell, const, aux = got
        if nonzero(p.r_s):
            den = p.r_s * y
            den += 1.0
            r = vq - W[d]
            r -= p.r_s * i
        else:
            den = None
            r = vq - W[d]
        ev.append((i, y, ell, const, aux, den, r))
    return ev


def _anchor_rows(st: Structure, R: Rows, U, drive, ev, res, a):
    """Residuals and Jacobian rows of the nodes with a linear branch; each row's current terms."""
    terms = {}  # for the balance test
    for m in st.anchors:
        acc = -drive[m]
        mine = [drive[m]]
        for (i2, j2) in st.ys_pattern:
            if i2 == m:
                term = R.y[(i2, j2)] * U[j2]
                acc = acc + term
                mine.append(term)
        res[m] = acc
        terms[m] = mine
    a.update(R.y)
    for d, (i, y, ell, const, aux, den, r) in enumerate(ev):
        if not st.plain_ends[d]:
            continue
        geq = y if den is None else y / den
        flow = i + geq * r
        for m, s in st.plain_ends[d]:
            res[m] = res[m] + flow if s > 0 else res[m] - flow
            terms[m].append(flow)
            a[(m, m)] = a.get((m, m), 0.0) + geq
        a_, c_ = st.pos[d], st.neg[d]
        if a_ >= 0 and c_ >= 0:
            if not st.floating[a_]:
                a[(a_, c_)] = a.get((a_, c_), 0.0) - geq
            if not st.floating[c_]:
                a[(c_, a_)] = a.get((c_, a_), 0.0) - geq
    return terms


def _unbalanced(res, terms, sel):
    """Cases ``sel`` (a mask) whose residual at some node with a linear branch exceeds
    BALANCE_TOL of the node's largest current term: Kirchhoff's law must hold at the end, not
    only the steps be small (a start far off, a vanishing slope)."""
    out = None
    for m, mine in terms.items():
        size = None
        for x in mine:
            ax = np.abs(x[sel]) if isinstance(x, np.ndarray) else abs(x)
            size = ax if size is None else np.maximum(size, ax)
        r = res[m]
        off = (np.abs(r[sel]) if isinstance(r, np.ndarray) else abs(r)) > BALANCE_TOL * size + BALANCE_FLOOR_A
        out = off if out is None else out | off
    return out


def _floating_rows(st: Structure, parts, W, drive, ev, res, a):
    """Residuals and Jacobian rows of the nodes only parts reach, each divided by its largest term;
    the cases where one of them is out of balance (beyond BALANCE_TOL of that term)."""
    unbalanced = None
    for m in st.floating_nodes:
        big_l = None
        c_sum = 0.0
        for d, s in st.node_parts[m]:
            ell, const = ev[d][2], ev[d][3]
            big_l = ell if big_l is None else np.maximum(big_l, ell)
            if nonzero(const):
                c_sum = c_sum + const if s > 0 else c_sum - const
        dm = drive[m]
        tot = c_sum - dm if nonzero(dm) else c_sum
        if nonzero(tot):
            big_l = np.maximum(big_l, np.log(np.abs(tot)))
        big_l = np.where(np.isfinite(big_l), big_l, 0.0)
        e_l = np.exp(np.minimum(-big_l, 709.0))
        acc = tot * e_l if nonzero(tot) else 0.0
        diag = 0.0
        for d, s in st.node_parts[m]:
            i, y, ell, const, aux, den, r = ev[d]
            part, ysc = _scaled(parts[d], W[d], aux, big_l, e_l)
            geq = ysc if den is None else ysc / den
            flow = part + geq * r
            acc = acc + flow if s > 0 else acc - flow
            diag = diag + geq
            other = st.neg[d] if s > 0 else st.pos[d]
            if other >= 0:
                a[(m, other)] = a.get((m, other), 0.0) - geq
        res[m] = acc
        a[(m, m)] = a.get((m, m), 0.0) + diag
        off = np.abs(acc) > BALANCE_TOL
        unbalanced = off if unbalanced is None else unbalanced | off
    return unbalanced


def _node_step(st: Structure, a, res):
    """The node voltages' Newton step from the assembled rows."""
    if st.t == 1:
        piv = a[(0, 0)]
        if isinstance(piv, np.ndarray):
            if piv.min() > 0.0:  # every pivot positive (NaN: False): the plain division
                return [-(res[0] / piv)]
            return [-np.divide(res[0], piv, out=np.zeros_like(piv), where=piv > 0.0)]
        return [-res[0] / piv if piv > 0.0 else 0.0 * res[0]]
    if st.t:
        return st.elim.solve(a, [-x for x in res])
    return []


def _apply(st: Structure, parts, U, W, du, ev, vs, n):
    """Take the step: nodes in full, each part's voltage limited; the largest relative steps."""
    worst = worst_nf = None
    for m in range(st.t):
        dm = du[m]
        if not isinstance(dm, np.ndarray):
            dm = np.full(n, dm)
        U[m] = U[m] + dm
        adv = np.abs(dm)
        mag = np.abs(U[m])
        mag += vs
        rel = adv / mag
        worst_nf = rel if worst_nf is None else np.maximum(worst_nf, rel, out=worst_nf)
        mag += 1.0
        adv /= mag
        worst = adv if worst is None else np.maximum(worst, adv, out=worst)
    for d, (i, y, ell, const, aux, den, r) in enumerate(ev):
        a_, c_ = st.pos[d], st.neg[d]
        dv = (du[a_] if a_ >= 0 else 0.0) - (du[c_] if c_ >= 0 else 0.0)
        step = r + dv
        if den is not None:
            step /= den
        old = W[d]
        new = old + step
        ad = np.abs(step)
        p = parts[d]
        if p.may_limit(ad):
            new = p.limit(new, old)
            ad = np.abs(new - old)
        scale = np.abs(old)
        scale += 1.0
        ad /= scale
        worst = ad if worst is None else np.maximum(worst, ad, out=worst)
        W[d] = new
    return worst, (worst_nf if worst_nf is not None else np.zeros(n))


def newton(rows: Rows, u, w, *, scale=1.0, extra_g=0.0, max_iter=MAX_ITER):
    r"""Newton iteration on the touched nodes' voltages with the parts' voltages eliminated.

    Returns u (T, n), w (D, n), a convergence mask (n,) and the iteration count. Cases
    leave the loop one polishing step after their largest relative step falls below
    :data:`STEP_TOL`, or at once when it falls below :data:`STEP_TINY` (node steps
    relative to 1 + |u| + the case's voltage scale, part steps to 1 + |w|), provided
    every touched node's current balance is within :data:`BALANCE_TOL`; the rows are
    compacted when fewer than half of the cases remain. ``scale`` multiplies the
    stimulus and the EMFs (source stepping); ``extra_g`` adds a conductance across
    every part (gmin stepping).

    Notes
    -----
    Per step, with G_d = y_d / (1 + R_s y_d) each part's conductance seen at its nodes
    (y_d its law's slope) and r_d = V_d - w_d - R_s i_d(w_d) the residual of its own
    equation:

    .. math:: (Y_s + A\,\mathrm{diag}(G)\,A^T)\,\Delta u = -(Y_s u - d\,s - d_e + A (i + G r)),
              \qquad \Delta w_d = (r_d + \Delta V_d) / (1 + R_s y_d)

    (A: each part's node incidence), then w limited (:func:`planner.solve.junction.pnjlim`,
    :func:`planner.solve.varistor.limit`).

    References
    ----------
    C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to network
    analysis", IEEE Transactions on Circuits and Systems 22(6), 504-509, 1975 (nodal
    analysis); L. W. Nagel, *SPICE2: A Computer Program to Simulate Semiconductor
    Circuits*, UC Berkeley ERL-M520, 1975 (Newton's method on junctions, limiting).
    """
    st = rows.st
    t, nd = st.t, len(st.kinds)
    n0 = rows.n
    u_out = np.array(u, dtype=float).reshape(t, n0)
    w_out = np.array(w, dtype=float).reshape(nd, n0)
    ok = np.zeros(n0, dtype=bool)
    if n0 == 0:
        return u_out, w_out, ok, 0
    U = [np.array(r, dtype=float) for r in u_out]
    W = [np.array(r, dtype=float) for r in w_out]
    idx = np.arange(n0)

    def setup(R):
        held = R.held if scale == 1.0 else R.held * scale
        drive = R.drive if scale == 1.0 else [d * scale for d in R.drive]
        parts = [p.with_leak(extra_g) for p in R.parts]
        vs = R.vscale * scale if scale != 1.0 else R.vscale
        return held, drive, parts, vs, Together(R.st, parts, R.n)

    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):  # once for the whole loop
        return _iterate(rows, setup, u_out, w_out, ok, U, W, idx, max_iter)


def _iterate(rows: Rows, setup, u_out, w_out, ok, U, W, idx, max_iter):
    """:func:`newton`'s loop (overflow, invalid values and zero divides go unreported: the limits
    and the fallbacks handle them)."""
    st = rows.st
    t, nd = st.t, len(st.kinds)
    R = rows
    held, drive, parts, vs, together = setup(R)
    pending = np.zeros(rows.n, dtype=bool)
    it = 0
    for it in range(1, max_iter + 1):
        ev = _linearise(st, parts, U, W, held, together)
        res, a = [None] * t, {}
        terms = _anchor_rows(st, R, U, drive, ev, res, a)
        unbalanced = _floating_rows(st, parts, W, drive, ev, res, a)
        du = _node_step(st, a, res)
        worst, worst_nf = _apply(st, parts, U, W, du, ev, vs, R.n)
        finished = pending | ((worst <= STEP_TINY) & (worst_nf <= STEP_TINY))
        pending = (worst <= STEP_TOL) | finished
        if unbalanced is not None:
            finished &= ~unbalanced
            pending &= ~unbalanced
        if terms and pending.any():  # the balance at the other nodes, only where a case may finish
            sel = np.nonzero(pending)[0]
            off = _unbalanced(res, terms, sel)
            if off.any():
                bad = sel[off]
                finished[bad] = False
                pending[bad] = False
        if finished.any():
            done = idx[finished]
            ok[done] = True
            for m in range(t):
                u_out[m, done] = U[m][finished]
            for d in range(nd):
                w_out[d, done] = W[d][finished]
        keep = ~finished
        if not keep.any():
            break
        if keep.sum() < 0.5 * len(keep):  # compact the rows
            idx, pending = idx[keep], pending[keep]
            U = [r[keep] for r in U]
            W = [r[keep] for r in W]
            R = R.subset(keep)
            held, drive, parts, vs, together = setup(R)
    rest = ~ok[idx]
    if rest.any():
        for m in range(t):
            u_out[m, idx[rest]] = U[m][rest]
        for d in range(nd):
            w_out[d, idx[rest]] = W[d][rest]
    ok &= np.all(np.isfinite(u_out), axis=0) & np.all(np.isfinite(w_out), axis=0)
    return u_out, w_out, ok, it
