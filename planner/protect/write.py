"""Writing the chosen placement back: the project file with its clamps replaced.

:func:`protected_text` makes the text (an explicit network gets a new
``network:`` section, a sized project a new ``clamps:`` section; the old one stays
as comments, :mod:`planner.writer`); :func:`write_protected` validates it as any
command would and writes it through :func:`planner.fsio.emit`.

Public API
----------
:func:`protected_text`, :func:`write_protected`.
"""

from __future__ import annotations

from .. import writer
from ..design import Design, as_design, build
from ..errors import ProjectError, UsageError
from ..fsio import emit
from ..model import ClampRequest, Spec
from ..project import loads
from .candidates import Combo, Site, Stack, place_clamp, sites
from .context import SearchContext
from .judged import with_protection
from .report import multiple_text, si_text

__all__ = ["protected_text", "write_protected"]


def _site_of(ctx: SearchContext, row: dict) -> Site:
    """The project's site a result row names."""
    for s in sites(ctx):
        if s.label == row["site"]:
            return s
    raise UsageError(f"the result names the site '{row['site']}', which this project does not have; "
                     "run the search on this project again")


def _stack_of(d: dict | None) -> Stack | None:
    """A stack from its row entry (:meth:`Stack.as_dict`), None for none."""
    return None if d is None else Stack(d["model"], int(d["count"]), d.get("mode", "junction"))


def _header(result: dict, row: dict) -> list[str]:
    """Comment lines that say what the search chose and what it gains."""
    b = result["baseline"]["across_movement"]
    where = row["site"] + (f" at {si_text(row['split_ohm'], 'ohm', 4)} above the movement"
                           if row["site_kind"] == "split" else "")
    return [
        f"# Clamp placement chosen by the protection search: {where}, forward "
        f"{row.get('forward_part') or 'none'}, reverse {row.get('reverse_part') or 'none'}.",
        f"# Worst movement multiple over the fault stimuli {multiple_text(b['worst_movement_multiple'])} x (clamps "
        f"across the movement) -> {multiple_text(row['worst_movement_multiple'])} x; clamp error at the hottest "
        f"ambient {row['hot_linearity_error_pct']:.3f} % of full scale ({100 * row['share_of_class']:.1f} % of class).",
        f"# {result['candidates_evaluated']} candidates evaluated. Check with 'planner faults' and 'planner check'.",
    ]


def _element_notes(ctx: SearchContext, combo: Combo, net, clamp: tuple, watch: tuple) -> dict[str, str]:
    """A comment for each new part: which clamp diode it is, which side of the tap a split part is."""
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
    return notes


def protected_text(design: Design | Spec, result: dict) -> str:
    """The project file with the chosen clamp placement written in.

    Parameters
    ----------
    design : Design
        The design the search ran on (its project loaded from a file: the text is kept).
    result : dict
        What :func:`planner.protect.protect_project` returned for it.

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
    design = as_design(design)
    spec = design.spec
    if not spec.text:
        raise ProjectError("the project has no file text to extend; load it from a file (planner.project.load) first",
                           spec.path)
    row = result.get("chosen")
    if not row:
        raise UsageError("the search found no placement that meets the requirement, so there is nothing to write; "
                         "raise the share of the class or add lower-leakage diode models")
    ctx = SearchContext(design)
    header = _header(result, row)
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
    net, clamp, watch, _ = place_clamp(ctx, combo, **kw)
    notes = _element_notes(ctx, combo, net, clamp, watch)
    return writer.replace_sections(spec.text, ("network",), writer.network_lines(net, notes), header=header,
                                   record="# The network before the protection search (kept for the record):")


def write_protected(design: Design | Spec, result: dict, out_path) -> str:
    """Write the project with the chosen clamp placement to a new file.

    Parameters
    ----------
    design : Design
        The design the search ran on (its project loaded from a file).
    result : dict
        What :func:`planner.protect.protect_project` returned.
    out_path : str or path-like
        Where to write (``-``: standard output); never the project file itself.

    Returns
    -------
    str or None
        The text written; None when neither a clamp placement nor protection parts
        protect better than the project as given (nothing is written: a plan that
        protects worse than its input is never written).

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
    design = as_design(design)
    spec = design.spec
    parts = (result.get("matrix") or {}).get("chosen_parts")
    if not result.get("chosen") and parts is None:
        return None  # nothing protects better than the project as given: nothing is written
    if not spec.text:
        raise ProjectError("the project has no file text to extend; load it from a file (planner.project.load) first",
                           spec.path)
    text = protected_text(design, result) if result.get("chosen") else spec.text
    if parts is not None:
        m = parts["matrix"]
        text = with_protection(text, parts, header=[
            f"# Protection parts chosen by the search: {parts['label']}; the misrange matrix then has "
            f"{m['failing']} failing cases (worst ratio {m['worst_ratio']:.3g}), price in accuracy "
            f"{parts['price_pct']:.3f} % of full scale at the hottest ambient."])
    build(loads(text, str(out_path)))  # sizes and checks it as any command would
    emit(out_path, text, protect=[spec.path] if spec.path else [])
    return text
