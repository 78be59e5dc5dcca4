"""Names, bounds and formatting of the diode-fit parameters (shared by the fit and its report)."""

from __future__ import annotations

import re

from ..model import ZERO_CELSIUS_K
from ..units import format_si


#: Band gap held when it cannot be fitted [eV] (contract default, silicon).
DEFAULT_EG_EV = 1.11
#: XTI held when it cannot be fitted (contract default, pn junction).
DEFAULT_XTI = 3.0

#: Columns a points file may have, in the units their names give.
COLUMNS = ("voltage_v", "current_a", "temperature_c")
#: Largest points file accepted [bytes] (5 MB, as for a project file).
MAX_POINTS_BYTES = 5_000_000
#: Largest |voltage| of a measured point [V]: 10 kV covers the reverse test of a
#: high-voltage rectifier stack; more is a typing error (a unit or an exponent).
MAX_VOLTAGE_V = 10e3
#: Smallest nonzero |voltage| of a measured point [V]: 1 nV, below what a bench meter
#: resolves (common practice: a 6 1/2 digit meter resolves about 100 nV); 0 is allowed
#: (such points are left out of the fit).
MIN_VOLTAGE_V = 1e-9
#: Largest |current| of a measured point [A]: 1 kA covers a stud rectifier's surge.
MAX_CURRENT_A = 1e3
#: Smallest nonzero |current| of a measured point [A]: 1e-18 A (an aA), below what any
#: electrometer resolves (from memory: about 1e-16 A for the best); 0 means "below
#: the meter's resolution" and is allowed.
MIN_CURRENT_A = 1e-18
#: Temperature range of a measurement [degC]: above absolute zero, at most 500 degC
#: (no junction works there; a larger number is a unit or typing error).
MAX_TEMPERATURE_C = 500.0

#: Order of the internal parameter vector.
_KEYS = (
    "saturation_current_a",
    "emission",
    "series_resistance_ohm",
    "leakage_resistance_ohm",
    "band_gap_ev",
    "xti",
)
#: Parameters carried as natural logarithms in the fit.
_LOG = (True, True, True, True, False, False)
#: Search bounds in the units of ``_KEYS`` (wide; a parameter that ends on one of
#: them is reported as not determined by the data).
_LOWER = (1e-30, 0.3, 1e-6, 1.0, 0.1, -20.0)
_UPPER = (1.0, 10.0, 1e6, 1e12, 3.0, 20.0)

#: YAML keys of the project file (parts.diodes) for the fitted quantities.
_YAML_KEYS = {
    "saturation_current_a": "saturation_current",
    "emission": "emission",
    "series_resistance_ohm": "series_resistance",
    "leakage_resistance_ohm": "leakage_resistance",
    "band_gap_ev": "band_gap",
    "xti": "xti",
}

_LABELS = {
    "saturation_current_a": "saturation current",
    "emission": "emission coefficient",
    "series_resistance_ohm": "series resistance",
    "leakage_resistance_ohm": "leakage resistance",
    "band_gap_ev": "band gap",
    "xti": "XTI",
}

_NAME_RE = re.compile(r"^[A-Za-z_][A-Za-z0-9_.-]*$")



def _fmt(key: str, value: float, digits: int = 5) -> str:
    if key == "saturation_current_a":
        return format_si(value, "A", digits)
    if key in ("series_resistance_ohm", "leakage_resistance_ohm"):
        return format_si(value, "ohm", digits)
    if key == "band_gap_ev":
        return f"{value:.{digits}g} eV"
    return f"{value:.{digits}g}"


def _celsius(t_k: float) -> str:
    text = f"{t_k - ZERO_CELSIUS_K:.2f}".rstrip("0").rstrip(".")
    return f"{'0' if text in ('-0', '') else text} degC"
