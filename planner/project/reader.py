"""Reading the node tree: typed values with their checks, each error with its line.

:class:`Reader` holds the file name and reads single nodes (a mapping with its
allowed keys, a list, text, a quantity with units, a choice, a whole number);
:class:`Section` reads the keys of one mapping, naming it in every message
(``network element 'R1'.value``). Part kinds read their own keys through a
:class:`Section` (``planner.parts``: ``read`` of each element class and catalogue
model), so a new kind needs no change here.
"""

from __future__ import annotations

import unicodedata
from typing import Any, Mapping, NoReturn, Sequence

from .. import units, values
from ..errors import ProjectError
from ..tools import did_you_mean as suggest
from ..units import QuantityError
from .tree import Node

__all__ = ["Reader", "Section", "suggest", "name_key", "distinct_name", "capped", "tempco_bound", "node_name", "pair",
           "model_ref"]


class Reader:
    """Reads values of one file's node tree; ``path`` names the file in messages."""

    def __init__(self, path: str):
        self.path = path

    def fail(self, message: str, line: int | None) -> NoReturn:
        """Raise the :class:`planner.errors.ProjectError` of this file at ``line``."""
        raise ProjectError(message, self.path, line)

    def unknown_key(self, key: str, where: str, allowed: Sequence[str], line: int) -> NoReturn:
        self.fail(f"unknown key '{key}' in {where}{suggest(key, allowed)}; allowed keys: {', '.join(allowed)}", line)

    def mapping(self, node: Node, where: str, allowed: Sequence[str], example: str) -> "Section":
        if node.kind != "map":
            self.fail(
                f"{where} must be a mapping of keys to values, e.g. {example}; it is {node.describe()}", node.line
            )
        for k, kline in node.key_lines.items():
            if k not in allowed:
                self.unknown_key(k, where, allowed, kline)
        return Section(self, node, where)

    def seq(self, node: Node, where: str, example: str) -> list[Node]:
        if node.kind != "seq":
            self.fail(f"{where} must be a list, e.g. {example}; it is {node.describe()}", node.line)
        return node.value

    def scalar(self, node: Node, where: str, example: str) -> Node:
        if node.kind != "scalar":
            self.fail(f"{where} must be a single value, e.g. {example}; it is {node.describe()}", node.line)
        if node.is_null:
            self.fail(f"{where} is empty; give a value, e.g. {example}, or remove the line", node.line)
        return node

    def text(self, node: Node, where: str, example: str) -> str:
        s = self.scalar(node, where, example).text or ""
        s = s.strip()
        if not s:
            self.fail(f"{where} is empty text; give it, e.g. {example}", node.line)
        return s

    def qty(self, node: Node, dim: str, where: str, check: str | None = None) -> float:
        ex = f"'{units.example(dim)}'"
        self.scalar(node, where, ex)
        try:
            return values.quantity(node.text, dim, where, check)
        except QuantityError as e:
            self.fail(e.message, node.line)

    def choice(self, node: Node, options: Sequence[str], where: str) -> str:
        s = self.text(node, where, options[0])
        if s not in options:
            self.fail(f"{where} is '{s}'{suggest(s, options)}; use one of: {', '.join(options)}", node.line)
        return s

    def integer(self, node: Node, where: str, lo: int, hi: int | None, example: str) -> int:
        self.scalar(node, where, example)
        v = node.value
        if type(v) is not int:
            self.fail(f"{where} is {node.describe()}; give a whole number, e.g. {example}", node.line)
        try:
            return values.whole(v, where, lo, hi)
        except QuantityError as e:
            self.fail(e.message, node.line)


