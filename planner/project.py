"""Project-file loader: YAML text with units in, :class:`planner.model.Spec` out.

The file is read as UTF-8 and composed with PyYAML's safe loader into a node
tree that keeps every node's position, so each error names the file and the
1-based line and says what to do. The tree is then read section by section
(one helper per section); every quantity goes through
:func:`planner.units.parse` and lands in the model as an SI float.

Guards: files over 5 MB, bytes that are not UTF-8, nesting deeper than 64,
more than 200 000 values after alias expansion (an "alias bomb"), more than
64 positions (or ranges), 256 network elements, 64 fault sources or 200 000
Monte Carlo samples, duplicate
keys (YAML would silently keep the last one), unknown keys (with the nearest
known key suggested) and tags outside plain YAML are all refused with a
:class:`planner.errors.ProjectError`.

The keys, units and defaults are documented in ``docs/project-file.md``.

Run ``python -m planner.project FILE`` to check a file: it prints a short
summary and exits 0, or prints the error and exits 2.
"""

from __future__ import annotations

import dataclasses
import datetime
import difflib
import math
import os
import re
import stat
import sys
from typing import Any, Iterable, NoReturn, Sequence

import yaml

from planner import model, units
from planner.errors import ProjectError
from planner.units import QuantityError, format_si

__all__ = [
    "load", "loads", "MAX_FILE_BYTES", "MAX_NODES", "MAX_DEPTH", "MAX_POSITIONS", "MAX_ELEMENTS", "MAX_SOURCES",
    "MAX_SAMPLES", "IEC_CLASSES", "E_SERIES",
]

#: Largest project file accepted [bytes] (5 MB).
MAX_FILE_BYTES = 5_000_000
#: Largest number of values (scalars, lists, mappings) after alias expansion.
MAX_NODES = 200_000
#: Deepest nesting of lists and mappings.
MAX_DEPTH = 64
#: Most switch positions (network positions, and voltage or current ranges each).
MAX_POSITIONS = 64
#: Most elements of an explicit network (the solver's matrices grow with its square).
MAX_ELEMENTS = 256
#: Most fault sources.
MAX_SOURCES = 64
#: Most Monte Carlo builds (``analysis.samples``).
MAX_SAMPLES = 200_000

#: IEC 60051 class indices (from memory, see /work/shared/references.md).
IEC_CLASSES = (0.05, 0.1, 0.2, 0.3, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 5.0)
#: IEC 60063 series the sizer can pick resistors from.
E_SERIES = ("E6", "E12", "E24", "E48", "E96", "E192")

TOP_KEYS = (
    "title",
    "revision",
    "date",
    "movement",
    "ambient",
    "parts",
    "voltage",
    "current",
    "clamps",
    "faults",
    "network",
    "analysis",
)
MOVEMENT_KEYS = (
    "full_scale_current",
    "coil_resistance",
    "class",
    "tempco",
    "tolerance",
    "full_scale_tolerance",
    "overload",
    "scale",
)
OVERLOAD_KEYS = ("peg", "short_time", "continuous")
SCALE_KEYS = ("arc", "radius", "mirror")
#: Limits of movement.scale: the pointer swing [deg] and the outer scale radius [m].
SCALE_ARC_DEG = (30.0, 300.0)
SCALE_RADIUS_M = (0.010, 0.500)
AMBIENT_KEYS = ("reference", "min", "max")
PARTS_KEYS = ("resistors", "diodes", "fuses")
RESISTOR_PARTS_KEYS = (
    "series", "tolerance", "tempco", "power", "max_voltage", "pulse_energy", "distribution", "ratings"
)
RATING_KEYS = ("power", "max_voltage", "pulse_energy")
DIODE_KEYS = (
    "saturation_current",
    "emission",
    "series_resistance",
    "leakage_resistance",
    "band_gap",
    "xti",
    "temperature",
    "breakdown_voltage",
    "breakdown_current",
    "max_current",
    "surge_current",
    "max_power",
    "saturation_current_spread",
    "i2t",
)
FUSE_KEYS = ("cold_resistance", "rated_current", "breaking_capacity", "i2t", "clearing_i2t", "curve", "max_voltage")
VOLTAGE_KEYS = ("arrangement", "full_scales")
CURRENT_KEYS = ("arrangement", "full_scales", "ring_on_voltage", "swamp", "fuse")
CLAMP_KEYS = ("across", "at", "forward", "reverse", "count")
CLAMP_AT_KEYS = ("above_movement",)
FAULTS_KEYS = ("sources", "max_input", "category", "accept")
SOURCE_KEYS = ("name", "voltage", "current", "waveform", "impedance", "current_limit")
ACCEPT_KEYS = ("position", "stimulus", "reason")
NETWORK_KEYS = ("contact_style", "elements", "positions")
ELEMENT_KEYS = {
    "resistor": (
        "name",
        "kind",
        "between",
        "value",
        "tolerance",
        "tempco",
        "power",
        "max_voltage",
        "series",
        "target",
        "group",
        "trimmer",
        "pulse_energy",
    ),
    "movement": ("name", "kind", "between"),
    "diode": ("name", "kind", "anode", "cathode", "model"),
    "contact": ("name", "kind", "between", "closed_in", "resistance"),
    "fuse": ("name", "kind", "between", "model"),
}
POSITION_KEYS = ("name", "measures", "full_scale", "input")
ANALYSIS_KEYS = ("samples", "seed", "allowed_share", "trim")

_MAP_TAG = "tag:yaml.org,2002:map"
_SEQ_TAG = "tag:yaml.org,2002:seq"
_NULL_TAG = "tag:yaml.org,2002:null"
_MERGE_TAG = "tag:yaml.org,2002:merge"
_STR_TAG = "tag:yaml.org,2002:str"
_TEXT_TAGS = frozenset({_MERGE_TAG, "tag:yaml.org,2002:value"})
_STD_SCALAR_TAGS = frozenset("tag:yaml.org,2002:" + t for t in ("str", "int", "float", "bool", "null", "timestamp"))


# --- public API -----------------------------------------------------------------------


