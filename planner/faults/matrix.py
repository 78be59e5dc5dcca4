"""The misrange matrix of a project: every position under every stimulus, the switch transitions.

:func:`faults_project` in named steps: the cases of each position
(:func:`_position_cases`, judged by :func:`planner.stress.assess`) with its
protection curve, the transition states (:func:`transition_states`,
:func:`_transition_cases`), the accepted cases (:class:`_Acceptance`), the
contact style the transitions call for (:func:`contact_style`) and the cautions.
"""

from __future__ import annotations

from .. import network as nw
from ..background import beside
from ..design import Design, as_design
from ..engine import Engine
from ..errors import SolveError
from ..model import Spec
from ..ohms import fault_readings, reversed_battery
from ..stress import FAILING, assess
from .cautions import matrix_cautions
from .curves import protection_curve, without_clamps
from .families import BUILT_IN_ORDER, column_of, stimuli_for, transition_stimuli
from .shared import SharedStates

#: Stresses kept in each case of the matrix: every one at or above this share of
#: its limit, and always the largest few.
KEEP_RATIO = 0.5
KEEP_AT_LEAST = 3


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


def faults_project(design: Design | Spec, *, position: str | None = None, only_failing: bool = False, progress=None,
                   engine: Engine | None = None, parallel: bool | None = False) -> dict:
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
    parallel : bool or None
        Judge the transitions in a child process on a second core while this one
        judges the positions (:func:`planner.background.beside`; None: where a
        second core allows it). The answer is the same; False (the default) keeps
        everything in this process.

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
    positions = [engine.state(position).position] if position is not None else list(net.positions)
    tstates = [s for s in transition_states(engine)
               if position is None or position in (s.position.name, s.target.name)]
    acceptance = _Acceptance(spec)
    tick = _progress(progress, len(positions) + len(tstates))

    transitions = None
    if parallel is not False and tstates and positions:  # the transitions on a second core
        with beside(lambda: (_transition_cases(engine, tstates, acceptance, lambda _label: None), acceptance.used),
                    str, parallel=parallel) as pending:
            cases, curves, columns, matrix = _position_cases(engine, design, positions, acceptance, tick)
            got, error = pending.result()
        if error is None:
            transitions, used = got
            acceptance.used |= used
            for st in tstates:
                tick(st.name)
    else:
        cases, curves, columns, matrix = _position_cases(engine, design, positions, acceptance, tick)
    if transitions is None:  # in this process (or again, where the child failed: its error raised here)
        transitions = _transition_cases(engine, tstates, acceptance, tick)
    fault_readings(engine, cases + transitions)  # an ohms range reads ohms on its own arc (docs/ohms.md)
    needed, met = requirements_met(cases, transitions, bool(tstates), net.contact_style)

    accepted = [{"position": c["position"] if c in cases else c["state"], "stimulus": c["stimulus"],
                 "verdict": c["verdict"], "reason": c["accept_reason"]} for c in cases + transitions if c["accepted"]]
    known_pos = {p.name for p in net.positions} | {st.name for st in transition_states(engine)}
    known_stim = {c["stimulus"] for c in cases + transitions} | {c["name"] for c in columns}
    unmatched = acceptance.unmatched(known_pos, known_stim, position)
    rank = {n: i for i, n in enumerate([s.name for s in spec.faults.sources] + list(BUILT_IN_ORDER))}
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
        "contact_style_declared": net.contact_style,
        "protection_curves": curves,
        "cautions": matrix_cautions(spec, positions),
        "accepted": accepted,
        "accept_unmatched": unmatched,
        "requirements_met": bool(met),
        "only_failing": bool(only_failing),
    }


def _progress(progress, total: int):
    """A callable ``tick(label)`` that reports ``progress(done, total, label)`` (or nothing)."""
    done = [0]

    def tick(label):
        done[0] += 1
        if progress:
            progress(done[0], total, label)

    return tick


def failing(case: dict) -> bool:
    """Whether a judged case counts against the design: overstress or hazard, and not accepted."""
    return case["verdict"] in FAILING and not case["accepted"]


