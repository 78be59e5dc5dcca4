"""Clamp placement search: where the diodes go, how many, and what it costs in accuracy.

Diodes straight across the movement start to conduct only when the coil already
carries several times its full-scale current: a silicon junction needs a few
hundred millivolts, while the movement's full-scale voltage I_fs R_m is often
only 50 to 200 mV (common practice). Splitting the multiplier segment next to
the movement and clamping at the tap lets the diodes see the voltage across the
coil *and* the lower part of the split, so they take over at a lower multiple;
but the junction's forward current grows exponentially with its voltage
(Shockley), so the higher the tap, the more reading current the clamp steals at
full scale, and more so when warm (the saturation current rises several-fold per
10 K). Series stacks of diodes move the knee up again. This module searches that
trade-off for a project:

* **sites**: across the movement; each existing tap of the multiplier string
  (nearest first); a split of each resistor next to the movement at a resistance
  ``r`` above it (continuous); each tap and split again with a one-diode pair
  kept across the movement (two-level clamping, for the positions - the current
  ranges of a multimeter - that do not pass through the tapped segment);
* **parts**: the project's diode models, as series stacks of 1 to 3, chosen
  separately for the forward (over-range) and the reverse (reversed leads)
  direction; a model with a breakdown voltage also as a zener stack working in
  breakdown;
* **objective**: the worst movement-current multiple over the project's fault
  stimuli (:func:`planner.faults.stimuli_for`: ``faults.sources``, each DC
  source also reversed, the declared maximum input in both polarities, the range
  up/down misranges, the impulse of the measurement category); where it ties
  (within :data:`TIE`), the next worst position's, and so on (leximax,
  :func:`lex_compare`); then the least power in the clamp's parts;
* **constraints**: on every position, the change of reading the clamps cause
  at the hottest ambient, at 10 % ... 100 % of full scale, within a share of
  the class index (1/4 by default); every clamp diode within its continuous
  ratings under every fault stimulus (a clamp that burns open protects
  nothing).

The discrete choices are searched by a bounded enumeration (a branch-and-bound
over sites and stacks, with bounds from the monotonicity of a stack's clamping
voltage in its diode count); the continuous split by a batched grid, then
:func:`scipy.optimize.brentq` for the edge of the feasible range and
:func:`scipy.optimize.minimize_scalar` (bounded Brent) inside it; the split is
then made of standard values (:func:`planner.size.choose_value`) and the result
evaluated again on the realised network. Every evaluation is a batched call of
:meth:`planner.engine.Engine.operate` (one call per position and stimulus
group solves every split resistance of a grid at once). ``docs/protection.md``
has the method, its sources and how to read the table.

Public API
----------
:func:`protect_project`, :func:`format_protect`, :func:`write_protected`,
:func:`protected_text`.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from dataclasses import dataclass, field, replace
from typing import Callable, Mapping

import networkx as nx
import numpy as np

from . import eseries
from . import network as nw
from .design import Design, as_design, build
from .engine import Engine
from .errors import ProjectError, SolveError, UsageError
from .model import ZERO_CELSIUS_K, ClampRequest, Contact, Diode, NetworkSpec, Resistor, Spec

__all__ = [
    "DEFAULT_SHARE",
    "MAX_CANDIDATES",
    "clamp_diodes",
    "lex_compare",
    "lex_best",
    "lex_score",
    "protect_project",
    "format_protect",
    "protected_text",
    "write_protected",
]

#: Default share of the class index the clamps may cost at the hottest ambient.
DEFAULT_SHARE = 0.25
#: Default cap on the candidate evaluations (each split resistance of a grid counts).
MAX_CANDIDATES = 2000
#: Longest series stack per direction (junction mode).
MAX_STACK = 3
#: Longest zener stack (breakdown mode).
MAX_ZENER_STACK = 2
#: Existing taps of the multiplier string tried as sites, nearest to the movement first.
MAX_TAPS = 3
#: Points of the split grid: geometric from SPLIT_LO to SPLIT_HI of the split resistor.
GRID_POINTS = 16
#: Extra split resistances drawn at random (log-uniform, seeded) besides the grid.
RANDOM_PROBES = 4
SPLIT_LO = 0.01
SPLIT_HI = 0.98
#: Combinations whose split resistance is refined by scipy.optimize after the grid.
REFINE_COMBOS = 3
#: Tolerance of the refined split resistance, as a fraction of it (finer than the
#: 2.4 % steps of E96), and the most evaluations each refinement may take.
REFINE_XTOL_REL = 0.015
REFINE_MAXITER = 8
#: Least relative gain an interior refinement must promise (see :func:`_worth_refining`).
REFINE_GAIN = 0.005
#: Phase points per sine cycle during the search. A multiple of 4 hits both crests
#: exactly, and the movement current of this resistive network peaks at the
#: crest, so the peak multiples are exact; the cycle means (diode current, power)
#: carry the rectangle rule's error, which the reported rows cut to below 0.1 %
#: with :data:`REPORT_PHASE_POINTS`.
SEARCH_PHASE_POINTS = 16
REPORT_PHASE_POINTS = 64
#: Rows of the Pareto table.
PARETO_ROWS = 8
#: Placements within this fraction of the best worst multiple count as equal
#: protection; among them the one with the least power in its parts is chosen.
TIE = 0.02
#: Weight of the next-worst position in the scalar objective (see :func:`lex_score`).
LEX_WEIGHT = 0.01
#: Lower split values tried when the split is made of standard values.
REALISE_TRIES = 4
#: Linearity points, fractions of full scale (those of ``planner check``).
FRACTIONS = np.arange(1, 11) / 10.0

_EXCEED = 1.0 + 1e-9


# =====================================================================================
# Candidates
# =====================================================================================


@dataclass(frozen=True)
class Stack:
    """A series stack of identical diodes in one direction.

    Attributes
    ----------
    model : str
        Diode model in ``parts.diodes``.
    count : int
        Diodes in series.
    mode : {'junction', 'breakdown'}
        ``junction``: the stack conducts forward-biased (anodes toward the tap for
        a forward clamp); ``breakdown``: a zener stack conducting in breakdown
        (cathodes toward the tap for a forward clamp), which also conducts
        forward-biased in the other direction.
    """

    model: str
    count: int
    mode: str = "junction"

    def label(self) -> str:
        z = " zener" if self.mode == "breakdown" else ""
        return f"{self.model}{z} x{self.count}"

    def as_dict(self) -> dict:
        return {"model": self.model, "count": int(self.count), "mode": self.mode, "label": self.label()}


@dataclass(frozen=True)
class Site:
    """Where a clamp can go.

    Attributes
    ----------
    kind : {'movement', 'tap', 'split'}
    label : str
        ``'movement'``, ``'tap t1'``, ``'split R1'``.
    node : str
        The clamp node (movement and tap sites) or the low end of the split resistor.
    element : str or None
        The resistor that is split (split sites).
    r_ohm : float
        Resistance above the movement (taps) or the split resistor's value [ohm].
    pair : str or None
        A diode model of which a one-diode pair (one each way) also stays across
        the movement: two-level clamping, for networks where some positions (the
        current ranges of a multimeter) do not pass through the tapped segment.
    """

    kind: str
    label: str
    node: str
    element: str | None = None
    r_ohm: float = 0.0
    pair: str | None = None


@dataclass(frozen=True)
class Combo:
    """A site with a forward and a reverse stack (either may be None, not both)."""

    site: Site
    forward: Stack | None
    reverse: Stack | None

    @property
    def diodes(self) -> int:
        return ((self.forward.count if self.forward else 0) + (self.reverse.count if self.reverse else 0)
                + (2 if self.site.pair else 0))

    @property
    def parts_count(self) -> int:
        """Parts the clamp adds: its diodes (a movement pair included), plus one resistor for a split."""
        return self.diodes + (1 if self.site.kind == "split" else 0)

    def key(self) -> tuple:
        def k(s):
            return ("", 0, "") if s is None else (s.model, s.count, s.mode)

        return (self.site.label, k(self.forward), k(self.reverse))


# =====================================================================================
# Metrics of a batch
# =====================================================================================


@dataclass
class Metrics:
    """What one batch of candidates does, one entry per row (split resistance).

    Multiples are |I_m| / I_fs; errors in % of full scale; power [W].
    """

    forward: np.ndarray
    reverse: np.ndarray
    forward_case: list
    reverse_case: list
    max_input_forward: np.ndarray
    max_input_reverse: np.ndarray
    error_pct: dict  # position -> (P,) clamp error at the hottest ambient
    total_pct: dict  # position -> (P,) whole error at the hottest ambient
    stress: np.ndarray
    stress_case: list
    power_w: np.ndarray
    pos_forward: dict  # position -> (P,) worst forward multiple on that position
    pos_reverse: dict  # position -> (P,) worst reverse multiple on that position
    failed: str | None = None

    @property
    def worst(self) -> np.ndarray:
        return np.maximum(self.forward, self.reverse)

    def position_worst(self) -> np.ndarray:
        """Worst multiple of each position, shape (P, positions), in position order."""
        return np.column_stack([np.maximum(self.pos_forward[k], self.pos_reverse[k]) for k in self.pos_forward])

    def row(self, i: int) -> "Metrics":
        def pick(x):
            return x[i:i + 1]

        def pick_all(d):
            return {k: pick(v) for k, v in d.items()}

        return Metrics(pick(self.forward), pick(self.reverse), self.forward_case[i:i + 1], self.reverse_case[i:i + 1],
                       pick(self.max_input_forward), pick(self.max_input_reverse), pick_all(self.error_pct),
                       pick_all(self.total_pct), pick(self.stress), self.stress_case[i:i + 1], pick(self.power_w),
                       pick_all(self.pos_forward), pick_all(self.pos_reverse), self.failed)


@dataclass
class _Topology:
    """A candidate network, its engine and what to watch in it."""

    net: NetworkSpec
    engine: Engine
    clamp: tuple  # clamp diode designators
    watch: tuple  # clamp diodes and split resistors: the parts whose power counts
    factor: tuple | None = None  # (upper, lower, R_total, upper_nominal, lower_nominal) for a split on a grid
    bare_key: object = None  # None: readings without clamps are those of the base network
    bare: dict | None = None
    memo: dict = field(default_factory=dict)
    carrying: dict | None = None  # position -> designators that carry current in it
    static: dict = field(default_factory=dict)  # (position, phase points) -> figures that no row changes
    bare_engine: Engine | None = None  # the same network without its clamp diodes


# =====================================================================================
# The search context
# =====================================================================================


def _fresh_number(names, prefix: str) -> int:
    """One more than the largest number of the designators ``<prefix><n>``."""
    top = 0
    for n in names:
        m = re.fullmatch(rf"{prefix}(\d+)", n)
        if m:
            top = max(top, int(m.group(1)))
    return top + 1


def _fresh_node(base: str, taken: set) -> str:
    if base not in taken:
        return base
    k = 2
    while f"{base}{k}" in taken:
        k += 1
    return f"{base}{k}"


def clamp_diodes(net: NetworkSpec) -> list[str]:
    """Designators of the network's clamp diodes.

    A clamp diode is one whose diode-only connected group (a stack and its
    intermediate nodes) reaches the movement's second node: a clamp to the
    movement's common side, at the movement or at a tap.

    Parameters
    ----------
    net : NetworkSpec

    Returns
    -------
    list of str
    """
    mov = nw.movement_element(net)
    g = nx.MultiGraph()
    for e in net.elements:
        if isinstance(e, Diode):
            g.add_edge(e.anode, e.cathode, key=e.name)
    if mov.b not in g:
        return []
    comp = nx.node_connected_component(g, mov.b)
    return [e.name for e in net.elements if isinstance(e, Diode) and e.anode in comp]


class _Search:
    """Everything the search needs about one project, prepared once."""

    def __init__(self, design: Design, share, seed, max_candidates, progress):
        from .faults import stimuli_for
        from .stress import Stimulus

        spec = design.spec
        self.design = design
        self.spec = spec
        self.say = progress or (lambda message: None)
        self.max_candidates = int(max_candidates)
        self.evaluated = 0
        self.reevaluated = 0
        self.pruned = 0
        self.truncated = False
        self.seed = spec.analysis.seed if seed is None else seed
        self.rng = np.random.default_rng(int(self.seed))
        self.class_index = float(spec.movement.class_index)
        if not spec.parts.diodes:
            raise ProjectError("the project lists no diode models under parts.diodes, so there is nothing to place; "
                               "add one, e.g. parts: {diodes: {si_generic: {saturation_current: 5 nA, emission: 1.9}}}",
                               spec.path)
        self.models = list(spec.parts.diodes)
        self.zeners = [k for k, d in spec.parts.diodes.items() if d.bv_v is not None]
        self.series = spec.parts.resistors.series
        self.allowed = spec.analysis.allowed_share * self.class_index / 100.0
        self.sized = spec.network is None
        if self.sized:
            from .sizing import size

            if spec.voltage is None and spec.current is None:
                raise ProjectError("the project has neither a network nor voltage/current ranges to protect",
                                   spec.path)
            self.orig_net = design.net
            self.base_sizing = size(replace(spec, clamps=()))
            base = self.base_sizing.network
        else:
            self.orig_net = design.net
            base = None
        self.movement = nw.movement_element(self.orig_net)
        self.orig_clamp = clamp_diodes(self.orig_net)
        if base is None:
            base = replace(self.orig_net, elements=tuple(e for e in self.orig_net.elements
                                                         if e.name not in self.orig_clamp))
        self.base = base
        self.positions = list(self.base.positions)
        self.t_hot = float(spec.ambient.t_max_k)
        self.limits = {}
        for p in self.positions:
            s = share.get(p.name, DEFAULT_SHARE) if isinstance(share, Mapping) else share
            self.limits[p.name] = float(s) * self.class_index
        # fault stimuli: the matrix's own, and each DC project source reversed
        self.stimuli = {}
        for p in self.positions:
            st = list(stimuli_for(spec, self.base, p))
            for s in spec.faults.sources:
                if s.waveform == "dc" and s.value != 0:
                    st.append(Stimulus(f"{s.name} reversed", s.kind, -s.value, "dc",
                                       s.r_source_ohm if s.kind == "voltage" else 0.0,
                                       s.current_limit_a if s.kind == "voltage" else None,
                                       detail="the project's source with its leads reversed"))
            self.stimuli[p.name] = st
        names = [e.name for e in self.orig_net.elements] + [e.name for e in self.base.elements]
        self.next_r = _fresh_number(names, "R")
        self.next_d = _fresh_number(names, "D")
        self.nodes = {n for e in self.orig_net.elements + self.base.elements for n in e.nodes}
        self.tap_node = _fresh_node("clamp_tap", self.nodes)
        self._bare_base = None
        self._bare_cache = {}

    # --- bookkeeping ---------------------------------------------------------------
    def room(self, rows: int) -> bool:
        """Whether ``rows`` more evaluations fit under the cap."""
        if self.evaluated + rows > self.max_candidates:
            self.truncated = True
            return False
        return True

    # --- sites and stacks ----------------------------------------------------------------
    def sites(self) -> list[Site]:
        """Across the movement, the nearest taps, and a split of each resistor next to the movement."""
        mov = self.movement
        out = [Site("movement", "movement", mov.a)]
        net = self.base
        if self.sized:
            # the sizer's clamp taps split the first multiplier segment (docs/sizing.md)
            roles = {s.name: s.role for s in self.base_sizing.segments}
            seg = next((s for s in self.base_sizing.segments if s.role == "multiplier" and s.parts), None)
            if seg is not None:
                low = seg.low
                for p in seg.parts:
                    e = net.element(p.name)
                    if low in e.nodes and roles.get(e.group) == "multiplier":
                        out.append(Site("split", "chain tap", low, e.name, float(min(e.value_ohm, seg.target_ohm))))
                        break
            return out + self._paired(out)
        terminals = {n for p in net.positions for n in p.input}
        g = nx.Graph()
        for e in net.elements:
            if isinstance(e, Resistor) and mov.b not in e.nodes:
                a, b = e.nodes
                w = g.get_edge_data(a, b, {}).get("weight")
                g.add_edge(a, b, weight=e.value_ohm if w is None else 1.0 / (1.0 / w + 1.0 / e.value_ohm))
        if mov.a in g:
            dist = nx.single_source_dijkstra_path_length(g, mov.a, weight="weight")
            taps = sorted(((d, n) for n, d in dist.items() if d > 0 and n not in terminals and n != mov.b),
                          key=lambda x: (x[0], x[1]))
            for d, n in taps[:MAX_TAPS]:
                out.append(Site("tap", f"tap {n}", n, None, float(d)))
        for e in net.elements:
            if isinstance(e, Resistor) and mov.a in e.nodes and mov.b not in e.nodes and e.a != e.b:
                out.append(Site("split", f"split {e.name}", mov.a, e.name, float(e.value_ohm)))
        return out + self._paired(out)

    def _paired(self, sites: list[Site]) -> list[Site]:
        """Each tap and split site again, with a one-diode pair kept across the movement."""
        pair = self.default_model()
        return [replace(s, label=f"{s.label} + movement pair", pair=pair) for s in sites if s.kind != "movement"]

    def stacks(self, direction: str) -> list[Stack]:
        """Every stack of one direction, strongest (fewest diodes) first within a model."""
        out = [Stack(m, k) for k in range(1, MAX_STACK + 1) for m in self.models]
        out += [Stack(z, k, "breakdown") for k in range(1, MAX_ZENER_STACK + 1) for z in self.zeners]
        return out

    def default_model(self) -> str:
        """The model of most of the project's clamp diodes, else the first model."""
        used = Counter(self.orig_net.element(n).model for n in self.orig_clamp)
        if used:
            return sorted(used.items(), key=lambda kv: (-kv[1], self.models.index(kv[0])))[0][0]
        return self.models[0]

    # --- networks ------------------------------------------------------------------------
    def grid(self, site: Site) -> np.ndarray:
        """Split resistances of the batched grid [ohm], ascending (seeded random probes included)."""
        r = site.r_ohm
        lo, hi = math.log(SPLIT_LO * r), math.log(SPLIT_HI * r)
        pts = list(np.exp(np.linspace(lo, hi, GRID_POINTS)))
        pts += list(np.exp(self.rng.uniform(lo, hi, RANDOM_PROBES)))
        if self.sized:
            pts += [float(c.at) for c in self.spec.clamps
                    if not isinstance(c.at, str) and SPLIT_LO * r <= float(c.at) <= SPLIT_HI * r]
        return np.unique(np.asarray(pts, dtype=float))

    def _stack_elements(self, node: str, ref: str, stack: Stack, direction: str, names, taken) -> list[Diode]:
        toward = (direction == "forward") == (stack.mode == "junction")  # anodes toward the clamp node
        tag = "f" if direction == "forward" else "r"
        inner = []
        for i in range(1, stack.count):
            n = _fresh_node(f"clamp_{tag}{i}", taken)
            taken.add(n)
            inner.append(n)
        chain = [node] + inner + [ref]
        out = []
        for hi, lo in zip(chain[:-1], chain[1:]):
            name = next(names)
            out.append(Diode(name, hi, lo, stack.model) if toward else Diode(name, lo, hi, stack.model))
        return out

    def build(self, combo: Combo, *, upper=None, lower=None) -> tuple[NetworkSpec, tuple, tuple, tuple | None]:
        """The base network with a clamp placed.

        Parameters
        ----------
        combo : Combo
        upper, lower : tuple of float, optional
            Values of the split's parts in series [ohm]: above and below the tap. A
            split without them gets two parts of half the resistor each, to be
            scaled by factors (a grid).

        Returns
        -------
        net, clamp diodes, watched parts, factor info (None unless a grid split)
        """
        site = combo.site
        mov = self.movement
        taken = set(self.nodes)
        r_names = (f"R{k}" for k in range(self.next_r, self.next_r + 100))
        d_names = (f"D{k}" for k in range(self.next_d, self.next_d + 100))
        elements = []
        split_names = []
        factor = None
        node = site.node
        for e in self.base.elements:
            if site.kind == "split" and e.name == site.element:
                node = self.tap_node
                taken.add(node)
                low = site.node
                high = e.b if e.a == low else e.a
                grid = upper is None
                ups = (e.value_ohm / 2.0,) if grid else tuple(upper)
                lows = (e.value_ohm / 2.0,) if grid else tuple(lower)
                chain_nodes = [high]
                for i in range(len(ups) - 1):
                    n = _fresh_node(f"clamp_up{i + 1}", taken)
                    taken.add(n)
                    chain_nodes.append(n)
                chain_nodes.append(node)
                for i in range(len(lows) - 1):
                    n = _fresh_node(f"clamp_lo{i + 1}", taken)
                    taken.add(n)
                    chain_nodes.append(n)
                chain_nodes.append(low)
                for j, v in enumerate(ups + lows):
                    name = next(r_names)
                    split_names.append(name)
                    elements.append(replace(e, name=name, a=chain_nodes[j], b=chain_nodes[j + 1], value_ohm=float(v),
                                            target_ohm=None, group=f"split of {e.name}", line=None))
                if grid:
                    factor = (split_names[0], split_names[1], float(e.value_ohm), ups[0], lows[0])
            else:
                elements.append(e)
        diodes = []
        if site.pair is not None:
            diodes += self._stack_elements(mov.a, mov.b, Stack(site.pair, 1), "forward", d_names, taken)
            diodes += self._stack_elements(mov.a, mov.b, Stack(site.pair, 1), "reverse", d_names, taken)
        if combo.forward is not None:
            diodes += self._stack_elements(node, mov.b, combo.forward, "forward", d_names, taken)
        if combo.reverse is not None:
            diodes += self._stack_elements(node, mov.b, combo.reverse, "reverse", d_names, taken)
        # the new diodes go where the old clamps were, else before the first contact
        orig_names = [e.name for e in self.orig_net.elements]
        at = len(elements)
        if self.orig_clamp:
            first = orig_names.index(self.orig_clamp[0])
            before = {n for n in orig_names[:first]}
            at = sum(1 for e in elements if e.name in before or e.name in split_names)
        else:
            for i, e in enumerate(elements):
                if isinstance(e, Contact):
                    at = i
                    break
        elements = elements[:at] + diodes + elements[at:]
        net = replace(self.base, elements=tuple(elements))
        clamp = tuple(d.name for d in diodes)
        return net, clamp, clamp + tuple(split_names), factor

    def topology(self, combo: Combo, **kw) -> _Topology:
        net, clamp, watch, factor = self.build(combo, **kw)
        eng = Engine(self.design.variant(net))
        # a grid split keeps the sum of its two parts, hence the readings without
        # clamps, those of the base network exactly
        key = None if (factor is not None or combo.site.kind != "split") else tuple(
            (e.name, e.value_ohm) for e in net.elements if isinstance(e, Resistor))
        return _Topology(net, eng, clamp, watch, factor, key)

    def topology_of(self, net: NetworkSpec, watch_extra=()) -> _Topology:
        """A topology around a whole network (the project as given, a sized candidate)."""
        clamp = tuple(clamp_diodes(net))
        key = tuple((e.name, e.value_ohm) for e in net.elements if isinstance(e, Resistor))
        return _Topology(net, Engine(self.design.variant(net)), clamp, clamp + tuple(watch_extra), None, key)

    def bare_readings(self, topo: _Topology) -> dict:
        """Readings at the hottest ambient with the clamp diodes taken out, per position (10,)."""
        if topo.bare is not None:
            return topo.bare
        if topo.bare_key is None:
            if self._bare_base is None:
                self._bare_base = self._readings(self.base)
            topo.bare = self._bare_base
        else:
            if topo.bare_key not in self._bare_cache:
                net = replace(topo.net, elements=tuple(e for e in topo.net.elements if e.name not in topo.clamp))
                self._bare_cache[topo.bare_key] = self._readings(net)
            topo.bare = self._bare_cache[topo.bare_key]
        return topo.bare

    def _readings(self, net: NetworkSpec) -> dict:
        eng = Engine(self.design.variant(net))
        return {p.name: eng.operate(p.name, FRACTIONS * p.full_scale, temperature_k=self.t_hot).reading()[0]
                for p in self.positions}

    # --- evaluation ----------------------------------------------------------------------
    def run(self, topo: _Topology, r_rows=None, *, pairs=None, n_phase: int = SEARCH_PHASE_POINTS,
            count: bool = True) -> Metrics:
        """Evaluate a topology for a batch of split resistances (one row when None).

        ``pairs`` = (upper values, lower values) [ohm] gives the two parts of a
        grid split row by row instead (standard values). ``count`` False leaves
        the evaluation out of the candidate count (the reported rows' final pass).

        Notes
        -----
        Per position, the fault stimuli are solved in one call of
        :meth:`Engine.operate` per stimulus kind and source impedance (rows:
        split resistances x stimuli; columns: the samples of one sine cycle, a DC
        value repeated), a source's current limit by solving its limited samples
        again as a current source (as :func:`planner.stress.solve_waveforms` does);
        the linearity points at the hottest ambient in one more call.
        """
        if pairs is not None:
            rows = len(pairs[0])
        else:
            rows = 1 if r_rows is None else len(r_rows)
        if count:
            self.evaluated += rows
        else:
            self.reevaluated += rows
        try:
            return self._run(topo, self._factors(topo, r_rows, pairs), rows, n_phase, pairs is not None)
        except SolveError as e:
            inf = np.full(rows, np.inf)
            none = [None] * rows
            def per():
                return {p.name: inf.copy() for p in self.positions}

            return Metrics(inf, inf.copy(), none, none, inf.copy(), inf.copy(), per(), per(), inf.copy(), none,
                           inf.copy(), per(), per(), failed=e.one_line())

    @staticmethod
    def _factors(topo: _Topology, r_rows, pairs):
        """Factors of the split's two parts: nominal value x factor = the row's value."""
        if topo.factor is None or (r_rows is None and pairs is None):
            return None
        up, lo, total, up0, lo0 = topo.factor
        if pairs is not None:
            return {up: np.asarray(pairs[0], dtype=float) / up0, lo: np.asarray(pairs[1], dtype=float) / lo0}
        r = np.asarray(r_rows, dtype=float)
        return {up: (total - r) / up0, lo: r / lo0}

    def _run(self, topo: _Topology, fac, rows: int, n_phase: int, own_bare: bool = False) -> Metrics:
        if topo.carrying is None:
            from .accuracy import current_carrying

            topo.carrying = {p.name: current_carrying(topo.engine, p.name) for p in self.positions}
        if own_bare and fac is not None:
            # standard values: the two parts no longer sum to the resistor exactly, so
            # the readings without clamps are those of the same parts, row by row
            if topo.bare_engine is None:
                net = replace(topo.net, elements=tuple(e for e in topo.net.elements if e.name not in topo.clamp))
                topo.bare_engine = Engine(self.design.variant(net))
            bare = {p.name: topo.bare_engine.operate(p.name, FRACTIONS * p.full_scale, temperature_k=self.t_hot,
                                                     factors=fac).reading() for p in self.positions}
        else:
            bare = self.bare_readings(topo)
        fwd, rev, mi_f, mi_r, stress, power = (np.zeros(rows) for _ in range(6))
        fcase, rcase, scase = [None] * rows, [None] * rows, [None] * rows
        err, tot, pf, pr = {}, {}, {}, {}
        for p in self.positions:
            # a position whose current-carrying part holds neither part of the split is
            # the same for every row: solve it once
            varies = fac is not None and any(n in topo.carrying[p.name] for n in fac)
            if varies:
                r = self._position(topo, p, fac, rows, n_phase, bare[p.name])
            else:
                key = (p.name, n_phase)
                if key not in topo.static:
                    topo.static[key] = self._position(topo, p, None, 1, n_phase, np.atleast_2d(bare[p.name])[:1])
                r = topo.static[key]
            if not varies and rows > 1:
                r = {key: (np.repeat(v, rows, axis=0) if isinstance(v, np.ndarray) else v * rows)
                     for key, v in r.items()}
            pf[p.name], pr[p.name] = r["forward"], r["reverse"]
            err[p.name], tot[p.name] = r["error"], r["total"]
            for arr, cases, new, newc in ((fwd, fcase, r["forward"], r["forward_case"]),
                                          (rev, rcase, r["reverse"], r["reverse_case"]),
                                          (stress, scase, r["stress"], r["stress_case"])):
                for i in np.nonzero(new > arr)[0]:
                    cases[i] = newc[i]
                arr[:] = np.maximum(arr, new)
            mi_f[:] = np.maximum(mi_f, r["max_input_forward"])
            mi_r[:] = np.maximum(mi_r, r["max_input_reverse"])
            power[:] = np.maximum(power, r["power"])
        return Metrics(fwd, rev, fcase, rcase, mi_f, mi_r, err, tot, stress, scase, power, pf, pr)

    def _position(self, topo: _Topology, p, fac, rows: int, n_phase: int, bare) -> dict:
        """Every figure of one position for ``rows`` rows (see :meth:`run`)."""
        eng = topo.engine
        diodes = {n: self.spec.parts.diodes[topo.net.element(n).model] for n in topo.clamp}
        out = {key: np.zeros(rows) for key in ("forward", "reverse", "max_input_forward", "max_input_reverse",
                                                "stress", "power")}
        for key in ("forward_case", "reverse_case", "stress_case"):
            out[key] = [None] * rows
        stims = self.stimuli[p.name]
        groups: dict[tuple, list[int]] = {}
        for j, s in enumerate(stims):
            groups.setdefault((s.kind, s.kind == "voltage" and s.r_source_ohm > 0), []).append(j)
        for (kind, has_r), idx in groups.items():
            g = len(idx)
            samples = [stims[j].samples(n_phase) for j in idx]
            width = max(len(x) for x in samples)
            block = np.array([np.resize(x, width) for x in samples])  # (G, W)
            stim = np.tile(block, (rows, 1))  # (rows*G, W): row i, stimulus j at i*G + j
            r_src = np.tile([stims[j].r_source_ohm for j in idx], rows) if has_r else 0.0
            f_rows = None if fac is None else {k: np.repeat(v, g) for k, v in fac.items()}
            op = eng.operate(p.name, stim, kind=kind, r_source_ohm=r_src, factors=f_rows)
            mult = np.array(op.movement_multiple)
            cur = {n: np.array(op.element(n).current_a) for n in topo.watch}
            vol = {n: np.array(op.element(n).voltage_v) for n in topo.watch}
            i_src = np.array(op.source_current_a)
            lims = np.tile([stims[j].current_limit_a or np.inf for j in idx], rows)
            if kind == "voltage" and np.isfinite(lims).any():
                rr, kk = np.nonzero(np.abs(i_src) > lims[:, None])
                if rr.size:
                    vals = np.copysign(lims[rr], i_src[rr, kk])
                    f2 = None if f_rows is None else {k: v[rr] for k, v in f_rows.items()}
                    op2 = eng.operate(p.name, vals[:, None], kind="current", factors=f2)
                    mult[rr, kk] = np.asarray(op2.movement_multiple)[:, 0]
                    for n in topo.watch:
                        cur[n][rr, kk] = op2.element(n).current_a[:, 0]
                        vol[n][rr, kk] = op2.element(n).voltage_v[:, 0]
            mult = mult.reshape(rows, g, width)
            impulse = np.array([stims[j].peak_only for j in idx])
            for key, m in (("forward", mult.max(axis=2)), ("reverse", (-mult).max(axis=2))):
                jbest = np.argmax(m, axis=1)
                vbest = m[np.arange(rows), jbest]
                for i in np.nonzero(vbest > out[key])[0]:
                    out[key + "_case"][i] = (p.name, stims[idx[jbest[i]]].name)
                out[key] = np.maximum(out[key], vbest)
                at_max = [j for j, sj in enumerate(idx) if stims[sj].name in ("max input", "max input reversed")]
                if at_max:
                    out["max_input_" + key] = np.maximum(out["max_input_" + key], m[:, at_max].max(axis=1))
            # the watched parts' power, the clamp diodes' continuous ratings
            tot_p = np.zeros((rows, g))
            for n in topo.watch:
                i = cur[n].reshape(rows, g, width)
                v = vol[n].reshape(rows, g, width)
                pm = (i * v).mean(axis=2)
                tot_p += np.abs(pm)
                if n in diodes:
                    d = diodes[n]
                    ratio = np.maximum.reduce([np.abs(i).mean(axis=2) / d.max_current_a,
                                               np.abs(i).max(axis=2) / d.surge_current_a,
                                               np.abs(pm) / d.max_power_w])
                    ratio[:, impulse] = 0.0
                    jbest = np.argmax(ratio, axis=1)
                    vbest = ratio[np.arange(rows), jbest]
                    for i_row in np.nonzero(vbest > out["stress"])[0]:
                        out["stress_case"][i_row] = (p.name, stims[idx[jbest[i_row]]].name, n)
                    out["stress"] = np.maximum(out["stress"], vbest)
            tot_p[:, impulse] = 0.0
            out["power"] = np.maximum(out["power"], tot_p.max(axis=1))
        # accuracy at the hottest ambient
        applied = FRACTIONS * p.full_scale
        rd = eng.operate(p.name, applied, temperature_k=self.t_hot, factors=fac).reading()
        rd = np.broadcast_to(rd, (rows, applied.size))
        out["error"] = np.max(np.abs(rd - np.broadcast_to(bare, rd.shape)), axis=1) / p.full_scale * 100.0
        out["total"] = np.max(np.abs(rd - applied[None, :]), axis=1) / p.full_scale * 100.0
        return out

    # --- judging ---------------------------------------------------------------------------
    def accuracy_ok(self, m: Metrics) -> np.ndarray:
        ok = np.ones(m.forward.shape, dtype=bool)
        for p in self.positions:
            ok &= m.error_pct[p.name] <= self.limits[p.name] * _EXCEED
        return ok

    def feasible(self, m: Metrics) -> np.ndarray:
        return self.accuracy_ok(m) & (m.stress <= _EXCEED) & np.isfinite(m.worst)

    def slack(self, m: Metrics) -> np.ndarray:
        """Largest use of a constraint, minus one: <= 0 when feasible."""
        use = m.stress.copy()
        for p in self.positions:
            use = np.maximum(use, m.error_pct[p.name] / self.limits[p.name])
        return use - 1.0

    def share_of_class(self, m: Metrics) -> np.ndarray:
        return np.max(np.vstack([m.error_pct[p.name] for p in self.positions]), axis=0) / self.class_index


