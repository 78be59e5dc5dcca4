"""The solver's inputs: a compiled switch state and the parameters of its nonlinear parts."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


def _no_index():
    return np.zeros(0, dtype=np.intp)


@dataclass(frozen=True)
class Circuit:
    """A switch state compiled to flat index arrays (built by :func:`planner.network.compile_state`).

    Node 0 is the reference (the input's minus terminal); ``held``, when set, is the
    index of the node a voltage stimulus holds at the stimulus value; a current
    stimulus enters at ``inject`` and leaves at node 0. Linear branch ``j`` joins
    nodes ``lin_a[j]`` and ``lin_b[j]``. Port ``k`` joins nodes ``port_a[k]`` and
    ``port_c[k]``; diode ``d`` sits on port ``diode_port[d]`` with its anode on
    ``port_a`` when ``diode_sign[d]`` is +1, on ``port_c`` when -1. Varistor ``m``
    sits on port ``varistor_port[m]`` with its first terminal on ``port_a`` when
    ``varistor_sign[m]`` is +1, on ``port_c`` when -1 (a varistor is symmetric; the
    sign only says which way its reported current and voltage count). A diode and a
    varistor on the same pair of nodes share one port.
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
    varistors: tuple = ()
    varistor_port: np.ndarray = field(default_factory=_no_index)
    varistor_sign: np.ndarray = field(default_factory=_no_index)

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


@dataclass(frozen=True)
class Varistors:
    """Metal-oxide varistor parameters per parameter set and varistor, shapes (P, M) or (M,).

    Attributes
    ----------
    v1 : ndarray
        Voltage at the current ``i1`` (the "varistor voltage", usually at 1 mA) [V], > 0.
    alpha : ndarray
        Nonlinearity exponent [1], >= 1 (metal-oxide parts: about 20 to 60; 2..60 here).
    i1 : ndarray
        Current at ``v1`` [A], > 0; 1 mA by default.

    Notes
    -----
    The law, symmetric in the voltage:

    .. math:: I = I_1 \\,\\mathrm{sgn}(V) \\left(\\frac{|V|}{V_1}\\right)^{\\alpha}

    References
    ----------
    L. M. Levinson and H. R. Philipp, "The physics of metal oxide varistors", Journal of
    Applied Physics 46(3), 1332-1341, 1975 (the power law I = k V^alpha); T. K. Gupta,
    "Application of zinc oxide varistors", Journal of the American Ceramic Society
    73(7), 1817-1840, 1990 (the varistor voltage at 1 mA, alpha of metal-oxide parts).
    """

    v1: np.ndarray
    alpha: np.ndarray
    i1: np.ndarray = 1e-3

    def map(self, fn) -> "Varistors":
        return Varistors(fn(self.v1), fn(self.alpha), fn(self.i1))
