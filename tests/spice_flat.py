"""ngspice decks of a solver-level circuit (:class:`planner.solve.Circuit` and its parameters).

:mod:`spice` writes decks from a project's network; this module writes them from the
solver's own flat inputs, for the parts that only the solver knows yet (varistors,
EMFs in linear branches) and for hand-built circuits:

* Branch j from node a to node b: ``R`` from a to an inner node, then a voltage
  source of the branch's EMF from that node to b (0 V without an EMF): so
  v_a - v_b = e_j + r_j i_j, and the source's current is the branch current from a
  to b.
* A voltage stimulus holds the held node against node 0 (``.dc`` sweep); a current
  stimulus is an ideal source from node 0 into the inject node.
* A diode: as in :mod:`spice` (ngspice's D with RS = 0, N scaled so that its N V_t is
  the parameters' nV_t exactly, explicit R_s and R_p, the contract's exact reverse law
  and breakdown term added by behavioural sources, written with numbers), with the
  parameters already at the case's temperature (TNOM = TEMP).
* A varistor: a behavioural current source with the law itself,
  ``I = i1 * sgn(V) * pow(abs(V) / v1, alpha)``.

Columns: ``applied``, then ``v:<index>`` for every node but 0, ``i:<j>`` for every
branch.
"""

from __future__ import annotations

import math

import numpy as np

import spice

#: Temperature of the decks [degC] (any: the parameters are given at the case's temperature).
TEMP_C = 27.0
#: Simulator options: ngspice converges on every point of these decks at reltol 1e-10 (at
#: :data:`spice.OPTIONS`' 1e-12 it gives up on clamp networks driven through a battery).
OPTIONS = "reltol=1e-10 abstol=1e-15 vntol=1e-12 itl1=500 itl2=200"


def _node(i: int) -> str:
    return "0" if int(i) == 0 else f"n{int(i)}"


