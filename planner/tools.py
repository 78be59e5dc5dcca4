"""Small helpers shared across the package: JSON-safe numbers, quantity text, name hints.

Nothing here computes a result; these are the edges' common tools, kept in one
place so that every output treats numbers, units and misspelt names the same way.
"""

from __future__ import annotations

import difflib
import math
from typing import Iterable

#: Dimension of :func:`planner.units.parse` for each unit the writer emits.
_DIMENSION = {"ohm": "resistance", "V": "voltage", "A": "current", "W": "power", "J": "energy", "s": "time"}


def json_safe(obj):
    """A JSON-safe copy: numpy scalars and arrays to Python numbers, non-finite floats to None.

    Parameters
    ----------
    obj : dict, list, tuple, numpy array or scalar

    Returns
    -------
    The same structure with every float finite or None and every key a string.
    """
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_safe(v) for v in obj]
    if hasattr(obj, "tolist") and not isinstance(obj, (str, bytes)):
        return json_safe(obj.tolist())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj


def fmt(x: float, unit: str, digits: int = 4) -> str:
    """A value with an SI prefix and unit, e.g. ``fmt(0.0125, 'A') == '12.50 mA'``."""
    from .units import format_si

    return format_si(x, unit, digits)


def _parses_to(text: str, unit: str, x: float) -> bool:
    from .units import parse

    try:
        return parse(text, _DIMENSION[unit]) == x
    except Exception:  # any text that does not parse back is simply not the one to write
        return False


def quantity(x: float, unit: str) -> str:
    """A quantity as project-file text that parses back to the same float.

    Parameters
    ----------
    x : float
        The value in SI units [ohm], [V], [A], [W], [J] or [s].
    unit : {'ohm', 'V', 'A', 'W', 'J', 's'}

    Returns
    -------
    str
        The shortest SI-prefixed text (4 to 17 significant digits) that
        :func:`planner.units.parse` reads back as exactly ``x``, e.g.
        ``'8 kohm'``, ``'3.01 kohm'``; ``repr(x)`` with the unit when none does.
    """
    from .units import format_si

    for digits in range(4, 18):
        text = format_si(x, unit, digits)
        num, _, rest = text.partition(" ")
        if "." in num and "e" not in num:
            num = num.rstrip("0").rstrip(".")
        out = f"{num} {rest}".strip()
        if _parses_to(out, unit, x):
            return out
    return f"{x!r} {unit}"


def yaml_string(x) -> str:
    """A double-quoted YAML scalar (backslashes and quotes escaped)."""
    return '"' + str(x).replace("\\", "\\\\").replace('"', '\\"') + '"'


def squash(text: str) -> str:
    """A name without white space and case, for forgiving comparisons ('10v' ~ '10 V')."""
    return "".join(str(text).split()).lower()


def nearest(word: str, options: Iterable[str], *, forgiving: bool = False, cutoff: float = 0.6) -> str | None:
    """The option closest to ``word`` (for "did you mean ...?" hints), or None.

    Parameters
    ----------
    word : str
    options : iterable of str
    forgiving : bool
        Compare ignoring case and white space first ('10v' finds '10 V').
    cutoff : float
        Similarity below which nothing is suggested (:func:`difflib.get_close_matches`).
    """
    options = list(options)
    if forgiving:
        by_squash = {squash(n): n for n in options}
        if squash(word) in by_squash:
            return by_squash[squash(word)]
        hint = difflib.get_close_matches(squash(word), list(by_squash), n=1, cutoff=cutoff)
        return by_squash[hint[0]] if hint else None
    hint = difflib.get_close_matches(word, options, n=1, cutoff=cutoff)
    return hint[0] if hint else None


def did_you_mean(word: str, options: Iterable[str], **kwargs) -> str:
    """``" (did you mean 'x'?)"`` or an empty string."""
    hint = nearest(word, options, **kwargs)
    return f" (did you mean '{hint}'?)" if hint else ""
