"""Resistance positions in the accuracy check: the ohms figures and their class verdict.

The figures are those of :mod:`planner.ohms_check` (errors after re-zeroing, in % of
scale length); the verdict follows IEC 60051 as for the linear ranges: the intrinsic
error (worst case at the reference temperature) against the class index, and the
temperature variation per 10 K against its permitted share, judged apart; the
adjuster must also zero the meter over the whole battery span.
"""

from __future__ import annotations

import numpy as np

from ..ohms_check import check_resistance
from .classes import TEMPERATURE_SHARE_PER_10K
from .result import PositionArrays
from .position import temperature_points
from .tolerances import current_carrying

__all__ = ["check_ohms_position"]


def check_ohms_position(run, spec, pos, params_all, mc_factors, samples, rng_corners, source_impedance_ohm, say):
    """A resistance position's ``positions[]`` entry, its builds within class, and its arrays.

    Notes
    -----
    Temperature variation per 10 K: :math:`\\max_T |\\Delta D_c(T)| \\cdot 10 / |T - T_{ref}|`
    of the centre deflection, re-zeroed at each ambient [% of scale length].

    References
    ----------
    IEC 60051-1 (class index, fiducial value of a non-linear scale: its length; from
    memory) and IEC 60051-2 (permitted variation with temperature, see
    :data:`planner.accuracy.classes.TEMPERATURE_SHARE_PER_10K`).
    """
    carrying = current_carrying(run.engine, pos.name)
    params = [p for p in params_all if p.element is None or p.element in carrying]
    out, ok, arr = check_resistance(run, spec, pos, params, mc_factors, samples, rng_corners,
                                    temperature_points(spec), say)
    cls = float(spec.movement.class_index)
    t, d, i_ref = arr["temperatures_k"], arr["center_deflection"], arr["i_ref"]
    dt = np.abs(t - t[i_ref])
    var = float(np.max(np.where(dt > 0, 100.0 * np.abs(d - d[i_ref]) * 10.0 / np.where(dt > 0, dt, 1.0), 0.0)))
    wc = float(out["worst_case_error_pct"])
    permitted = TEMPERATURE_SHARE_PER_10K * cls
    intrinsic_ok = wc <= cls and out["zeroable_over_battery_span"] and out["all_cases_zeroed"]
    out.update({
        "intrinsic_error_pct": wc,
        "intrinsic_monte_carlo_pct": float(np.percentile(np.abs(arr["mc_error_pct"]), 99.0)),
        "intrinsic_within_class": bool(intrinsic_ok),
        "temperature_variation_per_10k_pct": var,
        "temperature_permitted_per_10k_pct": float(permitted),
        "temperature_within_limit": bool(var <= permitted),
        "budget_margin_pct": float(cls - out["budget_pct"]),
        "verdict": "within class" if intrinsic_ok and var <= permitted else "outside class",
    })
    arrays = PositionArrays(
        name=pos.name, measures=pos.measures, unit="ohm", full_scale=float(pos.full_scale),
        applied=np.asarray(arr["marks"], dtype=float), temperatures_k=np.array([t[i_ref]]),
        readings=np.asarray(arr["readings"], dtype=float)[None, :], i_ref=0, i_hot=0,
        mc_readings=np.asarray(arr["mc_readings"], dtype=float), mc_error_pct=np.asarray(arr["mc_error_pct"]))
    return out, ok, arrays