class Section:
    """Reads one mapping section; ``where`` is its dotted name for messages."""

    def __init__(self, ctx: Reader, node: Node, where: str):
        self.ctx = ctx
        self.node = node
        self.where = where

    @property
    def line(self) -> int:
        return self.node.line

    def get(self, key: str) -> Node | None:
        return self.node.value.get(key)

    def key_line(self, key: str) -> int:
        return self.node.key_lines.get(key, self.line)

    def has(self, key: str) -> bool:
        return key in self.node.value

    def req(self, key: str, example: str) -> Node:
        n = self.get(key)
        if n is None:
            self.ctx.fail(f"{self.where}: '{key}' is missing; add it, e.g. {key}: {example}", self.line)
        return n

    def at(self, key: str) -> str:
        return f"{self.where}.{key}"

    def qty(self, key: str, dim: str, default: Any = ..., check: str | None = None, example: str | None = None) -> Any:
        n = self.get(key) if default is not ... else self.req(key, example or units.example(dim))
        if n is None:
            return default
        return self.ctx.qty(n, dim, self.at(key), check)

    def text(self, key: str, default: Any = ..., example: str = "...") -> Any:
        n = self.get(key) if default is not ... else self.req(key, example)
        if n is None:
            return default
        return self.ctx.text(n, self.at(key), example)

    def choice(self, key: str, options: Sequence[str], default: Any = ...) -> Any:
        n = self.get(key) if default is not ... else self.req(key, options[0])
        if n is None:
            return default
        return self.ctx.choice(n, options, self.at(key))

    def integer(self, key: str, default: Any, lo: int, hi: int | None, example: str) -> Any:
        n = self.get(key)
        if n is None:
            return default
        return self.ctx.integer(n, self.at(key), lo, hi, example)

    def boolean(self, key: str, default: bool) -> bool:
        n = self.get(key)
        if n is None:
            return default
        self.ctx.scalar(n, self.at(key), "true")
        if type(n.value) is not bool:
            self.ctx.fail(f"{self.at(key)} is {n.describe()}; give true or false", n.line)
        return n.value

    def sub(self, key: str, allowed: Sequence[str], example: str) -> "Section | None":
        n = self.get(key)
        if n is None:
            return None
        return self.ctx.mapping(n, self.at(key), allowed, example)

    def fail(self, message: str, line: int | None = None) -> NoReturn:
        """Refuse the file at ``line`` (default: this mapping's line)."""
        self.ctx.fail(message, self.line if line is None else line)

    def line_of(self, key: str) -> int:
        """The line of ``key``'s value, or of this mapping when the key is absent."""
        n = self.get(key)
        return n.line if n is not None else self.line

    def tempco(self, key: str, default: float) -> float:
        """A temperature coefficient [1/K], refused beyond +/-100 000 ppm/K."""
        x = self.qty(key, "tempco", default)
        tempco_bound(self.ctx, x, self, key)
        return x

    def pair(self, key: str, example: str) -> tuple[str, str]:
        """Two different node names, e.g. ``between: [vin, t1]`` (required)."""
        return pair(self.ctx, self.req(key, example), self.at(key), example)

    def node_name(self, key: str, example: str) -> str:
        """One node name, e.g. ``anode: m_plus`` (required)."""
        return node_name(self.ctx, self.req(key, example), self.at(key))

    def model(self, key: str, models: Mapping[str, Any], kind: str, example: str) -> str:
        """The name of a catalogue model of ``parts.<kind>s`` (required)."""
        return model_ref(self.ctx, self.req(key, example), models, kind, self.at(key), example)

    def items(self, key: str, example: str) -> list[Node]:
        """The items of the list under ``key``, or an empty list when the key is absent."""
        n = self.get(key)
        return [] if n is None else self.ctx.seq(n, self.at(key), example)



def capped(ctx: Reader, items: list, limit: int, where: str, what: str, line: int) -> list:
    """``items``, or a clear error when there are more than ``limit`` of them (a resource cap)."""
    if len(items) > limit:
        ctx.fail(f"{where} has {len(items)} {what}; the planner handles at most {limit}: split the design", line)
    return items


def tempco_bound(ctx: Reader, x: float, m: Section, key: str) -> None:
    if abs(x) > 0.1:
        n = m.get(key)
        ctx.fail(
            f"{m.at(key)} is '{n.text if n else x}', over 100000 ppm/K; a resistor or coil tempco is a few to "
            "a few thousand ppm/K: check the unit (e.g. '50 ppm/K')",
            n.line if n is not None else m.line,
        )


def node_name(ctx: Reader, node: Node, where: str) -> str:
    return ctx.text(node, where, "vin")


