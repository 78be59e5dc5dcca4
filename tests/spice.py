"""ngspice netlists of a planner network, and a runner: the independent check of the solver.

:func:`netlist` writes one switch state of an :class:`planner.engine.Engine` as an
ngspice deck with a ``.dc`` sweep of the stimulus; :func:`run` runs one deck in batch
mode and :func:`run_many` runs many decks in one ngspice process (for benchmarks on
big batches). Each deck lists the columns it writes in a ``* columns:`` comment;
:func:`columns` reads it back and :func:`simulate` returns a dict by column name.

How the deck matches the contract's element equations (design.md, "Element
equations"):

* Resistors and the coil: R(T) = R (1 + tc (T - T_ref)) is computed here in Python
  and written as a plain value (no ngspice temperature coefficients); a PTC (in
  normal use, not tripped) likewise at its cold resistance and tempco. Fuses,
  contacts and the diodes' R_s and R_p are constant, as in the contract.
* Zero-ohm closed contacts are merged into one node (no 0-V sources, so a loop of
  closed contacts cannot make the matrix singular); open contacts and the parts not
  connected to the input terminals in the state are left out, as the solver does.
* Each diode is an ngspice ``D`` with ``RS=0``, an explicit series resistor R_s and
  an explicit leakage resistor R_p from the internal junction node to the cathode,
  so R_p sits across the junction only.
* Saturation current at temperature: ngspice's own law (ngspice ``diotemp.c``,
  ``TLEV=0``): I_s(T) = IS exp((T/TNOM - 1) EG/(N V_t) + (XTI/N) ln(T/TNOM)), with EG
  held fixed (ngspice's temperature-dependent band gap only enters the junction
  potential and capacitances, which do not matter at DC). TNOM is the diode's
  ``t_nom_k`` (the project reference temperature by default).
* Boltzmann constant and elementary charge: ngspice 39 uses the CODATA 2014 values,
  the contract the exact SI 2019 values; their k/q ratios differ by 3.4e-7, which
  would move forward currents by about 1e-5 at a fixed voltage. :func:`ngspice_k_over_q`
  measures ngspice's k/q once and the deck scales ``N`` and ``XTI`` by
  r = (k/q)_SI / (k/q)_ngspice, so that N V_t(ngspice) = n V_t(SI) exactly and
  XTI/N = xti/n: the junction law and the temperature law are then the contract's.
* Reverse region: below -3 N V_t ngspice replaces I_s (exp(V/NV_t) - 1) by the
  SPICE2 approximation -I_s (1 + (3 N V_t / (e V))^3) (ngspice ``dioload.c``), off by
  up to about 0.4 % of I_s. With ``exact_reverse=True`` (default) a behavioural
  current source across each junction adds the difference,
  I_s(T) (exp(u/NV_t) + (3 N V_t/(e u))^3) with u = min(V, -3 N V_t), which is zero
  at and above -3 N V_t. I_s(T) in it is ngspice's own: the current of an isolated
  probe copy of the diode held at -1 V, corrected for the same approximation.
* gmin: ngspice puts gmin across every junction. It is 0 when every diode has a
  finite R_p (exact), otherwise 1e-15 S (a node hanging on junctions only would make
  ngspice's matrix singular); then each junction carries an extra 1e-15 S x V_j.
* Reverse breakdown (diodes with ``bv_v``): ngspice's BV model (piecewise, with BV
  refitted to IBV) is not the contract's; the deck adds the contract's term
  -IBV exp(-(V + BV)/(n V_t)) as a behavioural current source instead.

Measured on the two example networks (every position, -1000..1000 V and -5..5 A,
reference, minimum and maximum ambient): with both corrections the movement currents
of ngspice and planner.solve agree to about 6e-12 of max(|I|, 1e-3 I_fs); without the
N/XTI scaling to 3.5e-7, without the reverse correction to 2.9e-7.

Simulator options: ``reltol=1e-12 abstol=1e-18 vntol=1e-14`` (ngspice 39 accepts them).
Output: ``wrdata`` with ``numdgt=17`` (round-trip doubles).

For benchmarks, one deck per case and one ngspice process for all of them::

    decks = [netlist(eng, pos, None, sweep, t) for pos in names for t in temperatures]
    results = run_many(decks)        # list of (S, C) arrays, in order

Requires ``ngspice`` on the PATH (Debian package ``ngspice``; checked with version 39).
"""

