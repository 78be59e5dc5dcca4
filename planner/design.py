"""The design of one command: the project, its sized network and its switch states, built once.

:func:`build` turns a loaded project (:class:`planner.model.Spec`) into a
:class:`Design`: it sizes the network where the file asks for it (the
``voltage``/``current`` sections), checks the graph (:func:`planner.network.validate`)
and keeps the switch states; the compiled states are made on first use and kept.
Every analysis (``check``, ``faults``, ``apply``, ``protect``, the dossier) takes a
Design, so one command sizes once, validates once and compiles each state once,
however many analyses it runs.

Examples
--------
>>> from planner.project import load                      # doctest: +SKIP
>>> design = build(load("projects/pocket_voltmeter.yaml"))  # doctest: +SKIP
>>> [p.name for p in design.positions]                     # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass, field

from . import network as nw
from .model import NetworkSpec, Spec
from .sizing import size


@dataclass(eq=False)
class Design:
    """A project with its network: what every analysis works on.

    Parameters
    ----------
    spec : Spec
        The project.
    net : NetworkSpec
        The network: the file's explicit one, or the sizer's.
    sizing : planner.sizing.Sizing or None
        The sizer's result when the network was sized.

    Attributes
    ----------
    elements : dict
        Elements by designator.
    movement : MovementElement
    """

    spec: Spec
    net: NetworkSpec
    sizing: object | None = None
    _circuits: dict = field(default_factory=dict, repr=False)

    def __post_init__(self):
        self.elements = {e.name: e for e in self.net.elements}
        self.movement = nw.movement_element(self.net)
        self._states = {s.name: s for s in nw.position_states(self.net) + nw.transition_states(self.net)}
        self._graph = None

    @property
    def positions(self):
        """The switch positions in switch order."""
        return self.net.positions

    @property
    def graph(self):
        """The whole network as a networkx MultiGraph (every contact present)."""
        if self._graph is None:
            self._graph = nw.graph(self.net)
        return self._graph

    def state(self, name) -> nw.SwitchState:
        """A position or transition state by name (a state is returned as it is)."""
        if isinstance(name, nw.SwitchState):
            return name
        if name in self._states:
            return self._states[name]
        return nw.state(self.net, name, self.spec.path)  # raises a helpful error

    def transitions(self) -> list[nw.SwitchState]:
        """The transition states between adjacent positions (see :func:`planner.network.transition_states`)."""
        return nw.transition_states(self.net)

    def circuit(self, st: nw.SwitchState, kind: str, with_source_r: bool):
        """The compiled state for the solver (made once, then kept).

        A compiled state depends on the network's topology alone (which element joins
        which nodes, how it is stamped, which contacts the state closes), never on the
        values: the variants of one command (search candidates, a fuse opened, a tripped
        PTC at another resistance) share it through :func:`planner.network.compiled`.
        """
        key = (st.name, st.closed, st.position.name, kind, with_source_r)
        if key not in self._circuits:
            self._circuits[key] = nw.compiled(self.spec, st, stimulus=kind, source_resistance=with_source_r,
                                              net=self.net)
        return self._circuits[key]

    def variant(self, net: NetworkSpec, *, validate: bool = False) -> "Design":
        """The same project on another network (a search candidate, a network with a fuse open).

        Parameters
        ----------
        net : NetworkSpec
        validate : bool
            Run the graph checks of :func:`planner.network.validate` on it.
        """
        if validate:
            nw.validate(self.spec, net)
        return Design(self.spec, net)


def build(spec: Spec) -> Design:
    """The Design of a project: sized where the file asks for it, its graph checked.

    Parameters
    ----------
    spec : Spec
        A loaded project (:func:`planner.project.load`).

    Returns
    -------
    Design

    Raises
    ------
    ProjectError
        A request the sizer cannot build, or a network that fails the graph checks
        (each naming the file and line).
    """
    sizing = None
    net = spec.network
    if net is None:
        sizing = size(spec)
        net = sizing.network
    nw.validate(spec, net)
    return Design(spec, net, sizing)


def as_design(x) -> Design:
    """A Design as it is, or the Design of a project (:func:`build`) for library callers."""
    return x if isinstance(x, Design) else build(x)
