"""Quantities with units: text in, SI floats out, and SI floats back to text.

This is one of the two edges where units exist (the other is output
formatting). :func:`parse` turns a project-file value such as ``'50 uA'``,
``'2 kohm'``, ``'0.5 %'``, ``'50 ppm/K'`` or ``'23 degC'`` into a plain float in
SI units after checking that its dimension is the one asked for;
:func:`format_si` writes an SI float with an SI prefix for people.

Unit names and dimensions come from the ``pint`` library. Its registry is
built once, on first use, so ``import planner.units`` stays cheap.

Rules (documented for users in ``docs/project-file.md``):

* Electrical quantities, temperatures, tempcos, times and I^2 t need a unit:
  ``'2000'`` for a coil is an error ("give a unit, e.g. '2 kohm'"). The one
  exception is a bare ``0`` (zero is zero in every unit), except for
  temperatures, where 0 K and 0 degC differ.
* A bare number is accepted for ``fraction`` (``0.005``), ``energy_ev``
  (``1.11`` meaning eV) and ``dimensionless`` (which accepts *only* a bare
  number).
* Resistance may be written ``ohm``, ``Ohm``, ``ohms``, ``Ω`` with any SI
  prefix (``kohm``, ``kΩ``, ``Mohm``, ``Gohm``, ``mohm`` = milliohm), or with a
  bare prefix ``k``, ``M``, ``G``. Case matters: ``M`` is mega, ``m`` is milli.
* Every value must be finite, and its magnitude at most 1e12 in SI units.
* Conversion is exact in decimal: ``'50 uA'`` is exactly ``5e-05``, the float
  nearest to the decimal number written, not ``4.9999999999999996e-05``.
"""

from __future__ import annotations

import functools
import math
import re
import threading
from decimal import Decimal, InvalidOperation, localcontext
from typing import Any

from planner.errors import PlannerError

__all__ = ["DIMENSIONS", "QuantityError", "example", "parse", "format_si"]


class QuantityError(PlannerError):
    """A value that is not a valid quantity of the dimension asked for.

    The project loader re-raises it as a :class:`planner.errors.ProjectError`
    with the file and line; the command line shows it as is (exit code 2).

    Attributes
    ----------
    message : str
        What is wrong and what to write instead.
    """

    def __init__(self, message: str):
        self.message = message
        super().__init__(message)


#: Largest magnitude accepted for any quantity, in SI units.
MAX_MAGNITUDE = 1e12

#: dimension -> (SI unit for conversion, phrase for messages, example, bare number ok)
_SPECS: dict[str, tuple[str, str, str, bool]] = {
    "current": ("A", "a current", "50 uA", False),
    "voltage": ("V", "a voltage", "2.5 V", False),
    "resistance": ("ohm", "a resistance", "2 kohm", False),
    "power": ("W", "a power", "0.25 W", False),
    "fraction": ("dimensionless", "a fraction", "0.5 %", True),
    "tempco": ("1/K", "a temperature coefficient", "50 ppm/K", False),
    "temperature": ("K", "a temperature", "23 degC", False),
    "time": ("s", "a time", "10 ms", False),
    "frequency": ("Hz", "a frequency", "50 Hz", False),
    "i2t": ("A^2*s", "an I^2 t", "0.5 A^2 s", False),
    "energy": ("J", "an energy", "2 J", False),
    "energy_ev": ("eV", "a band-gap energy", "1.11 eV", True),
    "length": ("m", "a length", "60 mm", False),
    "dimensionless": ("dimensionless", "a plain number", "1.5", True),
    "voltage_or_current": ("", "a voltage or a current", "230 V", False),
}

#: The dimensions :func:`parse` knows.
DIMENSIONS: tuple[str, ...] = tuple(_SPECS)

#: Dimensions whose magnitude is also checked against :data:`MAX_MAGNITUDE`
#: with an electrical wording.
_ELECTRICAL = frozenset({"current", "voltage", "resistance", "power", "i2t", "energy", "voltage_or_current"})

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$", re.S)
_NONFINITE = re.compile(r"^\s*[+-]?\.?(nan|inf|infinity)\b", re.I)
_MAX_TEXT = 80

_REGISTRY: Any = None
_LOCK = threading.Lock()
_NAMED_DIMS: list[tuple[str, Any]] = []


def example(dimension: str) -> str:
    """A typical value of ``dimension`` as written in a project file (for messages)."""
    return _SPECS[dimension][2]


