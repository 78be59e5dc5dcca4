"""Readings of an existing meter against a reference source, from a CSV file.

A readings file is what a restorer writes at the bench: the range switch set to a
position, a known value applied from a reference source (calibrator, reference
divider, decade box), and what the pointer shows. One row per reading::

    # 50 V range, reference source 0.05 %
    position,applied,reading
    50 V,50 V,43.6 V
    50 V,25,21.9
    1 mA,1 mA,pegged

Numbers are in SI units (volts, amperes; ohms for resistance positions) or
quantities with a unit. ``pegged`` (or ``over``) says the pointer stood at its
end stop: the reading is then only known to lie at or beyond the stop. A reading
at or above the movement's ``overload.peg`` times full scale counts as pegged too.
Blank lines and lines starting with ``#`` are skipped; the header may name the
columns in any order, and a ``note`` column is allowed (and ignored).
"""

from __future__ import annotations

import csv
import difflib
import math
import os
import stat
from dataclasses import dataclass

import numpy as np

from ..errors import ProjectError
from ..units import QuantityError, parse

__all__ = ["COLUMNS", "MAX_READINGS_BYTES", "MAX_READINGS", "Readings", "read_readings", "dimension_of"]

#: Columns a readings file must have (contract: ``position,applied,reading``).
COLUMNS = ("position", "applied", "reading")
#: Columns that may be present and are ignored.
OPTIONAL_COLUMNS = ("note",)
#: Largest readings file [bytes]; a bench session is a few kB.
MAX_READINGS_BYTES = 1_000_000
#: Most readings in one file.
MAX_READINGS = 5000
#: Words that say the pointer stood at its end stop.
PEGGED_WORDS = ("pegged", "over", "peg")

#: Dimension of the applied value and the reading for each kind of position.
_DIMENSION = {
    "voltage": "voltage",
    "current": "current",
    "ac_voltage": "voltage",
    "ac_current": "current",
    "resistance": "resistance",
}
_EXAMPLE = {"voltage": "10 V", "current": "1 mA", "resistance": "10 kohm"}


def dimension_of(measures: str) -> str | None:
    """Dimension (:func:`planner.units.parse`) of a position's applied values and readings."""
    return _DIMENSION.get(measures)


@dataclass(frozen=True)
class Readings:
    """Readings of one meter, one entry per row of the file.

    Attributes
    ----------
    position : tuple of str
        Switch position of each reading.
    applied : ndarray
        Value applied from the reference source [V], [A] or [ohm].
    reading : ndarray
        What the pointer showed, in the same unit; ``nan`` where it was pegged.
    pegged : ndarray of bool
        The pointer stood at its end stop.
    lines : ndarray of int
        1-based line of each reading in its file (for messages).
    path : str or None
        The file.
    """

    position: tuple[str, ...]
    applied: np.ndarray
    reading: np.ndarray
    pegged: np.ndarray
    lines: np.ndarray
    path: str | None = None

    def __len__(self) -> int:
        return len(self.position)

    def where(self, k: int) -> str:
        """``file:line`` of reading ``k`` (for messages)."""
        return f"{self.path or '<readings>'}:{int(self.lines[k])}"


def _squash(s: str) -> str:
    return "".join(s.split()).lower()


def _nearest(name: str, names) -> str | None:
    """The name nearest to ``name``, ignoring case and spaces ('10v' -> '10 V')."""
    by_squash = {_squash(n): n for n in names}
    if _squash(name) in by_squash:
        return by_squash[_squash(name)]
    hint = difflib.get_close_matches(_squash(name), list(by_squash), n=1, cutoff=0.6)
    return by_squash[hint[0]] if hint else None


def _read_text(path: str) -> str:
    try:
        st = os.stat(path)
        size = st.st_size
        if os.path.isdir(path):
            raise ProjectError("is a folder; give the path of a CSV file of readings", path)
        if not stat.S_ISREG(st.st_mode):  # a FIFO would wait for a writer
            raise ProjectError("is a FIFO, a device or a socket, not a CSV file; save the readings as a file and "
                               "give its path", path)
        if size > MAX_READINGS_BYTES:
            raise ProjectError(f"the readings file is {size / 1e6:.1f} MB; a file of readings is at most "
                               f"{MAX_READINGS_BYTES / 1e6:g} MB: give the readings of one meter", path)
        with open(path, encoding="utf-8-sig", newline="") as fh:
            return fh.read(MAX_READINGS_BYTES + 1)
    except FileNotFoundError:
        raise ProjectError("no such file; give the path of a CSV file of readings "
                           "(header 'position,applied,reading')", path) from None
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise ProjectError(f"cannot read the readings file ({reason}); give a readable UTF-8 CSV file",
                           path) from None


