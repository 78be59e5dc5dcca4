"""The protection search end to end: :func:`protect_project`.

The steps, each in its own module: the project prepared once
(:class:`planner.protect.context.SearchContext`); the branch-and-bound over
sites and stacks (:func:`planner.protect.search.branch_and_bound`); the best
placements made of standard values (:mod:`planner.protect.realise`) and
evaluated again at the reported resolution; the Pareto set and the choice on
those final numbers (:mod:`planner.protect.ordering`); the JSON result
(:mod:`planner.protect.report`).

Public API
----------
:func:`protect_project`.
"""

from __future__ import annotations

from typing import Callable, Mapping

import numpy as np

from ..background import Deal, beside
from ..design import Design, as_design
from ..errors import UsageError
from ..model import Spec
from ..tools import json_safe
from .candidates import Combo, Site, Stack
from .context import DEFAULT_SHARE, MAX_CANDIDATES, SearchContext
from .evaluate import Point
from .judged import judge_given, judge_plans
from .ordering import PARETO_ROWS, choose, lex_compare, ordered, pareto, ranked, row_multiples
from .realise import REALISE_TRIES, failing_hint, final, realise_explicit, realise_sized
from .report import as_given_row, placement_row, row_key
from .search import branch_and_bound

__all__ = ["protect_project"]


def protect_project(design: Design | Spec, *, share: float | Mapping[str, float] = DEFAULT_SHARE,
                    seed: int | None = None, max_candidates: int = MAX_CANDIDATES,
                    progress: Callable[[str], None] | None = None, parallel: bool | None = None) -> dict:
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
        row of a refinement's batches and each standard-value split counts one. The final pass
        over the reported rows is counted apart (``rows_reevaluated``).
    progress : callable(str), optional
        Receives a short message before each batch.
    parallel : bool, optional
        Use a second core (True): a child process judges the project as given
        and its protection-part combinations on the misrange matrix beside the
        clamp search; a forked worker evaluates the search's next family of
        candidates ahead (:class:`planner.protect.ahead.Ahead`); a child
        evaluates the baselines (the rows of the project as given and of the
        clamps across the movement) and realises part of the best placements
        (:class:`planner.background.Deal`).
        Everything in this process (False); or the first where a second core allows
        it (None, :func:`planner.background.beside`). The decisions are the same;
        the matrix figures may differ in their last digits (see ``docs/performance.md``).

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
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press,
    2007, sec. 9.1 and 10.1 (the refinement's brackets). IEC 60051-1 (class
    index); IEC 60063 (preferred values).
    """
    _check_settings(share, max_candidates, seed)
    design = as_design(design)
    ctx = SearchContext(design, share if isinstance(share, Mapping) else float(share), seed, max_candidates, progress)
    if isinstance(share, Mapping):
        unknown = [k for k in share if k not in ctx.limits]
        if unknown:
            raise UsageError(f"the accuracy share names no position '{unknown[0]}'; positions: "
                             f"{', '.join(ctx.limits)}")
    model = ctx.default_model()
    across = Combo(Site("movement", "movement", ctx.movement.a), Stack(model, 1), Stack(model, 1))
    # the project as given on the misrange matrix does not depend on the clamp search: on a second core
    worst_share = min(share.values()) if isinstance(share, Mapping) else float(share)
    with beside(lambda: judge_given(design, worst_share), str, parallel=parallel) as given:
        ctx.say("the project as given")
        points, info, evaluated = branch_and_bound(ctx, parallel=parallel)

        # every feasible placement found, best first -> standard values -> the faults
        # matrix's phase points -> Pareto set and choice on those final numbers (beside them,
        # the rows of the project as given and of the clamps across the movement)
        candidates, (as_given, across_row, rows) = _final_rows(ctx, points, evaluated, across, parallel)
        ctx.reevaluated += rows
        ctx.say("the misrange matrices of the project as given and of its protection parts")
        judged_given, error = given.result()
        judged_given = judged_given if error is None else None
        table, chosen = _pareto_table([dict(across_row, label="candidate")] + candidates)
        result = _result(ctx, share, max_candidates, info, table, chosen, as_given, across_row)
        _judge_on_matrix(design, result, worst_share, ctx.say, judged_given)
    return json_safe(result)


def _baselines(ctx: SearchContext, across: Combo) -> tuple[dict, dict, int]:
    """The rows of the project as given (:func:`planner.protect.report.as_given_row`) and of the clamps
    across the movement (evaluated as the final pass does), and the rows their evaluations add to the
    final pass's count, given back rather than counted (they may run in a child)."""
    before = ctx.reevaluated
    as_given = as_given_row(ctx)
    pa = final(ctx, Point(across, None, None, False))
    across_row = placement_row(ctx, "across movement", pa, clamps=pa.clamps)
    rows, ctx.reevaluated = ctx.reevaluated - before, before
    return as_given, across_row, rows


def _judge_on_matrix(design: Design, result: dict, worst_share: float, say, given: dict | None = None) -> None:
    """The clamp choice and the protection parts judged on the misrange matrix (:mod:`planner.protect.judged`).

    ``result`` gains ``matrix`` (the judgement); its ``chosen`` is dropped when the
    placement protects worse than the project as given; ``requirements_met``
    becomes: the plan that would be written (or the project as given, when no
    plan is better) leaves no failing case in the misrange matrix, transitions
    included. ``given``: :func:`planner.protect.judged.judge_given` of the design,
    when computed already (None: computed here, so an error it raises is raised
    here as it would be without a child process).
    """
    from .write import protected_text
    judged = judge_plans(design, result, protected_text, worst_share, say, given)
    result["matrix"] = judged
    if result["chosen"] is None:
        for r in result["pareto"]:
            r["chosen"] = False
            if r.get("label") == "chosen":
                r["label"] = "pareto"
    result["requirements_met"] = bool(judged["planned"]["failing"] == 0)
    result["writes"] = bool(result["chosen"] is not None or judged["chosen_parts"] is not None)


