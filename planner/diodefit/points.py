"""Reading a file of measured (voltage, current[, temperature]) points of one diode."""

from __future__ import annotations

import csv
import math
import os
import stat
from dataclasses import dataclass

import numpy as np

from ..errors import ProjectError
from ..model import ZERO_CELSIUS_K
from .params import (COLUMNS, MAX_CURRENT_A, MAX_POINTS_BYTES, MAX_TEMPERATURE_C, MAX_VOLTAGE_V,
                     MIN_CURRENT_A, MIN_VOLTAGE_V)

@dataclass(frozen=True)
class Points:
    """Measured points of one diode.

    Attributes
    ----------
    voltage_v : ndarray
        Terminal voltage, anode minus cathode [V].
    current_a : ndarray
        Current into the anode [A].
    temperature_k : ndarray or None
        Temperature of each point [K]; None when the file has no temperature column.
    lines : ndarray of int
        1-based line of each point in its file (for messages).
    path : str or None
        The file the points came from.
    header_line : int or None
        Line of the header row.
    """

    voltage_v: np.ndarray
    current_a: np.ndarray
    temperature_k: np.ndarray | None = None
    lines: np.ndarray | None = None
    path: str | None = None
    header_line: int | None = None

    def __post_init__(self):
        v = np.atleast_1d(np.asarray(self.voltage_v, dtype=float))
        i = np.atleast_1d(np.asarray(self.current_a, dtype=float))
        if v.shape != i.shape or v.ndim != 1:
            raise ValueError("voltage_v and current_a must be 1-D arrays of one length")
        object.__setattr__(self, "voltage_v", v)
        object.__setattr__(self, "current_a", i)
        if self.temperature_k is not None:
            t = np.broadcast_to(np.asarray(self.temperature_k, dtype=float), v.shape).copy()
            object.__setattr__(self, "temperature_k", t)
        lines = self.lines if self.lines is not None else np.arange(1, v.size + 1)
        object.__setattr__(self, "lines", np.asarray(lines, dtype=int))

    def __len__(self) -> int:
        return int(self.voltage_v.size)


def read_points(path) -> Points:
    """Read a points file: CSV with a header row and one measured point per row.

    Parameters
    ----------
    path : str or os.PathLike
        The file. Its first line that is neither blank nor a comment (``#``) is
        the header ``voltage_v,current_a`` with an optional ``temperature_c``
        column (any order); every later such line is one point: voltage [V],
        current [A], temperature [degC].

    Returns
    -------
    Points

    Raises
    ------
    ProjectError
        For a missing or unreadable file, a missing or wrong header, a row with
        the wrong number of cells, a cell that is not a finite number, a value
        no diode measurement gives (see :func:`check_value`), or no points at all. The message names
        the file and line and says what to write instead.
    """
    path = str(path)
    try:
        st = os.stat(path)
        size = st.st_size
        if not (stat.S_ISREG(st.st_mode) or stat.S_ISDIR(st.st_mode)):  # a FIFO would wait for a writer
            raise ProjectError("is a FIFO, a device or a socket, not a CSV file; save the points as a file and give "
                               "its path", path)
        if size > MAX_POINTS_BYTES:
            raise ProjectError(f"the points file is {size / 1e6:.1f} MB; a file of measured points is at most "
                               f"{MAX_POINTS_BYTES / 1e6:g} MB: give the points of one diode", path)
        with open(path, encoding="utf-8-sig", newline="") as fh:
            text = fh.read(MAX_POINTS_BYTES + 1)
    except FileNotFoundError:
        raise ProjectError("no such file; give the path of a CSV file of measured points", path) from None
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise ProjectError(f"cannot read the points file ({reason}); give a readable UTF-8 CSV file",
                           path) from None

    header: list[str] | None = None
    header_line = None
    rows: list[tuple[int, list[str]]] = []
    last_line = 0
    for number, raw in enumerate(text.splitlines(), start=1):
        last_line = number
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [c.strip() for c in next(csv.reader([line]))]
        if header is None:
            header, header_line = [c.lower() for c in cells], number
            _check_header(header, cells, path, number)
            continue
        rows.append((number, cells))
    if header is None:
        raise ProjectError(
            "no header row; the first line that is not a comment must be 'voltage_v,current_a' "
            "(add ',temperature_c' for points at several temperatures)", path, max(last_line, 1))
    if not rows:
        raise ProjectError(
            "no points after the header; add one row per measured point, e.g. '0.62,1.0e-3'",
            path, header_line)

    cols = {name: header.index(name) for name in COLUMNS if name in header}
    data = {name: np.empty(len(rows)) for name in cols}
    lines = np.empty(len(rows), dtype=int)
    for k, (number, cells) in enumerate(rows):
        lines[k] = number
        if len(cells) != len(header):
            hint = " (separate the cells with commas, not semicolons)" if ";" in "".join(cells) else ""
            raise ProjectError(
                f"this row has {len(cells)} cell(s) but the header has {len(header)} "
                f"({','.join(header)}); give one value per column{hint}", path, number)
        for name, j in cols.items():
            cell = cells[j]
            try:
                value = float(cell)
            except ValueError:
                what = "blank" if not cell else f"'{cell}' is not a number"
                raise ProjectError(
                    f"{name}: {what}; write a plain number in {_column_unit(name)} "
                    f"(e.g. {_column_example(name)}), no unit text", path, number) from None
            check_value(name, value, path, number, cell)
            data[name][k] = value
    temps = data.get("temperature_c")
    return Points(
        voltage_v=data["voltage_v"],
        current_a=data["current_a"],
        temperature_k=None if temps is None else temps + ZERO_CELSIUS_K,
        lines=lines,
        path=path,
        header_line=header_line,
    )


