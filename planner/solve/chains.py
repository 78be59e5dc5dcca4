"""Stacks of identical junctions in series, solved exactly as one composite junction.

A clamp of N diodes in series (``count: N``) puts N - 1 nodes in the network that
only junctions reach. Where the N junctions have the same parameters in every
parameter set, they carry one current and (the law being strictly monotonic) share
the voltage equally, so the stack obeys exactly the law of a single junction with

.. math:: nV_t' = N\\,nV_t, \\quad BV' = N\\,BV, \\quad R_s' = N R_s, \\quad G_p' = G_p / N

and the same I_s and I_BV: the contract's element equations, not an approximation.
The solver then solves one port where there were N, and each junction's voltage is the
composite's over N, each inner node's voltage the proportional point between the
stack's ends. Stacks whose junctions differ (a saturation-current spread in a
Monte Carlo batch) are solved junction by junction.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .circuit import Circuit, Junctions
from .memo import Kept

#: Chains of recently reduced circuits, by their topology (:func:`_topology`).
_CHAINS = Kept(256)


def _topology(circuit: Circuit):
    return (circuit.n_nodes, circuit.held, circuit.inject, circuit.source_kind,
            tuple(circuit.lin_a.tolist()), tuple(circuit.lin_b.tolist()), tuple(circuit.port_a.tolist()),
            tuple(circuit.port_c.tolist()), tuple(circuit.diode_port.tolist()), tuple(circuit.diode_sign.tolist()),
            tuple(np.asarray(circuit.varistor_port).tolist()))


def find_chains(circuit: Circuit):
    """Series chains of single diodes through nodes only those diodes reach.

    Returns a list of (end0, end1, inner nodes in order, diodes in order, inner
    positions) for chains of at least two diodes all pointing the same way.
    """
    key = _topology(circuit)
    hit = _CHAINS.get(key)
    if hit is not None:
        return hit
    held = circuit.held
    fixed = {0} | ({held} if held is not None else set())
    lin_nodes = set(circuit.lin_a.tolist()) | set(circuit.lin_b.tolist())
    n_ports = circuit.n_ports
    per_port = [[] for _ in range(n_ports)]
    for d, q in enumerate(circuit.diode_port.tolist()):
        per_port[q].append(d)
    busy = set(np.asarray(circuit.varistor_port).tolist())
    node_ports: dict = {}
    for q in range(n_ports):
        for node in (int(circuit.port_a[q]), int(circuit.port_c[q])):
            node_ports.setdefault(node, []).append(q)
    inject = circuit.inject if circuit.source_kind != "voltage" else None

    def inner(node):
        return (node not in fixed and node not in lin_nodes and node != inject and len(node_ports.get(node, ())) == 2
                and all(len(per_port[q]) == 1 and q not in busy for q in node_ports[node]))

    def ends_of(q):
        return int(circuit.port_a[q]), int(circuit.port_c[q])

    def flow(q):  # (from, to) of the port's single diode, anode to cathode
        a, c = ends_of(q)
        return (a, c) if circuit.diode_sign[per_port[q][0]] > 0 else (c, a)

    seen = set()
    out = []
    for q0 in range(n_ports):
        if q0 in seen or len(per_port[q0]) != 1 or q0 in busy:
            continue
        a, c = flow(q0)
        if not (inner(a) or inner(c)):
            continue
        # walk back against the flow to the chain's first port
        q, start = q0, a
        guard = 0
        while inner(start) and guard <= n_ports:
            prev = [p for p in node_ports[start] if p != q][0]
            if flow(prev)[1] != start:
                break
            q, start = prev, flow(prev)[0]
            guard += 1
        ports, nodes = [q], []
        node = flow(q)[1]
        while inner(node) and len(ports) <= n_ports:
            nxt = [p for p in node_ports[node] if p != ports[-1]][0]
            if flow(nxt)[0] != node:
                break
            nodes.append(node)
            ports.append(nxt)
            node = flow(nxt)[1]
        seen.update(ports)
        if len(ports) >= 2 and start != node:
            out.append((start, node, nodes, [per_port[p][0] for p in ports], ports))
    return _CHAINS.keep(key, out)


class Reduction:
    """A circuit with its identical stacks replaced by composite junctions, and the way back.

    Attributes
    ----------
    circuit : Circuit
        The reduced circuit (same nodes; the stacks' inner nodes reached by nothing).
    junctions : Junctions
        Parameters of the reduced circuit's diodes, (P, D').
    source : ndarray of int, shape (D,)
        For each diode of the original circuit, its diode in the reduced one.
    divisor : ndarray, shape (D,)
        N for a junction of an N-stack (its voltage is the composite's over N), else 1.
    between : dict
        Each inner node of a stack: (end0, end1, fraction): its voltage is
        v(end0) + fraction (v(end1) - v(end0)).
    """

    def __init__(self, circuit, junctions, source, divisor, between):
        self.circuit, self.junctions = circuit, junctions
        self.source, self.divisor, self.between = source, divisor, between


def reduce(circuit: Circuit, jn: Junctions):
    """The :class:`Reduction` of a circuit for parameters ``jn`` (P, D), or None when no stack
    of at least two identical junctions is there."""
    chains = find_chains(circuit)
    if not chains:
        return None
    fields = np.stack(np.broadcast_arrays(jn.i_s, jn.nvt, jn.bv, jn.ibv, jn.r_s, jn.g_p))  # (6, P, D)
    use = [ch for ch in chains if bool(np.all(fields[:, :, ch[3]] == fields[:, :, ch[3][:1]]))]
    if not use:
        return None
    gone_ports = {q for ch in use for q in ch[4]}
    gone_diodes = {d for ch in use for d in ch[3]}
    keep_ports = [q for q in range(circuit.n_ports) if q not in gone_ports]
    new_q = {q: k for k, q in enumerate(keep_ports)}
    port_a = [int(circuit.port_a[q]) for q in keep_ports]
    port_c = [int(circuit.port_c[q]) for q in keep_ports]
    keep_d = [d for d in range(len(circuit.diodes)) if d not in gone_diodes]
    names = [circuit.diodes[d] for d in keep_d]
    d_port = [new_q[int(circuit.diode_port[d])] for d in keep_d]
    d_sign = [int(circuit.diode_sign[d]) for d in keep_d]
    source = np.zeros(len(circuit.diodes), dtype=np.intp)
    divisor = np.ones(len(circuit.diodes))
    for k, d in enumerate(keep_d):
        source[d] = k
    cols = {f: [getattr(jn, f)[:, d] for d in keep_d] for f in ("i_s", "nvt", "bv", "ibv", "r_s", "g_p")}
    between = {}
    for e0, e1, nodes, ds, _ in use:
        n = len(ds)
        k = len(names)
        names.append(circuit.diodes[ds[0]])
        port_a.append(e0)
        port_c.append(e1)
        d_port.append(len(port_a) - 1)
        d_sign.append(1)
        for d in ds:
            source[d] = k
            divisor[d] = n
        first = ds[0]
        cols["i_s"].append(jn.i_s[:, first])
        cols["nvt"].append(jn.nvt[:, first] * n)
        cols["bv"].append(jn.bv[:, first] * n)
        cols["ibv"].append(jn.ibv[:, first])
        cols["r_s"].append(jn.r_s[:, first] * n)
        cols["g_p"].append(jn.g_p[:, first] / n)
        for j, node in enumerate(nodes, start=1):
            between[node] = (e0, e1, j / n)
    p = jn.i_s.shape[0]
    reduced_jn = Junctions(*(np.stack(cols[f], axis=1) if cols[f] else np.zeros((p, 0))
                             for f in ("i_s", "nvt", "bv", "ibv", "r_s", "g_p")))
    idx = np.intp
    reduced = dataclasses.replace(
        circuit, diodes=tuple(names), diode_port=np.array(d_port, dtype=idx), diode_sign=np.array(d_sign, dtype=idx),
        port_a=np.array(port_a, dtype=idx), port_c=np.array(port_c, dtype=idx),
        varistor_port=np.array([new_q[int(q)] for q in circuit.varistor_port], dtype=idx))
    return Reduction(reduced, reduced_jn, source, divisor, between)
