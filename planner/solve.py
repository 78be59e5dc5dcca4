"""Batched nonlinear DC solver: modified nodal analysis reduced to the diode ports.

A compiled switch state (:class:`Circuit`) is a set of linear branches (resistors,
the movement's coil, fuses, contacts, the source resistance) and a few diode
*ports*: the node pairs that diodes connect (antiparallel clamp pairs share one
port). For a batch of parameter sets the linear part is solved once per set: the
node-voltage response to a unit stimulus and to a unit current through each port.
The port voltages then obey a small system (one equation per port), and each
diode's junction voltage one more (its series resistance); Newton's method solves
them for every stimulus at once, the junction unknowns eliminated inside each
step, with junction-voltage limiting; source stepping and gmin stepping take
over for the cases that do not converge.

Speed (see ``docs/performance.md``): the cases run through Newton in blocks of
:data:`NEWTON_BLOCK`, sized so that a block's rows stay in the processor cache;
a parameter that is the same for every case is a number, not a row; big batches
start from a solved subset (:func:`solve` explains which); and the result is
lazy: node voltages and branch currents are formed only when asked for, and
only for the nodes and branches asked for.

Shapes: ``P`` parameter sets (tolerance samples x temperatures), ``S`` stimuli per
set, ``N`` nodes, ``L`` linear branches, ``K`` ports, ``D`` diodes.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np

from .errors import SolveError

log = logging.getLogger(__name__)

#: Boltzmann constant [J/K], exact (SI 2019).
BOLTZMANN = 1.380649e-23
#: Elementary charge [C], exact (SI 2019).
CHARGE = 1.602176634e-19

#: Auxiliary conductance across every diode port [S]. It is stamped in the linear
#: part and subtracted again from the diode law, so the element equations are
#: exactly those of the contract; it only splits each diode's current between the
#: two parts of the computation. It keeps the linear part nonsingular where a node
#: hangs on junctions only (the middle of a diode stack) and keeps the port
#: impedances moderate (at most 1 Mohm), so that the reduced equations are not
#: swamped by round-off.
G_AUX = 1e-6

#: Exponent beyond which the junction law is continued linearly (only ever reached
#: by intermediate Newton iterates; a true operating point is far below).
_EXP_MAX = 80.0

MAX_ITER = 200
#: A case is converged one Newton step after its step falls below this [V, relative]:
#: Newton converges quadratically there, so the extra step takes the error from
#: about 1e-10 V to round-off (about 1e-16 V).
STEP_TOL = 1e-10
#: A case whose step falls below this [V, relative], also against the size of its port
#: voltages and drives alone, is converged at once: after a step of 1e-12 the quadratic
#: error is far below round-off, and even a linearly converging case is within STEP_TOL.
STEP_TINY = 1e-12
#: Upper bound on floats held by one chunk of the linear solve (memory limit).
CHUNK_FLOATS = 4_000_000
#: Upper bound on floats in the results of one call (what :class:`Solution` holds for
#: every case, and the full node-voltage and branch-current arrays when they are asked
#: for; about 0.8 GB); a larger batch is refused with a clear error instead of
#: exhausting the memory.
MAX_RESULT_FLOATS = 100_000_000
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


@dataclass(frozen=True)
class Circuit:
    """A switch state compiled to flat index arrays (built by :func:`planner.network.compile_state`).

    Node 0 is the reference (the input's minus terminal); ``held``, when set, is the
    index of the node a voltage stimulus holds at the stimulus value; a current
    stimulus enters at ``inject`` and leaves at node 0. Port ``k`` joins nodes
    ``port_a[k]`` and ``port_c[k]``; diode ``d`` sits on port ``diode_port[d]``
    with its anode on ``port_a`` when ``diode_sign[d]`` is +1, on ``port_c`` when -1.
    """

    name: str
    node_names: tuple
    node_index: dict
    branches: tuple
    lin_a: np.ndarray
    lin_b: np.ndarray
    diodes: tuple
    diode_port: np.ndarray
    diode_sign: np.ndarray
    port_a: np.ndarray
    port_c: np.ndarray
    source_kind: str
    held: int | None
    inject: int

    @property
    def n_nodes(self) -> int:
        return len(self.node_names)

    @property
    def n_ports(self) -> int:
        return len(self.port_a)


@dataclass(frozen=True)
class Junctions:
    """Diode parameters per parameter set and diode, shapes (P, D) or (D,).

    Attributes
    ----------
    i_s : ndarray
        Saturation current at the case's temperature [A].
    nvt : ndarray
        Emission coefficient times thermal voltage [V].
    bv : ndarray
        Breakdown voltage [V] (``inf`` for none).
    ibv : ndarray
        Current at the breakdown voltage [A].
    r_s : ndarray
        Series resistance [ohm] (0 for none).
    g_p : ndarray
        Leakage conductance across the junction [S] (0 for none).
    """

    i_s: np.ndarray
    nvt: np.ndarray
    bv: np.ndarray
    ibv: np.ndarray
    r_s: np.ndarray
    g_p: np.ndarray

    def map(self, fn) -> "Junctions":
        return Junctions(*(fn(x) for x in (self.i_s, self.nvt, self.bv, self.ibv, self.r_s, self.g_p)))


class Solution:
    """Operating points of a batch (lazy: node voltages and branch currents on demand).

    Attributes
    ----------
    shape : tuple
        ``(P, S)``.
    v_node : ndarray, shape (P, S, N)
        Node voltages [V] against the input's minus terminal (formed on first use).
    i_branch : ndarray, shape (P, S, L)
        Current in each linear branch from its first to its second node [A] (formed
        on first use).
    v_junction : ndarray, shape (P, S, D)
        Junction voltage of each diode [V] (terminal voltage less R_s drop).
    i_diode : ndarray, shape (P, S, D)
        Terminal current of each diode, anode to cathode [A] (junction plus leakage).
    iterations : int
        Largest Newton iteration count used.
    fallbacks : dict
        How many cases needed source stepping or gmin stepping.

    Notes
    -----
    Node voltages are the superposition of the linear part's responses:

    .. math:: v_n = s\\,x_{n,0} + \\sum_m x_{n,m}\\, j_m

    with ``s`` the stimulus, ``x`` the responses to a unit stimulus and to a unit
    current into each node that a port touches, and ``j_m`` the net current the
    diodes feed into node m (summed before the superposition, so that the large
    and opposite currents of diodes in series cancel exactly where they meet, not
    after multiplication by large responses); a branch current is
    the difference of its nodes' voltages over its resistance. :meth:`node_voltage`
    and :meth:`branch_current` form one column only; the full arrays are formed (and
    kept) on first access to ``v_node`` or ``i_branch``.
    """

    def __init__(self, circuit: Circuit, stim, x, r, j_node, v_junction, i_diode, iterations=0, fallbacks=None):
        self.circuit = circuit
        self._stim = stim  # (P, S)
        self._x = x  # (P, N, 1 + T): responses to the stimulus and to a unit current into each port node
        self._r = r  # (P, L)
        self._j = j_node  # (P, S, T): current the diodes (and auxiliary conductances) feed into each port node
        self.v_junction = v_junction
        self.i_diode = i_diode
        self.iterations = int(iterations)
        self.fallbacks = dict(fallbacks or {"source_stepping": 0, "gmin_stepping": 0})
        self._nodes: dict = {}
        self._branch: dict = {}
        self._v_node = None
        self._i_branch = None

    @property
    def shape(self) -> tuple:
        return self._stim.shape

    def node_voltage(self, i: int) -> np.ndarray:
        """Voltage of node ``i`` [V], shape (P, S)."""
        i = int(i)
        if self._v_node is not None:
            return self._v_node[:, :, i]
        v = self._nodes.get(i)
        if v is None:
            x = self._x
            v = self._stim * x[:, i, 0][:, None]
            for k in range(x.shape[2] - 1):
                v = v + x[:, i, 1 + k][:, None] * self._j[:, :, k]
            self._nodes[i] = v
        return v

    def branch_current(self, j: int) -> np.ndarray:
        """Current of linear branch ``j`` from its first to its second node [A], shape (P, S)."""
        j = int(j)
        if self._i_branch is not None:
            return self._i_branch[:, :, j]
        i = self._branch.get(j)
        if i is None:
            c = self.circuit
            i = (self.node_voltage(c.lin_a[j]) - self.node_voltage(c.lin_b[j])) / self._r[:, j][:, None]
            self._branch[j] = i
        return i

    @property
    def v_node(self) -> np.ndarray:
        if self._v_node is None:
            x = self._x
            _check_batch(self.circuit.name, self._stim.size, self._stim.size * x.shape[1])
            v = self._stim[:, :, None] * x[:, None, :, 0]
            for k in range(x.shape[2] - 1):
                v = v + x[:, None, :, 1 + k] * self._j[:, :, k, None]
            self._v_node = v
        return self._v_node

    @property
    def i_branch(self) -> np.ndarray:
        if self._i_branch is None:
            c = self.circuit
            _check_batch(c.name, self._stim.size, self._stim.size * (c.n_nodes + len(c.branches)))
            v = self.v_node
            self._i_branch = (v[:, :, c.lin_a] - v[:, :, c.lin_b]) / self._r[:, None, :]
        return self._i_branch


def _pnjlim(v_new, v_old, nvt, vcrit):
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
    zc = np.clip(z, -700.0, 1e12)
    w = np.where(zc < 1.0, np.exp(np.minimum(zc, 1.0)), zc - np.log(np.maximum(zc, 1.0)))
    w = np.where((zc >= 1.0) & (zc < 3.0), 0.5 * (zc + 1.0), w)
    for _ in range(3):
        r = zc - w - np.log(w)
        wp1 = w + 1.0
        t = 2.0 * wp1 * (wp1 + 2.0 * r / 3.0)
        w = w * (1.0 + r / wp1 * (t - r) / (t - 2.0 * r))
    w = np.where(z < -700.0, np.exp(np.maximum(z, -800.0)), w)
    return np.where(z > 1e12, z - np.log(np.maximum(z, 1.0)), w)


def _single_diode(v_oc, r, i_s, nvt):
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
    arg = np.log(i_s * r / nvt) + (v_oc + i_s * r) / nvt
    exact = (nvt / r) * wright_omega(arg) - i_s
    # near zero the difference above cancels to rounding residue; there the junction's
    # small-signal conductance I_s / nV_t in series with R (relative error ~ V / nV_t) keeps
    # the current proportional to V, so that a tiny stimulus gets a tiny start
    small = np.abs(v_oc) < 1e-4 * nvt
    return np.where(small, v_oc * i_s / (nvt + i_s * r), exact)


# --- the reduced problem, one row per port or diode ----------------------------------------------

_FIELDS = ("i_s", "nvt", "bv", "ibv", "r_s", "g_p")


def _column(a):
    """A float when every parameter set has the same value, else the contiguous column."""
    a = np.asarray(a, dtype=float)
    if a.size == 0 or np.all(a == a[0]):
        return float(a[0]) if a.size else 0.0
    return np.ascontiguousarray(a)


def _take(a, idx):
    """Rows of a per-case array; a float stands for every case."""
    return a[idx] if isinstance(a, np.ndarray) else a


def _nonzero(a) -> bool:
    return isinstance(a, np.ndarray) or a != 0.0


class _Rows:
    """The reduced equations of ``n`` cases: one row (or one float) per port, port pair or diode.

    ``drive[q]``: open-circuit voltage of port q; ``z[q][j]``: voltage of port q per
    unit current out through port j; ``y``: with three or more ports, the linear
    part's admittance between the free nodes the ports touch (``inc``: current into
    each such node per unit current through each port), for the Newton step's
    symmetric form; then the junction parameters per diode and their derived rows.
    """

    def __init__(self, port, sign, drive, z, y, inc, params):
        self.port, self.sign = port, sign
        self.k, self.nd = len(drive), len(port)
        self.n = len(drive[0]) if drive else 0
        self.drive, self.z, self.y, self.inc = drive, z, y, inc
        t = inc.shape[0]
        self.port_nodes = [[(m, float(inc[m, q])) for m in range(t) if inc[m, q] != 0.0] for q in range(self.k)]
        self.node_ports = [[(q, float(inc[m, q])) for q in range(self.k) if inc[m, q] != 0.0] for m in range(t)]
        self.params = params
        self.i_s, self.nvt, self.bv, self.ibv, self.r_s, self.g_p = (params[f] for f in _FIELDS)
        self.inv_nvt = [1.0 / v for v in self.nvt]
        self.isv = [a * b for a, b in zip(self.i_s, self.inv_nvt)]
        self.two_nvt = [2.0 * v for v in self.nvt]
        self.vcrit = [v * np.log(v / (np.sqrt(2.0) * s)) for v, s in zip(self.nvt, self.i_s)]
        self.has_bv = [bool(np.any(np.isfinite(b))) for b in self.bv]
        with np.errstate(divide="ignore"):
            self.vcr_bv = [v * np.log(v / (np.sqrt(2.0) * ib)) if h else 0.0
                           for v, ib, h in zip(self.nvt, self.ibv, self.has_bv)]
        self.groups = [[d for d in range(self.nd) if port[d] == q] for q in range(self.k)]

    def subset(self, idx) -> "_Rows":
        z = [[_take(a, idx) for a in row] for row in self.z]
        y = None if self.y is None else [[_take(a, idx) for a in row] for row in self.y]
        params = {f: [_take(a, idx) for a in v] for f, v in self.params.items()}
        return _Rows(self.port, self.sign, [d[idx] for d in self.drive], z, y, self.inc, params)


class _Problem:
    """The reduced port equations of a whole batch: P parameter sets x S stimuli.

    Cases are numbered ``p * S + s``. :meth:`rows` gathers the rows of any set of
    cases; the per-set quantities (port responses, junction parameters) are kept
    per parameter set, not per case.
    """

    def __init__(self, circuit: Circuit, x, inc, touched, jn: Junctions, stim, r):
        self.circuit = circuit
        self.inc = inc
        self.stim = stim
        self.r = r
        self.jn = jn
        self.p, self.s = stim.shape
        k = circuit.n_ports
        self.k, self.nd = k, len(circuit.diodes)
        self.u = np.ascontiguousarray(x[:, circuit.port_a, 0] - x[:, circuit.port_c, 0])  # (P, K)
        self.zd = np.ascontiguousarray((x[:, circuit.port_a, 1:] - x[:, circuit.port_c, 1:]) @ inc)  # (P, K, K)
        self.yd = None
        if k >= 3 and len(touched):
            # admittance between the port nodes: the inverse of their (symmetric positive
            # definite) impedance matrix; only the Newton step's direction depends on it
            w = x[:, touched, 1:]
            yd = np.linalg.inv(0.5 * (w + np.swapaxes(w, 1, 2)))
            self.yd = 0.5 * (yd + np.swapaxes(yd, 1, 2))
        self.port = [int(v) for v in circuit.diode_port]
        self.sign = [float(v) for v in circuit.diode_sign]
        self.cols = {f: [_column(getattr(jn, f)[:, d]) for d in range(self.nd)] for f in _FIELDS}
        self.iterations = 0
        self.fallbacks = {"source_stepping": 0, "gmin_stepping": 0}

    def rows(self, cases) -> _Rows:
        s_count = self.s
        p = cases // s_count
        stim = self.stim[p, cases - p * s_count]
        k = self.k
        drive = [stim * self.u[p, q] for q in range(k)]
        z = [[self.zd[p, q, j] for j in range(k)] for q in range(k)]
        t = self.inc.shape[0]
        y = None if self.yd is None else [[self.yd[p, m, j] for j in range(t)] for m in range(t)]
        params = {f: [_take(c, p) for c in cols] for f, cols in self.cols.items()}
        return _Rows(self.port, self.sign, drive, z, y, self.inc, params)

    # --- strategies ----------------------------------------------------------------------------
    def solve(self):
        """Every case: junction voltages (P*S, D), diode currents (P*S, D) and port-node currents (P*S, T)."""
        p, s = self.p, self.s
        b = p * s
        if p > 1 and b >= WARM_MIN_CASES and np.all(self.stim == self.stim[:1]) and self.close_sets():
            # one representative parameter set first; every set starts from it
            rep = self.representative()
            v_r, vj_r = self.solve_sweep(np.array([rep]))
            return self.solve_cases(np.arange(b), lambda c: (v_r[c % s].T, vj_r[c % s].T), finish=True)
        if s >= SWEEP_MIN:
            return self.solve_sweep(np.arange(p), finish=True)
        return self.solve_cases(np.arange(b), finish=True)

    def close_sets(self) -> bool:
        """Whether the parameter sets are close enough for one of them to start all the others.

        Within a factor WARM_SPREAD in every resistance and in every saturation current,
        and within 10 K of temperature (n V_t within 3.5 %): tolerance draws and corners
        are, a sweep of source impedances or of the ambient over its full range is not
        (there a warm start would cost more iterations than it saves).
        """
        r = self.r
        if np.any(r.max(axis=0) > WARM_SPREAD * r.min(axis=0)):
            return False
        if self.nd:
            i_s, nvt = self.jn.i_s, self.jn.nvt
            if np.any(i_s.max(axis=0) > WARM_SPREAD * i_s.min(axis=0)) or np.any(nvt.max(axis=0) > 1.035 * nvt.min(axis=0)):
                return False
        return True

    def representative(self) -> int:
        """The parameter set nearest the median of all of them (log resistances, log I_s, n V_t)."""
        feats = [np.log(self.r)]
        if self.nd:
            feats += [np.log(np.maximum(self.jn.i_s, 1e-300)), self.jn.nvt / np.maximum(self.jn.nvt.mean(), 1e-300)]
        f = np.concatenate(feats, axis=1)
        dev = f - np.median(f, axis=0)
        scale = np.std(f, axis=0) + 1e-300
        return int(np.argmin(np.sum((dev / scale) ** 2, axis=1)))

    def solve_sweep(self, sets, finish=False):
        """Every stimulus of the given parameter sets, shapes (len(sets) * S, K) and (.., D).

        With at least :data:`SWEEP_MIN` stimuli, every :data:`SWEEP_STRIDE`-th stimulus in
        ascending order (and the last) is solved first; the others start from the
        straight-line interpolation of its port and junction voltages in the stimulus.
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
        v_c, vj_c = self.solve_cases((base + coarse).ravel())
        m, c = coarse.shape
        v_c = v_c.reshape(m, c, -1)
        vj_c = vj_c.reshape(m, c, -1)
        xs = np.take_along_axis(stim, order, axis=1)  # sorted stimuli
        seg = np.minimum(np.searchsorted(ranks, np.arange(s), side="right") - 1, c - 2)  # (S,) by rank
        lo, hi = ranks[seg], ranks[seg + 1]
        x_lo, x_hi = xs[:, lo], xs[:, hi]
        span = x_hi - x_lo
        w = np.where(span > 0, (xs - x_lo) / np.where(span > 0, span, 1.0), 0.0)[:, :, None]  # (M, S, 1)
        rows = np.arange(m)[:, None]
        v_s = v_c[rows, seg[None, :]] * (1.0 - w) + v_c[rows, seg[None, :] + 1] * w  # by rank
        vj_s = vj_c[rows, seg[None, :]] * (1.0 - w) + vj_c[rows, seg[None, :] + 1] * w
        v0 = np.empty_like(v_s)
        vj0 = np.empty_like(vj_s)
        np.put_along_axis(v0, order[:, :, None], v_s, axis=1)
        np.put_along_axis(vj0, order[:, :, None], vj_s, axis=1)
        v0 = v0.reshape(m * s, -1)
        vj0 = vj0.reshape(m * s, -1)
        cases = (base + np.arange(s)).ravel()
        return self.solve_cases(cases, lambda c: (v0[_local(c, sets, s)].T, vj0[_local(c, sets, s)].T), finish)

    def solve_cases(self, cases, start=None, finish=False):
        """Solve the given cases block by block; ``start(cases)`` gives warm starting rows.

        Returns port voltages (n, K) and junction voltages (n, D); with ``finish``,
        junction voltages, diode currents (n, D) and port-node currents (n, T).
        """
        n = len(cases)
        v_out = np.empty((n, self.k))
        vj_out = np.empty((n, self.nd))
        if finish:
            i_out = np.empty((n, self.nd))
            j_out = np.empty((n, self.inc.shape[0]))
        for lo in range(0, n, NEWTON_BLOCK):
            blk = cases[lo:lo + NEWTON_BLOCK]
            rows = self.rows(blk)
            if start is not None:
                v0, vj0 = _zero_where_undriven(rows, *start(blk))
                v, vj, ok, it = _newton(rows, v0, vj0, max_iter=WARM_MAX_ITER)
                self.iterations = max(self.iterations, it)
                if not ok.all():
                    bad = np.nonzero(~ok)[0]
                    sub = rows.subset(bad)
                    v2, vj2 = _initial(sub)
                    v2, vj2, ok2, it = _newton(sub, v2, vj2)
                    self.iterations = max(self.iterations, it)
                    v[:, bad], vj[:, bad], ok[bad] = v2, vj2, ok2
            else:
                v, vj = _initial(rows)
                v, vj, ok, it = _newton(rows, v, vj)
                self.iterations = max(self.iterations, it)
            if not ok.all():
                v, vj, ok = self._fallbacks(rows, v, vj, ok)
            if not ok.all():
                bad = int(blk[np.nonzero(~ok)[0][0]])
                raise SolveError(
                    f"{self.circuit.name}: no operating point found for stimulus "
                    f"{self.stim.reshape(-1)[bad]:g} (parameter set {bad // self.s}) after Newton, "
                    "source stepping and gmin stepping")
            vj_out[lo:lo + NEWTON_BLOCK] = vj.T
            if finish:
                i_d, j_node = self._currents(rows, v, vj)
                i_out[lo:lo + NEWTON_BLOCK] = i_d.T
                j_out[lo:lo + NEWTON_BLOCK] = j_node.T
            else:
                v_out[lo:lo + NEWTON_BLOCK] = v.T
        if finish:
            return vj_out, i_out, j_out
        return v_out, vj_out

    def _fallbacks(self, rows: _Rows, v, vj, ok):
        """Source stepping, then gmin stepping, on the cases Newton left unconverged."""
        idx = np.nonzero(~ok)[0]
        self.fallbacks["source_stepping"] += len(idx)
        log.info("%s: source stepping on %d cases", self.circuit.name, len(idx))
        sub = rows.subset(idx)
        vs, vjs = np.zeros((sub.k, len(idx))), np.zeros((sub.nd, len(idx)))
        good = np.zeros(len(idx), dtype=bool)
        for alpha in np.linspace(0.02, 1.0, 50):
            vs, vjs, good, _ = _newton(sub, vs, vjs, scale=alpha)
        if not good.all():
            sel = np.nonzero(~good)[0]
            self.fallbacks["gmin_stepping"] += len(sel)
            log.info("%s: gmin stepping on %d cases", self.circuit.name, len(sel))
            sub2 = sub.subset(sel)
            vg, vjg = np.zeros((sub2.k, len(sel))), np.zeros((sub2.nd, len(sel)))
            g_ok = np.zeros(len(sel), dtype=bool)
            for gm in [1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 0.0]:
                vg, vjg, g_ok, _ = _newton(sub2, vg, vjg, extra_g=gm)
            vs[:, sel], vjs[:, sel] = vg, vjg
            good[sel] = g_ok
        v, vj, ok = v.copy(), vj.copy(), ok.copy()
        v[:, idx], vj[:, idx], ok[idx] = vs, vjs, good
        return v, vj, ok

    def _currents(self, rows: _Rows, v, vj):
        """Exact diode terminal currents (D, n) and the net current into each port node (T, n).

        The contract's junction law with ``expm1`` (no cancellation near zero) and
        the exponential breakdown term, continued linearly beyond an exponent of 80
        (reached only by Newton iterates), plus the leakage; what the linear part
        sees at a port is the diodes' current less the auxiliary conductance's.

        .. math:: i = I_s (e^{v/nV_t} - 1) - I_{BV} e^{-(v + BV)/nV_t} + G_p v
        """
        n = rows.n
        i_d = np.empty((rows.nd, n))
        i_port = [v[q] * (-G_AUX) for q in range(rows.k)]
        for d in range(rows.nd):
            vjd = vj[d]
            x = vjd * rows.inv_nvt[d]
            xe = np.minimum(x, _EXP_MAX)
            em = np.expm1(xe)
            i = em + (em + 1.0) * (x - xe)
            i *= rows.i_s[d]
            if rows.has_bv[d]:
                w = (vjd + rows.bv[d]) * (-rows.inv_nvt[d])
                we = np.minimum(w, _EXP_MAX)
                i -= rows.ibv[d] * np.exp(we) * (1.0 + np.fmax(w - we, 0.0))  # no BV: -inf - -inf -> 0
            if _nonzero(rows.g_p[d]):
                i += rows.g_p[d] * vjd
            i_d[d] = i
            q = rows.port[d]
            i_port[q] = i_port[q] + i if rows.sign[d] > 0 else i_port[q] - i
        inc = self.inc
        j_node = np.zeros((inc.shape[0], n))
        for m in range(inc.shape[0]):
            for q in range(rows.k):
                if inc[m, q] > 0:
                    j_node[m] += i_port[q]
                elif inc[m, q] < 0:
                    j_node[m] -= i_port[q]
        return i_d, j_node

