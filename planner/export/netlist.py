"""SPICE decks of one switch position: ``planner netlist``.

:func:`spice_deck` writes the active network of one switch state (a position, or a
transition between two) with one stimulus as a SPICE deck that ngspice runs as
written (``ngspice -b deck.cir``): the elements in circuit, each written by its
own part kind (:meth:`planner.parts.Part.spice`) with the element equations of
the design contract; ``VMOVE``, a 0 V source in series with the movement, so
that ``i(vmove)`` is the movement current from the movement's first node to its
second (``movement_current_a`` of ``planner apply``); the stimulus (``VIN`` for
a voltage, ``IIN`` for a current, ``RX`` for the resistor on a resistance
position); ``.op``; ``.end``.

What is in circuit is what the planner's solver sees: every element present in
the state (a contact only where the state closes it) and connected to the input
terminals; a closed contact without resistance joins its two nodes into one
(named after the first of them in network order). The input's minus terminal is
SPICE's ground ``0``. Project node names are kept where SPICE can read them
(letters, digits, ``_``); others are rewritten, and ``0`` and ``gnd`` (ground to
SPICE) are never used for another node. A comment lists the project nodes
behind each SPICE node.

Temperature: ``.options temp`` is the deck's temperature and ``tnom`` the
project's reference temperature, so each resistor's ``tc1`` gives the contract's
:math:`R (1 + \\alpha (T - T_{ref}))` and every diode follows its temperature law;
change ``temp`` and the deck stays the contract's at the new temperature.

Simulator constants: ngspice (at least to version 39) uses the CODATA 2014
Boltzmann constant and elementary charge; the contract uses the exact SI values.
Their k/q differ by 3.4e-7 relative, which moves a forward diode current by about
1e-5 at a fixed voltage; :data:`VT_RATIO` scales the diodes' ``N`` and ``XTI`` so
that the two agree exactly (see :meth:`planner.parts.Diode.spice`).

Examples
--------
>>> from planner.design import build                                   # doctest: +SKIP
>>> from planner.project import load                                   # doctest: +SKIP
>>> print(spice_deck(build(load("projects/pocket_voltmeter.yaml")), "10 V", volts=12.0))  # doctest: +SKIP
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import networkx as nx

from ..design import Design
from ..errors import UsageError
from ..model import ZERO_CELSIUS_K
from ..network import UnionFind, active_graph
from ..solve import BOLTZMANN, CHARGE
from ..units import format_si

__all__ = ["Deck", "DeckStimulus", "spice_deck", "stimulus_for", "SIMULATOR_BOLTZMANN", "SIMULATOR_CHARGE", "VT_RATIO",
           "OPTIONS"]

#: Boltzmann constant of ngspice [J/K]: CODATA 2014 (ngspice's ``const.h``; a deck of this
#: module measures it in the tests, tests/test_netlist.py).
SIMULATOR_BOLTZMANN = 1.38064852e-23
#: Elementary charge of ngspice [C]: CODATA 2014 (as above).
SIMULATOR_CHARGE = 1.6021766208e-19
#: (k/q of the contract, SI 2019 exact) / (k/q of the simulator): the diodes' N and XTI are
#: multiplied by it so that N V_t in the simulator is the contract's n V_t.
VT_RATIO = (BOLTZMANN / CHARGE) / (SIMULATOR_BOLTZMANN / SIMULATOR_CHARGE)
#: Simulator options: reltol 1e-6 instead of ngspice's 1e-3, so that the operating point is
#: converged well below the 1e-6 of the movement current the deck and the planner agree to
#: (Newton's last step squares the error: measured about 3e-12 on the examples). Much
#: tighter tolerances (1e-10) make ngspice's operating point fail from a cold start on
#: networks with clamp strings (its convergence test then sits at the round-off level).
OPTIONS = "reltol=1e-6 itl1=500 itl2=200"
#: The simulator's gmin [S], which it puts across every junction: a diode's leakage
#: resistance is written less it, so the two together are the model's R_p exactly.
GMIN = 1e-12

#: Node names SPICE reads as ground.
_GROUND_WORDS = {"0", "gnd"}
_WORD = re.compile(r"[^A-Za-z0-9_]")


def _num(x: float) -> str:
    """A float written so that the simulator reads back the same double."""
    x = float(x)
    if not math.isfinite(x):
        raise ValueError(f"cannot write {x!r} into a SPICE deck")
    return repr(x)


@dataclass(frozen=True)
class DeckStimulus:
    """What drives the input terminals of a deck.

    Attributes
    ----------
    kind : {'voltage', 'current', 'resistance'}
        A voltage source ``VIN`` (V(input[0]) - V(input[1]) = value), a current
        source ``IIN`` (the current enters at input[0] and leaves at input[1]),
        or a resistor ``RX`` between the terminals (a resistance position, driven
        by its own battery).
    value : float
        [V], [A] or [ohm].
    full_scale : bool
        True when it is the position's full scale (the default stimulus).
    """

    kind: str
    value: float
    full_scale: bool = False

    @property
    def unit(self) -> str:
        return {"voltage": "V", "current": "A", "resistance": "ohm"}[self.kind]

    def lines(self, plus: str, minus: str) -> list[str]:
        """The SPICE line of the stimulus between the input nodes."""
        v = _num(self.value)
        if self.kind == "voltage":
            return [f"VIN {plus} {minus} DC {v}"]
        if self.kind == "current":  # a SPICE current source drives its current from n+ through itself to n-
            return [f"IIN {minus} {plus} DC {v}"]
        return [f"RX {plus} {minus} {v}"]


def stimulus_for(position, *, volts=None, amps=None, ohms=None) -> DeckStimulus:
    """The stimulus of a deck: the one given, or the position's full scale.

    Raises
    ------
    UsageError
        More than one of ``volts``, ``amps``, ``ohms``; ``ohms`` on a position that
        measures no resistance; a resistance that is not positive.
    """
    given = [(k, v) for k, v in (("voltage", volts), ("current", amps), ("resistance", ohms)) if v is not None]
    if len(given) > 1:
        raise UsageError("give at most one of --volts, --amps and --ohms (none: the position's full scale)")
    if not given:
        return DeckStimulus(position.kind.source, float(position.full_scale), True)
    kind, value = given[0]
    if kind == "resistance":
        if position.measures != "resistance":
            raise UsageError(f"--ohms: position '{position.name}' measures {position.measures}, not resistance; "
                             "give --volts or --amps")
        if not value > 0.0:
            raise UsageError(f"--ohms: {value!r} is no resistor; give a positive resistance such as '1 kohm'")
    return DeckStimulus(kind, float(value))


class Deck:
    """Names and settings the parts' :meth:`~planner.parts.Part.spice` methods write with.

    Parameters
    ----------
    spec : Spec
        The project.
    nodes : dict
        SPICE node name of every network node in circuit (``0`` for ground).
    temperature_k : float
        The deck's temperature [K].
    gmin : float
        The simulator's gmin [S].

    Attributes
    ----------
    vt_ratio : float
        :data:`VT_RATIO`.
    temper_k : str
        The deck temperature in kelvin as a behavioural-source expression.
    models : dict
        ``.model`` text by name, in order of declaration.
    """

    def __init__(self, spec, nodes: dict, temperature_k: float, gmin: float):
        self.spec = spec
        self.nodes = nodes
        self.temperature_k = float(temperature_k)
        self.t_ref_k = float(spec.ambient.t_ref_k)
        self.gmin = float(gmin)
        self.vt_ratio = VT_RATIO
        self.temper_k = f"(temper+{_num(ZERO_CELSIUS_K)})"
        self.models: dict[str, str] = {}
        self._used: set[str] = {"vmove", "vin", "iin", "rx"}
        self._inner = 0

    num = staticmethod(_num)

    @staticmethod
    def celsius(t_k: float) -> str:
        """A temperature in degrees Celsius for SPICE (``temp``, ``tnom``, ``TNOM``)."""
        return _num(t_k - ZERO_CELSIUS_K)

    def node(self, name: str) -> str:
        """The SPICE node of a network node."""
        return self.nodes[name]

    def _unique(self, base: str) -> str:
        name, k = base, 2
        while name.lower() in self._used:
            name, k = f"{base}_{k}", k + 1
        self._used.add(name.lower())
        return name

    def instance(self, letter: str, designator: str, role: str = "") -> str:
        """A unique instance name: the SPICE letter, the designator, the role (``R_R1``, ``D_D1``, ``R_D1_s``)."""
        word = _WORD.sub("_", designator) + (f"_{role}" if role else "")
        return self._unique(f"{letter}_{word}")

    def inner(self, designator: str, role: str) -> str:
        """A fresh internal node of a part (``_D1_j``)."""
        self._inner += 1
        name = f"_{_WORD.sub('_', designator)}_{role}"
        while name.lower() in {n.lower() for n in self.nodes.values()} or name.lower() in self._used:
            name = f"{name}_{self._inner}"
        self._used.add(name.lower())
        return name

    def model(self, name: str, text: str) -> str:
        """Declare ``.model NAME TEXT`` once (the same name twice must be the same model)."""
        key = _WORD.sub("_", name)
        if key in self.models and self.models[key] != text:
            raise ValueError(f"two different SPICE models named {key}")
        self.models[key] = text
        return key


def _spice_nodes(names: list[str], ground: str) -> dict:
    """SPICE names of the (merged) nodes: readable, distinct ignoring case, ground ``0``."""
    out = {ground: "0"}
    used = {"0", "gnd"}
    for n in names:
        if n == ground:
            continue
        base = _WORD.sub("_", n) or "n"
        if base.lower() in _GROUND_WORDS:
            base = f"n_{base}"
        name, k = base, 2
        while name.lower() in used:
            name, k = f"{base}_{k}", k + 1
        used.add(name.lower())
        out[n] = name
    return out


def spice_deck(design: Design, position: str, stimulus: DeckStimulus | None = None, *,
            temperature_k: float | None = None, expected_a: float | None = None, source: str | None = None,
            version: str = "") -> str:
    """The SPICE deck of one switch state under one stimulus.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`).
    position : str
        A position name (or a transition state's name).
    stimulus : DeckStimulus, optional
        What drives the input terminals (:func:`stimulus_for`); the position's
        full scale by default.
    temperature_k : float, optional
        The deck's temperature [K]; the project's reference temperature by default.
    expected_a : float, optional
        The planner's movement current for this stimulus [A], written in a
        comment for the reader to compare with ``i(vmove)``.
    source, version : str, optional
        The project file and the planner version, for the deck's comments.

    Returns
    -------
    str
        The deck: a title line, comments, ``.options``, the elements in network
        order, the stimulus, the models, ``.op``, ``.end``.

    Raises
    ------
    ProjectError
        An unknown position (with the nearest name).
    UsageError
        A voltage stimulus on input terminals that the state shorts; a movement
        that is not in circuit.
    """
    spec = design.spec
    st = design.state(position)
    pos = st.position
    stim = stimulus or stimulus_for(pos)
    t_k = spec.ambient.t_ref_k if temperature_k is None else float(temperature_k)
    plus, minus = pos.input

    g = active_graph(design.net, st)
    live = nx.node_connected_component(g, plus) | nx.node_connected_component(g, minus)
    present = [e for e in design.net.elements if e.present(st.closed) and e.nodes[0] in live]
    uf = UnionFind()
    order = []
    for e in present:
        for n in e.nodes:
            if n not in uf.parent:
                order.append(n)
            uf.find(n)
    for n in (plus, minus):
        if n not in uf.parent:
            order.append(n)
        uf.find(n)
    joined = {}
    for e in present:
        if e.merges(st.closed):
            ra, rb = uf.find(e.nodes[0]), uf.find(e.nodes[1])
            if ra != rb:
                keep, drop = (ra, rb) if order.index(ra) <= order.index(rb) else (rb, ra)
                uf.parent[drop] = keep  # named after the first node in network order
                joined.setdefault(keep, []).append(e.name)
    roots = list(dict.fromkeys(uf.find(n) for n in order))
    names = _spice_nodes(roots, uf.find(minus))
    node_of = {n: names[uf.find(n)] for n in order}
    if stim.kind == "voltage" and node_of[plus] == "0":
        raise UsageError(f"{st.name}: the input terminals {plus} and {minus} are joined in this state: a voltage "
                         "source across them has nothing to drive; give --amps")
    movement = design.movement
    if movement not in present:
        raise UsageError(f"{st.name}: the movement {movement.name} is not connected to the input terminals "
                         f"{plus}, {minus} in this state")

    gmin = GMIN
    deck = Deck(spec, node_of, t_k, gmin)
    body = []
    for e in present:
        if e.merges(st.closed):
            continue
        body += e.spice(deck)
    body += stim.lines(node_of[plus], node_of[minus])

    what = f"{pos.kind.label}" if pos.kind.label else pos.measures
    stim_words = {"voltage": "VIN", "current": "IIN", "resistance": "RX"}[stim.kind]
    head = [
        f"{spec.title} - position {st.name}",
        f"* planner netlist{f' {version}' if version else ''}: position '{st.name}' ({what}, full scale "
        f"{format_si(pos.full_scale, pos.kind.unit)})" + (f", from {source}" if source else ""),
        f"* stimulus: {stim_words} = {format_si(stim.value, stim.unit)}"
        + (" (the position's full scale)" if stim.full_scale else ""),
        f"* temperature: {deck.celsius(t_k)} degC (.options temp); reference {deck.celsius(deck.t_ref_k)} degC (tnom)",
        f"* VMOVE: 0 V in series with the movement {movement.name}: i(vmove) is the movement current from "
        f"{movement.nodes[0]} to {movement.nodes[1]} [A], positive reads up",
    ]
    if expected_a is not None:
        head.append(f"* the planner's movement current for this stimulus: {_num(expected_a)} A "
                    f"({_num(expected_a / spec.movement.i_fs_a)} x full-scale current)")
    head += [
        "* element equations of the planner (docs/netlist.md): R(T) = R (1 + tc1 (T - tnom)); diodes: Shockley",
        "*   junction with R_s in series and R_p across it, the SPICE temperature law, k/q of SI 2019 (N, XTI",
        f"*   scaled by {_num(VT_RATIO)} for the simulator's CODATA 2014 constants), a behavioural source",
        "*   where the simulator's own law differs (the SPICE2 reverse approximation)",
        "* run: ngspice -b <this file>",
    ]
    for root in roots:
        members = sorted((n for n in order if uf.find(n) == root), key=order.index)
        label = names[root]
        extra = f" (joined by {', '.join(joined[root])})" if root in joined else ""
        if len(members) > 1 or members[0] != label:
            head.append(f"* node {label}: {', '.join(members)}{extra}")
    lines = head + [f".options temp={deck.celsius(t_k)} tnom={deck.celsius(deck.t_ref_k)} gmin={_num(gmin)} {OPTIONS}"]
    lines += body
    lines += [f".model {name} {text}" for name, text in deck.models.items()]
    lines += [".op", ".end", ""]
    return "\n".join(lines)