def lex_compare(a, b, tol: float = TIE) -> int:
    """Compare the protection of two placements, worst position first.

    Parameters
    ----------
    a, b : sequence of float
        Worst movement multiple of each position.
    tol : float
        Relative difference below which two multiples count as equal.

    Returns
    -------
    int
        -1 when a protects better, +1 when b does, 0 when every multiple of the
        two (each sorted from the largest down) is within ``tol``.

    Notes
    -----
    Leximax order: minimise the largest multiple; where two placements tie on
    it (within ``tol``), the next largest decides, and so on. It lets a clamp
    that only helps the voltage ranges win over one that helps nothing, when a
    current range (which no multiplier split touches) sets the worst case.
    """
    for x, y in zip(sorted(map(float, a), reverse=True), sorted(map(float, b), reverse=True)):
        if x > y * (1.0 + tol):
            return 1
        if y > x * (1.0 + tol):
            return -1
    return 0


def lex_best(items, vector, tol: float = TIE) -> list:
    """The items that protect best: filtered rank by rank to within ``tol`` of the best.

    Parameters
    ----------
    items : sequence
    vector : callable
        Gives the per-position multiples of an item.

    Returns
    -------
    list
        The items whose largest multiple is within ``tol`` of the least largest
        multiple, then, among those, whose second largest is within ``tol`` of
        the least second largest, and so on (in the order given).
    """
    cands = list(items)
    if not cands:
        return cands
    vecs = {id(c): sorted(map(float, vector(c)), reverse=True) for c in cands}
    for k in range(len(next(iter(vecs.values())))):
        best = min(vecs[id(c)][k] for c in cands)
        cands = [c for c in cands if vecs[id(c)][k] <= best * (1.0 + tol)]
    return cands


