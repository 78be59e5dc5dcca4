"""Tests of planner.units: quantity parsing with dimension checks, and SI formatting."""

from __future__ import annotations

import math
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner import units
from planner.errors import PlannerError
from planner.units import QuantityError, format_si, parse

# --- exact conversions ------------------------------------------------------------------

# Each expected value is the float nearest the decimal SI value, so == is the right test:
# the SI prefixes are exact powers of ten (SI Brochure, 9th ed., table 7).
EXACT = [
    ("50 uA", "current", 50e-6),
    ("50uA", "current", 50e-6),
    ("50 µA", "current", 50e-6),  # micro sign U+00B5
    ("50 μA", "current", 50e-6),  # Greek mu U+03BC
    ("100 mA", "current", 0.1),
    ("1.5 kA", "current", 1500.0),
    ("-2 A", "current", -2.0),
    ("2.5 V", "voltage", 2.5),
    ("0.1 mV", "voltage", 1e-4),
    ("1e3 V", "voltage", 1000.0),
    ("2 kohm", "resistance", 2000.0),
    ("2 k", "resistance", 2000.0),
    ("2 kΩ", "resistance", 2000.0),
    ("9.8 kohm", "resistance", 9800.0),
    ("10 ohm", "resistance", 10.0),
    ("10 Ohm", "resistance", 10.0),
    ("10 ohms", "resistance", 10.0),
    ("10 Ω", "resistance", 10.0),
    ("3 Mohm", "resistance", 3e6),
    ("3 M", "resistance", 3e6),
    ("3 MΩ", "resistance", 3e6),
    ("3 mohm", "resistance", 3e-3),  # m is milli: milliohm
    ("3 mΩ", "resistance", 3e-3),
    ("1 Gohm", "resistance", 1e9),
    ("43.04 mohm", "resistance", 0.04304),
    ("0.25 W", "power", 0.25),
    ("300 uW", "power", 3e-4),
    ("0.5 %", "fraction", 0.005),
    ("0.005", "fraction", 0.005),
    ("5000 ppm", "fraction", 0.005),
    ("50 ppm/K", "tempco", 5e-5),
    ("0.00393 /K", "tempco", 0.00393),
    ("0.00393 1/K", "tempco", 0.00393),
    ("3930 ppm/K", "tempco", 0.00393),
    ("-20 ppm/K", "tempco", -2e-5),
    # a degree Celsius equals a kelvin as an interval (SI Brochure, 9th ed., 2.3.1)
    ("50 ppm/degC", "tempco", 5e-5),
    ("50 ppm/°C", "tempco", 5e-5),
    ("10 ms", "time", 0.01),
    ("2 min", "time", 120.0),
    ("0.5 A^2 s", "i2t", 0.5),
    ("0.5 A2s", "i2t", 0.5),
    ("0.5 A²s", "i2t", 0.5),
    ("1.11 eV", "energy_ev", 1.11),
    ("690 meV", "energy_ev", 0.69),
    ("1.11", "energy_ev", 1.11),
    (1.11, "energy_ev", 1.11),
    ("1.5", "dimensionless", 1.5),
    (10, "dimensionless", 10.0),
    ("0", "resistance", 0.0),  # a bare zero is zero in every unit
    ("0", "current", 0.0),
]


@pytest.mark.parametrize("text, dim, expected", EXACT)
def test_exact_conversion(text, dim, expected):
    assert parse(text, dim) == expected


def test_micro_is_not_off_by_one_ulp():
    # The naive float route gives 50 * 1e-6 == 4.9999999999999996e-05.
    assert 50 * 1e-6 != 5e-05
    assert parse("50 uA", "current") == 5e-05