def netlist(circuit, r, stimuli, *, emf=None, junctions=None, varistors=None, options: str = OPTIONS,
            gmin: float = 0.0, movement: int | None = None) -> str:
    """A deck of one flat circuit for one parameter set, swept over ``stimuli``.

    ``r``, ``emf``: (L,) arrays; ``junctions``: a :class:`planner.solve.Junctions` of (D,)
    arrays; ``varistors``: a :class:`planner.solve.Varistors` of (M,) arrays; ``movement``:
    a branch whose current column is also named ``movement``. Each branch's resistance is
    listed in a ``* value:`` comment under its element name (for :func:`spice.run_many`'s
    variants).
    """
    stimuli = np.atleast_1d(np.asarray(stimuli, dtype=float))
    r = np.asarray(r, dtype=float)
    e = np.zeros_like(r) if emf is None else np.asarray(emf, dtype=float)
    body, cols = [], []
    values = []
    for j, (a, b) in enumerate(zip(circuit.lin_a, circuit.lin_b)):
        values.append(f"* value: {circuit.branches[j].element} R{j} {spice._num(r[j])}")
        body.append(f"R{j} {_node(a)} x{j} {spice._num(r[j])}")
        body.append(f"Vb{j} x{j} {_node(b)} DC {spice._num(e[j])}")
    if len(circuit.diodes):
        vt_ng = spice.ngspice_k_over_q() * (TEMP_C + 273.15)
        for d in range(len(circuit.diodes)):
            q = int(circuit.diode_port[d])
            an, ca = int(circuit.port_a[q]), int(circuit.port_c[q])
            if circuit.diode_sign[d] < 0:
                an, ca = ca, an
            i_s, nvt = float(junctions.i_s[d]), float(junctions.nvt[d])
            r_s, g_p = float(junctions.r_s[d]), float(junctions.g_p[d])
            jn_node = _node(an)
            if r_s > 0.0:
                jn_node = f"j{d}"
                body.append(f"Rs{d} {_node(an)} {jn_node} {spice._num(r_s)}")
            if g_p - gmin > 0.0:
                body.append(f"Rp{d} {jn_node} {_node(ca)} {spice._num(1.0 / (g_p - gmin))}")
            body.append(f"D{d} {jn_node} {_node(ca)} dm{d}")
            # N scaled so that ngspice's N V_t (its own k/q) is the parameters' nV_t exactly
            body.append(f".model dm{d} D(IS={spice._num(i_s)} N={spice._num(nvt / vt_ng)} RS=0 TNOM={TEMP_C!r})")
            u = f"min(v({jn_node},{_node(ca)}),{spice._num(-3.0 * nvt)})"
            w = f"({spice._num(3.0 * nvt / math.e)}/{u})"  # negative: cubed as a product
            body.append(f"Bc{d} {jn_node} {_node(ca)} I={spice._num(i_s)}*(exp({u}*{spice._num(1.0 / nvt)})+{w}*{w}*{w})")
            bv = float(junctions.bv[d])
            if math.isfinite(bv):
                body.append(f"Bb{d} {jn_node} {_node(ca)} I=-{spice._num(float(junctions.ibv[d]))}"
                            f"*exp(-(v({jn_node},{_node(ca)})+{spice._num(bv)})*{spice._num(1.0 / nvt)})")
    if len(circuit.varistors):
        m_count = len(circuit.varistors)
        v1s, alphas, i1s = (np.broadcast_to(np.asarray(x, dtype=float), (m_count,))
                            for x in (varistors.v1, varistors.alpha, varistors.i1))
    for m in range(len(circuit.varistors)):
        q = int(circuit.varistor_port[m])
        a, c = int(circuit.port_a[q]), int(circuit.port_c[q])
        if circuit.varistor_sign[m] < 0:
            a, c = c, a
        v = f"v({_node(a)},{_node(c)})"
        body.append(f"Bv{m} {_node(a)} {_node(c)} I={spice._num(i1s[m])}*sgn({v})"
                    f"*pow(abs({v})*{spice._num(1.0 / v1s[m])},{spice._num(alphas[m])})")
    if circuit.source_kind == "voltage":
        body.append(f"Vstim {_node(circuit.held)} 0 DC 0")
        src = "Vstim"
        cols.append(("applied", f"v({_node(circuit.held)})"))
    else:
        body.append("Istim 0 ia DC 0")
        body.append(f"Vsense ia {_node(circuit.inject)} DC 0")
        src = "Istim"
        cols.append(("applied", "i(Vsense)"))
    dc = spice._sweep_lines(stimuli, src)
    if dc is None:
        raise ValueError("the stimuli must be a uniform ascending grid of at least two points")
    for i in range(1, circuit.n_nodes):
        cols.append((f"v:{i}", f"v({_node(i)})"))
    for j in range(len(circuit.branches)):
        cols.append((f"i:{j}" + ("=movement" if j == movement else ""), f"i(Vb{j})"))
    lines = [f"* flat deck: {circuit.name}",
             "* columns: " + " ".join(name for name, _ in cols),
             f"* points: {len(stimuli)}", *values,
             f".options temp={TEMP_C!r} tnom={TEMP_C!r} gmin={spice._num(gmin)} {options}"]
    lines += body
    lines.append(dc)
    lines += [".control", "set wr_singlescale", "set wr_vecnames", "option numdgt=17", "run",
              f"wrdata {spice.OUT_FILE} " + " ".join(expr for _, expr in cols), ".endc", ".end", ""]
    return "\n".join(lines)


def simulate(circuit, r, stimuli, **kwargs) -> dict:
    """:func:`netlist` run by ngspice, as a dict of columns by name (arrays of shape (S,))."""
    deck = netlist(circuit, r, stimuli, **kwargs)
    out = {}
    for names, col in zip(spice.columns(deck), spice.run(deck).T):
        for name in names.split("="):
            out[name] = col
    return out