def _ureg() -> Any:
    """The module's single pint UnitRegistry, created on first use."""
    global _REGISTRY
    if _REGISTRY is None:
        with _LOCK:
            if _REGISTRY is None:
                import pint

                reg = pint.UnitRegistry()
                named = [
                    ("a current", "A"),
                    ("a voltage", "V"),
                    ("a resistance", "ohm"),
                    ("a power", "W"),
                    ("a temperature", "K"),
                    ("a temperature coefficient", "1/K"),
                    ("a time", "s"),
                    ("an I^2 t", "A^2*s"),
                    ("an energy", "J"),
                    ("a frequency", "Hz"),
                    ("a length", "m"),
                    ("a capacitance", "F"),
                    ("an inductance", "H"),
                    ("a charge", "C"),
                    ("a conductance", "S"),
                    ("a mass", "kg"),
                    ("a pure number", "dimensionless"),
                ]
                _NAMED_DIMS[:] = [(p, reg.parse_units(u).dimensionality) for p, u in named]
                _REGISTRY = reg
    return _REGISTRY


@functools.lru_cache(maxsize=1024)
def _lookup(unit_text: str) -> Any:
    """pint Unit for a (normalised) unit text; raises what pint raises."""
    return _ureg().parse_units(unit_text)


@functools.lru_cache(maxsize=64)
def _dims(si: str) -> Any:
    return _ureg().parse_units(si).dimensionality


@functools.lru_cache(maxsize=1024)
def _factor(unit_text: str, si: str) -> Decimal:
    """Scale factor from a multiplicative unit to ``si``, rounded to 15 significant digits."""
    f = _ureg().Quantity(1.0, _lookup(unit_text)).to(si).magnitude
    return Decimal(f"{f:.15g}")


def _normalise_unit(unit: str, dimension: str) -> str:
    """Spellings pint does not know, rewritten to ones it does."""
    u = unit.strip()
    u = u.replace("Ω", "ohm").replace("Ω", "ohm")  # Greek capital omega and the ohm sign
    u = u.replace("µ", "u").replace("μ", "u")  # micro sign and Greek mu
    u = u.replace("°C", "degC").replace("°F", "degF").replace("²", "^2")
    u = re.sub(r"(?i)ohms?\b", "ohm", u)
    u = re.sub(r"\bA2s\b", "A^2*s", u)
    if u.startswith("/"):
        u = "1" + u
    if dimension == "resistance" and u in ("k", "M", "G", "T"):
        u = u + "ohm"
    return u


def _dimension_phrase(units: Any) -> str:
    dim = units.dimensionality
    for phrase, d in _NAMED_DIMS:
        if d == dim:
            return phrase
    return f"a quantity in {units}"


def _fail(text: str, where: str | None, message: str) -> QuantityError:
    prefix = f"{where}: " if where else ""
    return QuantityError(prefix + message)


def _to_float(d: Decimal, shown: str, unit_si: str, dimension: str, where: str | None) -> float:
    """Decimal -> float, refusing overflow, underflow and absurd magnitudes."""
    try:
        x = float(d)
    except (OverflowError, InvalidOperation):  # pragma: no cover - float(Decimal) saturates instead
        x = math.inf
    if not math.isfinite(x) or abs(x) > MAX_MAGNITUDE:
        if dimension in _ELECTRICAL:
            raise _fail(
                shown,
                where,
                f"'{shown}' is beyond the 1e12 {unit_si} any meter design could meet; "
                "check the exponent and the unit prefix",
            )
        raise _fail(shown, where, f"'{shown}' is beyond 1e12 in SI units; check the exponent")
    if d != 0 and (x == 0.0 or abs(x) < 2.2250738585072014e-308):
        raise _fail(shown, where, f"'{shown}' is too small to hold as a number; check the exponent")
    return x


