"""Value checks shared by the project file and the command line.

A quantity, a whole number, a temperature or a stimulus is checked the same way
wherever it is written: in a project file (:mod:`planner.project`, which adds the
file and line to the message) or as a command-line option (:mod:`planner.cli`,
where ``where`` is the option's name, ``--volts``). Every check raises
:class:`planner.units.QuantityError` whose message starts with ``where`` and says
what to write instead; nothing here knows about files or options.
"""

from __future__ import annotations

import datetime
import re

from . import units
from .units import QuantityError

__all__ = ["range_problem", "quantity", "whole", "ambient_temperature", "stimulus", "sine_rms", "calendar_date", "option_quantity",
           "option_whole", "MAX_AMBIENT_K", "BARE_UNITS"]

#: Highest ambient or measurement temperature accepted [K] (a unit mistake above it).
MAX_AMBIENT_K = 1000.0

#: The unit a bare number on the command line is read in, by dimension (SI, except
#: temperatures: degrees Celsius, as everywhere on the command line).
BARE_UNITS = {"voltage": "V", "current": "A", "resistance": "ohm", "temperature": "degC", "power": "W",
              "time": "s", "energy": "J"}

_BARE_NUMBER = re.compile(r"^\s*[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*$")
_WHOLE = re.compile(r"^\s*[+-]?\d+\s*$")


def range_problem(x: float, check: str | None, where: str, shown: str, dim: str) -> str | None:
    """The message for a value outside its range, or None.

    Parameters
    ----------
    x : float
        The value in SI units.
    check : str or None
        ``pos`` (above zero), ``nonneg`` (zero or more), ``nonzero`` or ``frac``
        (from 0 to below 1, a share); None for no check.
    where : str
        What the value is for (``movement.coil_resistance``, ``--source-impedance``).
    shown : str
        The value as written.
    dim : str
        Its dimension (for the example in the message).
    """
    shown = f"'{' '.join((shown or '').split())}'"
    ex = units.example(dim)
    if check == "pos" and not x > 0:
        return f"{where} is {shown}; it must be above zero: give a positive value, e.g. '{ex}'"
    if check == "nonneg" and x < 0:
        return f"{where} is {shown}; it cannot be negative: give zero or more, e.g. '{ex}'"
    if check == "nonzero" and x == 0:
        return f"{where} is {shown}; give a value other than zero, e.g. '{ex}'"
    if check == "frac":
        if x < 0:
            return f"{where} is {shown}; it cannot be negative: give e.g. '{ex}'"
        if x >= 1:
            return (f"{where} is {shown}, that is {x * 100:g} %; it must be below 100 %: "
                    f"write a percentage with its sign, e.g. '{ex}'")
    return None


def quantity(text, dim: str, where: str, check: str | None = None) -> float:
    """A quantity with its unit (:func:`planner.units.parse`) within its range.

    Raises
    ------
    planner.units.QuantityError
        For text that is no quantity of ``dim`` or a value outside ``check``.
    """
    x = units.parse(text, dim, where=where)
    problem = range_problem(x, check, where, str(text), dim)
    if problem is not None:
        raise QuantityError(problem)
    return x


def whole(value: int, where: str, lo: int, hi: int | None) -> int:
    """A whole number from ``lo`` to ``hi`` (None: no upper bound)."""
    if value < lo or (hi is not None and value > hi):
        rng = f"from {lo} to {hi}" if hi is not None else f"of at least {lo}"
        raise QuantityError(f"{where} is {value}; give a whole number {rng}")
    return value


def ambient_temperature(t_k: float, where: str) -> float:
    """An ambient temperature [K]: above absolute zero, below :data:`MAX_AMBIENT_K`."""
    if t_k > MAX_AMBIENT_K:
        raise QuantityError(f"{where} is {t_k:g} K; an ambient temperature is below 1000 K: check the unit")
    return t_k


def stimulus(text, kind: str, where: str, waveform: str) -> float:
    """The value of a stimulus (a fault source, ``--volts``, ``--amps``) [V] or [A]: not zero,
    and positive for a sine (:func:`sine_rms`)."""
    return sine_rms(quantity(text, kind, where, "nonzero"), waveform, where)


def sine_rms(value: float, waveform: str, name: str) -> float:
    """``value`` as it is, refused when a sine's rms value is negative (``name`` names the stimulus)."""
    if waveform == "sine" and value < 0:
        raise QuantityError(f"{name}: a sine is given by its rms value, which is positive; drop the minus sign")
    return value


def calendar_date(text: str, where: str) -> str:
    """A date written ``YYYY-MM-DD`` that the calendar has (``2024-02-30`` is refused)."""
    s = str(text).strip()
    try:
        if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", s):
            raise ValueError
        datetime.date.fromisoformat(s)
    except ValueError:
        shown = " ".join(s.split())[:40]
        raise QuantityError(f"{where} is '{shown}'; give a real date as YYYY-MM-DD, e.g. 2024-03-18") from None
    return s


# --- the command line's forms ---------------------------------------------------------------


def option_quantity(text: str, dim: str, option: str, check: str | None = None) -> float:
    """A command-line quantity: a number with a unit, or a bare number in :data:`BARE_UNITS`.

    The bare number gets its unit and goes through the same parse and range
    check as the project file's value (:func:`quantity`), so the limits and the
    wording are the file's, naming the option.
    """
    text = str(text)
    if not text.isprintable():
        raise QuantityError(f"{option}: the value holds control characters; type it again, e.g. "
                            f"'{units.example(dim)}'")
    bare = _BARE_NUMBER.match(text) is not None
    if bare and dim in BARE_UNITS:
        x = units.parse(f"{text.strip()} {BARE_UNITS[dim]}", dim, where=option)
        problem = range_problem(x, check, option, text, dim)
        if problem is not None:
            raise QuantityError(problem)
        return x
    return quantity(text, dim, option, check)


def option_whole(text, option: str, lo: int, hi: int | None, example: str) -> int:
    """A command-line whole number within the file's limits."""
    if isinstance(text, int):
        return whole(text, option, lo, hi)
    s = str(text)
    if _WHOLE.match(s) is None:
        shown = " ".join(s.split())[:40]
        raise QuantityError(f"{option} is '{shown}'; give a whole number, e.g. {example}")
    digits = s.strip().lstrip("+-")
    if len(digits) > 30:  # far beyond any limit; no need to hold it
        raise QuantityError(f"{option} is a {len(digits)}-digit number; give a whole number "
                            + (f"from {lo} to {hi}" if hi is not None else f"of at least {lo}"))
    return whole(int(s), option, lo, hi)