from __future__ import annotations

import functools
import math
import os
import re
import shutil
import subprocess
import tempfile
import time
from typing import Mapping, Sequence

import networkx as nx
import numpy as np

from planner.network import UnionFind
from planner.model import Contact, Diode, Fuse, MovementElement, Ptc, Resistor, ZERO_CELSIUS_K
from planner.solve import BOLTZMANN, CHARGE, saturation_current

#: The ngspice executable, or None when it is not installed.
NGSPICE = shutil.which("ngspice")

#: Simulator options: tolerances far below the 1e-6 the checks ask for.
OPTIONS = "reltol=1e-12 abstol=1e-18 vntol=1e-14 itl1=500 itl2=200"

#: The file name a deck's control block writes to (relative to the working directory).
OUT_FILE = "planner_out.data"

#: Reverse bias of the probe diodes that measure ngspice's I_s(T) [V].
PROBE_V = 1.0

_E = math.e


class SpiceError(RuntimeError):
    """ngspice failed, or its output could not be read."""


def available() -> bool:
    """Whether ngspice is installed."""
    return NGSPICE is not None


def _num(x: float) -> str:
    """A float written so that ngspice reads back the same double."""
    x = float(x)
    if not math.isfinite(x):
        raise ValueError(f"cannot write {x!r} into a netlist")
    return repr(x)


def _celsius(t_k: float) -> str:
    return _num(t_k - ZERO_CELSIUS_K)


@functools.lru_cache(maxsize=1)
def ngspice_k_over_q() -> float:
    """k/q that ngspice uses for V_t [V/K], measured from a forward diode current.

    Notes
    -----
    A diode with IS = 1e-12 A, N = 1 at 300 K held at 0.5 V (gmin = 0) carries
    I = IS (exp(0.5/V_t) - 1), so V_t = 0.5 / ln(1 + I/IS) and k/q = V_t / T.
    """
    deck = "\n".join([
        "k/q probe",
        "V1 a 0 DC 0.5",
        "D1 a 0 dm",
        ".model dm D(IS=1e-12 N=1 RS=0 TNOM=26.85)",
        f".options temp=26.85 gmin=0 {OPTIONS}",
        ".control",
        "option numdgt=17",
        "op",
        f"wrdata {OUT_FILE} -i(V1)",
        ".endc",
        ".end",
        "",
    ])
    out = _run_raw(deck)
    i = float(out.reshape(-1)[-1])
    t = 26.85 + ZERO_CELSIUS_K
    kq = 0.5 / math.log1p(i / 1e-12) / t
    ratio = (BOLTZMANN / CHARGE) / kq
    if abs(ratio - 1.0) > 1e-4:
        raise SpiceError(f"ngspice's k/q {kq!r} is far from k/q = {BOLTZMANN / CHARGE!r}")
    return kq


def _sweep_lines(stimuli: np.ndarray, source: str):
    """A ``.dc`` line for a uniform sweep, or None when the stimuli are not uniform."""
    s = np.asarray(stimuli, dtype=float)
    if len(s) < 2:
        return None
    step = (s[-1] - s[0]) / (len(s) - 1)
    if step <= 0 or not np.allclose(s, s[0] + step * np.arange(len(s)), rtol=0, atol=1e-12 * np.abs(s).max()):
        return None
    return f".dc {source} {_num(s[0])} {_num(s[-1])} {_num(step)}"


