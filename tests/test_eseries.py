"""Checks of planner.eseries against the PyPI package ``eseries`` and IEC 60063 facts.

The package ``eseries`` is an independent implementation of the IEC 60063 tables
(PyPI ``eseries``, tables E3 to E192); every table here must equal
its table, value for value.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from planner import eseries as es

ref = pytest.importorskip("eseries")

KEYS = {
    "E3": ref.E3,
    "E6": ref.E6,
    "E12": ref.E12,
    "E24": ref.E24,
    "E48": ref.E48,
    "E96": ref.E96,
    "E192": ref.E192,
}


@pytest.mark.parametrize("name", list(KEYS))
def test_table_equals_reference_package(name):
    # Reference: PyPI package `eseries`, eseries.series(key) gives the integer mantissas
    # of one decade (E24: 10, 11, ...; E192: 100, 101, ...).
    theirs = [float(v) for v in ref.series(KEYS[name])]
    scale = 10.0 ** (len(str(int(theirs[0]))) - 1)
    ours = es.mantissas(name)
    assert len(ours) == len(theirs)
    # tolerance: the same decimal values, so only float rounding of the scaling (1e-12)
    np.testing.assert_allclose(np.array(ours), np.array(theirs) / scale, rtol=1e-12)


@pytest.mark.parametrize("name", list(KEYS))
def test_decade_spanning_values_equal_reference_erange(name):
    # Reference: PyPI package `eseries`, erange(key, lo, hi) lists values across decades.
    lo, hi = 0.01, 1.0e7
    theirs = list(ref.erange(KEYS[name], lo, hi))
    ours = es.values_in(name, lo, hi)
    assert len(ours) == len(theirs)
    # tolerance: both are the decimal values as floats; the package rounds to 6 figures
    np.testing.assert_allclose(ours, theirs, rtol=1e-12)


def test_historic_e24_values_and_e192_920():
    # IEC 60063:2015 tables: E24 keeps 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2
    # where round(10**(i/24), 1) gives 2.6 2.9 3.2 3.5 3.8 4.2 4.6 8.3; E192 has 9.20.
    e24 = es.mantissas("E24")
    for v in (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2):
        assert v in e24
    for v in (2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6, 8.3):
        assert v not in e24
    assert 9.20 in es.mantissas("E192")
    assert 9.19 not in es.mantissas("E192")
    # E12, E6, E3 inherit the historic values: each is every 2nd value of the next finer one
    assert es.mantissas("E12") == es.mantissas("E24")[::2]
    assert es.mantissas("E6") == es.mantissas("E12")[::2]
    assert es.mantissas("E3") == es.mantissas("E6")[::2]
    assert es.mantissas("E96") == es.mantissas("E192")[::2]
    assert es.mantissas("E48") == es.mantissas("E96")[::2]


def test_documented_examples_of_reference_package():
    # Documented examples of the PyPI package `eseries`: nearest E24 to 319 is 330;
    # the smallest E96 value >= 184 is 187.
    assert es.nearest("E24", 319) == 330.0
    assert es.at_or_above("E96", 184) == 187.0
    assert ref.find_nearest(ref.E24, 319) == 330.0
    assert ref.find_greater_than_or_equal(ref.E96, 184) == 187.0


@pytest.mark.parametrize("name", list(KEYS))
def test_nearest_agrees_with_reference_across_decades(name):
    # Reference: eseries.find_nearest (least absolute difference, like ours).
    rng = np.random.default_rng(7)
    xs = 10.0 ** rng.uniform(-1.5, 7.5, 400)
    for x in xs:
        ours = es.nearest(name, float(x))
        theirs = ref.find_nearest(KEYS[name], float(x))
        # tolerance: the package rounds its values to 6 significant figures
        np.testing.assert_allclose(ours, theirs, rtol=1e-9)
        assert es.at_or_below(name, float(x)) <= x <= es.at_or_above(name, float(x))


def test_values_and_membership():
    assert es.values_in("E12", 900.0, 1500.0) == [1000.0, 1200.0, 1500.0]
    assert es.values_in("E3", 0.5, 0.9) == []
    # the float nearest the decimal value, so 4.7e5 read from a file equals the table value
    assert 4.7e5 in es.values_in("E24", 1e5, 1e6)
    assert es.is_member("E96", 0.0105)
    assert not es.is_member("E96", 0.0104)
    assert es.nearest("E96", 9.9e-3) == 0.01  # decade boundary crossed upward
    assert es.nearest("E6", 8.5) == 10.0  # 8.5 is nearer 10 than 6.8
    assert es.nearest("e24", 1.0) == 1.0  # names are case-insensitive
    assert math.isclose(es.nearest("E192", 9.195), 9.2)


def test_unknown_series_and_bad_numbers():
    with pytest.raises(ValueError, match="E24"):
        es.mantissas("E20")
    with pytest.raises(ValueError):
        es.nearest("E24", 0.0)
    with pytest.raises(ValueError):
        es.nearest("E24", float("nan"))
    with pytest.raises(ValueError):
        es.values_in("E24", 10.0, 1.0)