# T/K = t/degC + 273.15 and T/K = (t/degF + 459.67) * 5/9: exact definitions
# (SI Brochure, 9th ed., 2.3.1; NIST SP 811, B.9).
@pytest.mark.parametrize(
    "text, expected",
    [
        ("23 degC", 296.15),
        ("23 °C", 296.15),
        ("296.15 K", 296.15),
        ("73.4 degF", 296.15),
        ("-40 degC", 233.15),
        ("-40 degF", 233.15),
        ("0 K", 0.0),
        ("300 K", 300.0),
    ],
)
def test_temperature(text, expected):
    assert parse(text, "temperature") == expected


def test_temperature_below_absolute_zero():
    with pytest.raises(QuantityError, match="below absolute zero"):
        parse("-300 degC", "temperature")


def test_temperature_difference_is_not_a_temperature():
    with pytest.raises(QuantityError, match="temperature difference"):
        parse("23 delta_degC", "temperature")


def test_bare_temperature_needs_a_unit():
    # 0 K and 0 degC differ, so not even a bare zero is accepted.
    for text in ("23", "0"):
        with pytest.raises(QuantityError, match="give a unit"):
            parse(text, "temperature")


def test_voltage_or_current():
    assert parse("230 V", "voltage_or_current") == ("voltage", 230.0)
    assert parse("10 mA", "voltage_or_current") == ("current", 0.01)
    with pytest.raises(QuantityError, match="is a resistance; fault.x needs a voltage or a current"):
        parse("10 ohm", "voltage_or_current", where="fault.x")
    with pytest.raises(QuantityError, match="give a unit"):
        parse("0", "voltage_or_current")


# --- refusals ------------------------------------------------------------------------------


def test_wrong_dimension_message():
    with pytest.raises(QuantityError) as ei:
        parse("50 uA", "resistance", where="movement.coil_resistance")
    assert ei.value.message == ("'50 uA' is a current; movement.coil_resistance needs a resistance, e.g. '2 kohm'")


@pytest.mark.parametrize(
    "text, dim",
    [
        ("2000", "resistance"),
        ("5", "current"),
        ("10", "voltage"),
        ("0.25", "power"),
        ("50", "tempco"),
        ("10", "time"),
        ("0.5", "i2t"),
    ],
)
def test_bare_number_needs_unit(text, dim):
    with pytest.raises(QuantityError, match="give a unit, e.g."):
        parse(text, dim, where="x")


def test_coil_without_unit_message():
    with pytest.raises(QuantityError, match=r"give a unit, e\.g\. '2 kohm'"):
        parse("2000", "resistance", where="movement.coil_resistance")


def test_dimensionless_refuses_units():
    with pytest.raises(QuantityError, match="give a plain number"):
        parse("1.5 %", "dimensionless")


def test_bare_ppm_is_not_a_tempco():
    with pytest.raises(QuantityError, match="is a pure number; x needs a temperature coefficient"):
        parse("50 ppm", "tempco", where="x")


@pytest.mark.parametrize("text", ["nan V", "NaN", ".nan", "inf V", "-inf V", ".inf", "Infinity V"])
def test_non_finite_refused(text):
    with pytest.raises(QuantityError, match="not a finite number"):
        parse(text, "voltage")


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf])
def test_non_finite_float_refused(value):
    with pytest.raises(QuantityError, match="not a finite number"):
        parse(value, "dimensionless")


def test_absurd_magnitudes_refused():
    with pytest.raises(QuantityError, match="beyond the 1e12 V"):
        parse("1e300 V", "voltage")
    with pytest.raises(QuantityError, match="beyond the 1e12 ohm"):
        parse("2 Tohm", "resistance")
    with pytest.raises(QuantityError, match="beyond the 1e12 A"):
        parse("1e400 A", "current")  # overflows a float
    with pytest.raises(QuantityError, match="beyond 1e12"):
        parse("1e300", "fraction")
    assert parse("1 Tohm", "resistance") == 1e12  # the limit itself is accepted


def test_underflow_refused():
    with pytest.raises(QuantityError, match="too small"):
        parse("1e-400 A", "current")


def test_m_alone_is_ambiguous_for_resistance():
    with pytest.raises(QuantityError, match="'mohm' for milliohm or 'Mohm' for megohm"):
        parse("3 m", "resistance")