def netlist(engine, state, kind: str | None, stimuli, temperature_k: float | None = None,
            r_source_ohm: float = 0.0, *, factors: Mapping[str, float] | None = None,
            nodes: Sequence[str] | None = None, exact_reverse: bool = True,
            gmin: float | None = None, out_file: str = OUT_FILE, options: str = OPTIONS,
            reverse_constants: bool = False) -> str:
    """An ngspice deck of one switch state swept over the stimuli.

    Parameters
    ----------
    engine : planner.engine.Engine
    state : str or SwitchState
        A position or transition name, or a state.
    kind : {'voltage', 'current'} or None
        What the stimulus is; the position's own quantity when None.
    stimuli : array_like, shape (S,)
        Applied volts [V] or amperes [A], ascending. A uniform grid becomes
        ``.dc`` on the source itself; any other set is swept by index through a
        behavioural source with a ``pwl`` table (exact at the table's points).
    temperature_k : float, optional
        Ambient temperature [K]; the project reference temperature by default.
    r_source_ohm : float
        Source resistance of a voltage stimulus [ohm] (0 for none).
    factors : mapping, optional
        Multipliers of nominal values by designator (resistors, the movement's coil,
        a diode's saturation current), as in :meth:`planner.engine.Engine.operate`.
    nodes : sequence of str, optional
        Network nodes whose voltages to write (default: every node in circuit).
    exact_reverse : bool
        Add the correction from ngspice's SPICE2 reverse approximation to the
        exact exponential (see the module notes).
    gmin : float, optional
        ngspice's gmin [S]; by default 0 when every diode has a finite R_p, else 1e-15.
        A diode's R_p is written less gmin's share, so that the leakage stays exact
        (some decks, e.g. two-diode stacks swept through zero, converge only with
        gmin > 0).
    out_file : str
        The data file the deck writes.
    options : str
        The simulator options (:data:`OPTIONS` by default; the benchmark loosens
        them to the tolerance it needs).
    reverse_constants : bool
        Write the reverse correction with numbers instead of expressions: I_s(T) by
        the contract's law (:func:`planner.solve.saturation_current`) instead of
        ngspice's probe diode, n V_t at the deck's temperature. ngspice evaluates
        the correction at every iteration; with numbers it runs about twice as fast.
        I_s(T) then differs from ngspice's own by rounding only (ngspice's law is the
        contract's after the N/XTI scaling), and it only scales a correction of at
        most 0.4 % of I_s. Not with :func:`run_many`'s diode-factor variants (the
        number would not follow an ``altermod``).

    Returns
    -------
    str
        The deck. Its ``* columns:`` comment names the written columns: ``applied``
        (the stimulus as ngspice applied it), ``movement`` (the movement current from
        its first to its second node [A]), ``input`` (current delivered into input[0]
        [A]), then ``v:<node>`` for each node voltage against input[1] [V].
        ``* value:`` comments give each resistor's and the coil's designator,
        instance and resistance at the deck's temperature before ``factors``, and
        ``* diode:`` comments each diode's designator, model and I_s before
        ``factors`` (for :func:`run_many`'s variants).
    """
    spec = engine.spec
    net = engine.net
    st = engine.state(state)
    kind = kind or st.position.measures
    if kind not in ("voltage", "current"):
        raise ValueError(f"kind must be 'voltage' or 'current', not {kind!r}")
    t_k = spec.ambient.t_ref_k if temperature_k is None else float(temperature_k)
    dt = t_k - spec.ambient.t_ref_k
    factors = dict(factors or {})
    stimuli = np.atleast_1d(np.asarray(stimuli, dtype=float))
    r_ratio = (BOLTZMANN / CHARGE) / ngspice_k_over_q()

    g = nx.MultiGraph()
    present = []
    for e in net.elements:
        if isinstance(e, Contact) and e.name not in st.closed:
            continue
        present.append(e)
        g.add_edge(*e.nodes)
    plus, minus = st.position.input
    g.add_nodes_from([plus, minus])
    live = nx.node_connected_component(g, plus) | nx.node_connected_component(g, minus)
    present = [e for e in present if e.nodes[0] in live]

    uf = UnionFind()
    for n in sorted(live):
        uf.find(n)
    for e in present:
        if isinstance(e, Contact) and e.r_ohm == 0.0:
            uf.union(*e.nodes)
    ground = uf.find(minus)
    names: dict = {}

    def node(n: str) -> str:
        root = uf.find(n)
        if root == ground:
            return "0"
        if root not in names:
            names[root] = f"n{len(names) + 1}"
        return names[root]

    top = node(plus)
    if kind == "voltage" and r_source_ohm == 0.0 and top == "0":
        raise ValueError(f"{st.name}: the input terminals are shorted; a voltage stimulus needs r_source_ohm > 0")

    diodes = [e for e in present if isinstance(e, Diode)]
    if gmin is None:
        gmin = 0.0 if all(math.isfinite(spec.parts.diodes[d.model].r_p_ohm) for d in diodes) else 1e-15

    lines = [f"* planner deck: state '{st.name}', {kind} stimulus, T = {t_k!r} K, r_source = {r_source_ohm!r} ohm"]
    body = []
    values = []
    vectors = []
    movement = engine.movement
    t_ref = spec.ambient.t_ref_k
    for j, e in enumerate(present, start=1):
        tag = re.sub(r"\W", "_", e.name)
        a, b = e.nodes
        if isinstance(e, Resistor):
            val = e.value_ohm * (1.0 + e.tempco_per_k * dt)
            values.append(f"* value: {e.name} R{j}_{tag} {_num(val)}")
            body.append(f"R{j}_{tag} {node(a)} {node(b)} {_num(val * factors.get(e.name, 1.0))}")
        elif isinstance(e, MovementElement):
            m = spec.movement
            val = m.r_coil_ohm * (1.0 + m.tempco_per_k * dt)
            values.append(f"* value: {e.name} R{j}_{tag} {_num(val)}")
            body.append(f"Vm{j}_{tag} {node(a)} m{j} DC 0")
            body.append(f"R{j}_{tag} m{j} {node(b)} {_num(val * factors.get(e.name, 1.0))}")
            if e.name == movement.name:
                vectors.append(("movement", f"i(Vm{j}_{tag})"))
        elif isinstance(e, Ptc):
            p = spec.parts.ptcs[e.model]
            val = p.r_cold_ohm * (1.0 + p.tempco_per_k * dt)
            values.append(f"* value: {e.name} R{j}_{tag} {_num(val)}")
            body.append(f"R{j}_{tag} {node(a)} {node(b)} {_num(val * factors.get(e.name, 1.0))}")
        elif isinstance(e, Fuse):
            body.append(f"R{j}_{tag} {node(a)} {node(b)} {_num(spec.parts.fuses[e.model].r_cold_ohm)}")
        elif isinstance(e, Contact):
            if e.r_ohm > 0.0:
                body.append(f"R{j}_{tag} {node(a)} {node(b)} {_num(e.r_ohm)}")
        elif isinstance(e, Diode):
            d = spec.parts.diodes[e.model]
            t_nom = d.t_nom_k if d.t_nom_k is not None else t_ref
            i_s = d.i_s_a * factors.get(e.name, 1.0)
            values.append(f"* diode: {e.name} dm{j} {_num(d.i_s_a)}" + (" fixed" if reverse_constants else ""))
            an, ca = node(e.anode), node(e.cathode)
            jn = an
            if d.r_s_ohm > 0.0:
                jn = f"j{j}"
                body.append(f"Rs{j}_{tag} {an} {jn} {_num(d.r_s_ohm)}")
            if math.isfinite(d.r_p_ohm):
                # ngspice's gmin sits across the junction beside R_p: R_p is written so that
                # the two together are the model's leakage conductance exactly
                g_leak = 1.0 / d.r_p_ohm - gmin
                if g_leak <= 0.0:
                    raise ValueError(f"diode {e.name}: gmin {gmin!r} S exceeds its leakage conductance")
                body.append(f"Rp{j}_{tag} {jn} {ca} {_num(1.0 / g_leak)}")
            body.append(f"D{j}_{tag} {jn} {ca} dm{j}")
            body.append(f".model dm{j} D(IS={_num(i_s)} N={_num(d.n * r_ratio)} RS=0 "
                        f"EG={_num(d.eg_ev)} XTI={_num(d.xti * r_ratio)} TNOM={_celsius(t_nom)})")
            # n V_t at the deck's temperature, in the SI constants (= N V_t of ngspice)
            nvt = f"({_num(d.n * BOLTZMANN / CHARGE)}*(temper+{_num(ZERO_CELSIUS_K)}))"
            if exact_reverse and reverse_constants:
                nvt_t = d.n * BOLTZMANN / CHARGE * t_k
                isat_t = float(saturation_current(i_s, d.n, d.eg_ev, d.xti, t_k, t_nom))
                u = f"min(v({jn},{ca}),{_num(-3.0 * nvt_t)})"
                w = f"({_num(3.0 * nvt_t / _E)}/{u})"  # negative: cubed as a product
                body.append(f"Bc{j}_{tag} {jn} {ca} I={_num(isat_t)}*(exp({u}*{_num(1.0 / nvt_t)})+{w}*{w}*{w})")
            elif exact_reverse:
                body.append(f"Vp{j} p{j} 0 DC {_num(-PROBE_V)}")
                body.append(f"Dp{j} p{j} 0 dm{j}")
                # probe: i = csat (1 - (3 nVt/(e V))^3) + gmin V  ->  csat
                isat = (f"((i(Vp{j})-{_num(gmin * PROBE_V)})/"
                        f"(1-(3*{nvt}/({_num(_E * PROBE_V)}))^3))")
                u = f"min(v({jn},{ca}),-3*{nvt})"
                w = f"(3*{nvt}/({_num(_E)}*{u}))"  # negative: cubed as a product (ngspice's ^ wants x > 0)
                body.append(f"Bc{j}_{tag} {jn} {ca} I={isat}*(exp({u}/{nvt})+{w}*{w}*{w})")
            if d.bv_v is not None:
                body.append(f"Bb{j}_{tag} {jn} {ca} I=-{_num(d.ibv_a)}*exp(-(v({jn},{ca})+{_num(d.bv_v)})/{nvt})")
    if not any(v[0] == "movement" for v in vectors):
        raise ValueError(f"{st.name}: the movement {movement.name} is not in circuit")

    n_s = len(stimuli)
    if kind == "voltage":
        src = top
        if r_source_ohm > 0.0:
            src = "src"
            body.append(f"Rsrc src {top} {_num(r_source_ohm)}")
        dc = _sweep_lines(stimuli, "Vstim")
        if dc is not None:
            body.append(f"Vstim {src} 0 DC 0")
            into = "iinput"  # = -i(Vstim), set by a 'let' in the control block
        else:
            body.append(f"Bstim srcb 0 V=pwl(v(sweepidx),{_pwl(stimuli)})")
            body.append(f"Vsense srcb {src} DC 0")
            into = "i(Vsense)"
        vectors = [("applied", f"v({src})")] + vectors + [("input", into)]
    else:
        dc = _sweep_lines(stimuli, "Istim")
        if dc is not None:
            body.append("Istim 0 ia DC 0")
        else:
            body.append(f"Bstim 0 ia I=pwl(v(sweepidx),{_pwl(stimuli)})")
        body.append(f"Vsense ia {top} DC 0")
        vectors = [("applied", "i(Vsense)")] + vectors + [("input", "i(Vsense)")]
    if dc is None:
        body.append("Vsweepidx sweepidx 0 DC 0")
        dc = f".dc Vsweepidx 0 {n_s - 1} 1"

    # node voltages; nodes merged into input[1] are 0 and not written
    want = list(nodes) if nodes is not None else sorted(live)
    for n in want:
        if n in live and node(n) != "0":
            vectors.append((f"v:{n}", f"v({node(n)})"))

    # one column per distinct vector; names of the same vector joined by '='
    distinct: dict = {}
    for name, expr in vectors:
        distinct.setdefault(expr, []).append(name)
    lines.append("* columns: " + " ".join("=".join(v) for v in distinct.values()))
    lines.append(f"* points: {n_s}")
    lines += values
    lines.append(f".options temp={_celsius(t_k)} gmin={_num(gmin)} {options}")
    lines += body
    lines.append(dc)
    lets = ["let iinput = -i(Vstim)"] if "iinput" in distinct else []
    lines += [".control", "set wr_singlescale", "set wr_vecnames", "option numdgt=17", "run", *lets,
              f"wrdata {out_file} " + " ".join(distinct), ".endc", ".end", ""]
    return "\n".join(lines)


