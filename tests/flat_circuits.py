"""Hand-built solver circuits (:class:`planner.solve.Circuit`) for the solver's own tests.

Nodes are named; ``com`` is the reference (index 0), a voltage stimulus holds
``plus``. Parts on the same pair of nodes share one port, as the network compiler
makes them.
"""

from __future__ import annotations

import numpy as np

from planner.solve import Circuit


class _Branch:
    def __init__(self, element, role, a, b):
        self.element, self.role, self.a, self.b = element, role, a, b


def build(branches, diodes=(), varistors=(), *, kind="voltage", name="flat") -> Circuit:
    """A circuit from (name, a, b) branches, (name, anode, cathode) diodes and
    (name, first, second) varistors, driven between ``plus`` and ``com``."""
    names = ["com"] + (["plus"] if kind == "voltage" else [])

    def idx(n):
        if n not in names:
            names.append(n)
        return names.index(n)

    lin_a = [idx(a) for _, a, _ in branches]
    lin_b = [idx(b) for _, _, b in branches]
    port_of, port_a, port_c = {}, [], []

    def port(a, c):
        ia, ic = idx(a), idx(c)
        if (ia, ic) in port_of:
            return port_of[(ia, ic)], 1
        if (ic, ia) in port_of:
            return port_of[(ic, ia)], -1
        port_of[(ia, ic)] = len(port_a)
        port_a.append(ia)
        port_c.append(ic)
        return port_of[(ia, ic)], 1

    d_port, d_sign = zip(*[port(a, c) for _, a, c in diodes]) if diodes else ((), ())
    v_port, v_sign = zip(*[port(a, c) for _, a, c in varistors]) if varistors else ((), ())
    inject = idx("plus")
    ip = np.intp
    return Circuit(
        name=name, node_names=tuple(names), node_index={n: i for i, n in enumerate(names)},
        branches=tuple(_Branch(nm, "resistor", a, b) for nm, a, b in branches),
        lin_a=np.array(lin_a, dtype=ip), lin_b=np.array(lin_b, dtype=ip),
        diodes=tuple(nm for nm, _, _ in diodes), diode_port=np.array(d_port, dtype=ip),
        diode_sign=np.array(d_sign, dtype=ip), port_a=np.array(port_a, dtype=ip), port_c=np.array(port_c, dtype=ip),
        source_kind=kind, held=1 if kind == "voltage" else None, inject=inject,
        varistors=tuple(nm for nm, _, _ in varistors), varistor_port=np.array(v_port, dtype=ip),
        varistor_sign=np.array(v_sign, dtype=ip))