def pair(ctx: Reader, node: Node, where: str, example: str) -> tuple[str, str]:
    items = ctx.seq(node, where, example)
    if len(items) != 2:
        ctx.fail(f"{where} has {len(items)} nodes; give exactly two, e.g. {example}", node.line)
    a = node_name(ctx, items[0], f"{where}[1]")
    b = node_name(ctx, items[1], f"{where}[2]")
    if a == b:
        ctx.fail(f"{where} connects node '{a}' to itself; give two different nodes, e.g. {example}", node.line)
    return a, b


def model_ref(ctx: Reader, node: Node, models, kind: str, where: str, example: str) -> str:
    """A reference to a part model by name (``kind`` is ``diode`` or ``fuse``)."""
    name = ctx.text(node, where, example)
    if name not in models:
        defined = ", ".join(models) or "none yet"
        ctx.fail(
            f"{where}: {kind} model '{name}' is not defined in parts.{kind}s{suggest(name, models)}; "
            f"defined models: {defined}. Add it under parts.{kind}s",
            node.line,
        )
    return name


#: Letters of other scripts that look like Latin letters or digits, after NFKC and casefold
#: (a small table of the common Cyrillic and Greek look-alikes, and the digit-letter pairs
#: 0/o and 1/l/i): Unicode Technical Standard #39, "Unicode Security Mechanisms", section 4
#: (confusable detection), whose skeleton this follows in spirit.
_LOOK_ALIKE = str.maketrans({
    "\u0430": "a", "\u0432": "b", "\u0435": "e", "\u043a": "k", "\u043c": "m", "\u043d": "h", "\u043e": "o",
    "\u0440": "p", "\u0441": "c", "\u0442": "t", "\u0443": "y", "\u0445": "x", "\u0455": "s", "\u0456": "i",
    "\u0458": "j", "\u0501": "d", "\u051b": "q", "\u051d": "w", "\u04bb": "h", "\u0457": "i",
    "\u03b1": "a", "\u03b2": "b", "\u03b5": "e", "\u03b6": "z", "\u03b7": "h", "\u03b9": "i", "\u03ba": "k",
    "\u03bc": "u", "\u03bd": "v", "\u03bf": "o", "\u03c1": "p", "\u03c4": "t", "\u03c5": "u", "\u03c7": "x",
    "0": "o", "1": "l", "i": "l", "|": "l",
})


def name_key(name: str) -> str:
    """The form of a name people cannot tell apart from others of the same form.

    NFKC (compatibility forms: a non-breaking space is a space, the micro sign the
    Greek mu), casefold, invisible formatting characters dropped, white space
    collapsed, and look-alike letters of other scripts mapped to Latin ones.
    """
    s = unicodedata.normalize("NFKC", name).casefold()
    s = "".join(ch for ch in s if unicodedata.category(ch) != "Cf")
    return " ".join(s.translate(_LOOK_ALIKE).split())


def distinct_name(ctx: Reader, name: str, line: int, seen: dict[str, tuple[str, int]], what: str,
                  each: str | None = None) -> None:
    """Refuse a name given twice, one that holds invisible formatting characters, or one that looks like one before it.

    Parameters
    ----------
    name : str
        The name as written (already stripped).
    line : int
        Its line.
    seen : dict
        :func:`name_key` -> (name, line) of the names read so far; ``name`` is added.
    what : str
        ``position``, ``element``, ``fault source`` (for the message).
    each : str, optional
        What each is called in the remedy of a duplicate ("give each ... its own name"); ``what`` by default.
    """
    for other, other_line in seen.values():
        if other == name:
            ctx.fail(f"duplicate {what} name '{name}' (first at line {other_line}); give each {each or what} its own "
                     "name", line)
    hidden = [ch for ch in name if unicodedata.category(ch) == "Cf"]
    if hidden:
        ctx.fail(
            f"{what} name '{name}' holds the invisible character U+{ord(hidden[0]):04X}; names are read by "
            "people and typed on the command line: remove it",
            line,
        )
    key = name_key(name)
    if key in seen:
        other, other_line = seen[key]
        ctx.fail(
            f"{what} name '{name}' looks the same as '{other}' (line {other_line}): they differ only by case, "
            "spacing or look-alike characters, so reports, accept entries and the command line cannot tell "
            "them apart; rename one of them",
            line,
        )
    seen[key] = (name, line)
