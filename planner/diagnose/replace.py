"""Replacement values that bring every position of an existing network back within a target.

Shared by ``planner diagnose`` (the parts' present values are the estimate) and
``planner size --retrim`` (the present values are the nominal ones). The network
is kept: only resistor values change, as few as will do.

1. **Which parts.** The parts that must go (drifted ones) first; then, while some
   position is beyond its limit (the class for a diagnosis, the target for a
   retrim), the part that lowers the sum of the squared errors most (a
   linearised screen of every candidate, then the exact solve), one at a time.
2. **Which values.** The continuous values of the parts to replace that zero
   the positions' full-scale errors in least squares (with a faint pull towards
   each part's marked value, so that where the readings leave freedom the change
   is the least).
3. **Which parts to buy.** Part by part, the nearest E-series value when its
   rounding costs at most half the target, else the best series or parallel pair
   (:func:`planner.sizing.choose_value`); after each part the values still free are
   solved again, so they make up for its rounding. Where a position still misses,
   the part that matters most to it becomes a fixed part and a trimmer (1-2-5
   values, common practice) set on the bench.
   Values aim at the target (a share of the class); parts are added, and trimmers
   fitted, only for positions beyond the limit.
4. **Check.** Every position re-solved through the engine with the chosen values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from .. import eseries
from .meter import Meter, jacobian

__all__ = ["AIM", "TRIM_SPAN", "Replacement", "Plan", "plan_replacements", "trimmer_value"]

#: Share of the target one part's rounding may cost before a pair is chosen instead.
AIM = 0.5
#: Half-span of a trimmer around the wanted value (fraction): fixed part at or below
#: (1 - span) x wanted, trimmer reaching (1 + span) x wanted.
TRIM_SPAN = 0.1
#: Pull of each value towards its marked value (target units per unit log change).
LEAST_CHANGE = 0.1
#: Bound of a replacement's log value relative to the marked value (a tenth to ten times).
BOUND = math.log(10.0)
#: Most evaluations of one solve for continuous values (each is one Jacobian, one
#: engine call per position; the problem is nearly linear in the log values).
MAX_NFEV = 25
#: Trimmer values: 1-2-5 steps per decade (common practice for trimming potentiometers).
TRIMMER_STEPS = (1.0, 2.0, 5.0)


def trimmer_value(span_ohm: float) -> float:
    """Smallest 1-2-5 trimmer value at least ``span_ohm`` [ohm]."""
    d = math.floor(math.log10(span_ohm))
    for decade in (d, d + 1):
        for m in TRIMMER_STEPS:
            v = float(f"{m}e{decade}")
            if v >= span_ohm * (1 - 1e-12):
                return v
    return float(f"1e{d + 2}")  # pragma: no cover - the loop always finds one


@dataclass(frozen=True)
class Replacement:
    """A part to fit instead of one in the meter.

    Attributes
    ----------
    part : str
        Designator.
    nominal_ohm : float
        Marked value [ohm].
    present_ohm : float
        Value in the meter now: the estimate (diagnosis) or the marked value (retrim) [ohm].
    wanted_ohm : float
        Value that restores the positions, before choosing parts [ohm].
    value_ohm : float
        What the chosen parts make (a trimmer at its setting) [ohm].
    series : str
        E-series of the fixed parts.
    arrangement : str
        ``single``, ``series pair``, ``parallel pair`` or ``fixed + trimmer``.
    parts : tuple of dict
        ``{"value_ohm", "series", "trimmer"}`` for each part to fit (a pair in
        parallel is two parts across one another; in series, end to end).
    trimmer_range_ohm : tuple or None
        (low, high) the fixed part and trimmer reach [ohm].
    """

    part: str
    nominal_ohm: float
    present_ohm: float
    wanted_ohm: float
    value_ohm: float
    series: str
    arrangement: str
    parts: tuple
    trimmer_range_ohm: tuple | None = None

    @property
    def change_pct(self) -> float:
        """New value against the marked one, %."""
        return (self.value_ohm / self.nominal_ohm - 1.0) * 100.0


@dataclass
class Plan:
    """Replacements and the positions' full-scale errors before and after.

    Attributes
    ----------
    positions : tuple of str
    target_pct : ndarray
        Largest |error| allowed at each position, % of full scale.
    errors_before_pct, errors_after_pct : ndarray
        Full-scale error of each position now and with the replacements [%].
    replacements : list of Replacement
    met : bool
        Every position within its limit after the replacements.
    limit_pct : ndarray
        Largest |error| accepted at each position, % of full scale.
    """

    positions: tuple
    target_pct: np.ndarray
    errors_before_pct: np.ndarray
    errors_after_pct: np.ndarray
    replacements: list = field(default_factory=list)
    met: bool = False
    limit_pct: np.ndarray | None = None


class _Problem:
    """The positions' errors as a function of the log values of some resistors."""

    def __init__(self, meter: Meter, present: dict, target: np.ndarray):
        self.meter = meter
        self.present = dict(present)
        self.target = target

    def errors(self, names, phi_rows, fixed=None) -> np.ndarray:
        """Full-scale errors (P, n_positions) [%] with ``names`` at log values ``phi_rows``."""
        base = dict(self.present)
        base.update(fixed or {})
        for n in names:
            base.pop(n, None)
        return self.meter.full_scale_errors(self.meter.factors(list(names), phi_rows, base))

    def solve(self, names, phi0, fixed=None, bounds=None) -> np.ndarray:
        """Log values of ``names`` that zero the errors in least squares."""
        if not names:
            return np.zeros(0)
        lo, hi = bounds if bounds is not None else (np.full(len(names), -BOUND), np.full(len(names), BOUND))
        cache: dict = {}

        def both(phi):
            key = phi.tobytes()
            if key not in cache:
                cache.clear()
                e, j = jacobian(lambda rows: self.errors(names, rows, fixed), phi)
                cache[key] = (np.concatenate([e / self.target, LEAST_CHANGE * phi]),
                              np.vstack([j / self.target[:, None], LEAST_CHANGE * np.eye(len(names))]))
            return cache[key]

        x0 = np.clip(np.asarray(phi0, dtype=float), lo + 1e-12, hi - 1e-12)
        res = least_squares(lambda p: both(p)[0], x0, jac=lambda p: both(p)[1], bounds=(lo, hi),
                            method="trf", xtol=1e-10, ftol=1e-12, gtol=1e-10, max_nfev=MAX_NFEV)
        return res.x


