"""Stress entries, the classes of limit they are judged against, and the verdict of a case.

A *stress entry* is one quantity of one part against one limit (``part``, ``kind``,
``quantity``, ``value``, ``rating``, ``ratio``, ``unit``, ``limit``, ``exceeded``;
the ``stresses[]`` of the design contract). Its ``limit`` names a :class:`Limit`:
what kind of limit it is decides what exceeding it means for the verdict.

========================= ========================================= ====================
limit                     examples                                  exceeded means
========================= ========================================= ====================
``rating``                power, peak voltage, I^2 t, movement      ``overstress``
                          mechanical, thermal and peak limits
``safety``                a named hazard rule (:data:`HAZARD_RULES`) ``hazard``
``end stop``              the pointer past its stop                 ``pegs``
``fuse trigger``          a fuse's rms current against its rating   the fuse opens
========================= ========================================= ====================

Besides its class, every entry names the limit itself (``limit_name``: ``'movement
thermal'``, ``'resistor power'``, ``'fuse breaking capacity'`` ...), and a ``safety``
entry names its hazard rule (``rule``, a key of :data:`HAZARD_RULES`). A case says
which limit decided it (``decided_by``) and lists its ``hazards[]``.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..parts.base import IGNITION_POWER_FACTOR, IGNITION_TIME_S  # noqa: F401  (the ignition rule's figures)

#: Ratio above which a limit counts as exceeded (guards round-off at exactly 1).
EXCEED = 1.0 + 1e-9

#: The verdicts of the design contract, mildest first.
VERDICTS = ("ok", "pegs", "opens", "overstress", "hazard")
#: The verdicts that fail a case (unless the project accepts it).
FAILING = ("overstress", "hazard")


@dataclass(frozen=True)
class Limit:
    """A class of limit a stress is judged against.

    Attributes
    ----------
    name : str
        The ``limit`` field of a stress entry.
    word : str
        What the text calls the limit value (``'of 250 mW rating'``).
    scored : bool
        Its ratio counts toward a case's worst ratio (the matrix cell, a part's
        worst check): true for the limits that protect a part or a person.
    """

    name: str
    word: str
    scored: bool


RATING = Limit("rating", "rating", True)
SAFETY = Limit("safety", "limit", True)
END_STOP = Limit("end stop", "end stop", False)
FUSE_TRIGGER = Limit("fuse trigger", "rated current", False)

#: The limit classes by name.
LIMITS = {x.name: x for x in (RATING, SAFETY, END_STOP, FUSE_TRIGGER)}


@dataclass(frozen=True)
class HazardRule:
    """A named rule by which exceeding a limit puts a person at risk (``docs/safety.md``).

    Attributes
    ----------
    name : str
        The ``rule`` of a ``safety`` stress entry and of a case's ``hazards[]``.
    text : str
        What the rule says.
    source : str
        Where it comes from (standard and clause, or "from memory").
    """

    name: str
    text: str
    source: str


#: The hazard rules: a ``safety`` stress entry beyond its limit makes the case ``hazard``.
HAZARD_RULES = {r.name: r for r in (
    HazardRule("breaking capacity",
               "a fuse or fusible part asked to interrupt a prospective current above its rated breaking capacity "
               "may rupture or keep arcing",
               "IEC 60127-1 and IEC 60269-1, rated breaking capacity; IEC 61010-1:2010, clause 9.6.1 (overcurrent "
               "protection devices; from memory)"),
    HazardRule("voltage rating",
               "a fuse or fusible part that opens with more than its rated voltage across it may not extinguish "
               "its arc",
               "IEC 60127-1 and IEC 60269-1, rated voltage (the recovery voltage it withstands after breaking)"),
    HazardRule("ignition",
               "a resistor or diode held at 10 x its rated power or more for longer than 5 s can reach the "
               "temperature at which its coating, its body or the board beneath it ignites",
               "IEC 60115-1, flame-retardance (overload at multiples of the rated dissipation) and short-time "
               "overload tests (from memory: 6.25 x for 5 s is a survived test level, so ignition is taken from "
               "10 x held beyond 5 s; range 10-25 x); IEC 61010-1:2010, clause 9 (spread of fire)"),
    HazardRule("energy absorber",
               "an energy absorber (varistor, suppressor) asked for more than its energy rating while the input is "
               "at a hazardous voltage can fail short, rupture or burn",
               "IEC 61051-1 (varistors, single-pulse energy; from memory); IEC 61010-1:2010, clause 6.3.1 "
               "(hazardous-live limits)"),
)}



def exceeds(value: float, rating: float) -> bool:
    """Whether ``value`` is beyond ``rating`` (by more than round-off)."""
    return value > rating * EXCEED


def stress_entry(part: str, kind: str, quantity: str, value: float, rating: float, unit: str, limit: str,
                 *, limit_name: str | None = None, rule: str | None = None, **extra) -> dict:
    """One stress entry of the design contract.

    Parameters
    ----------
    part, kind : str
        Designator and part kind.
    quantity : str
        What is judged, with its phase words (``'power after F1 opens'``).
    value, rating : float
        The stress and its limit, in ``unit``.
    unit : str
    limit : str
        A name of :data:`LIMITS`.
    limit_name : str, optional
        The limit itself (``'movement thermal'``, ``'resistor power'``); by default
        the part kind and the quantity without its phase words.
    rule : str, optional
        For a ``safety`` limit: the hazard rule (a key of :data:`HAZARD_RULES`).
    **extra
        Further fields (``duration_s``, ``basis``).

    Returns
    -------
    dict
        With ``ratio`` = value / rating (0 for no stress against a zero rating,
        1e300 for a stress against one; a negative limit, the zero-end stop,
        bounds a negative value) and ``exceeded``.
    """
    if limit not in LIMITS:
        raise ValueError(f"unknown limit class {limit!r}; known: {', '.join(LIMITS)}")
    if (limit == SAFETY.name) != (rule is not None) or (rule is not None and rule not in HAZARD_RULES):
        raise ValueError(f"a safety limit names one hazard rule of {', '.join(HAZARD_RULES)}; got {rule!r}")
    # a negative limit bounds a negative value (the zero-end stop): the ratio is still value / limit
    ratio = value / rating if rating != 0 else (0.0 if value == 0 else 1e300)
    if limit_name is None:
        head = quantity
        for w in (" while ", " until ", " after "):
            head = head.split(w)[0]
        limit_name = f"{kind} {head}"
    d = {"part": part, "kind": kind, "quantity": quantity, "value": float(value), "rating": float(rating),
         "ratio": float(ratio), "unit": unit, "limit": limit, "limit_name": limit_name,
         "exceeded": bool(ratio > EXCEED)}
    if rule is not None:
        d["rule"] = rule
    d.update(extra)
    return d


def worst_ratio(stresses) -> float:
    """Largest ratio among the scored limits of a list of stresses (0 when none)."""
    r = [x["ratio"] for x in stresses if LIMITS[x["limit"]].scored]
    return max(r) if r else 0.0


def verdict_of(stresses, hazardous: bool = False, *, opens: bool = False) -> tuple[str, dict | None]:
    """Verdict and deciding stress of a list of stresses (design contract).

    Parameters
    ----------
    stresses : list of dict
        Stress entries (:func:`stress_entry`).
    hazardous : bool
        The stimulus is at a hazardous voltage. It does not by itself change the
        verdict: a part beyond its rating at a hazardous input is ``overstress``
        unless a hazard rule says otherwise (the parts add their ``safety``
        entries, e.g. an energy absorber only at a hazardous voltage).
    opens : bool
        A protective part (a fuse) opens in this case.

    Returns
    -------
    verdict : {'ok', 'pegs', 'opens', 'overstress', 'hazard'}
        ``hazard`` when a ``safety`` limit (a rule of :data:`HAZARD_RULES`) is
        exceeded; ``overstress`` when a rating is exceeded; ``opens`` when a fuse
        opens and every other part held; ``pegs`` when only the pointer's end stop
        is passed; ``ok`` otherwise.
    deciding : dict or None
        The stress that decided: the largest ratio among the exceeded limits of
        the verdict's class; for ``opens`` the fuse's trigger; for ``ok`` the one
        closest to its rating.

    References
    ----------
    Design contract (``verdict``); ``docs/safety.md`` (the hazard rules and their sources).
    """
    def beyond(limit: Limit) -> list:
        return [x for x in stresses if x["limit"] == limit.name and x["exceeded"]]

    def largest(xs):
        return max(xs, key=lambda x: x["ratio"])

    safety, rating, peg = beyond(SAFETY), beyond(RATING), beyond(END_STOP)
    if safety:
        return "hazard", largest(safety)
    if rating:
        return "overstress", largest(rating)
    trig = beyond(FUSE_TRIGGER)
    if opens and trig:
        return "opens", largest(trig)
    if peg:
        return "pegs", largest(peg)
    ratings = [x for x in stresses if x["limit"] == RATING.name]
    return "ok", largest(ratings) if ratings else None


def hazards_of(stresses) -> list[dict]:
    """The ``hazards[]`` of a case: one entry per exceeded ``safety`` limit (``rule``, ``part``, ``detail``, ``source``).

    The largest ratio first; one entry per part and rule (the worst of its phases).
    """
    seen = {}
    for x in sorted((x for x in stresses if x["limit"] == SAFETY.name and x["exceeded"]), key=lambda x: -x["ratio"]):
        key = (x["rule"], x["part"])
        if key in seen:
            continue
        r = HAZARD_RULES[x["rule"]]
        seen[key] = {"rule": r.name, "part": x["part"], "quantity": x["quantity"], "value": x["value"],
                     "limit": x["rating"], "unit": x["unit"], "ratio": x["ratio"],
                     "detail": f"{x['part']} {x['quantity']}: {x['value']:.4g} {x['unit']} against "
                               f"{x['rating']:.4g} {x['unit']}; {r.text}",
                     "source": r.source}
    return list(seen.values())


def decided_by(deciding: dict | None) -> str | None:
    """The limit that decided a case, in words: ``'M1 movement thermal'`` (None when nothing was judged)."""
    if deciding is None:
        return None
    return f"{deciding['part']} {deciding['limit_name']}"
