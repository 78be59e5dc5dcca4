"""Several stimuli judged on one switch state, following each case through the fuses it opens.

:func:`assess` solves the stimuli in one batch (:func:`planner.stress.waveforms.
solve_waveforms`), judges each (:func:`planner.stress.judge.judge`) and, where a
fuse opens, solves the network again with that fuse open
(:func:`open_fuse_design`) under the same stimulus and judges it on the
continuous ratings, until no further fuse opens. The case's verdict is taken over
every phase (:func:`planner.stress.verdict.verdict_of`).
"""

from __future__ import annotations

import weakref
from dataclasses import replace

from ..design import Design
from ..engine import Engine
from .judge import Judgement, judge
from .text import fuse_detail
from .tripped import settle_all
from .verdict import decided_by, hazards_of, verdict_of
from .waveforms import solve_waveforms

#: Resistance [ohm] that stands in for a fuse once it has opened: the insulation
#: of the open fuse, high enough that no part is stressed through it, low enough
#: to keep the nodal matrix well conditioned.
OPEN_FUSE_OHM = 1e9

_OPEN_ENGINES: "weakref.WeakKeyDictionary" = weakref.WeakKeyDictionary()


def open_fuse_design(design: Design, opened: frozenset) -> Design:
    """The design with the named parts open.

    Each open part is replaced by the stand-in it gives (:meth:`planner.parts.Part.
    opened`: for a fuse, a resistor of ``OPEN_FUSE_OHM`` between its nodes), so
    every position still validates and the voltage across the open part (the
    recovery voltage) is solved.
    """
    elems = []
    for e in design.net.elements:
        stand_in = e.opened(OPEN_FUSE_OHM) if e.name in opened else None
        elems.append(e if stand_in is None else stand_in)
    return design.variant(replace(design.net, elements=tuple(elems)), validate=True)


def _open_fuse_engine(engine: Engine, opened: frozenset) -> Engine:
    """An engine on :func:`open_fuse_design`, kept for the life of ``engine``."""
    cache = _OPEN_ENGINES.setdefault(engine, {})
    if opened not in cache:
        cache[opened] = Engine(open_fuse_design(engine.design, opened))
    return cache[opened]


def assess(engine: Engine, state, stimuli, *, temperature_k=None, n_phase: int | None = None,
           with_parts: bool = False) -> list[dict]:
    """Judge several stimuli on one switch state.

    Parameters
    ----------
    engine : Engine
    state : str or SwitchState
    stimuli : sequence of Stimulus
    temperature_k : float, optional
    n_phase : int, optional
        Phase points per sine cycle; ``PHASE_POINTS`` by default.
    with_parts : bool
        Include every part's current, voltage and power in each result.

    Returns
    -------
    list of dict
        One case per stimulus with ``verdict``, ``deciding``, ``stresses``,
        ``movement_multiple`` (peak), ``movement_rms_multiple``,
        ``movement_mean_multiple``, ``movement_current_a``, ``fuses``, ``notes``,
        ``hazardous_voltage``, ``fuse_opens``, ``fuse``, ``pre_arcing_time_s``,
        ``let_through_i2t_a2s``, ``event_time_s``, ``detail`` and, with
        ``with_parts``, ``parts``.

    Notes
    -----
    When a fuse opens, the stresses before it opens are judged as a pulse: the
    resistors and diodes on their short-time (pulse) ratings and the movement on
    its short-time overload (if the fuse clears within ``SHORT_TIME_S``), see
    :func:`planner.stress.judge.judge`; then the network with the fuse open is
    solved again under the same stimulus and judged on the continuous ratings,
    until no further fuse opens.

    References
    ----------
    IEC 60127-1 (fuse pre-arcing time and I^2 t); IEC 60115-1 (short-time
    overload of resistors, from memory); see :func:`planner.parts.fuse.
    fuse_let_through`, :func:`planner.parts.resistor.resistor_pulse_limit_j`,
    :func:`planner.parts.diode.diode_i2t_allowed_a2s`.
    """
    st = engine.state(state)
    stimuli = list(stimuli)
    wfs = solve_waveforms(engine, st, stimuli, temperature_k=temperature_k, n_phase=n_phase)
    judged = [judge(engine, wf, with_parts=with_parts) for wf in wfs]
    phases = _after_opening(engine, st, stimuli, judged, temperature_k, n_phase)
    results = []
    for s, j, ph in zip(stimuli, judged, phases):
        case = _case(st, s, j, ph)
        if with_parts:
            case["parts"] = j.parts
        results.append(case)
    return results