def _pwl(values) -> str:
    return ",".join(f"{k},{_num(v)}" for k, v in enumerate(values))


def columns(deck: str) -> list[str]:
    """Names of the columns a deck writes (from its ``* columns:`` comment).

    A column that serves several names (e.g. the applied voltage and the voltage of
    the node it is applied to) carries them joined by ``=``.
    """
    for line in deck.splitlines():
        if line.startswith("* columns: "):
            return line[len("* columns: "):].split()
    raise ValueError("not a planner deck: no '* columns:' line")


def _run_raw(deck: str, timeout: float = 120.0) -> np.ndarray:
    with tempfile.TemporaryDirectory(prefix="planner-spice-") as tmp:
        path = os.path.join(tmp, "deck.cir")
        with open(path, "w") as f:
            f.write(deck)
        proc = subprocess.run([NGSPICE or "ngspice", "-b", path], cwd=tmp, capture_output=True,
                              text=True, timeout=timeout)
        out = os.path.join(tmp, OUT_FILE)
        # ngspice's exit status is 1 for a deck without a dot-analysis line; judge by the data
        if not os.path.exists(out):
            raise SpiceError(f"ngspice failed (exit {proc.returncode}):\n{proc.stdout[-2000:]}\n{proc.stderr[-2000:]}")
        return _read(out, proc)


