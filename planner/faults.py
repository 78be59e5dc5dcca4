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
from .engine import Engine
from .errors import ProjectError, SolveError
from .model import Diode, Spec
from .stress import (HAZARD_DC_V, HAZARD_PEAK_V, HAZARD_RMS_V, STANDARD_CAUTIONS, Stimulus, assess,
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

#: Built-in "voltage on a current range" stimulus when no maximum input is declared:
#: a wall outlet, 230 V rms, 0.5 ohm (common practice for a European outlet's
#: loop impedance; an assumption of this planner).
MAINS_V_RMS = 230.0
MAINS_SOURCE_OHM = 0.5

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
        out.append(Stimulus("range up", position.measures, higher[0],
                            detail=f"{format_si(higher[0], unit, 4)}, full scale of '{higher[1]}'"))
    if lower:
        out.append(Stimulus("range down", position.measures, lower[0],
                            detail=f"{format_si(lower[0], unit, 4)}, full scale of '{lower[1]}'"))
    if f.max_input_v is not None:
        out.append(Stimulus("max input", "voltage", f.max_input_v, detail="declared maximum input, DC, ideal source"))
        out.append(Stimulus("max input reversed", "voltage", -f.max_input_v,
                            detail="declared maximum input, reverse polarity"))
    elif position.measures == "current":
        out.append(Stimulus("mains on A range", "voltage", MAINS_V_RMS, "sine", MAINS_SOURCE_OHM,
                            detail="wall outlet on a current range (no maximum input declared)"))
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
        ranges |= {(p.name, p.full_scale) for p in spec.network.positions if p.measures == "voltage"}
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
    elems = [e for e in net.elements if not isinstance(e, Diode)]
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
        if position.measures == "voltage" and spec.faults.max_input_v is not None:
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
    out = [Stimulus("full scale", p.measures, p.full_scale, detail="full scale of the position being left")]
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


def faults_project(spec: Spec, *, position: str | None = None, only_failing: bool = False, progress=None,
                   engine: Engine | None = None) -> dict:
    """The misrange matrix, protection curves and switch transitions of a project.

    Parameters
    ----------
    spec : Spec
    position : str, optional
        Only this position (and the transitions that leave or reach it).
    only_failing : bool
        Keep only the cases and transitions judged ``overstress`` or ``hazard``
        (``requirements_met`` still counts every case).
    progress : callable, optional
        Called as ``progress(done, total, label)`` after each position and state.
    engine : Engine, optional
        A ready engine of ``spec``.

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
    engine = engine or Engine(spec)
    net = engine.net
    positions = list(net.positions)
    if position is not None:
        positions = [engine.state(position).position]
    src_names = [s.name for s in spec.faults.sources]
    rank = {n: i for i, n in enumerate(src_names + list(BUILT_IN_ORDER))}
    has_diodes = any(isinstance(e, Diode) for e in net.elements)
    bare = Engine(spec, net=_without_diodes(net)) if has_diodes else None

    accept = {(a.position.strip(), a.stimulus.strip()): a for a in spec.faults.accept}
    used = set()

    def mark(case, pos_key):
        key = (pos_key, case["stimulus"])
        a = accept.get(key)
        case["accepted"] = a is not None
        case["accept_reason"] = a.reason if a else None
        if a is not None:
            used.add(key)
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
    unmatched = [{"position": a.position, "stimulus": a.stimulus, "reason": a.reason, "line": a.line}
                 for key, a in accept.items() if key not in used and
                 (position is None or a.position == position)]
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
    from .units import format_si

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
    for code, col in zip(codes, cols):
        if col["name"] in ("range up", "range down"):
            desc = col.get("detail", "")
        else:
            st = Stimulus(col["name"], col["kind"], col["value"], col["waveform"], col["r_source_ohm"] or 0.0,
                          col.get("current_limit_a"))
            desc = st.describe()
        lines.append(f"{code:>4} = {col['name']}: {desc}"[:_WIDTH])
    lines.append("Cells: verdict and the largest stress / rating; ok, pegs (pointer past its stop), OVER (overstress),")
    lines.append("HAZ (hazard); * accepted; - not applicable; . not shown (only failing).")

    bad = [c for c in result["cases"] if c["verdict"] in FAILING]
    if bad:
        lines += ["", "Failing cases (the part that fails first):"]
        for c in sorted(bad, key=lambda c: (c["accepted"], -_worst_ratio(c))):
            acc = f"  [accepted: {c['accept_reason']}]" if c["accepted"] else ""
            lines.append(f"  {c['position']} | {c['stimulus']}: {c['verdict'].upper()}{acc}")
            lines += wrap("      ", describe_stress(c['deciding']))
            others = [x for x in c["stresses"] if x["exceeded"] and x is not c["deciding"]
                      and x["limit"] != "fuse trigger"][:1]
            for x in others:
                lines.append(f"      then {describe_stress(x)}")
            for f in c.get("fuses", []):
                if f["opens"] and not f.get("after"):
                    t = f["pre_arcing_time_s"]
                    tt = ("an unknown time" if not f.get("time_known", True) else
                          "a long time (below its curve)" if t is None else f"{t:.3g} s")
                    lines.append(f"      {f['name']} opens after {tt}; prospective "
                                 f"{format_si(f['prospective_current_a'], 'A', 3)}, breaking capacity "
                                 f"{format_si(f['breaking_capacity_a'], 'A', 3)}")

    if result["transitions"]:
        lines += ["", "Switch transitions, turning from the first position with its stimuli still applied:"]
        styles = (nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE)
        tstims = list(dict.fromkeys(t["stimulus"] for t in result["transitions"]))
        turns = list(dict.fromkeys(t["turn"] for t in result["transitions"]))
        tb = {(t["turn"], t["style"], t["stimulus"]): t for t in result["transitions"]}
        turn_w = max(len("turning"), *(len(x) for x in turns)) + 2
        group_w = max(cell_w * len(tstims) + 2, max(len(x) for x in styles) + 2)
        lines.append(" " * turn_w + "".join(x.replace("_", "-").ljust(group_w) for x in styles).rstrip())
        lines.append("turning".ljust(turn_w) + "".join(
            "".join(_SHORT.get(x, x)[:cell_w - 1].ljust(cell_w) for x in tstims).ljust(group_w)
            for _ in styles).rstrip())
        for turn in turns:
            row = turn.ljust(turn_w)
            for sty in styles:
                row += "".join((_cell(tb[(turn, sty, x)]) if (turn, sty, x) in tb else ".").ljust(cell_w)
                               for x in tstims).ljust(group_w)
            lines.append(row.rstrip())
        bad_t = [t for t in result["transitions"] if t["verdict"] in FAILING]
        for t in sorted(bad_t, key=lambda t: -_worst_ratio(t))[:12]:
            lines += wrap("  ", f"{t['state']} | {t['stimulus']}: {t['verdict'].upper()} - "
                                f"{describe_stress(t['deciding'])}")
        if len(bad_t) > 12:
            lines.append(f"  ... and {len(bad_t) - 12} more failing transition cases (see --json)")
    need = result["contact_style_needed"]
    text = {"either": "either contact style is safe", "make_before_break": "the switch needs make-before-break "
            "contacts", "break_before_make": "the switch needs break-before-make contacts",
            "neither": "neither contact style is safe: change the arrangement or protect the movement"}[need]
    decl = result.get("contact_style_declared")
    lines += ["", f"Contact style: {text}" + (f" (declared: {decl.replace('_', '-')})" if decl else "") + "."]

    if result["protection_curves"]:
        lines += ["", "Protection curves: input at which the clamps halve the unclamped movement current:"]
        for c in result["protection_curves"]:
            if not c["has_clamps"]:
                lines.append(f"  {c['position']}: no clamps")
                continue
            hp = c["halving_input_positive"]
            hn = c["halving_input_negative"]
            f = (lambda v: "never in the sweep" if v is None else format_si(v, c["unit"], 3))  # noqa: E731
            lines.append(f"  {c['position']}: {f(hp)} / {f(hn)} (sweep +-{format_si(c['applied'][-1], c['unit'], 3)})")
    if result["accepted"]:
        lines += ["", "Accepted cases:"]
        for a in result["accepted"]:
            lines.append(f"  {a['position']} | {a['stimulus']}: {a['verdict']} - {a['reason']}"[:_WIDTH])
    for a in result.get("accept_unmatched", []):
        lines.append(f"Note: faults.accept names no case: {a['position']} | {a['stimulus']}")
    if result["cautions"]:
        lines += [""]
        for c in result["cautions"]:
            lines += wrap("CAUTION: ", c)
    lines += ["", "Requirements met." if result["requirements_met"] else "Requirements NOT met."]
    return "\n".join(lines)


__all__ = [
    "IMPULSE_TABLE_V", "IMPULSE_SOURCE_OHM", "category_impulse", "stimuli_for", "cautions_for",
    "protection_curve", "transition_states", "faults_project", "format_faults",
]