def parse(value: Any, dimension: str, *, where: str | None = None) -> Any:
    """Convert a quantity written with units to a float in SI units.

    Parameters
    ----------
    value : str or int or float
        The text as written (``'50 uA'``, ``'2 kohm'``, ``'0.5 %'``) or a bare
        number where the dimension allows one.
    dimension : str
        One of :data:`DIMENSIONS`: ``current`` [A], ``voltage`` [V],
        ``resistance`` [ohm], ``power`` [W], ``fraction`` [1], ``tempco``
        [1/K], ``temperature`` [K], ``time`` [s], ``i2t`` [A^2 s],
        ``energy`` [J], ``energy_ev`` [eV], ``length`` [m], ``dimensionless`` [1], or
        ``voltage_or_current``.
    where : str, optional
        What the value is for (``'movement.coil_resistance'``), used in
        messages.

    Returns
    -------
    float or tuple of (str, float)
        The value in SI units; for ``voltage_or_current`` a pair
        ``('voltage', volts)`` or ``('current', amperes)``.

    Raises
    ------
    QuantityError
        For a missing or wrong unit, a wrong dimension, NaN, infinity or a
        magnitude beyond 1e12 in SI units.

    Notes
    -----
    The number and the unit's scale factor f to the SI unit are multiplied in
    decimal, x = float(Decimal(number) * Decimal(f)), so ``'50 uA'`` gives
    exactly the float nearest 5e-05. Offset temperature units are converted
    explicitly: T[K] = t[degC] + 273.15 and T[K] = (t[degF] + 459.67) * 5/9.
    """
    if dimension not in _SPECS:
        raise ValueError(f"unknown dimension {dimension!r}; one of {', '.join(DIMENSIONS)}")
    unit_si, need, example, bare_ok = _SPECS[dimension]

    # --- split into number text and unit text ---------------------------------------
    if isinstance(value, bool) or value is None:
        raise _fail(str(value), where, f"needs {need}, e.g. '{example}'")
    if isinstance(value, (int, float, Decimal)):
        if isinstance(value, float) and not math.isfinite(value):
            raise _fail(repr(value), where, f"'{value}' is not a finite number; give {need}, e.g. '{example}'")
        number_text, unit_text = (repr(value) if isinstance(value, float) else str(value)), ""
        shown = number_text
    elif isinstance(value, str):
        shown = " ".join(value.split())
        if len(shown) > _MAX_TEXT:
            raise _fail(shown[:_MAX_TEXT] + "...", where, f"the value is too long; give {need}, e.g. '{example}'")
        if not shown:
            raise _fail(shown, where, f"is empty; give {need}, e.g. '{example}'")
        if _NONFINITE.match(shown):
            raise _fail(shown, where, f"'{shown}' is not a finite number; give {need}, e.g. '{example}'")
        m = _NUMBER.match(value)
        if m is None:
            raise _fail(shown, where, f"'{shown}' does not start with a number; give {need}, e.g. '{example}'")
        number_text, unit_text = m.group(1), m.group(2)
        if re.match(r"^,\d", unit_text):
            raise _fail(shown, where, f"'{shown}': write the decimal point as '.', not ','")
        if re.match(r"^[kKMRmGu]\d", unit_text):
            raise _fail(shown, where, f"'{shown}': write the value with a point and a unit, e.g. '4.7 kohm' for '4k7'")
    else:
        raise _fail(str(value), where, f"needs {need}, e.g. '{example}', not a {type(value).__name__}")

    try:
        number = Decimal(number_text)
    except InvalidOperation:  # pragma: no cover - the regex only lets valid numbers through
        raise _fail(shown, where, f"'{shown}' is not a number; give {need}, e.g. '{example}'") from None

    # --- bare numbers ---------------------------------------------------------------------
    if not unit_text:
        if bare_ok:
            return _to_float(number, shown, "", dimension, where)
        if number == 0 and dimension not in ("temperature", "voltage_or_current"):
            return 0.0
        raise _fail(shown, where, f"'{shown}' has no unit; give a unit, e.g. '{example}'")
    if dimension == "dimensionless":
        raise _fail(shown, where, f"'{shown}' has a unit; give a plain number, e.g. '{example}'")

    # --- the unit -----------------------------------------------------------------------
    reg = _ureg()
    unit_norm = _normalise_unit(unit_text, dimension)
    if dimension == "resistance" and unit_norm == "m":
        raise _fail(shown, where, f"'{shown}': 'm' alone is ambiguous; write 'mohm' for milliohm or 'Mohm' for megohm")
    try:
        units = _lookup(unit_norm)
    except Exception:  # pint raises many types for text it cannot read
        raise _fail(
            shown,
            where,
            f"'{unit_text}' in '{shown}' is not a unit known here; give {need}, e.g. '{example}'"
            + _case_hint(reg, number_text, unit_norm, dimension),
        ) from None

    if dimension == "voltage_or_current":
        for kind, si in (("voltage", "V"), ("current", "A")):
            if units.dimensionality == _dims(si):
                x = _scale(number, unit_norm, si, shown, kind, where)
                return (kind, x)
        raise _wrong_dimension(reg, shown, units, where, need, example, number_text, unit_norm, dimension)

    if units.dimensionality != _dims(unit_si):
        raise _wrong_dimension(reg, shown, units, where, need, example, number_text, unit_norm, dimension)

    if dimension == "temperature":
        return _temperature(reg, number, units, shown, where)
    return _scale(number, unit_norm, unit_si, shown, dimension, where)


def _scale(number: Decimal, unit_text: str, unit_si: str, shown: str, dimension: str, where: str | None) -> float:
    with localcontext() as ctx:
        ctx.prec = 40
        d = number * _factor(unit_text, unit_si)
    return _to_float(d, shown, "" if unit_si == "dimensionless" else unit_si, dimension, where)