def _read(out: str, proc) -> np.ndarray:
    with open(out) as f:
        text = f.read()
    rows = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip()[0].isalpha()]
    data = np.array([[float(x) for x in ln.split()] for ln in rows], dtype=float)
    if data.size == 0 or np.any(~np.isfinite(data)):
        raise SpiceError(f"ngspice wrote no usable data:\n{proc.stdout[-2000:]}\n{proc.stderr[-2000:]}")
    return data


def run(deck: str, timeout: float = 120.0) -> np.ndarray:
    """Run one deck in ngspice batch mode.

    Returns
    -------
    ndarray, shape (S, C)
        One row per sweep point, one column per name in :func:`columns` (the sweep
        variable itself is dropped).

    Raises
    ------
    SpiceError
        When ngspice fails or writes no data (e.g. no convergence).
    """
    return _check(deck, _run_raw(deck, timeout), "")


def run_many(decks: Sequence[str], timeout: float = 600.0, *, variants: Sequence | None = None,
             stats: dict | None = None, partial: bool = False) -> list:
    """Run many decks in one ngspice process (``source`` each, run, write), in order.

    Parameters
    ----------
    decks : sequence of str
    timeout : float
        Seconds before the ngspice process is stopped.
    variants : sequence, optional
        One entry per deck: None (run the deck as written), or a list of variants,
        each a mapping of factors by designator (resistors and the coil: ``alter``
        of the deck's ``* value:`` resistance; diodes: ``altermod`` of I_s). The deck
        is read once and run once per variant (a designator the deck does not
        contain is ignored, as the engine ignores it).
    stats : dict, optional
        Receives ``seconds``: the wall time of the ngspice process.
    partial : bool
        Return None for a run that did not converge (fewer points than asked for)
        instead of raising :class:`SpiceError`.

    Returns
    -------
    list
        Per deck: an array as :func:`run` returns it, or, with variants, a list of
        such arrays, one per variant.
    """
    variants = list(variants) if variants is not None else [None] * len(decks)
    if len(variants) != len(decks):
        raise ValueError("variants needs one entry per deck")
    with tempfile.TemporaryDirectory(prefix="planner-spice-") as tmp:
        script = ["planner batch", ".control", "set wr_singlescale", "set wr_vecnames", "option numdgt=17"]
        for i, (deck, var) in enumerate(zip(decks, variants)):
            body, ctrl = _split_control(deck)
            with open(os.path.join(tmp, f"deck{i}.cir"), "w") as f:
                f.write(body)
            script.append(f"source deck{i}.cir")
            runs = [None] if var is None else [_alter_lines(deck, v) for v in var]
            for k, alters in enumerate(runs):
                script += alters or []
                name = f"out{i}.data" if var is None else f"out{i}_{k}.data"
                for line in ctrl:
                    if line.startswith("wrdata "):
                        line = line.replace(OUT_FILE, name, 1)
                    script.append(line)
                script.append("destroy all")
            script.append("remcirc")
        script += [".endc", ".end", ""]
        main = os.path.join(tmp, "main.cir")
        with open(main, "w") as f:
            f.write("\n".join(script))
        t0 = time.perf_counter()
        proc = subprocess.run([NGSPICE or "ngspice", "-b", main], cwd=tmp, capture_output=True,
                              text=True, timeout=timeout)
        if stats is not None:
            stats["seconds"] = time.perf_counter() - t0

        def one(name, deck, what):
            out = os.path.join(tmp, name)
            try:
                if not os.path.exists(out):
                    raise SpiceError(f"ngspice wrote nothing for {what} (exit {proc.returncode}):\n"
                                     f"{proc.stdout[-2000:]}\n{proc.stderr[-2000:]}")
                return _check(deck, _read(out, proc), f"{what}: ")
            except SpiceError:
                if partial:
                    return None
                raise

        results = []
        for i, (deck, var) in enumerate(zip(decks, variants)):
            if var is None:
                results.append(one(f"out{i}.data", deck, f"deck {i}"))
            else:
                results.append([one(f"out{i}_{k}.data", deck, f"deck {i} variant {k}") for k in range(len(var))])
        return results