def lex_score(multiples) -> float:
    """A scalar that orders placements like :func:`lex_compare` to first order.

    Notes
    -----
    :math:`\\phi = \\sum_k \\epsilon^k v_{(k)}` with the multiples sorted from the
    largest down, :math:`v_{(0)} \\ge v_{(1)} \\ge \\dots` and
    :math:`\\epsilon` = :data:`LEX_WEIGHT`: the worst position dominates, and
    where it cannot change (a current range the split does not touch) the next
    ones decide. Used where a scalar objective is needed (scipy's minimisers).
    """
    v = sorted((float(x) for x in multiples), reverse=True)
    return float(sum(LEX_WEIGHT ** k * x for k, x in enumerate(v)))


# =====================================================================================
# The search
# =====================================================================================


@dataclass
class _Point:
    """One evaluated placement: a combo at a split resistance (None off splits)."""

    combo: Combo
    r: float | None
    metrics: Metrics  # one row
    feasible: bool
    upper: tuple | None = None
    lower: tuple | None = None
    stage: str = "grid"
    clamps: tuple | None = None  # the ``clamps:`` requests (sized projects)
    net: NetworkSpec | None = None  # the sized network of those requests

    @property
    def worst(self) -> float:
        return float(self.metrics.worst[0])

    @property
    def multiples(self) -> np.ndarray:
        """Worst movement multiple of each position."""
        return self.metrics.position_worst()[0]

    @property
    def score(self) -> float:
        return lex_score(self.metrics.position_worst()[0])


