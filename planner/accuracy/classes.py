"""The class verdict of a position from its accuracy figures.

Budget rule: ``budget_pct = worst_case_error_pct + temperature_error_pct``. The
worst case already contains the nominal offset (it is the largest |error| over
the corners, each of which carries the offset), so the nominal error is not
added again. A position is ``within class`` when its budget is at most the
class index.
"""

from __future__ import annotations

from ..model import Spec

BUDGET_RULE = ("budget = worst case (largest |error| at full scale over the tolerance corners, nominal "
               "offset included) + temperature (largest |change| of the full-scale reading over the "
               "ambient range); within class when budget <= class index")


def class_figures(spec: Spec, figures: dict) -> dict:
    """The budget and the class verdict of one position.

    Parameters
    ----------
    spec : Spec
    figures : dict
        The position's figures so far (``worst_case_error_pct``,
        ``temperature_error_pct``).

    Returns
    -------
    dict
        ``budget_pct`` [% of full scale] and ``verdict`` (``within class`` or
        ``outside class``).

    Notes
    -----
    :math:`B = e_{wc} + e_T`; within class when :math:`B \\le` class index.

    References
    ----------
    IEC 60051-1: class index as the limit of intrinsic error in percent of the
    fiducial value.
    """
    cls = float(spec.movement.class_index)
    budget = figures["worst_case_error_pct"] + figures["temperature_error_pct"]
    return {"budget_pct": float(budget), "verdict": "within class" if budget <= cls else "outside class"}
