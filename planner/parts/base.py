"""What every kind of network element provides.

A part kind is one file of this package: a frozen dataclass holding the element
(its designator, nodes and values in SI floats) that mixes in :class:`Part`, and,
where the kind has catalogue models (diodes, fuses), the model's dataclass. Code
elsewhere asks the element what it needs (how the solver sees it, its resistance
at a temperature, its toleranced quantities, its project-file line, its row in
the reports) instead of switching on its type.

How the solver sees an element (:attr:`Part.stamp`):

``branch``
    a linear branch: a resistance at temperature (:meth:`Part.resistance`);
``junction``
    a diode port of the nonlinear solver (:meth:`Part.junction`);
``switch``
    a contact: a branch of its contact resistance in the states that close it,
    its nodes merged when that resistance is zero, absent otherwise.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np


@dataclass(frozen=True)
class Parameter:
    """One toleranced quantity of a network.

    Attributes
    ----------
    key : str
        Key of :meth:`planner.engine.Engine.operate` ``factors`` (a designator, or
        ``"i_fs"``).
    label : str
        What people read: the designator, ``"M1 coil"`` or ``"I_fs"``.
    kind : str
        ``resistor``, ``coil``, ``i_fs`` or ``diode``.
    element : str or None
        The designator whose presence in a switch state makes it matter (None:
        always matters).
    tolerance : float
        Relative half-width of the spread (fraction).
    distribution : str
        ``uniform`` or ``normal`` (tolerance = 3 sigma).
    """

    key: str
    label: str
    kind: str
    element: str | None
    tolerance: float
    distribution: str = "uniform"

    def extremes(self) -> tuple[float, float]:
        """Low and high factor of the nominal value at the tolerance extremes."""
        return (max(1.0 - self.tolerance, 1e-6), 1.0 + self.tolerance)


class Part:
    """Mixin of every network element dataclass: the questions other code asks a part.

    Subclasses are frozen dataclasses with at least ``name`` and ``line`` fields
    and set the class attributes below.
    """

    #: The ``kind`` of the project file's network element.
    kind: ClassVar[str] = ""
    #: How the solver sees it: ``branch``, ``junction`` or ``switch``.
    stamp: ClassVar[str] = "branch"
    #: Name of the schematic symbol the dossier draws for it.
    symbol: ClassVar[str] = ""
    #: True for a clamp part (taken out for the unclamped protection curve).
    clamp: ClassVar[bool] = False
    #: True when the part carries power ratings judged in the misrange analysis.
    rated: ClassVar[bool] = True

    @property
    def nodes(self) -> tuple[str, str]:
        """The two nodes the element joins, in its own order."""
        return (self.a, self.b)  # type: ignore[attr-defined]

    # --- the switch ------------------------------------------------------------
    def present(self, closed: frozenset) -> bool:
        """Whether the element is in circuit in a switch state with these contacts closed."""
        return True

    def merges(self, closed: frozenset) -> bool:
        """Whether the element joins its two nodes into one (an ideal closed contact)."""
        return False

    # --- the solver ------------------------------------------------------------
    def resistance(self, spec, dt_k) -> np.ndarray:
        """Resistance of a ``branch`` element at ``dt_k`` from the reference temperature [ohm].

        Parameters
        ----------
        spec : Spec
            The project (catalogue models, the movement).
        dt_k : ndarray, shape (P, 1)
            Temperature minus the reference temperature [K].
        """
        raise NotImplementedError(f"{self.kind} has no linear resistance")

    def junction(self, spec, t_k):
        """Junction parameters of a ``junction`` element at ``t_k`` (see :mod:`planner.parts.diode`)."""
        raise NotImplementedError(f"{self.kind} is no junction")

    # --- tolerances and reports -----------------------------------------------
    def parameters(self, spec) -> list[Parameter]:
        """Its toleranced quantities (none by default)."""
        return []

    def part_row(self, spec) -> dict | None:
        """Its row in the ``parts[]`` of ``planner check --json`` (None: not listed)."""
        return None

    def yaml(self) -> str:
        """The element as a project-file flow mapping (see :mod:`planner.writer`)."""
        raise NotImplementedError(f"no project-file form for element kind {self.kind!r}")