def _evaluate_combo(ctx: _Search, combo: Combo) -> tuple[_Topology, np.ndarray | None, Metrics] | None:
    topo = ctx.topology(combo)
    r = ctx.grid(combo.site) if combo.site.kind == "split" else None
    rows = 1 if r is None else len(r)
    if not ctx.room(rows):
        return None
    m = ctx.run(topo, r)
    if r is not None:
        for i, ri in enumerate(r):
            topo.memo[float(ri)] = m.row(i)
    return topo, r, m


def _best_point(ctx: _Search, combo: Combo, r, m: Metrics, stage="grid") -> _Point:
    """The feasible row that protects best (leximax), else the row nearest feasibility."""
    feas = ctx.feasible(m)
    if feas.any():
        pw = m.position_worst()
        best = lex_best([int(k) for k in np.nonzero(feas)[0]], lambda k: pw[k])
        i = min(best, key=lambda k: (lex_score(pw[k]), k))
    else:
        i = int(np.argmin(ctx.slack(m)))
    return _Point(combo, None if r is None else float(r[i]), m.row(i), bool(feas[i]), stage=stage)


def _refine(ctx: _Search, topo: _Topology, combo: Combo, r: np.ndarray, m: Metrics) -> _Point | None:
    """Refine the split resistance of a combo between its grid neighbours.

    Notes
    -----
    The clamp's error grows with the split resistance r (the junction sees
    :math:`I_{fs} (R_m + r)` at full scale), so the feasible set is an interval
    from the lowest grid point up to an edge. When the worst multiple still
    falls at the last feasible grid point, the optimum is on that edge: it is
    found by :func:`scipy.optimize.brentq` on the constraint use (largest
    error / limit, diode stress / rating) minus one between the last feasible
    and the first infeasible grid point. Otherwise the minimum is inside the
    feasible set and :func:`scipy.optimize.minimize_scalar` (bounded Brent)
    finds it between the grid neighbours of the best grid point, a penalty of
    the constraint use keeping it feasible. Both stop at 1.5 % of r (or after
    :data:`REFINE_MAXITER` evaluations), finer than the steps of the E96 series
    the split is then made of.

    References
    ----------
    R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall,
    1973 (ch. 4 root finding, ch. 5 bounded one-dimensional minimisation; the
    methods of scipy.optimize.brentq and minimize_scalar(method='bounded')).
    """
    from scipy.optimize import brentq, minimize_scalar

    feas = ctx.feasible(m)
    if not feas.any():
        return None
    pw = m.position_worst()
    score = np.array([lex_score(v) for v in pw])
    i = min(lex_best([int(k) for k in np.nonzero(feas)[0]], lambda k: pw[k]), key=lambda k: (score[k], k))
    xtol = REFINE_XTOL_REL * float(r[i])

    def at(x: float) -> Metrics:
        x = float(x)
        if x not in topo.memo:
            if not ctx.room(1):
                raise _Stop
            topo.memo[x] = ctx.run(topo, np.array([x]))
        return topo.memo[x]

    try:
        falling = i == 0 or score[i] <= score[i - 1]
        if i + 1 < len(r) and not feas[i + 1] and falling and np.isfinite(ctx.slack(m.row(i + 1))[0]):
            a, b = float(r[i]), float(r[i + 1])
            edge = brentq(lambda x: float(ctx.slack(at(x))[0]), a, b, xtol=xtol, maxiter=REFINE_MAXITER,
                          disp=False)
            while edge > a and not ctx.feasible(at(edge))[0]:
                edge = max(a, edge - xtol)
        elif (0 < i < len(r) - 1 or (i == 0 and len(r) > 1)) and _worth_refining(r, score, i):
            lo, hi = float(r[max(i - 1, 0)]), float(r[i + 1])

            def objective(x):
                mx = at(x)
                s = float(ctx.slack(mx)[0])
                phi = lex_score(mx.position_worst()[0])
                return phi if s <= 0 else phi * (2.0 + s)

            minimize_scalar(objective, bounds=(lo, hi), method="bounded",
                            options={"xatol": xtol, "maxiter": REFINE_MAXITER})
    except _Stop:
        pass
    ok = [x for x in sorted(topo.memo) if ctx.feasible(topo.memo[x])[0]]
    if not ok:
        return None
    x = min(lex_best(ok, lambda x: topo.memo[x].position_worst()[0]),
            key=lambda x: (lex_score(topo.memo[x].position_worst()[0]), x))
    return _Point(combo, x, topo.memo[x], True, stage="refined")


def _worth_refining(r: np.ndarray, score: np.ndarray, i: int) -> bool:
    """Whether an interior minimum can gain more than :data:`REFINE_GAIN` over grid point i.

    Notes
    -----
    The parabola :math:`\\phi(x) = a x^2 + b x + c` through the grid point and its
    two neighbours, :math:`x = \\ln r`, has its vertex at :math:`\\phi_{min} = c -
    b^2 / (4 a)` when :math:`a > 0`; when :math:`\\phi_i - \\phi_{min}` is below the
    share, the grid point stands (the steps of the E96 series are coarser
    anyway). At the end of the grid, or with non-finite or non-convex
    neighbours, the refinement runs.
    """
    if i == 0 or i + 1 >= len(r):
        return True
    x = np.log(np.asarray(r[i - 1:i + 2], dtype=float))
    y = np.asarray(score[i - 1:i + 2], dtype=float)
    if not np.all(np.isfinite(y)):
        return True
    a, b, c = np.polyfit(x - x[1], y, 2)
    if a <= 0:
        return True
    gain = float(y[1] - (c - b * b / (4.0 * a)))
    return gain > REFINE_GAIN * float(y[1])


def _ranked(points: list) -> list:
    """Points best first: the best protection (:func:`lex_best`), then score, parts, combo."""
    rest, out = list(points), []
    while rest:
        best = min(lex_best(rest, lambda p: p.multiples),
                   key=lambda p: (p.score, p.combo.parts_count, p.combo.key(), -1.0 if p.r is None else p.r))
        out.append(best)
        rest.remove(best)
    return out


class _Stop(Exception):
    """The candidate cap was reached."""