def _check_settings(share, max_candidates, seed) -> None:
    """The share, the cap and the seed as the search needs them, else a :class:`UsageError`."""
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


def _final_rows(ctx: SearchContext, points: list, evaluated: dict, across: Combo,
                parallel: bool | None = False) -> tuple[list[dict], tuple]:
    """The rows of the best feasible placements, made of standard values and evaluated again.

    Up to twice :data:`PARETO_ROWS` placements, best first (the clamps across the
    movement, ``across``, left out: their row is made apart), each realised
    (:mod:`planner.protect.realise`) and evaluated at the reported resolution;
    a placement that realises to a row already there is left out, and so is an
    infeasible one (only feasible rows enter the Pareto table: it is found out
    at its first failing position, :func:`planner.protect.evaluate.feasible_alone`).
    With ``parallel``, this process realises the placements from the front of the
    list and a forked child from the back until they meet
    (:class:`planner.background.Deal`); the rows are then taken in order. The
    child first makes the baselines (:func:`_baselines`; here without a child).

    Returns
    -------
    rows : list of dict
        The candidates' rows, best first.
    baselines : tuple
        What :func:`_baselines` returns.
    """
    finals = []
    seen = {row_key(across, None)}
    ctx.say("standard values for the best placements")
    best_first = ranked([p for p in points if p.feasible])
    todo = [p for p in best_first[:2 * PARETO_ROWS] if p.combo.key() != across.key()]

    def task(i):
        # in the worker: one placement realised and judged, with what it added to the counts
        before = (ctx.evaluated, ctx.reevaluated)
        q, fq = _realised(ctx, todo[i], evaluated)
        return q, fq, (ctx.evaluated - before[0], ctx.reevaluated - before[1])

    # a placement costs at most 2 x REALISE_TRIES evaluations: with room for all of them the cap cannot
    # stop the pass, so the placements are independent and may be realised by two processes side by side
    room = ctx.max_candidates - ctx.evaluated >= 2 * REALISE_TRIES * len(todo)
    deal = Deal(len(todo))

    def theirs():
        # in a forked child: the baselines, then the placements from the back of the list, with what each
        # added to the counts
        return _baselines(ctx, across), {i: task(i) for i in iter(deal.back, None)}

    with beside(theirs, str, parallel=parallel if room and len(todo) > 1 else False) as other:
        mine = {i: _realised(ctx, todo[i], evaluated) for i in iter(deal.front, None)}
        both, error = other.result()
    baselines, got = both if error is None else (_baselines(ctx, across), {})
    for i, p in enumerate(todo):
        if i in mine:
            q, fq = mine[i]
        elif i in got:
            q, fq, (n_eval, n_re) = got[i]
            ctx.evaluated += n_eval
            ctx.reevaluated += n_re
        else:  # the child failed: realised here
            q, fq = _realised(ctx, p, evaluated)
        if q is None:
            continue
        if fq is None:
            seen.add(row_key(q.combo, q.r))
            continue
        row = placement_row(ctx, "candidate", fq, clamps=fq.clamps)
        if row["key"] not in seen:
            seen.add(row["key"])
            finals.append(row)
    return finals, baselines


def _realised(ctx: SearchContext, p: Point, evaluated: dict) -> tuple:
    """A placement made of standard values (None when it cannot be) and evaluated at the reported resolution
    (None when infeasible: only a feasible row can enter the table, and an infeasible one is found out at its
    first failing position)."""
    if p.combo.site.kind != "split":
        q = p
    elif ctx.sized:
        q = realise_sized(ctx, p)
    else:
        q = realise_explicit(ctx, p, evaluated[p.combo.key()][0] if p.combo.key() in evaluated else None)
    if q is None:
        return None, None
    return q, final(ctx, q, feasible_only=True, first=failing_hint(p))


def _pareto_table(finals: list[dict]) -> tuple[list[dict], dict | None]:
    """The Pareto set of the feasible rows, best first and ranked, and the chosen row (a copy) or None."""
    table = ordered(pareto([r for r in finals if r["feasible"]]))[:PARETO_ROWS]
    chosen = choose(table)
    for i, r in enumerate(table, 1):
        r["rank"] = i
        r["chosen"] = chosen is not None and r["key"] == chosen["key"]
        r["label"] = "chosen" if r["chosen"] else "pareto"
    if chosen is not None:
        chosen = dict(chosen)
    return table, chosen


def _result(ctx: SearchContext, share, max_candidates: int, info: dict, table: list[dict], chosen: dict | None,
            as_given: dict, across_row: dict) -> dict:
    """The search's result: settings, record, Pareto table, choice and baselines."""
    spec = ctx.spec
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
        "pareto": table,
        "chosen": chosen,
        "baseline": {"as_given": as_given, "across_movement": across_row},
    }
    result["requirements_met"] = bool(chosen is not None and chosen["feasible"])
    result["improves_on_across_movement"] = bool(
        chosen is not None and lex_compare(row_multiples(chosen), row_multiples(across_row)) < 0)
    return result
