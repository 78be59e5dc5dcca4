"""Plans judged on the misrange matrix: protection parts searched, no plan worse than the project as given.

The clamp search (:mod:`planner.protect.search`) ranks placements by the movement's
worst current multiple. A plan is written only when the misrange matrix of
``planner faults`` (:func:`planner.faults.faults_project`), solved on the plan as it
would be written and loaded again, is at least as good as the project's own:

1. **the clamp plan**: the placement the clamp search chose, written into the
   project text (:func:`planner.protect.write.protected_text`) and loaded again; when
   its matrix is worse than the project's, it is not chosen;
2. **protection parts** (a sized project whose catalogue has them): every
   combination of the ``protection:`` section's parts the catalogue offers (an
   input PTC from ``parts.ptcs``, a ring crowbar from ``parts.diodes`` behind the
   current ranges' fuse, a mA fuse from ``parts.fuses`` rated between the lowest
   and the highest current range), each sized and judged on the whole matrix.

Objective, lexicographic (:func:`plan_key`): the failing cases (positions and
transitions, ``overstress`` or ``hazard`` and not accepted), fewest first; the
worst ratio of the stress that decides a case over its rating (over every case),
smallest first; the price in accuracy (the largest change of a full-scale reading
at the hottest ambient that the protection causes, against the share of the
class: a plan beyond the share is not chosen); the number of parts added.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

from ..design import Design, build
from ..engine import Engine
from ..errors import PlannerError
from ..faults import failing, matrix_states, requirements_met
from ..faults.shared import SharedStates
from ..project import loads
from ..model import ProtectionRequest
from ..sizing.sections.protection import protection_lines
from .. import writer

__all__ = ["matrix_score", "matrix_tally", "plan_key", "same_request", "protection_candidates", "judge_given",
           "judge_plans"]

#: Most protection-part combinations judged (each is one whole misrange matrix).
MAX_PART_PLANS = 48


def matrix_score(faults: dict) -> dict:
    """The misrange matrix summed up: failing cases, worst deciding ratio, counts.

    Parameters
    ----------
    faults : dict
        What :func:`planner.faults.faults_project` returned.

    Returns
    -------
    dict
        ``failing`` (cases and transitions judged ``overstress`` or ``hazard`` and
        not accepted), ``failing_cases``, ``failing_transitions``, ``worst_ratio``
        (largest ratio of a case's deciding stress over its rating, every case),
        ``verdicts`` (count per verdict over the cases), ``requirements_met``.
    """
    cases, trans = faults["cases"], faults["transitions"]
    worst = max([c["deciding"]["ratio"] for c in cases + trans if c.get("deciding")] or [0.0])
    verdicts: dict = {}
    for c in cases:
        verdicts[c["verdict"]] = verdicts.get(c["verdict"], 0) + 1
    fc, ft = sum(map(failing, cases)), sum(map(failing, trans))
    return {"failing": fc + ft, "failing_cases": fc, "failing_transitions": ft, "worst_ratio": float(worst),
            "verdicts": verdicts, "requirements_met": bool(faults["requirements_met"])}


def matrix_tally(design: Design, bound: int | None = None, first=(), shared: SharedStates | None = None) \
        -> tuple[dict, dict | None]:
    """:func:`matrix_score` of a design's misrange matrix, judged state by state, stopped past a bound.

    Parameters
    ----------
    design : Design
    bound : int, optional
        Stop as soon as more than this many failing cases are counted (None: judge
        every state).
    first : sequence of str
        States (positions or transitions) to judge first: where the failing cases
        of the last combination were (only the order of the work changes).
    shared : SharedStates, optional
        States already judged on another design of the project that holds them
        alike (:mod:`planner.faults.shared`): taken from there, the same tally.

    Returns
    -------
    score : dict
        The fields of :func:`matrix_score`; of a stopped matrix, what was counted
        until it stopped (``failing`` then a lower bound of the whole matrix's).
    stopped : dict or None
        None when every state was judged (the score is then the whole matrix's,
        exactly :func:`matrix_score` of :func:`planner.faults.faults_project`); else
        ``failing_at_least``, ``bound``, ``states_judged``, ``states`` and
        ``failing_states`` (the states with failing cases, judged first next time).

    Notes
    -----
    The failing cases of a matrix are a sum over its states, so the count after
    some states is a lower bound of the whole count: a combination with more
    failing cases than the best plan's so far can never be the plan
    (:func:`plan_key` orders by the failing cases first) nor protect as well
    as the project as given, whatever its other states hold.
    """
    cases, trans, failing_states = [], [], []
    n_fail, judged, n_trans, stopped = 0, 0, 0, None
    for name, got, is_transition, total in matrix_states(design, first=first, shared=shared):
        judged += 1
        n_trans += bool(is_transition)
        (trans if is_transition else cases).extend(got)
        bad = sum(map(failing, got))
        if bad:
            n_fail += bad
            failing_states.append(name)
        if bound is not None and n_fail > bound and judged < total:
            stopped = {"failing_at_least": n_fail, "bound": int(bound), "states_judged": judged, "states": total,
                       "failing_states": failing_states}
            break
    if stopped is None:
        _, met = requirements_met(cases, trans, n_trans > 0, design.net.contact_style)
    else:
        met = False  # more failing cases than the bound, at least one
    return matrix_score({"cases": cases, "transitions": trans, "requirements_met": met}), stopped


def plan_key(row: dict) -> tuple:
    """Sort key of a judged plan (smaller is better): failing, worst ratio, over-share price, price, parts."""
    s = row["matrix"]
    price = row.get("price_share", 0.0)
    return (s["failing"], round(s["worst_ratio"], 9), price > 1.0 + 1e-12, round(price, 9), row.get("parts_added", 0))


def not_worse(a: dict, b: dict) -> bool:
    """Whether matrix ``a`` protects at least as well as ``b``: no more failing cases, no larger worst ratio."""
    return (a["failing"], round(a["worst_ratio"], 9)) <= (b["failing"], round(b["worst_ratio"], 9))


def same_request(a, b) -> bool:
    """Whether two protection requests ask for the same parts (the file line they were read from aside:
    :class:`planner.model.ProtectionRequest` leaves it out of its comparison)."""
    return a == b


def protection_candidates(spec) -> list:
    """Every ``protection:`` combination the catalogue offers (None: no protection parts), as given first.

    Each combination once: the file's own is not listed again when the catalogue's
    combinations reach it (:func:`same_request`).
    """
    cat = spec.parts
    given = spec.protection
    ptcs = [None] + (list(cat.ptcs) if spec.voltage is not None else [])
    fused = spec.current is not None and bool(spec.current.fuse)
    # a crowbar is forward junctions that carry the fault until the main fuse opens
    main_a = cat.fuses[spec.current.fuse].rated_current_a if fused else math.inf
    crowbars = [None] + [k for k, d in cat.diodes.items() if fused and d.bv_v is None and d.max_current_a >= main_a]
    ma = [None]
    if fused:
        lo, hi = min(spec.current.full_scales), max(spec.current.full_scales)
        main = cat.fuses[spec.current.fuse].rated_current_a
        ma += [k for k, f in cat.fuses.items() if k != spec.current.fuse and lo < f.rated_current_a < min(hi, main)]
    count = given.ring_crowbar_count if given is not None else 2
    out = [given]
    for ptc, cb, fz in itertools.product(ptcs, crowbars, ma):
        req = None if (ptc, cb, fz) == (None, None, None) and not (given and given.ohms_fuse) else ProtectionRequest(
            input_ptc=ptc, ring_crowbar=cb, ring_crowbar_count=count, ma_fuse=fz,
            fusible_input=bool(given and given.fusible_input), fusible_ohm=given.fusible_ohm if given else None,
            fusing=given.fusing if given else (), breaking_voltage_v=given.breaking_voltage_v if given else math.inf,
            ohms_fuse=given.ohms_fuse if given else None, ohms_crowbar=given.ohms_crowbar if given else None,
            ohms_crowbar_count=given.ohms_crowbar_count if given else 4)
        if not any(same_request(req, o) for o in out):
            out.append(req)
    return out[:MAX_PART_PLANS]


def _parts_added(req) -> int:
    if req is None:
        return 0
    return (1 if req.input_ptc else 0) + (1 if req.fusible_input else 0) + (1 if req.ma_fuse else 0) + \
        (1 if req.ohms_fuse else 0) + (2 * req.ohms_crowbar_count if req.ohms_crowbar else 0) + (2 * req.ring_crowbar_count if req.ring_crowbar else 0)


class _Designs:
    """The designs of one judgement, each protection combination built (and read hot) once.

    ``known`` seeds it with designs already built: the project as given, the clamp plan.
    A combination the sizer refuses is remembered as its error and raised again.
    ``shared``: the switch states and readings the designs hold alike, judged once
    (:class:`planner.faults.shared.SharedStates`; None: each design judged on its own).
    """

    def __init__(self, t_hot: float, shared: SharedStates | None = None):
        self.t_hot = t_hot
        self.shared = shared
        self._built: dict = {}
        self._hot: dict = {}

    def _key(self, base: str, req) -> tuple:
        return base, req

    def know(self, base: str, req, design: Design) -> None:
        self._built[self._key(base, req)] = design

    def build(self, base: str, base_spec, req) -> Design:
        key = self._key(base, req)
        if key not in self._built:
            try:
                self._built[key] = build(replace(base_spec, protection=req))
            except PlannerError as e:
                self._built[key] = e
        got = self._built[key]
        if isinstance(got, PlannerError):
            raise got
        return got

    def hot(self, design: Design) -> dict:
        if id(design) not in self._hot:
            self._hot[id(design)] = (design, _hot_readings(design, self.t_hot, self.shared))
        return self._hot[id(design)][1]


def _hot_readings(design: Design, t_hot: float, shared: SharedStates | None = None) -> dict:
    """Each position's full-scale reading at the hottest ambient ``t_hot`` [K], relative to full scale.

    ``shared``: a DC position whose compiled state another design of the project holds
    alike (:meth:`planner.faults.shared.SharedStates.signature`) reads what it read there.
    """
    eng = Engine(design)
    out = {}
    for p in design.net.positions:
        if p.measures not in ("voltage", "current"):
            continue

        def solve(p=p) -> float:
            return float(eng.reading(p.name, [p.full_scale], temperature_k=t_hot)[0])

        sig = None
        if shared is not None and p.kind.waveform == "dc":
            sig = shared.signature(design, design.state(p.name))
        out[p.name] = (solve() if sig is None else shared.reading((sig, float(t_hot)), solve)) / p.full_scale
    return out


def _judge_protection(spec, req, designs: "_Designs", base: str, bare: dict, share: float, say,
                      known: dict | None = None, bound: "_Bound | None" = None) -> dict | None:
    """One protection combination sized and judged, or None when the sizer refuses it.

    ``known``: its matrix score when already judged (the project's own combination),
    so that only its price is found here. ``bound``: the fewest failing cases of a
    whole matrix judged so far; the matrix is stopped past it (:func:`matrix_tally`)
    and the row then says so under ``stopped``.
    """
    stopped = None
    try:
        design = designs.build(base, spec, req)
        if known is not None:
            score = known
        else:
            score, stopped = matrix_tally(design, bound.failing if bound else None, bound.first if bound else (),
                                          designs.shared)
            if bound is not None:
                bound.saw(score, stopped)
    except PlannerError as e:
        say(f"protection {describe(req)}: not buildable ({e})")
        return None
    hot = designs.hot(design)
    cls = spec.movement.class_index
    price = max((abs(hot[k] - bare.get(k, hot[k])) * 100.0 for k in hot), default=0.0)
    row = {"protection": as_dict(req), "label": describe(req), "matrix": score,
           "price_pct": price, "price_share": price / (share * cls) if cls > 0 else 0.0,
           "parts_added": _parts_added(req)}
    if stopped is not None:
        row["stopped"] = {k: v for k, v in stopped.items() if k != "failing_states"}
    return row


class _Bound:
    """The fewest failing cases of a whole matrix judged so far, and where the last stopped one failed."""

    def __init__(self, *scores: dict):
        self.failing = min(s["failing"] for s in scores)
        self.first: list = []

    def saw(self, score: dict, stopped: dict | None) -> None:
        if stopped is None:
            self.failing = min(self.failing, score["failing"])
        else:
            self.first = stopped["failing_states"] + [n for n in self.first if n not in stopped["failing_states"]]


def describe(req) -> str:
    """The protection combination in words."""
    if req is None:
        return "none"
    bits = []
    if req.input_ptc:
        bits.append(f"input PTC {req.input_ptc}")
    if req.fusible_input:
        bits.append("fusible input resistor")
    if req.ring_crowbar:
        bits.append(f"ring crowbar {req.ring_crowbar} x{req.ring_crowbar_count}")
    if req.ma_fuse:
        bits.append(f"mA fuse {req.ma_fuse}")
    if req.ohms_fuse:
        bits.append(f"ohms fuse {req.ohms_fuse}")
    if req.ohms_crowbar:
        bits.append(f"ohms crowbar {req.ohms_crowbar} x{req.ohms_crowbar_count}")
    return ", ".join(bits) or "none"


def as_dict(req) -> dict | None:
    if req is None:
        return None
    return {"input_ptc": req.input_ptc, "fusible_input": req.fusible_input, "ring_crowbar": req.ring_crowbar,
            "ring_crowbar_count": req.ring_crowbar_count, "ma_fuse": req.ma_fuse,
            "fusible_resistance_ohm": req.fusible_ohm, "fusing": [list(x) for x in req.fusing],
            "breaking_voltage_v": req.breaking_voltage_v, "ohms_fuse": req.ohms_fuse,
            "ohms_crowbar": req.ohms_crowbar, "ohms_crowbar_count": req.ohms_crowbar_count}


def from_dict(p: dict | None):
    """The :class:`ProtectionRequest` of :func:`as_dict`."""
    if p is None:
        return None
    return ProtectionRequest(input_ptc=p["input_ptc"], fusible_input=p["fusible_input"],
                             fusible_ohm=p["fusible_resistance_ohm"], fusing=tuple(tuple(x) for x in p["fusing"]),
                             breaking_voltage_v=p["breaking_voltage_v"], ring_crowbar=p["ring_crowbar"],
                             ring_crowbar_count=p["ring_crowbar_count"], ma_fuse=p["ma_fuse"],
                             ohms_fuse=p.get("ohms_fuse"), ohms_crowbar=p.get("ohms_crowbar"),
                             ohms_crowbar_count=p.get("ohms_crowbar_count", 4))


def _parts_searched(spec) -> bool:
    """Whether protection-part combinations are searched: a sized project whose catalogue has such parts."""
    return spec.network is None and bool(spec.parts.ptcs or spec.parts.fuses or spec.parts.diodes)


def _base_rows(designs: _Designs, clamps: str, base_spec, base_matrix: dict, spec, share: float, say,
               bound: _Bound) -> list[dict]:
    """Every protection combination with the clamps of one base (as given, or the clamp placement), judged.

    A combination's matrix is stopped once it counts more failing cases than
    ``bound`` (the fewest of a whole matrix so far, which the rows judged here
    lower when they do better).
    """
    rows = []
    bare = designs.hot(designs.build(clamps, base_spec, None))
    for req in protection_candidates(base_spec):
        say(f"protection parts with the clamps {clamps}: {describe(req)}")
        if same_request(req, base_spec.protection):
            row = {"protection": as_dict(req), "label": describe(req), "matrix": base_matrix,
                   "price_pct": 0.0, "price_share": 0.0, "parts_added": _parts_added(req)}
            if req is not None:  # its price against no protection parts at all
                row = _judge_protection(base_spec, req, designs, clamps, bare, share, say, base_matrix) or row
        else:
            row = _judge_protection(base_spec, req, designs, clamps, bare, share, say, bound=bound)
        if row is not None:
            row["clamps"] = clamps
            row["as_given"] = clamps == "as given" and same_request(req, spec.protection)
            rows.append(row)
    return rows


def judge_given(design: Design, share: float, say=lambda _m: None) -> dict:
    """The project as given on the misrange matrix: its own matrix and its protection combinations judged.

    The part of :func:`judge_plans` that does not depend on the clamp search, so that
    it may run beside it (:func:`planner.background.beside`).

    Parameters
    ----------
    design : Design
        The project as given.
    share : float
        Share of the class the protection may cost at the hottest ambient.

    Returns
    -------
    dict
        ``matrix`` (:func:`matrix_score` of the project as given) and ``rows`` (each
        protection combination with the project's own clamps judged, in the order of
        :func:`protection_candidates`; none when :func:`judge_plans` searches no parts).
    """
    spec = design.spec
    designs = _Designs(float(spec.ambient.t_max_k), SharedStates(spec))
    designs.know("as given", spec.protection, design)
    say("the misrange matrix of the project as given")
    given, _ = matrix_tally(design, shared=designs.shared)
    rows = _base_rows(designs, "as given", spec, given, spec, share, say, _Bound(given)) \
        if _parts_searched(spec) else []
    return {"matrix": given, "rows": rows}


def judge_plans(design: Design, result: dict, text_of, share: float, say=lambda _m: None,
                given: dict | None = None) -> dict:
    """Judge the clamp search's choice and the protection parts on the misrange matrix (see the module).

    Parameters
    ----------
    design : Design
        The project as given.
    result : dict
        The clamp search's result (:func:`planner.protect.protect_project`); its
        ``chosen`` is dropped when its matrix is worse than the project's.
    text_of : callable(Design, dict) -> str
        The project text with a result's clamp placement written in
        (:func:`planner.protect.write.protected_text`).
    share : float
        Share of the class the protection may cost at the hottest ambient.
    given : dict, optional
        What :func:`judge_given` returned for this design and share (computed
        beside the search); computed here when None.

    Returns
    -------
    dict
        ``as_given`` (its matrix), ``clamp_plan`` (its matrix, or None),
        ``parts[]`` (each protection combination judged, best first), ``chosen_parts``
        (the protection combination written, or None: keep the file's),
        ``planned`` (the matrix of the plan as written), ``improves``
        (strictly better than as given) and ``notes[]``.
    """
    spec = design.spec
    notes = []
    if given is None:
        given = judge_given(design, share, say)
    given_rows, given = list(given["rows"]), given["matrix"]
    designs = _Designs(float(spec.ambient.t_max_k))
    bases = [("as given", spec, given)]
    clamp_plan = None
    if result.get("chosen") and spec.text:
        say("the misrange matrix of the chosen clamp placement")
        try:
            planned = loads(text_of(design, result), spec.path or "<plan>")
            planned_design = build(planned)
            designs.know("clamp placement", planned.protection, planned_design)
            clamp_plan, _ = matrix_tally(planned_design)
            bases.append(("clamp placement", planned, clamp_plan))
        except PlannerError as e:
            notes.append(f"the chosen clamp placement does not build ({e}); kept as given")
    if _parts_searched(spec):
        rows = given_rows
        bound = _Bound(given, *[r["matrix"] for r in given_rows if "stopped" not in r],
                       *[m for _, _, m in bases[1:]])
        for clamps, base_spec, base_matrix in bases[1:]:
            rows += _base_rows(designs, clamps, base_spec, base_matrix, spec, share, say, bound)
        rows.sort(key=plan_key)
    else:
        rows = [{"protection": as_dict(spec.protection), "label": describe(spec.protection), "matrix": m,
                 "price_pct": 0.0, "price_share": 0.0, "parts_added": 0, "clamps": c,
                 "as_given": c == "as given"} for c, _, m in bases]
        rows.sort(key=plan_key)
    mine = next(r for r in rows if r["as_given"]) if any(r["as_given"] for r in rows) else \
        {"matrix": given, "price_share": 0.0, "parts_added": 0}
    best = rows[0] if rows else None
    chosen_parts = None
    base = given
    if best is not None and not best["as_given"] and plan_key(best) < plan_key(mine) \
            and not_worse(best["matrix"], given) and best["price_share"] <= 1.0 + 1e-12:
        base = best["matrix"]
        if best["protection"] != as_dict(spec.protection):
            chosen_parts = best
        if best["clamps"] != "clamp placement":
            result["chosen"] = None
    else:
        result["chosen"] = None
    if clamp_plan is not None and result.get("chosen") is None:
        notes.append(f"the clamp placement found leaves {clamp_plan['failing']} failing cases (worst ratio "
                     f"{clamp_plan['worst_ratio']:.3g}; {given['failing']}, {given['worst_ratio']:.3g} as given): "
                     "the clamps stay as they are")
    improves = (base["failing"], round(base["worst_ratio"], 9)) < (given["failing"], round(given["worst_ratio"], 9))
    return {"as_given": given, "clamp_plan": clamp_plan, "parts": rows, "chosen_parts": chosen_parts,
            "planned": base, "improves": bool(improves), "notes": notes}


def with_protection(text: str, row: dict | None, header=()) -> str:
    """Project text with its ``protection:`` section replaced by a judged combination's (unchanged for None)."""
    if row is None:
        return text
    req = from_dict(row["protection"])
    return writer.replace_sections(text, ("protection",), protection_lines(req), header=list(header),
                                   record="# The protection parts before the search (kept for the record):")
