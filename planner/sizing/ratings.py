"""Part ratings: the linear estimate of stresses, the rating ladder and the splits.

The stresses come from the sized network with its diodes left out (or a clamp
node shorted to common), solved by the same compiler and solver as every
analysis (:func:`planner.network.compile_state`, :func:`planner.solve.solve`)
without an Engine: the sizer never builds one. The rules are in
``docs/sizing.md`` (section 4).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from dataclasses import dataclass, field

import numpy as np

from .. import network as nw
from ..categories import category_impulse
from ..errors import SolveError
from ..model import Contact, NetworkSpec, Position, Resistor, ResistorParts, Spec
from ..parts.fuse import fuse_let_through
from ..parts.fusible import time_to_open_s
from ..parts.ptc import time_to_trip_s
from ..parts.resistor import SHORT_OVERLOAD_POWER_FACTOR, SHORT_OVERLOAD_S
from ..solve import Junctions, solve
from ..solve.memo import Kept
from ..tools import fmt
from .assemble import PartRow
from .layout import COM, PLUS, Layout, SegmentPlan
from .sections.rectifier import nominal_error
from .request import line_of_key, request_error
from .values import CATALOG_MAX_OHM

__all__ = [
    "MAX_SPLIT",
    "LinearNetwork",
    "rating_cases",
    "Stress",
    "stresses",
    "rating_ladder",
    "Rate",
    "initial_rate",
    "revise_rates",
]

#: Most parts in series one segment is split into.
MAX_SPLIT = 64


class LinearNetwork:
    """The sized network with its diodes open, or with clamp nodes shorted to common.

    Solved by the same compiler and solver as every analysis (nominal values,
    reference temperature), without an engine: with the diodes taken out the
    network is linear, so the result is the bound the rating rules need.
    """

    def __init__(self, spec: Spec, net: NetworkSpec):
        self.spec = spec
        self.elements = tuple(e for e in net.elements if e.stamp not in ("junction", "varistor"))
        self.names = tuple(e.name for e in self.elements if e.rated)  # the rated elements, as a row's columns
        self.positions = net.positions
        # on AC (rectifier) voltage positions the diodes conduct: shorted, the multiplier sees the
        # whole input (rms), the bound its rating needs; on AC current positions they stay open, so
        # the shunt takes the whole input current
        ac = tuple(p.name for p in net.positions if p.kind.waveform != "dc" and p.kind.source == "voltage")
        self._conducting = tuple(Contact(f"__conducting_{e.name}", *e.nodes, ac)
                                 for e in net.elements if e.stamp == "junction") if ac else ()
        self._nets: dict[tuple, NetworkSpec] = {}
        self._cases: dict[tuple, tuple | None] = {}  # (shorted, position) -> what every solve of it reuses
        self.last_input_v = 0.0  # the input terminals' voltage of the last solve [V]
        self._ahead: dict[tuple, tuple] = {}  # (shorted, position, value) -> what solve_ahead found
        self._shape_key = None  # what compiling a case reads of the network (:meth:`_shape`)
        self._ohm: dict[int, float] = {}  # element index -> nominal resistance at the reference [ohm]
        self._emf: dict[int, float] = {}  # element index -> EMF at its "max" level [V]
        self._open: dict[str, tuple] = {}  # position -> its live part with no node shorted (:meth:`_live`)
        self._emfs = any(e.emf() != 0.0 for e in self.elements)
        self._records = None  # the records of the elements and conducting contacts (:meth:`_reads`)
        self._open_reads: dict[str, tuple] = {}  # position -> what its open case reads of the elements (:meth:`_reads`)
        self._pins = tuple(e.nodes for e in self.elements if e.rated) + ((PLUS, COM),)  # rated parts, then the input

    def _net(self, shorted) -> NetworkSpec:
        key = tuple(shorted)
        if key not in self._nets:
            shorts = tuple(Contact(f"__short{j}", node, COM, tuple(p.name for p in self.positions))
                           for j, node in enumerate(shorted))
            self._nets[key] = NetworkSpec(self.elements + self._conducting + shorts, self.positions, None)
        return self._nets[key]

    def solve(self, pos: Position, value: float, shorted=()):
        """Voltage across every rated element [V] for ``value`` on ``pos``; None when the input is shorted.

        Parameters
        ----------
        pos : Position
        value : float
            The source at the input [V] or [A], as the position's kind drives it.
        shorted : sequence of str
            Nodes joined to common for this case.

        Notes
        -----
        A value solved ahead by :meth:`solve_ahead` is taken from there.
        """
        row = self.solve_row(pos, value, shorted)
        return None if row is None else dict(zip(self.names, row.tolist()))

    def solve_row(self, pos: Position, value: float, shorted=()) -> np.ndarray | None:
        """:meth:`solve` as an array: the voltage across each element of :attr:`names` [V] (not to be changed)."""
        got = self._ahead.get((tuple(shorted), pos.name, float(value)))
        if got is None:
            got = self._solve_values(tuple(shorted), pos.name, [float(value)])
            if got is None:
                return None
            got = got[0]
        row, self.last_input_v = got
        return row

    def solve_ahead(self, requests) -> None:
        """Solve many (position, value, shorted nodes) cases, each circuit once for all its values.

        Every case of one position with the same nodes shorted is the same linear
        circuit at another input value: its values go to the solver as the columns
        of one stimulus (the same equations, one factorisation). :meth:`solve` then
        answers them from here. A circuit the solver refuses is left to
        :meth:`solve`, value by value, as without this step.
        """
        groups: dict[tuple, list[float]] = {}
        for pos, value, shorted in requests:
            vals = groups.setdefault((tuple(shorted), pos.name), [])
            if float(value) not in vals:
                vals.append(float(value))
        for (shorted, name), vals in groups.items():
            got = self._solve_values(shorted, name, vals)
            if got is not None:
                for v, answer in zip(vals, got):
                    self._ahead[(shorted, name, v)] = answer

    def _solve_values(self, shorted: tuple, position: str, values: list[float]):
        """(voltages over :attr:`names`, input voltage) for each value of one case; None when it does not solve.

        The node voltages of a case are kept for the process by what the case reads
        (:meth:`_reads`): another sizing whose network holds the case alike (the same
        parts between the same live nodes: a protection combination that differs in
        parts off this position's circuit, the same values found again) reads its
        parts' voltages from them. What a miss solves is what this network's own
        compiled case gives, node by node.
        """
        live = self._live(shorted, position)
        key = self._reads(shorted, position, live, values)
        got = _SOLVED.get(key)
        if got is None:
            got = _SOLVED.keep(key, self._node_voltages(shorted, position, values, live))
        if got[0] is None:
            return None
        return self._rows(got[0], got[1], live, len(values))

    def _node_voltages(self, shorted: tuple, position: str, values: list[float], live) -> tuple:
        """(node -> index for the live nodes, index -> voltage [V] per value, held) of a case solved here; the first
        two None when it does not solve. ``held``: the spec's catalogue, movement and ambient (what the values read),
        kept with the answer so that the ids in its key (:meth:`_reads`) name no other objects."""
        held = (self.spec.parts, self.spec.movement, self.spec.ambient)
        case = self._case(shorted, position)
        if case is None:
            return None, None, held
        c, r, z, emf, _ = case
        try:
            sol = solve(c, r, Junctions(z, z, z, z, z, z), np.array(values), emf=emf)
        except SolveError:
            return None, None, held
        at = {n: i for n, i in c.node_index.items() if n in live[0]}
        index = sorted(set(at.values()))
        row = {i: k for k, i in enumerate(index)}
        volts = np.array([sol.node_voltage(i)[0] for i in index]).reshape(len(index), len(values))
        return {n: row[i] for n, i in at.items()}, volts, held

    def _rows(self, at: dict, volts: np.ndarray, live, n: int) -> list:
        """(voltages over :attr:`names`, input voltage) per value from a case's node voltages
        (``at``: live node -> its row of ``volts``).

        A pin's node is the live node's index, or that of the live node a dangling node
        hangs on (as :func:`planner.network.compile_state` indexes it); a pin on no node
        of the circuit reads zero.
        """
        nodes, alias = live

        def index(node):
            if node in nodes:
                return at.get(node)
            hung = alias.get(node)
            return None if hung is None else at.get(hung)

        ends = [(index(a), index(b)) for a, b in self._pins]
        used = list(dict.fromkeys(i for pair in ends for i in pair if i is not None))
        row = {i: k for k, i in enumerate(used)}
        ia = np.array([len(used) if a is None else row[a] for a, _ in ends], dtype=np.intp)
        ib = np.array([len(used) if b is None else row[b] for _, b in ends], dtype=np.intp)
        # the voltage of every node a pin touches, and a row of zeros for a pin on no node of the circuit
        v = np.concatenate([volts[used], np.zeros((1, n))])
        dv = (v[ia] - v[ib]).T  # (values, pins): the rated elements, then the input terminals
        return [(dv[k, :-1], float(dv[k, -1])) for k in range(n)]

    def _reads(self, shorted: tuple, position: str, live, values) -> tuple:
        """What solving a case reads, as a key (:data:`_SOLVED`).

        The spec's catalogue, movement and ambient (by identity: the sizings of one
        command share them), the position, the shorted nodes, the live nodes and the
        elements on them (:func:`planner.network.live_elements`: each part's values and
        ratings, the shorts' contacts among them) and the input values.
        """
        if self._records is None:
            self._records = [nw.record(e) for e in self.elements + self._conducting]
        net = self._net(shorted)
        p = net.position(position)
        if live is self._open[position]:
            # the open position's live part: its elements as there, then the shorts' contacts (last in the
            # network; closed in every position, so they change no other element's state)
            opened = self._open_reads.get(position)
            if opened is None:
                open_net = self._net(())
                st = nw.SwitchState(p.name, nw.POSITION, p, nw.closed_contacts(open_net, p.name))
                opened = self._open_reads[position] = (nw.live_elements(open_net, st, live[0], self._records),
                                                       tuple(sorted(live[0])))
            shorts = NetworkSpec(net.elements[len(self._records):], net.positions, None)
            st = nw.SwitchState(p.name, nw.POSITION, p, nw.closed_contacts(shorts, p.name))
            parts, nodes = opened[0] + nw.live_elements(shorts, st, live[0]), opened[1]
        else:
            st = nw.SwitchState(p.name, nw.POSITION, p, nw.closed_contacts(net, p.name))
            records = self._records + [nw.record(e) for e in net.elements[len(self._records):]]
            parts, nodes = nw.live_elements(net, st, live[0], records), tuple(sorted(live[0]))
        return (id(self.spec.parts), id(self.spec.movement), id(self.spec.ambient), nw.record(p), shorted,
                nodes, parts, tuple(values))

    def _shape(self) -> tuple | None:
        """What compiling a case reads of the network, values left out, as a key; None when it cannot be made.

        Each element's designator, kind, stamp and nodes, whether it holds an EMF, and
        whether it is in circuit and merges its nodes in each position (the diodes'
        conducting contacts among them); each position's name, input terminals and
        source. The shorted nodes' contacts, closed in every position, are added by
        the case. As :func:`planner.network.topology_key` for every position at once:
        two sizings that differ in values alone share it.
        """
        if self._shape_key is None:
            els = self.elements + self._conducting
            if any(e.name.startswith("__short") for e in els):  # a name the shorted nodes' contacts take
                return None
            closed = [nw.closed_contacts(NetworkSpec(els, self.positions, None), p.name) for p in self.positions]
            self._shape_key = (
                tuple((e.name, e.kind, e.stamp, e.nodes, e.emf() != 0.0, tuple(e.present(cl) for cl in closed),
                       tuple(e.merges(cl) for cl in closed)) for e in els),
                tuple((p.name, p.input, p.kind.source) for p in self.positions))
        return self._shape_key

    def _case(self, shorted: tuple, position: str):
        """The compiled state, branch resistances, EMFs and pins of one (shorted, position) case.

        Made once per network and case: every rating case of that position with those
        nodes shorted solves the same circuit at another input value. The compiled
        state and the pins (which node each rated element's ends are) depend on the
        network's shape alone (:meth:`_shape`): they are kept for the process
        (:data:`_CASES`) and shared by the networks of other sizings that differ
        in values only; the resistances and EMFs are this network's. None when the
        state does not compile.
        """
        key = (shorted, position)
        if key not in self._cases:
            net = self._net(shorted)
            shape = self._shape()
            skey = None if shape is None else (shape, shorted, position)
            compiled = _CASES.get(skey) if skey is not None else None
            if compiled is None:
                compiled = _compile_case(self.spec, net, position, [el for el in self.elements if el.rated],
                                         self._live(shorted, position))
                if skey is not None:
                    _CASES.keep(skey, compiled)
            if compiled is False:
                self._cases[key] = None
                return None
            c, branch_at, pins = compiled
            try:
                r, e = self._values(net, c, branch_at)
            except SolveError:
                self._cases[key] = None
                return None
            self._cases[key] = (c, r, np.zeros((1, 0)), e, pins)
        return self._cases[key]

    def _live(self, shorted: tuple, position: str) -> tuple:
        """A case's live part (:func:`planner.network.live_part`), from its position with no node shorted where it can.

        Each short is an edge between a clamp node and common; where both are nodes of
        the position's current-carrying block, the block and what hangs on it stay as
        they are (an edge inside a biconnected block joins no other node to it), so the
        case's live part is the open position's, found once per position. Otherwise
        (a shorted node outside the block, or an EMF in the network, where a battery
        outside the block would change it) the shorted network's own.
        """
        if position not in self._open:
            self._open[position] = self._live_of((), position)
        live, _ = opened = self._open[position]
        if not shorted or (not self._emfs and COM in live and all(n in live for n in shorted)):
            return opened
        return self._live_of(shorted, position)

    def _live_of(self, shorted: tuple, position: str) -> tuple:
        """A case's live part, kept for the process by the network's shape (:meth:`_shape`): topology alone."""
        key = None if self._shape() is None else (self._shape(), shorted, position)
        hit = _LIVES.get(key) if key is not None else None
        if hit is None:
            net = self._net(shorted)
            p = net.position(position)
            hit = nw.live_part(net, nw.SwitchState(p.name, nw.POSITION, p, nw.closed_contacts(net, p.name)), keep=False)
            if key is not None:
                _LIVES.keep(key, hit)
        return hit

    def _values(self, net: NetworkSpec, c, branch_at):
        """Branch resistances (1, L) [ohm] and EMFs (1, L) [V] (None when all are zero) of a compiled case."""
        if not c.branches:
            return np.zeros((1, 0)), None
        dt = np.zeros((1, 1))
        ohm, emf = self._ohm, self._emf
        for j in branch_at:
            if j not in ohm:
                el = net.elements[j]
                ohm[j] = np.broadcast_to(el.resistance(self.spec, dt), (1, 1))[0, 0]
                emf[j] = el.emf("max")
        r = np.array([[ohm[j] for j in branch_at]], dtype=float)
        e = np.array([[emf[j] if br.role != "source" else 0.0 for j, br in zip(branch_at, c.branches)]])
        return r, (e if np.any(e != 0.0) else None)


#: Compiled rating cases by the linear network's shape, shorted nodes and position
#: (:meth:`LinearNetwork._case`).
_CASES = Kept(4096)
#: Live parts of rating cases by the network's shape, shorted nodes and position (:meth:`LinearNetwork._live_of`).
_LIVES = Kept(4096)
#: Node voltages of solved rating cases by what they read (:meth:`LinearNetwork._reads`):
#: the sizings of one command that hold a case alike solve it once.
_SOLVED = Kept(4096)


def _compile_case(spec: Spec, net: NetworkSpec, position: str, rated, live: tuple | None = None):
    """(compiled state, element index of each branch, pins) of one position of ``net``; False when it does not compile.

    The pins are the rated elements' names, the node indices the solution is read at,
    and for each rated element (then the input terminals) the rows of its two ends in
    those voltages (the last row for an end on no node of the circuit: zero). ``live``:
    the state's live part when known (:meth:`LinearNetwork._live`).
    """
    p = net.position(position)
    st = nw.SwitchState(p.name, nw.POSITION, p, nw.closed_contacts(net, p.name))
    try:
        c = nw.compile_state(spec, st, net=net, live=live)
    except SolveError:
        return False
    at = {e.name: j for j, e in enumerate(net.elements)}
    branch_at = tuple(at[br.element] for br in c.branches)
    idx = c.node_index.get
    ends = [(idx(el.nodes[0]), idx(el.nodes[1])) for el in rated]
    ends.append((idx(PLUS), idx(COM)))  # the input terminals
    used = list(dict.fromkeys(i for pair in ends for i in pair if i is not None))
    row = {i: k for k, i in enumerate(used)}
    ia = np.array([len(used) if a is None else row[a] for a, _ in ends], dtype=np.intp)
    ib = np.array([len(used) if b is None else row[b] for _, b in ends], dtype=np.intp)
    return c, branch_at, ([el.name for el in rated], tuple(used), ia, ib)


def rating_cases(spec: Spec, layout: Layout):
    """(label, position, value, shorted nodes, is_full_scale) of every rating case.

    Every position at its full scale; every position driven by a voltage under
    ``faults.max_input`` (when it exceeds the full scale) with each clamp node
    open and shorted to common, in every combination. On a position a crowbar
    behind a fuse serves (``layout.crowbars``) the maximum input fires it, so
    the crowbar node is shorted too (the fuse opens: a pulse), and one more
    case takes the highest input the fuse stands for good: the voltage at which
    the crowbar carries the fuse's rated current, crowbar open.
    """
    out = []
    vmax = spec.faults.max_input_v
    corners = [
        tuple(s) for r in range(len(layout.clamp_nodes) + 1) for s in itertools.combinations(layout.clamp_nodes, r)
    ]
    for p in layout.positions:
        drive = p.kind.full_scale_drive(p)
        out.append((f"full scale on {p.name}", p, drive, (), True))
        if p.kind.source == "voltage" and vmax is not None and vmax > drive:
            for sh in corners:
                how = "" if not sh else f", clamp at {'+'.join(sh)} shorted"
                fired = tuple(node for node, served, _ in layout.crowbars if p.name in served)
                out.append((f"{fmt(vmax, 'V')} max input on {p.name}{how}", p, vmax, sh + fired, False))
                for node, served, v_hold in layout.crowbars:
                    if p.name in served and v_hold < vmax:
                        out.append((f"{fmt(v_hold, 'V')} on {p.name}, just below its crowbar's fuse current{how}",
                                    p, v_hold, sh, False))
    return out


@dataclass
class Stress:
    """Worst stresses over the rating cases, per part and per segment [V], [W]."""

    v: dict[str, float] = field(default_factory=dict)  # worst |V| per element
    p: dict[str, float] = field(default_factory=dict)  # worst P per element
    v_fs: dict[str, float] = field(default_factory=dict)
    p_fs: dict[str, float] = field(default_factory=dict)
    seg_v: list[float] = field(default_factory=list)
    seg_p: list[float] = field(default_factory=list)
    seg_v_fs: list[float] = field(default_factory=list)
    seg_p_fs: list[float] = field(default_factory=list)
    seg_case: list[str] = field(default_factory=list)
    errors: dict[str, float] = field(default_factory=dict)  # position -> relative error


class _Tally:
    """The rating cases' element voltages, gathered a row per case and reduced into a :class:`Stress` at the end.

    A row holds the voltage across each rated element (:attr:`LinearNetwork.names`) [V],
    with whether it is a full-scale case, the powers a protective part's pulse gives
    (None: :math:`V^2 / R`), its crest factor and its label. :meth:`into` takes the worst
    of every column over the rows, as adding the cases one by one would: the same
    products, the same sums in the same order, the first worst case named.
    """

    def __init__(self, names, values: dict, seg_parts):
        col = {n: k for k, n in enumerate(names)}
        zero = len(names)  # a column of zeros: a name no row holds
        self.res = list(values)
        self.res_col = np.array([col.get(n, zero) for n in self.res], dtype=np.intp)
        self.res_ohm = np.array([values[n] for n in self.res], dtype=float)
        self.segs = []
        for parts in seg_parts:
            units = {}  # a segment's series units, each by its first part
            for name, val, a, b in parts:
                units.setdefault((a, b), col.get(name, zero))
            self.segs.append(([(name, col.get(name, zero), val) for name, val, _, _ in parts], list(units.values())))
        self.rows, self.fs, self.powers, self.crest, self.labels = [], [], [], [], []

    def add(self, row: np.ndarray, fs: bool, powers: dict | None, crest: float, label: str) -> None:
        self.rows.append(row)
        self.fs.append(fs)
        self.powers.append(powers)
        self.crest.append(crest)
        self.labels.append(label)

    def into(self, st: Stress) -> None:
        """The worst voltage and power of each part and segment over the rows, into ``st`` (its segments' lists
        made, its part dictionaries empty)."""
        if not self.rows:
            return
        d = np.array(self.rows)
        d = np.concatenate([d, np.zeros((len(d), 1))], axis=1)
        fs = np.array(self.fs, dtype=bool)
        crest = np.array(self.crest, dtype=float)
        paced = [i for i, pw in enumerate(self.powers) if pw is not None]
        v = np.abs(d[:, self.res_col])
        p = v * v / self.res_ohm
        for i in paced:
            pw = self.powers[i]
            p[i] = [pw.get(n, p[i, k]) for k, n in enumerate(self.res)]
        v = v * crest[:, None]  # the peak of a wave given as rms: what the limiting element voltage is held against
        st.v.update(zip(self.res, np.max(v, axis=0, initial=0.0).tolist()))
        st.p.update(zip(self.res, np.max(p, axis=0, initial=0.0).tolist()))
        if fs.any():
            st.v_fs.update(zip(self.res, np.max(v[fs], axis=0, initial=0.0).tolist()))
            st.p_fs.update(zip(self.res, np.max(p[fs], axis=0, initial=0.0).tolist()))
        sq = np.array([[x ** 2 for x in r] for r in d.tolist()])  # V^2 as the parts' powers are summed
        for j, (parts, units) in enumerate(self.segs):
            if not parts:
                continue
            sp = None  # a segment's power: the sum over its parts
            for name, k, val in parts:
                term = sq[:, k] / val
                for i in paced:
                    term[i] = self.powers[i].get(name, term[i])
                sp = term if sp is None else sp + term
            sv = d[:, units[0]]  # its voltage: the sum over its series units
            for k in units[1:]:
                sv = sv + d[:, k]
            sv = np.abs(sv) * crest
            worst = int(np.argmax(sp))
            if sp[worst] > st.seg_p[j]:
                st.seg_p[j] = float(sp[worst])
                st.seg_case[j] = self.labels[worst]
            st.seg_v[j] = max(st.seg_v[j], float(np.max(sv)))
            if fs.any():
                st.seg_v_fs[j] = max(st.seg_v_fs[j], float(np.max(sv[fs])))
                st.seg_p_fs[j] = max(st.seg_p_fs[j], float(np.max(sp[fs])))


def stresses(spec: Spec, layout: Layout, net: NetworkSpec, seg_parts: list[list[PartRow]], *,
             errors: bool = True) -> Stress:
    """The worst voltage and power of every part and segment, and each position's nominal error.

    ``errors=False`` leaves the nominal errors out (``Stress.errors`` empty): the ideal network's
    rates need none, and an AC position's costs a rectifier solve.

    Notes
    -----
    P = V^2 / R per resistor; a segment's voltage is the sum over its series units,
    its power the sum over its parts. The nominal error of a position is
    I_m / I_fs - 1 at full scale, I_m = V_M1 / R_m. On an AC position the value is
    the rms of a sine: the power is the rms one, the voltage its peak
    (:math:`\\sqrt 2 V_{rms}`), as :func:`planner.findings.design_findings` judges it.

    On a network without AC positions the figures are those of its linear part
    alone (the diodes are left out), so two networks that differ in their diodes
    only (a clamp request's models, directions or counts) share them: they are
    kept by what they are computed from (:func:`_stress_key`) and a copy given
    again.
    """
    key = _stress_key(spec, layout, net, seg_parts, errors)
    if key is None:
        return _stresses(spec, layout, net, seg_parts, errors)
    got = _STRESSES.get(key[0])
    if got is None:
        got = _STRESSES.keep(key[0], (_stresses(spec, layout, net, seg_parts, errors), key[1]))
    return _copy_stress(got[0])


#: Stresses kept by what they are computed from (:func:`stresses`).
_STRESSES = Kept(64)


def _stress_key(spec: Spec, layout: Layout, net: NetworkSpec, seg_parts, errors: bool):
    """(key, what it refers to) of what :func:`_stresses` reads; None when the diodes take part.

    The spec's fields but its clamp requests (by identity: the key holds them, so
    no other object can take their place while it is kept), the network's linear
    elements and positions, the layout's positions, clamp nodes and crowbars (the
    rating cases), the parts of each segment, and whether errors are asked. A
    network with an AC position is left out: its rectifier's diodes (and the
    clamps', through the rectifier solve of its nominal error) take part.
    """
    if any(p.kind.waveform != "dc" for p in tuple(net.positions) + tuple(layout.positions)):
        return None
    held = tuple(getattr(spec, f.name) for f in dataclasses.fields(spec) if f.name != "clamps")
    key = (tuple(map(id, held)),
           tuple(e for e in net.elements if e.stamp not in ("junction", "varistor")), tuple(net.positions),
           tuple(layout.positions), tuple(layout.clamp_nodes),
           tuple((node, tuple(served), float(v)) for node, served, v in layout.crowbars),
           tuple(tuple(tuple(row) for row in parts) for parts in seg_parts), bool(errors))
    return key, held


def _copy_stress(st: Stress) -> Stress:
    """A copy of a Stress whose containers can be changed without changing the original."""
    return Stress(dict(st.v), dict(st.p), dict(st.v_fs), dict(st.p_fs), list(st.seg_v), list(st.seg_p),
                  list(st.seg_v_fs), list(st.seg_p_fs), list(st.seg_case), dict(st.errors))


def _stresses(spec: Spec, layout: Layout, net: NetworkSpec, seg_parts: list[list[PartRow]],
              errors: bool) -> Stress:
    """:func:`stresses`, computed."""
    lin = LinearNetwork(spec, net)
    ladder = rating_ladder(spec)
    pulses = ladder_pulses(spec, ladder)
    st = Stress()
    nseg = len(seg_parts)
    st.seg_v, st.seg_p = [0.0] * nseg, [0.0] * nseg
    st.seg_v_fs, st.seg_p_fs = [0.0] * nseg, [0.0] * nseg
    st.seg_case = [""] * nseg
    values = {e.name: e.value_ohm for e in net.elements if isinstance(e, Resistor)}
    m = spec.movement
    vmax = spec.faults.max_input_v
    cases, impulses = rating_cases(spec, layout), impulse_cases(spec, layout)
    lin.solve_ahead([(pos, value, shorted) for _, pos, value, shorted, _ in cases] +
                    [(pos, value, shorted) for _, pos, value, shorted in impulses])
    tally = _Tally(lin.names, values, seg_parts)
    col = {n: k for k, n in enumerate(lin.names)}
    guards = [e for e in net.elements if _guards(e)]

    def by_name(row, names):
        return {n: float(row[col[n]]) for n in names if n in col}

    def acting(row):  # how soon a protective part acts in this case [s], None when none does
        return protective_time(spec, guards, by_name(row, (e.name for e in guards)))

    def powers_for(row, t_act):
        dv = by_name(row, values)
        return {n: equivalent_power_w(dv.get(n, 0.0) ** 2 / r, t_act, ladder, pulses) for n, r in values.items()}

    for label, pos, value, shorted, fs in cases:
        row = lin.solve_row(pos, value, shorted)
        if row is None:
            continue
        if fs and errors and pos.kind.waveform != "dc":  # an AC position: solved through its rectifier
            st.errors[pos.name] = nominal_error(spec, net, pos)
        elif fs and errors and pos.center is None:  # an ohms position has no linear full scale (docs/ohms.md)
            i_m = float(row[col["M1"]]) / m.r_coil_ohm
            st.errors[pos.name] = i_m / m.i_fs_a - 1.0
        powers = None
        t_act = None if fs else acting(row)
        if t_act is not None:  # a protective part acts first: each part rated for the pulse until it does
            powers = powers_for(row, t_act)
            label += f" (until the protection acts, {t_act:.3g} s)"
        # an AC position is read with a sine, and the maximum input comes as a sine too (faults' max input
        # sine): the peak is what the limiting element voltage is held against
        crest = math.sqrt(2.0) if pos.kind.waveform == "sine" else 1.0
        tally.add(row, fs, powers, crest, label)
        separate = pos.kind.waveform != "dc" or (spec.current is not None and spec.current.arrangement == "separate")
        if fs and separate and pos.kind.source == "current" and vmax is not None and lin.last_input_v > 0.0:
            # the maximum input voltage across a separate (or AC) shunt: its current is vmax / R_in (linear,
            # diodes open), and its parts carry that pulse until the fuse ahead of them clears (a ring is
            # left to its crowbar and fuse, judged by the faults analysis)
            row = lin.solve_row(pos, value * vmax / lin.last_input_v, shorted)
            if row is None:
                continue
            t_act = acting(row)
            powers = None if t_act is None else powers_for(row, t_act)
            mlabel = f"{fmt(vmax, 'V')} max input on {pos.name}" + (
                "" if t_act is None else f" (until the protection acts, {t_act:.3g} s)")
            tally.add(row, False, powers, 1.0, mlabel)
    zero = {n: 0.0 for n in values}
    for label, pos, value, shorted in impulses:  # peak voltage only: no heating
        row = lin.solve_row(pos, value, shorted)
        if row is not None:
            tally.add(row, False, zero, 1.0, label)
    tally.into(st)
    return st


def impulse_cases(spec: Spec, layout: Layout):
    """(label, position, peak [V], shorted nodes) of the declared category's impulse on every voltage position.

    The rated impulse of ``faults.category`` (:func:`planner.categories.category_impulse`)
    from an ideal source, each clamp node open and shorted: an upper bound of the
    peak voltage across every part (the source impedance and the varistors only
    lower it). Judged on the limiting element voltage alone (an impulse is too
    short to heat a part).
    """
    if not spec.faults.category:
        return []
    v_imp, _, label = category_impulse(spec.faults.category)
    corners = [tuple(s) for r in range(len(layout.clamp_nodes) + 1)
               for s in itertools.combinations(layout.clamp_nodes, r)]
    return [(f"{label} impulse {fmt(v_imp, 'V')} on {p.name}" + (f", clamp at {'+'.join(sh)} shorted" if sh else ""),
             p, v_imp, sh) for p in layout.positions if p.kind.source == "voltage" for sh in corners]


def _guards(e) -> bool:
    """Whether an element is one :func:`protective_time` reads: a PTC, a fusible resistor, a fuse."""
    return e.kind in ("ptc", "fuse") or (e.kind == "resistor" and getattr(e, "fusible", False))


def protective_time(spec: Spec, elements, dv: dict) -> float | None:
    """How soon a protective part acts in a linear rating case [s] (None: none within the 5 s short-time overload).

    Of ``elements`` (a network's, or only its :func:`_guards`), with ``dv`` the voltage
    across each by name [V]: the input PTC trips (:func:`planner.parts.ptc.time_to_trip_s`
    at its cold-state current), a fusible resistor opens
    (:func:`planner.parts.fusible.time_to_open_s` at its power), a fuse clears
    (:func:`planner.parts.fuse.fuse_let_through`); the first of them ends the pulse the
    other parts carry.
    """
    t = math.inf
    for e in elements:
        v = abs(dv.get(e.name, 0.0))
        if e.kind == "ptc":
            m = spec.parts.ptcs[e.model]
            tt = time_to_trip_s(m, v / m.r_cold_ohm)
        elif e.kind == "resistor" and getattr(e, "fusible", False):
            tt = time_to_open_s(e.fusing, v * v / e.value_ohm)
        elif e.kind == "fuse":
            f = spec.parts.fuses[e.model]
            lt = fuse_let_through(f, v / f.r_cold_ohm) if f.r_cold_ohm > 0 else None
            tt = lt["event_time_s"] if lt else None
        else:
            continue
        if tt is not None:
            t = min(t, tt)
    return t if t <= SHORT_OVERLOAD_S else None


def ladder_pulses(spec: Spec, ladder) -> list:
    """The single-pulse energy [J] of each rating of the ladder (None where the catalogue gives none)."""
    rp = spec.parts.resistors
    out = []
    for pw, vr in ladder:
        pe = None
        for k, p in enumerate(rp.power_ratings_w):
            if p == pw and k < len(rp.pulse_energies_j):
                pe = rp.pulse_energies_j[k]
        if pe is None and pw == rp.power_w:
            pe = rp.pulse_energy_j
        out.append(pe)
    return out


def equivalent_power_w(p_w: float, t_s: float, ladder, pulses) -> float:
    r"""The continuous rating a part needs to carry ``p_w`` for ``t_s`` [W].

    Notes
    -----
    The first rating :math:`P_r` of the ladder whose pulse limit carries the
    energy, :math:`P t \le \max(E_{pulse}, 6.25 P_r t)` (IEC 60115-1 short-time
    overload, from memory; the maker's single-pulse energy); with none, ``p_w``
    itself (no rating carries it: the sizer falls back as for any misrange).
    """
    e = p_w * t_s
    for (pr, _), pe in zip(ladder, pulses):
        if e <= max(pe or 0.0, SHORT_OVERLOAD_POWER_FACTOR * pr * t_s):
            return min(p_w, pr)
    return p_w


def rating_ladder(spec: Spec) -> list[tuple[float, float]]:
    """(power [W], limiting element voltage [V]) the sizer may use, ascending."""
    rp: ResistorParts = spec.parts.resistors
    pw = tuple(rp.power_ratings_w)
    if not pw:
        return [(rp.power_w, rp.max_voltage_v)]
    vs = tuple(rp.max_voltages_v)
    if not vs:
        vs = (rp.max_voltage_v,) * len(pw)
    if len(vs) != len(pw):
        raise request_error(
            spec,
            f"parts.resistors lists {len(pw)} power ratings but {len(vs)} max voltages; give one voltage per rating",
            line_of_key(spec, "ratings"),
        )
    pairs = sorted(zip(pw, vs))
    out = [(p, v) for p, v in pairs if p >= rp.power_w * (1 - 1e-12)]
    if not out or out[0][0] > rp.power_w * (1 + 1e-12):
        out.insert(0, (rp.power_w, rp.max_voltage_v))
    return out


@dataclass
class Rate:
    """A segment's place on the ladder: rating ``index``, split into ``k`` parts, and what decided it.

    ``basis`` is ``worst`` (the misrange is carried), ``full scale`` (no rating
    carries the misrange) or ``none`` (not even full scale is carried).
    """

    index: int
    k: int
    basis: str


def _k_for(v: float, v_max: float) -> int:
    return max(1, math.ceil(v / v_max * (1 - 1e-12)))


def initial_rate(ladder, v, p, v_fs, p_fs, target, *, misrange: bool = True) -> Rate:
    """The smallest rating (and split) that carries the worst case, else full scale.

    A misrange that no rating carries is not designed for (splitting a part that
    burns anyway buys nothing): the full-scale stress decides, and a caution is noted.

    Notes
    -----
    k = max(ceil(V / V_limit), ceil(R / R_catalogue_max)); a rating carries the
    case when k <= MAX_SPLIT and P / k <= P_rated.
    """
    k_cat = max(1, math.ceil(target / CATALOG_MAX_OHM * (1 - 1e-12)))
    bases = (("worst", v, p), ("full scale", v_fs, p_fs)) if misrange else (("full scale", v_fs, p_fs),)
    for basis, vv, pp in bases:
        for i, (pr, vr) in enumerate(ladder):
            k = max(_k_for(vv, vr), k_cat)
            if k <= MAX_SPLIT and pp / k <= pr:
                return Rate(i, k, basis)
    return Rate(len(ladder) - 1, min(MAX_SPLIT, max(_k_for(v_fs, ladder[-1][1]), k_cat)), "none")


def revise_rates(rates: list[Rate], ladder, st: Stress, st0: Stress, seg_parts: list[list[PartRow]],
                 segments: list[SegmentPlan]) -> bool:
    """One step on the chosen parts: a part past its voltage limit gets one more split, past its power one rating.

    ``rates`` is changed in place; ``st`` are the stresses on the chosen parts,
    ``st0`` those of the ideal network (for a segment that falls back to full
    scale). Returns True when any rate changed.
    """
    changed = False
    for j, r in enumerate(rates):
        pr, vr = ladder[r.index]
        if r.basis == "worst":
            vmap, pmap = st.v, st.p
        else:
            vmap, pmap = st.v_fs, st.p_fs
        names = [x[0] for x in seg_parts[j]]
        if any(vmap.get(n, 0.0) > vr * (1 + 1e-9) for n in names) and r.k < MAX_SPLIT:
            r.k += 1
            changed = True
        elif r.basis != "none" and any(pmap.get(n, 0.0) > pr * (1 + 1e-9) for n in names):
            changed = True
            if r.index + 1 < len(ladder):
                r.index += 1
            elif r.basis == "worst":
                rates[j] = initial_rate(
                    ladder, 0.0, 0.0, st0.seg_v_fs[j], st0.seg_p_fs[j], segments[j].target, misrange=False
                )
            else:
                r.basis = "none"
    return changed
