"""The meter as the diagnosis sees it: its unknowns and its readings as functions of them.

This is the one module of :mod:`planner.diagnose` (and of :mod:`planner.retrim`)
that touches the engine: it builds it once (:func:`open_engine`) and asks it for
readings only through :meth:`planner.engine.Engine.operate` with ``factors``
(multipliers of nominal values: a resistor's designator, the movement's
designator for the coil resistance, ``"i_fs"`` for the full-scale current),
batched as P parameter rows x S stimuli per call. Jacobians are one call each:
the base row and one perturbed row per unknown.

Unknowns are carried as the natural logarithm of that factor, so a value can
never turn negative and a relative change is one unit everywhere.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ..design import build
from ..engine import Engine
from ..model import MovementElement, Resistor, Spec

__all__ = ["I_FS_KEY", "MOVEMENT_PRIOR", "Unknown", "Meter", "open_engine", "jacobian", "tolerance_band"]

#: Key of the full-scale current in the engine's ``factors``.
I_FS_KEY = "i_fs"
#: Prior standard deviation (of the log value) of a movement parameter the file gives
#: no tolerance for (0: measured or calibrated), when the readings are to estimate it:
#: a weak prior, wide enough that the readings decide.
MOVEMENT_PRIOR = 0.2
#: Step of the forward differences of the Jacobians (in log value).
STEP = 1e-6


def open_engine(spec: Spec):
    """The engine of a project and its network: the one place an engine is made here.

    Returns
    -------
    (Engine, NetworkSpec)
    """
    engine = Engine(build(spec))
    return engine, engine.net


@dataclass(frozen=True)
class Unknown:
    """One value the diagnosis may estimate.

    Attributes
    ----------
    key : str
        Key of the engine's ``factors``: the resistor's designator, the
        movement's designator (coil resistance) or ``"i_fs"``.
    label : str
        What people read: ``R3``, ``M1 coil``, ``M1 full-scale current``.
    kind : str
        ``resistor``, ``coil`` or ``full_scale_current``.
    nominal : float
        Nominal value [ohm] (resistor, coil) or [A] (full-scale current).
    tolerance : float
        Tolerance from the project file (fraction; 0 when measured or calibrated).
    sigma : float
        Prior standard deviation of the log value.
    series : str or None
        E-series of the part (resistors).
    """

    key: str
    label: str
    kind: str
    nominal: float
    tolerance: float
    sigma: float
    series: str | None = None

    @property
    def unit(self) -> str:
        return "A" if self.kind == "full_scale_current" else "ohm"


class Meter:
    """A project's network with its readings as functions of its unknowns.

    Parameters
    ----------
    spec : Spec
        A loaded project (an explicit network, or ranges the sizer sizes).
    """

    def __init__(self, spec: Spec):
        self.spec = spec
        self.engine, self.net = open_engine(spec)
        self.positions = tuple(self.net.positions)
        self.position = {p.name: p for p in self.positions}
        self.elements = {e.name: e for e in self.net.elements}
        mov = spec.movement
        self.class_index = float(mov.class_index)
        self.peg = float(mov.overload.peg)
        self.movement = next(e for e in self.net.elements if isinstance(e, MovementElement))

    # --- the unknowns ----------------------------------------------------------------
    def resistor_unknowns(self) -> list[Unknown]:
        """Every resistor of the network with a tolerance above zero, in network order.

        The prior standard deviation of each log value is the part's tolerance: an
        aged part is expected about as far from its marked value as its tolerance,
        and the readings decide where they can.
        """
        default_series = self.spec.parts.resistors.series
        out = []
        for e in self.net.elements:
            if isinstance(e, Resistor) and e.tolerance > 0:
                out.append(Unknown(e.name, e.name, "resistor", float(e.value_ohm), float(e.tolerance),
                                   float(e.tolerance), e.series or default_series))
        return out

    def movement_unknowns(self) -> list[Unknown]:
        """The coil resistance and the full-scale current as unknowns.

        With a tolerance in the file the prior is that tolerance; without (the
        value was measured or calibrated when new) it is :data:`MOVEMENT_PRIOR`,
        and the diagnosis keeps the unknown only where the readings pin it down.
        """
        mov = self.spec.movement
        m = self.movement.name
        return [
            Unknown(m, f"{m} coil", "coil", float(mov.r_coil_ohm), float(mov.tolerance),
                    float(mov.tolerance) if mov.tolerance > 0 else MOVEMENT_PRIOR),
            Unknown(I_FS_KEY, f"{m} full-scale current", "full_scale_current", float(mov.i_fs_a),
                    float(mov.i_fs_tolerance), float(mov.i_fs_tolerance) if mov.i_fs_tolerance > 0 else MOVEMENT_PRIOR),
        ]

    # --- readings ----------------------------------------------------------------------
    @staticmethod
    def factors(keys: Sequence[str], theta: np.ndarray, fixed: Mapping[str, float] | None = None) -> dict:
        """Engine ``factors`` from log values ``theta`` (P, k) of ``keys``, plus fixed factors."""
        theta = np.atleast_2d(theta)
        out = {k: np.full(theta.shape[0], float(v)) for k, v in (fixed or {}).items()}
        for j, k in enumerate(keys):
            out[k] = np.exp(theta[:, j])
        return out

    def reading(self, position: str, applied, factors: Mapping[str, np.ndarray]) -> np.ndarray:
        """Pointer readings of one position, shape (P, S) [V, A or ohm].

        Parameters
        ----------
        position : str
        applied : array_like (S,)
            Values applied from the reference source.
        factors : mapping
            Multipliers of nominal values, arrays (P,).
        """
        applied = np.atleast_1d(np.asarray(applied, dtype=float))
        rows = max((np.size(v) for v in factors.values()), default=1)
        op = self.engine.operate(position, applied, factors=dict(factors))
        # a state none of whose parts has a factor comes back as one row: the same for every row
        return np.broadcast_to(np.asarray(op.reading(), dtype=float), (rows, applied.size)).copy()

    def full_scale_errors(self, factors: Mapping[str, np.ndarray], positions=None) -> np.ndarray:
        """Error at full-scale input of every position, % of full scale, shape (P, n_positions).

        Notes
        -----
        :math:`e = (r(FS) - FS) / FS \\times 100`, the contract's nominal error when
        the factors are all one.
        """
        cols = []
        for p in positions or self.positions:
            r = self.reading(p.name, [p.full_scale], factors)[:, 0]
            cols.append((r - p.full_scale) / p.full_scale * 100.0)
        return np.stack(cols, axis=1)

    def sensitive(self, position: str, keys: Sequence[str]) -> set:
        """The keys whose value changes the full-scale reading of ``position``."""
        p = self.position[position]
        theta = np.zeros((1 + len(keys), len(keys)))
        theta[1:] += np.eye(len(keys)) * 1e-3
        r = self.reading(position, [p.full_scale], self.factors(keys, theta))[:, 0]
        d = np.abs(r[1:] - r[0]) / p.full_scale
        return {k for k, x in zip(keys, d) if x > 1e-9}


def jacobian(fn, theta: np.ndarray, step: float = STEP) -> tuple[np.ndarray, np.ndarray]:
    """Value and forward-difference Jacobian of a batched function in one call.

    Parameters
    ----------
    fn : callable
        Maps parameter rows (P, k) to outputs (P, N).
    theta : ndarray (k,)
        Where to differentiate.
    step : float
        Forward step of each parameter.

    Returns
    -------
    f : ndarray (N,)
    J : ndarray (N, k)
        :math:`J_{ij} = (f_i(\\theta + h e_j) - f_i(\\theta)) / h`.
    """
    theta = np.asarray(theta, dtype=float)
    k = theta.size
    rows = np.repeat(theta[None, :], 1 + k, axis=0)
    rows[1:] += np.eye(k) * step
    out = fn(rows)
    return out[0], (out[1:] - out[0]).T / step


def tolerance_band(tolerance: float) -> tuple[float, float]:
    """Log factors at the tolerance extremes, (ln(1 - t), ln(1 + t))."""
    return (math.log(max(1.0 - tolerance, 1e-9)), math.log1p(tolerance))
