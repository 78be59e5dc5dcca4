"""The class verdict of a position per IEC 60051: intrinsic error and temperature, judged apart.

IEC 60051 states an instrument's accuracy as a class index, the limit of its
*intrinsic error* (the error at reference conditions) in percent of the
fiducial value, and treats the ambient temperature as an *influence quantity*
with its own permitted *variation*: the change of the indication for a change of
ambient temperature, judged per 10 K against a share of the class index. The
two are judged separately; neither is added to the other.

A position is ``within class`` when

* its intrinsic error is within the class index: the worst case over the parts'
  tolerances at the reference temperature (nominal offset included) is at most
  the class index (the Monte Carlo builds at reference conditions are reported
  beside it: their yield and the 99th percentile of |error|); and
* its variation due to temperature, the largest change of the reading at any
  point of the scale from its value at the reference temperature, scaled to
  10 K, is at most the permitted variation (:data:`TEMPERATURE_SHARE_PER_10K` of
  the class index per 10 K).

The combined budget ``budget_pct = worst_case_error_pct + temperature_error_pct``
(worst case plus the whole temperature change over the ambient range) stays as a
stricter margin figure, ``budget_margin_pct = class index - budget``; it does not
decide the verdict.
"""

from __future__ import annotations

import numpy as np

from ..model import Spec

#: Permitted variation of the indication for a 10 K change of ambient temperature, as a share
#: of the class index: 1.0 (100 % of the class index per 10 K). From memory: IEC 60051-2 as
#: recalled (the figure is stated for the ambient temperature as an influence quantity within
#: its nominal range of use); verify against the standard's edition in force before relying on it.
TEMPERATURE_SHARE_PER_10K = 1.0

#: Where :data:`TEMPERATURE_SHARE_PER_10K` comes from, printed with the figures.
TEMPERATURE_SOURCE = ("IEC 60051-2, variation due to ambient temperature: at most the class index per 10 K "
                      "(from memory; verify against the edition in force)")

BUDGET_RULE = ("within class when the intrinsic error (worst case over the tolerance corners at the "
               "reference temperature, nominal offset included) is at most the class index and the "
               "variation due to temperature (largest change of the reading over the scale from its "
               "value at the reference temperature, per 10 K) is at most the permitted variation "
               f"({TEMPERATURE_SHARE_PER_10K:g} x the class index per 10 K, IEC 60051); budget = worst case + "
               "temperature (largest |change| of the full-scale reading over the ambient range) is a "
               "margin figure only (budget_margin_pct = class index - budget)")


def variation_per_10k_pct(temperatures_k, readings, full_scale: float, i_ref: int) -> float:
    """Largest variation of the indication due to temperature, scaled to 10 K [% of full scale].

    Parameters
    ----------
    temperatures_k : array_like, shape (T,)
        Ambient temperatures of the sweep [K], the reference among them.
    readings : array_like, shape (T, S)
        Readings at each temperature and point of the scale [V] or [A].
    full_scale : float
        The fiducial value [V] or [A].
    i_ref : int
        Row of the reference temperature.

    Returns
    -------
    float
        :math:`\\max_{T \\ne T_{ref}, a} |r(T, a) - r(T_{ref}, a)| / FS \\times 100
        \\times 10\\,\\mathrm{K} / |T - T_{ref}|`; 0 when the sweep has no other temperature.

    Notes
    -----
    A variation that grows linearly with the temperature difference (resistance
    tempcos over a few tens of kelvin) gives the same figure at every point; a
    curved one (a diode clamp's leakage) is judged by its steepest chord from the
    reference.

    References
    ----------
    IEC 60051-1: variation as the difference between the indications at the
    reference value and at another value of one influence quantity.
    """
    t = np.asarray(temperatures_k, dtype=float)
    rd = np.asarray(readings, dtype=float)
    dt = np.abs(t - t[i_ref])
    other = dt > 1e-9
    if not np.any(other):
        return 0.0
    change = np.max(np.abs(rd[other] - rd[i_ref][None, :]), axis=1) / abs(full_scale) * 100.0
    return float(np.max(change * 10.0 / dt[other]))


def class_figures(spec: Spec, figures: dict, arrays) -> dict:
    """The class verdict of one position: intrinsic error and temperature variation, judged apart.

    Parameters
    ----------
    spec : Spec
    figures : dict
        The position's figures so far (``worst_case_error_pct``,
        ``temperature_error_pct``).
    arrays : PositionArrays
        The sweep over the scale and the ambient range, the Monte Carlo errors.

    Returns
    -------
    dict
        ``intrinsic_error_pct`` (the worst case at the reference temperature) and
        ``intrinsic_monte_carlo_pct`` (99th percentile of |full-scale error| of the
        builds) [% of full scale], ``intrinsic_within_class``;
        ``temperature_variation_per_10k_pct``, ``temperature_permitted_per_10k_pct``
        [% of full scale per 10 K], ``temperature_within_limit``; ``budget_pct``,
        ``budget_margin_pct`` [% of full scale]; ``verdict`` (``within class`` or
        ``outside class``).

    Notes
    -----
    Within class when :math:`e_{wc} \\le c` and :math:`v_{10K} \\le s\\,c`, with
    :math:`c` the class index and :math:`s` = :data:`TEMPERATURE_SHARE_PER_10K`.
    Budget margin: :math:`c - (e_{wc} + e_T)`.

    References
    ----------
    IEC 60051-1: class index as the limit of intrinsic error in percent of the
    fiducial value (the upper range limit for a scale with zero at one end);
    influence quantities and their permitted variations. IEC 60051-2: permitted
    variation due to ambient temperature (from memory, see
    :data:`TEMPERATURE_SHARE_PER_10K`).
    """
    cls = float(spec.movement.class_index)
    wc = float(figures["worst_case_error_pct"])
    mc = float(np.percentile(np.abs(arrays.mc_error_pct), 99.0)) if arrays.mc_error_pct.size else wc
    var = variation_per_10k_pct(arrays.temperatures_k, arrays.readings, arrays.full_scale, arrays.i_ref)
    permitted = TEMPERATURE_SHARE_PER_10K * cls
    budget = wc + float(figures["temperature_error_pct"])
    intrinsic_ok = wc <= cls
    temperature_ok = var <= permitted
    return {
        "intrinsic_error_pct": wc,
        "intrinsic_monte_carlo_pct": mc,
        "intrinsic_within_class": bool(intrinsic_ok),
        "temperature_variation_per_10k_pct": var,
        "temperature_permitted_per_10k_pct": float(permitted),
        "temperature_within_limit": bool(temperature_ok),
        "budget_pct": float(budget),
        "budget_margin_pct": float(cls - budget),
        "verdict": "within class" if intrinsic_ok and temperature_ok else "outside class",
    }
