"""Project-file text from the model: explicit networks and ``clamps:`` sections.

The planner writes project files in two places: ``planner size --write-network``
(the sized network made explicit) and the protection search
(:mod:`planner.protect`: the chosen clamp placement written back). Both keep the
user's file as it is - comments, order, every other section - and replace only
the sections they change; the replaced text stays in the file as comments, the
record of what was there. Every quantity is written with its unit and parses
back to exactly the same float, so a written file loads to the same
:class:`planner.model.NetworkSpec` (less line numbers, targets and groups, which
are written as comments).

Public API
----------
:func:`quantity`, :func:`yaml_string`, :func:`element_line`, :func:`network_lines`,
:func:`clamp_lines`, :func:`split_top_level`, :func:`replace_sections`.
"""

from __future__ import annotations

from typing import Iterable, Mapping, Sequence

from .model import ClampRequest, NetworkSpec
from .tools import quantity, yaml_string

__all__ = [
    "quantity",
    "yaml_string",
    "element_line",
    "network_lines",
    "clamp_lines",
    "split_top_level",
    "replace_sections",
]


def element_line(e) -> str:
    """One network element as a YAML flow mapping, with its notes as a comment.

    Resistors carry every rating explicitly (value, tolerance, tempco, power,
    limiting element voltage, series; ``trimmer`` and ``pulse_energy`` when set),
    so the file does not depend on the ``parts.resistors`` defaults; the segment
    (``group``) and the sizer's target share follow as a comment.

    Parameters
    ----------
    e : planner.parts.Part
        Any network element (each kind writes itself: :meth:`planner.parts.Part.yaml`).

    Returns
    -------
    str
        ``'{name: R1, kind: resistor, between: [t1, m_plus], value: 8 kohm, ...}'``.
    """
    return e.yaml()


def network_lines(net: NetworkSpec, notes: Mapping[str, str] | None = None) -> list[str]:
    """The ``network:`` section of a project file, one element or position per line.

    Parameters
    ----------
    net : NetworkSpec
    notes : mapping of str to str, optional
        A comment to put after an element, by designator (it replaces the
        element's own segment note).

    Returns
    -------
    list of str
        Lines without newlines, starting with ``'network:'``.
    """
    notes = notes or {}
    lines = ["network:"]
    if net.contact_style is not None:
        lines.append(f"  contact_style: {net.contact_style}")
    lines.append("  elements:")
    for e in net.elements:
        text = element_line(e)
        if e.name in notes:
            text = text.split("  # ", 1)[0] + f"  # {notes[e.name]}"
        lines.append(f"    - {text}")
    lines.append("  positions:")
    for p in net.positions:
        fs = quantity(p.full_scale, p.unit)
        key = "center" if p.center is not None else "full_scale"  # an ohms range has a centre, no full scale
        scale = f", scale: {p.scale}" if p.scale != "shared" else ""
        lines.append(f"    - {{name: {yaml_string(p.name)}, measures: {p.measures}, {key}: {fs}, "
                     f"input: [{p.input[0]}, {p.input[1]}]{scale}}}")
    return lines


def clamp_lines(clamps: Sequence[ClampRequest], notes: Sequence[str | None] = ()) -> list[str]:
    """The ``clamps:`` section of a project file.

    Parameters
    ----------
    clamps : sequence of ClampRequest
    notes : sequence of (str or None), optional
        A comment for each request, in order.

    Returns
    -------
    list of str
        ``['clamps:', '  - {at: {above_movement: 6.04 kohm}, forward: si_small, count: 3}', ...]``;
        ``['clamps: []']`` when there are none.
    """
    if not clamps:
        return ["clamps: []"]
    lines = ["clamps:"]
    for i, c in enumerate(clamps):
        if isinstance(c.at, str):
            where = f"across: {c.at}"
        else:
            where = f"at: {{above_movement: {quantity(float(c.at), 'ohm')}}}"
        parts = [where]
        if c.forward is not None:
            parts.append(f"forward: {c.forward}")
        if c.reverse is not None:
            parts.append(f"reverse: {c.reverse}")
        if c.count != 1:
            parts.append(f"count: {int(c.count)}")
        if getattr(c, "bidirectional", False):
            parts.append("bidirectional: true")
        note = notes[i] if i < len(notes) else None
        lines.append(f"  - {{{', '.join(parts)}}}" + (f"  # {note}" if note else ""))
    return lines


def split_top_level(text: str, keys: Iterable[str]) -> tuple[list[str], list[str]]:
    """Split YAML text into (kept lines, lines of the named top-level blocks).

    A block runs from its ``key:`` line at column 0 to the next line at column 0
    that is neither blank nor a comment.

    Parameters
    ----------
    text : str
    keys : iterable of str
        Top-level keys whose blocks are taken out.

    Returns
    -------
    kept, removed : list of str
        Trailing blank lines are dropped from both.
    """
    keys = tuple(keys)
    kept, removed, skipping = [], [], False
    for line in text.splitlines():
        starts = line[:1] not in (" ", "\t", "#", "") and ":" in line
        if starts:
            skipping = line.split(":", 1)[0].strip() in keys
        (removed if skipping else kept).append(line)
    while kept and not kept[-1].strip():
        kept.pop()
    while removed and not removed[-1].strip():
        removed.pop()
    return kept, removed


def replace_sections(text: str, drop: Iterable[str], new_lines: Sequence[str], *, header: Sequence[str] = (),
                     record: str = "# The sections replaced below (kept for the record):") -> str:
    """A project file with some top-level sections replaced.

    Parameters
    ----------
    text : str
        The original file's text.
    drop : iterable of str
        Top-level keys whose blocks are taken out (kept as comments).
    new_lines : sequence of str
        The new sections, appended at the end.
    header : sequence of str
        Comment lines (each starting with ``#``) put before the new sections.
    record : str
        The comment line that introduces the kept old sections.

    Returns
    -------
    str
        The new text, ending in a newline.
    """
    kept, removed = split_top_level(text, drop)
    lines = kept + [""]
    if removed:
        lines.append(record)
        lines += ["# " + x if x.strip() else "#" for x in removed]
        lines.append("")
    lines += list(header)
    lines += list(new_lines)
    return "\n".join(lines) + "\n"
