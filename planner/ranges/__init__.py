"""Range kinds: one file per kind of switch position (what it measures).

:data:`KINDS` maps a position's ``measures`` to its :class:`RangeKind`;
:func:`of` looks one up. To add a kind, add a file here and register it below
(see the contributor guide, ``DEVELOPERS.md``).
"""

from .ac_current import ACCurrent
from .ac_voltage import ACVoltage
from .base import RangeKind
from .dc_current import DCCurrent
from .dc_voltage import DCVoltage
from .resistance import Resistance

#: Range kinds by a position's ``measures``.
KINDS = {k.measures: k for k in (DCVoltage(), DCCurrent(), ACVoltage(), ACCurrent(), Resistance())}


def of(measures: str) -> RangeKind:
    """The range kind of a position's ``measures`` (``voltage``, ``current``, ``ac_voltage``, ``ac_current``,
    ``resistance``)."""
    try:
        return KINDS[measures]
    except KeyError:
        raise ValueError(f"no range kind measures {measures!r}; known: {', '.join(KINDS)}") from None


__all__ = ["RangeKind", "KINDS", "of", "DCVoltage", "DCCurrent", "ACVoltage", "ACCurrent", "Resistance"]