def _local(cases, sets, s):
    """Position of global cases among the cases of the given parameter sets (in order)."""
    p = cases // s
    if len(sets) == 1:
        return cases - int(sets[0]) * s
    where = np.searchsorted(sets, p)
    return where * s + (cases - p * s)


def _initial(rows: _Rows, sweeps: int = 3):
    """A starting point: each port behind its Thevenin equivalent, solved exactly.

    The most forward diode of each port is solved exactly behind the port's
    Thevenin resistance (Wright omega); with several ports, a few Gauss-Seidel
    sweeps add the other ports' currents to each port's open-circuit voltage.
    Returns port rows (K, n) and junction rows (D, n).
    """
    k, nd, n = rows.k, rows.nd, rows.n
    z, drive, s = rows.z, rows.drive, rows.sign
    with np.errstate(all="ignore"):
        zself = [np.broadcast_to(-z[q][q], (n,)) for q in range(k)]  # includes the auxiliary conductance
        gth = [1.0 / np.maximum(zs, 1e-300) - G_AUX for zs in zself]
        ok = [g > 1e-15 for g in gth]
        r_th = [np.where(o, 1.0 / np.where(o, g, 1.0), 1e15) for o, g in zip(ok, gth)]
        ratio = [np.where(o, rt / np.maximum(zs, 1e-300), 1.0) for o, rt, zs in zip(ok, r_th, zself)]
        i_port = [np.zeros(n) for _ in range(k)]
        v_port = [np.array(d, dtype=float) for d in drive]
        i_d = [np.zeros(n) for _ in range(nd)]
        for _ in range(sweeps if k > 1 else 1):
            for q in range(k):
                coupled = drive[q]
                for j in range(k):
                    if j != q:
                        coupled = coupled + z[q][j] * i_port[j]
                v_oc = coupled * ratio[q]
                best = np.full(n, -np.inf)
                for d in rows.groups[q]:
                    i = _single_diode(s[d] * v_oc, r_th[q] + rows.r_s[d], rows.i_s[d], rows.nvt[d])
                    i = np.where(np.isfinite(i), i, 0.0)
                    i_d[d] = i
                    better = i > best  # the port voltage follows the most forward diode
                    v_port[q] = np.where(better, v_oc - s[d] * r_th[q] * i, v_port[q])
                    best = np.where(better, i, best)
                total = np.zeros(n)
                for d in rows.groups[q]:
                    total = total + s[d] * i_d[d]
                i_port[q] = total
        vj = []
        for d in range(nd):
            vd = s[d] * v_port[rows.port[d]]
            x = np.where(i_d[d] > 0, vd - rows.r_s[d] * np.maximum(i_d[d], 0.0), vd)
            x = np.minimum(x, np.maximum(rows.vcrit[d], 1.5))
            if rows.has_bv[d]:
                x = np.maximum(x, -rows.bv[d])
            vj.append(np.where(np.isfinite(x), x, 0.0))
        v = [np.where(np.isfinite(x), x, 0.0) for x in v_port]
    return _zero_where_undriven(rows, np.array(v).reshape(k, n), np.array(vj).reshape(nd, n))


