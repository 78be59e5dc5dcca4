"""Resource caps and closed lists of the project file.

The caps keep a hostile or mistaken file from running the planner out of memory
or time; each is refused with a message saying what to do (``docs/project-file.md``,
"Limits").
"""

from __future__ import annotations

from ..parts.resistor import E_SERIES  # noqa: F401  (the series a resistor may name, re-exported)

#: Largest project file accepted [bytes] (5 MB).
MAX_FILE_BYTES = 5_000_000
#: Largest number of values (scalars, lists, mappings) after alias expansion.
MAX_NODES = 200_000
#: Deepest nesting of lists and mappings.
MAX_DEPTH = 64
#: Most switch positions (network positions, and voltage or current ranges each).
MAX_POSITIONS = 64
#: Most elements of an explicit network (the solver's matrices grow with its square).
MAX_ELEMENTS = 256
#: Most fault sources.
MAX_SOURCES = 64
#: Most Monte Carlo builds (``analysis.samples``).
MAX_SAMPLES = 200_000
#: Largest Monte Carlo seed (``analysis.seed``): numpy's generators take any
#: non-negative integer; the planner keeps it to 63 bits so it fits every JSON reader.
MAX_SEED = 2**63 - 1

#: Accuracy class indices of IEC 60051-1:2016 (Direct acting indicating analogue
#: electrical measuring instruments), clause 5.1 (from memory).
IEC_CLASSES = (0.05, 0.1, 0.2, 0.3, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 5.0)


def too_big(n: int) -> str:
    """The message for a file of ``n`` bytes over :data:`MAX_FILE_BYTES`."""
    return f"file is {n / 1e6:.1f} MB; a project file is at most {MAX_FILE_BYTES / 1e6:g} MB"