def _header(cells: list[str], path: str, number: int) -> dict[str, int]:
    expected = "'position,applied,reading'"
    names = [c.strip().lower() for c in cells]
    known = COLUMNS + OPTIONAL_COLUMNS
    for c, h in zip(cells, names):
        if h not in known:
            hint = difflib.get_close_matches(h, known, n=1, cutoff=0.6)
            more = f" (did you mean '{hint[0]}'?)" if hint else ""
            raise ProjectError(f"unknown column '{c}' in the header{more}; the header must be {expected} "
                               "(a 'note' column may follow)", path, number)
    dup = sorted({h for h in names if names.count(h) > 1})
    if dup:
        raise ProjectError(f"column '{dup[0]}' appears twice in the header; name each column once", path, number)
    missing = [c for c in COLUMNS if c not in names]
    if missing:
        raise ProjectError(f"the header lacks the column{'s' if len(missing) > 1 else ''} "
                           f"{' and '.join(repr(m) for m in missing)}; the header must be {expected}", path, number)
    return {h: names.index(h) for h in COLUMNS}


def _quantity(cell: str, dimension: str, column: str, position: str, path: str, number: int) -> float:
    """A cell: a plain number in SI units or a quantity with a unit of ``dimension``."""
    example = _EXAMPLE[dimension]
    if not cell:
        raise ProjectError(f"{column} is blank; give a value, e.g. '{example}'", path, number)
    try:
        value = float(cell)
    except ValueError:
        try:
            value = parse(cell, dimension, where=f"{column} on position '{position}'")
        except QuantityError as exc:
            raise ProjectError(" ".join(exc.message.split()), path, number) from None
    if not math.isfinite(value) or abs(value) > 1e12:
        raise ProjectError(f"{column}: '{cell}' is not a usable number; give a finite value such as "
                           f"'{example}'", path, number)
    return float(value)


def read_readings(path, positions) -> Readings:
    """Read a readings file for a meter whose switch positions are given.

    Parameters
    ----------
    path : str or os.PathLike
        The CSV file (header ``position,applied,reading``, any column order).
    positions : sequence of Position
        The meter's switch positions (:class:`planner.model.Position`): names,
        what each measures and its full scale.

    Returns
    -------
    Readings

    Raises
    ------
    ProjectError
        For a missing or unreadable file, a missing or unknown column, a row with
        the wrong number of cells, a position the meter does not have (with the
        nearest name), a value with the wrong unit or no number, an applied value
        that is not positive, or no readings at all. The message names the file and
        line and says what to write instead.
    """
    path = str(path)
    text = _read_text(path)
    by_name = {p.name: p for p in positions}
    cols: dict[str, int] | None = None
    header_line = None
    width = 0
    pos_out: list[str] = []
    applied: list[float] = []
    reading: list[float] = []
    pegged: list[bool] = []
    lines: list[int] = []
    last = 0
    for number, raw in enumerate(text.splitlines(), start=1):
        last = number
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [c.strip() for c in next(csv.reader([line]))]
        if cols is None:
            cols, header_line, width = _header(cells, path, number), number, len(cells)
            continue
        if len(cells) != width:
            hint = " (separate the cells with commas, not semicolons)" if ";" in line else ""
            raise ProjectError(f"this row has {len(cells)} cell(s) but the header has {width}; give one value "
                               f"per column, e.g. '10 V,10 V,9.6 V'{hint}", path, number)
        if len(pos_out) >= MAX_READINGS:
            raise ProjectError(f"more than {MAX_READINGS} readings; a few per position are enough", path, number)
        name = cells[cols["position"]]
        pos = by_name.get(name)
        if pos is None:
            hint = _nearest(name, by_name)
            more = f" (did you mean '{hint}'?)" if hint else ""
            raise ProjectError(f"the meter has no position named '{name}'{more}; give one of: "
                               f"{', '.join(by_name)}", path, number)
        dim = dimension_of(pos.measures)
        if dim is None:
            raise ProjectError(f"position '{name}' measures {pos.measures}; readings are taken on voltage, "
                               "current and resistance positions", path, number)
        a = _quantity(cells[cols["applied"]], dim, "applied", name, path, number)
        if a <= 0:
            raise ProjectError(f"applied: {cells[cols['applied']]!r} is not positive; give the value applied "
                               f"from the reference source, e.g. '{_EXAMPLE[dim]}' (a reading at zero says "
                               "nothing about the parts)", path, number)
        cell = cells[cols["reading"]]
        if cell.lower() in PEGGED_WORDS:
            r, peg = math.nan, True
        else:
            r, peg = _quantity(cell, dim, "reading", name, path, number), False
        pos_out.append(name)
        applied.append(a)
        reading.append(r)
        pegged.append(peg)
        lines.append(number)
    if cols is None:
        raise ProjectError("no header row; the first line that is not a comment must be "
                           "'position,applied,reading'", path, max(last, 1))
    if not pos_out:
        raise ProjectError("no readings after the header; add one row per reading, e.g. '10 V,10 V,9.6 V'",
                           path, header_line)
    return Readings(tuple(pos_out), np.array(applied), np.array(reading), np.array(pegged, dtype=bool),
                    np.array(lines, dtype=int), path)