def _signature(c: Combo) -> tuple:
    """The diodes a combo places, as oriented stacks: two combos with one signature are one circuit.

    A forward zener working in breakdown (cathodes toward the tap) is the same
    part the same way round as a reverse junction stack of that model.
    """
    out = []
    for direction, st in (("forward", c.forward), ("reverse", c.reverse)):
        if st is not None:
            out.append((st.model, st.count, (direction == "forward") == (st.mode == "junction")))
    return (c.site.label, tuple(sorted(out)))


def _search(ctx: _Search) -> tuple[list[_Point], dict, dict]:
    """Branch-and-bound over sites and stacks.

    Returns the best point of every combo evaluated, a record of the sites and
    bounds, and the evaluations by combo key (topology with its memo of split
    resistances, grid, metrics).

    Notes
    -----
    1. *Bounds.* At every site the strongest stack of each kind - one diode
       each way of every model, one zener in breakdown each way - is evaluated
       (on the split grid). A longer stack needs more voltage for the same
       current, :math:`V_{stack}(I) = k\\,V_j(I)`, so it clamps later: the
       multiples of the one-diode stack bound those of every stack of its model
       and mode from below, position by position (up to the leakage of the
       other direction's reverse-biased stack and the grid's resolution).
    2. *Branching.* Sites in the order of their bound; a site, or a combo,
       whose bound does not beat the best feasible placement so far
       (:func:`lex_compare`) is pruned. At a site every forward stack is tried
       with the strongest reverse stack; then every reverse stack with the two
       best forward stacks (the reverse stack hardly changes the forward
       figures: reverse-biased, it only leaks). A reverse stack of more than
       one diode only clamps later, so it is tried only when the one-diode
       stack fails the accuracy requirement. Combos that place the same
       diodes the same way round are evaluated once.
    3. *Refinement* of the split resistance of the best :data:`REFINE_COMBOS`
       split combos (:func:`_refine`).

    References
    ----------
    A. H. Land and A. G. Doig, "An automatic method of solving discrete
    programming problems", Econometrica 28(3), 497-520, 1960 (branch and bound).
    """
    points: dict[tuple, _Point] = {}
    evaluated: dict[tuple, tuple] = {}
    seen: set = set()
    bounds: dict[str, np.ndarray] = {}
    fb: dict[tuple, np.ndarray] = {}  # (site, model, mode) -> per-position forward bound
    rb: dict[tuple, np.ndarray] = {}  # (site, model, mode) -> per-position reverse bound
    info = {"sites": [], "pruned_sites": [], "pruned_combos": 0}
    sites = ctx.sites()
    fwd_stacks = ctx.stacks("forward")
    rev_stacks = ctx.stacks("reverse")
    n_pos = len(ctx.positions)

    def visit(combo: Combo):
        sig = _signature(combo)
        if combo.key() in evaluated or sig in seen:
            return evaluated.get(combo.key())
        seen.add(sig)
        ctx.say(f"{combo.site.label}: forward {combo.forward.label() if combo.forward else 'none'}, "
                f"reverse {combo.reverse.label() if combo.reverse else 'none'}")
        res = _evaluate_combo(ctx, combo)
        if res is None:
            raise _Stop
        topo, r, m = res
        evaluated[combo.key()] = (topo, r, m)
        points[combo.key()] = _best_point(ctx, combo, r, m)
        return evaluated[combo.key()]

    def beats_incumbent(lb) -> bool:
        """Whether a bound leaves room for better protection than every feasible point so far."""
        ok = [p for p in points.values() if p.feasible]
        return not ok or all(lex_compare(lb, p.multiples) < 0 for p in lex_best(ok, lambda p: p.multiples))

    def per_position_min(m: Metrics, which: str) -> np.ndarray:
        d = m.pos_forward if which == "forward" else m.pos_reverse
        return np.array([float(np.min(d[q.name])) for q in ctx.positions])

    def combo_bound(c: Combo) -> np.ndarray:
        zero = np.zeros(n_pos)
        f = fb.get((c.site.label, c.forward.model, c.forward.mode), zero) if c.forward else zero
        r = rb.get((c.site.label, c.reverse.model, c.reverse.mode), zero) if c.reverse else zero
        return np.maximum(f, r)

    def prune(c: Combo) -> bool:
        if c.key() in points or _signature(c) in seen:
            return True
        # a reverse stack longer than one diode: only if the one-diode stack fails
        if c.reverse is not None and c.reverse.count > 1:
            one = points.get(Combo(c.site, c.forward, replace(c.reverse, count=1)).key())
            if one is None or one.feasible:
                info["pruned_combos"] += 1
                ctx.pruned += 1
                return True
        if not beats_incumbent(combo_bound(c)):
            info["pruned_combos"] += 1
            ctx.pruned += 1
            return True
        return False

    try:
        # 1. bounds: the strongest stack of each kind at every site
        for site in sites:
            lb = np.full(n_pos, np.inf)
            for mdl in ctx.models:
                _, _, m = visit(Combo(site, Stack(mdl, 1), Stack(mdl, 1)))
                fb[(site.label, mdl, "junction")] = per_position_min(m, "forward")
                rb[(site.label, mdl, "junction")] = per_position_min(m, "reverse")
                lb = np.minimum(lb, np.min(m.position_worst(), axis=0))
            for z in ctx.zeners:
                for c, which, store in ((Combo(site, Stack(z, 1, "breakdown"), None), "forward", fb),
                                        (Combo(site, None, Stack(z, 1, "breakdown")), "reverse", rb)):
                    _, _, m = visit(c)
                    store[(site.label, z, "breakdown")] = per_position_min(m, which)
                    lb = np.minimum(lb, np.min(m.position_worst(), axis=0))
            bounds[site.label] = lb
            info["sites"].append({"site": site.label, "kind": site.kind, "node": site.node, "element": site.element,
                                  "r_ohm": site.r_ohm if site.kind != "movement" else 0.0,
                                  "bound_multiple": float(np.max(lb)),
                                  "bound_multiples": {q.name: float(x) for q, x in zip(ctx.positions, lb)}})
        # 2. branch: sites in the order of their bound
        for site in sorted(sites, key=lambda s: (lex_score(bounds[s.label]), s.label)):
            if not beats_incumbent(bounds[site.label]):
                info["pruned_sites"].append(site.label)
                ctx.pruned += 1
                continue
            ones = [st for st in rev_stacks if st.count == 1]
            rv0 = min(lex_best(ones, lambda st: rb[(site.label, st.model, st.mode)]),
                      key=lambda st: (lex_score(rb[(site.label, st.model, st.mode)]), st.mode, st.model))
            for f in fwd_stacks:
                for rv in ((rv0, None) if f.mode == "breakdown" else (rv0,)):
                    c = Combo(site, f, rv)
                    if not prune(c):
                        visit(c)
            here = [p for p in points.values() if p.combo.site == site and p.feasible and p.combo.forward]
            for p in _ranked(here)[:2]:
                f = p.combo.forward
                for rv in list(rev_stacks) + ([None] if f.mode == "breakdown" else []):
                    c = Combo(site, f, rv)
                    if not prune(c):
                        visit(c)
        # 3. refine the split resistance of the most promising split combos
        splits = [p for p in points.values() if p.combo.site.kind == "split" and p.feasible]
        for p in _ranked(splits)[:REFINE_COMBOS]:
            topo, r, m = evaluated[p.combo.key()]
            ctx.say(f"refining {p.combo.site.label}: {p.combo.forward.label() if p.combo.forward else 'none'} / "
                    f"{p.combo.reverse.label() if p.combo.reverse else 'none'}")
            q = _refine(ctx, topo, p.combo, r, m)
            if q is not None and (lex_compare(q.multiples, p.multiples) < 0 or
                                  (lex_compare(q.multiples, p.multiples) == 0 and q.score < p.score)):
                points[p.combo.key()] = q
    except _Stop:
        pass
    return list(points.values()), info, evaluated


# =====================================================================================
# Making the split of standard values
# =====================================================================================


def _split_values(ctx: _Search, site: Site, r_star: float, r_cap: float) -> list[tuple[tuple, tuple]]:
    """Standard-value splits near ``r_star`` whose sum stays on the resistor's value.

    Returns up to :data:`REALISE_TRIES` (upper parts, lower parts) pairs, the lower
    value nearest ``r_star`` first, never above ``r_cap``: the lower part a single
    value of the project's series, the upper a single value (or, when no single
    value keeps the sum within the sizer's allowed error, the pair
    :func:`planner.size.choose_value` makes).
    """
    from .sizing import choose_value

    total = site.r_ohm
    series = ctx.series
    allowed = ctx.allowed
    lows = []
    try:
        lows = eseries.values_in(series, max(r_star / 1.6, total * SPLIT_LO * 0.5), min(r_cap, total * SPLIT_HI))
    except ValueError:
        lows = []
    lows = sorted(set(lows), key=lambda v: (abs(math.log(v / r_star)), v))
    singles, pairs = [], []
    for lo in lows:
        rest = total - lo
        if rest <= 0:
            continue
        up = eseries.nearest(series, rest)
        if abs(lo + up - total) <= allowed * total * _EXCEED:
            singles.append(((up,), (lo,)))
        elif len(pairs) < REALISE_TRIES:
            ch = choose_value(series, rest, allowed * total / rest)
            if len(ch.units) <= 2 and all(len(u) == 1 for u in ch.units) and \
                    abs(lo + ch.value - total) <= allowed * total * _EXCEED:
                pairs.append((tuple(u[0] for u in ch.units), (lo,)))
        if len(singles) >= REALISE_TRIES:
            break
    return singles[:REALISE_TRIES] if singles else pairs[:REALISE_TRIES]


def _realise_explicit(ctx: _Search, p: _Point, topo: _Topology | None) -> _Point | None:
    """The point's split made of standard values, evaluated on the realised values.

    The candidates of :func:`_split_values` whose upper and lower parts are single
    values are solved in one batch on the combo's grid topology (its two parts
    scaled to the standard values), the others one by one on their own network;
    the feasible one with the least worst multiple is kept.
    """
    if p.combo.site.kind != "split":
        return p
    memo = topo.memo if topo is not None else {}
    cap = p.r  # the feasible edge: the largest feasible r evaluated next to the point
    for x, mx in sorted(memo.items()):
        if x <= p.r:
            continue
        if not ctx.feasible(mx)[0]:
            break
        cap = x
    cands = _split_values(ctx, p.combo.site, p.r, cap * (1 + REFINE_XTOL_REL))
    if not cands:
        return None
    out = []
    single = [c for c in cands if len(c[0]) == 1 and len(c[1]) == 1]
    if single and ctx.room(len(single)):
        t = topo if topo is not None else ctx.topology(p.combo)
        m = ctx.run(t, pairs=([c[0][0] for c in single], [c[1][0] for c in single]))
        feas = ctx.feasible(m)
        for i, (upper, lower) in enumerate(single):
            out.append(_Point(p.combo, float(sum(lower)), m.row(i), bool(feas[i]), upper, lower, stage="realised"))
    for upper, lower in cands:
        if (upper, lower) in single or not ctx.room(1):
            continue
        t = ctx.topology(p.combo, upper=upper, lower=lower)
        m = ctx.run(t)
        out.append(_Point(p.combo, float(sum(lower)), m, bool(ctx.feasible(m)[0]), upper, lower, stage="realised"))
    if not out:
        return None
    pool = [q for q in out if q.feasible] or out
    return min(lex_best(pool, lambda q: q.multiples),
               key=lambda q: (q.score, abs(sum(q.upper) + sum(q.lower) - p.combo.site.r_ohm), q.r))