@pytest.mark.parametrize(
    "text, dim, hint",
    [
        ("50 ua", "current", "did you mean '50 uA'"),  # pint reads 'ua' as micro-year
        ("10 v", "voltage", "did you mean '10 V'"),
        ("2 Kohm", "resistance", "did you mean '2 kohm'"),
    ],
)
def test_case_hints(text, dim, hint):
    with pytest.raises(QuantityError, match=hint):
        parse(text, dim)


@pytest.mark.parametrize(
    "value, pattern",
    [
        ("", "is empty"),
        ("   ", "is empty"),
        ("V", "does not start with a number"),
        ("4k7", "'4.7 kohm'"),
        ("1,5 V", "decimal point"),
        ("2 furlongs", "is a length"),
        ("2 blorps", "not a unit known here"),
        ("2 kohm)", "not a unit known here"),
        ("5 kg", "is a mass"),
        ("x" * 200, "too long"),
        (True, "needs a resistance"),
        (None, "needs a resistance"),
        ([1], "not a list"),
    ],
)
def test_malformed(value, pattern):
    with pytest.raises(QuantityError, match=pattern):
        parse(value, "resistance")


def test_unknown_dimension_is_a_programming_error():
    with pytest.raises(ValueError, match="unknown dimension"):
        parse("1 V", "volts")


def test_quantity_error_is_a_planner_error():
    # so the command line turns it into exit code 2 without a traceback
    assert issubclass(QuantityError, PlannerError)
    assert QuantityError("x").exit_code == 2


def test_example_for_every_dimension_parses():
    for dim in units.DIMENSIONS:
        parse(units.example(dim), dim)


# --- registry -----------------------------------------------------------------------------


def test_import_does_not_load_pint():
    code = "import sys, planner.units; print('pint' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_one_registry():
    assert units._ureg() is units._ureg()


# --- formatting ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "value, unit, digits, expected",
    [
        (49.98e-6, "A", 4, "49.98 uA"),
        (9950.0, "ohm", 3, "9.95 kohm"),
        (9950.0, "ohm", 4, "9.950 kohm"),
        (1.0, "V", 4, "1.000 V"),
        (0.0, "V", 4, "0.000 V"),
        (-0.0012345, "A", 4, "-1.234 mA"),  # 1.2345 is stored just below, so it rounds down
        (999.96, "V", 4, "1.000 kV"),  # rounding carries into the next prefix
        (999.94, "V", 4, "999.9 V"),
        (0.1, "ohm", 4, "100.0 mohm"),
        (2.2e9, "ohm", 2, "2.2 Gohm"),
        (1e12, "ohm", 4, "1.000 Tohm"),
        (4.3e-15, "A", 2, "4.3 fA"),
        (1e-18, "A", 4, "1.000e-18 A"),
        (1e15, "ohm", 4, "1.000e+15 ohm"),
        (12.5, "", 3, "12.5"),
        (math.inf, "ohm", 4, "inf ohm"),
        (-math.inf, "V", 4, "-inf V"),
        (math.nan, "A", 4, "nan A"),
        (5e-5, "A", 1, "50 uA"),
        (123456.0, "ohm", 1, "100 kohm"),
    ],
)
def test_format_si(value, unit, digits, expected):
    assert format_si(value, unit, digits) == expected


def test_format_si_digits_checked():
    with pytest.raises(ValueError):
        format_si(1.0, "V", 0)


@settings(max_examples=200, deadline=None, derandomize=True)
@given(st.floats(min_value=1e-3, max_value=1e11, allow_nan=False, allow_infinity=False))
def test_format_then_parse_round_trip(r):
    # format_si writes the spellings parse reads; 6 significant digits leave a
    # relative error below 5e-6 (half a unit in the sixth digit).
    back = parse(format_si(r, "ohm", 6), "resistance")
    np.testing.assert_allclose(back, r, rtol=5e-6)