def requirements_met(cases, transitions, any_states: bool, declared) -> tuple:
    """(the contact style the transitions need, whether the matrix meets the requirements): no
    failing case, and the switch transitions safe in the declared or needed style
    (:func:`contact_style`)."""
    needed, transitions_ok = contact_style(transitions, any_states, declared)
    return needed, not any(map(failing, cases)) and transitions_ok


class _Acceptance:
    """The project's ``faults.accept`` entries: marking the cases they accept, finding those that name none."""

    def __init__(self, spec: Spec):
        self.entries = {(a.position.strip(), a.stimulus.strip()): a for a in spec.faults.accept}
        self.used: set = set()

    def mark(self, case: dict, pos_key: str) -> dict:
        """Set ``accepted`` and ``accept_reason`` of a case judged on position or state ``pos_key``."""
        key = (pos_key, case["stimulus"])
        a = self.entries.get(key)
        if a is not None:
            self.used.add(key)
            if a.expanded and case["verdict"] not in FAILING:
                a = None  # an entry listing several cases accepts only the failing ones
        case["accepted"] = a is not None
        case["accept_reason"] = a.reason if a else None
        return case

    def unmatched(self, known_pos: set, known_stim: set, position: str | None) -> list[dict]:
        """The entries that accepted no case (a listed combination that does not apply is no typo;
        an unknown name is)."""
        out = []
        for key, a in self.entries.items():
            if key in self.used or (position is not None and a.position != position):
                continue
            if not a.expanded or a.position not in known_pos or a.stimulus not in known_stim:
                out.append({"position": a.position, "stimulus": a.stimulus, "reason": a.reason, "line": a.line})
        return out


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
    """The case with the stresses worth keeping: every one from ``KEEP_RATIO`` of its limit, the largest few."""
    ss = sorted(case["stresses"], key=lambda x: -x["ratio"])
    keep = [x for i, x in enumerate(ss) if i < KEEP_AT_LEAST or x["ratio"] >= KEEP_RATIO or x["exceeded"]]
    return dict(case, stresses=keep)


def _position_cases(engine: Engine, design: Design, positions, acceptance: _Acceptance, tick):
    """Each position under its stimuli, and its protection curve.

    Returns
    -------
    cases, curves, columns : list
    matrix : dict of position name -> the names of its stimuli
    """
    net = engine.net
    bare = Engine(design.variant(without_clamps(net), validate=True)) if any(e.clamp for e in net.elements) else None
    cases, curves, columns, matrix = [], [], [], {}
    for p in positions:
        got, stims = _one_position(engine, p, acceptance)
        cases += got
        matrix[p.name] = [s.name for s in stims]
        for s in stims:
            if s.name not in [c["name"] for c in columns]:
                columns.append(column_of(s))
        curves.append(protection_curve(engine, bare, p))
        tick(p.name)
    return cases, curves, columns, matrix


def _one_position(engine: Engine, p, acceptance: _Acceptance, stims=None) -> tuple[list[dict], list]:
    """One position's cases under its stimuli (the reversed battery of an ohms position included), and the stimuli
    (``stims``: :func:`stimuli_for` of the position, when the caller has them)."""
    stims = stimuli_for(engine.spec, engine.net, p) if stims is None else list(stims)
    cases = [acceptance.mark(_trim(c), p.name) for c in _assess_named(engine, p.name, stims)]
    for stim, eng in reversed_battery(engine, p):  # a changed network: the ohms battery put in backwards
        stims = stims + [stim]
        cases += [acceptance.mark(_trim(c), p.name) for c in _assess_named(eng, p.name, [stim])]
    return cases, stims


def _one_transition(engine: Engine, st, acceptance: _Acceptance) -> list[dict]:
    """One transition state's cases under what stays applied from the position being left."""
    out = []
    for c in _assess_named(engine, st, transition_stimuli(engine.spec, st.position)):
        c = acceptance.mark(_trim(c), st.name)
        c.update(style=st.kind, target=st.target.name, position=st.position.name, state=st.name,
                 turn=f"{st.position.name} -> {st.target.name}")
        out.append(c)
    return out


