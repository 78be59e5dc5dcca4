"""AC scales: one arc per AC position read on a scale of its own, ticks by its solved nominal response.

An AC position with ``scale: own`` is read as :math:`D_{nom}^{-1}(\\bar I_m / I_{fs})`
(design contract); its arc is marked from :math:`D_{nom}` (nominal parts, reference
temperature), solved by :func:`planner.ranges.ac.nominal_response`. AC positions on
the ``shared`` scale are marked on the DC arc (:func:`planner.scale.solved.linear_definitions`).
"""

from __future__ import annotations

import numpy as np

from ..ranges.ac import nominal_response
from .ticks import Response, ScaleDef, ScalePosition

#: Samples of the nominal response from zero to full scale (as ``solved.sampled_response``).
SAMPLES = 401

__all__ = ["ac_definitions", "is_ac", "shares_dc_scale"]


def is_ac(position) -> bool:
    """Whether a position is an AC (rectifier) one."""
    return position.kind.waveform != "dc"


def shares_dc_scale(position) -> bool:
    """A DC position, or an AC one read on the shared DC scale."""
    return position.measures in ("voltage", "current") or (is_ac(position) and position.scale == "shared")


def ac_definitions(engine) -> list[ScaleDef]:
    """One ``ac`` scale per AC position with ``scale: own``, named after it (``AC 10 mA~``)."""
    out = []
    for p in engine.positions:
        if is_ac(p) and p.scale == "own":
            evaluate = nominal_response(engine, p.name)
            values = np.linspace(0.0, p.full_scale, SAMPLES)
            response = Response(values, np.asarray(evaluate(values), dtype=float), evaluate)
            out.append(ScaleDef(f"AC {p.name}", "ac", (ScalePosition(p.name, p.unit, p.full_scale),), response))
    return out
