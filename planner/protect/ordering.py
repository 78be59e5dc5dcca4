"""How placements are ordered: leximax over the positions' multiples, its scalar, the Pareto set.

Protection is compared position by position, worst first (:func:`lex_compare`,
:func:`lex_best`); :func:`lex_score` is the scalar that follows that order where a
minimiser needs one. The reported rows are thinned to those no other row beats
in protection, accuracy cost and part count at once (:func:`pareto`), ordered
best first (:func:`ordered`), and the first feasible one is chosen (:func:`choose`).

Public API
----------
:func:`lex_compare`, :func:`lex_best`, :func:`lex_score`, :func:`ranked`,
:func:`row_multiples`, :func:`dominates`, :func:`pareto`, :func:`ordered`, :func:`choose`.
"""

from __future__ import annotations

import math

__all__ = [
    "TIE",
    "LEX_WEIGHT",
    "PARETO_ROWS",
    "lex_compare",
    "lex_best",
    "lex_score",
    "ranked",
    "row_multiples",
    "dominates",
    "pareto",
    "ordered",
    "choose",
]

#: Placements within this fraction of the best worst multiple count as equal
#: protection; among them the one with the least power in its parts is chosen.
TIE = 0.02
#: Weight of the next-worst position in the scalar objective (see :func:`lex_score`).
LEX_WEIGHT = 0.01
#: Rows of the Pareto table.
PARETO_ROWS = 8


def lex_compare(a, b, tol: float = TIE) -> int:
    """Compare the protection of two placements, worst position first.

    Parameters
    ----------
    a, b : sequence of float
        Worst movement multiple of each position.
    tol : float
        Relative difference below which two multiples count as equal.

    Returns
    -------
    int
        -1 when a protects better, +1 when b does, 0 when every multiple of the
        two (each sorted from the largest down) is within ``tol``.

    Notes
    -----
    Leximax order: minimise the largest multiple; where two placements tie on
    it (within ``tol``), the next largest decides, and so on. It lets a clamp
    that only helps the voltage ranges win over one that helps nothing, when a
    current range (which no multiplier split touches) sets the worst case.
    """
    for x, y in zip(sorted(map(float, a), reverse=True), sorted(map(float, b), reverse=True)):
        if x > y * (1.0 + tol):
            return 1
        if y > x * (1.0 + tol):
            return -1
    return 0


def lex_best(items, vector, tol: float = TIE) -> list:
    """The items that protect best: filtered rank by rank to within ``tol`` of the best.

    Parameters
    ----------
    items : sequence
    vector : callable
        Gives the per-position multiples of an item.

    Returns
    -------
    list
        The items whose largest multiple is within ``tol`` of the least largest
        multiple, then, among those, whose second largest is within ``tol`` of
        the least second largest, and so on (in the order given).
    """
    cands = list(items)
    if not cands:
        return cands
    vecs = {id(c): sorted(map(float, vector(c)), reverse=True) for c in cands}
    for k in range(len(next(iter(vecs.values())))):
        best = min(vecs[id(c)][k] for c in cands)
        cands = [c for c in cands if vecs[id(c)][k] <= best * (1.0 + tol)]
    return cands


def lex_score(multiples) -> float:
    """A scalar that orders placements like :func:`lex_compare` to first order.

    Notes
    -----
    :math:`\\phi = \\sum_k \\epsilon^k v_{(k)}` with the multiples sorted from the
    largest down, :math:`v_{(0)} \\ge v_{(1)} \\ge \\dots` and
    :math:`\\epsilon` = :data:`LEX_WEIGHT`: the worst position dominates, and
    where it cannot change (a current range the split does not touch) the next
    ones decide. Used where a scalar objective is needed (scipy's minimisers).
    """
    v = sorted((float(x) for x in multiples), reverse=True)
    return float(sum(LEX_WEIGHT ** k * x for k, x in enumerate(v)))


def ranked(points: list) -> list:
    """Evaluated points best first: the best protection (:func:`lex_best`), then score, parts, combo.

    Parameters
    ----------
    points : list of Point
        :class:`planner.protect.evaluate.Point` (``multiples``, ``score``,
        ``combo``, ``r``).
    """
    rest, out = list(points), []
    while rest:
        best = min(lex_best(rest, lambda p: p.multiples),
                   key=lambda p: (p.score, p.combo.parts_count, p.combo.key(), -1.0 if p.r is None else p.r))
        out.append(best)
        rest.remove(best)
    return out


# --- reported rows -----------------------------------------------------------------------------


def row_multiples(row: dict) -> list[float]:
    """A reported row's worst movement multiple of each position (a missing one as infinity)."""
    return [math.inf if q["movement_multiple"] is None else q["movement_multiple"] for q in row["positions"]]


def dominates(a: dict, b: dict) -> bool:
    """Whether row a is at least as good as row b everywhere and better somewhere.

    Protection position by position (the worst movement multiple of each),
    accuracy cost (share of the class) and part count.
    """
    ka = row_multiples(a) + [a["share_of_class"], a["parts_count"]]
    kb = row_multiples(b) + [b["share_of_class"], b["parts_count"]]
    return all(x <= y for x, y in zip(ka, kb)) and any(x < y for x, y in zip(ka, kb))


def pareto(rows: list[dict]) -> list[dict]:
    """Rows no other row beats in protection, accuracy cost and part count at once."""
    return [r for r in rows if not any(dominates(o, r) for o in rows if o is not r)]


def ordered(rows: list[dict]) -> list[dict]:
    """Rows best first: the best protection (:func:`lex_best`), then the least power, parts, score."""
    rest, out = list(rows), []
    while rest:
        best = min(lex_best(rest, row_multiples),
                   key=lambda r: (r["power_w"], r["parts_count"], lex_score(row_multiples(r)), r["key"]))
        out.append(best)
        rest.remove(best)
    return out


def choose(rows: list[dict]) -> dict | None:
    """The feasible row that protects best (leximax within :data:`TIE`), then with the least power and parts."""
    ok = ordered([r for r in rows if r["feasible"]])
    return ok[0] if ok else None