def load(path: str | os.PathLike[str]) -> model.Spec:
    """Read a project file.

    Parameters
    ----------
    path : str or path-like
        The YAML project file.

    Returns
    -------
    planner.model.Spec
        The project in SI floats; ``Spec.path`` is ``path`` as given and
        ``Spec.text`` the file's text.

    Raises
    ------
    planner.errors.ProjectError
        For a missing, unreadable, oversized or malformed file; the message
        names the file and (where there is one) the 1-based line.
    """
    p = os.fspath(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise ProjectError("no such file; check the path and the file name", p) from None
    except OSError as e:
        raise ProjectError(f"cannot read the file ({e.strerror}); check the path and its permissions", p) from None
    if stat.S_ISDIR(st.st_mode):
        raise ProjectError("is a folder, not a project file; give the path of a .yaml project file", p)
    if st.st_size > MAX_FILE_BYTES:
        raise ProjectError(_too_big(st.st_size), p)
    try:
        with open(p, "rb") as f:
            data = f.read(MAX_FILE_BYTES + 1)
    except OSError as e:
        raise ProjectError(f"cannot read the file ({e.strerror}); check the path and its permissions", p) from None
    if len(data) > MAX_FILE_BYTES:
        raise ProjectError(_too_big(len(data)), p)
    return loads(data, p)


def loads(text: str | bytes, path: str = "<string>") -> model.Spec:
    """Read a project from text.

    Parameters
    ----------
    text : str or bytes
        The YAML text (bytes are decoded as UTF-8).
    path : str
        Name used in messages and stored in ``Spec.path``.

    Returns
    -------
    planner.model.Spec

    Raises
    ------
    planner.errors.ProjectError
    """
    path = os.fspath(path)
    if isinstance(text, (bytes, bytearray)):
        if len(text) > MAX_FILE_BYTES:
            raise ProjectError(_too_big(len(text)), path)
        text = _decode(bytes(text), path)
    elif len(text) > MAX_FILE_BYTES:
        raise ProjectError(_too_big(len(text.encode("utf-8", "surrogatepass"))), path)
    if text.startswith("\ufeff"):
        text = text[1:]
    ctx = _Ctx(path)
    root = ctx.compose(text)
    spec = _spec(ctx, root)
    return _replace(spec, path=path, text=text)


def _too_big(n: int) -> str:
    return f"file is {n / 1e6:.1f} MB; a project file is at most {MAX_FILE_BYTES / 1e6:g} MB"


def _decode(data: bytes, path: str) -> str:
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise ProjectError("the file is UTF-16 text; save it as UTF-8", path, 1)
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as e:
        line = data.count(b"\n", 0, e.start) + 1
        col = e.start - (data.rfind(b"\n", 0, e.start) + 1) + 1
        raise ProjectError(
            f"byte 0x{data[e.start]:02x} (column {col}) is not UTF-8 text; save the file as UTF-8", path, line
        ) from None


def _replace(spec: model.Spec, **changes: Any) -> model.Spec:
    return dataclasses.replace(spec, **changes)


# --- YAML to a marked node tree ---------------------------------------------------------


class _TooDeep(Exception):
    def __init__(self, line: int):
        self.line = line


class _Loader(yaml.SafeLoader):
    """Safe loader whose composer refuses nesting deeper than MAX_DEPTH."""

    def __init__(self, stream: str):
        super().__init__(stream)
        self._depth = 0

    def compose_node(self, parent: Any, index: Any) -> Any:
        self._depth += 1
        try:
            if self._depth > MAX_DEPTH:
                raise _TooDeep(self.peek_event().start_mark.line + 1)
            return super().compose_node(parent, index)
        finally:
            self._depth -= 1


class _Node:
    """A YAML value with its line: ``kind`` is ``map``, ``seq`` or ``scalar``.

    For a scalar, ``value`` is the constructed Python value and ``text`` the
    text as written; for a map, ``value`` is a dict of key text to node and
    ``key_lines`` the line of each key; for a seq, ``value`` is a list.
    """

    __slots__ = ("kind", "value", "line", "tag", "text", "key_lines")

    def __init__(self, kind: str, value: Any, line: int, tag: str, text: str | None = None):
        self.kind = kind
        self.value = value
        self.line = line
        self.tag = tag
        self.text = text
        self.key_lines: dict[str, int] = {}

    @property
    def is_null(self) -> bool:
        return self.kind == "scalar" and self.value is None

    def describe(self) -> str:
        if self.kind == "map":
            return "a mapping"
        if self.kind == "seq":
            return "a list"
        if self.is_null:
            return "empty"
        t = " ".join((self.text or "").split())
        return f"'{t[:40]}...'" if len(t) > 40 else f"'{t}'"


class _Ctx:
    """Loading context: the file name for messages and the node budget."""

    def __init__(self, path: str):
        self.path = path
        self.count = 0
        self.distinct: set[int] = set()  # ids of the YAML nodes seen, to tell aliases from sheer size
        self.site: int | None = None  # line of the top-level key being read (for the alias-bomb message)
        self.constructor = yaml.constructor.SafeConstructor()

    def fail(self, message: str, line: int | None) -> NoReturn:
        raise ProjectError(message, self.path, line)

    # -- parsing ---------------------------------------------------------------------
    def compose(self, text: str) -> _Node:
        try:
            loader = _Loader(text)
            try:
                root = loader.get_single_node()
            finally:
                loader.dispose()
        except _TooDeep as e:
            self.fail(
                f"lists and mappings are nested more than {MAX_DEPTH} deep; a project file needs far fewer", e.line
            )
        except yaml.reader.ReaderError as e:
            line = text.count("\n", 0, max(0, e.position)) + 1
            ch = e.character if isinstance(e.character, int) else ord(str(e.character)[:1] or "\0")
            self.fail(f"character U+{ch:04X} (a control character) is not allowed in a YAML file; delete it", line)
        except yaml.MarkedYAMLError as e:
            self._syntax(e)
        except yaml.YAMLError as e:
            self.fail(f"YAML syntax error: {' '.join(str(e).split())}", 1)
        except RecursionError:
            self.fail(f"lists and mappings are nested too deeply; a project file needs at most {MAX_DEPTH} levels", 1)
        if root is None:
            self.fail(
                "the file is empty; a project file needs at least 'title:', 'movement:' and one of "
                "'voltage:', 'current:' or 'network:' (see docs/project-file.md)",
                1,
            )
        return self.convert(root, 1)

    def _syntax(self, e: yaml.MarkedYAMLError) -> NoReturn:
        mark = e.problem_mark or e.context_mark
        line = mark.line + 1 if mark is not None else 1
        problem = e.problem or "syntax error"
        msg = f"YAML syntax error: {problem}"
        if e.context:
            msg += f" ({e.context}"
            if e.context_mark is not None and e.context_mark.line + 1 != line:
                msg += f" started at line {e.context_mark.line + 1}"
            msg += ")"
        if "'\\t'" in problem:
            hint = "indent with spaces, not tabs (YAML does not allow tabs for indentation)"
        elif "mapping values are not allowed" in problem:
            hint = "put quotes around text that contains ': ', or check the indentation"
        elif "undefined alias" in problem:
            hint = "define the anchor (&name) before using it (*name)"
        elif "another document" in problem:
            hint = "a project file holds one document: remove the '---' line"
        else:
            hint = "check the indentation, the colons and the quotes on this line and the one above"
        self.fail(f"{msg}; {hint}", line)

    def convert(self, node: yaml.Node, depth: int) -> _Node:
        self.count += 1
        self.distinct.add(id(node))
        line = node.start_mark.line + 1
        if self.count > MAX_NODES:
            if len(self.distinct) * 2 < self.count:
                why = (
                    "expands to more than {n} values through YAML aliases (*name) that repeat each other; "
                    "write the values out"
                )
            else:
                why = "holds more than {n} values; split it or remove what the planner does not use"
            self.fail(
                f"the file {why.format(n=MAX_NODES)} (a project file for one meter needs far fewer)", self.site or line
            )
        if depth > MAX_DEPTH:
            self.fail(
                f"lists and mappings are nested more than {MAX_DEPTH} deep (a YAML alias that contains itself?); "
                "write the values out",
                line,
            )
        if isinstance(node, yaml.ScalarNode):
            if node.tag in _TEXT_TAGS and node.style is None:
                return _Node("scalar", node.value, line, _STR_TAG, node.value)  # a plain '=' or '<<'
            if node.tag not in _STD_SCALAR_TAGS:
                self.fail(f"the tag {node.tag} is not used in a project file; remove it", line)
            try:
                value = self.constructor.construct_object(node, deep=True)
            except (yaml.YAMLError, ValueError, OverflowError, TypeError):
                value = node.value  # e.g. 2024-02-30 or a 5000-digit integer: keep the text, checks follow
            return _Node("scalar", value, line, node.tag, node.value)
        if isinstance(node, yaml.SequenceNode):
            if node.tag != _SEQ_TAG:
                self.fail(f"the tag {node.tag} is not used in a project file; remove it", line)
            return _Node("seq", [self.convert(item, depth + 1) for item in node.value], line, node.tag)
        if isinstance(node, yaml.MappingNode):
            if node.tag != _MAP_TAG:
                self.fail(f"the tag {node.tag} is not used in a project file; remove it", line)
            out = _Node("map", {}, line, node.tag)
            merges: list[yaml.Node] = []
            for knode, vnode in node.value:
                kline = knode.start_mark.line + 1
                if isinstance(knode, yaml.ScalarNode) and knode.tag == _MERGE_TAG:
                    merges.append(vnode)
                    continue
                if not isinstance(knode, yaml.ScalarNode):
                    self.fail("a key must be plain text, not a list or a mapping", kline)
                key = knode.value
                if key in out.value:
                    self.fail(
                        f"duplicate key '{key}' (first at line {out.key_lines[key]}); YAML would silently keep only "
                        "the last one: remove or rename one of them",
                        kline,
                    )
                self.count += 1
                if depth == 1:
                    self.site = kline
                out.value[key] = self.convert(vnode, depth + 1)
                out.key_lines[key] = kline
            for m in merges:
                sources = m.value if isinstance(m, yaml.SequenceNode) else [m]
                for src in sources:
                    if not isinstance(src, yaml.MappingNode):
                        self.fail(
                            "'<<' merges a mapping (or a list of mappings) into this one", src.start_mark.line + 1
                        )
                    merged = self.convert(src, depth + 1)
                    for k, v in merged.value.items():
                        if k not in out.value:
                            out.value[k] = v
                            out.key_lines[k] = merged.key_lines[k]
            return out
        self.fail("unexpected YAML node", line)  # pragma: no cover - compose yields only the three kinds

    # -- reading values ----------------------------------------------------------------
    def unknown_key(self, key: str, where: str, allowed: Sequence[str], line: int) -> NoReturn:
        self.fail(f"unknown key '{key}' in {where}{_suggest(key, allowed)}; allowed keys: {', '.join(allowed)}", line)

    def mapping(self, node: _Node, where: str, allowed: Sequence[str], example: str) -> "_Map":
        if node.kind != "map":
            self.fail(
                f"{where} must be a mapping of keys to values, e.g. {example}; it is {node.describe()}", node.line
            )
        for k, kline in node.key_lines.items():
            if k not in allowed:
                self.unknown_key(k, where, allowed, kline)
        return _Map(self, node, where)

    def seq(self, node: _Node, where: str, example: str) -> list[_Node]:
        if node.kind != "seq":
            self.fail(f"{where} must be a list, e.g. {example}; it is {node.describe()}", node.line)
        return node.value

    def scalar(self, node: _Node, where: str, example: str) -> _Node:
        if node.kind != "scalar":
            self.fail(f"{where} must be a single value, e.g. {example}; it is {node.describe()}", node.line)
        if node.is_null:
            self.fail(f"{where} is empty; give a value, e.g. {example}, or remove the line", node.line)
        return node

    def text(self, node: _Node, where: str, example: str) -> str:
        s = self.scalar(node, where, example).text or ""
        s = s.strip()
        if not s:
            self.fail(f"{where} is empty text; give it, e.g. {example}", node.line)
        return s

    def qty(self, node: _Node, dim: str, where: str, check: str | None = None) -> float:
        ex = f"'{units.example(dim)}'"
        self.scalar(node, where, ex)
        try:
            x = units.parse(node.text, dim, where=where)
        except QuantityError as e:
            self.fail(e.message, node.line)
        if check is not None:
            _check_range(self, x, check, where, node, dim)
        return x

    def choice(self, node: _Node, options: Sequence[str], where: str) -> str:
        s = self.text(node, where, options[0])
        if s not in options:
            self.fail(f"{where} is '{s}'{_suggest(s, options)}; use one of: {', '.join(options)}", node.line)
        return s

    def integer(self, node: _Node, where: str, lo: int, hi: int | None, example: str) -> int:
        self.scalar(node, where, example)
        v = node.value
        if type(v) is not int:
            self.fail(f"{where} is {node.describe()}; give a whole number, e.g. {example}", node.line)
        if v < lo or (hi is not None and v > hi):
            rng = f"from {lo} to {hi}" if hi is not None else f"of at least {lo}"
            self.fail(f"{where} is {v}; give a whole number {rng}", node.line)
        return v


def _suggest(word: str, options: Iterable[str]) -> str:
    best = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f" (did you mean '{best[0]}'?)" if best else ""


def _check_range(ctx: _Ctx, x: float, check: str, where: str, node: _Node, dim: str) -> None:
    shown = f"'{' '.join((node.text or '').split())}'"
    ex = units.example(dim)
    if check == "pos" and not x > 0:
        ctx.fail(f"{where} is {shown}; it must be above zero: give a positive value, e.g. '{ex}'", node.line)
    elif check == "nonneg" and x < 0:
        ctx.fail(f"{where} is {shown}; it cannot be negative: give zero or more, e.g. '{ex}'", node.line)
    elif check == "nonzero" and x == 0:
        ctx.fail(f"{where} is {shown}; give a value other than zero, e.g. '{ex}'", node.line)
    elif check == "frac":
        if x < 0:
            ctx.fail(f"{where} is {shown}; it cannot be negative: give e.g. '{ex}'", node.line)
        if x >= 1:
            ctx.fail(
                f"{where} is {shown}, that is {x * 100:g} %; it must be below 100 %: "
                f"write a percentage with its sign, e.g. '{ex}'",
                node.line,
            )


class _Map:
    """Reads one mapping section; ``where`` is its dotted name for messages."""

    def __init__(self, ctx: _Ctx, node: _Node, where: str):
        self.ctx = ctx
        self.node = node
        self.where = where

    @property
    def line(self) -> int:
        return self.node.line

    def get(self, key: str) -> _Node | None:
        return self.node.value.get(key)

    def key_line(self, key: str) -> int:
        return self.node.key_lines.get(key, self.line)

    def has(self, key: str) -> bool:
        return key in self.node.value

    def req(self, key: str, example: str) -> _Node:
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

    def sub(self, key: str, allowed: Sequence[str], example: str) -> "_Map | None":
        n = self.get(key)
        if n is None:
            return None
        return self.ctx.mapping(n, self.at(key), allowed, example)


# --- sections -------------------------------------------------------------------------


def _spec(ctx: _Ctx, root: _Node) -> model.Spec:
    if root.kind != "map":
        ctx.fail(
            f"the top level must be a mapping of keys ({', '.join(TOP_KEYS[:4])}, ...); it is {root.describe()}",
            root.line,
        )
    top = ctx.mapping(root, "the top level", TOP_KEYS, "title: ...")
    title = top.text("title", example="Workshop bench meter")
    revision = top.text("revision", None, "A")
    date = _date(ctx, top.get("date"))
    movement = _movement(ctx, top.req("movement", "{full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}"))
    ambient = _ambient(ctx, top.get("ambient"))
    parts = _parts(ctx, top.get("parts"))
    voltage = _voltage(ctx, top.get("voltage"), top.node.key_lines.get("voltage"))
    current = _current(ctx, top.get("current"), movement, top.node.key_lines.get("current"), parts)
    clamps = _clamps(ctx, top.get("clamps"), parts)
    network = _network(ctx, top.get("network"), parts)
    faults = _faults(ctx, top.get("faults"))
    analysis = _analysis(ctx, top.get("analysis"))
    if voltage is None and current is None and network is None:
        ctx.fail(
            "nothing to plan: give 'voltage:' or 'current:' ranges for the planner to size, or an explicit "
            "'network:' (or both)",
            root.line,
        )
    return model.Spec(
        title=title,
        movement=movement,
        parts=parts,
        ambient=ambient,
        voltage=voltage,
        current=current,
        clamps=clamps,
        faults=faults,
        network=network,
        analysis=analysis,
        revision=revision,
        date=date,
    )


def _date(ctx: _Ctx, node: _Node | None) -> str | None:
    if node is None:
        return None
    ctx.scalar(node, "date", "2024-03-18")
    if isinstance(node.value, datetime.datetime):
        ctx.fail(f"date is '{node.text}'; give the date alone as YYYY-MM-DD, e.g. 2024-03-18", node.line)
    if isinstance(node.value, datetime.date):
        return node.value.isoformat()
    s = (node.text or "").strip()
    try:
        if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", s):
            raise ValueError
        datetime.date.fromisoformat(s)
    except ValueError:
        ctx.fail(f"date is '{s}'; give a real date as YYYY-MM-DD, e.g. 2024-03-18", node.line)
    return s


def _movement(ctx: _Ctx, node: _Node) -> model.Movement:
    m = ctx.mapping(node, "movement", MOVEMENT_KEYS, "{full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}")
    i_fs = m.qty("full_scale_current", "current", check="pos")
    r_m = m.qty("coil_resistance", "resistance", check="pos")
    cls_node = m.req("class", "1.5")
    cls = ctx.qty(cls_node, "dimensionless", "movement.class")
    if cls not in IEC_CLASSES:
        ctx.fail(
            f"movement.class {cls_node.text} is not an IEC 60051 class index; use one of "
            + ", ".join(f"{c:g}" for c in IEC_CLASSES),
            cls_node.line,
        )
    tempco = m.qty("tempco", "tempco", model.COPPER_TEMPCO_PER_K)
    _tempco_bound(ctx, tempco, m, "tempco")
    tol = m.qty("tolerance", "fraction", 0.0, check="frac")
    fs_tol = m.qty("full_scale_tolerance", "fraction", 0.0, check="frac")
    overload = model.Overload()
    ov = m.sub("overload", OVERLOAD_KEYS, "{peg: 1.1, short_time: 10, continuous: 1.2}")
    if ov is not None:
        d = model.Overload()
        peg = ov.qty("peg", "dimensionless", d.peg, check="pos")
        short = ov.qty("short_time", "dimensionless", d.short_time, check="pos")
        cont = ov.qty("continuous", "dimensionless", d.continuous, check="pos")
        for key, v in (("peg", peg), ("continuous", cont)):
            if v < 1:
                n = ov.get(key)
                ctx.fail(
                    f"movement.overload.{key} is {v:g} times full scale; it must be at least 1 "
                    "(the movement carries full-scale current by design)",
                    n.line if n is not None else ov.line,
                )
        if short < cont:
            n = ov.get("short_time") or ov.get("continuous")
            ctx.fail(
                f"movement.overload.short_time ({short:g}) is below continuous ({cont:g}); what a movement "
                "survives briefly is at least what it survives continuously",
                n.line if n is not None else ov.line,
            )
        overload = model.Overload(peg=peg, short_time=short, continuous=cont)
    scale = _scale_geometry(ctx, m)
    return model.Movement(
        i_fs_a=i_fs,
        r_coil_ohm=r_m,
        class_index=cls,
        tempco_per_k=tempco,
        tolerance=tol,
        i_fs_tolerance=fs_tol,
        overload=overload,
        scale=scale,
    )


_ANGLE = re.compile(r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(deg|degrees?|°|rad)?\s*$")


def _scale_geometry(ctx: _Ctx, m: _Map) -> model.ScaleGeometry:
    """``movement.scale``: the pointer's swing (arc) and the outer scale radius."""
    d = model.ScaleGeometry()
    sc = m.sub("scale", SCALE_KEYS, "{arc: 90 deg, radius: 60 mm}")
    if sc is None:
        return d
    arc = d.arc_deg
    n = sc.get("arc")
    if n is not None:
        ctx.scalar(n, sc.at("arc"), "'90 deg'")
        mt = _ANGLE.match(n.text or "")
        if mt is None:
            ctx.fail(f"{sc.at('arc')} is '{' '.join((n.text or '').split())}'; give an angle in degrees, e.g. "
                     "'90 deg' (a bare number is read as degrees; 'rad' is accepted too)", n.line)
        arc = float(mt.group(1)) * (180.0 / math.pi if mt.group(2) == "rad" else 1.0)
        lo, hi = SCALE_ARC_DEG
        if not lo <= arc <= hi:
            ctx.fail(f"{sc.at('arc')} is {arc:g} deg; give the pointer's swing from {lo:g} to {hi:g} deg, "
                     "e.g. '90 deg' (most panel meters) or '250 deg' (long-scale meters)", n.line)
    radius = sc.qty("radius", "length", d.radius_m, check="pos")
    lo, hi = SCALE_RADIUS_M
    if not lo <= radius <= hi:
        ctx.fail(f"{sc.at('radius')} is {radius * 1e3:g} mm; give the outer scale radius between "
                 f"{lo * 1e3:g} mm and {hi * 1e3:g} mm, e.g. '60 mm'", sc.get("radius").line)
    mirror = sc.boolean("mirror", d.mirror)
    return model.ScaleGeometry(arc_deg=arc, radius_m=radius, mirror=mirror, line=sc.line)


def _tempco_bound(ctx: _Ctx, x: float, m: _Map, key: str) -> None:
    if abs(x) > 0.1:
        n = m.get(key)
        ctx.fail(
            f"{m.at(key)} is '{n.text if n else x}', over 100000 ppm/K; a resistor or coil tempco is a few to "
            "a few thousand ppm/K: check the unit (e.g. '50 ppm/K')",
            n.line if n is not None else m.line,
        )


def _ambient(ctx: _Ctx, node: _Node | None) -> model.Ambient:
    d = model.Ambient()
    if node is None:
        return d
    m = ctx.mapping(node, "ambient", AMBIENT_KEYS, "{reference: 23 degC, min: 0 degC, max: 40 degC}")
    ref = m.qty("reference", "temperature", d.t_ref_k, check="pos")
    lo = m.qty("min", "temperature", d.t_min_k, check="pos")
    hi = m.qty("max", "temperature", d.t_max_k, check="pos")
    for key, v in (("reference", ref), ("min", lo), ("max", hi)):
        if v > 1000.0:
            ctx.fail(
                f"ambient.{key} is {v:g} K; an ambient temperature is below 1000 K: check the unit", m.get(key).line
            )
    if not lo <= ref <= hi:
        if lo > hi:
            culprit, what = "min", "min is above max"
        elif ref < lo:
            culprit, what = "reference", "reference is below min"
        else:
            culprit, what = "reference", "reference is above max"
        n = m.get(culprit) or m.get("min") or m.get("max")
        ctx.fail(
            f"ambient: {what} ({_degc(lo)} / {_degc(ref)} / {_degc(hi)} for min / reference / max); "
            "give min <= reference <= max",
            n.line if n is not None else m.line,
        )
    return model.Ambient(t_ref_k=ref, t_min_k=lo, t_max_k=hi)


def _degc(t_k: float) -> str:
    return f"{t_k - model.ZERO_CELSIUS_K:.6g} degC"


def _parts(ctx: _Ctx, node: _Node | None) -> model.Parts:
    if node is None:
        return model.Parts()
    m = ctx.mapping(node, "parts", PARTS_KEYS, "{resistors: {...}, diodes: {...}, fuses: {...}}")
    resistors = _resistor_parts(ctx, m.get("resistors"))
    diodes: dict[str, model.DiodeModel] = {}
    dn = m.get("diodes")
    if dn is not None:
        ctx.mapping(
            dn, "parts.diodes", tuple(dn.value) if dn.kind == "map" else (), "{si_generic: {saturation_current: 5 nA}}"
        )
        for name, sub in dn.value.items():
            _model_name(ctx, name, "parts.diodes", dn.key_lines[name])
            diodes[name] = _diode_model(ctx, name, sub)
    fuses: dict[str, model.FuseModel] = {}
    fn = m.get("fuses")
    if fn is not None:
        ctx.mapping(
            fn, "parts.fuses", tuple(fn.value) if fn.kind == "map" else (), "{f_100ma: {cold_resistance: 2 ohm, ...}}"
        )
        for name, sub in fn.value.items():
            _model_name(ctx, name, "parts.fuses", fn.key_lines[name])
            fuses[name] = _fuse_model(ctx, name, sub)
    return model.Parts(resistors=resistors, diodes=diodes, fuses=fuses)


def _model_name(ctx: _Ctx, name: str, where: str, line: int) -> None:
    if not name.strip():
        ctx.fail(f"{where}: a model needs a name, e.g. si_generic", line)


def _resistor_parts(ctx: _Ctx, node: _Node | None) -> model.ResistorParts:
    d = model.ResistorParts()
    if node is None:
        return d
    m = ctx.mapping(node, "parts.resistors", RESISTOR_PARTS_KEYS, "{series: E96, tolerance: 0.5 %, power: 0.25 W}")
    series = m.choice("series", E_SERIES, d.series)
    tol = m.qty("tolerance", "fraction", d.tolerance, check="frac")
    tempco = m.qty("tempco", "tempco", d.tempco_per_k)
    _tempco_bound(ctx, tempco, m, "tempco")
    power = m.qty("power", "power", d.power_w, check="pos")
    vmax = m.qty("max_voltage", "voltage", d.max_voltage_v, check="pos")
    pulse = m.qty("pulse_energy", "energy", None, check="pos")
    dist = m.choice("distribution", ("uniform", "normal"), d.distribution)
    powers: list[float] = []
    volts: list[float] = []
    pulses: list[float | None] = []
    rn = m.get("ratings")
    if rn is not None:
        items = ctx.seq(
            rn, "parts.resistors.ratings", "[{power: 0.25 W, max_voltage: 250 V}, {power: 0.6 W, max_voltage: 350 V}]"
        )
        prev_line = None
        for i, item in enumerate(items, 1):
            where = f"parts.resistors.ratings[{i}]"
            r = ctx.mapping(item, where, RATING_KEYS, "{power: 0.25 W, max_voltage: 250 V}")
            p = r.qty("power", "power", check="pos", example="0.25 W")
            v = r.qty("max_voltage", "voltage", check="pos")
            pulses.append(r.qty("pulse_energy", "energy", None, check="pos"))
            if powers and p <= powers[-1]:
                ctx.fail(
                    f"{where}.power {format_si(p, 'W')} is not above the one before "
                    f"({format_si(powers[-1], 'W')}, line {prev_line}); list the ratings by rising power",
                    r.get("power").line,
                )
            powers.append(p)
            volts.append(v)
            prev_line = r.line
    return model.ResistorParts(
        series=series,
        tolerance=tol,
        tempco_per_k=tempco,
        power_w=power,
        max_voltage_v=vmax,
        distribution=dist,
        power_ratings_w=tuple(powers),
        max_voltages_v=tuple(volts),
        pulse_energy_j=pulse,
        pulse_energies_j=tuple(pulses) if any(x is not None for x in pulses) else (),
    )


def _diode_model(ctx: _Ctx, name: str, node: _Node) -> model.DiodeModel:
    where = f"parts.diodes.{name}"
    m = ctx.mapping(node, where, DIODE_KEYS, "{saturation_current: 5 nA, emission: 1.9}")
    d = model.DiodeModel(name=name, i_s_a=1.0)
    i_s = m.qty("saturation_current", "current", check="pos", example="5 nA")
    n = m.qty("emission", "dimensionless", d.n, check="pos")
    if n > 10:
        ctx.fail(
            f"{m.at('emission')} is {n:g}; an emission coefficient lies between about 1 and 4: give e.g. 1.9",
            m.get("emission").line,
        )
    r_s = m.qty("series_resistance", "resistance", d.r_s_ohm, check="nonneg")
    r_p = m.qty("leakage_resistance", "resistance", d.r_p_ohm, check="pos")
    eg = m.qty("band_gap", "energy_ev", d.eg_ev, check="pos")
    if eg > 10:
        ctx.fail(
            f"{m.at('band_gap')} is {eg:g} eV; a band gap is a few eV (silicon 1.11 eV): check the value",
            m.get("band_gap").line,
        )
    xti = m.qty("xti", "dimensionless", d.xti)
    if abs(xti) > 50:
        ctx.fail(
            f"{m.at('xti')} is {xti:g}; the saturation-current temperature exponent is about 2 to 3", m.get("xti").line
        )
    t_nom = m.qty("temperature", "temperature", d.t_nom_k, check="pos")
    bv = m.qty("breakdown_voltage", "voltage", d.bv_v, check="pos")
    ibv = m.qty("breakdown_current", "current", d.ibv_a, check="pos")
    i_max = m.qty("max_current", "current", d.max_current_a, check="pos")
    i_surge = m.qty("surge_current", "current", d.surge_current_a, check="pos")
    p_max = m.qty("max_power", "power", d.max_power_w, check="pos")
    spread = m.qty("saturation_current_spread", "fraction", d.i_s_spread, check="frac")
    d_i2t = m.qty("i2t", "i2t", None, check="pos")
    return model.DiodeModel(
        name=name,
        i_s_a=i_s,
        n=n,
        r_s_ohm=r_s,
        r_p_ohm=r_p,
        eg_ev=eg,
        xti=xti,
        t_nom_k=t_nom,
        bv_v=bv,
        ibv_a=ibv,
        max_current_a=i_max,
        surge_current_a=i_surge,
        max_power_w=p_max,
        i_s_spread=spread,
        i2t_a2s=d_i2t,
    )


def _fuse_model(ctx: _Ctx, name: str, node: _Node) -> model.FuseModel:
    where = f"parts.fuses.{name}"
    m = ctx.mapping(
        node, where, FUSE_KEYS, "{cold_resistance: 2 ohm, rated_current: 100 mA, breaking_capacity: 1.5 kA}"
    )
    r_cold = m.qty("cold_resistance", "resistance", check="nonneg", example="1.8 ohm")
    i_rated = m.qty("rated_current", "current", check="pos", example="100 mA")
    i_break = m.qty("breaking_capacity", "current", check="pos", example="1.5 kA")
    if i_break < i_rated:
        ctx.fail(
            f"{m.at('breaking_capacity')} ({format_si(i_break, 'A')}) is below the rated current "
            f"({format_si(i_rated, 'A')}); the breaking capacity is the largest current the fuse can interrupt, "
            "far above its rating: check the value",
            m.get("breaking_capacity").line,
        )
    i2t = m.qty("i2t", "i2t", None, check="pos")
    clearing = m.qty("clearing_i2t", "i2t", None, check="pos")
    if clearing is not None and i2t is not None and clearing < i2t:
        ctx.fail(
            f"{m.at('clearing_i2t')} ({clearing:.4g} A^2 s) is below the pre-arcing i2t "
            f"({i2t:.4g} A^2 s); the clearing I2t is pre-arcing plus arcing, so it is the larger: "
            "check the values",
            m.get("clearing_i2t").line,
        )
    vmax = m.qty("max_voltage", "voltage", math.inf, check="pos")
    curve: list[tuple[float, float]] = []
    cn = m.get("curve")
    if cn is not None:
        ex = "[[200 mA, 10 s], [1 A, 10 ms]]"
        for i, pt in enumerate(ctx.seq(cn, m.at("curve"), ex), 1):
            pw = f"{m.at('curve')}[{i}]"
            pair = ctx.seq(pt, pw, "[1 A, 10 ms]")
            if len(pair) != 2:
                ctx.fail(f"{pw} has {len(pair)} values; each point is [current, time], e.g. [1 A, 10 ms]", pt.line)
            i_a = ctx.qty(pair[0], "current", f"{pw} current", "pos")
            t_s = ctx.qty(pair[1], "time", f"{pw} time", "pos")
            if curve and i_a <= curve[-1][0]:
                ctx.fail(f"{pw}: the currents must rise from point to point; sort the curve by current", pt.line)
            if curve and t_s > curve[-1][1]:
                ctx.fail(
                    f"{pw}: the time must fall as the current rises (a larger current melts the fuse sooner)", pt.line
                )
            curve.append((i_a, t_s))
    return model.FuseModel(
        name=name,
        r_cold_ohm=r_cold,
        rated_current_a=i_rated,
        breaking_capacity_a=i_break,
        i2t_a2s=i2t,
        curve=tuple(curve),
        max_voltage_v=vmax,
        clearing_i2t_a2s=clearing,
    )


def _capped(ctx: _Ctx, items: list, limit: int, where: str, what: str, line: int) -> list:
    """``items``, or a clear error when there are more than ``limit`` of them (a resource cap)."""
    if len(items) > limit:
        ctx.fail(f"{where} has {len(items)} {what}; the planner handles at most {limit}: split the design", line)
    return items


def _ascending(ctx: _Ctx, node: _Node, dim: str, where: str, example: str) -> tuple[list[float], list[_Node]]:
    items = _capped(ctx, ctx.seq(node, where, example), MAX_POSITIONS, where, "ranges", node.line)
    if not items:
        ctx.fail(f"{where} is an empty list; give at least one range, e.g. {example}", node.line)
    values: list[float] = []
    for i, item in enumerate(items, 1):
        x = ctx.qty(item, dim, f"{where}[{i}]", "pos")
        if values and x <= values[-1]:
            ctx.fail(
                f"{where}: '{item.text}' does not rise above '{items[i - 2].text}' before it; list the ranges "
                "from the lowest to the highest, each once",
                item.line,
            )
        values.append(x)
    return values, items


def _voltage(ctx: _Ctx, node: _Node | None, key_line: int | None) -> model.VoltageRanges | None:
    if node is None:
        return None
    ex = "[0.5 V, 2.5 V, 10 V]"
    m = ctx.mapping(node, "voltage", VOLTAGE_KEYS, f"{{arrangement: chain, full_scales: {ex}}}")
    arr = m.choice("arrangement", ("chain", "separate"))
    fs, _ = _ascending(ctx, m.req("full_scales", ex), "voltage", "voltage.full_scales", ex)
    return model.VoltageRanges(arrangement=arr, full_scales=tuple(fs), line=key_line or m.line)


def _current(
    ctx: _Ctx, node: _Node | None, movement: model.Movement, key_line: int | None, parts: model.Parts
) -> model.CurrentRanges | None:
    if node is None:
        return None
    ex = "[1 mA, 10 mA, 100 mA]"
    m = ctx.mapping(node, "current", CURRENT_KEYS, f"{{arrangement: ring, full_scales: {ex}}}")
    arr = m.choice("arrangement", ("ring", "separate"))
    fs, items = _ascending(ctx, m.req("full_scales", ex), "current", "current.full_scales", ex)
    for x, item in zip(fs, items):
        if not x > movement.i_fs_a:
            ctx.fail(
                f"current.full_scales: '{item.text}' is not above the movement's full-scale current "
                f"{format_si(movement.i_fs_a, 'A')}; a shunt can only raise the range, so every current range "
                "must exceed it",
                item.line,
            )
    ring_on_v = m.choice("ring_on_voltage", ("switched_out", "across"), "switched_out")
    swamp = m.qty("swamp", "resistance", 0.0, check="nonneg")
    fuse_node = m.get("fuse")
    fuse = None if fuse_node is None else _fuse_ref(ctx, fuse_node, parts, "current.fuse")
    return model.CurrentRanges(
        arrangement=arr,
        full_scales=tuple(fs),
        ring_on_voltage=ring_on_v,
        swamp_ohm=swamp,
        fuse=fuse,
        line=key_line or m.line,
    )


def _model_ref(ctx: _Ctx, node: _Node, models, kind: str, where: str, example: str) -> str:
    """A reference to a part model by name (``kind`` is ``diode`` or ``fuse``)."""
    name = ctx.text(node, where, example)
    if name not in models:
        defined = ", ".join(models) or "none yet"
        ctx.fail(
            f"{where}: {kind} model '{name}' is not defined in parts.{kind}s{_suggest(name, models)}; "
            f"defined models: {defined}. Add it under parts.{kind}s",
            node.line,
        )
    return name


def _diode_ref(ctx: _Ctx, node: _Node, parts: model.Parts, where: str) -> str:
    return _model_ref(ctx, node, parts.diodes, "diode", where, "si_generic")


def _fuse_ref(ctx: _Ctx, node: _Node, parts: model.Parts, where: str) -> str:
    return _model_ref(ctx, node, parts.fuses, "fuse", where, "f_100ma")


def _clamps(ctx: _Ctx, node: _Node | None, parts: model.Parts) -> tuple[model.ClampRequest, ...]:
    if node is None:
        return ()
    ex = "[{across: movement, forward: si_generic, reverse: si_generic}]"
    out = []
    for i, item in enumerate(ctx.seq(node, "clamps", ex), 1):
        where = f"clamps[{i}]"
        m = ctx.mapping(item, where, CLAMP_KEYS, "{across: movement, forward: si_generic, reverse: si_generic}")
        if m.has("across") == m.has("at"):
            ctx.fail(f"{where} needs exactly one of 'across: movement' or 'at: {{above_movement: 10 kohm}}'", m.line)
        at: str | float
        if m.has("across"):
            at = m.choice("across", ("movement",))
        else:
            sub = m.sub("at", CLAMP_AT_KEYS, "{above_movement: 10 kohm}")
            assert sub is not None
            at = sub.qty("above_movement", "resistance", check="pos")
        fwd = _diode_ref(ctx, m.get("forward"), parts, m.at("forward")) if m.has("forward") else None
        rev = _diode_ref(ctx, m.get("reverse"), parts, m.at("reverse")) if m.has("reverse") else None
        if fwd is None and rev is None:
            ctx.fail(f"{where} has no diode; give 'forward:' and/or 'reverse:' with a model from parts.diodes", m.line)
        count = m.integer("count", 1, 1, 50, "2")
        out.append(model.ClampRequest(at=at, forward=fwd, reverse=rev, count=count, line=m.line))
    return tuple(out)


def _faults(ctx: _Ctx, node: _Node | None) -> model.Faults:
    if node is None:
        return model.Faults()
    m = ctx.mapping(node, "faults", FAULTS_KEYS, "{sources: [...], max_input: 600 V}")
    sources: list[model.FaultSource] = []
    seen: dict[str, int] = {}
    sn = m.get("sources")
    if sn is not None:
        for i, item in enumerate(
            _capped(ctx, ctx.seq(sn, "faults.sources", "[{name: wall outlet, voltage: 230 V, waveform: sine}]"),
                    MAX_SOURCES, "faults.sources", "sources", sn.line), 1
        ):
            where = f"faults.sources[{i}]"
            s = ctx.mapping(item, where, SOURCE_KEYS, "{name: wall outlet, voltage: 230 V, waveform: sine}")
            name = s.text("name", example="wall outlet")
            where = f"fault source '{name}'"
            if name in seen:
                ctx.fail(
                    f"duplicate fault source name '{name}' (first at line {seen[name]}); give each source its own name",
                    s.line,
                )
            seen[name] = s.line
            if s.has("voltage") == s.has("current"):
                ctx.fail(f"{where} needs exactly one of 'voltage: 230 V' or 'current: 10 A'", s.line)
            kind = "voltage" if s.has("voltage") else "current"
            value = ctx.qty(s.get(kind), kind, f"{where}.{kind}", "nonzero")
            waveform = s.choice("waveform", ("dc", "sine"), "dc")
            if waveform == "sine" and value < 0:
                ctx.fail(
                    f"{where}: a sine is given by its rms value, which is positive; drop the minus sign",
                    s.get(kind).line,
                )
            r_src = s.qty("impedance", "resistance", 0.0, check="nonneg")
            i_lim = s.qty("current_limit", "current", None, check="pos")
            sources.append(
                model.FaultSource(
                    name=name,
                    kind=kind,
                    value=value,
                    waveform=waveform,
                    r_source_ohm=r_src,
                    current_limit_a=i_lim,
                    line=s.line,
                )
            )
    max_in = m.qty("max_input", "voltage", None, check="pos")
    category = None
    cn = m.get("category")
    if cn is not None:
        category = _category(ctx, cn)
    accept: list[model.Acceptance] = []
    an = m.get("accept")
    if an is not None:
        ex = "{position: 2.5 V, stimulus: wall outlet, reason: fused in the test lead}"
        for i, item in enumerate(ctx.seq(an, "faults.accept", f"[{ex}]"), 1):
            where = f"faults.accept[{i}]"
            a = ctx.mapping(item, where, ACCEPT_KEYS, ex)
            positions, many_p = _accept_names(ctx, a, "position", "'2.5 V'")
            stimuli, many_s = _accept_names(ctx, a, "stimulus", "wall outlet")
            if not a.has("reason"):
                ctx.fail(
                    f"{where} has no reason; say why this case is acceptable, e.g. reason: fused in the test lead",
                    a.line,
                )
            reason = a.text("reason", example="fused in the test lead")
            for pos in positions:
                for stim in stimuli:
                    accept.append(
                        model.Acceptance(
                            position=pos, stimulus=stim, reason=reason, line=a.line, expanded=many_p or many_s
                        )
                    )
    return model.Faults(sources=tuple(sources), max_input_v=max_in, category=category, accept=tuple(accept))


def _accept_names(ctx: _Ctx, a: "_Map", key: str, example: str) -> tuple[list[str], bool]:
    """One name, or a list of names, of an accept entry; True when it was a list."""
    n = a.req(key, example)
    if n.kind != "seq":
        return [ctx.text(n, a.at(key), example)], False
    items = ctx.seq(n, a.at(key), f"[{example}]")
    if not items:
        ctx.fail(f"{a.at(key)} is an empty list; give a name or a list of names, e.g. [{example}]", n.line)
    names: list[str] = []
    for i, item in enumerate(items, 1):
        name = ctx.text(item, f"{a.at(key)}[{i}]", example)
        if name not in names:
            names.append(name)
    return names, True


def _category(ctx: _Ctx, node: _Node) -> str:
    s = " ".join(ctx.text(node, "faults.category", "'CAT II 300 V'").split())
    mt = re.fullmatch(r"(?i)CAT\s*(II|III|IV)\s+(.+)", s)
    if mt is None:
        ctx.fail(
            f"faults.category is '{s}'; write the measurement category and its voltage, e.g. 'CAT II 300 V' "
            "(CAT II, CAT III or CAT IV)",
            node.line,
        )
    try:
        v = units.parse(mt.group(2), "voltage", where="faults.category")
    except QuantityError as e:
        ctx.fail(e.message, node.line)
    if not v > 0:
        ctx.fail(f"faults.category voltage '{mt.group(2)}' must be above zero, e.g. 'CAT II 300 V'", node.line)
    if v > 1000.0 * (1 + 1e-12):  # the impulse table of planner.faults ends at 1000 V
        ctx.fail(
            f"faults.category '{s}': measurement categories cover mains up to 1000 V line to neutral; "
            "give 150 V, 300 V, 600 V or 1000 V",
            node.line,
        )
    return f"CAT {mt.group(1).upper()} {mt.group(2)}"


def _node_name(ctx: _Ctx, node: _Node, where: str) -> str:
    return ctx.text(node, where, "vin")


def _pair(ctx: _Ctx, node: _Node, where: str, example: str) -> tuple[str, str]:
    items = ctx.seq(node, where, example)
    if len(items) != 2:
        ctx.fail(f"{where} has {len(items)} nodes; give exactly two, e.g. {example}", node.line)
    a = _node_name(ctx, items[0], f"{where}[1]")
    b = _node_name(ctx, items[1], f"{where}[2]")
    if a == b:
        ctx.fail(f"{where} connects node '{a}' to itself; give two different nodes, e.g. {example}", node.line)
    return a, b


def _network(ctx: _Ctx, node: _Node | None, parts: model.Parts) -> model.NetworkSpec | None:
    if node is None:
        return None
    m = ctx.mapping(node, "network", NETWORK_KEYS, "{elements: [...], positions: [...]}")
    style = m.choice("contact_style", ("make_before_break", "break_before_make"), None)
    el_ex = "[{name: R1, kind: resistor, between: [vin, t1], value: 9.8 kohm}, ...]"
    pos_ex = "[{name: '2.5 V', measures: voltage, full_scale: 2.5 V, input: [vin, com]}]"
    el_items = ctx.seq(m.req("elements", el_ex), "network.elements", el_ex)
    _capped(ctx, el_items, MAX_ELEMENTS, "network.elements", "elements", m.key_line("elements"))
    if not el_items:
        ctx.fail(f"network.elements is empty; list the meter's parts, e.g. {el_ex}", m.key_line("elements"))
    pos_items = ctx.seq(m.req("positions", pos_ex), "network.positions", pos_ex)
    _capped(ctx, pos_items, MAX_POSITIONS, "network.positions", "positions", m.key_line("positions"))
    if not pos_items:
        ctx.fail(f"network.positions is empty; list the switch positions, e.g. {pos_ex}", m.key_line("positions"))

    elements: list[model.Element] = []
    names: dict[str, int] = {}
    closed_refs: list[tuple[str, _Node]] = []
    movement_line: int | None = None
    for i, item in enumerate(el_items, 1):
        e = ctx.mapping(
            item, f"network.elements[{i}]", tuple(item.value) if item.kind == "map" else (), "{name: R1, ...}"
        )
        name = e.text("name", example="R1")
        where = f"network element '{name}'"
        if name in names:
            ctx.fail(
                f"duplicate element name '{name}' (first at line {names[name]}); give each element its own name", e.line
            )
        names[name] = e.line
        e.where = where
        kind = e.choice("kind", tuple(ELEMENT_KEYS))
        allowed = ELEMENT_KEYS[kind]
        for k, kline in item.key_lines.items():
            if k not in allowed:
                ctx.unknown_key(k, f"{where} ({kind})", allowed, kline)
        if kind == "resistor":
            a, b = _pair(ctx, e.req("between", "[vin, t1]"), e.at("between"), "[vin, t1]")
            rp = parts.resistors
            tc = e.qty("tempco", "tempco", rp.tempco_per_k)
            _tempco_bound(ctx, tc, e, "tempco")
            elements.append(
                model.Resistor(
                    name=name,
                    a=a,
                    b=b,
                    value_ohm=e.qty("value", "resistance", check="pos", example="9.8 kohm"),
                    tolerance=e.qty("tolerance", "fraction", rp.tolerance, check="frac"),
                    tempco_per_k=tc,
                    power_w=e.qty("power", "power", rp.power_w, check="pos"),
                    max_voltage_v=e.qty("max_voltage", "voltage", rp.max_voltage_v, check="pos"),
                    series=e.choice("series", E_SERIES, None),
                    target_ohm=e.qty("target", "resistance", None, check="pos"),
                    group=e.text("group", None, "'chain 10 V'"),
                    trimmer=e.boolean("trimmer", False),
                    distribution=rp.distribution,
                    line=e.line,
                    pulse_energy_j=e.qty("pulse_energy", "energy", None, check="pos"),
                )
            )
        elif kind == "movement":
            if movement_line is not None:
                ctx.fail(
                    f"{where} is a second movement (the first is at line {movement_line}); a network has exactly "
                    "one movement element",
                    e.line,
                )
            movement_line = e.line
            a, b = _pair(ctx, e.req("between", "[m_plus, com]"), e.at("between"), "[m_plus, com]")
            elements.append(model.MovementElement(name=name, a=a, b=b, line=e.line))
        elif kind == "diode":
            an = _node_name(ctx, e.req("anode", "m_plus"), e.at("anode"))
            ca = _node_name(ctx, e.req("cathode", "com"), e.at("cathode"))
            if an == ca:
                ctx.fail(f"{where} has anode and cathode both on node '{an}'; give two different nodes", e.line)
            mdl = _diode_ref(ctx, e.req("model", "si_generic"), parts, e.at("model"))
            elements.append(model.Diode(name=name, anode=an, cathode=ca, model=mdl, line=e.line))
        elif kind == "contact":
            a, b = _pair(ctx, e.req("between", "[vin, t1]"), e.at("between"), "[vin, t1]")
            cl = ctx.seq(e.req("closed_in", "['2.5 V']"), e.at("closed_in"), "['2.5 V', '10 V']")
            if not cl:
                ctx.fail(
                    f"{where} is closed in no position; name the positions that close it, or remove it",
                    e.get("closed_in").line,
                )
            refs = []
            for j, pn in enumerate(cl, 1):
                refs.append(ctx.text(pn, f"{e.at('closed_in')}[{j}]", "'2.5 V'"))
                closed_refs.append((name, pn))
            r = e.qty("resistance", "resistance", 0.0, check="nonneg")
            elements.append(model.Contact(name=name, a=a, b=b, closed_in=tuple(refs), r_ohm=r, line=e.line))
        else:  # fuse
            a, b = _pair(ctx, e.req("between", "[vin, f1]"), e.at("between"), "[vin, f1]")
            mdl = _fuse_ref(ctx, e.req("model", "f_100ma"), parts, e.at("model"))
            elements.append(model.Fuse(name=name, a=a, b=b, model=mdl, line=e.line))
    if movement_line is None:
        ctx.fail(
            "network has no movement element; add one, e.g. {name: M1, kind: movement, between: [m_plus, com]}",
            m.key_line("elements"),
        )
    nodes = {n for el in elements for n in el.nodes}

    positions: list[model.Position] = []
    pnames: dict[str, int] = {}
    for i, item in enumerate(pos_items, 1):
        p = ctx.mapping(item, f"network.positions[{i}]", POSITION_KEYS, pos_ex[1:-1])
        name = p.text("name", example="'2.5 V'")
        if name in pnames:
            ctx.fail(
                f"duplicate position name '{name}' (first at line {pnames[name]}); give each position its own name",
                p.line,
            )
        pnames[name] = p.line
        p.where = f"position '{name}'"
        measures = p.choice("measures", ("voltage", "current"))
        fs = p.qty("full_scale", measures, check="pos")
        inp_node = p.req("input", "[vin, com]")
        inp = _pair(ctx, inp_node, p.at("input"), "[vin, com]")
        for nd in inp:
            if nd not in nodes:
                ctx.fail(
                    f"{p.at('input')}: node '{nd}' appears in no element{_suggest(nd, sorted(nodes))}; "
                    "use a node of the network",
                    inp_node.line,
                )
        positions.append(model.Position(name=name, measures=measures, full_scale=fs, input=inp, line=p.line))

    for el_name, pn in closed_refs:
        ref = pn.text.strip() if pn.text else ""
        if ref not in pnames:
            ctx.fail(
                f"network element '{el_name}': closed_in names position '{ref}', which is not in network.positions"
                f"{_suggest(ref, pnames)}; positions: {', '.join(pnames)}",
                pn.line,
            )
    return model.NetworkSpec(elements=tuple(elements), positions=tuple(positions), contact_style=style)


def _analysis(ctx: _Ctx, node: _Node | None) -> model.Analysis:
    d = model.Analysis()
    if node is None:
        return d
    m = ctx.mapping(node, "analysis", ANALYSIS_KEYS, "{samples: 2000, seed: 1}")
    samples = m.integer("samples", d.samples, 2, MAX_SAMPLES, "2000")
    seed = m.integer("seed", d.seed, 0, 2**63 - 1, "1")
    share = m.qty("allowed_share", "fraction", d.allowed_share, check="pos")
    if share > 1:
        ctx.fail(
            f"analysis.allowed_share is {share:g}; it is a share of the class, at most 1 (100 %)",
            m.get("allowed_share").line,
        )
    return model.Analysis(samples=samples, seed=seed, allowed_share=share, trim=m.boolean("trim", False))


# --- command line for checking one file ----------------------------------------------------


def main(argv: Sequence[str] | None = None) -> int:
    """Check project files: print a summary of each good one and the error of each bad one (then exit 2)."""
    args = list(sys.argv[1:] if argv is None else argv)
    if not args or any(a in ("-h", "--help") for a in args):
        print("usage: python -m planner.project FILE [FILE ...]  (checks project files)", file=sys.stderr)
        return 2 if not args else 0
    status = 0
    for a in args:
        try:
            spec = load(a)
        except ProjectError as e:
            print(e.one_line(), file=sys.stderr)
            status = 2
            continue
        mv = spec.movement
        n_pos = len(spec.network.positions) if spec.network else 0
        print(
            f"{a}: ok: '{spec.title}', movement {format_si(mv.i_fs_a, 'A')} / {format_si(mv.r_coil_ohm, 'ohm')} "
            f"class {mv.class_index:g}; voltage ranges {len(spec.voltage.full_scales) if spec.voltage else 0}, "
            f"current ranges {len(spec.current.full_scales) if spec.current else 0}, network positions {n_pos}"
        )
    return status


if __name__ == "__main__":
    sys.exit(main())
