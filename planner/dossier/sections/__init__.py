"""The dossier's sections: each builder takes the :class:`Context` and returns flowables.

A builder only arranges what the analyses found (the sizing, the accuracy check
with the arrays it keeps, the misrange faults); it solves nothing and builds no
engine. When an analysis raised, its section prints the error text instead of
its tables; a builder itself is not allowed to fail quietly.

One module per section: :mod:`.front` (cover, contents, cautions),
:mod:`.summary`, :mod:`.circuit` (the schematic section), :mod:`.bom`,
:mod:`.positions`, :mod:`.misrange`, :mod:`.build` (build and acceptance) and
:mod:`.methods` (methods and the appendix); :mod:`.context` holds what they read
and :mod:`.common` the helpers they share.
"""

from .bom import bom, bom_rows
from .build import build
from .circuit import schematic
from .context import VERDICT_ORDER, Context
from .front import cautions, contents, cover
from .methods import appendix, methods
from .misrange import misrange
from .positions import positions
from .summary import summary

__all__ = ["Context", "SECTIONS", "cover", "contents", "cautions", "summary", "schematic", "bom",
           "positions", "misrange", "build", "methods", "appendix", "bom_rows", "VERDICT_ORDER"]

#: Section builders in order (names of this package's functions; looked up at build time, so a
#: builder replaced on the package is the one used).
SECTIONS = ("cover", "contents", "cautions", "summary", "schematic", "bom", "positions", "misrange", "build",
            "methods", "appendix")