def _alter_lines(deck: str, factors: Mapping[str, float]) -> list[str]:
    """ngspice ``alter``/``altermod`` commands that apply factors to a deck's nominal values."""
    values, diodes = {}, {}
    for line in deck.splitlines():
        if line.startswith("* value: "):
            name, inst, val = line[len("* value: "):].split()
            values[name] = (inst, float(val))
        elif line.startswith("* diode: "):
            parts = line[len("* diode: "):].split()
            diodes[parts[0]] = (parts[1], float(parts[2]), len(parts) > 3)
    out = []
    for name, f in factors.items():
        if name in values:
            inst, val = values[name]
            out.append(f"alter {inst} = {_num(val * float(f))}")
        elif name in diodes:
            model, i_s, fixed = diodes[name]
            if fixed:
                raise ValueError(f"diode {name}: a deck written with reverse_constants=True cannot vary I_s")
            out.append(f"altermod {model} IS = {_num(i_s * float(f))}")
    return out


def _points(deck: str) -> int | None:
    for line in deck.splitlines():
        if line.startswith("* points: "):
            return int(line[len("* points: "):])
    return None


def _check(deck: str, data: np.ndarray, what: str) -> np.ndarray:
    """Drop the sweep column after checking the shape against the deck's comments."""
    cols, pts = columns(deck), _points(deck)
    if data.shape[1] != len(cols) + 1:
        raise SpiceError(f"{what}ngspice wrote {data.shape[1] - 1} columns, the deck names {len(cols)}")
    if pts is not None and data.shape[0] != pts:
        raise SpiceError(f"{what}ngspice wrote {data.shape[0]} sweep points of {pts} (no convergence?)")
    return data[:, 1:]


def _split_control(deck: str):
    """The deck without its .control block, and the block's commands (set/option lines dropped)."""
    body, ctrl, inside = [], [], False
    for line in deck.splitlines():
        low = line.strip().lower()
        if low == ".control":
            inside = True
        elif low == ".endc":
            inside = False
        elif inside:
            if not (low.startswith("set ") or low.startswith("option ")):
                ctrl.append(line)
        else:
            body.append(line)
    return "\n".join(body) + "\n", ctrl


def simulate(engine, state, kind, stimuli, temperature_k=None, r_source_ohm=0.0, **kwargs) -> dict:
    """:func:`netlist` + :func:`run`, as a dict of columns by name (arrays of shape (S,))."""
    deck = netlist(engine, state, kind, stimuli, temperature_k, r_source_ohm, **kwargs)
    out = {}
    for names, col in zip(columns(deck), run(deck).T):
        for name in names.split("="):
            out[name] = col
    for n in kwargs.get("nodes") or ():
        out.setdefault(f"v:{n}", np.zeros(len(out["applied"])))
    return out
