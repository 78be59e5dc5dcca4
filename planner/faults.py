"""Misrange survival: every position under every foreseeable wrong stimulus.

The matrix crosses the positions with the stimuli a user can plausibly apply:

* the project's own ``faults.sources`` (a wall outlet, a car battery, a bench
  supply with its current limit ...);
* ``range up`` / ``range down``: the full scale of the next higher / lower range of
  the same quantity applied to this position (the switch one step off);
* ``max input`` and ``max input reversed``: the declared maximum input voltage
  (``faults.max_input``), DC from an ideal source, on every position, both
  polarities;
* ``mains on A range``: when the project has current positions and declares no
  maximum input, 230 V rms sine through 0.5 ohm on every current position (the
  classic "voltage on the current range" misrange; with a declared maximum input
  that case is the ``max input`` column instead);
* ``CAT ... impulse``: when ``faults.category`` is given, the rated impulse voltage
  of the category through its test source impedance, both polarities, judged on
  peak quantities only (see :func:`category_impulse`).

Each case is judged by :func:`planner.stress.assess` (ratings, fuses, verdict).
Besides the matrix: a protection curve per position (movement current over a
sweep, with and without the clamps), the switch transitions (make-before-break
and break-before-make, in both directions of turning, with the left position's
stimuli still applied) and the cautions for hazardous voltages.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace

import networkx as nx
import numpy as np

from . import network as nw
from .design import Design, as_design
from .engine import Engine
from .errors import ProjectError, SolveError
from .model import Spec
from .ranges.dc_current import MAINS_SOURCE_OHM, MAINS_V_RMS  # noqa: F401  (re-exported)
from .stress import (HAZARD_DC_V, HAZARD_PEAK_V, HAZARD_RMS_V, STANDARD_CAUTIONS, Stimulus, _ratio_text, assess,
                     describe_stress, stimulus_cautions, wrap)

#: Rated impulse voltages [V peak] by line-to-neutral voltage and category
#: (CAT II, CAT III, CAT IV). IEC 61010-1 / IEC 61010-2-030 as quoted in
#: secondary sources: verify against the standard before relying on them.
IMPULSE_TABLE_V = {
    150.0: (1500.0, 2500.0, 4000.0),
    300.0: (2500.0, 4000.0, 6000.0),
    600.0: (4000.0, 6000.0, 8000.0),
    1000.0: (6000.0, 8000.0, 12000.0),
}
#: Test source impedance of the impulse [ohm] by category (secondary source, verify).
IMPULSE_SOURCE_OHM = {"II": 12.0, "III": 2.0, "IV": 2.0}
_CATS = ("II", "III", "IV")

#: Points of each protection-curve sweep.
CURVE_POINTS = 201

#: Stresses kept in each case of the matrix: every one at or above this share of
#: its limit, and always the largest few.
KEEP_RATIO = 0.5
KEEP_AT_LEAST = 3

FAILING = ("overstress", "hazard")

#: Column order of the built-in stimuli (after the project's own sources); the
#: impulse column, named after the category, comes last.
BUILT_IN_ORDER = ("range up", "range down", "max input", "max input reversed", "mains on A range")


# --- built-in stimuli -------------------------------------------------------------------


def category_impulse(category: str) -> tuple[float, float, str]:
    """Rated impulse voltage and test source impedance of a measurement category.

    Parameters
    ----------
    category : str
        ``'CAT II 300 V'``, ``'CAT III 600 V'``, ... (any voltage up to 1000 V: the
        next higher tabulated line-to-neutral voltage applies).

    Returns
    -------
    peak_v : float
        Rated impulse voltage [V].
    r_source_ohm : float
        Test source impedance [ohm].
    label : str
        The category as used for the column name.

    Raises
    ------
    ProjectError
        An unknown category or a voltage above 1000 V.

    References
    ----------
    IEC 61010-1:2010 and IEC 61010-2-030:2017, rated impulse voltages by
    measurement category, as quoted in secondary sources (manufacturers'
    application notes): 150 V: 1500/2500/4000 V, 300 V: 2500/4000/6000 V, 600 V:
    4000/6000/8000 V, 1000 V: 6000/8000/12000 V for CAT II/III/IV; test source
    impedance 12 ohm (CAT II), 2 ohm (CAT III, IV). Secondary source: verify.
    """
    from .units import QuantityError, parse

    text = " ".join(str(category).split())
    m = re.fullmatch(r"(?i)CAT\s*(II|III|IV)\s+(.+)", text)
    if m is None:
        raise ProjectError(f"faults.category is '{text}'; write the measurement category and its voltage, "
                           "e.g. 'CAT II 300 V' (CAT II, CAT III or CAT IV)")
    cat = m.group(1).upper()
    try:
        v = float(parse(m.group(2), "voltage", where="faults.category"))
    except QuantityError as e:
        raise ProjectError(e.message) from None
    rows = [k for k in sorted(IMPULSE_TABLE_V) if k >= v * (1.0 - 1e-12)]
    if not rows or v <= 0:
        raise ProjectError(f"faults.category '{text}': the impulse table covers line-to-neutral voltages up to "
                           "1000 V; give 150 V, 300 V, 600 V or 1000 V")
    row = rows[0]
    return IMPULSE_TABLE_V[row][_CATS.index(cat)], IMPULSE_SOURCE_OHM[cat], f"CAT {cat} {row:g} V"


def _same_kind_neighbours(net, p):
    """Next lower and next higher full scale among positions measuring the same quantity."""
    same = sorted({q.full_scale for q in net.positions if q.measures == p.measures})
    lower = [x for x in same if x < p.full_scale]
    higher = [x for x in same if x > p.full_scale]
    name = {q.full_scale: q.name for q in net.positions if q.measures == p.measures}
    return ((lower[-1], name[lower[-1]]) if lower else None), ((higher[0], name[higher[0]]) if higher else None)


def stimuli_for(spec: Spec, net, position) -> list[Stimulus]:
    """Every stimulus of the matrix that applies to one position, in column order.

    Parameters
    ----------
    spec : Spec
    net : NetworkSpec
    position : Position

    Returns
    -------
    list of Stimulus
    """
    from .units import format_si

    f = spec.faults
    out = [Stimulus(s.name, s.kind, s.value, s.waveform, s.r_source_ohm if s.kind == "voltage" else 0.0,
                    s.current_limit_a if s.kind == "voltage" else None) for s in f.sources]
    lower, higher = _same_kind_neighbours(net, position)
    unit = position.unit
    if higher:
        out.append(Stimulus("range up", position.kind.source, higher[0],
                            detail=f"{format_si(higher[0], unit, 4)}, full scale of '{higher[1]}'"))
    if lower:
        out.append(Stimulus("range down", position.kind.source, lower[0],
                            detail=f"{format_si(lower[0], unit, 4)}, full scale of '{lower[1]}'"))
    if f.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", f.max_input_v, detail="declared maximum input, DC, ideal source"))
        out.append(Stimulus("max input reversed", "voltage", -f.max_input_v,
                            detail="declared maximum input, reverse polarity"))
    out += position.kind.misrange(position, f)
    if f.category:
        v, r, label = category_impulse(f.category)
        out.append(Stimulus(f"{label} impulse", "voltage", v, "impulse", r,
                            detail=f"rated impulse {v:g} V peak through {r:g} ohm, both polarities (secondary "
                                   "source, verify)"))
    return out


# --- cautions ---------------------------------------------------------------------------


def cautions_for(spec: Spec) -> list[str]:
    """Cautions for a project whose ranges, sources or declared input are hazardous.

    Parameters
    ----------
    spec : Spec

    Returns
    -------
    list of str
        Empty when nothing in the project exceeds the hazardous-live limits and no
        measurement category is declared; otherwise what is hazardous, followed by
        the standard cautions (verify by test; IEC 61010-1, local codes and licensed
        practice; a planning aid, not a certification).

    References
    ----------
    IEC 61010-1:2010, clause 6.3.1: hazardous-live limits 33 V rms, 46.7 V peak,
    70 V DC.
    """
    from .units import format_si

    out = []
    ranges = set()
    if spec.network is not None:
        ranges |= {(p.name, p.full_scale) for p in spec.network.positions if p.kind.source == "voltage"}
    if spec.voltage is not None:
        ranges |= {(format_si(v, "V", 4), v) for v in spec.voltage.full_scales}
    hot = sorted({v for _, v in ranges if v > HAZARD_DC_V})
    limits = f"({HAZARD_RMS_V:g} V rms, {HAZARD_PEAK_V:g} V peak, {HAZARD_DC_V:g} V DC)"
    if hot:
        names = ", ".join(format_si(v, "V", 4) for v in hot)
        out.append(f"Hazardous voltage: the range{'s' if len(hot) > 1 else ''} {names} measure{'' if len(hot) > 1 else 's'} "
                   f"voltages above the hazardous-live limits of IEC 61010-1 {limits}.")
    if spec.faults.max_input_v is not None and spec.faults.max_input_v > HAZARD_DC_V:
        out.append(f"Hazardous voltage: the declared maximum input {format_si(spec.faults.max_input_v, 'V', 4)} exceeds "
                   f"the hazardous-live limits of IEC 61010-1 {limits}.")
    srcs = [Stimulus(s.name, s.kind, s.value, s.waveform, s.r_source_ohm, s.current_limit_a)
            for s in spec.faults.sources if s.kind == "voltage"]
    out += [c for c in stimulus_cautions(srcs) if c not in STANDARD_CAUTIONS]
    if spec.faults.category:
        out.append(f"Measurement category {spec.faults.category}: the impulse voltages used are from secondary "
                   "sources; check them, the clearances and the creepage distances against IEC 61010-1 and "
                   "IEC 61010-2-030.")
    if out:
        out += list(STANDARD_CAUTIONS)
    return out


def _all_cautions(spec, net, positions) -> list[str]:
    """:func:`cautions_for` plus the built-in stimuli of the matrix that are hazardous."""
    base = [c for c in cautions_for(spec) if c not in STANDARD_CAUTIONS]
    seen, extra = set(), []
    for p in positions:
        for s in stimuli_for(spec, net, p):
            key = (s.name, s.kind, s.value, s.waveform)
            if s.name not in ("mains on A range",) and not s.peak_only or key in seen:
                continue  # ranges, the declared input and the project's sources are in cautions_for
            seen.add(key)
            extra += [c for c in stimulus_cautions([s]) if c not in STANDARD_CAUTIONS]
    out = list(dict.fromkeys(base + extra))
    return out + list(STANDARD_CAUTIONS) if out else []


# --- protection curves ------------------------------------------------------------------


def _without_diodes(net):
    """The network with every diode removed, and any element left dangling by it."""
    elems = [e for e in net.elements if not e.clamp]
    terminals = {n for p in net.positions for n in p.input}
    while True:
        g = nx.MultiGraph()
        for e in elems:
            g.add_edge(*e.nodes, key=e.name)
        loose = {n for n in g.nodes if g.degree(n) == 1 and n not in terminals}
        keep = [e for e in elems if not (set(e.nodes) & loose)]
        if len(keep) == len(elems):
            return replace(net, elements=tuple(keep))
        elems = keep


def protection_curve(engine: Engine, bare: Engine | None, position, *, span=None, points: int = CURVE_POINTS) -> dict:
    """Movement current over a sweep of the applied quantity, with and without the clamps.

    Parameters
    ----------
    engine : Engine
        The whole network.
    bare : Engine or None
        The same network without its diodes (None when it has none).
    position : Position
    span : float, optional
        Sweep from ``-span`` to ``+span`` [V] or [A]; by default the declared maximum
        input for a voltage position, else ten times the full scale.
    points : int

    Returns
    -------
    dict
        ``position``, ``quantity``, ``unit``, ``applied``, ``movement_current_a``,
        ``movement_current_unclamped_a``, ``halving_input_positive``,
        ``halving_input_negative`` (the smallest |input| of each polarity at which
        the clamps carry the movement current down to half its unclamped value,
        linearly interpolated; None if never within the sweep).
    """
    spec = engine.spec
    if span is None:
        if position.kind.source == "voltage" and spec.faults.max_input_v is not None:
            span = spec.faults.max_input_v
        else:
            span = 10.0 * position.full_scale
    x = np.linspace(-span, span, points)
    i_c = engine.operate(position.name, x).movement_current_a[0]
    i_u = bare.operate(position.name, x).movement_current_a[0] if bare is not None else i_c

    def halving(sel):
        xs, c, u = x[sel], np.abs(i_c[sel]), np.abs(i_u[sel])
        order = np.argsort(np.abs(xs))
        xs, c, u = xs[order], c[order], u[order]
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.where(u > 0, c / u, 1.0)
        hit = np.nonzero(r <= 0.5)[0]
        if bare is None or not len(hit):
            return None
        k = hit[0]
        if k == 0:
            return float(xs[0])
        r0, r1 = r[k - 1], r[k]
        t = (r0 - 0.5) / (r0 - r1) if r0 != r1 else 1.0
        return float(xs[k - 1] + t * (xs[k] - xs[k - 1]))

    return {
        "position": position.name,
        "quantity": position.measures,
        "unit": position.unit,
        "applied": x.tolist(),
        "movement_current_a": i_c.tolist(),
        "movement_current_unclamped_a": i_u.tolist(),
        "has_clamps": bare is not None,
        "halving_input_positive": halving(x > 0),
        "halving_input_negative": halving(x < 0),
    }


# --- transitions ------------------------------------------------------------------------


def transition_states(engine: Engine) -> list[nw.SwitchState]:
    """Both transition states of each adjacent pair, turning either way.

    Turning up (A -> B) leaves A with A's stimulus applied; turning down (B -> A)
    leaves B with B's. The closed contacts are those of :func:`planner.network.
    transition_states` (make-before-break: the union of both positions' contacts;
    break-before-make: their intersection).
    """
    out = []
    for st in engine.transitions():
        out.append(st)
        back = st.name.replace(f"{st.position.name} -> {st.target.name}", f"{st.target.name} -> {st.position.name}", 1)
        out.append(nw.SwitchState(back, st.kind, st.target, st.closed, st.position))
    return out


def _transition_stimuli(spec, p) -> list[Stimulus]:
    out = [Stimulus("full scale", p.kind.source, p.full_scale, detail="full scale of the position being left")]
    if spec.faults.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", spec.faults.max_input_v, detail="declared maximum input"))
    return out


# --- the matrix ---------------------------------------------------------------------------


def _assess_named(engine: Engine, state, stims) -> list[dict]:
    """:func:`planner.stress.assess`, naming the position and stimulus of a case the solver fails on."""
    try:
        return assess(engine, state, stims)
    except SolveError as e:
        name = state if isinstance(state, str) else state.name
        for s in stims:
            try:
                assess(engine, state, [s])
            except SolveError as e1:
                raise SolveError(f"misrange case '{name}' | '{s.name}' ({s.describe()}): {e1.one_line()}") from None
        raise SolveError(f"misrange cases of '{name}': {e.one_line()}") from None


def _trim(case: dict) -> dict:
    ss = sorted(case["stresses"], key=lambda x: -x["ratio"])
    keep = [x for i, x in enumerate(ss) if i < KEEP_AT_LEAST or x["ratio"] >= KEEP_RATIO or x["exceeded"]]
    return dict(case, stresses=keep)


def _worst_ratio(case: dict) -> float:
    r = [x["ratio"] for x in case["stresses"] if x["limit"] in ("rating", "safety")]
    return max(r) if r else 0.0


def faults_project(design: Design | Spec, *, position: str | None = None, only_failing: bool = False, progress=None,
                   engine: Engine | None = None) -> dict:
    """The misrange matrix, protection curves and switch transitions of a project.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec is
        built into one).
    position : str, optional
        Only this position (and the transitions that leave or reach it).
    only_failing : bool
        Keep only the cases and transitions judged ``overstress`` or ``hazard``
        (``requirements_met`` still counts every case).
    progress : callable, optional
        Called as ``progress(done, total, label)`` after each position and state.
    engine : Engine, optional
        A ready engine on ``design``.

    Returns
    -------
    dict
        The ``faults`` JSON of the design contract: ``cases[]`` (``position``,
        ``stimulus``, ``movement_multiple``, ``movement_rms_multiple``,
        ``movement_mean_multiple``, ``verdict``, ``deciding``, ``stresses[]``
        (``part``, ``quantity``, ``value``, ``rating``, ``ratio``, ...), ``accepted``,
        ``accept_reason``), ``transitions[]`` (the same fields plus ``style`` and
        ``target``), ``stimuli[]`` (the matrix columns), ``matrix`` (position -> the
        stimuli that apply to it), ``protection_curves[]``,
        ``cautions[]``, ``accepted[]``, ``accept_unmatched[]``,
        ``contact_style_needed`` (``either``, ``make_before_break``,
        ``break_before_make`` or ``neither``), ``contact_style_declared`` and
        ``requirements_met`` (False when a case that is not accepted is
        ``overstress`` or ``hazard``, or when the switch's declared contact style,
        or with none declared every style, fails a transition).

    Notes
    -----
    All stimuli of one kind on a position are solved in one batched call of
    :meth:`Engine.operate` (see :func:`planner.stress.solve_waveforms`).
    """
    design = engine.design if engine is not None else as_design(design)
    spec = design.spec
    engine = engine or Engine(design)
    net = engine.net
    positions = list(net.positions)
    if position is not None:
        positions = [engine.state(position).position]
    src_names = [s.name for s in spec.faults.sources]
    rank = {n: i for i, n in enumerate(src_names + list(BUILT_IN_ORDER))}
    has_clamps = any(e.clamp for e in net.elements)
    bare = Engine(design.variant(_without_diodes(net), validate=True)) if has_clamps else None

    accept = {(a.position.strip(), a.stimulus.strip()): a for a in spec.faults.accept}
    used = set()

    def mark(case, pos_key):
        key = (pos_key, case["stimulus"])
        a = accept.get(key)
        if a is not None:
            used.add(key)
            if a.expanded and case["verdict"] not in FAILING:
                a = None  # an entry listing several cases accepts only the failing ones
        case["accepted"] = a is not None
        case["accept_reason"] = a.reason if a else None
        return case

    tstates = [s for s in transition_states(engine)
               if position is None or position in (s.position.name, s.target.name)]
    total = len(positions) + len(tstates)
    done = 0
    cases, curves, columns, matrix = [], [], [], {}
    for p in positions:
        stims = stimuli_for(spec, net, p)
        matrix[p.name] = [s.name for s in stims]
        for s in stims:
            if s.name not in [c["name"] for c in columns]:
                columns.append(dict(s.as_dict(), detail=s.detail if s.name not in ("range up", "range down") else
                                    "full scale of the next " + ("higher" if s.name == "range up" else "lower")
                                    + " range of the same quantity"))
        for c in _assess_named(engine, p.name, stims):
            cases.append(mark(_trim(c), p.name))
        curves.append(protection_curve(engine, bare, p))
        done += 1
        if progress:
            progress(done, total, p.name)

    transitions = []
    for st in tstates:
        for c in _assess_named(engine, st, _transition_stimuli(spec, st.position)):
            c = mark(_trim(c), st.name)
            c.update(style=st.kind, target=st.target.name, position=st.position.name, state=st.name,
                     turn=f"{st.position.name} -> {st.target.name}")
            transitions.append(c)
        done += 1
        if progress:
            progress(done, total, st.name)

    def failing(c):
        return c["verdict"] in FAILING and not c["accepted"]

    style_ok = {sty: not any(failing(t) for t in transitions if t["style"] == sty)
                for sty in (nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE)}
    if not tstates:
        needed = "either"
    elif all(style_ok.values()):
        needed = "either"
    elif style_ok[nw.MAKE_BEFORE_BREAK]:
        needed = nw.MAKE_BEFORE_BREAK
    elif style_ok[nw.BREAK_BEFORE_MAKE]:
        needed = nw.BREAK_BEFORE_MAKE
    else:
        needed = "neither"
    declared = net.contact_style
    if declared in style_ok:
        transitions_ok = style_ok[declared]
    else:
        transitions_ok = needed != "neither"
    met = not any(failing(c) for c in cases) and transitions_ok

    cautions = _all_cautions(spec, net, positions)
    accepted = [{"position": c["position"] if c in cases else c["state"], "stimulus": c["stimulus"],
                 "verdict": c["verdict"], "reason": c["accept_reason"]} for c in cases + transitions if c["accepted"]]
    known_pos = {p.name for p in net.positions} | {st.name for st in transition_states(engine)}
    known_stim = {c["stimulus"] for c in cases + transitions} | {c["name"] for c in columns}

    def unmatched_entry(key, a):
        if key in used or (position is not None and a.position != position):
            return False
        # a listed combination that does not apply is no typo; an unknown name is
        return not a.expanded or a.position not in known_pos or a.stimulus not in known_stim

    unmatched = [{"position": a.position, "stimulus": a.stimulus, "reason": a.reason, "line": a.line}
                 for key, a in accept.items() if unmatched_entry(key, a)]
    columns.sort(key=lambda c: rank.get(c["name"], len(rank)))
    if only_failing:
        cases = [c for c in cases if c["verdict"] in FAILING]
        transitions = [t for t in transitions if t["verdict"] in FAILING]
    return {
        "title": spec.title,
        "positions": [p.name for p in positions],
        "stimuli": columns,
        "matrix": matrix,
        "cases": cases,
        "transitions": transitions,
        "contact_style_needed": needed,
        "contact_style_declared": declared,
        "protection_curves": curves,
        "cautions": cautions,
        "accepted": accepted,
        "accept_unmatched": unmatched,
        "requirements_met": bool(met),
        "only_failing": bool(only_failing),
    }


# --- text -------------------------------------------------------------------------------------

_SHORT = {"full scale": "FS", "max input": "max in"}
_WORD = {"ok": "ok", "pegs": "pegs", "overstress": "OVER", "hazard": "HAZ"}
_WIDTH = 100


def _short_ratio(r: float) -> str:
    if not math.isfinite(r):
        return "inf"
    if r < 1.0:
        return f"{r:.2f}"
    if r < 10.0:
        return f"{r:.1f}"
    if r < 1000.0:
        return f"{r:.0f}"
    if r < 999500.0:
        return f"{r / 1000:.0f}k"
    return f"{r:.0e}"


def _cell(case: dict | None) -> str:
    if case is None:
        return "-"
    return f"{_WORD[case['verdict']]} {_short_ratio(_worst_ratio(case))}{'*' if case.get('accepted') else ''}"


def format_faults(result: dict) -> str:
    """The faults result as text for a terminal of 100 columns.

    A matrix (positions down, stimuli across, a legend for the column codes) with
    the verdict and the worst ratio (value / rating) in each cell, then the failing
    cases (the part that dies first and by how much), the transitions and the
    contact style they call for, the protection curves, the accepted cases and
    the cautions.
    """
    lines = [f"Misrange survival: {result.get('title', '')}".rstrip(), ""]
    cols = result["stimuli"]
    codes = [f"S{i + 1}" for i in range(len(cols))]
    by = {(c["position"], c["stimulus"]): c for c in result["cases"]}
    applicable = result.get("matrix", {})
    pos_w = max([len("position")] + [len(p) for p in result["positions"]]) + 2
    cell_w = 10
    per_block = max(1, (_WIDTH - pos_w) // cell_w)
    for lo in range(0, len(cols), per_block):
        block = list(range(lo, min(len(cols), lo + per_block)))
        lines.append("position".ljust(pos_w) + "".join(codes[i].ljust(cell_w) for i in block).rstrip())
        for p in result["positions"]:
            cells = []
            for i in block:
                c = by.get((p, cols[i]["name"]))
                if c is not None:
                    txt = _cell(c)
                else:
                    txt = "." if cols[i]["name"] in applicable.get(p, ()) else "-"
                cells.append(txt.ljust(cell_w))
            lines.append(p.ljust(pos_w) + "".join(cells).rstrip())
        lines.append("")
    names = [c["name"] for c in cols]
    k = 0
    while k < len(cols):
        col, code = cols[k], codes[k]
        pair = {"range up": "range down", "max input": "max input reversed"}.get(col["name"])
        if pair is not None and k + 1 < len(cols) and names[k + 1] == pair:
            if col["name"] == "range up":
                text = (f"{code}/{codes[k + 1]} = range up/down: full scale of the next higher/lower range of "
                        "the same quantity")
            else:
                st = Stimulus(col["name"], col["kind"], col["value"], col["waveform"], col["r_source_ohm"] or 0.0)
                text = f"{code}/{codes[k + 1]} = max input (reversed): +-{st.describe()}"
            lines.append(f"  {text}"[:_WIDTH])
            k += 2
            continue
        if col["name"] in ("range up", "range down"):
            desc = col.get("detail", "")
        else:
            st = Stimulus(col["name"], col["kind"], col["value"], col["waveform"], col["r_source_ohm"] or 0.0,
                          col.get("current_limit_a"))
            desc = st.describe()
        lines.append(f"{code:>4} = {col['name']}: {desc}"[:_WIDTH])
        k += 1
    marks = "".join(lines)
    legend = "Cells: verdict and largest stress/rating; pegs: pointer past its stop; * accepted"
    legend += "; - not applicable" if " - " in marks or marks.endswith("-") else ""
    legend += "; . not shown (only failing)" if ". " in marks else ""
    lines += _wrap_flat("", legend + ".")

    code_of = {col["name"]: code for code, col in zip(codes, cols)}
    cases = result["cases"]
    lines += [""] + _summary_lines(cases, result.get("only_failing", False))
    lines += _fuse_lines(cases, code_of)
    bad = [c for c in cases if c["verdict"] in FAILING and not c.get("accepted")]
    if bad:
        lines += ["", "Failing, grouped by the part that fails first (worst first):"]
        lines += _failing_groups(bad, code_of)
    acc = [c for c in cases if c.get("accepted")]
    if acc:
        lines += ["", f"Accepted ({len(acc)} case{'s' if len(acc) != 1 else ''}), by reason:"]
        lines += _accepted_groups(acc, code_of)

    lines.append("")
    if result["transitions"]:
        lines.append("Switch transitions (both ways, with the full scale and max input of the position left):")
        lines += _transition_lines(result["transitions"])
    need = result["contact_style_needed"]
    text = {"either": "either contact style is safe", "make_before_break": "the switch needs make-before-break "
            "contacts", "break_before_make": "the switch needs break-before-make contacts",
            "neither": "neither contact style is safe: change the arrangement or protect the movement"}[need]
    decl = result.get("contact_style_declared")
    lines += [f"Contact style: {text}" + (f" (declared: {decl.replace('_', '-')})" if decl else "") + "."]

    if result["protection_curves"]:
        lines += _curve_lines(result["protection_curves"])
    for a in result.get("accept_unmatched", []):
        lines.append(f"Note: faults.accept names no case: {a['position']} | {a['stimulus']}"[:_WIDTH])
    if result["cautions"]:
        lines += [""]
        for c in _merged_cautions(result["cautions"]):
            lines += wrap("CAUTION: ", c)
    lines += ["Requirements met." if result["requirements_met"] else "Requirements NOT met."]
    return "\n".join(lines)


def _wrap_flat(prefix: str, text: str, indent: str | None = None) -> list[str]:
    """``text`` wrapped to the terminal width, continuation lines indented like the first (or ``indent``)."""
    import textwrap

    return textwrap.wrap(text, width=_WIDTH, initial_indent=prefix, subsequent_indent=indent or " " * len(prefix),
                         break_long_words=False, break_on_hyphens=False) or [prefix.rstrip()]


def _quantity_head(q: str) -> str:
    """A stress quantity without its phase words (``'power after F1 opens'`` -> ``'power'``)."""
    for w in (" while ", " until ", " after "):
        if w in q:
            q = q.split(w)[0]
    return q


def _deciding_ratio(case: dict) -> float:
    d = case.get("deciding")
    return float(d["ratio"]) if d else 0.0


def _case_list(cases, code_of, with_ratio=False) -> str:
    """``'10 V: S1 S3; 50 V: S1'``: cases by position, stimuli by their column codes.

    With ``with_ratio``, each stimulus is followed by the ratio of the case's deciding stress.
    """
    by: dict[str, list[str]] = {}
    for c in cases:
        code = code_of.get(c["stimulus"], c["stimulus"])
        if with_ratio:
            code += f" ({_short_ratio(_deciding_ratio(c))}x)"
        by.setdefault(c.get("state", c["position"]) if c.get("style") else c["position"], []).append(code)
    return "; ".join(f"{p}: {' '.join(v)}" for p, v in by.items())


def _summary_lines(cases, only_failing: bool = False) -> list[str]:
    n = len(cases)
    if only_failing:
        acc = sum(1 for c in cases if c.get("accepted"))
        return wrap("", f"{n} failing case{'s' if n != 1 else ''} shown (only failing): {acc} accepted, "
                        f"{n - acc} not.", _WIDTH)
    count = {v: sum(1 for c in cases if c["verdict"] == v) for v in ("ok", "pegs", "overstress", "hazard")}
    acc = sum(1 for c in cases if c.get("accepted") and c["verdict"] in FAILING)
    fail = count["overstress"] + count["hazard"] - acc
    fused = sum(1 for c in cases if c.get("fuse_opens") and c["verdict"] not in FAILING)
    text = (f"{n} cases: {count['ok'] + count['pegs']} survive ({count['ok']} ok, {count['pegs']} pegs"
            + (f"; {fused} as a fuse opens" if fused else "") + f"), {acc} fail but are accepted, "
            + (f"{fail} FAIL." if fail else "0 fail."))
    return wrap("", text, _WIDTH)


def _fuse_lines(cases, code_of) -> list[str]:
    """The cases the instrument survives because a fuse opens: when, how much, the closest part."""
    from .units import format_si

    ok = [c for c in cases if c.get("fuse_opens") and c["verdict"] not in FAILING and c.get("event_time_s")]
    if not ok:
        return []
    out = ["Survived because the fuse opens (replace the fuse afterwards):"]
    by: dict[tuple, list[dict]] = {}
    for c in ok:
        by.setdefault((c["position"], c["fuse"]), []).append(c)
    for (pos, fuse), group in by.items():
        t = [c["event_time_s"] for c in group]
        i2t = max(c["let_through_i2t_a2s"] for c in group)
        close = [x for c in group for x in c["stresses"] if x["limit"] == "rating"]
        worst = max(close, key=lambda x: x["ratio"]) if close else None
        duty = [x for c in group for x in c["stresses"] if x["limit"] == "safety"]
        when = format_si(min(t), "s", 3) + ("" if max(t) == min(t) else f" to {format_si(max(t), 's', 3)}")
        stims = " ".join(code_of.get(c["stimulus"], c["stimulus"]) for c in group)
        text = (f"{pos} ({stims}): {fuse} opens in {when}, let-through up to {i2t:.3g} A^2 s; closest part: "
                f"{describe_stress(worst)}")
        for q in ("prospective current", "voltage across the open fuse"):
            xs = [x for x in duty if x["quantity"].startswith(q)]
            if xs:
                x = max(xs, key=lambda x: x["ratio"])
                text += f"; {q} {format_si(x['value'], x['unit'], 3)} of {format_si(x['rating'], x['unit'], 3)}"
        out += _wrap_flat("  ", text)
    return out


def _failing_groups(bad, code_of) -> list[str]:
    groups: dict[tuple, list[dict]] = {}
    for c in bad:
        d = c["deciding"] or {}
        groups.setdefault((d.get("part", "?"), _quantity_head(d.get("quantity", "?"))), []).append(c)
    order = sorted(groups.items(), key=lambda kv: -max(_deciding_ratio(c) for c in kv[1]))
    out = []
    for (part, q), group in order:
        worst = max(group, key=_deciding_ratio)
        verdicts = "/".join(sorted({_WORD[c["verdict"]] for c in group}))
        out += _wrap_flat("  ", f"{verdicts} {describe_stress(worst['deciding'])}")
        out += _wrap_flat("      ", _case_list(sorted(group, key=lambda c: -_deciding_ratio(c)), code_of, True))
    return out


def _accepted_groups(acc, code_of) -> list[str]:
    groups: dict[str, list[dict]] = {}
    for c in acc:
        groups.setdefault(c["accept_reason"] or "", []).append(c)
    out = []
    for reason, group in groups.items():
        failing = [c for c in group if c["verdict"] in FAILING]
        out += _wrap_flat("  - ", reason, "    ")
        tail = ""
        if failing:
            worst = max(failing, key=_deciding_ratio)
            d = worst["deciding"] or {}
            tail = (f"; worst {d.get('part', '?')} {_quantity_head(d.get('quantity', '?'))} "
                    f"{_ratio_text(d.get('ratio', 0.0))} ({worst['position']} "
                    f"{code_of.get(worst['stimulus'], worst['stimulus'])})")
        out += _wrap_flat("      ", _case_list(group, code_of) + tail)
    return out


def _transition_lines(transitions) -> list[str]:
    out = []
    for sty in (nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE):
        ts = [t for t in transitions if t["style"] == sty]
        if not ts:
            continue
        bad = [t for t in ts if t["verdict"] in FAILING and not t.get("accepted")]
        name = sty.replace("_", "-")
        if not bad:
            out.append(f"  {name}: all {len(ts)} cases survive")
            continue
        worst = max(bad, key=_worst_ratio)
        turns = len(set(t["turn"] for t in bad))
        out += _wrap_flat("  ", f"{name}: {len(bad)} of {len(ts)} cases fail ({turns} turns); worst {worst['turn']} "
                                f"| {worst['stimulus']}: {_WORD[worst['verdict']]} "
                                f"{describe_stress(worst['deciding'])}", "    ")
    return out


_HAZ_CAUTION = re.compile(r"Hazardous voltage: (.+?) (?:exceeds|measures?) (?:voltages above )?the hazardous-live "
                          r"limits of IEC 61010-1 \((.+?)\)\.")


def _merged_cautions(cautions) -> list[str]:
    """The cautions with the hazardous-voltage ones merged into one (for the terminal only)."""
    items, limits, out, at = [], None, [], None
    for c in cautions:
        mt = _HAZ_CAUTION.fullmatch(c)
        if mt is None:
            out.append(c)
            continue
        if at is None:
            at = len(out)
        items.append(mt.group(1))
        limits = mt.group(2)
    if len(items) > 1:
        out.insert(at, f"Hazardous voltages, beyond the hazardous-live limits of IEC 61010-1 ({limits}): "
                       + "; ".join(items) + ".")
        return out
    return list(cautions)


def _curve_lines(curves) -> list[str]:
    from .units import format_si

    halves, never, bare = [], [], []
    for c in curves:
        if not c["has_clamps"]:
            bare.append(c["position"])
            continue
        hp, hn = c["halving_input_positive"], c["halving_input_negative"]
        if hp is None and hn is None:
            never.append(c["position"])
            continue
        f = (lambda v: "never" if v is None else format_si(abs(v), c["unit"], 3))  # noqa: E731
        both = f"+-{f(hp)}" if (hp is not None and hn is not None and math.isclose(abs(hp), abs(hn), rel_tol=1e-3)) \
            else f"+{f(hp)}/-{f(hn)}"
        halves.append(f"{c['position']} {both}")
    parts = []
    if halves:
        parts.append("Clamps halve the unclamped movement current at: " + ", ".join(halves))
    if never:
        parts.append(("not within the sweep on " if halves else
                      "Clamps do not halve the unclamped movement current within the sweep on ") + ", ".join(never))
    if bare:
        parts.append(("no clamps on " if parts else "No clamps on ") + ", ".join(bare))
    return wrap("", "; ".join(parts) + ".", _WIDTH)


__all__ = [
    "IMPULSE_TABLE_V", "IMPULSE_SOURCE_OHM", "category_impulse", "stimuli_for", "cautions_for",
    "protection_curve", "transition_states", "faults_project", "format_faults",
]
