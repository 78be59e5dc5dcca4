"""``planner check``: the accuracy proof of every switch position of a design.

:func:`check` builds one :class:`planner.engine.Engine` on the design, draws the
Monte Carlo builds once for the whole instrument, runs the analyses of each
position (:mod:`.position`) and returns a :class:`planner.accuracy.result.CheckResult`:
the JSON object of ``planner check`` and the arrays behind it.
"""

from __future__ import annotations

import itertools
import math
from typing import Callable

import numpy as np

from ..design import Design, as_design
from ..engine import Engine
from ..errors import SolveError, UsageError
from ..findings import design_findings
from ..model import Spec
from ..testpoints import test_points_at
from ..trim import calibrated_check
from .classes import BUDGET_RULE, TEMPERATURE_SHARE_PER_10K, TEMPERATURE_SOURCE
from .ohms import check_ohms_position
from .position import check_position
from .result import CheckResult
from .tolerances import CountingEngine, draw_factors, parameters

#: Most Monte Carlo builds per check (a memory cap; the same as the project file's).
MAX_SAMPLES = 200_000


def _parts(engine: Engine) -> list[dict]:
    """The ``parts[]`` rows of the check: every part that has one (:meth:`planner.parts.Part.part_row`)."""
    rows = (e.part_row(engine.spec) for e in engine.net.elements)
    return [r for r in rows if r is not None]


def _assert_finite(obj, where="result"):
    if isinstance(obj, dict):
        for k, v in obj.items():
            _assert_finite(v, f"{where}.{k}")
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            _assert_finite(v, f"{where}[{i}]")
    elif isinstance(obj, float) and not math.isfinite(obj):
        raise SolveError(f"the accuracy check produced a non-finite value at {where}; "
                         "check the network for open or shorted paths")


def check(design: Design | Spec, *, samples: int | None = None, seed: int | None = None,
          source_impedance_ohm: float | None = None,
          progress: Callable[[str], None] | None = None, share=None) -> CheckResult:
    """The accuracy proof of every switch position of a project.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec is
        built into one).
    samples : int, optional
        Monte Carlo builds; ``spec.analysis.samples`` by default.
    seed : int, optional
        Seed of ``numpy.random.default_rng``; ``spec.analysis.seed`` by default.
    source_impedance_ohm : float, optional
        Internal resistance of a full-scale voltage source for the loading error
        [ohm]; no loading analysis when None.
    progress : callable(str), optional
        Receives a short message before each analysis.
    share : optional
        The positions shared with another process (the dossier's second core):
        ``share.take()`` gives the index of the next position this process
        checks (None when there is none left), ``share.rest()`` the positions
        the other process checked (:func:`check_positions`). A position taken
        there but not answered is checked here. The result is the same as
        without sharing.

    Returns
    -------
    CheckResult
        ``json``: the JSON object of ``planner check`` (design contract): ``positions[]``
        with ``name``, ``measures``, ``full_scale``, ``nominal_error_pct``,
        ``worst_case_error_pct``, ``temperature_error_pct``, ``yield_fraction``,
        ``linearity[]`` (``applied``, ``reading``, ``error_pct``),
        ``input_resistance_ohm``, ``burden_voltage_v`` (current positions),
        ``intrinsic_error_pct``, ``intrinsic_within_class``,
        ``temperature_variation_per_10k_pct``, ``temperature_permitted_per_10k_pct``,
        ``temperature_within_limit``, ``budget_pct``, ``budget_margin_pct``,
        ``verdict`` and more (:func:`planner.accuracy.classes.class_figures`); ``parts[]`` with ``name``, ``kind``,
        ``value_ohm``, ``target_ohm``; ``requirements_met``. ``positions``: the
        arrays behind each position's figures (the sweep over the scale and the
        ambient range, the Monte Carlo builds and their errors, node voltages
        and part stresses at full scale); ``factors``: the Monte Carlo builds.

    Raises
    ------
    UsageError
        For a bad ``samples``, ``seed`` or ``source_impedance_ohm``.
    SolveError
        When the solver cannot find an operating point.

    Notes
    -----
    Errors are in % of full scale: :math:`e = (r - a) / FS \\times 100` with the
    reading :math:`r = I_m / I_{fs} \\times FS`. A position is within class
    when its intrinsic error (the worst case at the reference temperature,
    nominal offset included) is at most the class index and its variation due
    to temperature per 10 K is at most the permitted variation
    (:mod:`planner.accuracy.classes`); the budget :math:`B = e_{wc} + e_T` is
    reported as a margin.

    References
    ----------
    IEC 60051-1: class index as the limit of intrinsic error in percent of the
    fiducial value, which is the upper range limit for a scale with zero at one end.
    """
    design = as_design(design)
    spec = design.spec
    samples = spec.analysis.samples if samples is None else samples
    seed = spec.analysis.seed if seed is None else seed
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or not 2 <= samples <= MAX_SAMPLES:
        raise UsageError(f"samples must be a whole number from 2 to {MAX_SAMPLES}, not {samples!r}")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise UsageError(f"seed must be a whole number of at least 0, not {seed!r}")
    if source_impedance_ohm is not None:
        source_impedance_ohm = float(source_impedance_ohm)
        if not math.isfinite(source_impedance_ohm) or source_impedance_ohm < 0:
            raise UsageError(f"the source impedance must be a finite resistance >= 0 ohm, "
                             f"not {source_impedance_ohm!r}")
    say = progress or (lambda message: None)
    say("preparing the network")
    run, args = _prepared(design, samples, seed, source_impedance_ohm)
    engine, params, mc_factors = run.engine, args[0], args[1]
    n = len(engine.positions)
    done = _positions(run, spec, iter(range(n)) if share is None else iter(share.take, None), args, say)
    if share is not None:  # the positions checked elsewhere, and any taken there but not answered
        for i, (res, ok, arr, points, calls) in share.rest().items():
            done.setdefault(i, (res, ok, arr))
            run.points += points
            run.calls += calls
        done.update(_positions(run, spec, (i for i in range(n) if i not in done), args, say))
    positions, oks, arrays = [], [], {}
    for i, pos in enumerate(engine.positions):
        res, ok, arr = done[i]
        positions.append(res)
        oks.append(ok)
        arrays[pos.name] = arr
    amb = spec.ambient
    result = {
        "title": spec.title,
        "class_index": float(spec.movement.class_index),
        "reference_temperature_k": float(amb.t_ref_k),
        "ambient_min_k": float(amb.t_min_k),
        "ambient_max_k": float(amb.t_max_k),
        "samples": int(samples),
        "seed": int(seed),
        "budget_rule": BUDGET_RULE,
        "temperature_share_per_10k": float(TEMPERATURE_SHARE_PER_10K),
        "temperature_rule_source": TEMPERATURE_SOURCE,
        "positions": positions,
        "parts": _parts(engine),
        "instrument_yield_fraction": float(np.mean(np.all(np.vstack(oks), axis=0))) if oks else 1.0,
        "operating_points": int(run.points),
        "solver_calls": int(run.calls),
    }
    if source_impedance_ohm is not None:
        result["source_impedance_ohm"] = source_impedance_ohm
    result["test_points"] = test_points_at(engine.net, {q: a.node_voltages_v for q, a in arrays.items()})
    trims = tuple(getattr(design.sizing, "trims", ()) or ()) if spec.analysis.trim else ()
    if spec.analysis.trim:  # the calibration simulated (planner.trim); the verdicts after trimming decide
        say("calibration: trimmers set at their positions")
        result.update(calibrated_check(run, trims, params, positions, float(spec.movement.class_index), int(seed)))
    verdict = "verdict_after_trim" if trims else "verdict"
    outside = [p["name"] for p in positions if p.get(verdict, p["verdict"]) != "within class"]
    result["positions_outside_class"] = outside  # after trimming, where trimmers are planned
    result["requirements_met"] = not outside
    result["findings"] = design_findings(design, engine)  # ratings at full scale (planner.findings)
    _assert_finite(result)
    return CheckResult(json=result, positions=arrays, parameters=params, factors=mc_factors)