def _sized_clamps(ctx: _Search, combo: Combo, r: float | None) -> tuple[ClampRequest, ...]:
    """The ``clamps:`` requests that make a combo in a sized project.

    The sizer orients a request's ``forward`` diodes anode toward the tap and its
    ``reverse`` diodes cathode toward the tap; a zener working in breakdown in the
    forward direction is therefore a ``reverse`` request, and the other way round.
    """
    at = "movement" if combo.site.kind == "movement" else float(r)
    pair = ()
    if combo.site.pair is not None:
        pair = (ClampRequest(at="movement", forward=combo.site.pair, reverse=combo.site.pair, count=1),)
    out = []
    for direction, st in (("forward", combo.forward), ("reverse", combo.reverse)):
        if st is None:
            continue
        anode_toward = (direction == "forward") == (st.mode == "junction")
        key = "forward" if anode_toward else "reverse"
        out.append({"key": key, "model": st.model, "count": st.count})
    if len(out) == 2 and out[0]["key"] != out[1]["key"] and out[0]["model"] == out[1]["model"] \
            and out[0]["count"] == out[1]["count"]:
        kw = {out[0]["key"]: out[0]["model"], out[1]["key"]: out[1]["model"]}
        return pair + (ClampRequest(at=at, forward=kw.get("forward"), reverse=kw.get("reverse"),
                                    count=out[0]["count"]),)
    return pair + tuple(ClampRequest(at=at, forward=o["model"] if o["key"] == "forward" else None,
                                     reverse=o["model"] if o["key"] == "reverse" else None, count=o["count"])
                        for o in out)


def _sized_network(ctx: _Search, clamps) -> NetworkSpec:
    from .sizing import size

    return size(replace(ctx.spec, clamps=tuple(clamps))).network


def _sized_watch(net: NetworkSpec) -> tuple:
    """The parts of the sizer's clamp-tap segment and of the segment it splits off (their power counts)."""
    tap = {e.name: e for e in net.elements if isinstance(e, Resistor) and e.group and e.group.startswith("tap ")}
    nodes = {n for e in tap.values() for n in e.nodes if n.startswith("tap")}
    above = {e.group for e in net.elements if isinstance(e, Resistor) and e.name not in tap and set(e.nodes) & nodes}
    return tuple(e.name for e in net.elements if isinstance(e, Resistor) and (e.name in tap or e.group in above))


def _realise_sized(ctx: _Search, p: _Point) -> _Point | None:
    """The point as a ``clamps:`` request, sized by the sizer and evaluated."""
    if p.combo.site.kind != "split":
        clamps = _sized_clamps(ctx, p.combo, None)
        net = _sized_network(ctx, clamps)
        topo = ctx.topology_of(net)
        if not ctx.room(1):
            return p
        m = ctx.run(topo)
        return _Point(p.combo, None, m, bool(ctx.feasible(m)[0]), stage="realised", clamps=clamps, net=net)
    best = None
    # a standard value for the tap, so the sizer makes the tap segment of one part
    r = eseries.at_or_below(ctx.series, p.r)
    for _ in range(REALISE_TRIES):
        if not ctx.room(1):
            break
        clamps = _sized_clamps(ctx, p.combo, r)
        try:
            net = _sized_network(ctx, clamps)
        except ProjectError:
            break
        topo = ctx.topology_of(net, _sized_watch(net))
        m = ctx.run(topo)
        tap = [e for e in net.elements if isinstance(e, Resistor) and e.group == "tap 1"]
        # the sizer's node of the (only) clamp tap is "tap1"; the segment above it ends there
        above = {e.group for e in net.elements if isinstance(e, Resistor) and e.group not in (None, "tap 1")
                 and "tap1" in e.nodes}
        upper = tuple(e.value_ohm for e in net.elements if isinstance(e, Resistor) and e.group in above)
        q = _Point(p.combo, r, m, bool(ctx.feasible(m)[0]), upper=upper, lower=tuple(e.value_ohm for e in tap),
                   stage="realised", clamps=clamps, net=net)
        if best is None or (q.feasible and not best.feasible):
            best = q
        if q.feasible:
            break
        r = eseries.at_or_below(ctx.series, r * (1.0 - 1e-9))
    return best


# =====================================================================================
# Rows, Pareto set, choice
# =====================================================================================


def _multiples(row: dict) -> list[float]:
    return [math.inf if q["movement_multiple"] is None else q["movement_multiple"] for q in row["positions"]]


def _dominates(a: dict, b: dict) -> bool:
    """Whether row a is at least as good as row b everywhere and better somewhere.

    Protection position by position (the worst movement multiple of each),
    accuracy cost (share of the class) and part count.
    """
    ka = _multiples(a) + [a["share_of_class"], a["parts_count"]]
    kb = _multiples(b) + [b["share_of_class"], b["parts_count"]]
    return all(x <= y for x, y in zip(ka, kb)) and any(x < y for x, y in zip(ka, kb))


def _pareto(rows: list[dict]) -> list[dict]:
    """Rows no other row beats in protection, accuracy cost and part count at once."""
    return [r for r in rows if not any(_dominates(o, r) for o in rows if o is not r)]


def _ordered(rows: list[dict]) -> list[dict]:
    """Rows best first: the best protection (:func:`lex_best`), then the least power, parts, score."""
    rest, out = list(rows), []
    while rest:
        best = min(lex_best(rest, _multiples),
                   key=lambda r: (r["power_w"], r["parts_count"], lex_score(_multiples(r)), r["key"]))
        out.append(best)
        rest.remove(best)
    return out


def _choose(rows: list[dict]) -> dict | None:
    """The feasible row that protects best (leximax within :data:`TIE`), then with the least power and parts."""
    ok = _ordered([r for r in rows if r["feasible"]])
    return ok[0] if ok else None


def _num(x):
    x = float(x)
    return x if math.isfinite(x) else None


def _position_rows(ctx: _Search, m: Metrics) -> list[dict]:
    out = []
    for q in ctx.positions:
        f, r = float(m.pos_forward[q.name][0]), float(m.pos_reverse[q.name][0])
        out.append({"name": q.name, "movement_multiple": _num(max(f, r)), "movement_multiple_forward": _num(f),
                    "movement_multiple_reverse": _num(r), "hot_linearity_error_pct": _num(m.error_pct[q.name][0]),
                    "limit_pct": ctx.limits[q.name],
                    "within": bool(m.error_pct[q.name][0] <= ctx.limits[q.name] * _EXCEED),
                    "hot_linearity_total_pct": _num(m.total_pct[q.name][0])})
    return out


def _row(ctx: _Search, label: str, p: _Point, combo: Combo | None = None, *, clamps=None) -> dict:
    m = p.metrics
    combo = combo or p.combo
    site = combo.site
    fcase, rcase, scase = m.forward_case[0], m.reverse_case[0], m.stress_case[0]
    share = float(ctx.share_of_class(m)[0])
    row = {
        "label": label,
        "site": site.label,
        "site_kind": site.kind,
        "node": site.node if site.kind != "split" else ctx.tap_node,
        "split_element": site.element,
        "split_ohm": _num(p.r) if p.r is not None else None,
        "split_parts_ohm": None if p.lower is None else {"upper": [float(v) for v in (p.upper or ())],
                                                          "lower": [float(v) for v in p.lower]},
        "split_of_ohm": site.r_ohm if site.kind == "split" else None,
        "forward": combo.forward.as_dict() if combo.forward else None,
        "reverse": combo.reverse.as_dict() if combo.reverse else None,
        "forward_part": combo.forward.label() if combo.forward else None,
        "forward_count": combo.forward.count if combo.forward else 0,
        "reverse_part": combo.reverse.label() if combo.reverse else None,
        "reverse_count": combo.reverse.count if combo.reverse else 0,
        "worst_movement_multiple": _num(m.worst[0]),
        "worst_movement_multiple_forward": _num(m.forward[0]),
        "worst_movement_multiple_reverse": _num(m.reverse[0]),
        "worst_case_forward": None if fcase is None else {"position": fcase[0], "stimulus": fcase[1]},
        "worst_case_reverse": None if rcase is None else {"position": rcase[0], "stimulus": rcase[1]},
        "max_input_multiple_forward": _num(m.max_input_forward[0]) if ctx.spec.faults.max_input_v else None,
        "max_input_multiple_reverse": _num(m.max_input_reverse[0]) if ctx.spec.faults.max_input_v else None,
        "hot_linearity_error_pct": _num(max(float(m.error_pct[q.name][0]) for q in ctx.positions)),
        "share_of_class": _num(share),
        "hot_linearity_total_pct": _num(max(float(m.total_pct[q.name][0]) for q in ctx.positions)),
        "positions": _position_rows(ctx, m),
        "parts_count": int(combo.parts_count),
        "power_w": _num(m.power_w[0]),
        "clamp_stress_ratio": _num(m.stress[0]),
        "clamp_stress_case": None if scase is None else {"position": scase[0], "stimulus": scase[1], "part": scase[2]},
        "accuracy_ok": bool(ctx.accuracy_ok(m)[0]),
        "stress_ok": bool(m.stress[0] <= _EXCEED),
        "feasible": bool(p.feasible),
        "stage": p.stage,
        "key": "|".join(str(x) for x in combo.key()) + f"|{p.r!r}",
    }
    if m.failed:
        row["solver_error"] = m.failed
    if clamps is not None:
        row["clamps"] = [{"at": c.at if isinstance(c.at, str) else float(c.at), "forward": c.forward,
                          "reverse": c.reverse, "count": int(c.count)} for c in clamps]
    return row


def _as_given_row(ctx: _Search) -> dict:
    topo = ctx.topology_of(ctx.orig_net)
    m = ctx.run(topo, n_phase=REPORT_PHASE_POINTS, count=False)
    clamp = topo.clamp
    d = [ctx.orig_net.element(n) for n in clamp]
    row = {
        "label": "as given",
        "site": "as given",
        "site_kind": "as given",
        "clamp_diodes": list(clamp),
        "worst_movement_multiple": _num(m.worst[0]),
        "worst_movement_multiple_forward": _num(m.forward[0]),
        "worst_movement_multiple_reverse": _num(m.reverse[0]),
        "worst_case_forward": None if m.forward_case[0] is None else
        {"position": m.forward_case[0][0], "stimulus": m.forward_case[0][1]},
        "worst_case_reverse": None if m.reverse_case[0] is None else
        {"position": m.reverse_case[0][0], "stimulus": m.reverse_case[0][1]},
        "max_input_multiple_forward": _num(m.max_input_forward[0]) if ctx.spec.faults.max_input_v else None,
        "max_input_multiple_reverse": _num(m.max_input_reverse[0]) if ctx.spec.faults.max_input_v else None,
        "hot_linearity_error_pct": _num(max(float(m.error_pct[q.name][0]) for q in ctx.positions)),
        "share_of_class": _num(ctx.share_of_class(m)[0]),
        "hot_linearity_total_pct": _num(max(float(m.total_pct[q.name][0]) for q in ctx.positions)),
        "positions": _position_rows(ctx, m),
        "parts_count": len(d),
        "power_w": _num(m.power_w[0]),
        "clamp_stress_ratio": _num(m.stress[0]),
        "accuracy_ok": bool(ctx.accuracy_ok(m)[0]),
        "stress_ok": bool(m.stress[0] <= _EXCEED),
        "feasible": bool(ctx.feasible(m)[0]),
    }
    if m.failed:
        row["solver_error"] = m.failed
    return row


