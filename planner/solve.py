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

Shapes: ``P`` parameter sets (tolerance samples x temperatures), ``S`` stimuli per
set, ``N`` nodes, ``L`` linear branches, ``K`` ports, ``D`` diodes.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field

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
#: Upper bound on floats held by one chunk of the Newton loop (memory limit).
CHUNK_FLOATS = 4_000_000
#: Upper bound on floats in the results of one call (node voltages, branch and diode
#: quantities of every case, about 0.8 GB); a larger batch is refused with a clear
#: error instead of exhausting the memory.
MAX_RESULT_FLOATS = 100_000_000


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


@dataclass
class Solution:
    """Operating points of a batch.

    Attributes
    ----------
    v_node : ndarray, shape (P, S, N)
        Node voltages [V] against the input's minus terminal.
    i_branch : ndarray, shape (P, S, L)
        Current in each linear branch from its first to its second node [A].
    v_junction : ndarray, shape (P, S, D)
        Junction voltage of each diode [V] (terminal voltage less R_s drop).
    i_diode : ndarray, shape (P, S, D)
        Terminal current of each diode, anode to cathode [A] (junction plus leakage).
    iterations : int
        Largest Newton iteration count used.
    fallbacks : dict
        How many cases needed source stepping or gmin stepping.
    """

    v_node: np.ndarray
    i_branch: np.ndarray
    v_junction: np.ndarray
    i_diode: np.ndarray
    iterations: int = 0
    fallbacks: dict = field(default_factory=dict)


def _junction(v, jn: Junctions):
    """Junction current and its derivative.

    Notes
    -----
    Shockley law with an exponential reverse breakdown:

    .. math:: i = I_s (e^{v/nV_t} - 1) - I_{BV} e^{-(v + BV)/nV_t}

    continued linearly beyond an exponent of 80 (reached only by Newton iterates).
    """
    x = v / jn.nvt
    xe = np.minimum(x, _EXP_MAX)
    ex = np.exp(xe)
    i = jn.i_s * (np.expm1(xe) + ex * (x - xe))  # = e^x - 1 below the cap, without cancellation
    d = jn.i_s * ex / jn.nvt
    if np.any(np.isfinite(jn.bv)):
        finite = np.isfinite(jn.bv)
        y = -(v + np.where(finite, jn.bv, 0.0)) / jn.nvt  # no BV: a finite stand-in, zeroed below
        ye = np.minimum(y, _EXP_MAX)
        ey = np.where(finite, np.exp(ye), 0.0)
        i = i - jn.ibv * ey * (1.0 + (y - ye))
        d = d + jn.ibv * ey / jn.nvt
    return i, d


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


def _limit(v_new, v_old, jn: Junctions):
    """Junction-voltage limiting, forward and (mirrored about -BV) in breakdown."""
    vcrit = jn.nvt * np.log(jn.nvt / (np.sqrt(2.0) * jn.i_s))
    out = _pnjlim(v_new, v_old, jn.nvt, vcrit)
    finite = np.isfinite(jn.bv)
    if finite.any():
        bv = np.where(finite, jn.bv, 0.0)
        vcr = jn.nvt * np.log(jn.nvt / (np.sqrt(2.0) * jn.ibv))
        w_new = -(out + bv)
        w = _pnjlim(w_new, -(v_old + bv), jn.nvt, vcr)
        out = np.where(finite & (w != w_new), -(w + bv), out)  # round trip via -BV only where limited
    return out


def _single_diode(v_oc, r, jn: Junctions):
    r"""Terminal current of a junction behind a resistance, exactly [A].

    Notes
    -----
    .. math:: I = \frac{nV_t}{R}\,\omega\!\left(\ln\frac{I_s R}{nV_t} + \frac{V + I_s R}{nV_t}\right) - I_s

    with :math:`\omega` the Wright omega function (the Lambert-W form without overflow).

    References
    ----------
    T. C. Banwell and A. Jayakumar, "Exact analytical solution for current flow
    through diode with series resistance", Electronics Letters 36(4), 291-292, 2000.
    """
    from scipy.special import wrightomega

    arg = np.log(jn.i_s * r / jn.nvt) + (v_oc + jn.i_s * r) / jn.nvt
    return (jn.nvt / r) * np.real(wrightomega(arg)) - jn.i_s


