"""Standard values for a resistance: a single part, a pair, or k equal parts and a trim.

The sizer's part choice from an IEC 60063 series (:mod:`planner.eseries`) within
the catalogue the sizer picks from (:data:`CATALOG_MIN_OHM` .. :data:`CATALOG_MAX_OHM`).
:func:`choose_value` is also the choice of ``planner protect`` and of the
replacements ``planner diagnose`` proposes. The rules are in ``docs/sizing.md``
(section 2, and the split of section 4).
"""

from __future__ import annotations

from dataclasses import dataclass

from .. import eseries

__all__ = ["CATALOG_MIN_OHM", "CATALOG_MAX_OHM", "Choice", "choose_value", "split_choice"]

#: Smallest resistor value the sizer picks [ohm] (sub-ohm decades for shunts).
CATALOG_MIN_OHM = 0.01
#: Largest resistor value the sizer picks [ohm].
CATALOG_MAX_OHM = 100e6

_REL_EPS = 1e-12


@dataclass(frozen=True)
class Choice:
    """Standard values making one resistance.

    ``units`` are in series; each unit is a tuple of values in parallel.
    """

    units: tuple[tuple[float, ...], ...]
    arrangement: str

    @property
    def value(self) -> float:
        return sum(_parallel(u) for u in self.units)

    def error(self, target: float) -> float:
        """Relative error (achieved - target) / target."""
        return (self.value - target) / target


def _parallel(values) -> float:
    if len(values) == 1:
        return values[0]
    return 1.0 / sum(1.0 / v for v in values)


def _neighbours(series: str, x: float) -> list[float]:
    """The series values just below and just above x, within the catalogue."""
    out = []
    if x <= 0:
        return out
    lo = max(x, CATALOG_MIN_OHM * 0.5)
    if lo > CATALOG_MAX_OHM * 2:
        return out
    for f in (eseries.at_or_below, eseries.at_or_above):
        try:
            v = f(series, lo)
        except ValueError:
            continue
        if CATALOG_MIN_OHM * (1 - _REL_EPS) <= v <= CATALOG_MAX_OHM * (1 + _REL_EPS):
            out.append(v)
    return sorted(set(out))


def _single(series: str, target: float) -> Choice:
    v = eseries.nearest(series, min(max(target, CATALOG_MIN_OHM), CATALOG_MAX_OHM))
    return Choice(((v,),), "single")


def choose_value(series: str, target_ohm: float, max_error: float) -> Choice:
    """Standard values for one resistance: a single part, or the best pair.

    Parameters
    ----------
    series : str
        IEC 60063 series (``'E96'``).
    target_ohm : float
        Wanted resistance [ohm].
    max_error : float
        Largest relative error a single value may have (fraction).

    Returns
    -------
    Choice
        The nearest single value if it is within ``max_error``; otherwise the best
        of every reasonable pair: in series a big value from [target/2, target] plus
        the trim value nearest the remainder, or in parallel a value from
        [target, 2 target] with the value nearest the one that completes it. On a
        tie the series pair wins. Values stay within [CATALOG_MIN_OHM, CATALOG_MAX_OHM].

    Notes
    -----
    Series: R = R_a + R_b; parallel: R = R_a R_b / (R_a + R_b).
    """
    t = float(target_ohm)
    best = _single(series, t)
    if abs(best.error(t)) <= max_error:
        return best
    cands: list[tuple[float, int, Choice]] = [(abs(best.error(t)), 2, best)]
    lo, hi = max(t / 2.0, CATALOG_MIN_OHM), min(t, CATALOG_MAX_OHM)
    if lo <= hi:
        for big in eseries.values_in(series, lo, hi):
            rest = t - big
            if rest <= 0:
                continue
            for trim in _neighbours(series, rest):
                c = Choice(((big,), (trim,)), "series pair")
                cands.append((abs(c.error(t)), 0, c))
    lo, hi = max(t, CATALOG_MIN_OHM), min(2.0 * t, CATALOG_MAX_OHM)
    if lo <= hi:
        for a in eseries.values_in(series, lo, hi):
            if a <= t * (1 + _REL_EPS):
                continue
            b_ideal = 1.0 / (1.0 / t - 1.0 / a)
            for b in _neighbours(series, b_ideal):
                c = Choice(((a, b),), "parallel pair")
                cands.append((abs(c.error(t)), 1, c))
    cands.sort(key=lambda x: (x[0], x[1]))
    return cands[0][2]


def split_choice(series: str, target: float, k: int, max_error: float) -> Choice:
    """k equal parts in series, plus a trim part when needed, summing to the target.

    The k parts take the largest series value v <= target / k, so none of them
    takes more than 1/k of the segment's voltage; the remainder target - k v (less
    than one series step of the whole) is made by a trim value or pair, and left
    out when it is within ``max_error`` of the target already.

    Parameters
    ----------
    series : str
        IEC 60063 series (``'E96'``).
    target : float
        Wanted resistance of the whole segment [ohm].
    k : int
        Number of equal parts (1: :func:`choose_value` alone).
    max_error : float
        Largest relative error of the whole (fraction).

    Returns
    -------
    Choice
        Arrangement ``'k equal in series'`` (with ``' + trim ...'`` when a trim
        part makes up the rest).

    Notes
    -----
    Series: R = k v + R_trim, with v = the largest series value <= R / k.
    """
    if k <= 1:
        return choose_value(series, target, max_error)
    v = eseries.at_or_below(series, target / k)
    units: tuple[tuple[float, ...], ...] = ((v,),) * k
    rest = target - k * v
    how = f"{k} equal in series"
    if rest > max_error * target and rest >= CATALOG_MIN_OHM * 0.5:
        trim = choose_value(series, rest, max_error * target / rest)
        units += trim.units
        how += " + trim" if trim.arrangement == "single" else f" + trim {trim.arrangement}"
    return Choice(units, how)