def _final(ctx: _Search, p: _Point) -> _Point:
    """The point evaluated again on its realised network, :data:`REPORT_PHASE_POINTS` per sine cycle."""
    clamps = None
    if ctx.sized:
        clamps = p.clamps or _sized_clamps(ctx, p.combo, p.r)
        net = p.net if p.net is not None else _sized_network(ctx, clamps)
        topo = ctx.topology_of(net, _sized_watch(net))
    elif p.combo.site.kind == "split" and p.lower is not None:
        topo = ctx.topology(p.combo, upper=p.upper, lower=p.lower)
    else:
        topo = ctx.topology(p.combo)
    m = ctx.run(topo, n_phase=REPORT_PHASE_POINTS, count=False)
    return _Point(p.combo, p.r, m, bool(ctx.feasible(m)[0]), p.upper, p.lower, stage="final", clamps=clamps)


def protect_project(design: Design | Spec, *, share: float | Mapping[str, float] = DEFAULT_SHARE, seed: int | None = None,
                    max_candidates: int = MAX_CANDIDATES,
                    progress: Callable[[str], None] | None = None) -> dict:
    """Search the clamp placement that best protects the movement within an accuracy share.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`; a loaded Spec is
        built into one): an explicit network, or the one the sizer built from
        the ``voltage``/``current`` sections.
    share : float or mapping of str to float
        Share of the class index the clamps may cost at the hottest ambient, for
        every position, or per position name (positions not named get
        :data:`DEFAULT_SHARE`); each in (0, 1].
    seed : int, optional
        Seed of the random probes of the split grid; ``analysis.seed`` by default.
    max_candidates : int
        Cap on the search's evaluations: each split resistance of a grid, each
        refinement step and each standard-value split counts one. The final pass
        over the reported rows is counted apart (``rows_reevaluated``).
    progress : callable(str), optional
        Receives a short message before each batch.

    Returns
    -------
    dict
        JSON-ready: ``candidates_evaluated``; ``pareto[]`` (rows: ``site``,
        ``split_ohm``, ``forward_part``, ``forward_count``, ``reverse_part``,
        ``reverse_count``, ``worst_movement_multiple`` with its ``_forward`` and
        ``_reverse`` polarity, ``max_input_multiple_forward``/``_reverse``,
        ``hot_linearity_error_pct``, ``share_of_class``, ``parts_count``,
        ``power_w``, ``clamp_stress_ratio``, ``feasible``, ``positions[]``);
        ``chosen`` (a row, or None when no placement meets the requirements);
        ``baseline`` with ``as_given`` (the project's own clamps) and
        ``across_movement`` (one diode each way across the movement);
        ``requirements_met``; the settings (``share``, ``limits_pct``,
        ``hot_temperature_k``, ``stimuli``, ``seed``) and the search's record
        (``sites[]``, ``pruned``, ``truncated``).

    Raises
    ------
    ProjectError
        A project without diode models or without anything to protect.
    UsageError
        A share outside (0, 1] or a bad cap.

    Notes
    -----
    Objective: minimise :math:`W = \\max_{p,s,t} |I_m(t)| / I_{fs}` over the
    positions p, the fault stimuli s and the samples t of each stimulus
    (reported separately for :math:`I_m > 0`, forward, and :math:`I_m < 0`,
    reverse). Constraint on every position p, at the hottest ambient
    :math:`T_{hot}` and the linearity points :math:`a_k = 0.1 k\\,FS`:

    .. math:: E_p = \\max_k |r_{clamped}(a_k, T_{hot}) - r_{bare}(a_k, T_{hot})| / FS
              \\times 100 \\le s_p \\cdot \\text{class}

    with the diodes' junction law :math:`I = I_s(T) (e^{V_j / (n V_t)} - 1) + V_j/R_p`
    (Shockley; SPICE temperature law for :math:`I_s(T)`), and every clamp diode
    within its average-current, surge-current and power ratings.

    References
    ----------
    W. Shockley, "The theory of p-n junctions in semiconductors and p-n junction
    transistors", Bell System Technical Journal 28(3), 435-489, 1949.
    P. Antognetti and G. Massobrio, *Semiconductor Device Modeling with SPICE*,
    2nd ed., McGraw-Hill, 1993 (diode temperature law).
    A. H. Land and A. G. Doig, "An automatic method of solving discrete
    programming problems", Econometrica 28(3), 497-520, 1960 (branch and bound).
    R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall,
    1973. IEC 60051-1 (class index); IEC 60063 (preferred values).
    """
    if isinstance(share, Mapping):
        shares = dict(share)
    else:
        shares = {"*": share}
    for k, v in shares.items():
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not (0.0 < float(v) <= 1.0):
            raise UsageError(f"the accuracy share must be a number in (0, 1], e.g. 0.25 for a quarter of the class; "
                             f"got {v!r}" + ("" if k == "*" else f" for position '{k}'"))
    if isinstance(max_candidates, bool) or not isinstance(max_candidates, (int, np.integer)) or max_candidates < 10:
        raise UsageError(f"max_candidates must be a whole number of at least 10, not {max_candidates!r}")
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0):
        raise UsageError(f"seed must be a whole number of at least 0, not {seed!r}")
    design = as_design(design)
    spec = design.spec
    ctx = _Search(design, share if isinstance(share, Mapping) else float(share), seed, max_candidates, progress)
    if isinstance(share, Mapping):
        unknown = [k for k in share if k not in ctx.limits]
        if unknown:
            raise UsageError(f"the accuracy share names no position '{unknown[0]}'; positions: "
                             f"{', '.join(ctx.limits)}")
    ctx.say("the project as given")
    as_given = _as_given_row(ctx)
    model = ctx.default_model()
    movement = Site("movement", "movement", ctx.movement.a)
    across = Combo(movement, Stack(model, 1), Stack(model, 1))

    points, info, evaluated = _search(ctx)

    # every feasible placement found, best first -> standard values -> the faults
    # matrix's phase points -> Pareto set and choice on those final numbers
    ctx.say("clamps across the movement")
    pa = _final(ctx, _Point(across, None, None, False))
    across_row = _row(ctx, "across movement", pa, clamps=pa.clamps)
    finals = [dict(across_row, label="candidate")]
    seen = {across_row["key"]}
    ctx.say("standard values for the best placements")
    best_first = _ranked([p for p in points if p.feasible])
    for p in best_first[:2 * PARETO_ROWS]:
        if p.combo.key() == across.key():
            continue
        if p.combo.site.kind != "split":
            q = p
        elif ctx.sized:
            q = _realise_sized(ctx, p)
        else:
            q = _realise_explicit(ctx, p, evaluated[p.combo.key()][0] if p.combo.key() in evaluated else None)
        if q is None:
            continue
        q = _final(ctx, q)
        row = _row(ctx, "candidate", q, clamps=q.clamps)
        if row["key"] not in seen:
            seen.add(row["key"])
            finals.append(row)
    pareto = _ordered(_pareto([r for r in finals if r["feasible"]]))[:PARETO_ROWS]
    chosen = _choose(pareto)
    for i, r in enumerate(pareto, 1):
        r["rank"] = i
        r["chosen"] = chosen is not None and r["key"] == chosen["key"]
        r["label"] = "chosen" if r["chosen"] else "pareto"
    if chosen is not None:
        chosen = dict(chosen)
    result = {
        "title": spec.title,
        "project": spec.path,
        "sized": ctx.sized,
        "class_index": ctx.class_index,
        "share": share if not isinstance(share, Mapping) else dict(share),
        "limits_pct": dict(ctx.limits),
        "hot_temperature_k": ctx.t_hot,
        "stimuli": sorted({s.name for st in ctx.stimuli.values() for s in st}),
        "seed": int(ctx.seed),
        "max_candidates": int(max_candidates),
        "candidates_evaluated": int(ctx.evaluated),
        "rows_reevaluated": int(ctx.reevaluated),
        "pruned": int(ctx.pruned),
        "truncated": bool(ctx.truncated),
        "sites": info["sites"],
        "pruned_sites": info["pruned_sites"],
        "tap_node": ctx.tap_node,
        "pareto": pareto,
        "chosen": chosen,
        "baseline": {"as_given": as_given, "across_movement": across_row},
    }
    result["requirements_met"] = bool(chosen is not None and chosen["feasible"])
    result["improves_on_across_movement"] = bool(
        chosen is not None and lex_compare(_multiples(chosen), _multiples(across_row)) < 0)
    return _finite(result)


