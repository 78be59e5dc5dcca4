"""Stress entries, the classes of limit they are judged against, and the verdict of a case.

A *stress entry* is one quantity of one part against one limit (``part``, ``kind``,
``quantity``, ``value``, ``rating``, ``ratio``, ``unit``, ``limit``, ``exceeded``;
the ``stresses[]`` of the design contract). Its ``limit`` names a :class:`Limit`:
what kind of limit it is decides what exceeding it means for the verdict.

========================= ========================================= ====================
limit                     examples                                  exceeded means
========================= ========================================= ====================
``rating``                power, peak voltage, I^2 t, movement      ``overstress``
                          multiples                                 (``hazard`` at a
                                                                    hazardous voltage)
``safety``                a fuse's breaking capacity, its voltage   ``hazard``
                          once open
``end stop``              the pointer past its stop                 ``pegs``
``fuse trigger``          a fuse's rms current against its rating   the fuse opens
========================= ========================================= ====================
"""

from __future__ import annotations

from dataclasses import dataclass

#: Ratio above which a limit counts as exceeded (guards round-off at exactly 1).
EXCEED = 1.0 + 1e-9

#: The verdicts of the design contract, mildest first.
VERDICTS = ("ok", "pegs", "overstress", "hazard")
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


def exceeds(value: float, rating: float) -> bool:
    """Whether ``value`` is beyond ``rating`` (by more than round-off)."""
    return value > rating * EXCEED


def stress_entry(part: str, kind: str, quantity: str, value: float, rating: float, unit: str, limit: str,
                 **extra) -> dict:
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
    **extra
        Further fields (``duration_s``, ``basis``).

    Returns
    -------
    dict
        With ``ratio`` = value / rating (0 for no stress against a zero rating,
        1e300 for a stress against one) and ``exceeded``.
    """
    if limit not in LIMITS:
        raise ValueError(f"unknown limit class {limit!r}; known: {', '.join(LIMITS)}")
    ratio = value / rating if rating > 0 else (0.0 if value == 0 else 1e300)
    d = {"part": part, "kind": kind, "quantity": quantity, "value": float(value), "rating": float(rating),
         "ratio": float(ratio), "unit": unit, "limit": limit, "exceeded": bool(ratio > EXCEED)}
    d.update(extra)
    return d


def worst_ratio(stresses) -> float:
    """Largest ratio among the scored limits of a list of stresses (0 when none)."""
    r = [x["ratio"] for x in stresses if LIMITS[x["limit"]].scored]
    return max(r) if r else 0.0


def verdict_of(stresses, hazardous: bool) -> tuple[str, dict | None]:
    """Verdict and deciding stress of a list of stresses (design contract).

    Parameters
    ----------
    stresses : list of dict
        Stress entries (:func:`stress_entry`).
    hazardous : bool
        The stimulus is at a hazardous voltage.

    Returns
    -------
    verdict : {'ok', 'pegs', 'overstress', 'hazard'}
        ``hazard`` when a safety limit is exceeded (a fuse asked to break more than
        its breaking capacity, or to stand more than its rated voltage) or when any
        rating is exceeded while the stimulus is at a hazardous voltage;
        ``overstress`` when a rating is exceeded; ``pegs`` when only the pointer's
        end stop is passed; ``ok`` otherwise.
    deciding : dict or None
        The stress that decided (for ``ok``, the one closest to its rating).

    References
    ----------
    IEC 61010-1:2010, clause 6.3.1 (hazardous-live limits); ``docs/safety.md``.
    """
    def beyond(limit: Limit) -> list:
        return [x for x in stresses if x["limit"] == limit.name and x["exceeded"]]

    def largest(xs):
        return max(xs, key=lambda x: x["ratio"])

    safety, rating, peg = beyond(SAFETY), beyond(RATING), beyond(END_STOP)
    if safety:
        return "hazard", largest(safety)
    if rating:
        return ("hazard" if hazardous else "overstress"), largest(rating)
    if peg:
        return "pegs", largest(peg)
    ratings = [x for x in stresses if x["limit"] == RATING.name]
    return "ok", largest(ratings) if ratings else None
