"""The result of a diode fit."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..model import DiodeModel

@dataclass(frozen=True)
class Fit:
    """A fitted diode model with its uncertainty and residuals.

    Attributes
    ----------
    name : str
        Model name for ``parts.diodes``.
    params : dict
        Fitted values by JSON key: ``saturation_current_a`` [A] at
        ``temperature_k``, ``emission``, ``series_resistance_ohm`` [ohm],
        ``leakage_resistance_ohm`` [ohm], ``band_gap_ev`` [eV], ``xti``.
    uncertainty : dict
        1-sigma uncertainty of each fitted parameter, same keys and units; None for
        a parameter that was held or that ended on a search bound.
    residuals : ndarray
        Residual of each point used, on the fit's scale (ln of current for
        forward points, asinh for the others), model minus measurement.
    n_points : int
        Points used in the fit.
    temperatures : tuple of float
        Distinct measurement temperatures [K].
    temperature_k : float
        Temperature at which ``params`` hold [K].
    fitted : tuple of str
        Keys of the parameters that were fitted (the others were held).
    unresolved : tuple of str
        Keys of ``fitted`` the points do not determine: a series resistance held at
        0 or a leakage resistance left out (``inf``) because the points do not show
        it (see ``fit``), or a parameter that ended on its search bound.
    residual_rms, residual_max : float
        Root mean square and largest magnitude of ``residuals``.
    lines : ndarray of int
        File line of each residual.
    forward : ndarray of bool
        Which residuals are on the ln scale.
    current_floor_a : float
        Floor of the asinh scale [A].
    correlation : ndarray
        Correlation matrix of the parameters fitted in the end (``fitted`` order,
        ``unresolved`` ones left out).
    notes : tuple of str
        Remarks for the reader (held parameters, assumed temperature, ...).
    path : str or None
        The points file.
    problems : tuple of str
        Why the fit is not usable (:func:`planner.diodefit.quality.problems`):
        the points do not follow the diode law. Empty for a usable fit.
    """

    name: str
    params: dict
    uncertainty: dict
    residuals: np.ndarray
    n_points: int
    temperatures: tuple
    temperature_k: float
    fitted: tuple
    unresolved: tuple = ()
    residual_rms: float = 0.0
    residual_max: float = 0.0
    lines: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))
    forward: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    current_floor_a: float = 0.0
    correlation: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    notes: tuple = ()
    path: str | None = None
    problems: tuple = ()

    @property
    def usable(self) -> bool:
        """Whether the fit passed the quality gate (a model one may paste)."""
        return not self.problems

    def model(self, name: str | None = None) -> DiodeModel:
        """The fit as a :class:`planner.model.DiodeModel` (ratings left at their defaults)."""
        p = self.params
        return DiodeModel(
            name=name or self.name,
            i_s_a=p["saturation_current_a"],
            n=p["emission"],
            r_s_ohm=p["series_resistance_ohm"],
            r_p_ohm=p["leakage_resistance_ohm"],
            eg_ev=p["band_gap_ev"],
            xti=p["xti"],
            t_nom_k=self.temperature_k,
        )