def matrix_states(design: Design, *, first=(), engine: Engine | None = None, shared: SharedStates | None = None):
    """The misrange matrix judged one switch state at a time, for a caller that only tallies it.

    The cases of :func:`faults_project`, the same verdicts and deciding stresses,
    without what only its report needs (protection curves, ohms readings,
    cautions), so that a caller may stop as soon as it knows enough.

    Parameters
    ----------
    design : Design
    first : sequence of str
        Names of positions or transition states to judge first (in this order);
        the rest follow in switch order, the positions before the transitions.
    engine : Engine, optional
        A ready engine on ``design``.
    shared : SharedStates, optional
        States judged before on another design of the same project that holds
        them alike are taken from there (:mod:`planner.faults.shared`); the cases
        are then each a :func:`planner.faults.shared.tally_record` (``verdict``,
        ``accepted``, ``deciding`` with its ``ratio``, ``style``), judged here or not.

    Yields
    ------
    (name, cases, is_transition, total)
        A state's name, its judged cases (``verdict``, ``accepted``, ``deciding``, ...),
        whether it is a transition state, and how many states there are in all.
    """
    engine = engine or Engine(design)
    acceptance = _Acceptance(design.spec)
    states = [(p.name, p, False) for p in engine.net.positions] + \
        [(st.name, st, True) for st in transition_states(engine)]
    rank: dict = {}
    for name in first:
        rank.setdefault(name, len(rank))
    states.sort(key=lambda s: rank.get(s[0], len(rank)))  # stable: switch order otherwise
    for name, state, is_transition in states:
        if shared is not None:
            cases = _shared_state(engine, state, is_transition, acceptance, shared)
        elif is_transition:
            cases = _one_transition(engine, state, acceptance)
        else:
            cases = _one_position(engine, state, acceptance)[0]
        yield name, cases, is_transition, len(states)


def _shared_state(engine: Engine, state, is_transition: bool, acceptance: _Acceptance, shared: SharedStates):
    """A state's tally records (:meth:`SharedStates.tally`): kept from a design that holds the state alike, or judged."""
    if is_transition:
        stims = transition_stimuli(engine.spec, state.position)
        key = shared.signature(engine.design, state, stims)
        return shared.tally(key, lambda: _one_transition(engine, state, acceptance))
    stims = stimuli_for(engine.spec, engine.net, state)
    key = shared.signature(engine.design, engine.state(state.name), stims)
    return shared.tally(key, lambda: _one_position(engine, state, acceptance, stims)[0])


def _transition_cases(engine: Engine, tstates, acceptance: _Acceptance, tick) -> list[dict]:
    """Each transition state under what stays applied from the position being left."""
    out = []
    for st in tstates:
        out += _one_transition(engine, st, acceptance)
        tick(st.name)
    return out


def contact_style(transitions: list, any_states: bool, declared: str | None) -> tuple[str, bool]:
    """The contact style the transitions call for, and whether the switch's transitions pass.

    Parameters
    ----------
    transitions : list of dict
        The judged transition cases (``style``, ``verdict``, ``accepted``).
    any_states : bool
        Whether there are transition states at all.
    declared : str or None
        The switch's declared contact style.

    Returns
    -------
    needed : {'either', 'make_before_break', 'break_before_make', 'neither'}
        A style free of failing cases that are not accepted.
    ok : bool
        The declared style passes, or with none declared some style does.
    """
    style_ok = {sty: not any(failing(t) for t in transitions if t["style"] == sty)
                for sty in (nw.MAKE_BEFORE_BREAK, nw.BREAK_BEFORE_MAKE)}
    if not any_states or all(style_ok.values()):
        needed = "either"
    elif style_ok[nw.MAKE_BEFORE_BREAK]:
        needed = nw.MAKE_BEFORE_BREAK
    elif style_ok[nw.BREAK_BEFORE_MAKE]:
        needed = nw.BREAK_BEFORE_MAKE
    else:
        needed = "neither"
    ok = style_ok[declared] if declared in style_ok else needed != "neither"
    return needed, ok
