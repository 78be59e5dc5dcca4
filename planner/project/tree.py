"""YAML text to a tree of :class:`Node` that keeps every value's line.

PyYAML's safe loader composes the document; :class:`_Composer` converts its nodes,
refusing what a project file never needs: nesting deeper than
:data:`~planner.project.limits.MAX_DEPTH`, more than
:data:`~planner.project.limits.MAX_NODES` values after alias expansion (an "alias
bomb"), duplicate keys (YAML would silently keep the last one), keys that are not
plain text, tags outside plain YAML and text no file can hold (a lone
surrogate from a ``\\ud800`` escape). Syntax errors become one line with the
file's line number and a hint.
"""

from __future__ import annotations

import re
from typing import Any, NoReturn

import yaml

from ..errors import ProjectError
from .limits import MAX_DEPTH, MAX_NODES

__all__ = ["Node", "compose"]

_SURROGATE = re.compile("[\ud800-\udfff]")

_MAP_TAG = "tag:yaml.org,2002:map"
_SEQ_TAG = "tag:yaml.org,2002:seq"
_MERGE_TAG = "tag:yaml.org,2002:merge"
_STR_TAG = "tag:yaml.org,2002:str"
_TEXT_TAGS = frozenset({_MERGE_TAG, "tag:yaml.org,2002:value"})
_STD_SCALAR_TAGS = frozenset("tag:yaml.org,2002:" + t for t in ("str", "int", "float", "bool", "null", "timestamp"))


def compose(text: str, path: str) -> "Node":
    """The document of ``text`` as a :class:`Node` tree (``path`` names the file in messages).

    Raises
    ------
    planner.errors.ProjectError
        For a syntax error, an empty document or one of the refusals above.
    """
    return _Composer(path).compose(text)


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


class Node:
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


class _Composer:
    """Composing context: the file name for messages and the node budget."""

    def __init__(self, path: str):
        self.path = path
        self.count = 0
        self.distinct: set[int] = set()  # ids of the YAML nodes seen, to tell aliases from sheer size
        self.site: int | None = None  # line of the top-level key being read (for the alias-bomb message)
        self.constructor = yaml.constructor.SafeConstructor()

    def fail(self, message: str, line: int | None) -> NoReturn:
        raise ProjectError(message, self.path, line)

    def compose(self, text: str) -> Node:
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

    def _encodable(self, text: str, line: int) -> None:
        """Refuse a lone surrogate (from a ``\\ud800`` escape): no file, report or terminal can hold it."""
        m = _SURROGATE.search(text)
        if m is not None:
            self.fail(
                f"the text holds U+{ord(m.group()):04X}, half of a UTF-16 surrogate pair, which no file or terminal "
                "can show; write the character itself instead of its \\u escape, or remove it",
                line,
            )

    def convert(self, node: yaml.Node, depth: int) -> Node:
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
            self._encodable(node.value, line)
            if node.tag in _TEXT_TAGS and node.style is None:
                return Node("scalar", node.value, line, _STR_TAG, node.value)  # a plain '=' or '<<'
            if node.tag not in _STD_SCALAR_TAGS:
                self.fail(f"the tag {node.tag} is not used in a project file; remove it", line)
            try:
                value = self.constructor.construct_object(node, deep=True)
            except (yaml.YAMLError, ValueError, OverflowError, TypeError):
                value = node.value  # e.g. 2024-02-30 or a 5000-digit integer: keep the text, checks follow
            return Node("scalar", value, line, node.tag, node.value)
        if isinstance(node, yaml.SequenceNode):
            if node.tag != _SEQ_TAG:
                self.fail(f"the tag {node.tag} is not used in a project file; remove it", line)
            return Node("seq", [self.convert(item, depth + 1) for item in node.value], line, node.tag)
        if isinstance(node, yaml.MappingNode):
            if node.tag != _MAP_TAG:
                self.fail(f"the tag {node.tag} is not used in a project file; remove it", line)
            out = Node("map", {}, line, node.tag)
            merges: list[yaml.Node] = []
            for knode, vnode in node.value:
                kline = knode.start_mark.line + 1
                if isinstance(knode, yaml.ScalarNode) and knode.tag == _MERGE_TAG:
                    merges.append(vnode)
                    continue
                if not isinstance(knode, yaml.ScalarNode):
                    self.fail("a key must be plain text, not a list or a mapping", kline)
                key = knode.value
                self._encodable(key, kline)
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
