"""The solver's result: operating points of a batch, node voltages and branch currents on demand."""

from __future__ import annotations

import sys

import numpy as np

from ..errors import SolveError

#: Upper bound on floats in the results of one call (what :class:`Solution` holds for
#: every case, and the full node-voltage and branch-current arrays when they are asked
#: for; about 0.8 GB); a larger batch is refused with a clear error instead of
#: exhausting the memory.
MAX_RESULT_FLOATS = 100_000_000


def check_batch(name: str, points: int, floats: int) -> None:
    """Refuse a batch whose results would exceed :data:`MAX_RESULT_FLOATS` (a memory limit).

    The limit is read from the package (``planner.solve.MAX_RESULT_FLOATS``) at each call,
    so that lowering it there (a test, a constrained deployment) takes effect everywhere.
    """
    limit = getattr(sys.modules.get(__package__), "MAX_RESULT_FLOATS", MAX_RESULT_FLOATS)
    if floats > limit:
        raise SolveError(
            f"{name}: {points} operating points in one batch would need about {floats * 8 / 1e9:.1f} GB for "
            f"the results (limit {limit * 8 / 1e9:.1f} GB); lower the Monte Carlo samples "
            "(--samples) or the number of stimuli")


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
        on first use), EMF included.
    v_junction : ndarray, shape (P, S, D)
        Junction voltage of each diode [V] (terminal voltage less R_s drop).
    i_diode : ndarray, shape (P, S, D)
        Terminal current of each diode, anode to cathode [A] (junction plus leakage).
    v_varistor : ndarray, shape (P, S, M)
        Voltage of each varistor, first terminal less second [V].
    i_varistor : ndarray, shape (P, S, M)
        Current of each varistor from its first to its second terminal [A].
    iterations : int
        Largest Newton iteration count used.
    fallbacks : dict
        How many cases needed source stepping or gmin stepping.
    start_rows : tuple or None
        The reduced equations' solution, node rows (P*S, T) and part voltages
        (P*S, D), for a later call to start from (``solve(start=)``); None for a
        circuit without nonlinear parts.

    Notes
    -----
    The solver keeps the voltages of the touched nodes (those a diode or varistor
    reaches); every other node's voltage is the linear part's response to them, to
    the stimulus and to the EMFs:

    .. math:: v_I = H u + h\\,s + h_e

    (H: dimensionless gains between 0 and 1 for a resistive network, so the rounding
    stays that of the node voltages themselves). A branch current is

    .. math:: i_j = (v_a - v_b - e_j) / r_j

    (``e_j`` the branch's EMF, 0 without). :meth:`node_voltage` and
    :meth:`branch_current` form one column only; the full arrays are formed (and kept)
    on first access to ``v_node`` or ``i_branch``.
    """

    def __init__(self, circuit, stim, lin, r, u, v_junction, i_diode, iterations=0, fallbacks=None, *,
                 emf=None, v_varistor=None, i_varistor=None, between=None):
        self.circuit = circuit
        self._stim = stim  # (P, S)
        self._lin = lin
        self._r = r  # (P, L)
        self._emf = emf  # (P, L) or None
        self._u = u  # (P, S, T) touched node voltages
        self.v_junction = v_junction
        self.i_diode = i_diode
        p, s = stim.shape
        self.v_varistor = v_varistor if v_varistor is not None else np.zeros((p, s, 0))
        self.i_varistor = i_varistor if i_varistor is not None else np.zeros((p, s, 0))
        self.iterations = int(iterations)
        self.fallbacks = dict(fallbacks or {"source_stepping": 0, "gmin_stepping": 0})
        self._between = between or {}  # node: (end0, end1, fraction) for the inner nodes of a stack
        self._nodes: dict = {}
        self._branch: dict = {}
        self._v_node = None
        self._i_branch = None
        self.start_rows = None

    @property
    def shape(self) -> tuple:
        return self._stim.shape

    @property
    def stimulus(self) -> np.ndarray:
        """The source values solved, one row per parameter set, shape (P, S) [V or A]."""
        return self._stim

    def node_voltage(self, i: int) -> np.ndarray:
        """Voltage of node ``i`` [V], shape (P, S)."""
        i = int(i)
        if self._v_node is not None:
            return self._v_node[:, :, i]
        v = self._nodes.get(i)
        if v is None:
            v = self._column(i)
            self._nodes[i] = v
        return v

    def _column(self, i):
        if i in self._between:
            e0, e1, f = self._between[i]
            v0 = self.node_voltage(e0)
            return v0 + f * (self.node_voltage(e1) - v0)
        lin = self._lin
        kind, k = lin.node_kind(i)
        if kind == "ground":
            return np.zeros(self._stim.shape)
        if kind == "held":
            return self._stim.copy()
        if kind == "touched":
            return self._u[:, :, k].copy()
        if kind == "none":
            return np.zeros(self._stim.shape)
        v = self._stim * lin.h[:, k][:, None]
        if lin.he is not None:
            v = v + lin.he[:, k][:, None]
        for a, m in enumerate(lin.anchors):
            v = v + lin.hu[:, k, a][:, None] * self._u[:, :, m]
        return v

    def branch_current(self, j: int) -> np.ndarray:
        """Current of linear branch ``j`` from its first to its second node [A], shape (P, S)."""
        j = int(j)
        if self._i_branch is not None:
            return self._i_branch[:, :, j]
        i = self._branch.get(j)
        if i is None:
            c = self.circuit
            dv = self.node_voltage(c.lin_a[j]) - self.node_voltage(c.lin_b[j])
            if self._emf is not None:
                dv = dv - self._emf[:, j][:, None]
            i = dv / self._r[:, j][:, None]
            self._branch[j] = i
        return i

    @property
    def v_node(self) -> np.ndarray:
        if self._v_node is None:
            c = self.circuit
            check_batch(c.name, self._stim.size, self._stim.size * c.n_nodes)
            lin = self._lin
            p, s = self._stim.shape
            v = np.zeros((p, s, c.n_nodes))
            if c.held is not None:
                v[:, :, c.held] = self._stim
            if lin.touched:
                v[:, :, lin.touched] = self._u
            if lin.interior:
                vi = self._stim[:, :, None] * lin.h[:, None, :]
                if lin.he is not None:
                    vi = vi + lin.he[:, None, :]
                if len(lin.anchors):
                    vi = vi + np.einsum("pia,psa->psi", lin.hu, self._u[:, :, lin.anchors])
                v[:, :, lin.interior] = vi
            for i, (e0, e1, f) in self._between.items():
                v[:, :, i] = v[:, :, e0] + f * (v[:, :, e1] - v[:, :, e0])
            self._v_node = v
        return self._v_node

    @property
    def i_branch(self) -> np.ndarray:
        if self._i_branch is None:
            c = self.circuit
            check_batch(c.name, self._stim.size, self._stim.size * (c.n_nodes + len(c.branches)))
            v = self.v_node
            dv = v[:, :, c.lin_a] - v[:, :, c.lin_b]
            if self._emf is not None:
                dv = dv - self._emf[:, None, :]
            self._i_branch = dv / self._r[:, None, :]
        return self._i_branch
