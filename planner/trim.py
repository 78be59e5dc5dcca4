"""Trimmers and calibration: where one calibration point removes the tolerance spread.

With ``analysis.trim: true`` the sizer (:func:`plan_trims`, run after the value
choice) makes a part of some segments a fixed part plus a trimmer in series:

1. the swamping resistor, calibrated at the lowest current range (it sets the
   ratio of the meter branch to the ring or shunt: the coil's, the full-scale
   current's and the ring's tolerances at once), when there is one current range or
   the movement's own spread (coil tolerance x R_m / R_b + the full-scale current's)
   exceeds the resistors' tolerance: on a ring of several ranges the setting also
   absorbs the lowest range's share of the ring's spread, which the higher taps do not
   share, so a well-known movement is better left untrimmed there;
2. the lowest voltage range's own multiplier segment, calibrated at that range's
   full scale (the coil's and the full-scale current's tolerance and that segment's);
3. each higher voltage range whose first-order tolerance stack, after the trims
   below it, still exceeds :data:`TRIM_SHARE` of the class: its own segment, at its
   full scale, lowest range first (in a chain the lower segments are then right).

Shunts and ring taps are not trimmed: a trimmer's wiper resistance and drift are of
the order of a low-value shunt (common practice: select them on test).

:func:`calibrated_check` then simulates the calibration in :func:`planner.accuracy`'s
check: for every tolerance corner, each trimmer in order is set (within its span) so
that its position reads its full scale exactly; what is left at full scale is the
worst case after trimming, to which the trimmer's setting resolution and its drift
are added (they are what a calibration cannot remove; the temperature error is
reported apart, as before trimming).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from . import eseries
from .model import Resistor, Spec
from .tools import fmt

__all__ = ["RESOLUTION", "DRIFT", "TEMPCO", "END_TOLERANCE", "TRIM_SHARE", "Trim", "trimmer_value", "plan_trims",
           "calibrate", "calibrated_check", "format_trim"]

#: Setting resolution of a multiturn cermet trimmer, a share of its span (from memory: a
#: 25-turn trimmer set to about a fortieth of a turn).
RESOLUTION = 1e-3
#: Setting stability (drift of the set value over time and shock), a share of its span
#: (from memory: makers' figures for multiturn cermet trimmers, 0.05 to 0.2 %).
DRIFT = 1e-3
#: Temperature coefficient of the trimmer's resistance [1/K] (from memory: cermet, +-100 ppm/K).
TEMPCO = 100e-6
#: End-to-end tolerance of a trimmer: the span it surely reaches is (1 - this) x its value
#: (from memory: +-10 % for cermet trimmers).
END_TOLERANCE = 0.1
#: The span covers this many times the spread it must remove (headroom for a part at its limit).
SPAN_MARGIN = 1.25
#: A higher range gets a trimmer of its own when its tolerance stack after the lower trims
#: exceeds this share of the class index.
TRIM_SHARE = 0.5
#: Common trimmer values: 1-2-5 steps (common practice).
TRIMMER_STEPS = (1.0, 2.0, 5.0)
#: Iterations of the setting search (false position, Illinois variant).
SEARCH_STEPS = 60


@dataclass(frozen=True)
class Trim:
    """One calibration point: a trimmer in series with a fixed part, set at one position.

    Attributes
    ----------
    order : int
        Step of the calibration (1 first).
    part, fixed : str
        Designators of the trimmer and of the fixed part in series with it.
    segment : str
        The sizer's segment they make.
    position : str
        The position at which it is set.
    applied : float
        The value applied to set it (the position's full scale) [V] or [A].
    unit : str
    fixed_ohm, span_ohm, setting_ohm : float
        Fixed part, trimmer value (its span) and its nominal setting [ohm].
    series : str
        The series of the fixed part.
    fixed_up_ohm, fixed_down_ohm : float
        The next series values above and below the fixed part (what to fit when the span
        is not enough) [ohm].
    """

    order: int
    part: str
    fixed: str
    segment: str
    position: str
    applied: float
    unit: str
    fixed_ohm: float
    span_ohm: float
    setting_ohm: float
    series: str
    fixed_up_ohm: float
    fixed_down_ohm: float

    @property
    def reach_ohm(self) -> float:
        """The span the trimmer surely reaches, (1 - END_TOLERANCE) x its value [ohm]."""
        return self.span_ohm * (1.0 - END_TOLERANCE)

    @property
    def range_ohm(self) -> tuple[float, float]:
        """(low, high) resistance of the fixed part and trimmer together [ohm]."""
        return (self.fixed_ohm, self.fixed_ohm + self.reach_ohm)


def trimmer_value(span_ohm: float) -> float:
    """Smallest common (1-2-5) trimmer value at least ``span_ohm`` [ohm]."""
    dec = 10.0 ** math.floor(math.log10(span_ohm))
    for d in (dec, 10 * dec):
        for s in TRIMMER_STEPS:
            if s * d >= span_ohm * (1 - 1e-12):
                return s * d
    return 10 * dec


def _next_trimmer(value: float) -> float:
    return trimmer_value(value * 1.0001)


# --- the sizer's plan ---------------------------------------------------------------------------


def _loop_tolerance(spec: Spec, net) -> float:
    """Largest relative tolerance of a resistor or the coil, plus the full-scale current's [fraction]."""
    mov = spec.movement
    t = max([e.tolerance for e in net.elements if isinstance(e, Resistor)] + [mov.tolerance])
    return t + mov.i_fs_tolerance


def _series_spread_ohm(spec: Spec, net, pos, sized: set) -> float:
    """Tolerance spread [ohm] of the parts in series with a position's whole loop that the sizer did not size.

    The input protection (a PTC, a fusible resistor, a fuse) carries the loop current of a
    voltage range: its cold resistance's tolerance adds to the spread the first trimmer of
    the chain must remove. Found as the single parts whose removal parts the input
    terminals in the position's state (diodes and open contacts left out; graph bridges,
    Tarjan's algorithm via networkx).
    """
    import networkx as nx

    g = nx.Graph()
    for e in net.elements:
        if e.stamp == "junction" or (e.kind == "contact" and pos.name not in e.closed_in):
            continue
        a, b = e.nodes
        if g.has_edge(a, b):
            g[a][b]["parts"].append(e)
        else:
            g.add_edge(a, b, parts=[e])
    plus, minus = pos.input
    if plus not in g or minus not in g or not nx.has_path(g, plus, minus):
        return 0.0
    spread = 0.0
    for a, b in nx.bridges(g):
        parts = g[a][b]["parts"]
        e = parts[0]
        if len(parts) != 1 or e.name in sized or e.kind in ("movement", "contact"):
            continue
        h = g.copy()
        h.remove_edge(a, b)
        if nx.has_path(h, plus, minus):
            continue  # not on the loop
        tol = max((p.tolerance for p in e.parameters(spec)), default=0.0)
        if tol > 0:
            spread += tol * float(np.asarray(e.resistance(spec, np.zeros((1, 1)))).ravel()[0])
    return spread


def _calibration_points(spec: Spec, sizing) -> list[tuple[str, str, float]]:
    """(segment, position, half-span to remove [ohm]) in calibration order (see the module text)."""
    mov = spec.movement
    segs = {s.name: s for s in sizing.segments}
    positions = list(sizing.network.positions)
    t_all = _loop_tolerance(spec, sizing.network)
    t_res = spec.parts.resistors.tolerance
    cls = mov.class_index / 100.0
    out = []
    amps = sorted((p for p in positions if p.measures == "current"), key=lambda p: p.full_scale)
    if amps and "swamp" in segs:
        low = amps[0]
        ring = sum(s.target_ohm for s in sizing.segments if s.role == "ring")
        shunt = ring or next((s.target_ohm for s in sizing.segments if s.name == f"shunt {low.name}"), 0.0)
        r_branch = mov.r_coil_ohm + segs["swamp"].target_ohm
        t = t_all - mov.i_fs_tolerance
        t_movement = mov.tolerance * mov.r_coil_ohm / r_branch + mov.i_fs_tolerance
        if len(amps) == 1 or t_movement > t_res:  # else it would trade the ring's ratio spread for the lowest range's
                out.append(("swamp", low.name, 2.0 * t * r_branch + mov.i_fs_tolerance * (r_branch + shunt)))
    volts = sorted((p for p in positions if p.measures == "voltage"), key=lambda p: p.full_scale)
    chain = [p for p in volts if f"chain {p.name}" in segs]
    separate = [p for p in volts if f"multiplier {p.name}" in segs]
    sized = {q.name for s in sizing.segments for q in s.parts}
    if chain:
        r_in = [p.full_scale / mov.i_fs_a for p in chain]
        extra = _series_spread_ohm(spec, sizing.network, chain[0], sized)  # the input protection's spread
        out.append((f"chain {chain[0].name}", chain[0].name, t_all * r_in[0] + extra))
        last = 0
        for k in range(1, len(chain)):
            stack = r_in[k] - r_in[last]
            if (t_res + mov.i_fs_tolerance) * stack / r_in[k] > TRIM_SHARE * cls:
                out.append((f"chain {chain[k].name}", chain[k].name, (t_res + mov.i_fs_tolerance) * stack))
                last = k
    for i, p in enumerate(separate):
        r_in = p.full_scale / mov.i_fs_a
        seg = segs[f"multiplier {p.name}"]
        stack = (t_res * seg.target_ohm + mov.tolerance * mov.r_coil_ohm) / r_in + mov.i_fs_tolerance
        if i == 0 or stack > TRIM_SHARE * cls:
            out.append((seg.name, p.name, t_all * r_in + _series_spread_ohm(spec, sizing.network, p, sized)))
    return out


def _free_name(elements) -> str:
    """The next trimmer designator ``RVn`` no element has yet (an ohmmeter's zero adjuster may hold RV1)."""
    used = {e.name for e in elements}
    return next(f"RV{k}" for k in range(1, len(used) + 2) if f"RV{k}" not in used)


def _fit(target: float, half: float, series: str) -> tuple[float, float] | None:
    """(fixed, trimmer value) whose range holds ``target`` +- ``half``, or None when no fixed part fits."""
    if target - half <= 0:
        return None
    span = trimmer_value(2.0 * half * SPAN_MARGIN / (1.0 - END_TOLERANCE))
    fixed = eseries.at_or_below(series, target - half)
    while fixed + span * (1.0 - END_TOLERANCE) < target + half:
        span = _next_trimmer(span)
    return fixed, span


def plan_trims(spec: Spec, sizing):
    """The sizing with its calibration trimmers (unchanged unless ``analysis.trim`` is true).

    Parameters
    ----------
    spec : Spec
    sizing : planner.sizing.Sizing

    Returns
    -------
    planner.sizing.Sizing
        Segments whose trimmed part is now a fixed part (same designator, a series value
        at or below its share less the half-span) and a trimmer ``RVn`` in series below
        it; the network likewise (the trimmer a resistor ``trimmer: true`` at its nominal
        setting, no tolerance of its own, :data:`TEMPCO`); ``trims`` in calibration order.

    Notes
    -----
    The half-span :math:`h` a trimmer must remove is the first-order tolerance stack of
    the loop it is set in: :math:`h = (t + t_{I_{fs}}) R_{loop}` for the first trim of a
    kind (:math:`t` the largest resistor or coil tolerance, :math:`R_{loop} = V/I_{fs}`
    for a voltage range, plus :math:`\\sum_j t_j R_j` of the unsized parts in series with
    the whole loop, the input protection); for the swamp, whose change must also absorb the ring's or
    shunt's tolerance, :math:`h = 2 t R_b + t_{I_{fs}} (R_b + R_{sh})` with the meter
    branch :math:`R_b = R_m + R_{swamp}` and the ring or shunt :math:`R_{sh}`; and
    :math:`h = (t_R + t_{I_{fs}})(R_{in,k} - R_{in,l})` for chain range :math:`k` above
    the last trimmed range :math:`l`. The trimmer's value is the smallest 1-2-5 value at
    least :math:`2 h \\times 1.25 / (1 - 0.1)`, raised until the fixed part (the series
    value at or below the part's share less :math:`h`) and the trimmer reach the share
    plus :math:`h`.

    References
    ----------
    Series trimmer with a fixed part and calibration at full scale, lowest range first:
    common practice of meter building.
    """
    if not spec.analysis.trim:
        return sizing
    segs = list(sizing.segments)
    elements = list(sizing.network.elements)
    trims, notes = [], list(sizing.notes)
    index = {p.name: p for p in sizing.network.positions}
    for seg_name, pos_name, half in _calibration_points(spec, sizing):
        j = next(i for i, s in enumerate(segs) if s.name == seg_name)
        seg = segs[j]
        parallel = seg.arrangement == "parallel pair"
        shares = [(seg.target_ohm, seg.parts[0])] if parallel else sorted(
            ((q.target_ohm, q) for q in seg.parts), key=lambda x: x[0])
        pick = next(((share, q) for share, q in shares if share > 2.0 * half), shares[-1])
        share, part = pick
        fit = _fit(share, half, sizing.series)
        if fit is None:
            notes.append(f"{seg_name}: no trimmer planned, its parts are smaller than the spread to remove "
                         f"({fmt(half, 'ohm')}); select on test")
            continue
        fixed, span = fit
        name = _free_name(elements)
        old = next(e for e in elements if e.name == part.name)
        mid = f"{part.name.lower()}_{name.lower()}"
        setting = share - fixed
        fixed_el = dataclasses.replace(old, a=old.a, b=mid, value_ohm=fixed, target_ohm=fixed)
        trim_el = Resistor(name, mid, old.b, setting, tolerance=0.0, tempco_per_k=TEMPCO, power_w=old.power_w,
                           max_voltage_v=old.max_voltage_v, series=None, target_ohm=setting, group=seg.name,
                           trimmer=True, line=old.line)
        gone = {q.name for q in seg.parts} if parallel else {part.name}
        at = elements.index(old)
        elements[at:at + 1] = [fixed_el, trim_el]
        elements = [e for e in elements if e.name not in gone or e is fixed_el]
        plans = []
        for q in seg.parts:
            if q.name == part.name:
                plans.append(dataclasses.replace(q, value_ohm=fixed, target_ohm=fixed, b=mid))
                plans.append(dataclasses.replace(q, name=name, value_ohm=span, series="trimmer 1-2-5",
                                                 target_ohm=setting, trimmer=True, a=mid))
            elif q.name not in gone:
                plans.append(q)
        achieved = seg.target_ohm if parallel else seg.achieved_ohm - part.value_ohm + share
        segs[j] = dataclasses.replace(seg, parts=tuple(plans), achieved_ohm=achieved,
                                      arrangement=("fixed" if parallel else seg.arrangement) + " + trimmer")
        pos = index[pos_name]
        trims.append(Trim(len(trims) + 1, name, part.name, seg.name, pos_name, float(pos.full_scale), pos.unit,
                          fixed, span, setting, sizing.series, eseries.at_or_above(sizing.series, fixed * 1.0001),
                          eseries.at_or_below(sizing.series, fixed * 0.9999)))
    net = dataclasses.replace(sizing.network, elements=tuple(elements))
    return dataclasses.replace(sizing, segments=tuple(segs), network=net, trims=tuple(trims), notes=tuple(notes))


# --- the calibration, simulated ---------------------------------------------------------------


def calibrate(run, trims, factors: dict, builds: int) -> tuple[dict, np.ndarray]:
    """Set every trimmer in order, build by build, so that its position reads its full scale.

    Parameters
    ----------
    run : Engine or planner.accuracy.CountingEngine
        Anything with ``operate(position, stimulus, factors=)``.
    trims : sequence of Trim
    factors : dict
        Tolerance factors of the builds, arrays of shape (builds,).
    builds : int

    Returns
    -------
    factors : dict
        The same builds with each trimmer's setting as a factor of its nominal setting.
    short : ndarray of bool, shape (len(trims), builds)
        Where a trimmer reached an end of its span before its position read full scale.

    Notes
    -----
    The reading is monotonic in the trimmer's resistance; the setting is found by false
    position with the Illinois step between the ends of its reach (the span it surely
    reaches), to :math:`10^{-9}` of full scale; a build whose target lies beyond an end
    is set at that end and counted short.

    References
    ----------
    M. Dowell and P. Jarratt, "A modified regula falsi method for computing the root of
    an equation", BIT 11, 168-174, 1971.
    """
    out = {k: np.asarray(v, dtype=float) * np.ones(builds) for k, v in factors.items()}
    short = np.zeros((len(trims), builds), dtype=bool)
    for i, t in enumerate(trims):
        lo = np.full(builds, max(1e-4 * t.span_ohm, 1e-6) / t.setting_ohm)
        hi = np.full(builds, t.reach_ohm / t.setting_ohm)

        def err(f):
            out[t.part] = f
            return run.operate(t.position, [t.applied], factors=out).reading()[:, 0] / t.applied - 1.0

        e_lo, e_hi = err(lo), err(hi)
        beyond = np.sign(e_lo) == np.sign(e_hi)
        short[i] = beyond & (e_lo != 0)
        x = np.where(np.abs(e_lo) < np.abs(e_hi), lo, hi)
        a, b, fa, fb = lo.copy(), hi.copy(), e_lo.copy(), e_hi.copy()
        side = np.zeros(builds)
        for _ in range(SEARCH_STEPS):
            if not np.any(~beyond):
                break
            c = np.where(beyond, x, (a * fb - b * fa) / np.where(fb != fa, fb - fa, 1.0))
            fc = err(c)
            x = c
            keep_b = np.sign(fc) == np.sign(fa)  # c replaces a
            a, fa, b, fb = (np.where(keep_b, c, a), np.where(keep_b, fc, fa),
                            np.where(keep_b, b, c), np.where(keep_b, fb, fc))
            fb = np.where(keep_b & (side == -1), fb / 2.0, fb)  # b kept twice: halve it (Illinois)
            fa = np.where(~keep_b & (side == 1), fa / 2.0, fa)
            side = np.where(keep_b, -1, 1)
            if np.all(np.abs(fc[~beyond]) < 1e-11):
                break
        out[t.part] = x
    return out, short


def _signs(k: int, rng, most: int = 12, sampled: int = 512) -> np.ndarray:
    if k <= most:
        idx = np.arange(2 ** k)[:, None]
        return ((idx >> np.arange(k)[None, :]) & 1) * 2.0 - 1.0
    return rng.choice([-1.0, 1.0], size=(sampled, k))


def calibrated_check(run, trims, params, positions: list[dict], class_index: float, seed: int) -> dict:
    """The worst case after trimming of every position, and the calibration procedure.

    Parameters
    ----------
    run : CountingEngine
    trims : sequence of Trim
    params : list of Parameter
        Every toleranced parameter of the network.
    positions : list of dict
        The check's ``positions[]`` (updated in place: ``worst_case_after_trim_pct``,
        ``trim_resolution_pct``, ``trim_drift_pct``, ``budget_after_trim_pct``,
        ``verdict_after_trim``: within class when the worst case after trimming is at
        most the class index and the temperature variation within its limit, the
        check's IEC 60051 rule; resistance positions are left as they are).
    class_index : float
    seed : int

    Returns
    -------
    dict
        ``trim[]`` (``order``, ``part``, ``position``, ``applied``, ``range_ohm``
        [low, high], ``fixed``, ``fixed_ohm``, ``trimmer_ohm``, ``setting_ohm``,
        ``target_reading``, ``span_reading_pct`` [low, high], ``short_fraction``,
        ``if_short``), ``calibration[]`` (the procedure, one text per step) and
        ``trim_method``.

    Notes
    -----
    Every corner of the tolerance box (every parameter at an extreme) is calibrated by
    :func:`calibrate` for :math:`k \\le 12` parameters, and the worst |error| at full
    scale over them is what the tolerances leave. Above 12, as in the check's worst
    case: each parameter alone at its extremes, calibrated, gives the first-order bound
    :math:`\\max(|e_c + \\sum_j \\max(\\Delta_j^\\pm, 0)|, |e_c + \\sum_j \\min(\\Delta_j^\\pm, 0)|)`,
    never taken smaller than 512 seeded random corners, calibrated. The trimmer adds its
    setting resolution and its drift,
    :math:`|e(s + \\rho S)| + |e(s + \\delta S)|` summed over the trimmers
    (:math:`S` its value, :math:`\\rho` = :data:`RESOLUTION`, :math:`\\delta` =
    :data:`DRIFT`, :math:`e` the change of the full-scale error from the nominal
    setting :math:`s`). The budget after trimming adds the temperature error.
    """
    k = len(params)
    signs = _signs(k, np.random.default_rng([int(seed), 7]))
    bound = k > 12
    method = ("every corner, calibrated" if not bound else
              f"first-order bound over each parameter's calibrated extremes, checked against {len(signs)} "
              "calibrated random corners")
    builds = (2 * k + 1 if bound else 0) + len(signs)
    base = {}
    for j, p in enumerate(params):  # each parameter at its low or its high extreme
        lo, hi = p.extremes()
        corners = np.where(signs[:, j] > 0, hi, lo)
        if bound:  # nominal, then each parameter alone at its low and its high extreme
            alone = np.ones(2 * k + 1)
            alone[1 + 2 * j], alone[2 + 2 * j] = lo, hi
            corners = np.concatenate([alone, corners])
        base[p.key] = corners
    cal, short = calibrate(run, trims, base, max(1, builds))
    nominal = {t.part: np.ones(1) for t in trims}
    for q in positions:
        if q.get("measures") not in ("voltage", "current"):  # a resistance scale is zeroed, not trimmed
            continue
        fs = q["full_scale"]
        e = (run.operate(q["name"], [fs], factors=cal).reading()[:, 0] - fs) / fs * 100.0
        left = float(np.max(np.abs(e)))
        if bound:
            e_c, d_lo, d_hi = e[0], e[1:2 * k + 1:2] - e[0], e[2:2 * k + 1:2] - e[0]
            hi_sum = e_c + np.sum(np.maximum(np.maximum(d_lo, d_hi), 0.0))
            lo_sum = e_c + np.sum(np.minimum(np.minimum(d_lo, d_hi), 0.0))
            left = max(left, float(abs(hi_sum)), float(abs(lo_sum)))
        e0 = float((run.operate(q["name"], [fs], factors=nominal).reading()[0, 0] - fs) / fs * 100.0)
        res = drift = 0.0
        for t in trims:
            for share, key in ((RESOLUTION, "res"), (DRIFT, "drift")):
                moved = dict(nominal)
                moved[t.part] = np.ones(1) * (1.0 + share * t.span_ohm / t.setting_ohm)
                d = abs(float((run.operate(q["name"], [fs], factors=moved).reading()[0, 0] - fs) / fs * 100.0) - e0)
                if key == "res":
                    res += d
                else:
                    drift += d
        worst = left + res + drift
        q["worst_case_after_trim_pct"] = worst
        q["trim_resolution_pct"] = res
        q["trim_drift_pct"] = drift
        q["budget_after_trim_pct"] = worst + q["temperature_error_pct"]  # a margin figure, as before trimming
        ok = worst <= class_index and q.get("temperature_within_limit", True)  # IEC 60051, as the check's verdict
        q["verdict_after_trim"] = "within class" if ok else "outside class"
    rows, steps = [], []
    for i, t in enumerate(trims):
        ends = []
        for f in (max(1e-4 * t.span_ohm, 1e-6) / t.setting_ohm, t.reach_ohm / t.setting_ohm):
            moved = dict(nominal)
            moved[t.part] = np.ones(1) * f
            ends.append(float(run.operate(t.position, [t.applied], factors=moved).reading()[0, 0]))
        rises = ends[1] > ends[0]  # does more resistance raise the reading?
        span_pct = sorted((r - t.applied) / t.applied * 100.0 for r in ends)
        up, down = fmt(t.fixed_up_ohm, "ohm"), fmt(t.fixed_down_ohm, "ohm")
        high_fix, low_fix = (down, up) if rises else (up, down)
        if_short = (f"if {t.part} reaches the end of its travel with the meter still reading high, replace "
                    f"{t.fixed} ({fmt(t.fixed_ohm, 'ohm')}) by {high_fix}; still reading low, by {low_fix}; then "
                    f"set {t.part} again and repeat the steps after this one")
        rows.append({"order": t.order, "part": t.part, "fixed": t.fixed, "segment": t.segment,
                     "position": t.position, "applied": t.applied, "unit": t.unit,
                     "range_ohm": list(t.range_ohm), "fixed_ohm": t.fixed_ohm, "trimmer_ohm": t.span_ohm,
                     "setting_ohm": t.setting_ohm, "target_reading": t.applied, "span_reading_pct": span_pct,
                     "short_fraction": float(np.mean(short[i])) if short.size else 0.0, "if_short": if_short})
        steps.append(f"{t.order}. Set the switch to {t.position} and apply {fmt(t.applied, t.unit)} from a "
                     f"calibrator; adjust {t.part} ({fmt(t.span_ohm, 'ohm')} trimmer in series with {t.fixed}, "
                     f"{fmt(t.fixed_ohm, 'ohm')}) until the meter reads {fmt(t.applied, t.unit)} (full scale). "
                     f"Its travel moves the reading from {span_pct[0]:+.2f} % to {span_pct[1]:+.2f} % of full scale "
                     f"with nominal parts. {if_short[0].upper()}{if_short[1:]}.")
    out = {"trim": rows, "calibration": steps, "trim_method": method}
    if not trims:
        engine = getattr(run, "engine", run)
        marked = [e.name for e in engine.net.elements if getattr(e, "trimmer", False)]
        out["trim_note"] = (f"the network's trimmers ({', '.join(marked)}) stand at their nominal settings: the "
                            "calibration is simulated for sized networks only" if marked else
                            "no trimmer planned: trimmers are planned for sized networks (give voltage or current "
                            "ranges), or mark a part 'trimmer: true' and calibrate it by hand")
    return out


def format_trim(result: dict) -> list[str]:
    """Terminal lines of the calibration: the worst case after trimming and the procedure (none without trims)."""
    if "trim" not in result:
        return []
    if not result["trim"]:
        return ["", f"analysis.trim: {result.get('trim_note', 'no trimmer planned')}"]
    lines = ["", f"after trimming ({result['trim_method']}; trimmer resolution and drift added), "
                 "% of full scale:",
             f"{'position':<12}{'worst %':>9}{'resol. %':>10}{'drift %':>9}{'temp %':>8}{'budget %':>10}  verdict"]
    for p in (q for q in result["positions"] if "worst_case_after_trim_pct" in q):
        lines.append(f"{p['name']:<12}{p['worst_case_after_trim_pct']:>9.3f}{p['trim_resolution_pct']:>10.3f}"
                     f"{p['trim_drift_pct']:>9.3f}{p['temperature_error_pct']:>8.3f}{p['budget_after_trim_pct']:>10.3f}"
                     f"  {p['verdict_after_trim']}")
    lines += ["", "calibration, in this order:"] + [f"  {s}" for s in result["calibration"]]
    short = [t for t in result["trim"] if t["short_fraction"] > 0]
    for t in short:
        lines.append(f"  note: {t['part']} runs out of span in {100 * t['short_fraction']:.1f} % of the corners")
    return lines