def _after_opening(engine: Engine, st, stimuli, judged: list, temperature_k, n_phase) -> list[dict]:
    """Each case followed through the fuses it opens: every phase's stresses, fuses and notes.

    The cases that leave the same parts open are solved together, one network and
    one batch per set of open parts (:func:`planner.stress.tripped.settle_all`),
    round after round until no case opens a further part.

    Returns
    -------
    list of dict, one per case
        ``stresses``, ``fuses``, ``notes`` (of every phase, the first included),
        ``hazardous`` and ``after`` (the movement once the last fuse has opened,
        or None when none opens).
    """
    out = [{"stresses": list(j.stresses), "fuses": list(j.fuses), "notes": list(j.notes),
            "hazardous": j.hazardous, "after": None} for j in judged]
    opened = {i: j.opened for i, j in enumerate(judged) if j.opened and not stimuli[i].peak_only}
    while opened:
        groups: dict[frozenset, list[int]] = {}
        for i, parts in opened.items():
            groups.setdefault(parts, []).append(i)
        following = {}
        for parts, idx in groups.items():
            settled = settle_all(_open_fuse_engine(engine, parts), st, [stimuli[i] for i in idx],
                                 temperature_k=temperature_k, n_phase=n_phase)
            for i, (eng, wf2) in zip(idx, settled):
                ph = out[i]
                j2 = judge(eng, wf2, phase=_after_label(parts, ph["fuses"]), opened=parts, short_exposure=False,
                           original=engine.net, with_parts=False)
                ph["stresses"] += j2.stresses
                ph["fuses"] += [dict(f, after=sorted(parts)) for f in j2.fuses]
                ph["notes"] += j2.notes
                ph["hazardous"] = ph["hazardous"] or j2.hazardous
                ph["after"] = {"opened": sorted(parts), "movement_multiple": j2.movement["multiple"],
                               "movement_rms_multiple": j2.movement["rms_multiple"],
                               "movement_mean_multiple": j2.movement["mean_multiple"]}
                new = j2.opened - parts
                if new:
                    following[i] = parts | new
        opened = following
    return out


def _after_label(opened: frozenset, fuses: list) -> str:
    """The phase label once parts have acted: ``after F1 opens``, ``after RT1 trips``."""
    ptcs = {f["name"] for f in fuses if f.get("kind") == "ptc"}
    verb = ("trips" if len(opened) == 1 else "trip") if opened <= ptcs else ("opens" if len(opened) == 1 else "open")
    return "after " + ", ".join(sorted(opened)) + " " + verb


def _case(st, s, j: Judgement, phases: dict) -> dict:
    """The case record of the design contract (see :func:`assess`)."""
    # a PTC that trips resets once the fault is gone: the case survives without a part to replace
    opens = any(f["opens"] and not f.get("resets") for f in phases["fuses"])
    verdict, deciding = verdict_of(phases["stresses"], phases["hazardous"], opens=opens)
    mv = j.movement
    after = phases["after"]
    first = [f for f in j.fuses if f["opens"]]
    ev = j.event
    return {
        "position": st.position.name,
        "state": st.name,
        "stimulus": s.name,
        "stimulus_detail": s.as_dict(),
        "verdict": verdict,
        "deciding": deciding,
        "decided_by": decided_by(deciding),
        "hazards": hazards_of(phases["stresses"]),
        "asks": asks_of(verdict, deciding),
        "movement_current_a": mv["current_a"],
        "movement_peak_current_a": mv["peak_current_a"],
        "movement_rms_current_a": mv["rms_current_a"],
        "movement_multiple": max(mv["multiple"], after["movement_multiple"] if after else 0.0),
        "movement_rms_multiple": mv["rms_multiple"],
        "movement_mean_multiple": mv["mean_multiple"],
        "reading": mv["mean_multiple"] * st.position.full_scale,
        "hazardous_voltage": phases["hazardous"],
        "stresses": phases["stresses"],
        "fuses": phases["fuses"],
        "notes": phases["notes"],
        "after_fuse_opens": after,
        "fuse_opens": bool(first),
        "fuse": ev.fuse if ev else (first[0]["name"] if first else None),
        "pre_arcing_time_s": ev.pre_arcing_time_s if ev else None,
        "pre_arcing_onset": ev.onset if ev else None,
        "let_through_i2t_a2s": ev.let_through_i2t_a2s if ev else None,
        "event_time_s": ev.event_time_s if ev else None,
        "detail": fuse_detail(first, ev, verdict),
    }


def asks_of(verdict: str, deciding: dict | None) -> list[dict]:
    """What the planner asks for where a missing figure decides a case (``asks[]``).

    A resistor's pulse energy judged by the conservative rule (no maker's
    ``pulse_energy``) that decides an ``overstress`` case: give the figure.
    """
    if verdict != "overstress" or not deciding or deciding.get("limit_name") != "resistor pulse energy":
        return []
    if deciding.get("pulse_energy_given"):
        return []
    return [{"part": deciding["part"], "key": "pulse_energy",
             "message": f"{deciding['part']}: its pulse energy decides this case and is judged by the conservative "
                        "rule (no maker's figure); give its single-pulse energy as `pulse_energy` on the element or "
                        "its rating in parts.resistors"}]