def _finite(obj):
    """A JSON-safe copy: numpy scalars to Python numbers, non-finite floats to None."""
    if isinstance(obj, dict):
        return {str(k): _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj


# =====================================================================================
# Text and files
# =====================================================================================


def _fmt(x, unit: str, digits: int = 3) -> str:
    from .units import format_si

    return "-" if x is None else format_si(x, unit, digits)


def _mult(x) -> str:
    return "-" if x is None else (f"{x:.3g}" if x < 1000 else f"{x:.0f}")


def _hundred(x):
    return None if x is None else 100.0 * x


def _pct(x, fmt: str = ".3f") -> str:
    return "-" if x is None else format(x, fmt)


def _split_text(row: dict) -> str:
    if row.get("site_kind") != "split":
        return "-"
    return _fmt(row.get("split_ohm"), "ohm")


def _parts_text(row: dict) -> str:
    parts = row.get("split_parts_ohm")
    if not parts:
        return ""
    up = " + ".join(_fmt(v, "ohm", 4) for v in parts["upper"])
    lo = " + ".join(_fmt(v, "ohm", 4) for v in parts["lower"])
    if row.get("clamps") is not None:  # sized: the sizer lays the two segments out
        return f"sized as {lo} from the movement to the tap and {up} from the tap to the first range"
    whole = _fmt(row["split_of_ohm"], "ohm", 4)
    return f"{row['split_element']} ({whole}) made of {up} above the tap and {lo} below it"


def format_protect(result: dict) -> str:
    """The protection search as text for a terminal of about 100 columns.

    A Pareto table of the best placements (protection: worst movement multiple,
    forward and reverse polarity; accuracy cost: the clamp error at the hottest
    ambient in % of full scale and as a share of the class; part count; power in
    the clamp's parts), the two baselines on the same footing, the chosen
    placement and how many candidates were evaluated.
    """
    t_hot_c = result["hot_temperature_k"] - ZERO_CELSIUS_K
    lim = result["limits_pct"]
    same = len(set(lim.values())) == 1
    req = (f"{next(iter(lim.values())):.3g} % of full scale on every position" if same else
           "; ".join(f"{k}: {v:.3g} %" for k, v in lim.items()))
    lines = [f"Clamp placement: {result['title']}",
             f"{result['candidates_evaluated']} candidates evaluated ({result['pruned']} pruned by bounds"
             + (", stopped at the cap" if result["truncated"] else "") + f"), seed {result['seed']}.",
             f"Requirement: clamp error at {t_hot_c:.1f} degC (hottest ambient) within {req} "
             f"(class {result['class_index']:g}).",
             "Fault stimuli: " + ", ".join(result["stimuli"]) + ".", ""]
    head = (f"{'#':>2}  {'site':<16}{'split':<11}{'forward':<15}{'reverse':<15}"
            f"{'worst x':>8}{'fwd x':>7}{'rev x':>7}{'err %':>7}{'class':>7}{'parts':>6}{'power':>10}")
    lines += [head, "-" * len(head)]

    def line(tag, r):
        site = r["site"].replace(" + movement pair", " +pair")
        return (f"{tag:>2}  {site:<16}{_split_text(r):<11}{(r.get('forward_part') or '-'):<15}"
                f"{(r.get('reverse_part') or '-'):<15}{_mult(r['worst_movement_multiple']):>8}"
                f"{_mult(r['worst_movement_multiple_forward']):>7}{_mult(r['worst_movement_multiple_reverse']):>7}"
                f"{_pct(r['hot_linearity_error_pct']):>7}{_pct(_hundred(r['share_of_class']), '.1f'):>6}%"
                f"{r['parts_count']:>6}"
                f"{_fmt(r['power_w'], 'W'):>10}")

    for r in result["pareto"]:
        lines.append(line(str(r["rank"]), r) + ("  <- chosen" if r.get("chosen") else ""))
    if not result["pareto"]:
        lines.append("   no placement meets the accuracy requirement and the clamp diodes' ratings")
    lines += ["Columns: split = resistance from the movement to the clamp tap; worst / fwd / rev x = largest movement",
              "current over the fault stimuli in multiples of full scale (both polarities / reading up / reading",
              "down); err % = change of reading the clamps cause at the hottest ambient, % of full scale; class =",
              "that as a share of the class index; power = largest power in the clamp's parts (diodes, split",
              "resistors) under a fault. +pair: a one-diode pair also stays across the movement."]
    lines += ["", "Baselines:"]
    for key, tag in (("as_given", "as given"), ("across_movement", "across movement, one diode each way")):
        b = result["baseline"][key]
        ok = "meets" if b["feasible"] else "misses"
        fwd, rev = _mult(b["worst_movement_multiple_forward"]), _mult(b["worst_movement_multiple_reverse"])
        err, cls = _pct(b["hot_linearity_error_pct"]), _pct(_hundred(b["share_of_class"]), ".1f")
        lines.append(f"  {tag}: worst {_mult(b['worst_movement_multiple'])} x (forward {fwd}, reverse {rev}), "
                     f"clamp error {err} % ({cls} % of class), "
                     f"{ok} the requirement")
    c = result["chosen"]
    lines.append("")
    if c is None:
        lines.append("RESULT: no placement meets the requirement; raise the share of the class, use lower-leakage "
                     "diodes, or accept the protection of the project as given.")
    else:
        b = result["baseline"]["across_movement"]
        where = c["site"]
        if c["site_kind"] == "split":
            where += f" at {_fmt(c['split_ohm'], 'ohm')} above the movement"
        lines.append(f"Chosen: {where}, forward {c.get('forward_part') or 'none'}, reverse "
                     f"{c.get('reverse_part') or 'none'}.")
        if _parts_text(c):
            lines.append(f"  {_parts_text(c)}")
        for cl in c.get("clamps") or ():
            at = "across the movement" if isinstance(cl["at"], str) else f"at {_fmt(cl['at'], 'ohm', 4)} above it"
            lines.append(f"  clamps: {at}: forward {cl['forward'] or '-'}, reverse {cl['reverse'] or '-'}, "
                         f"count {cl['count']}")
        lines.append(f"  worst movement multiple {_mult(b['worst_movement_multiple'])} -> "
                     f"{_mult(c['worst_movement_multiple'])} x full scale (clamps across the movement -> chosen)")
        if c.get("max_input_multiple_forward") is not None:
            bf, cf = _mult(b["max_input_multiple_forward"]), _mult(c["max_input_multiple_forward"])
            br, cr = _mult(b["max_input_multiple_reverse"]), _mult(c["max_input_multiple_reverse"])
            lines.append(f"  at the declared maximum input: forward {bf} -> {cf}, reverse {br} -> {cr}")
        fwd_worse = (c["worst_movement_multiple_forward"] or 0.0) >= (c["worst_movement_multiple_reverse"] or 0.0)
        wc = (c.get("worst_case_forward") if fwd_worse else c.get("worst_case_reverse")) or {}
        err, cls = _pct(c["hot_linearity_error_pct"]), _pct(_hundred(c["share_of_class"]), ".1f")
        lines.append(f"  worst case: {wc.get('position')} | {wc.get('stimulus')}; clamp error at the hottest ambient "
                     f"{err} % ({cls} % of class); diode stress {_pct(c['clamp_stress_ratio'], '.2f')} of rating")
        lines.append("RESULT: " + ("the chosen placement protects better than clamps across the movement"
                                   if result["improves_on_across_movement"] else
                                   "no placement protects better than clamps across the movement"))
    return "\n".join(lines) + "\n"


def _site_of(ctx: _Search, row: dict) -> Site:
    for s in ctx.sites():
        if s.label == row["site"]:
            return s
    raise UsageError(f"the result names the site '{row['site']}', which this project does not have; "
                     "run the search on this project again")


def _stack_of(d: dict | None) -> Stack | None:
    return None if d is None else Stack(d["model"], int(d["count"]), d.get("mode", "junction"))


def protected_text(design: Design | Spec, result: dict) -> str:
    """The project file with the chosen clamp placement written in.

    Parameters
    ----------
    design : Design
        The design the search ran on (its project loaded from a file: the text is kept).
    result : dict
        What :func:`protect_project` returned for it.

    Returns
    -------
    str
        For an explicit network: the file with its ``network:`` section replaced
        (the split resistor by its two standard-value parts, the old clamp diodes
        by the new ones with fresh designators); for a sized project: the file
        with its ``clamps:`` section replaced. The old section stays as comments.

    Raises
    ------
    ProjectError
        When the spec carries no file text.
    UsageError
        When the result has no chosen placement.
    """
    from . import writer

    design = as_design(design)
    spec = design.spec
    if not spec.text:
        raise ProjectError("the project has no file text to extend; load it from a file (planner.project.load) first",
                           spec.path)
    row = result.get("chosen")
    if not row:
        raise UsageError("the search found no placement that meets the requirement, so there is nothing to write; "
                         "raise the share of the class or add lower-leakage diode models")
    ctx = _Search(design, DEFAULT_SHARE, None, MAX_CANDIDATES, None)
    b = result["baseline"]["across_movement"]
    where = row["site"] + (f" at {_fmt(row['split_ohm'], 'ohm', 4)} above the movement"
                           if row["site_kind"] == "split" else "")
    header = [
        f"# Clamp placement chosen by the protection search: {where}, forward "
        f"{row.get('forward_part') or 'none'}, reverse {row.get('reverse_part') or 'none'}.",
        f"# Worst movement multiple over the fault stimuli {_mult(b['worst_movement_multiple'])} x (clamps across "
        f"the movement) -> {_mult(row['worst_movement_multiple'])} x; clamp error at the hottest ambient "
        f"{row['hot_linearity_error_pct']:.3f} % of full scale ({100 * row['share_of_class']:.1f} % of class).",
        f"# {result['candidates_evaluated']} candidates evaluated. Check with 'planner faults' and 'planner check'.",
    ]
    if ctx.sized:
        clamps = tuple(ClampRequest(at=c["at"] if isinstance(c["at"], str) else float(c["at"]),
                                    forward=c["forward"], reverse=c["reverse"], count=int(c["count"]))
                       for c in row["clamps"])
        return writer.replace_sections(spec.text, ("clamps",), writer.clamp_lines(clamps), header=header,
                                       record="# The clamps before the protection search (kept for the record):")
    combo = Combo(_site_of(ctx, row), _stack_of(row.get("forward")), _stack_of(row.get("reverse")))
    parts = row.get("split_parts_ohm")
    kw = {"upper": tuple(parts["upper"]), "lower": tuple(parts["lower"])} if parts else {}
    if combo.site.kind == "split" and not parts:
        raise UsageError("the chosen split has no standard values; run the search again")
    net, clamp, watch, _ = ctx.build(combo, **kw)
    notes = {}
    names = list(clamp)
    node = combo.site.node if combo.site.kind == "tap" else ctx.tap_node
    where = "across the movement" if combo.site.kind == "movement" else f"at {node}"
    if combo.site.pair is not None:
        notes[names.pop(0)] = "clamp across the movement, forward"
        notes[names.pop(0)] = "clamp across the movement, reverse"
    for direction, st in (("forward", combo.forward), ("reverse", combo.reverse)):
        for k in range(st.count if st else 0):
            zener = ", zener in breakdown" if st.mode == "breakdown" else ""
            notes[names.pop(0)] = f"clamp {where}, {direction}{zener}" + (f" ({k + 1} of {st.count})"
                                                                           if st.count > 1 else "")
    for n in watch:
        if n not in clamp:
            e = net.element(n)
            notes[n] = f"{e.group}, {'below' if e.b == combo.site.node else 'above'} the clamp tap"
    return writer.replace_sections(spec.text, ("network",), writer.network_lines(net, notes), header=header,
                                   record="# The network before the protection search (kept for the record):")


def write_protected(design: Design | Spec, result: dict, out_path) -> str:
    """Write the project with the chosen clamp placement to a new file.

    Parameters
    ----------
    design : Design
        The design the search ran on (its project loaded from a file).
    result : dict
        What :func:`protect_project` returned.
    out_path : str or path-like
        Where to write (``-``: standard output); never the project file itself.

    Returns
    -------
    str
        The text written.

    Raises
    ------
    UsageError
        When ``out_path`` is the input file or cannot be written, or the result
        has no chosen placement.

    Notes
    -----
    The text is loaded and validated (:func:`planner.project.loads`, the graph
    checks; for a sized project the sizer runs on it) before it is written,
    through :func:`planner.fsio.emit` (atomically to a file, or to standard output).
    """
    from .fsio import emit
    from .project import loads

    design = as_design(design)
    spec = design.spec
    text = protected_text(design, result)
    build(loads(text, str(out_path)))  # sizes and checks it as any command would
    emit(out_path, text, protect=[spec.path] if spec.path else [])
    return text
