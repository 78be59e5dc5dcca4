"""Test points named by the parts' pins, with their voltage at full scale.

A builder probes a pin, not a node name: the node between R9 and R10 is "R9 end
toward R10". :func:`pin_names` names every node of a network so (pure);
:func:`test_points` adds the voltage of each node against the input's minus
terminal with the full-scale value applied to each position (nominal parts,
reference temperature), solved by the engine the caller hands in.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .model import NetworkSpec

__all__ = ["pin_names", "test_points", "test_points_at", "linear_test_points"]

#: Which part a probe goes on first, by kind (a fixed part before a switch contact).
_PRIORITY = {"movement": 0, "battery": 0.5, "resistor": 1, "fuse": 2, "ptc": 3, "varistor": 4, "rheostat": 6,
             "diode": 7, "contact": 9}


def _rank(e) -> tuple:
    return (_PRIORITY.get(e.kind, 8), len(e.name), e.name)


def _pin(e, node: str) -> str:
    """A pin in words: the movement's or a battery's + or - terminal, a diode's anode or cathode, else the part's end."""
    a, b = e.nodes
    if e.kind in ("movement", "battery"):  # both written [plus, minus]
        return f"{e.name} {'+' if node == a else '-'} terminal"
    if e.kind == "diode":
        return f"{e.name} {'anode' if node == a else 'cathode'}"
    return f"{e.name} end"


def pin_names(net: NetworkSpec) -> dict[str, dict]:
    """Every node of a network named by the pins on it.

    Returns
    -------
    dict
        node -> ``{"name": "R9 end toward R10", "pins": ["R9.2", "R10.1"], "terminal": "+" | "-" | None}``;
        pin ``.1`` is an element's first node, ``.2`` its second.

    Notes
    -----
    The name probes the part first in the order movement, battery, resistor, fuse, ..., diode,
    contact (a fixed part before a switch contact), pointing toward the next part on
    the node; a node that is an input terminal says so.
    """
    at: dict[str, list] = {}
    for e in net.elements:
        for i, n in enumerate(e.nodes):
            at.setdefault(n, []).append((e, i + 1))
    plus = {p.input[0] for p in net.positions}
    minus = {p.input[1] for p in net.positions}
    out = {}
    for node, pins in at.items():
        pins.sort(key=lambda x: _rank(x[0]))
        first = pins[0][0]
        others = [e for e, _ in pins[1:] if e.name != first.name]
        if first.kind in ("movement", "battery"):  # a terminal of its own: no need to say toward what
            name = _pin(first, node)
        elif others:
            name = f"{_pin(first, node)} toward {others[0].name}"
        else:
            name = f"{_pin(first, node)} (free)"
        terminal = "+" if node in plus else "-" if node in minus else None
        if terminal:
            name = f"input {terminal} terminal, {name}"
        out[node] = {"name": name, "pins": [f"{e.name}.{i}" for e, i in pins], "terminal": terminal}
    return out


def test_points(engine, net: NetworkSpec) -> list[dict]:
    """The test points of a network at full scale of every position.

    Parameters
    ----------
    engine : planner.engine.Engine
        Anything with ``operate(position, [value])`` (nominal parts, reference temperature).
    net : NetworkSpec

    Returns
    -------
    list of dict
        One per node, highest voltage last: ``node``, ``name`` (by its pins), ``pins[]``,
        ``voltages[]`` (``position``, ``voltage_v``: against the input's minus terminal with
        the position's full scale applied; absent where the node is not connected) and
        ``max_abs_voltage_v`` (None for a node connected in no position).
    """
    by_position = {}
    for q in net.positions:
        if q.measures not in ("voltage", "current"):  # a resistance scale has no full-scale value to apply
            continue
        op = engine.operate(q.name, [q.full_scale])
        by_position[q.name] = {n: float(op.node_voltage(n)[0, 0]) for n in op.circuit.node_index}
    return test_points_at(net, by_position)


def test_points_at(net: NetworkSpec, node_voltages: dict) -> list[dict]:
    """The test points of a network from node voltages already solved.

    Parameters
    ----------
    net : NetworkSpec
    node_voltages : dict of str -> dict of str -> float
        Per position, the voltage of each node of its circuit against the input's minus
        terminal at full scale [V] (the accuracy check's ``node_voltages_v``); a position
        without any (a resistance scale) is left out.

    Returns
    -------
    list of dict
        As :func:`test_points`.
    """
    names = pin_names(net)
    volts: dict[str, list] = {n: [] for n in names}
    for q in net.positions:
        at = node_voltages.get(q.name) or {}
        for n in names:
            if n in at:
                volts[n].append({"position": q.name, "voltage_v": float(at[n])})
    rows = []
    for n, info in names.items():
        top = max(abs(v["voltage_v"]) for v in volts[n]) if volts[n] else None
        rows.append({"node": n, "name": info["name"], "pins": info["pins"], "terminal": info["terminal"],
                     "voltages": volts[n], "max_abs_voltage_v": top})
    rows.sort(key=lambda r: (-1.0 if r["max_abs_voltage_v"] is None else r["max_abs_voltage_v"], r["node"]))
    return rows


class _Linear:
    """Nominal operating points of a network with its diodes open (no engine): the sizer's estimate."""

    def __init__(self, spec, net: NetworkSpec):
        self.spec = spec
        self.net = dataclasses.replace(net, elements=tuple(e for e in net.elements if e.stamp != "junction"))

    def operate(self, position: str, stimulus):
        from . import network as nw
        from .solve import Junctions, solve

        st = nw.state(self.net, position)
        c = nw.compile_state(self.spec, st, net=self.net)
        dt = np.zeros((1, 1))
        r = np.concatenate([np.broadcast_to(self.net.element(br.element).resistance(self.spec, dt), (1, 1))
                            for br in c.branches], axis=1) if c.branches else np.zeros((1, 0))
        z = np.zeros((1, 0))
        sol = solve(c, r, Junctions(z, z, z, z, z, z), np.asarray(stimulus, dtype=float))
        return _Op(c, sol)


@dataclasses.dataclass
class _Op:
    circuit: object
    sol: object

    def node_voltage(self, node):
        return self.sol.node_voltage(self.circuit.node_index[node])


def linear_test_points(spec, net: NetworkSpec) -> list[dict]:
    """:func:`test_points` by the sizer's linear estimate: nominal values, diodes left out.

    For ``planner size``, which solves no design; ``planner check`` gives the
    voltages with the diodes (their leakage lowers a clamped node by a little).
    """
    return test_points(_Linear(spec, net), net)


test_points.__test__ = False  # functions of the planner, not pytest tests
test_points_at.__test__ = False
linear_test_points.__test__ = False