def _temperature(reg: Any, number: Decimal, units: Any, shown: str, where: str | None) -> float:
    name = str(units)
    if name.startswith("delta_") or "delta_" in name:
        raise _fail(shown, where, f"'{shown}' is a temperature difference; give a temperature, e.g. '23 degC'")
    with localcontext() as ctx:
        ctx.prec = 40
        if name == "degree_Celsius":
            d = number + Decimal("273.15")
        elif name == "degree_Fahrenheit":
            d = (number + Decimal("459.67")) * 5 / 9
        elif reg.Quantity(0.0, units).to("K").magnitude != 0.0:  # another offset unit
            d = Decimal(repr(float(reg.Quantity(float(number), units).to("K").magnitude)))
        else:
            d = number * Decimal(f"{reg.Quantity(1.0, units).to('K').magnitude:.15g}")
    x = _to_float(d, shown, "K", "temperature", where)
    if x < 0:
        raise _fail(shown, where, f"'{shown}' is below absolute zero; check the sign and the unit")
    return x


def _wrong_dimension(
    reg: Any,
    shown: str,
    units: Any,
    where: str | None,
    need: str,
    example: str,
    number_text: str,
    unit_norm: str,
    dimension: str,
) -> QuantityError:
    found = _dimension_phrase(units)
    target = where or "this value"
    msg = f"'{shown}' is {found}; {target} needs {need}, e.g. '{example}'"
    msg += _case_hint(reg, number_text, unit_norm, dimension)
    return QuantityError(msg)


def _case_hint(reg: Any, number_text: str, unit_norm: str, dimension: str) -> str:
    """Suggest a differently capitalised unit that has the wanted dimension."""
    if dimension == "voltage_or_current":
        targets = [reg.parse_units("V").dimensionality, reg.parse_units("A").dimensionality]
    elif dimension == "dimensionless":
        return ""
    else:
        targets = [reg.parse_units(_SPECS[dimension][0]).dimensionality]
    candidates = [
        unit_norm.lower(),
        unit_norm.upper(),
        unit_norm[:1].lower() + unit_norm[1:].upper(),
        unit_norm[:1] + unit_norm[1:].upper(),
        unit_norm[:1].lower() + unit_norm[1:],
        unit_norm[:1].upper() + unit_norm[1:],
        unit_norm[:-1] + unit_norm[-1:].upper(),
    ]
    for c in candidates:
        if c == unit_norm:
            continue
        try:
            u = reg.parse_units(c)
        except Exception:
            continue
        if u.dimensionality in targets:
            return f" (did you mean '{number_text} {c}'? unit names are case-sensitive: M is mega, m is milli)"
    return ""


# --- output ---------------------------------------------------------------------------

_PREFIXES = {-15: "f", -12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}


def format_si(value: float, unit: str, digits: int = 4) -> str:
    """Write a value in engineering notation with an SI prefix.

    Parameters
    ----------
    value : float
        The value in the SI unit ``unit``.
    unit : str
        The unit symbol (``'A'``, ``'V'``, ``'ohm'``, ``'W'``); ``''`` for none.
    digits : int
        Significant digits (trailing zeros kept: ``'1.000 V'``).

    Returns
    -------
    str
        For example ``'49.98 uA'``, ``'9.950 kohm'``, ``'-1.000 V'``, ``'0.000 V'``,
        ``'inf ohm'``, ``'nan A'``. Prefixes run from f (1e-15) to T (1e12); a
        value outside that range is written as ``'1.000e-18 A'``. The output uses
        the same spellings :func:`parse` reads (``u`` for micro, ``kohm``), so
        it can be pasted back into a project file.

    Notes
    -----
    The value is first rounded to ``digits`` significant digits, then the
    exponent e of the rounded value picks the prefix 10^(3 floor(e / 3)), so
    999.96 with 4 digits becomes ``'1.000 k...'``, never ``'1000 ...'``.
    """
    digits = int(digits)
    if digits < 1:
        raise ValueError("digits must be at least 1")
    sep = " " if unit else ""
    v = float(value)
    if math.isnan(v):
        return f"nan{sep}{unit}"
    if math.isinf(v):
        return f"{'-' if v < 0 else ''}inf{sep}{unit}"
    if v == 0.0:
        return f"{0.0:.{digits - 1}f}{sep}{unit}"
    mantissa, exp_text = f"{abs(v):.{digits - 1}e}".split("e")
    exp = int(exp_text)
    eng = 3 * math.floor(exp / 3)
    sign = "-" if v < 0 else ""
    if eng not in _PREFIXES:
        return f"{sign}{mantissa}e{exp:+03d}{sep}{unit}"
    shift = exp - eng
    decimals = max(0, digits - 1 - shift)
    scaled = Decimal(mantissa).scaleb(shift)
    return f"{sign}{scaled:.{decimals}f}{sep}{_PREFIXES[eng]}{unit}"