def _port_sum(values, circuit: Circuit, groups):
    """Sum per-diode values (..., D) onto ports (..., K)."""
    out = np.zeros(values.shape[:-1] + (circuit.n_ports,))
    for k, idx in enumerate(groups):
        out[..., k] = values[..., idx].sum(axis=-1)
    return out


def _small_solve(a, b):
    """Solve a batch of small systems a x = b, a (B, K, K), b (B, K); closed form for K <= 2."""
    k = b.shape[-1]
    if k == 1:
        return b / a[:, :, 0]
    if k == 2:
        det = a[:, 0, 0] * a[:, 1, 1] - a[:, 0, 1] * a[:, 1, 0]
        x0 = (b[:, 0] * a[:, 1, 1] - a[:, 0, 1] * b[:, 1]) / det
        x1 = (a[:, 0, 0] * b[:, 1] - b[:, 0] * a[:, 1, 0]) / det
        return np.stack([x0, x1], axis=-1)
    try:
        return np.linalg.solve(a, b[..., None])[..., 0]
    except np.linalg.LinAlgError:  # a singular Jacobian somewhere in the batch
        return np.einsum("bkj,bj->bk", np.linalg.pinv(a), b)


class _Ports:
    """The reduced problem of one chunk, flattened over cases: B = P * S."""

    def __init__(self, circuit: Circuit, drive, z, jn: Junctions):
        self.circuit = circuit
        self.drive = drive  # (B, K) open-circuit port voltages
        self.z = z  # (B, K, K) port voltage per unit port current (anode to cathode)
        self.jn = jn  # (B, D)
        self.port = circuit.diode_port
        self.sign = circuit.diode_sign.astype(float)
        self.groups = [np.nonzero(circuit.diode_port == k)[0] for k in range(circuit.n_ports)]

    def subset(self, idx) -> "_Ports":
        return _Ports(self.circuit, self.drive[idx], self.z[idx], self.jn.map(lambda x: x[idx]))

    def currents(self, vj):
        """Diode terminal currents (B, D) and port currents (B, K) at junction voltages."""
        i, _ = _junction(vj, self.jn)
        i_d = i + vj * self.jn.g_p
        return i_d, _port_sum(self.sign * i_d, self.circuit, self.groups)

    def initial(self, sweeps: int = 3):
        """A starting point: each port behind its Thevenin equivalent, solved exactly.

        The most forward diode of each port is solved exactly behind the port's
        Thevenin resistance (Wright omega); with several ports, a few Gauss-Seidel
        sweeps add the other ports' currents to each port's open-circuit voltage.
        """
        jn = self.jn
        zself = -np.diagonal(self.z, axis1=1, axis2=2)  # (B, K), includes the auxiliary conductance
        gth = 1.0 / np.maximum(zself, 1e-300) - G_AUX
        ok = gth > 1e-15
        r_th = np.where(ok, 1.0 / np.where(ok, gth, 1.0), 1e15)
        ratio = np.where(ok, r_th / np.maximum(zself, 1e-300), 1.0)
        s = self.sign
        k = self.drive.shape[1]
        i_port = np.zeros_like(self.drive)
        v_port = self.drive.copy()
        i_d = np.zeros_like(jn.i_s)
        for _ in range(sweeps if k > 1 else 1):
            for q, idx in enumerate(self.groups):
                coupled = self.drive[:, q] + sum(self.z[:, q, j] * i_port[:, j] for j in range(k) if j != q)
                v_oc = coupled * ratio[:, q]
                best = np.full(v_oc.shape, -np.inf)
                for d in idx:
                    i = _single_diode(s[d] * v_oc, r_th[:, q] + jn.r_s[:, d], jn.map(lambda a: a[:, d]))
                    i = np.where(np.isfinite(i), i, 0.0)
                    i_d[:, d] = i
                    better = i > best  # the port voltage follows the most forward diode
                    v_port[:, q] = np.where(better, v_oc - s[d] * r_th[:, q] * i, v_port[:, q])
                    best = np.where(better, i, best)
                i_port[:, q] = (s[idx] * i_d[:, idx]).sum(axis=1)
        vd = s * v_port[:, self.port]
        vj = np.where(i_d > 0, vd - jn.r_s * np.maximum(i_d, 0.0), vd)
        vcrit = jn.nvt * np.log(jn.nvt / (np.sqrt(2.0) * jn.i_s))
        vj = np.minimum(vj, np.maximum(vcrit, 1.5))
        vj = np.where(np.isfinite(jn.bv), np.maximum(vj, -jn.bv), vj)
        return np.where(np.isfinite(v_port), v_port, 0.0), np.where(np.isfinite(vj), vj, 0.0)

    def newton(self, v, vj, *, scale=1.0, extra_g=0.0, max_iter=MAX_ITER):
        """Newton iteration on port voltages with the junction voltages eliminated.

        Unknowns: port voltages V (B, K) and junction voltages v_j (B, D). Equations:
        ``V = scale * drive + Z I(V)`` and ``sign V = v_j + R_s i_d(v_j)`` per diode,
        with ``i_d = I_s(e^{v_j/nV_t} - 1) + G_p v_j`` (+ ``extra_g v_j`` in gmin stepping).
        Each step linearises every diode, eliminates its junction voltage into an
        equivalent conductance at its port, solves the K x K port system, then updates
        the junction voltages with limiting. Cases leave the loop one polishing step
        after their step falls below tolerance. Returns V, v_j, a convergence mask (B,)
        and the iteration count.

        Notes
        -----
        Arrays are held transposed, one contiguous row per port or diode, so that every
        operation is a long vector operation; the batch is compacted when fewer than
        half of its cases remain.
        """
        circuit = self.circuit
        b, k = v.shape
        nd = len(circuit.diodes)
        port = [int(x) for x in circuit.diode_port]
        sign = [float(x) for x in circuit.diode_sign]
        v_out, vj_out = v.copy(), vj.copy()
        ok = np.zeros(b, dtype=bool)
        jn = self.jn

        def rows(a):
            return np.ascontiguousarray(a.T)

        idx = np.arange(b)
        V, VJ = rows(v), rows(vj)
        drive = rows(self.drive) * scale
        Z = [[np.ascontiguousarray(self.z[:, i, j]) for j in range(k)] for i in range(k)]
        i_s, nvt, r_s = rows(jn.i_s), rows(jn.nvt), rows(jn.r_s)
        g_p = rows(jn.g_p) + extra_g
        inv_nvt = 1.0 / nvt
        vcrit = nvt * np.log(nvt / (np.sqrt(2.0) * i_s))
        has_bv = bool(np.isfinite(jn.bv).any())
        if has_bv:
            bv, ibv = rows(np.where(np.isfinite(jn.bv), jn.bv, np.inf)), rows(jn.ibv)
            vcr_bv = nvt * np.log(nvt / (np.sqrt(2.0) * ibv))
        pending = np.zeros(b, dtype=bool)
        it = 0
        for it in range(1, max_iter + 1):
            i_port = [-G_AUX * V[q] for q in range(k)]
            g_port = [np.full(V.shape[1], -G_AUX) for _ in range(k)]
            c_port = [np.zeros(V.shape[1]) for _ in range(k)]
            rr, dens = [], []
            for d in range(nd):
                vjd = VJ[d]
                x = vjd * inv_nvt[d]
                xe = np.minimum(x, _EXP_MAX)
                ex = np.exp(xe)
                i = i_s[d] * (np.expm1(xe) + ex * (x - xe))  # e^x - 1 without cancellation near 0
                y = i_s[d] * ex * inv_nvt[d]
                if has_bv:
                    w = -(vjd + bv[d]) * inv_nvt[d]
                    we = np.minimum(w, _EXP_MAX)
                    ew = np.exp(we)
                    i = i - ibv[d] * ew * (1.0 + np.fmax(w - we, 0.0))  # no BV: -inf - -inf -> 0
                    y = y + ibv[d] * ew * inv_nvt[d]
                i += g_p[d] * vjd
                y += g_p[d]
                den = 1.0 + r_s[d] * y
                r = sign[d] * V[port[d]] - vjd - r_s[d] * i
                geq = y / den
                q = port[d]
                i_port[q] += sign[d] * i
                g_port[q] += geq
                c_port[q] += sign[d] * geq * r
                rr.append(r)
                dens.append(den)
            # port system: (I - Z diag(g)) dV = -(V - drive - Z i) + Z c
            rhs = [-(V[q] - drive[q]) + sum(Z[q][j] * (i_port[j] + c_port[j]) for j in range(k)) for q in range(k)]
            if k == 1:
                dV = [rhs[0] / (1.0 - Z[0][0] * g_port[0])]
            elif k == 2:
                a00, a01 = 1.0 - Z[0][0] * g_port[0], -Z[0][1] * g_port[1]
                a10, a11 = -Z[1][0] * g_port[0], 1.0 - Z[1][1] * g_port[1]
                det = a00 * a11 - a01 * a10
                dV = [(rhs[0] * a11 - a01 * rhs[1]) / det, (a00 * rhs[1] - rhs[0] * a10) / det]
            else:
                jac = np.empty((V.shape[1], k, k))
                for q in range(k):
                    for j in range(k):
                        jac[:, q, j] = (q == j) - Z[q][j] * g_port[j]
                sol = _small_solve(jac, np.stack(rhs, axis=-1))
                dV = [sol[:, q] for q in range(k)]
            small = np.ones(V.shape[1], dtype=bool)
            for q in range(k):
                small &= np.abs(dV[q]) <= STEP_TOL * (1.0 + np.abs(V[q]) + np.abs(drive[q]))
                V[q] += dV[q]
            for d in range(nd):
                old = VJ[d]
                new = old + (sign[d] * dV[port[d]] + rr[d]) / dens[d]
                new = _pnjlim(new, old, nvt[d], vcrit[d])
                if has_bv:
                    fin = np.isfinite(bv[d])
                    if fin.any():
                        bvd = np.where(fin, bv[d], 0.0)
                        w_new = -(new + bvd)
                        wl = _pnjlim(w_new, -(old + bvd), nvt[d], vcr_bv[d])
                        # map back only where limiting acted: the round trip via -BV costs ulp(BV)
                        new = np.where(fin & (wl != w_new), -(wl + bvd), new)
                small &= np.abs(new - old) <= STEP_TOL * (1.0 + np.abs(old))
                VJ[d] = new
            finished = pending
            pending = small | finished
            if finished.any():
                done = idx[finished]
                ok[done] = True
                v_out[done] = V[:, finished].T
                vj_out[done] = VJ[:, finished].T
            keep = ~finished
            if not keep.any():
                break
            if keep.sum() < 0.5 * len(keep):  # compact the batch
                idx, pending = idx[keep], pending[keep]
                V, VJ, drive = V[:, keep], VJ[:, keep], drive[:, keep]
                Z = [[z[keep] for z in zr] for zr in Z]
                i_s, nvt, r_s, g_p, inv_nvt, vcrit = (a[:, keep] for a in (i_s, nvt, r_s, g_p, inv_nvt, vcrit))
                if has_bv:
                    bv, ibv, vcr_bv = bv[:, keep], ibv[:, keep], vcr_bv[:, keep]
        rest = ~ok[idx]
        if rest.any():
            v_out[idx[rest]] = V[:, rest].T
            vj_out[idx[rest]] = VJ[:, rest].T
        ok &= np.all(np.isfinite(v_out), axis=1) & np.all(np.isfinite(vj_out), axis=1)
        return v_out, vj_out, ok, it


