"""Preferred resistor values: the IEC 60063 E-series, written out as tables.

Each series is a table of mantissas in one decade, [1, 10); a value of the
series is a mantissa times a power of ten. The functions here span decades:
:func:`nearest` finds the closest value to any positive number,
:func:`values_in` lists every value between two bounds.

The tables are written out rather than computed because the standard's values
are not all ``round(10 ** (i / n))``: E24 (and E12, E6, E3, which are subsets of
it) keeps the historic 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2 where the formula
gives 2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6 and 8.3; E48 and E96 follow the formula
to three figures; E192 has 9.20 where the formula gives 9.19.

Values are returned as the float nearest the decimal value (``4.7`` is
``float('4.7')``, ``470 kohm`` is ``float('4.7e5')``), so a value read back from a
project file compares equal to the table's.

References
----------
IEC 60063:2015, *Preferred number series for resistors and capacitors*.
"""

from __future__ import annotations

import bisect
import functools
import math

__all__ = [
    "SERIES",
    "series_names",
    "normalise",
    "mantissas",
    "values_in",
    "nearest",
    "at_or_below",
    "at_or_above",
    "is_member",
]

# Mantissas times 10 (two figures) for E3 ... E24, times 100 (three figures) for E48 ... E192.
_E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91)
_E12 = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)
_E6 = (10, 15, 22, 33, 47, 68)
_E3 = (10, 22, 47)
_E48 = (
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169,
    178, 187, 196, 205, 215, 226, 237, 249, 261, 274, 287, 301,
    316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536,
    562, 590, 619, 649, 681, 715, 750, 787, 825, 866, 909, 953,
)
_E96 = (
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130,
    133, 137, 140, 143, 147, 150, 154, 158, 162, 165, 169, 174,
    178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232,
    237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
    316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412,
    422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549,
    562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732,
    750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976,
)
_E192 = (
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114,
    115, 117, 118, 120, 121, 123, 124, 126, 127, 129, 130, 132,
    133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
    154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
    178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203,
    205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
    237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271,
    274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
    316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
    365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417,
    422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481,
    487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
    562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642,
    649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741,
    750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
    866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
)

# name -> (integer mantissas, decimal exponent of the integers' last digit)
_TABLES: dict[str, tuple[tuple[int, ...], int]] = {
    "E3": (_E3, -1),
    "E6": (_E6, -1),
    "E12": (_E12, -1),
    "E24": (_E24, -1),
    "E48": (_E48, -2),
    "E96": (_E96, -2),
    "E192": (_E192, -2),
}

#: Series name -> mantissas in [1, 10) as floats, ascending.
SERIES: dict[str, tuple[float, ...]] = {
    name: tuple(float(f"{m}e{shift}") for m in table) for name, (table, shift) in _TABLES.items()
}


def series_names() -> tuple[str, ...]:
    """The series known here, coarsest first: ``('E3', 'E6', ..., 'E192')``."""
    return tuple(_TABLES)


def normalise(series: str) -> str:
    """The canonical name of a series (``'e96'`` -> ``'E96'``).

    Raises
    ------
    ValueError
        For a name that is not one of :func:`series_names`.
    """
    name = str(series).strip().upper()
    if name not in _TABLES:
        raise ValueError(f"unknown E-series '{series}'; use one of {', '.join(_TABLES)}")
    return name


def mantissas(series: str) -> tuple[float, ...]:
    """The mantissas of one decade, in [1, 10), ascending."""
    return SERIES[normalise(series)]


def _value(series: str, index: int, decade: int) -> float:
    """Value ``index`` of ``decade`` (mantissa times 10**decade) as the float nearest the decimal."""
    table, shift = _TABLES[series]
    return float(f"{table[index]}e{shift + decade}")


def _decade_of(x: float) -> int:
    return int(math.floor(math.log10(x)))


#: Decades held in the precomputed grid of each series: 1e-15 ... 1e15.
_GRID_DECADES = range(-15, 15)


@functools.lru_cache(maxsize=None)
def _grid(series: str) -> tuple[float, ...]:
    """Every value of a series over :data:`_GRID_DECADES`, and 1e15, ascending."""
    n = len(_TABLES[series][0])
    return tuple(_value(series, i, d) for d in _GRID_DECADES for i in range(n)) + (1e15,)


def _check_x(x: float, what: str) -> None:
    if not (x > 0 and math.isfinite(x)):
        raise ValueError(f"{what} needs a positive finite number, got {x!r}")
    if not (1e-15 <= x < 1e15):
        raise ValueError(f"{what}: {x!r} lies outside the decades 1e-15 ... 1e15 held here")


def values_in(series: str, lo: float, hi: float) -> list[float]:
    """Every value of a series with ``lo <= value <= hi``, ascending, across decades.

    Parameters
    ----------
    series : str
        ``'E3'`` ... ``'E192'``.
    lo, hi : float
        Bounds, both included, ``0 < lo <= hi``.

    Returns
    -------
    list of float
    """
    name = normalise(series)
    if not (lo > 0 and math.isfinite(lo) and math.isfinite(hi)) or hi < lo:
        raise ValueError(f"values_in needs 0 < lo <= hi, finite; got lo={lo!r}, hi={hi!r}")
    g = _grid(name)
    if lo >= g[0] and hi <= g[-1]:
        return list(g[bisect.bisect_left(g, lo) : bisect.bisect_right(g, hi)])
    out = []
    n = len(_TABLES[name][0])
    for decade in range(_decade_of(lo) - 1, _decade_of(hi) + 1):
        for i in range(n):
            v = _value(name, i, decade)
            if lo <= v <= hi:
                out.append(v)
    return out


def nearest(series: str, x: float) -> float:
    """The value of a series closest to ``x`` (any decade).

    Parameters
    ----------
    series : str
    x : float
        A positive, finite number (1e-15 <= x < 1e15).

    Returns
    -------
    float
        The value v minimising |v - x| (equivalently the relative error
        |v - x| / x); on a tie, the lower value.
    """
    name = normalise(series)
    _check_x(x, "nearest")
    g = _grid(name)
    i = bisect.bisect_left(g, x)
    cands = g[max(0, i - 1) : i + 1]
    return min(cands, key=lambda v: (abs(v - x), v))


def at_or_below(series: str, x: float) -> float:
    """The largest value of a series that is <= ``x``."""
    name = normalise(series)
    _check_x(x, "at_or_below")
    g = _grid(name)
    return g[bisect.bisect_right(g, x) - 1]


def at_or_above(series: str, x: float) -> float:
    """The smallest value of a series that is >= ``x``."""
    name = normalise(series)
    _check_x(x, "at_or_above")
    g = _grid(name)
    return g[bisect.bisect_left(g, x)]


def is_member(series: str, x: float, rel: float = 1e-9) -> bool:
    """Whether ``x`` is a value of the series (to a relative ``rel``)."""
    if not (x > 0 and math.isfinite(x)):
        return False
    v = nearest(series, x)
    return abs(v - x) <= rel * x
