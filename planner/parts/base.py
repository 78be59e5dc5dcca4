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

How the misrange analysis judges it (:mod:`planner.stress`): :meth:`Part.checks`
returns its stress entries under one solved stimulus, :meth:`Part.trip` says
whether a protective part opens (and what that asks of it), :meth:`Part.opened`
gives the element that stands in for it once open and :meth:`Part.open_checks`
judges that stand-in. Each receives a *judging context* (built by
:func:`planner.stress.judge`, see :class:`planner.stress.judge.JudgingContext`):

``ctx.spec``
    the project (catalogue models, the movement);
``ctx.stimulus``
    the applied :class:`planner.stimulus.Stimulus` (``ctx.peak_only`` for an impulse);
``ctx.current``, ``ctx.voltage``, ``ctx.power_w``
    the element's cycle statistics (``peak``, ``mean``, ``rms``, ``mean_abs``)
    of its current [A] and voltage [V], and its mean power [W];
``ctx.movement_multiple``
    the same statistics of the movement current as a multiple of I_fs;
``ctx.prospective_a``
    the largest |source current| of the cycle [A];
``ctx.event``
    the pulse while fuses open (:class:`planner.stress.fuses.FuseEvent`: its
    ``event_time_s`` and ``words``), or None;
``ctx.short_exposure``
    True when the movement is judged on its short-time overload;
``ctx.phase``
    words appended to every quantity (``' after F1 opens'`` or ``''``);
``ctx.entry(...)``, ``ctx.exceeds(value, rating)``
    a stress entry (:func:`planner.stress.verdict.stress_entry`) and the
    comparison every limit uses.

How a circuit simulator sees it (``planner netlist``, :mod:`planner.export.netlist`):
:meth:`Part.spice` returns the element's SPICE lines, written with the element
equations of the design contract. It receives a *deck* (see
:class:`planner.export.netlist.Deck`):

``deck.node(name)``
    the SPICE node of a network node (nodes joined by ideal contacts are one
    node; the input's minus terminal is ``0``);
``deck.instance(letter, designator, role='')``
    a unique instance name that starts with the SPICE letter (``R``, ``D``,
    ``V``, ``B`` ...);
``deck.inner(designator, role)``
    a fresh internal node (between a part's own sub-elements);
``deck.model(name, text)``
    declare a ``.model`` once per deck; returns its name;
``deck.num(x)``
    a float written so that the simulator reads back the same double;
``deck.spec``, ``deck.temperature_k``, ``deck.t_ref_k``, ``deck.gmin``
    the project, the deck's and the reference temperature [K] (the deck sets
    ``temp`` and ``tnom`` to them), the simulator's gmin [S];
``deck.vt_ratio``
    (k/q of the contract) / (k/q of the simulator): scale a native diode's
    ``N`` and ``XTI`` by it so that its N V_t is the contract's n V_t exactly.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np


#: Power multiple of a part's rating, held for longer than ``IGNITION_TIME_S``, from which
#: the ``ignition`` hazard rule applies (from memory, range 10-25 x; see docs/safety.md and
#: :data:`planner.stress.verdict.HAZARD_RULES`).
IGNITION_POWER_FACTOR = 10.0
#: Time [s] beyond which a part held at ``IGNITION_POWER_FACTOR`` x its rating can ignite: the
#: 5 s of the short-time overload of IEC 60115-1, a level parts survive (from memory).
IGNITION_TIME_S = 5.0


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


@dataclass
class Trip:
    """What a protective part does under one stimulus (see :meth:`Part.trip`).

    Attributes
    ----------
    record : dict
        Its row in a case's ``fuses[]`` (``name``, ``opens``, ``pre_arcing_time_s``,
        ``let_through_i2t_a2s``, ``event_time_s``, ...; see ``docs/safety.md``).
    opens : bool
        True when it opens.
    stresses : list of dict
        Its stress entries (the trigger, and what opening asks of it).
    notes : list of str
        Words for the case's ``notes[]``.
    """

    record: dict
    opens: bool
    stresses: list = field(default_factory=list)
    notes: list = field(default_factory=list)


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
    #: Its keys as an entry of the project file's ``network.elements`` (``docs/project-file.md``).
    file_keys: ClassVar[tuple[str, ...]] = ()

    # --- the project file --------------------------------------------------------
    @classmethod
    def read(cls, e, name: str, parts) -> "Part":
        """The element from its entry of ``network.elements``.

        Parameters
        ----------
        e : planner.project.reader.Section
            The entry, its keys already checked against :attr:`file_keys`. It reads
            typed values (``e.qty``, ``e.text``, ``e.choice``, ``e.boolean``), node
            names (``e.pair``, ``e.node_name``), catalogue references (``e.model``)
            and refuses the file at a line (``e.fail``); every error names the file
            and line.
        name : str
            Its designator, already read and checked unique.
        parts : planner.model.Parts
            The catalogue: resistor defaults, diode and fuse models.
        """
        raise NotImplementedError(f"element kind {cls.kind!r} cannot be read from a project file")

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

    def emf(self, level: str = "nominal") -> float:
        """EMF in series with a ``branch`` element [V], plus side facing its first node (0: none)."""
        return 0.0

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

    # --- a circuit simulator (planner netlist) ---------------------------------------
    def spice(self, deck) -> list[str]:
        """Its SPICE lines in a deck, with the contract's element equation.

        Parameters
        ----------
        deck : planner.export.netlist.Deck
            Node and instance names, models, the project and the temperature
            (see the module docstring).

        Returns
        -------
        list of str
            Comment lines (``*``), element lines and, through ``deck.model``,
            models. Called only where the element is in circuit and does not
            merge its nodes.
        """
        raise NotImplementedError(f"element kind {self.kind!r} has no SPICE form: give its class a spice() method "
                                  "(see DEVELOPERS.md, 'How to add a part model')")

    # --- misrange ratings (planner.stress) -----------------------------------------
    def checks(self, ctx) -> list[dict]:
        """Its stress entries under one solved stimulus (none by default).

        Parameters
        ----------
        ctx : JudgingContext
            The element's cycle statistics, the event, the project and the phase
            words (see the module docstring).
        """
        return []

    def trip(self, ctx) -> Trip | None:
        """Whether a protective part opens under the stimulus (None: it is no protective part)."""
        return None

    def opened(self, r_open_ohm: float) -> "Part | None":
        """The element that stands in for it once it has opened (None: it cannot open).

        Parameters
        ----------
        r_open_ohm : float
            Resistance of the open part [ohm] (its insulation).
        """
        return None

    def open_checks(self, ctx) -> list[dict]:
        """Stress entries of its stand-in once it has opened (``ctx`` holds the stand-in's statistics)."""
        return []
