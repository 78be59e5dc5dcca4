"""The linear part of a switch state, reduced onto the nodes the nonlinear parts touch.

The free nodes (all but the reference and a held node) split into the *touched* nodes
(a diode or varistor ends there) and the *interior* ones. Eliminating the interior
nodes (a Schur complement) leaves, per parameter set,

.. math:: Y_s u = d\\,s + d_e + J, \\qquad v_I = H u + h\\,s + h_e,

with u the touched nodes' voltages, s the stimulus, J the current the nonlinear parts
feed into the touched nodes, and d_e, h_e the response to the branches' EMFs. A
touched node that no linear branch reaches (the middle of a diode stack) has a zero
row in Y_s: no auxiliary conductance is added, so the element equations stay exact.
"""

from __future__ import annotations

import numpy as np

from ..errors import SolveError
from .memo import Kept

#: Upper bound on floats held by one chunk of the linear solve (memory limit).
CHUNK_FLOATS = 4_000_000


class LinearPart:
    r"""The reduced linear part of one circuit for P parameter sets.

    Attributes
    ----------
    touched : list of int
        Node indices of the touched nodes (T of them), ascending.
    floating : ndarray of bool, shape (T,)
        Touched nodes without a linear branch (their rows of Y_s are zero).
    anchors : ndarray of int, shape (A,)
        Positions among the touched nodes of those with a linear branch.
    ys : ndarray, shape (P, A, A)
        The reduced admittance between the anchors [S].
    d : ndarray, shape (P, T)
        Current into each touched node per unit stimulus [A/V or A/A].
    de : ndarray, shape (P, T) or None
        Current into each touched node from the branches' EMFs [A].
    interior : list of int
        Node indices of the interior nodes.
    h, he : ndarray, shape (P, I)
        Interior node voltages per unit stimulus and from the EMFs (``he`` None without).
    hu : ndarray, shape (P, I, A)
        Interior node voltages per volt at each anchor.
    grounded : ndarray of bool, shape (A,)
        Anchors whose linear part reaches the reference or the held node.

    Notes
    -----
    With the free nodes split into interior (I) and anchors (A), the nodal matrix G and
    the injections b (per unit stimulus) and e (the EMFs, g_j e_j into a branch's first
    node and out of its second):

    .. math:: H = -G_{II}^{-1} G_{IA}, \quad h = G_{II}^{-1} b_I, \quad h_e = G_{II}^{-1} e_I,
              \quad Y_s = G_{AA} + G_{AI} H, \quad d = b_A - G_{AI} h, \quad d_e = e_A - G_{AI} h_e

    References
    ----------
    G. H. Golub and C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins, 2013
    (block elimination, the Schur complement); C.-W. Ho, A. E. Ruehli and P. A. Brennan,
    "The modified nodal approach to network analysis", IEEE Transactions on Circuits and
    Systems 22(6), 1975.
    """

    def __init__(self, circuit, r, emf=None, skip=()):
        p = r.shape[0]
        held = circuit.held
        voltage = circuit.source_kind == "voltage"
        fixed, self.touched, self.interior, self.floating, self.anchors, self.grounded, self.t_pos, self.i_pos, \
            anchor_nodes, f, pos, s_ff, s_h, s_e = _structure(circuit, tuple(skip))
        ff_cols, s_ff = s_ff  # the stamp matrix's nonzero columns alone (most of f*f are zero)
        self.circuit = circuit
        self.held = held
        t, ni, na = len(self.touched), len(self.interior), len(self.anchors)
        lin = len(circuit.branches)
        has_emf = emf is not None and bool(np.any(emf != 0.0))
        self.ys = np.zeros((p, na, na))
        self.d = np.zeros((p, t))
        self.de = np.zeros((p, t)) if has_emf else None
        self.h = np.zeros((p, ni))
        self.he = np.zeros((p, ni)) if has_emf else None
        self.hu = np.zeros((p, ni, na))
        inject = pos[circuit.inject] if not voltage and circuit.inject not in fixed else -1
        if not voltage and circuit.inject in self.t_pos and self.floating[self.t_pos[circuit.inject]]:
            self.d[:, self.t_pos[circuit.inject]] = 1.0  # a current stimulus straight into a floating node
        if not f:
            return
        step = max(1, CHUNK_FLOATS // (3 * f * f + 4 * f * (na + 3) + 2 * lin))
        for lo in range(0, p, step):
            hi = min(p, lo + step)
            g = 1.0 / r[lo:hi]
            gff = np.zeros((hi - lo, f * f))
            gff[:, ff_cols] = g @ s_ff
            gff = gff.reshape(hi - lo, f, f)
            b = g @ s_h if voltage else np.zeros((hi - lo, f))
            if inject >= 0:
                b[:, inject] = 1.0
            e = (g * emf[lo:hi]) @ s_e if has_emf else None
            self._reduce(lo, hi, gff, b, e, ni, anchor_nodes)

    def _reduce(self, lo, hi, gff, b, e, ni, anchor_nodes):
        """Eliminate the interior nodes of one chunk of parameter sets."""
        g_ii, g_ia = gff[:, :ni, :ni], gff[:, :ni, ni:]
        g_ai, g_aa = gff[:, ni:, :ni], gff[:, ni:, ni:]
        if ni:
            cols = [-g_ia, b[:, :ni, None]] + ([e[:, :ni, None]] if e is not None else [])
            rhs = np.concatenate(cols, axis=2)
            with np.errstate(all="ignore"):
                try:
                    x = np.linalg.solve(g_ii, rhs)
                except np.linalg.LinAlgError:
                    x = np.full_like(rhs, np.nan)
                bad = ~np.all(np.isfinite(x), axis=(1, 2))
                if not bad.any():
                    resid = np.abs(np.matmul(g_ii, x) - rhs).max(axis=(1, 2))
                    scale = np.abs(g_ii).max(axis=(1, 2)) * np.abs(x).max(axis=(1, 2)) + np.abs(rhs).max(axis=(1, 2))
                    bad = resid > 1e-6 * scale
            if bad.any():
                raise SolveError(
                    f"{self.circuit.name}: the network is singular (a node has no resistive path to the "
                    f"reference: {isolated_hint(self.circuit)}); connect it to the rest of the network")
            na = len(anchor_nodes)
            self.hu[lo:hi] = x[:, :, :na]
            self.h[lo:hi] = x[:, :, na]
            if e is not None:
                self.he[lo:hi] = x[:, :, na + 1]
            self.ys[lo:hi] = g_aa + g_ai @ x[:, :, :na]
            d_a = b[:, ni:] - np.einsum("pai,pi->pa", g_ai, x[:, :, na])
            de_a = None if e is None else e[:, ni:] - np.einsum("pai,pi->pa", g_ai, x[:, :, na + 1])
        else:
            self.ys[lo:hi] = g_aa
            d_a, de_a = b[:, ni:], (None if e is None else e[:, ni:])
        self.d[lo:hi, self.anchors] = d_a
        if de_a is not None:
            self.de[lo:hi, self.anchors] = de_a

    def node_kind(self, i: int):
        """('ground' | 'held' | 'touched' | 'interior' | 'none', position) of node ``i``."""
        if i == 0:
            return "ground", 0
        if self.held is not None and i == self.held:
            return "held", 0
        if i in self.t_pos:
            return "touched", self.t_pos[i]
        if i in self.i_pos:
            return "interior", self.i_pos[i]
        return "none", 0


#: Structures of compiled circuits (:func:`_structure`) by their index arrays.
_STRUCTURES = Kept(256)


def _structure(circuit, skip: tuple):
    """What :class:`LinearPart` needs of a circuit's topology alone, made once per topology.

    Kept by the circuit's index arrays (the stacks' reduced circuits are new objects on
    every solve, with the same arrays); the arrays are read, never written.
    The touched, interior, floating and anchor nodes, the anchors that reach the reference
    or the held node, the free nodes' order and the stamp matrices (each branch's
    conductance into the free nodes' matrix, from the held node, of its EMF; the first as its
    nonzero columns and those columns alone).
    """
    key = (circuit.n_nodes, circuit.held, circuit.source_kind, circuit.inject, skip,
           circuit.lin_a.tobytes(), circuit.lin_b.tobytes(), circuit.port_a.tobytes(), circuit.port_c.tobytes())
    hit = _STRUCTURES.get(key)
    if hit is not None:
        return hit
    n = circuit.n_nodes
    held = circuit.held
    fixed = {0} | ({held} if held is not None else set())
    node_sets = [circuit.port_a, circuit.port_c]
    touched = sorted({int(x) for arr in node_sets for x in arr if int(x) not in fixed})
    tset = set(touched)
    lin_nodes = {int(x) for x in circuit.lin_a} | {int(x) for x in circuit.lin_b}
    # ``skip``: nodes nothing reaches by construction (the inner nodes of a stack solved as
    # one junction); any other node without a branch makes the network singular
    interior = [i for i in range(n) if i not in fixed and i not in tset and i not in skip]
    floating = np.array([m not in lin_nodes for m in touched], dtype=bool)
    anchors = np.nonzero(~floating)[0]
    # anchors whose linear part reaches the reference or the held node (the others hang in an
    # island that only nonlinear parts join to the rest: its open-circuit voltage is undefined)
    parent = list(range(n))

    def find(x):
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b in zip(circuit.lin_a.tolist(), circuit.lin_b.tolist()):
        parent[find(a)] = find(b)
    roots = {find(x) for x in fixed}
    grounded = np.array([find(touched[k]) in roots for k in anchors], dtype=bool)
    t_pos = {node: k for k, node in enumerate(touched)}
    i_pos = {node: k for k, node in enumerate(interior)}
    # free nodes ordered interior first, then anchors (floating nodes have no linear part)
    anchor_nodes = [touched[k] for k in anchors]
    free = interior + anchor_nodes
    f = len(free)
    pos = np.full(n, -1, dtype=np.intp)
    pos[free] = np.arange(f)
    lin = len(circuit.branches)
    s_ff = np.zeros((lin, f * f))
    s_h = np.zeros((lin, f))
    s_e = np.zeros((lin, f))  # current into each free node per unit g*e of each branch
    for j, (a, b) in enumerate(zip(circuit.lin_a, circuit.lin_b)):
        ia, ib = pos[int(a)], pos[int(b)]
        if ia >= 0:
            s_ff[j, ia * f + ia] += 1.0
            s_e[j, ia] += 1.0
        if ib >= 0:
            s_ff[j, ib * f + ib] += 1.0
            s_e[j, ib] -= 1.0
        if ia >= 0 and ib >= 0:
            s_ff[j, ia * f + ib] -= 1.0
            s_ff[j, ib * f + ia] -= 1.0
        if held is not None:  # the held node at 1 V drives its neighbours
            if int(b) == held and ia >= 0:
                s_h[j, ia] += 1.0
            if int(a) == held and ib >= 0:
                s_h[j, ib] += 1.0
    ff_cols = np.nonzero(np.any(s_ff != 0.0, axis=0))[0]
    s_ff = (ff_cols, np.ascontiguousarray(s_ff[:, ff_cols]))
    out = (fixed, touched, interior, floating, anchors, grounded, t_pos, i_pos, anchor_nodes, f, pos, s_ff, s_h, s_e)
    return _STRUCTURES.keep(key, out)


def isolated_hint(circuit) -> str:
    """Name the nodes reached by no resistive branch from the reference."""
    import networkx as nx  # only on this error path

    g = nx.Graph()
    g.add_nodes_from(range(circuit.n_nodes))
    g.add_edges_from(zip(circuit.lin_a.tolist(), circuit.lin_b.tolist()))
    roots = [0] + ([circuit.held] if circuit.held is not None else [])
    reach = set()
    for r in roots:
        reach |= nx.node_connected_component(g, r)
    lost = [circuit.node_names[i] for i in range(circuit.n_nodes) if i not in reach]
    return ", ".join(map(str, lost)) if lost else "check for loops of contacts only"
