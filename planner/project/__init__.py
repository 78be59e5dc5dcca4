"""Project-file loader: YAML text with units in, :class:`planner.model.Spec` out.

The file is read as UTF-8 and composed with PyYAML's safe loader into a node
tree that keeps every node's position, so each error names the file and the
1-based line and says what to do. The tree is then read section by section
(one module per section); every quantity goes through
:func:`planner.units.parse` and lands in the model as an SI float.

The package, top to bottom:

``tree``        YAML text to a tree of nodes that keep their lines (alias bombs,
                nesting, duplicate keys and tags refused)
``reader``      typed values and their checks (:class:`reader.Reader`,
                :class:`reader.Section`), shared by every section
``limits``      resource caps and closed lists
``movement``    ``movement:`` and ``ambient:``
``catalogue``   ``parts:`` (each model read by its part kind in ``planner.parts``)
``ranges``      the sizing request: ``voltage:``, ``current:``, ``ac_voltage:``, ``ac_current:``, ``clamps:``
``network``     an explicit ``network:`` (each element read by its part kind)
``faults``      ``faults:`` and ``analysis:``
``spec``        the top level assembled into a :class:`planner.model.Spec`
``both``        ranges and a network in one file: the same meter (asked by the commands)

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
import os
import stat
from typing import Any

from .. import model
from ..errors import ProjectError
from .both import same_meter
from .limits import (
    E_SERIES,
    IEC_CLASSES,
    MAX_DEPTH,
    MAX_ELEMENTS,
    MAX_FILE_BYTES,
    MAX_NODES,
    MAX_POSITIONS,
    MAX_SAMPLES,
    MAX_SEED,
    MAX_SOURCES,
    too_big,
)
from .network import ELEMENT_KEYS, NETWORK_KEYS, POSITION_KEYS
from .reader import Reader
from .spec import TOP_KEYS, read_spec
from .tree import compose

__all__ = [
    "load", "loads", "MAX_FILE_BYTES", "MAX_NODES", "MAX_DEPTH", "MAX_POSITIONS", "MAX_ELEMENTS", "MAX_SOURCES",
    "MAX_SAMPLES", "MAX_SEED", "IEC_CLASSES", "E_SERIES", "TOP_KEYS", "NETWORK_KEYS", "ELEMENT_KEYS",
    "POSITION_KEYS", "same_meter",
]


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
    if not stat.S_ISREG(st.st_mode):  # reading a FIFO without a writer would wait for ever
        kind = "a FIFO (named pipe)" if stat.S_ISFIFO(st.st_mode) else "a device or a socket"
        raise ProjectError(f"is {kind}, not a project file; save the project as a .yaml file and give its path", p)
    if st.st_size > MAX_FILE_BYTES:
        raise ProjectError(too_big(st.st_size), p)
    try:
        with open(p, "rb") as f:
            data = f.read(MAX_FILE_BYTES + 1)
    except OSError as e:
        raise ProjectError(f"cannot read the file ({e.strerror}); check the path and its permissions", p) from None
    if len(data) > MAX_FILE_BYTES:
        raise ProjectError(too_big(len(data)), p)
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
            raise ProjectError(too_big(len(text)), path)
        text = _decode(bytes(text), path)
    elif len(text) > MAX_FILE_BYTES:
        raise ProjectError(too_big(len(text.encode("utf-8", "surrogatepass"))), path)
    if text.startswith("\ufeff"):
        text = text[1:]
    root = compose(text, path)
    spec = read_spec(Reader(path), root)
    return _replace(spec, path=path, text=text)


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
