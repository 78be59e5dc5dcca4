"""The sections of the sizer's request, one file each, in designator order.

Each is a :class:`planner.sizing.layout.SizingSection`: it validates its part of
the request, declares what the others build on, and adds its segments,
positions, contacts and devices to the :class:`planner.sizing.layout.Layout`.

- ``dc_voltage.py``: ``voltage`` ranges (multiplier chain or separate multipliers,
  split at the clamp taps);
- ``dc_current.py``: ``current`` ranges (Ayrton ring or separate shunts, swamp);
- ``ac_voltage.py``, ``ac_current.py``: ``ac_voltage`` and ``ac_current`` ranges (multipliers
  or shunts solved through the nonlinear solver, each section's rectifier: ``rectifier.py``);
- ``clamp_diodes.py``: ``clamps`` (taps, diode stacks);
- ``input_fuse.py``: ``current.fuse`` (the fuse ahead of the current positions);
- ``resistance.py``: ``resistance`` ohms ranges (battery, series resistors, range
  shunts, zero adjuster).
- ``protection.py``: ``protection`` (input PTC, fusible input resistor, ring crowbar, mA fuse).

To size a new kind of range or a new protection part, add a file here with a
``SizingSection`` subclass and put an instance in :data:`SECTIONS`: its place in the
tuple is its place in the designator and switch order (see ``DEVELOPERS.md``).
"""

from .ac_current import ACCurrentSizing
from .ac_voltage import ACVoltageSizing
from .clamp_diodes import ClampDiodesSizing
from .dc_current import DCCurrentSizing
from .dc_voltage import DCVoltageSizing
from .input_fuse import InputFuseSizing
from .protection import ProtectionSizing
from .resistance import ResistanceSizing

#: The registered sections, in designator order: resistors (R), diodes (D), fuses (F),
#: positions and contacts (S) follow this order within their kind.
SECTIONS = (DCVoltageSizing(), DCCurrentSizing(), ACVoltageSizing(), ACCurrentSizing(), ClampDiodesSizing(),
            InputFuseSizing(), ResistanceSizing(), ProtectionSizing())

__all__ = ["SECTIONS", "DCVoltageSizing", "DCCurrentSizing", "ACVoltageSizing", "ACCurrentSizing", "ClampDiodesSizing",
           "InputFuseSizing", "ResistanceSizing", "ProtectionSizing"]