def _zero_where_undriven(rows: _Rows, v, vj):
    """Start cases without drive (a zero stimulus) at exactly zero, their exact solution
    without breakdown terms (the Wright-omega start leaves rounding residue there)."""
    undriven = np.ones(rows.n, dtype=bool)
    for d in rows.drive:
        undriven &= d == 0.0
    if undriven.any():
        v = np.where(undriven, 0.0, v)
        vj = np.where(undriven, 0.0, vj)
    return v, vj


def _node_step(rows: _Rows, e, gq):
    r"""The Newton step of three or more ports from the port residuals, in node form.

    Notes
    -----
    The port system :math:`(1 - Z G)\,\Delta V = e` (``G`` the ports' linearised
    conductances) is singular-prone in this form when ports form a loop (stacked
    clamp diodes: then ``Z`` itself is singular). With the ports' node incidence
    ``A`` and the linear part's impedance ``W`` between the port nodes,
    :math:`Z = -A^T W A`; substituting :math:`u = W A G \Delta V` gives

    .. math:: (W^{-1} + A G A^T)\,u = A G e, \qquad \Delta V = e - A^T u,

    whose matrix is the nodal admittance of the linear part plus the diodes'
    conductances: symmetric positive definite, solved by elimination without
    pivoting. The residual ``e`` is the port form's, so the solution is the same.
    """
    k = rows.k
    y = rows.y
    if not y:
        return e
    t = len(y)
    ge = [gq[q] * e[q] for q in range(k)]
    a = [[y[m][j] if j >= m else None for j in range(t)] for m in range(t)]
    for q in range(k):
        nodes = rows.port_nodes[q]
        for m, _ in nodes:
            a[m][m] = a[m][m] + gq[q]
        if len(nodes) == 2:
            (m1, s1), (m2, s2) = nodes
            lo, hi = min(m1, m2), max(m1, m2)
            a[lo][hi] = a[lo][hi] + (s1 * s2) * gq[q]
    rhs = []
    for m in range(t):
        acc = None
        for q, sq in rows.node_ports[m]:
            term = ge[q] if sq > 0 else -ge[q]
            acc = term if acc is None else acc + term
        rhs.append(acc if acc is not None else np.zeros_like(e[0]))
    u = _sym_solve(a, rhs, t)
    dv = []
    for q in range(k):
        acc = e[q]
        for m, sm in rows.port_nodes[q]:
            acc = acc - u[m] if sm > 0 else acc + u[m]
        dv.append(acc)
    return dv


