"""planner: plans the analog front end of multi-range moving-coil instruments.

The library API mirrors the command line: load a project with
:func:`planner.project.load`, then size, check, stress and document it.
"""

__version__ = "0.1.0"