def check_value(name: str, value: float, path: str | None, line: int | None, cell: str | None = None) -> None:
    """Refuse a measured value no bench measurement of a diode can give.

    Parameters
    ----------
    name : str
        The column: ``voltage_v`` [V], ``current_a`` [A] or ``temperature_c`` [degC].
    value : float
        The value in that unit.
    path : str or None
        The points file, for the message.
    line : int or None
        The 1-based line, for the message.
    cell : str, optional
        The text of the cell as written (default: the value).

    Raises
    ------
    ProjectError
        For a value that is not finite, a voltage beyond ``MAX_VOLTAGE_V`` or
        nonzero below ``MIN_VOLTAGE_V``, a
        current beyond ``MAX_CURRENT_A`` or nonzero below ``MIN_CURRENT_A``, or a
        temperature at or below absolute zero or above ``MAX_TEMPERATURE_C``. The
        message names the column and says what to check (units, exponent).
    """
    text = cell if cell is not None else f"{value:g}"
    if not math.isfinite(value):
        raise ProjectError(f"{name}: '{text}' is not a finite number; give a measured value", path, line)
    if name == "voltage_v" and abs(value) > MAX_VOLTAGE_V:
        raise ProjectError(
            f"voltage_v: {text} V is beyond the {MAX_VOLTAGE_V:g} V a diode measurement reaches; write the "
            "voltage in volts (0.652, not 652) and check the exponent", path, line)
    if name == "voltage_v" and value != 0.0 and abs(value) < MIN_VOLTAGE_V:
        raise ProjectError(
            f"voltage_v: {text} V is below the {MIN_VOLTAGE_V:g} V any meter resolves; check the exponent, "
            "or write 0 for a reading below the meter's resolution", path, line)
    if name == "current_a" and abs(value) > MAX_CURRENT_A:
        raise ProjectError(
            f"current_a: {text} A is beyond the {MAX_CURRENT_A:g} A a diode measurement reaches; write the "
            "current in amperes (1.5e-3 for 1.5 mA) and check the exponent", path, line)
    if name == "current_a" and value != 0.0 and abs(value) < MIN_CURRENT_A:
        raise ProjectError(
            f"current_a: {text} A is below the {MIN_CURRENT_A:g} A any meter resolves; check the exponent, "
            "or write 0 for a reading below the meter's resolution", path, line)
    if name == "temperature_c" and value <= -ZERO_CELSIUS_K:
        raise ProjectError(
            f"temperature_c: {text} degC is at or below absolute zero; give the temperature in "
            "degrees Celsius", path, line)
    if name == "temperature_c" and value > MAX_TEMPERATURE_C:
        raise ProjectError(
            f"temperature_c: {text} degC is above the {MAX_TEMPERATURE_C:g} degC at which any junction "
            "still works; give the temperature in degrees Celsius", path, line)


def check_values(name: str, values: np.ndarray, path: str | None, lines) -> None:
    """:func:`check_value` on a whole column; raises for its first bad value."""
    x = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore"):
        if name == "voltage_v":
            bad = ~(np.abs(x) <= MAX_VOLTAGE_V) | ((x != 0.0) & (np.abs(x) < MIN_VOLTAGE_V))
        elif name == "current_a":
            bad = ~(np.abs(x) <= MAX_CURRENT_A) | ((x != 0.0) & (np.abs(x) < MIN_CURRENT_A))
        else:
            bad = ~((x > -ZERO_CELSIUS_K) & (x <= MAX_TEMPERATURE_C))
    for k in np.flatnonzero(bad):
        check_value(name, float(x[k]), path, int(lines[k]))


def _column_unit(name: str) -> str:
    return {"voltage_v": "volts", "current_a": "amperes", "temperature_c": "degrees Celsius"}[name]


def _column_example(name: str) -> str:
    return {"voltage_v": "0.652", "current_a": "1.5e-3", "temperature_c": "23"}[name]


def _check_header(header: list[str], cells: list[str], path: str, number: int) -> None:
    expected = "'voltage_v,current_a' (optionally ',temperature_c')"
    if all(_is_number(c) for c in cells):
        raise ProjectError(
            f"the first row is data, not a header; add the header line {expected} above it",
            path, number)
    unknown = [c for c, h in zip(cells, header) if h not in COLUMNS]
    if unknown:
        raise ProjectError(
            f"unknown column(s) {', '.join(repr(u) for u in unknown)} in the header; the header must be "
            f"{expected}, with values in volts, amperes and degrees Celsius", path, number)
    dup = sorted({h for h in header if header.count(h) > 1})
    if dup:
        raise ProjectError(f"column {dup[0]!r} appears twice in the header; name each column once",
                           path, number)
    missing = [c for c in COLUMNS[:2] if c not in header]
    if missing:
        raise ProjectError(f"the header lacks {' and '.join(missing)}; the header must be {expected}",
                           path, number)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True

