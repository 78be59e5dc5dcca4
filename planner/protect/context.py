"""The prepared search context: what the protection search needs about one project, made once.

:class:`SearchContext` holds the project's design, its network without clamps
(the base every candidate is placed on), the positions with their accuracy
limits, the fault stimuli of every position, the diode models to try, fresh
designators and node names, the seeded random generator, and the search's
bookkeeping (evaluations counted against the cap, pruned branches). Every
step of the search (:mod:`.candidates`, :mod:`.evaluate`, :mod:`.search`,
:mod:`.realise`, :mod:`.report`) takes it as its first argument.

Public API
----------
:class:`SearchContext`, :data:`DEFAULT_SHARE`, :data:`MAX_CANDIDATES`.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import replace
from typing import Callable, Mapping

import numpy as np

from .. import network as nw
from ..design import Design
from ..errors import ProjectError
from ..faults import stimuli_for
from ..sizing import size
from ..stimulus import Stimulus
from .candidates import clamp_diodes, fresh_node, fresh_number

__all__ = ["DEFAULT_SHARE", "MAX_CANDIDATES", "SearchContext"]

#: Default share of the class index the clamps may cost at the hottest ambient.
DEFAULT_SHARE = 0.25
#: Default cap on the candidate evaluations (each split resistance of a grid counts).
MAX_CANDIDATES = 2000


class SearchContext:
    """Everything the search needs about one project, prepared once.

    Parameters
    ----------
    design : Design
        The project's design (:func:`planner.design.build`).
    share : float or mapping of str to float
        Share of the class index the clamps may cost at the hottest ambient, for
        every position or per position name (others get :data:`DEFAULT_SHARE`).
    seed : int, optional
        Seed of the random probes; ``analysis.seed`` when None.
    max_candidates : int
        Cap on the counted evaluations.
    progress : callable(str), optional
        Receives a short message before each batch.

    Attributes
    ----------
    spec : Spec
    sized : bool
        Whether the sizer builds the network (no explicit ``network:``).
    orig_net : NetworkSpec
        The network as given (or as sized from the file), its clamps included.
    orig_clamp : list of str
        Its clamp diodes.
    base : NetworkSpec
        The network without clamps: every candidate is placed on it.
    base_sizing : Sizing or None
        The sizer's result for the project without clamps (sized projects).
    positions : list of Position
    limits : dict of str to float
        Allowed clamp error per position [% of full scale].
    stimuli : dict of str to list of Stimulus
        Fault stimuli per position: the misrange matrix's own and each DC
        project source reversed.
    t_hot : float
        Hottest ambient [K].
    evaluated, reevaluated, pruned : int
        Counted evaluations, evaluations of the reported rows' final pass, pruned branches.
    truncated : bool
        Whether the cap stopped the search.
    failed_at : list of str
        Positions that failed the last candidates judged position by position, most
        recent first (:func:`planner.protect.evaluate.feasible_alone` judges them first).
    failed_stimulus : dict of str to str
        Per position, the stimulus that last put a clamp diode beyond its rating there
        (its group of stimuli is solved first).
    failed_part : str or None
        The clamp diode whose rating alone failed the last candidate judged position by
        position (None: it failed on accuracy or did not solve, or it was feasible).
    """

    def __init__(self, design: Design, share: float | Mapping[str, float] = DEFAULT_SHARE, seed: int | None = None,
                 max_candidates: int = MAX_CANDIDATES, progress: Callable[[str], None] | None = None):
        spec = design.spec
        self.design = design
        self.spec = spec
        self.say = progress or (lambda message: None)
        self.max_candidates = int(max_candidates)
        self.evaluated = 0
        self.reevaluated = 0
        self.pruned = 0
        self.truncated = False
        self.failed_at: list[str] = []  # positions that failed the last candidates judged (the order of the work)
        self.failed_stimulus: dict[str, str] = {}  # position -> the stimulus that overstressed a clamp there last
        self.failed_part: str | None = None  # the clamp diode whose rating alone failed the last candidate
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
        self._prepare_base(design)
        # the linear ranges: an ohms range's accuracy is re-zeroed (planner check) and its faults are
        # judged on the whole misrange matrix with the plan (judged.py)
        self.positions = [p for p in self.base.positions if p.measures != "resistance"]
        self.t_hot = float(spec.ambient.t_max_k)
        self.limits = {}
        for p in self.positions:
            s = share.get(p.name, DEFAULT_SHARE) if isinstance(share, Mapping) else share
            self.limits[p.name] = float(s) * self.class_index
        self.stimuli = {p.name: self._fault_stimuli(p) for p in self.positions}
        names = [e.name for e in self.orig_net.elements] + [e.name for e in self.base.elements]
        self.next_r = fresh_number(names, "R")
        self.next_d = fresh_number(names, "D")
        self.nodes = {n for e in self.orig_net.elements + self.base.elements for n in e.nodes}
        self.tap_node = fresh_node("clamp_tap", self.nodes)
        #: readings at the hottest ambient without clamps: of the base network, and by resistor values
        self.bare_base = None
        self.bare_cache = {}
        #: of networks judged for feasibility alone: by resistor values, (engine, readings of the positions solved)
        self.bare_some = {}

    def _prepare_base(self, design: Design) -> None:
        """The network as given, its clamp diodes, and the base network without them."""
        spec = self.spec
        self.orig_net = design.net
        self.base_sizing = None
        if self.sized:
            if spec.voltage is None and spec.current is None:
                raise ProjectError("the project has neither a network nor voltage/current ranges to protect",
                                   spec.path)
            self.base_sizing = size(replace(spec, clamps=()))
            base = self.base_sizing.network
        else:
            base = None
        self.movement = nw.movement_element(self.orig_net)
        self.orig_clamp = clamp_diodes(self.orig_net)
        if base is None:
            base = replace(self.orig_net, elements=tuple(e for e in self.orig_net.elements
                                                         if e.name not in self.orig_clamp))
        self.base = base

    def _fault_stimuli(self, position) -> list[Stimulus]:
        """The matrix's own fault stimuli of a position, and each DC project source reversed."""
        spec = self.spec
        st = list(stimuli_for(spec, self.base, position))
        for s in spec.faults.sources:
            if s.waveform == "dc" and s.value != 0:
                st.append(Stimulus(f"{s.name} reversed", s.kind, -s.value, "dc",
                                   s.r_source_ohm if s.kind == "voltage" else 0.0,
                                   s.current_limit_a if s.kind == "voltage" else None,
                                   detail="the project's source with its leads reversed"))
        return st

    def room(self, rows: int) -> bool:
        """Whether ``rows`` more evaluations fit under the cap (False also marks the search truncated)."""
        if self.evaluated + rows > self.max_candidates:
            self.truncated = True
            return False
        return True

    def default_model(self) -> str:
        """The model of most of the project's clamp diodes, else the first model."""
        used = Counter(self.orig_net.element(n).model for n in self.orig_clamp)
        if used:
            return sorted(used.items(), key=lambda kv: (-kv[1], self.models.index(kv[0])))[0][0]
        return self.models[0]
