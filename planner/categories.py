"""Measurement categories (IEC 61010-1, IEC 61010-2-030): the rated impulse and its test source impedance.

Kept apart from the misrange matrix (:mod:`planner.faults`) because the sizer rates
the multiplier's parts for the declared category's impulse too
(:mod:`planner.sizing.ratings`).
"""

from __future__ import annotations

import re

from .errors import ProjectError
from .units import QuantityError, parse

#: Rated impulse voltages [V peak] by line-to-neutral voltage and category
#: (CAT II, CAT III, CAT IV). IEC 61010-1 / IEC 61010-2-030 as quoted in
#: secondary sources: verify against the standard before relying on them.
IMPULSE_TABLE_V = {
    150.0: (1500.0, 2500.0, 4000.0),
    300.0: (2500.0, 4000.0, 6000.0),
    600.0: (4000.0, 6000.0, 8000.0),
    1000.0: (6000.0, 8000.0, 12000.0),
}
#: Test source impedance of the impulse [ohm] by category (secondary source, verify).
IMPULSE_SOURCE_OHM = {"II": 12.0, "III": 2.0, "IV": 2.0}
_CATS = ("II", "III", "IV")

def category_impulse(category: str) -> tuple[float, float, str]:
    """Rated impulse voltage and test source impedance of a measurement category.

    Parameters
    ----------
    category : str
        ``'CAT II 300 V'``, ``'CAT III 600 V'``, ... (any voltage up to 1000 V: the
        next higher tabulated line-to-neutral voltage applies).

    Returns
    -------
    peak_v : float
        Rated impulse voltage [V].
    r_source_ohm : float
        Test source impedance [ohm].
    label : str
        The category as used for the column name.

    Raises
    ------
    ProjectError
        An unknown category or a voltage above 1000 V.

    References
    ----------
    IEC 61010-1:2010 and IEC 61010-2-030:2017, rated impulse voltages by
    measurement category, as quoted in secondary sources (manufacturers'
    application notes): 150 V: 1500/2500/4000 V, 300 V: 2500/4000/6000 V, 600 V:
    4000/6000/8000 V, 1000 V: 6000/8000/12000 V for CAT II/III/IV; test source
    impedance 12 ohm (CAT II), 2 ohm (CAT III, IV). Secondary source: verify.
    """
    text = " ".join(str(category).split())
    m = re.fullmatch(r"(?i)CAT\s*(II|III|IV)\s+(.+)", text)
    if m is None:
        raise ProjectError(f"faults.category is '{text}'; write the measurement category and its voltage, "
                           "e.g. 'CAT II 300 V' (CAT II, CAT III or CAT IV)")
    cat = m.group(1).upper()
    try:
        v = float(parse(m.group(2), "voltage", where="faults.category"))
    except QuantityError as e:
        raise ProjectError(e.message) from None
    rows = [k for k in sorted(IMPULSE_TABLE_V) if k >= v * (1.0 - 1e-12)]
    if not rows or v <= 0:
        raise ProjectError(f"faults.category '{text}': the impulse table covers line-to-neutral voltages up to "
                           "1000 V; give 150 V, 300 V, 600 V or 1000 V")
    row = rows[0]
    return IMPULSE_TABLE_V[row][_CATS.index(cat)], IMPULSE_SOURCE_OHM[cat], f"CAT {cat} {row:g} V"