def _prepared(design: Design, samples, seed, source_impedance_ohm) -> tuple[CountingEngine, tuple]:
    """The engine of a check and what each position's check takes besides it: the toleranced
    parameters, the Monte Carlo builds (drawn once for the whole instrument), samples, seed and the
    source impedance."""
    run = CountingEngine(Engine(design))
    params = parameters(run.engine)
    mc_factors = draw_factors(params, int(samples), np.random.default_rng(int(seed)))
    return run, (params, mc_factors, int(samples), int(seed), source_impedance_ohm)


def _positions(run: CountingEngine, spec, indices, args, say) -> dict[int, tuple]:
    """``{index: (row, within-class mask, arrays)}`` of the positions ``indices`` gives, in its order.

    Each position's corner draws come from its own generator (the seed and the
    position's index), so a position's answer does not depend on which others
    were checked before it, nor in which process.
    """
    params, mc_factors, samples, seed, source_impedance_ohm = args
    done = {}
    for i in indices:
        pos = run.engine.positions[i]
        checker = POSITION_CHECKS.get(pos.measures, check_position)
        done[i] = checker(run, spec, pos, params, mc_factors, samples, np.random.default_rng([seed, i]),
                          source_impedance_ohm, say)
    return done


def check_positions(design: Design | Spec, take: Callable[[], int | None], *, samples: int, seed: int,
                    source_impedance_ohm: float | None = None) -> dict[int, tuple]:
    """Check the positions ``take()`` hands out, one at a time, for another process's :func:`check`.

    Parameters
    ----------
    design : Design
    take : callable() -> int or None
        The index of the next position to check; None ends the work.
    samples, seed : int
        Those of the check this work is part of (checked there).
    source_impedance_ohm : float, optional
        As in :func:`check`.

    Returns
    -------
    dict
        ``{index: (row, within-class mask, arrays, operating points, solver calls)}``
        for every position checked. The work stops at the first position that
        raises, without an answer for it: the process that owns the check checks
        it again, and raises there.
    """
    out = {}
    i = take()
    if i is None:  # nothing left: no engine built
        return out
    run, args = _prepared(as_design(design), samples, seed, source_impedance_ohm)
    for i in itertools.chain([i], iter(take, None)):
        points, calls = run.points, run.calls
        try:
            res, ok, arr = _positions(run, design.spec, [i], args, lambda message: None)[i]
        except Exception:  # noqa: BLE001 - checked again by the owner of the check, which raises it
            break
        out[i] = (res, ok, arr, run.points - points, run.calls - calls)
    return out


#: Checks of the range kinds that are not read on a linear scale, by ``measures``.
POSITION_CHECKS = {"resistance": check_ohms_position}


def check_project(design: Design | Spec, **kwargs) -> dict:
    """The JSON object of ``planner check``: ``check(design, **kwargs).json`` (see :func:`check`)."""
    return check(design, **kwargs).json


