"""Project-file text from the model: explicit networks and ``clamps:`` sections.

The planner writes project files in two places: ``planner size --write-network``
(the sized network made explicit) and the protection search
(:mod:`planner.clamps`: the chosen clamp placement written back). Both keep the
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

from .model import ClampRequest, Contact, Diode, Fuse, MovementElement, NetworkSpec, Resistor

__all__ = [
    "quantity",
    "yaml_string",
    "element_line",
    "network_lines",
    "clamp_lines",
    "split_top_level",
    "replace_sections",
]

#: Dimension of :func:`planner.units.parse` for each unit the writer emits.
_DIMENSION = {"ohm": "resistance", "V": "voltage", "A": "current", "W": "power", "J": "energy"}


def _parses_to(text: str, unit: str, x: float) -> bool:
    from .units import parse

    try:
        return parse(text, _DIMENSION[unit]) == x
    except Exception:  # any text that does not parse back is simply not the one to write
        return False


def quantity(x: float, unit: str) -> str:
    """A quantity as project-file text that parses back to the same float.

    Parameters
    ----------
    x : float
        The value in SI units [ohm], [V], [A], [W] or [J].
    unit : {'ohm', 'V', 'A', 'W', 'J'}

    Returns
    -------
    str
        The shortest SI-prefixed text (4 to 17 significant digits) that
        :func:`planner.units.parse` reads back as exactly ``x``, e.g.
        ``'8 kohm'``, ``'3.01 kohm'``; ``repr(x)`` with the unit when none does.
    """
    from .units import format_si

    for digits in range(4, 18):
        text = format_si(x, unit, digits)
        num, _, rest = text.partition(" ")
        if "." in num and "e" not in num:
            num = num.rstrip("0").rstrip(".")
        out = f"{num} {rest}".strip()
        if _parses_to(out, unit, x):
            return out
    return f"{x!r} {unit}"


def yaml_string(x) -> str:
    """A double-quoted YAML scalar (backslashes and quotes escaped)."""
    return '"' + str(x).replace("\\", "\\\\").replace('"', '\\"') + '"'


def _fmt(x: float, unit: str) -> str:
    from .units import format_si

    return format_si(x, unit, 4)


def element_line(e) -> str:
    """One network element as a YAML flow mapping, with its notes as a comment.

    Resistors carry every rating explicitly (value, tolerance, tempco, power,
    limiting element voltage, series; ``trimmer`` and ``pulse_energy`` when set),
    so the file does not depend on the ``parts.resistors`` defaults; the segment
    (``group``) and the sizer's target share follow as a comment.

    Parameters
    ----------
    e : Resistor, MovementElement, Diode, Contact or Fuse

    Returns
    -------
    str
        ``'{name: R1, kind: resistor, between: [t1, m_plus], value: 8 kohm, ...}'``.
    """
    if isinstance(e, Resistor):
        extra = [
            f"value: {quantity(e.value_ohm, 'ohm')}",
            f"tolerance: {e.tolerance * 100:.10g} %",
            f"tempco: {e.tempco_per_k * 1e6:.10g} ppm/K",
            f"power: {quantity(e.power_w, 'W')}",
            f"max_voltage: {quantity(e.max_voltage_v, 'V')}",
        ]
        if e.series is not None:
            extra.append(f"series: {e.series}")
        if e.trimmer:
            extra.append("trimmer: true")
        pulse = getattr(e, "pulse_energy_j", None)
        if pulse is not None:
            extra.append(f"pulse_energy: {quantity(pulse, 'J')}")
        note = []
        if e.group is not None:
            note.append(f"segment '{e.group}'")
        if e.target_ohm is not None:
            note.append(f"share of target {_fmt(e.target_ohm, 'ohm')}")
        comment = f"  # {', '.join(note)}" if note else ""
        return f"{{name: {e.name}, kind: resistor, between: [{e.a}, {e.b}], {', '.join(extra)}}}{comment}"
    if isinstance(e, MovementElement):
        return f"{{name: {e.name}, kind: movement, between: [{e.a}, {e.b}]}}"
    if isinstance(e, Diode):
        return f"{{name: {e.name}, kind: diode, anode: {e.anode}, cathode: {e.cathode}, model: {e.model}}}"
    if isinstance(e, Contact):
        closed = ", ".join(yaml_string(c) for c in e.closed_in)
        extra = f", resistance: {quantity(e.r_ohm, 'ohm')}" if e.r_ohm else ""
        return f"{{name: {e.name}, kind: contact, between: [{e.a}, {e.b}], closed_in: [{closed}]{extra}}}"
    if isinstance(e, Fuse):
        return f"{{name: {e.name}, kind: fuse, between: [{e.a}, {e.b}], model: {e.model}}}"
    raise TypeError(f"no project-file form for element {e!r}")


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
        lines.append(f"    - {{name: {yaml_string(p.name)}, measures: {p.measures}, full_scale: {fs}, "
                     f"input: [{p.input[0]}, {p.input[1]}]}}")
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
            where = "across: movement"
        else:
            where = f"at: {{above_movement: {quantity(float(c.at), 'ohm')}}}"
        parts = [where]
        if c.forward is not None:
            parts.append(f"forward: {c.forward}")
        if c.reverse is not None:
            parts.append(f"reverse: {c.reverse}")
        if c.count != 1:
            parts.append(f"count: {int(c.count)}")
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