def _nominal(meter: Meter, name: str) -> float:
    return float(meter.elements[name].value_ohm)


def _choose(series: str, wanted: float, allowed: float):
    from ..sizing import choose_value  # the sizer's part choice: a single value or the best pair

    return choose_value(series, wanted, allowed)


def _fixed_parts(choice, series: str) -> tuple:
    return tuple({"value_ohm": v, "series": series, "trimmer": False} for unit in choice.units for v in unit)


def plan_replacements(meter: Meter, present: dict, candidates, must, target_pct, series_for: dict,
                      limit_pct=None) -> Plan:
    """Replacement values that bring every position within its target.

    Parameters
    ----------
    meter : Meter
    present : dict
        Engine factor (value / marked value) of every part that is not at its
        marked value now: the diagnosis's estimate, empty for a retrim.
    candidates : sequence of str
        Resistor designators that may be replaced, in order of preference.
    must : sequence of str
        Designators that are replaced in any case (drifted parts).
    target_pct : float or array_like (n_positions,)
        Full-scale error each position is aimed within [% of full scale]: the
        parts' values are chosen for it.
    series_for : dict
        E-series of the replacement for each designator.
    limit_pct : float or array_like (n_positions,), optional
        Largest |full-scale error| accepted at each position [%]: a further part is
        replaced, or a trimmer fitted, only where a position is beyond it (default:
        the target). A diagnosis accepts the class, so that no part that has not
        drifted is touched for a position already within class.

    Returns
    -------
    Plan

    Notes
    -----
    Full-scale error of position k: :math:`e_k = (r_k(FS_k) - FS_k)/FS_k \\times 100`.
    The values :math:`\\varphi` (log of value over marked value) of the parts
    replaced minimise :math:`\\sum_k (e_k/t_k)^2 + \\lambda^2 \\sum_j \\varphi_j^2`
    with :math:`\\lambda` = :data:`LEAST_CHANGE`; a part's rounding
    :math:`\\delta` costs about :math:`g\\,\\delta` with
    :math:`g = \\max_k |\\partial e_k / \\partial \\varphi|`. A pair in series makes
    :math:`R_a + R_b`, in parallel :math:`R_a R_b / (R_a + R_b)`.

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors* (the
    E-series values); IEC 60051-1:2016, clause 3 (class index, % of the fiducial
    value); J. J. More, "The Levenberg-Marquardt algorithm: implementation and
    theory", Lecture Notes in Mathematics 630, Springer, 1978,
    doi:10.1007/BFb0067700 (the continuous values).
    """
    positions = tuple(p.name for p in meter.positions)
    target = np.broadcast_to(np.asarray(target_pct, dtype=float), (len(positions),)).copy()
    limit = target if limit_pct is None else np.broadcast_to(np.asarray(limit_pct, dtype=float),
                                                             (len(positions),)).copy()
    prob = _Problem(meter, present, target)
    before = prob.errors([], np.zeros((1, 0)))[0]
    names = list(dict.fromkeys(must))
    phi = prob.solve(names, np.zeros(len(names)))
    free = [c for c in candidates if c not in names]
    while True:
        err = prob.errors(names, phi[None, :])[0] if names else before
        if np.max(np.abs(err) / limit) <= 1.0 or not free:
            break
        # linearised screen: every candidate's column, then the exact solve for the best
        cols = names + free
        phi_all = np.concatenate([phi, [math.log(present.get(c, 1.0)) for c in free]])
        e0, jac = jacobian(lambda rows: prob.errors(cols, rows), phi_all)
        jw = jac / target[:, None]
        ew = e0 / target
        best, best_cost = None, float(ew @ ew) * 0.99
        for c in range(len(names), len(cols)):
            a = jw[:, list(range(len(names))) + [c]]
            step, *_ = np.linalg.lstsq(a, -ew, rcond=None)
            res = ew + a @ step
            cost = float(res @ res)
            if cost < best_cost - 1e-12:
                best, best_cost = cols[c], cost
        if best is None:
            break
        names.append(best)
        free.remove(best)
        phi = prob.solve(names, np.concatenate([phi, [math.log(present.get(best, 1.0))]]))

    # choose parts, one at a time, solving the rest again after each
    order = sorted(range(len(names)), key=lambda j: -_reach(prob, names, phi, j))
    chosen: dict[str, object] = {}
    fixed: dict[str, float] = {}
    for j in order:
        name = names[j]
        rest = [n for n in names if n not in fixed and n != name]
        cur = dict(zip(names, phi))
        e0, jac = jacobian(lambda rows: prob.errors([name], rows, {**fixed, **_factors(rest, cur)}), [cur[name]])
        g = max(float(np.max(np.abs(jac[:, 0]) / target)), 1e-12)
        wanted = _nominal(meter, name) * math.exp(cur[name])
        choice = _choose(series_for[name], wanted, AIM / g)
        chosen[name] = (choice, wanted)
        fixed[name] = choice.value / _nominal(meter, name)
        if rest:
            phi_rest = prob.solve(rest, np.array([cur[n] for n in rest]), fixed)
            for n, v in zip(rest, phi_rest):
                phi[names.index(n)] = v
    after = prob.errors([], np.zeros((1, 0)), fixed)[0]

    # a trimmer where a position still misses
    trims: dict[str, tuple[float, float, float]] = {}
    for _ in range(len(names)):
        miss = np.abs(after) > limit * (1 + 1e-9)
        if not miss.any():
            break
        k = int(np.argmax(np.abs(after) / limit))
        others = [n for n in names if n not in trims]
        if not others:
            break
        _, jac = jacobian(lambda rows: prob.errors(others, rows, fixed),
                          np.array([math.log(fixed[n]) for n in others]))
        name = others[int(np.argmax(np.abs(jac[k])))]
        wanted = chosen[name][1]
        series = series_for[name]
        low = eseries.at_or_below(series, wanted * (1 - TRIM_SPAN))
        span = trimmer_value(wanted * (1 + TRIM_SPAN) - low)
        trims[name] = (low, span, wanted)
        tnames = list(trims)
        nom = np.array([_nominal(meter, n) for n in tnames])
        lo = np.log(np.array([trims[n][0] for n in tnames]) / nom)
        hi = np.log(np.array([trims[n][0] + trims[n][1] for n in tnames]) / nom)
        others_fixed = {n: v for n, v in fixed.items() if n not in trims}
        x = prob.solve(tnames, np.log(np.array([trims[n][2] for n in tnames]) / nom), others_fixed, (lo, hi))
        for n, v in zip(tnames, x):
            fixed[n] = math.exp(v)
        after = prob.errors([], np.zeros((1, 0)), fixed)[0]

    out = []
    for name in names:
        nom = _nominal(meter, name)
        series = series_for[name]
        present_ohm = nom * present.get(name, 1.0)
        if name in trims:
            low, span, wanted = trims[name]
            parts = ({"value_ohm": low, "series": series, "trimmer": False},
                     {"value_ohm": span, "series": "1-2-5", "trimmer": True})
            out.append(Replacement(name, nom, present_ohm, wanted, nom * fixed[name], series, "fixed + trimmer",
                                   parts, (low, low + span)))
            continue
        choice, wanted = chosen[name]
        value = choice.value
        if choice.arrangement == "single" and abs(value - present_ohm) <= 1e-9 * nom:
            continue  # the part in the meter already has this value
        out.append(Replacement(name, nom, present_ohm, wanted, value, series, choice.arrangement,
                               _fixed_parts(choice, series)))
    met = bool(np.all(np.abs(after) <= limit * (1 + 1e-9)))
    return Plan(positions, target, before, after, out, met, limit)


def _factors(names, values: dict) -> dict:
    return {n: math.exp(values[n]) for n in names}


def _reach(prob: _Problem, names, phi, j) -> int:
    """How many positions part j of ``names`` moves (the lower in a chain, the more)."""
    _, jac = jacobian(lambda rows: prob.errors([names[j]], rows, _factors([n for n in names if n != names[j]],
                                                                           dict(zip(names, phi)))), [phi[j]])
    return int(np.sum(np.abs(jac[:, 0]) > 1e-6))
