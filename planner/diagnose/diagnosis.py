"""From readings to a verdict: estimate, identifiability, replacements, in one call.

:func:`diagnose` runs the steps of ``planner diagnose`` on a loaded project and a
readings file and returns a :class:`Diagnosis` that keeps every array the outputs
need; :mod:`planner.diagnose.report` renders it (JSON, table) without solving.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import UsageError
from ..model import Resistor, Spec
from .estimate import Estimate, Observations, data_jacobian, estimate, observations
from .identify import Identifiability, identify, separating_readings
from .meter import Meter, Unknown, jacobian, tolerance_band
from .readings import Readings, read_readings
from .replace import Plan, plan_replacements

__all__ = ["PIN", "DEFAULT_SHARE", "Suspect", "Group", "Diagnosis", "diagnose", "choose_unknowns"]

#: A movement parameter without a tolerance joins the unknowns when the readings pin
#: it down to this share of its weak prior (posterior over prior standard deviation).
PIN = 0.1
#: Share of the class the replacements aim within at each position.
DEFAULT_SHARE = 0.25
#: Smallest change of a reading, fraction of full scale, per unit change of a part's log
#: value, for the part to count as measured at all.
STRUCTURAL = 1e-4
#: Largest reading resolution accepted (fraction of full scale).
MAX_RESOLUTION = 0.2


@dataclass(frozen=True)
class Suspect:
    """One unknown's estimate.

    Attributes
    ----------
    unknown : Unknown
    change_pct : float
        Estimated change from the marked value, %.
    interval_pct : tuple of float
        Confidence interval of ``change_pct`` (level :data:`CONFIDENCE`).
    drifted : bool
        The interval lies wholly outside the part's tolerance, and the readings
        determine the part (``resolved``).
    resolved : bool
        The part's own direction lies in the subspace the readings measure
        (:attr:`planner.diagnose.identify.Identifiability.resolved`), and it is in
        no group that further readings would split; it may still share a group
        with smaller parts that no reading at the terminals tells it apart from.
    seen : bool
        Some reading depends on it.
    score : float
        Distance of the estimate beyond the tolerance, in standard deviations
        (the ranking key: most likely drifted first).
    """

    unknown: Unknown
    theta: float
    sd: float
    change_pct: float
    interval_pct: tuple
    drifted: bool
    resolved: bool
    seen: bool
    score: float


@dataclass(frozen=True)
class Group:
    """Parts the readings cannot tell apart.

    Attributes
    ----------
    parts : tuple of str
        Labels, in network order.
    significant : bool
        Their estimated changes move some position's full-scale reading by more
        than the replacements' target: which of them changed matters.
    next_readings : tuple of (position, applied, resolves)
        Readings that would separate them, in the order to take them; empty when
        no reading at the terminals can (they always act together).
    replaced : str or None
        The member replaced when no reading can separate them and which changed
        matters (the largest rise: old carbon parts drift upward, common practice).
    """

    parts: tuple
    significant: bool
    next_readings: tuple
    replaced: str | None = None

    @property
    def separable(self) -> bool:
        return bool(self.next_readings)


@dataclass
class Diagnosis:
    """Everything ``planner diagnose`` found (arrays kept for the outputs).

    Attributes
    ----------
    meter : Meter
    obs : Observations
    estimate : Estimate
    identifiability : Identifiability
    suspects : list of Suspect
        Most likely drifted first.
    groups : list of Group
    unmeasured : list of str
        Parts no reading depends on.
    below_resolution : list of str
        Parts the readings depend on, but a change of one tolerance moves them by
        less than their noise.
    unexplained : list of dict
        Readings set aside (``position``, ``applied``, ``reading``, ``line``), with
        ``open_suspects`` (parts only those readings depend on).
    plan : Plan
        Replacements and the positions' errors before and after.
    resolution : float
        Reading resolution used (fraction of full scale).
    consistent : bool
        Every used reading within the resolution of the model at the estimate, and
        none set aside.
    """

    meter: Meter
    obs: Observations
    estimate: Estimate
    identifiability: Identifiability
    suspects: list
    groups: list
    unmeasured: list
    unexplained: list
    plan: Plan
    resolution: float
    share: float
    consistent: bool
    residual_pct: float
    notes: list = field(default_factory=list)
    below_resolution: list = field(default_factory=list)

    @property
    def ambiguous(self) -> list:
        """Groups whose members must be told apart before a part can be chosen."""
        return [g for g in self.groups if g.significant and g.separable]

    @property
    def dead(self) -> set:
        """Positions with readings no drift explains (an open part or contact)."""
        return {u["position"] for u in self.unexplained}

    @property
    def within_class(self) -> np.ndarray:
        """Each position within class after the replacements (a dead position is not)."""
        ok = np.abs(self.plan.errors_after_pct) <= self.meter.class_index * (1 + 1e-9)
        return ok & np.array([p not in self.dead for p in self.plan.positions], dtype=bool)

    @property
    def bounds_only(self) -> list:
        """Positions whose readings are all pegged: bounds, no measurement to check a repair by."""
        return [p for p, idx in self.obs.by_position.items() if np.all(self.obs.pegged[idx]) and p not in self.dead]

    @property
    def requirements_met(self) -> bool:
        """A consistent explanation, nothing left ambiguous, every position within class after,
        and every position read has at least one reading on its scale."""
        return bool(self.consistent and not self.ambiguous and np.all(self.within_class)
                    and not self.bounds_only)


def choose_unknowns(meter: Meter, obs: Observations) -> list[Unknown]:
    """The resistors with a tolerance, and the movement's values where the readings allow.

    The coil resistance and the full-scale current join when the file gives them
    a tolerance, or when the readings (with every resistor's tolerance as prior)
    pin each down to :data:`PIN` of its weak prior: forward selection, the
    best-pinned one first, the next judged with the first among the unknowns.
    """
    base = meter.resistor_unknowns()
    mov = meter.movement_unknowns()
    chosen = base + [u for u in mov if u.tolerance > 0]
    trial = [u for u in mov if u.tolerance == 0]
    use = ~obs.pegged
    if not trial or not use.any():
        return chosen
    every = chosen + trial
    sig = np.array([u.sigma for u in every])
    _, j = data_jacobian(meter, obs, [u.key for u in every], np.zeros(len(every)), use)
    a = j * sig
    # forward selection: the best-pinned candidate joins while one is pinned well enough
    inside = list(range(len(chosen)))
    left = list(range(len(chosen), len(every)))
    while left:
        sds = []
        for c in left:
            cols = inside + [c]
            post = np.linalg.inv(a[:, cols].T @ a[:, cols] + np.eye(len(cols)))
            sds.append(math.sqrt(post[-1, -1]))
        best = int(np.argmin(sds))
        if sds[best] > PIN:
            break
        inside.append(left.pop(best))
    return [every[i] for i in inside]


def _candidate_rows(meter: Meter, unknowns, theta, resolution, sig) -> dict:
    """Scaled sensitivity row of a reading at full scale on every position."""
    keys = [u.key for u in unknowns]
    rows = {}
    for p in meter.positions:
        _, j = jacobian(lambda t: meter.reading(p.name, [p.full_scale], meter.factors(keys, t)), theta)
        rows[p.name] = j[0] / (resolution * p.full_scale / math.sqrt(12.0)) * sig
    return rows


def diagnose(spec: Spec, readings, *, resolution: float | None = None, share: float = DEFAULT_SHARE,
             series: str | None = None) -> Diagnosis:
    """Find the drifted parts of a meter from its readings and propose replacements.

    Parameters
    ----------
    spec : Spec
        The meter's project (normally an explicit network).
    readings : Readings or str
        The readings, or the path of a readings file.
    resolution : float, optional
        Reading resolution as a fraction of full scale; the class index by default.
    share : float
        Share of the class each position's full-scale error is aimed within after
        the replacements (the verdict asks for the class itself).
    series : str, optional
        E-series of the replacements; each part's own (else ``parts.resistors``) by default.

    Returns
    -------
    Diagnosis

    Notes
    -----
    The steps and their equations are in :func:`planner.diagnose.estimate.estimate`
    (least squares with the tolerances as prior, 95 % intervals),
    :func:`planner.diagnose.identify.identify` (groups from the singular values of
    the sensitivity matrix) and :func:`planner.diagnose.replace.plan_replacements`;
    the method as a whole is in ``docs/diagnose.md``.

    References
    ----------
    J. J. More, "The Levenberg-Marquardt algorithm: implementation and theory",
    Lecture Notes in Mathematics 630, Springer, 1978, doi:10.1007/BFb0067700;
    G. H. Golub, C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins
    University Press, 2013, sec. 2.4.
    """
    meter = Meter(spec)
    if not isinstance(readings, Readings):
        readings = read_readings(readings, meter.positions)
    res = meter.class_index / 100.0 if resolution is None else float(resolution)
    if not (0.0 < res <= MAX_RESOLUTION):
        raise UsageError(f"--resolution must lie between 0 and {MAX_RESOLUTION:.0%} of full scale, e.g. '0.5 %'")
    if not (0.0 < share <= 1.0):
        raise UsageError("--share must lie between 0 and 1 (a share of the class index)")
    obs = observations(meter, readings, res)
    unknowns = choose_unknowns(meter, obs)
    est = estimate(meter, obs, unknowns)
    target = share * meter.class_index
    # the size of change that matters for each part: its tolerance, or its estimated drift
    scale = np.maximum(np.array([u.sigma for u in unknowns]), np.abs(est.theta))
    a = est.data_jacobian * scale
    # structurally seen: a 100 % change moves some reading by at least STRUCTURAL of full scale
    use = est.measured
    rel = est.data_jacobian * (obs.sigma[use] / obs.full_scale[use])[:, None]
    ident = identify(a, np.max(np.abs(rel), axis=0, initial=0.0) >= STRUCTURAL)
    groups = _groups(meter, est, ident, a, _candidate_rows(meter, unknowns, est.theta, res, scale), target)
    suspects = _suspects(est, ident, groups, target)
    labels = [u.label for u in unknowns]
    unmeasured = [labels[i] for i in range(len(unknowns)) if not ident.seen[i]]
    weak = [labels[i] for i in range(len(unknowns)) if ident.weak[i]]
    unexplained = _unexplained(meter, obs, est, est.keys)
    groups, plan = _replacements(meter, est, suspects, groups, target, series)

    used = est.measured
    dev = np.abs(est.predicted - np.nan_to_num(obs.readings.reading)) / obs.full_scale
    residual = float(np.sqrt(np.mean(dev[used] ** 2)) * 100.0) if used.any() else float("nan")
    notes = []
    for x in suspects:
        if x.drifted and x.unknown.kind != "resistor":
            what = "full-scale current" if x.unknown.kind == "full_scale_current" else "coil resistance"
            notes.append(f"the movement's {what} moved {x.change_pct:+.1f} %: an aged magnet or hairspring "
                         "(full-scale current) or a damaged coil would do it; a movement repair puts every range "
                         "right at once, the replacements above re-trim the ranges to the movement as it is")
    if est.widen > 1:
        notes.append(f"the readings need parts far beyond their tolerance: the prior was widened "
                     f"{est.widen:g} times to explain them")
    return Diagnosis(meter, obs, est, ident, suspects, groups, unmeasured, unexplained, plan, res, share,
                     est.consistent, residual, notes, weak)


def _groups(meter: Meter, est: Estimate, ident: Identifiability, a, candidates: dict, target: float) -> list:
    """Each group with the readings that would split it, and whether which member changed matters."""
    keys = est.keys
    rows = [est.theta]
    for g in ident.groups:
        t = est.theta.copy()
        t[g] = 0.0
        rows.append(t)
    errs = meter.full_scale_errors(meter.factors(keys, np.array(rows)))
    out = []
    for n, g in enumerate(ident.groups, start=1):
        significant = bool(np.max(np.abs(errs[n] - errs[0])) > target)
        steps = separating_readings(a, candidates, g)
        nxt = tuple((name, meter.position[name].full_scale, done) for name, _, done in steps)
        out.append(Group(tuple(est.unknowns[i].label for i in g), significant, nxt))
    return out


def _suspects(est: Estimate, ident: Identifiability, groups: list, target: float) -> list:
    """Every unknown's estimate, most likely drifted first.

    A part in a group that further readings would split is not called resolved:
    which of them changed is a guess until those readings are taken.
    """
    guess = {i for g, members in zip(groups, ident.groups) if g.separable for i in members}
    out = []
    for i, u in enumerate(est.unknowns):
        th, sd = float(est.theta[i]), float(est.sd[i])
        lo, hi = est.interval(i)
        # a movement value calibrated when new (no tolerance): a change that moves the
        # readings by less than the replacements' target does not count as drift
        b_lo, b_hi = tolerance_band(u.tolerance if u.kind == "resistor" else max(u.tolerance, target / 100.0))
        beyond = th - b_hi if th >= 0 else b_lo - th
        resolved = bool(ident.resolved[i]) and i not in guess
        out.append(Suspect(u, th, sd, 100 * math.expm1(th), (100 * math.expm1(lo), 100 * math.expm1(hi)),
                           bool(lo > b_hi or hi < b_lo) and resolved, resolved, bool(ident.seen[i]), beyond / sd))
    out.sort(key=lambda s: (not s.drifted, not s.resolved, -s.score))
    return out


def _replacements(meter: Meter, est: Estimate, suspects: list, groups: list, target: float, series):
    """The drifted resistors and one part of each inseparable group that matters, replaced.

    Members of a group that further readings would split are never touched.
    Returns the groups (with the member replaced noted) and the plan.
    """
    must = [s.unknown.key for s in suspects if s.drifted and s.unknown.kind == "resistor"]
    by_label = {u.label: u for u in est.unknowns}
    idx = {u.key: i for i, u in enumerate(est.unknowns)}
    blocked = set()
    groups = list(groups)
    for n, g in enumerate(groups):
        members = [by_label[p] for p in g.parts]
        if g.significant and g.separable:
            blocked.update(u.key for u in members)
        elif g.significant:
            res_members = [u for u in members if u.kind == "resistor"]
            if res_members:
                # old carbon parts drift upward (common practice): the largest rise is replaced
                pick = max(res_members, key=lambda u: (round(float(est.theta[idx[u.key]]), 6), u.nominal))
                if pick.key not in must:
                    must.append(pick.key)
                groups[n] = dataclasses.replace(g, replaced=pick.label)
    present = {k: float(np.exp(t)) for k, t in zip(est.keys, est.theta)}
    default_series = meter.spec.parts.resistors.series
    resistors = [e for e in meter.net.elements if isinstance(e, Resistor)]
    series_for = {e.name: series or e.series or default_series for e in resistors}
    candidates = [e.name for e in resistors if e.name not in blocked]
    plan = plan_replacements(meter, present, candidates, [m for m in must if m not in blocked], target,
                             series_for, limit_pct=meter.class_index)
    return groups, plan


def _unexplained(meter: Meter, obs: Observations, est: Estimate, keys) -> list:
    out = []
    if not est.unexplained.any():
        return out
    sens = {p: meter.sensitive(p, keys) for p in obs.by_position}
    good = set()
    for p, idx in obs.by_position.items():
        if np.any(est.used[idx]):
            good |= sens[p]
    r = obs.readings
    bad_positions = {r.position[k] for k in np.flatnonzero(est.unexplained)}
    common = set.intersection(*(sens[p] for p in bad_positions)) - good
    label = {u.key: u.label for u in est.unknowns}
    kinds = {u.key: u.kind for u in est.unknowns}
    order = [k for k in keys if k in common and kinds[k] == "resistor"]  # what can open is a part
    for k in np.flatnonzero(est.unexplained):
        out.append({
            "position": r.position[k],
            "applied": float(r.applied[k]),
            "reading": None if r.pegged[k] else float(r.reading[k]),
            "predicted": float(est.predicted[k]),
            "line": int(r.lines[k]),
            "open_suspects": [label[x] for x in order],
        })
    return out
