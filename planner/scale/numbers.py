"""Numbers on a scale: decimal arithmetic, engineering prefixes, round 1-2-5 steps.

Label numbers are kept as :class:`decimal.Decimal` so that a row's steps (0.2,
2.5, 25 ...) are exact and print without float noise; a value becomes a float
once, at the end (correctly rounded from at most 34 significant digits).
"""

from __future__ import annotations

import math
from decimal import Decimal, localcontext

__all__ = ["M125", "M1225", "dec", "display_number", "unit_text", "number_text", "mantissa", "is_nice", "div",
           "steps_125"]

_PREFIX = {-15: "f", -12: "p", -9: "n", -6: "\u00b5", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}
_UNIT_TEXT = {"V": "V", "A": "A", "ohm": "\u03a9"}


def dec(x) -> Decimal:
    """A float as the decimal of its shortest repr (0.1 -> Decimal('0.1')); a Decimal unchanged."""
    return x if isinstance(x, Decimal) else Decimal(repr(float(x)))


def display_number(x: float) -> tuple[Decimal, int]:
    """A value as (number, exponent) with an engineering prefix: 0.0005 -> (500, -6)."""
    d = dec(x)
    e3 = 3 * math.floor(d.adjusted() / 3)
    return d.scaleb(-e3), e3


def unit_text(unit: str, e3: int) -> str:
    """A unit with its prefix for people: ('V', -3) -> 'mV', ('ohm', 3) -> 'k' + ohm sign."""
    return _PREFIX.get(e3, f"e{e3}") + _UNIT_TEXT[unit]


def number_text(d: Decimal, *, suffix: bool = False) -> str:
    """A label number: no exponent, no trailing zeros; with ``suffix``, 1000 as 1k and 1e6 as 1M."""
    d = Decimal(d)
    tail = ""
    if suffix:
        for scale, s in ((Decimal(10) ** 6, "M"), (Decimal(1000), "k")):
            if abs(d) >= scale:
                d, tail = d / scale, s
                break
    d = d.normalize()
    text = format(d, "f")
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return (text or "0") + tail


def mantissa(d: Decimal) -> Decimal:
    """The significand in [1, 10): 250 -> 2.5."""
    return d.scaleb(-d.adjusted()).normalize()


def is_nice(d: Decimal, allowed) -> bool:
    """Whether d is positive and one of ``allowed`` times a power of ten."""
    return d > 0 and mantissa(d) in allowed


M125 = (Decimal(1), Decimal(2), Decimal(5))
M1225 = (Decimal(1), Decimal(2), Decimal("2.5"), Decimal(5))


def div(a: Decimal, b) -> Decimal:
    """a / b in decimal with 34 significant digits."""
    with localcontext() as c:
        c.prec = 34
        return a / Decimal(b)


def steps_125(lo: Decimal, hi: Decimal) -> list[Decimal]:
    """1-2-5 steps from the first at or above ``lo`` to the last at or below ``hi``."""
    out = []
    e = lo.adjusted() - 1
    while True:
        for m in M125:
            s = m.scaleb(e)
            if s > hi:
                return out
            if s >= lo:
                out.append(s)
        e += 1
