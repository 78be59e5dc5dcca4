"""Part kinds: one file per kind of network element (and its catalogue model).

Each kind is a frozen dataclass mixing in :class:`Part` (see :mod:`.base` for the
questions every part answers). :data:`KINDS` maps the project file's ``kind`` to
the class. To add a kind, add a file here and register its class below (see the
contributor guide, ``DEVELOPERS.md``).
"""

from .base import Parameter, Part
from .battery import Battery
from .contact import Contact
from .diode import Diode, DiodeModel
from .fuse import Fuse, FuseModel
from .movement import MovementElement
from .ptc import Ptc, PtcModel
from .resistor import Resistor, ResistorParts
from .rheostat import Rheostat
from .varistor import Varistor, VaristorModel

#: Element classes by the project file's ``kind``.
KINDS = {cls.kind: cls for cls in (Resistor, MovementElement, Diode, Contact, Fuse, Battery, Rheostat, Ptc,
                                   Varistor)}

__all__ = ["Part", "Parameter", "KINDS", "Resistor", "ResistorParts", "MovementElement", "Diode", "DiodeModel",
           "Contact", "Fuse", "FuseModel", "Battery", "Rheostat", "Ptc", "PtcModel", "Varistor", "VaristorModel"]