def _sym_solve(a, b, k):
    """Solve symmetric positive definite systems, one per case, by elimination over rows.

    ``a[i][j]`` (j >= i) and ``b[i]`` are rows; no pivoting is needed for a symmetric
    positive definite matrix.
    """
    a = [list(r) for r in a]
    b = list(b)
    for c in range(k):
        piv = a[c][c]
        # a zero pivot (a direction the step cannot see): no step along it, as a pseudo-inverse would
        inv = np.divide(1.0, piv, out=np.zeros_like(piv), where=piv > 0.0)
        a[c][c] = inv
        for i in range(c + 1, k):
            f = a[c][i] * inv
            for j in range(i, k):
                a[i][j] = a[i][j] - f * a[c][j]
            b[i] = b[i] - f * b[c]
    x = [None] * k
    for i in range(k - 1, -1, -1):
        acc = b[i]
        for j in range(i + 1, k):
            acc = acc - a[i][j] * x[j]
        x[i] = acc * a[i][i]
    return x


def _newton(rows: _Rows, v, vj, *, scale=1.0, extra_g=0.0, max_iter=MAX_ITER):
    """Newton iteration on port voltages with the junction voltages eliminated.

    Unknowns: port voltages V (K rows) and junction voltages v_j (D rows). Equations:
    ``V = scale * drive + Z I(V)`` and ``sign V = v_j + R_s i_d(v_j)`` per diode,
    with ``i_d = I_s(e^{v_j/nV_t} - 1) + G_p v_j`` (+ ``extra_g v_j`` in gmin stepping).
    Each step linearises every diode, eliminates its junction voltage into an
    equivalent conductance at its port, solves the K x K port system, then updates
    the junction voltages with limiting. Cases leave the loop one polishing step
    after their largest relative step falls below :data:`STEP_TOL`, or at once
    when it falls below :data:`STEP_TINY` (port steps relative to 1 + |V| +
    |drive|, junction steps to 1 + |v_j|). Returns V (K, n), v_j (D, n), a
    convergence mask (n,) and the iteration count.

    Notes
    -----
    One row per port or diode, so that every operation is a vector operation over
    the cases; the rows are compacted when fewer than half of the cases remain.
    With one or two ports the port system :math:`(1 - Z G) \\Delta V = e` is solved
    in closed form; with three or more in node form (:func:`_node_step`).
    """
    n0 = v.shape[1]
    k, nd = rows.k, rows.nd
    port, sign = rows.port, rows.sign
    v_out = np.array(v, dtype=float)
    vj_out = np.array(vj, dtype=float)
    ok = np.zeros(n0, dtype=bool)
    if n0 == 0:
        return v_out, vj_out, ok, 0
    V = [np.array(r, dtype=float) for r in v]
    VJ = [np.array(r, dtype=float) for r in vj]
    idx = np.arange(n0)
    R = rows

    def setup(R):
        drive = R.drive if scale == 1.0 else [d * scale for d in R.drive]
        abs_drive = [np.abs(d) for d in drive]
        gp = [g + extra_g for g in R.g_p]
        return drive, abs_drive, gp

    drive, abs_drive, gp = setup(R)
    pending = np.zeros(n0, dtype=bool)
    it = 0
    for it in range(1, max_iter + 1):
        ip = [V[q] * (-G_AUX) for q in range(k)]
        gq = [-G_AUX] * k
        cq = [0.0] * k
        rr = [None] * nd
        dens = [None] * nd
        for d in range(nd):
            q = port[d]
            vjd = VJ[d]
            x = vjd * R.inv_nvt[d]
            if x.max() > _EXP_MAX:
                xe = np.minimum(x, _EXP_MAX)
                em = np.expm1(xe)
                ex = em + 1.0
                i = em + ex * (x - xe)
            else:
                i = np.expm1(x)  # e^x - 1 without cancellation near 0
                ex = i + 1.0
            y = ex * R.isv[d]
            i *= R.i_s[d]
            if R.has_bv[d]:
                w = (vjd + R.bv[d]) * (-R.inv_nvt[d])
                we = np.minimum(w, _EXP_MAX)
                ew = np.exp(we)
                i -= R.ibv[d] * ew * (1.0 + np.fmax(w - we, 0.0))  # no BV: -inf - -inf -> 0
                y += ew * (R.ibv[d] * R.inv_nvt[d])
            g = gp[d]
            if _nonzero(g):
                i += g * vjd
                y += g
            vq = V[q] if sign[d] > 0 else -V[q]
            rs = R.r_s[d]
            if _nonzero(rs):
                den = rs * y
                den += 1.0
                geq = y / den
                r = vq - vjd
                r -= rs * i
            else:
                den = None
                geq = y
                r = vq - vjd
            if sign[d] > 0:
                ip[q] = ip[q] + i
                cq[q] = cq[q] + geq * r
            else:
                ip[q] = ip[q] - i
                cq[q] = cq[q] - geq * r
            gq[q] = gq[q] + geq
            rr[d] = r
            dens[d] = den
        ic = [ip[q] + cq[q] for q in range(k)]
        Z = R.z
        # port system: (I - Z diag(g)) dV = -(V - drive - Z i) + Z c
        if k == 1:
            dV = [(drive[0] - V[0] + Z[0][0] * ic[0]) / (1.0 - Z[0][0] * gq[0])]
        elif k == 2:
            rhs0 = drive[0] - V[0] + Z[0][0] * ic[0] + Z[0][1] * ic[1]
            rhs1 = drive[1] - V[1] + Z[1][0] * ic[0] + Z[1][1] * ic[1]
            a00, a01 = 1.0 - Z[0][0] * gq[0], -Z[0][1] * gq[1]
            a10, a11 = -Z[1][0] * gq[0], 1.0 - Z[1][1] * gq[1]
            det = a00 * a11 - a01 * a10
            dV = [(rhs0 * a11 - a01 * rhs1) / det, (a00 * rhs1 - rhs0 * a10) / det]
        else:
            e = []
            for q in range(k):
                acc = drive[q] - V[q]
                for j in range(k):
                    acc = acc + Z[q][j] * ic[j]
                e.append(acc)
            dV = _node_step(R, e, gq)
        # the largest step of each case, relative to its scale
        worst = None
        worst_nf = None  # port steps relative to |V| + |drive| alone, without the floor of 1 V
        for q in range(k):
            V[q] += dV[q]
            adv = np.abs(dV[q])
            mag = np.abs(V[q])
            mag += abs_drive[q]
            rel = adv / mag
            worst_nf = rel if worst_nf is None else np.maximum(worst_nf, rel, out=worst_nf)
            mag += 1.0
            adv /= mag
            worst = adv if worst is None else np.maximum(worst, adv, out=worst)
        for d in range(nd):
            q = port[d]
            step = dV[q] + rr[d] if sign[d] > 0 else rr[d] - dV[q]
            if dens[d] is not None:
                step /= dens[d]
            old = VJ[d]
            new = old + step
            ad = np.abs(step)
            two = R.two_nvt[d]
            if (ad.max() > two) if not isinstance(two, np.ndarray) else (ad > two).any():
                new = _pnjlim(new, old, R.nvt[d], R.vcrit[d])
                if R.has_bv[d]:
                    bvd = R.bv[d]
                    fin = np.isfinite(bvd)
                    bv0 = np.where(fin, bvd, 0.0)
                    w_new = -(new + bv0)
                    wl = _pnjlim(w_new, -(old + bv0), R.nvt[d], R.vcr_bv[d])
                    # map back only where limiting acted: the round trip via -BV costs ulp(BV)
                    new = np.where(fin & (wl != w_new), -(wl + bv0), new)
                ad = np.abs(new - old)
            scale_j = np.abs(old)
            scale_j += 1.0
            ad /= scale_j
            worst = ad if worst is None else np.maximum(worst, ad, out=worst)
            VJ[d] = new
        # done: one step after a small step, or at once after a tiny one (tiny also against the
        # solution's own size, so that a case whose whole solution is tiny still gets its polish)
        finished = pending | ((worst <= STEP_TINY) & (worst_nf <= STEP_TINY))
        pending = (worst <= STEP_TOL) | finished
        if finished.any():
            done = idx[finished]
            ok[done] = True
            for q in range(k):
                v_out[q, done] = V[q][finished]
            for d in range(nd):
                vj_out[d, done] = VJ[d][finished]
        keep = ~finished
        if not keep.any():
            break
        if keep.sum() < 0.5 * len(keep):  # compact the rows
            idx, pending = idx[keep], pending[keep]
            V = [r[keep] for r in V]
            VJ = [r[keep] for r in VJ]
            R = R.subset(keep)
            drive, abs_drive, gp = setup(R)
    rest = ~ok[idx]
    if rest.any():
        for q in range(k):
            v_out[q, idx[rest]] = V[q][rest]
        for d in range(nd):
            vj_out[d, idx[rest]] = VJ[d][rest]
    ok &= np.all(np.isfinite(v_out), axis=0) & np.all(np.isfinite(vj_out), axis=0)
    return v_out, vj_out, ok, it


