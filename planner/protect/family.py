"""Families of candidates: combos alike but for their stacks' models and lengths, solved as one batch.

The combos of one family (:func:`planner.protect.search.family_key`: the same site,
each direction's stack present or not alike and in the same mode) are one circuit,
:func:`family_template`, whose stacks are each one diode; the rows of a batch carry each
member's models and junctions in series (:class:`RowDiodes`, passed to
:meth:`planner.engine.Engine.operate` as ``models`` and ``stacks``), and
:func:`run_family` gives each member what :func:`planner.protect.evaluate.run` gives it.

Public API
----------
:class:`RowDiodes`, :func:`family_template`, :func:`run_family`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..errors import SolveError
from .candidates import Combo
from .context import SearchContext
from .evaluate import SEARCH_PHASE_POINTS, _factors, _run_rows, topology

__all__ = ["RowDiodes", "family_template", "run_family"]


@dataclass(frozen=True)
class RowDiodes:
    """The clamp diodes of a family batch row by row (:func:`run_family`): per designator of the template,
    the model of each row, the junctions in series it stands for, and the designator of the row's own
    diode (the first of its stack) in the member's network (arrays of the batch's rows)."""

    models: dict
    stacks: dict
    own: dict

    def map(self, fn) -> "RowDiodes":
        """Every array passed through ``fn`` (the rows repeated, tiled or taken as a call lays them out)."""
        return RowDiodes({k: fn(v) for k, v in self.models.items()}, {k: fn(v) for k, v in self.stacks.items()},
                         {k: fn(v) for k, v in self.own.items()})

    def names(self) -> set:
        return set(self.models) | set(self.stacks)

    def ratings(self, cat, name: str) -> tuple:
        """Diode ``name``'s continuous ratings per row, (rows, 1) each: average current [A], surge current
        [A], and power [W] times the junctions in series (the stack's power is shared equally)."""
        ds = [cat[m] for m in self.models[name]]
        k = np.asarray(self.stacks[name], dtype=float)[:, None] if name in self.stacks else 1.0
        return (np.array([d.max_current_a for d in ds])[:, None], np.array([d.surge_current_a for d in ds])[:, None],
                np.array([d.max_power_w for d in ds])[:, None] * k)


def family_template(combo: Combo) -> Combo:
    """The combo whose network stands for every combo of its family: each stack one diode (the stack's
    junctions in series are the parameters of that diode's rows, :class:`RowDiodes`)."""
    def one(st):
        return None if st is None else replace(st, count=1)

    return Combo(combo.site, one(combo.forward), one(combo.reverse))


def run_family(ctx: SearchContext, combos: list, topos: list, grids: list, *,
               n_phase: int = SEARCH_PHASE_POINTS) -> list | None:
    """Combos alike but for their stacks' models and counts, each on its own rows, as one batch (uncounted).

    Parameters
    ----------
    ctx : SearchContext
    combos : list of Combo
        One family: the same site, each direction's stack present or not alike and in
        the same mode (:func:`planner.protect.search.family_key`); each a grid split or
        no split, so that the readings without clamps are the base network's.
    topos : list of Topology
        Each combo's own network (:func:`topology`): positions whose readings are cycle
        means (AC ranges) are solved member by member on them, and each member's
        positions that no row of it changes are kept there.
    grids : list
        Each combo's split resistances [ohm] (as ``r_rows`` of :func:`run`), or None.
    n_phase : int
        Phase points per sine cycle.

    Returns
    -------
    list of Metrics or None
        What :func:`run` gives each combo on its rows (with ``count=None``), or None
        when the batch does not solve (each member is then to be run alone: one member's
        failure must not be the others').

    Notes
    -----
    The members are solved on one network, :func:`family_template`: each stack is one
    diode whose rows carry the member's model and number of junctions in series
    (:meth:`planner.engine.Engine.operate`, ``models`` and ``stacks``; a stack of N
    identical junctions obeys exactly the law of one with N times its :math:`nV_t`,
    breakdown voltage and series resistance). The solver's cost being mostly per call,
    not per row, one call serves the family. Each row is solved to the solver's own
    tolerance, as in a call of its own: the figures agree with each combo's own
    evaluation to that tolerance, not always to the last digit. A stack's power is
    shared equally by its junctions; the case a stack's diode decides names its first
    diode, as the combo's own network does.
    """
    template = topology(ctx, family_template(combos[0]))
    sizes = [1 if g is None else len(g) for g in grids]
    stacks_of = {}  # template designator of a stack -> its direction
    pair = 2 if combos[0].site.pair is not None else 0
    at = pair
    for direction in ("forward", "reverse"):
        if getattr(combos[0], direction) is not None:
            stacks_of[template.clamp[at]] = direction
            at += 1
    models, stacks, own = {}, {}, {}
    for n, direction in stacks_of.items():
        first = [t.clamp[pair + (c.forward.count if direction == "reverse" and c.forward is not None else 0)]
                 for c, t in zip(combos, topos)]
        own[n] = np.repeat(np.array(first, dtype=object), sizes)
        ms = [getattr(c, direction).model for c in combos]
        ks = [getattr(c, direction).count for c in combos]
        if len(set(ms)) > 1:
            models[n] = np.repeat(np.array(ms, dtype=object), sizes)
        if len(set(ks)) > 1 or ks[0] != 1:
            stacks[n] = np.repeat(np.array(ks, dtype=float), sizes)
            models.setdefault(n, np.repeat(np.array(ms, dtype=object), sizes))
    if template.factor is None:
        fac = None
    else:
        parts = [_factors(t, g, None) for t, g in zip(topos, grids)]
        fac = {k: np.concatenate([f[k] for f in parts]) for k in parts[0]}
    rd = RowDiodes(models, stacks, own)
    try:
        m = _run_rows(ctx, template, fac, sum(sizes), n_phase, rd=rd, members=list(zip(topos, sizes)))
    except SolveError:
        return None
    ends = np.cumsum([0] + sizes)
    return [m.rows(slice(int(a), int(b))) for a, b in zip(ends[:-1], ends[1:])]