def _stamp(circuit: Circuit, n: int):
    """Stamp matrix S (L, N*N) with G.flat = g @ S."""
    lin = len(circuit.branches)
    s = np.zeros((lin, n * n))
    for j, (a, b) in enumerate(zip(circuit.lin_a, circuit.lin_b)):
        s[j, a * n + a] += 1.0
        s[j, b * n + b] += 1.0
        s[j, a * n + b] -= 1.0
        s[j, b * n + a] -= 1.0
    return s


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
    """
    r = np.atleast_2d(np.asarray(r_branch, dtype=float))
    stim = np.atleast_2d(np.asarray(stimulus, dtype=float))
    d = len(circuit.diodes)
    jn = junctions.map(lambda x: np.atleast_2d(np.asarray(x, dtype=float)))
    p = max(r.shape[0], stim.shape[0], jn.i_s.shape[0])
    jn = jn.map(lambda x: np.broadcast_to(x, (p, d)))
    r = np.broadcast_to(r, (p, r.shape[1]))
    stim = np.broadcast_to(stim, (p, stim.shape[1]))
    if not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise SolveError(f"{circuit.name}: a branch resistance is zero, negative or not finite")
    if not np.all(np.isfinite(stim)):
        raise SolveError(f"{circuit.name}: a stimulus is not finite")
    n, k = circuit.n_nodes, circuit.n_ports
    s_count = stim.shape[1]
    result_floats = p * s_count * (n + len(circuit.branches) + 2 * d)
    if result_floats > MAX_RESULT_FLOATS:
        raise SolveError(
            f"{circuit.name}: {p * s_count} operating points in one batch would need about "
            f"{result_floats * 8 / 1e9:.1f} GB for the results (limit {MAX_RESULT_FLOATS * 8 / 1e9:.1f} GB); "
            "lower the Monte Carlo samples (--samples) or the number of stimuli")
    # chunk over parameter sets so that a chunk holds at most CHUNK_FLOATS floats
    per_set = max(1, s_count * (n + len(circuit.branches) + 8 * d + 4 * k + 2 * k * k) + 2 * n * n)
    step = max(1, CHUNK_FLOATS // per_set)
    parts = []
    for lo in range(0, p, step):
        hi = min(p, lo + step)
        parts.append(_solve_chunk(circuit, r[lo:hi], jn.map(lambda x: x[lo:hi]), stim[lo:hi]))
    if len(parts) == 1:
        return parts[0]
    return Solution(
        np.concatenate([q.v_node for q in parts]),
        np.concatenate([q.i_branch for q in parts]),
        np.concatenate([q.v_junction for q in parts]),
        np.concatenate([q.i_diode for q in parts]),
        max(q.iterations for q in parts),
        {key: sum(q.fallbacks.get(key, 0) for q in parts) for key in ("source_stepping", "gmin_stepping")},
    )


def _linear_responses(circuit: Circuit, r):
    """Node voltages (P, N, 1 + K) for a unit stimulus and a unit current through each port."""
    p = r.shape[0]
    n, k = circuit.n_nodes, circuit.n_ports
    big_g = ((1.0 / r) @ _stamp(circuit, n)).reshape(p, n, n)
    for a, c in zip(circuit.port_a, circuit.port_c):
        big_g[:, a, a] += G_AUX
        big_g[:, c, c] += G_AUX
        big_g[:, a, c] -= G_AUX
        big_g[:, c, a] -= G_AUX
    fixed = [0] + ([circuit.held] if circuit.held is not None else [])
    free = np.array([i for i in range(n) if i not in fixed], dtype=np.intp)
    pos = {int(node): j for j, node in enumerate(free)}
    rhs = np.zeros((p, len(free), 1 + k))
    if circuit.source_kind == "voltage":
        rhs[:, :, 0] = -big_g[:, free, circuit.held]
    elif circuit.inject in pos:
        rhs[:, pos[circuit.inject], 0] = 1.0
    for j, (a, c) in enumerate(zip(circuit.port_a, circuit.port_c)):
        if int(a) in pos:
            rhs[:, pos[int(a)], 1 + j] -= 1.0
        if int(c) in pos:
            rhs[:, pos[int(c)], 1 + j] += 1.0
    x = np.zeros((p, n, 1 + k))
    if len(free):
        gff = big_g[:, free][:, :, free]
        with np.errstate(all="ignore"):
            try:
                xf = np.linalg.solve(gff, rhs)
            except np.linalg.LinAlgError:
                xf = np.full_like(rhs, np.nan)
            bad = ~np.all(np.isfinite(xf), axis=(1, 2))
            if not bad.any():
                resid = np.abs(np.einsum("pij,pjk->pik", gff, xf) - rhs).max(axis=(1, 2))
                scale = np.abs(gff).max(axis=(1, 2)) * np.abs(xf).max(axis=(1, 2)) + np.abs(rhs).max(axis=(1, 2))
                bad = resid > 1e-6 * scale
        if bad.any():
            raise SolveError(
                f"{circuit.name}: the network is singular (a node has no resistive path to the "
                f"reference: {_isolated_hint(circuit)}); connect it or give the diode a leakage resistance")
        x[:, free, :] = xf
    if circuit.held is not None:
        x[:, circuit.held, 0] = 1.0
    return x


def _solve_chunk(circuit: Circuit, r, jn: Junctions, stim) -> Solution:
    p, s_count = stim.shape
    k, d = circuit.n_ports, len(circuit.diodes)
    x = _linear_responses(circuit, r)
    iterations, fallbacks = 0, {"source_stepping": 0, "gmin_stepping": 0}
    if k:
        u = x[:, circuit.port_a, 0] - x[:, circuit.port_c, 0]  # (P, K)
        zd = x[:, circuit.port_a, 1:] - x[:, circuit.port_c, 1:]  # (P, K, K)
        b = p * s_count
        drive = (stim[:, :, None] * u[:, None, :]).reshape(b, k)
        z = np.broadcast_to(zd[:, None], (p, s_count, k, k)).reshape(b, k, k)
        jn_b = jn.map(lambda a: np.broadcast_to(a[:, None, :], (p, s_count, d)).reshape(b, d))
        ports = _Ports(circuit, drive, z, jn_b)
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            v, vj = ports.initial()
            v, vj, ok, iterations = ports.newton(v, vj)
            if not ok.all():
                v, vj, ok, fallbacks = _fallbacks(ports, v, vj, ok)
        if not ok.all():
            bad = int(np.nonzero(~ok)[0][0])
            raise SolveError(
                f"{circuit.name}: no operating point found for stimulus {stim.reshape(-1)[bad]:g} "
                f"(parameter set {bad // s_count}) after Newton, source stepping and gmin stepping")
        beyond = vj > _EXP_MAX * jn_b.nvt
        if beyond.any():
            case, j = (int(x[0]) for x in np.nonzero(beyond))
            raise SolveError(
                f"{circuit.name}: diode {circuit.diodes[j]} would be driven {vj[case, j]:.3g} V into conduction "
                f"at stimulus {stim.reshape(-1)[case]:g} (no resistance limits its current); give the diode model "
                "a series_resistance or put a resistor in series with it")
        i_d, i_port = ports.currents(vj)
        i_inj = i_port - G_AUX * v  # what the linear part sees through each port
        v_node = stim[:, :, None] * x[:, None, :, 0] + np.einsum(
            "pnk,psk->psn", x[:, :, 1:], i_inj.reshape(p, s_count, k))
        vj = vj.reshape(p, s_count, d)
        i_d = i_d.reshape(p, s_count, d)
    else:
        vj = i_d = np.zeros((p, s_count, 0))
        v_node = stim[:, :, None] * x[:, None, :, 0]
    i_branch = (v_node[:, :, circuit.lin_a] - v_node[:, :, circuit.lin_b]) / r[:, None, :]
    return Solution(v_node, i_branch, vj, i_d, iterations, fallbacks)


def _fallbacks(ports: _Ports, v, vj, ok):
    """Source stepping, then gmin stepping, on the cases Newton left unconverged."""
    counts = {"source_stepping": 0, "gmin_stepping": 0}
    idx = np.nonzero(~ok)[0]
    counts["source_stepping"] = len(idx)
    log.info("%s: source stepping on %d cases", ports.circuit.name, len(idx))
    sub = ports.subset(idx)
    vs, vjs = np.zeros_like(v[idx]), np.zeros_like(vj[idx])
    for alpha in np.linspace(0.02, 1.0, 50):
        vs, vjs, good, _ = sub.newton(vs, vjs, scale=alpha)
    if not good.all():
        sel = np.nonzero(~good)[0]
        counts["gmin_stepping"] = len(sel)
        log.info("%s: gmin stepping on %d cases", ports.circuit.name, len(sel))
        sub2 = sub.subset(sel)
        vg, vjg = np.zeros_like(vs[sel]), np.zeros_like(vjs[sel])
        for gm in [1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 0.0]:
            vg, vjg, g_ok, _ = sub2.newton(vg, vjg, extra_g=gm)
        vs[sel], vjs[sel] = vg, vjg
        good[sel] = g_ok
    v, vj, ok = v.copy(), vj.copy(), ok.copy()
    v[idx], vj[idx], ok[idx] = vs, vjs, good
    return v, vj, ok, counts


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
