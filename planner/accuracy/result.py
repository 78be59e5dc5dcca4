"""What the accuracy check keeps: the JSON of ``planner check`` and the arrays behind it.

:func:`planner.accuracy.check` returns a :class:`CheckResult`. Its ``json`` is
the object ``planner check --json`` prints (the design contract); its
``positions`` keep, per switch position, the arrays the outputs draw from
(the sweep over the scale and the ambient range, the Monte Carlo builds and
their errors, the node voltages and part stresses at full scale), so the
dossier renders without solving anything again.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..parts import Parameter


@dataclass
class PositionArrays:
    """The arrays behind one position's figures (SI floats, numpy arrays).

    Attributes
    ----------
    name : str
        The position.
    measures : str
        ``voltage`` or ``current``.
    unit : str
        ``V`` or ``A``.
    full_scale : float
        Full scale [V] or [A].
    applied : ndarray, shape (S,)
        The points of the sweep over the scale [V] or [A] (10 %, 20 %, ..., 100 %).
    temperatures_k : ndarray, shape (T,)
        Ambient temperatures of the sweep [K], ascending, the reference included.
    readings : ndarray, shape (T, S)
        Readings with nominal parts at each temperature and applied value [V] or [A].
    i_ref, i_hot : int
        Rows of ``readings`` at the reference and the hottest ambient.
    mc_readings : ndarray, shape (N, S)
        Readings of the Monte Carlo builds over the scale at the reference temperature.
    mc_error_pct : ndarray, shape (N,)
        Full-scale error of each Monte Carlo build [% of full scale].
    node_voltages_v : dict of str -> float
        Voltage of each node of the position's circuit against the input's minus
        terminal at full scale (nominal parts, reference temperature) [V].
    stresses : dict of str -> (float, float, float)
        Per rated element: |current| [A], |voltage| [V] and |power| [W] at full scale
        (nominal parts, reference temperature).
    loaded_reading : float or None
        Reading of a full-scale source with the given internal resistance [V].
    """

    name: str
    measures: str
    unit: str
    full_scale: float
    applied: np.ndarray
    temperatures_k: np.ndarray
    readings: np.ndarray
    i_ref: int
    i_hot: int
    mc_readings: np.ndarray
    mc_error_pct: np.ndarray
    node_voltages_v: dict = field(default_factory=dict)
    stresses: dict = field(default_factory=dict)
    loaded_reading: float | None = None

    def reading_at(self, fraction: float, temperature: str = "ref") -> float:
        """The nominal reading at a point of the sweep [V] or [A].

        Parameters
        ----------
        fraction : float
            Applied value as a fraction of full scale; one of the sweep's points.
        temperature : {'ref', 'hot'}
            The reference or the hottest ambient.

        Raises
        ------
        KeyError
            When ``fraction`` is not a point of the sweep.
        """
        k = np.flatnonzero(np.isclose(self.applied, fraction * self.full_scale, rtol=1e-9, atol=0.0))
        if k.size == 0:
            raise KeyError(f"{fraction:g} of full scale is not a point of the sweep")
        row = self.i_ref if temperature == "ref" else self.i_hot
        return float(self.readings[row, k[0]])

    @property
    def full_scale_readings(self) -> np.ndarray:
        """Full-scale reading at each ambient temperature [V] or [A], shape (T,)."""
        return self.readings[:, -1]

    @property
    def gain_change_pct(self) -> np.ndarray:
        """Change of the full-scale reading from its value at the reference temperature [% of FS], shape (T,).

        Notes
        -----
        :math:`g(T) = (r(FS, T) - r(FS, T_{ref})) / FS \\times 100`: the part of the
        temperature effect that scales with the reading (a change of sensitivity).
        """
        fs_r = self.full_scale_readings
        return (fs_r - fs_r[self.i_ref]) / self.full_scale * 100.0

    @property
    def nonlinearity_pct(self) -> np.ndarray:
        """Deviation from the straight line through zero and the full-scale reading [% of FS], shape (T, S).

        Notes
        -----
        :math:`n(a, T) = (r(a, T) - a\\,r(FS, T) / FS) / FS \\times 100`: what is left
        of the error at temperature T once its gain is set right (the clamps'
        share); zero at full scale by construction.
        """
        line = self.applied[None, :] * (self.full_scale_readings[:, None] / self.full_scale)
        return (self.readings - line) / self.full_scale * 100.0


@dataclass
class CheckResult:
    """The result of :func:`planner.accuracy.check`.

    Attributes
    ----------
    json : dict
        The JSON object of ``planner check`` (see :func:`planner.accuracy.check`).
    positions : dict of str -> PositionArrays
        The arrays of each position, in switch order.
    parameters : list of Parameter
        Every toleranced parameter of the network, in network order.
    factors : dict of str -> ndarray
        The Monte Carlo builds: per parameter key, the factor of each build, shape (N,).
    """

    json: dict
    positions: dict = field(default_factory=dict)
    parameters: list[Parameter] = field(default_factory=list)
    factors: dict = field(default_factory=dict)

    def position(self, name: str) -> PositionArrays | None:
        """The arrays of a position (None when it has none)."""
        return self.positions.get(name)