def solve(circuit: Circuit, r_branch, junctions: Junctions, stimulus) -> Solution:
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

    Returns
    -------
    Solution

    Raises
    ------
    SolveError
        For a singular linear part (a node with no path to the reference), a
        Newton iteration that did not converge after source and gmin stepping, or a
        batch whose results would exceed :data:`MAX_RESULT_FLOATS`.

    Notes
    -----
    Where Newton starts, by batch:

    * parameter sets that share their stimuli (Monte Carlo builds, tolerance
      corners), at least :data:`WARM_MIN_CASES` cases: the representative set
      (nearest the median parameters) is solved first and every case starts from
      its port and junction voltages at the same stimulus: a 0.25 % tolerance moves
      a conducting junction by about 0.1 mV, which Newton removes in two or three
      steps;
    * sweeps of at least :data:`SWEEP_MIN` stimuli: a coarse subset first, the rest
      from its straight-line interpolation;
    * otherwise, and for any case that a warm start leaves unconverged after
      :data:`WARM_MAX_ITER` steps: each port's most forward diode solved exactly
      behind the port's Thevenin equivalent (Banwell and Jayakumar, *Electronics
      Letters* 36(4), 2000, Wright-omega form).

    The solution does not depend on the start: every case is iterated to the same
    step tolerance.
    """
    r = np.atleast_2d(np.asarray(r_branch, dtype=float))
    stim = np.atleast_2d(np.asarray(stimulus, dtype=float))
    d = len(circuit.diodes)
    jn = junctions.map(lambda x: np.atleast_2d(np.asarray(x, dtype=float)))
    p = max(r.shape[0], stim.shape[0], jn.i_s.shape[0])
    jn = jn.map(lambda x: np.broadcast_to(x, (p, d)))
    r = np.ascontiguousarray(np.broadcast_to(r, (p, r.shape[1])))
    stim = np.ascontiguousarray(np.broadcast_to(stim, (p, stim.shape[1])))
    if not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise SolveError(f"{circuit.name}: a branch resistance is zero, negative or not finite")
    if not np.all(np.isfinite(stim)):
        raise SolveError(f"{circuit.name}: a stimulus is not finite")
    n, k = circuit.n_nodes, circuit.n_ports
    s_count = stim.shape[1]
    # held per case: port currents, junction voltages, diode currents and a few columns an
    # analysis forms; per parameter set: the linear responses
    _check_batch(circuit.name, p * s_count, p * s_count * (k + 2 * d + 2) + p * n * (1 + k))
    x, inc, touched = _linear_responses(circuit, r)
    if not k or s_count == 0:
        return Solution(circuit, stim, x, r, np.zeros((p, s_count, inc.shape[0])), np.zeros((p, s_count, d)),
                        np.zeros((p, s_count, d)))
    prob = _Problem(circuit, x, inc, touched, jn, stim, r)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        vj, i_d, j_node = prob.solve()
    vj3, nvt3 = vj.reshape(p, s_count, d), jn.nvt[:, None, :]
    with np.errstate(invalid="ignore"):  # forward, or (for a finite BV) into breakdown
        beyond = (vj3 > _EXP_MAX * nvt3) | (-(vj3 + jn.bv[:, None, :]) > _EXP_MAX * nvt3)
    beyond = beyond.reshape(p * s_count, d)
    if beyond.any():
        case, j = (int(q[0]) for q in np.nonzero(beyond))
        way = "conduction" if vj[case, j] > 0 else "breakdown"
        raise SolveError(
            f"{circuit.name}: diode {circuit.diodes[j]} would be driven {vj[case, j]:.3g} V into {way} "
            f"at stimulus {stim.reshape(-1)[case]:g} (no resistance limits its current); give the diode model "
            "a series_resistance or put a resistor in series with it")
    return Solution(circuit, stim, x, r, j_node.reshape(p, s_count, inc.shape[0]), vj.reshape(p, s_count, d),
                    i_d.reshape(p, s_count, d), prob.iterations, prob.fallbacks)


def _check_batch(name: str, points: int, floats: int) -> None:
    """Refuse a batch whose results would exceed :data:`MAX_RESULT_FLOATS` (a memory limit)."""
    if floats > MAX_RESULT_FLOATS:
        raise SolveError(
            f"{name}: {points} operating points in one batch would need about {floats * 8 / 1e9:.1f} GB for "
            f"the results (limit {MAX_RESULT_FLOATS * 8 / 1e9:.1f} GB); lower the Monte Carlo samples "
            "(--samples) or the number of stimuli")


def _linear_responses(circuit: Circuit, r):
    """Node voltages for a unit stimulus and for a unit current into each port node.

    Returns
    -------
    x : ndarray, shape (P, N, 1 + T)
        Column 0: the response to a unit stimulus; column 1 + m: to a unit current
        into the m-th free node that a port touches.
    inc : ndarray, shape (T, K)
        Current into each such node per unit current through each port (-1 at
        the port's anode side, +1 at its cathode side).
    touched : list of int
        Those nodes' indices.

    Notes
    -----
    The nodal conductance matrix is stamped directly onto the free nodes (all but
    the reference and a held node) by one matrix product per chunk of parameter
    sets, and solved by one batched ``numpy.linalg.solve``.
    """
    p = r.shape[0]
    n, k = circuit.n_nodes, circuit.n_ports
    held = circuit.held
    fixed = {0} | ({held} if held is not None else set())
    free = np.array([i for i in range(n) if i not in fixed], dtype=np.intp)
    f = len(free)
    pos = np.full(n, -1, dtype=np.intp)
    pos[free] = np.arange(f)
    lin = len(circuit.branches)
    s_ff = np.zeros((lin, f * f))
    s_h = np.zeros((lin, f))
    a_ff = np.zeros(f * f)
    a_h = np.zeros(f)

    def stamp(sff, sh, a, b, g):
        ia, ib = pos[a], pos[b]
        if ia >= 0:
            sff[ia * f + ia] += g
        if ib >= 0:
            sff[ib * f + ib] += g
        if ia >= 0 and ib >= 0:
            sff[ia * f + ib] -= g
            sff[ib * f + ia] -= g
        if held is not None:  # the held node at 1 V drives its neighbours: -G[free, held]
            if b == held and ia >= 0:
                sh[ia] += g
            if a == held and ib >= 0:
                sh[ib] += g

    for j, (a, b) in enumerate(zip(circuit.lin_a, circuit.lin_b)):
        stamp(s_ff[j], s_h[j], int(a), int(b), 1.0)
    for a, c in zip(circuit.port_a, circuit.port_c):
        stamp(a_ff, a_h, int(a), int(c), G_AUX)
    touched = sorted({int(a) for a in circuit.port_a if pos[a] >= 0} | {int(c) for c in circuit.port_c if pos[c] >= 0})
    t = len(touched)
    inc = np.zeros((t, k))
    e_nodes = np.zeros((f, t))
    for m, node in enumerate(touched):
        e_nodes[pos[node], m] = 1.0
        for j, (a, c) in enumerate(zip(circuit.port_a, circuit.port_c)):
            inc[m, j] = float(int(c) == node) - float(int(a) == node)
    x = np.zeros((p, n, 1 + t))
    if held is not None:
        x[:, held, 0] = 1.0
    if not f:
        return x, inc, touched
    step = max(1, CHUNK_FLOATS // (3 * f * f + 4 * f * (1 + k) + lin))
    for lo in range(0, p, step):
        hi = min(p, lo + step)
        g = 1.0 / r[lo:hi]
        gff = (g @ s_ff + a_ff).reshape(hi - lo, f, f)
        rhs = np.empty((hi - lo, f, 1 + t))
        if circuit.source_kind == "voltage":
            rhs[:, :, 0] = g @ s_h + a_h
        else:
            rhs[:, :, 0] = 0.0
            if pos[circuit.inject] >= 0:
                rhs[:, pos[circuit.inject], 0] = 1.0
        rhs[:, :, 1:] = e_nodes
        with np.errstate(all="ignore"):
            try:
                xf = np.linalg.solve(gff, rhs)
            except np.linalg.LinAlgError:
                xf = np.full_like(rhs, np.nan)
            bad = ~np.all(np.isfinite(xf), axis=(1, 2))
            if not bad.any():
                resid = np.abs(np.matmul(gff, xf) - rhs).max(axis=(1, 2))
                scale = np.abs(gff).max(axis=(1, 2)) * np.abs(xf).max(axis=(1, 2)) + np.abs(rhs).max(axis=(1, 2))
                bad = resid > 1e-6 * scale
        if bad.any():
            raise SolveError(
                f"{circuit.name}: the network is singular (a node has no resistive path to the "
                f"reference: {_isolated_hint(circuit)}); connect it or give the diode a leakage resistance")
        x[lo:hi, free, :] = xf
    return x, inc, touched


def _isolated_hint(circuit: Circuit) -> str:
    """Name the nodes reached by no resistive branch from the reference."""
    import networkx as nx

    g = nx.Graph()
    g.add_nodes_from(range(circuit.n_nodes))
    g.add_edges_from(zip(circuit.lin_a.tolist(), circuit.lin_b.tolist()))
    roots = [0] + ([circuit.held] if circuit.held is not None else [])
    reach = set()
    for r in roots:
        reach |= nx.node_connected_component(g, r)
    lost = [circuit.node_names[i] for i in range(circuit.n_nodes) if i not in reach]
    return ", ".join(map(str, lost)) if lost else "check for loops of contacts only"
