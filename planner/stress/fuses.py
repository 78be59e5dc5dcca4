"""Fuses in a case: which open, how long the movement is exposed, and the pulse while they open.

The fuses are judged first, because whether one opens decides how everything
else is judged: each protective part says whether it opens (:meth:`planner.parts.
Part.trip`; a fuse's pre-arcing time and let-through are
:func:`planner.parts.fuse.pre_arcing_time_s` and
:func:`planner.parts.fuse.fuse_let_through`); a fuse opening within
``SHORT_TIME_S`` puts the movement on its short-time overload
(:func:`exposure`); fuses opening in a known, finite time make the *event*
(:class:`FuseEvent`), the pulse on whose short-time ratings resistors and diodes
are judged.

References
----------
IEC 60127-1, *Miniature fuses*, and IEC 60269-1, *Low-voltage fuses*: rated
current, breaking capacity, pre-arcing time and I^2 t.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..parts.resistor import SHORT_OVERLOAD_S

#: Longest pre-arcing time [s] for which the movement is judged on its short-time
#: overload rather than its continuous one. From memory: the short-duration
#: overload test of IEC 60051 applies the overload for about 0.5 s; verify it
#: against the standard and the movement's data before relying on it.
SHORT_TIME_S = 0.5


@dataclass(frozen=True)
class FuseEvent:
    """The pulse from the fault until every fuse that opens has opened.

    Attributes
    ----------
    fuses : tuple of str
        The fuses that open.
    fuse : str
        The one with the longest let-through (it sets the duration).
    pre_arcing_time_s : float
        Its pre-arcing time [s].
    let_through_i2t_a2s : float
        Its let-through I^2 t [A^2 s].
    event_time_s : float
        Equivalent duration of the pulse, :math:`t_{ev} = I^2t / I_{rms}^2` [s]
        (:func:`planner.parts.fuse.fuse_let_through`).
    words : str
        Phase words for the quantities judged over it (``'while F1 opens'``).
    onset : str or None
        Where in the cycle the fault starts for the deciding fuse (``'crest'`` or
        ``'zero crossing'``: the slower), None for DC.
    onset_rad : float
        That onset's phase on the stimulus's cycle [rad].
    period_s : float or None
        Period of the cycle [s] (None for DC).
    """

    fuses: tuple
    fuse: str
    pre_arcing_time_s: float
    let_through_i2t_a2s: float
    event_time_s: float
    words: str
    onset: str | None = None
    onset_rad: float = 0.0
    period_s: float | None = None


def trip_parts(elements, contexts: dict, opened, original) -> tuple[list, list, list, list]:
    """Ask every protective part whether it opens; judge the parts already open.

    Parameters
    ----------
    elements : list of Part
        The rated elements of the network being judged.
    contexts : dict of str -> JudgingContext
        Each element's judging context.
    opened : frozenset of str
        Parts already open (their stand-ins are judged by the original part's
        :meth:`~planner.parts.Part.open_checks`).
    original : NetworkSpec
        The network before any part opened.

    Returns
    -------
    stresses, fuses, notes : list
        Stress entries, the ``fuses[]`` records and notes, in network order.
    newly : list of str
        The parts that open now.
    """
    stresses, fuses, notes, newly = [], [], [], []
    for e in elements:
        ctx = contexts[e.name]
        if e.name in opened:
            try:
                stresses += original.element(e.name).open_checks(ctx)
            except KeyError:
                pass
            continue
        trip = e.trip(ctx)
        if trip is None:
            continue
        fuses.append(trip.record)
        stresses += trip.stresses
        notes += trip.notes
        if trip.opens:
            newly.append(e.name)
    notes += series_first(fuses, newly)
    return stresses, fuses, notes, newly


def series_first(fuses: list, newly: list) -> list[str]:
    """Of protective parts in series (the same current), only the fastest opens: the others are told so.

    ``fuses`` (the records) and ``newly`` (the names that open) are changed in place.
    Parts carry the same current when their rms currents agree to 1e-9; the one with
    the shortest ``event_time_s`` opens and the current stops in the others.
    """
    opening = [f for f in fuses if f["opens"] and f.get("event_time_s") is not None]
    notes = []
    for f in opening:
        faster = [g for g in opening if g is not f and g["opens"] and g["event_time_s"] < f["event_time_s"]
                  and abs(g["current_rms_a"] - f["current_rms_a"]) <= 1e-9 * max(f["current_rms_a"], 1e-30)]
        if faster:
            f.update(opens=False, pre_arcing_time_s=None, let_through_i2t_a2s=None, arcing_i2t_a2s=None,
                     event_time_s=None, opened_first=faster[0]["name"])
            newly.remove(f["name"])
            notes.append(f"{f['name']} carries the same current as {faster[0]['name']}, which opens first: "
                         f"{f['name']} does not open")
    return notes


def exposure(fuses: list, short_exposure: bool | None, overload) -> tuple[bool, list]:
    """Whether the movement is judged on its short-time overload, and the note saying why.

    Parameters
    ----------
    fuses : list of dict
        The ``fuses[]`` records of the case.
    short_exposure : bool or None
        Forced (True, False) or None: short-time exactly when a fuse opens
        within ``SHORT_TIME_S`` (or in an unknown time).
    overload : Overload
        The movement's overload limits (for the note).

    Returns
    -------
    short_exposure : bool
    notes : list of str
    """
    fast = [f for f in fuses if f["opens"] and f["event_time_s"] is not None
            and f["event_time_s"] <= SHORT_TIME_S]
    unknown = [f for f in fuses if f["opens"] and not f["time_known"]]
    if short_exposure is None:
        short_exposure = bool(fast or unknown)
    notes = []
    if short_exposure and (fast or unknown):
        names = ", ".join(f["name"] for f in fast + unknown)
        notes.append(f"the movement is judged on its thermal limit over the pulse (up to its short-time peak "
                     f"limit of {overload.short_time:g} x) because {names} opens within {SHORT_TIME_S:g} s (or an "
                     "unknown time); what follows is judged after it opens")
    elif any(f["opens"] for f in fuses):
        notes.append(f"a fuse opens only after more than {SHORT_TIME_S:g} s, so the movement is judged "
                     "on its continuous (thermal and mechanical) limits")
    return bool(short_exposure), notes


def fuse_event(fuses: list, short_exposure: bool) -> tuple[FuseEvent | None, list]:
    """The pulse while fuses open, when every fuse that opens does so in a known, finite time.

    Parameters
    ----------
    fuses : list of dict
        The ``fuses[]`` records of the case.
    short_exposure : bool
        As decided by :func:`exposure` (False: every part is judged on its
        continuous ratings, no event).

    Returns
    -------
    event : FuseEvent or None
    notes : list of str
        Why there is none although a fuse opens, or why its pulse is too long
        for the short-time ratings.
    """
    opening = [f for f in fuses if f["opens"]]
    notes = []
    event = None
    if opening and short_exposure and all(f["event_time_s"] is not None for f in opening):
        lead = max(opening, key=lambda f: f["event_time_s"])
        names = " and ".join(f["name"] for f in opening)
        event = FuseEvent(tuple(f["name"] for f in opening), lead["name"], lead["pre_arcing_time_s"],
                          lead["let_through_i2t_a2s"], lead["event_time_s"],
                          f"while {names} open{'s' if len(opening) == 1 else ''}",
                          lead.get("onset"), lead.get("onset_rad") or 0.0, lead.get("period_s"))
    elif opening and short_exposure:
        notes.append("a fuse opens in an unknown or long time, so resistors and diodes are judged on their "
                     "continuous ratings")
    if event is not None and not event.event_time_s <= SHORT_OVERLOAD_S:
        notes.append(f"the pulse lasts {event.event_time_s:.3g} s, longer than the {SHORT_OVERLOAD_S:g} s short-time "
                     "overload of a resistor: every part is judged on its continuous ratings")
    return event, notes
