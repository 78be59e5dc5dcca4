"""Tick placement: which values a scale marks, where, and which it labels.

Pure: the input is a list of :class:`ScaleDef` (name, kind, the positions it
serves and, for the non-linear kinds, the nominal response sampled by the
caller) and the :class:`Band` where each scale is drawn; the output is a
:class:`Scale` per definition with every tick's fraction, size, labels and
values. Nothing here solves a circuit or draws.

Three kinds of scale:

``linear``
    The shared scale of the DC positions (and AC positions read on it): the
    fraction of a value is value / full scale exactly. Ranges whose full scales
    differ by a power of ten share a label row; the rows share one set of
    ticks chosen so that every row reads in round 1-2-5 steps.
``ac``
    An AC range's own scale: a uniform 1-2-5 grid of values, placed by the
    nominal response D(value) (compressed near zero by the rectifier's
    threshold); where the divisions crowd, minor ticks and labels are thinned.
``ohms``
    A resistance scale, reversed and non-linear: 0 ohm at full deflection,
    infinity at rest. Labels are chosen from round values by priority (powers
    of ten, then 5, 2, 3, 4, 1.5, then 6 to 9 together) wherever they fit; the
    divisions between labels are walked from the open end toward the crowded
    end, coarsening the 1-2-5 step where the spacing would fall below the
    minimum (:mod:`.ohms`).

Spacing rules (common practice for printed instrument scales): adjacent
ticks at least ``Band.min_spacing_mm`` apart along the base line (1 mm); at
most 100 divisions; at most 10 labelled divisions on a uniform scale; labels at
least ``Band.label_gap_mm`` apart (1.2 mm); no text below 6 pt.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Callable

import numpy as np

from .numbers import M125, M1225, dec, display_number, div, is_nice, mantissa, number_text, unit_text
from .text import Text, centred, overlap, runs_for, upright

__all__ = ["KINDS", "ScalePosition", "Response", "ScaleDef", "Band", "RowPosition", "Row", "Tick", "Scale",
           "rows_of", "display_number", "number_text"]

KINDS = ("linear", "ac", "ohms")
UNITS = ("V", "A", "ohm")

#: Most minor divisions on one scale (common practice: 100 on mirror-scale meters).
MAX_DIVISIONS = 100
#: Most labelled divisions on a uniform scale.
MAX_LABELLED = 10
#: On an AC scale of its own, the division is chosen for the arc from this fraction up;
#: below it (compressed by the rectifier's threshold) ticks and labels are thinned.
READABLE_FROM = 0.2

ROW_FONTS = ("Helvetica", "Helvetica-Oblique")
INFINITY = "\u221e"


# --- input --------------------------------------------------------------------------------


@dataclass(frozen=True)
class ScalePosition:
    """A switch position a scale serves.

    Attributes
    ----------
    name : str
        The position's name.
    unit : {'V', 'A', 'ohm'}
        What it measures.
    full_scale : float
        Full-scale value [V] or [A] (rms for AC); for a resistance position its
        centre value, the resistance read at half deflection [ohm].
    """

    name: str
    unit: str
    full_scale: float

    def __post_init__(self):
        if self.unit not in UNITS:
            raise ValueError(f"unit must be one of {UNITS}, not {self.unit!r}")
        if not (math.isfinite(self.full_scale) and self.full_scale > 0):
            raise ValueError(f"{self.name}: full scale must be a positive finite number")


@dataclass(frozen=True)
class Response:
    """The nominal response D(value) of a scale's first position, sampled densely.

    Attributes
    ----------
    values : array_like
        Stimulus values in SI units, strictly ascending, from 0 (volts and
        amperes up to at least the full scale; ohms as far as the caller cares,
        the point D(infinity) = 0 is added).
    fractions : array_like
        D at those values: the movement current over its full-scale current,
        monotonic (rising for ``ac``, falling for ``ohms``).
    evaluate : callable, optional
        D at arbitrary values (an array in, an array out). When given, the
        final tick fractions come from it and the samples only guide the
        layout; otherwise from the interpolant.

    Notes
    -----
    The interpolant is the monotone piecewise-cubic Hermite interpolant
    (PCHIP) [1]_ in a coordinate t where a typical response is close to a
    straight line: t = value for ``ac``; t = R / (R + R_c) for ``ohms``, with
    R_c the first position's centre, which maps 0..infinity onto 0..1 and makes
    the series ohmmeter D = R_c / (R_c + R) = 1 - t exactly linear. PCHIP
    reproduces a linear D(t) to rounding; for a smooth response its error is
    O(h^2) in the sample spacing h (see docs/scale.md for measured values).

    References
    ----------
    .. [1] F. N. Fritsch, R. E. Carlson, "Monotone piecewise cubic interpolation",
       SIAM J. Numer. Anal. 17(2), 238-246 (1980), doi:10.1137/0717021.
    """

    values: np.ndarray
    fractions: np.ndarray
    evaluate: Callable[[np.ndarray], np.ndarray] | None = None


@dataclass(frozen=True)
class ScaleDef:
    """One scale to draw: a name (printed at its rest end), a kind, the positions it serves.

    ``response`` is required for the ``ac`` and ``ohms`` kinds and ignored for
    ``linear`` (value / full scale exactly). The first position is the
    reference: the response is in its units, and the JSON values are its values.
    """

    name: str
    kind: str
    positions: tuple[ScalePosition, ...]
    response: Response | None = None

    def __post_init__(self):
        if self.kind not in KINDS:
            raise ValueError(f"kind must be one of {KINDS}, not {self.kind!r}")
        if not self.positions:
            raise ValueError(f"scale {self.name!r} serves no position")
        if self.kind != "linear" and self.response is None:
            raise ValueError(f"scale {self.name!r} of kind {self.kind} needs its nominal response")
        if self.kind == "ohms" and any(p.unit != "ohm" for p in self.positions):
            raise ValueError(f"scale {self.name!r}: an ohms scale serves resistance positions only")
        if self.kind != "ohms" and any(p.unit == "ohm" for p in self.positions):
            raise ValueError(f"scale {self.name!r}: resistance positions need an ohms scale")


@dataclass(frozen=True)
class Band:
    """Where a scale is drawn: base-line radius, label-row radii [mm], arc [deg], type size [pt]."""

    radius_mm: float
    row_radii_mm: tuple[float, ...]
    arc_deg: float
    label_pt: float
    min_spacing_mm: float = 1.0
    label_gap_mm: float = 1.2

    @property
    def length_mm(self) -> float:
        """Length of the base line [mm]."""
        return self.radius_mm * math.radians(self.arc_deg)

    def polar_deg(self, fraction: float) -> float:
        """Polar angle of a fraction (counter-clockwise from +x; rest at the left)."""
        return 90.0 + self.arc_deg / 2.0 - fraction * self.arc_deg

    def label(self, fraction: float, row: int, runs, colour: str = "#000000", role: str = "label") -> Text:
        """A label centred on its tick's radial line in a row, its baseline tangent to the arc."""
        phi = self.polar_deg(fraction)
        r = self.row_radii_mm[row]
        p = math.radians(phi)
        return centred(r * math.cos(p), r * math.sin(p), runs, self.label_pt, upright(phi), colour=colour, role=role)


# --- output -------------------------------------------------------------------------------


@dataclass(frozen=True)
class RowPosition:
    """A position read on a label row: the printed number times ``factor`` in ``unit_text``."""

    name: str
    unit: str
    full_scale: float
    factor: Decimal
    unit_text: str


@dataclass(frozen=True)
class Row:
    """A label row: the number printed at full scale (None on an ohms scale) and its positions."""

    label_full_scale: Decimal | None
    positions: tuple[RowPosition, ...]


@dataclass(frozen=True)
class Tick:
    """A tick: fraction of full deflection, size, one label per row, one value [SI] per position."""

    fraction: float
    size: str  # major | medium | minor
    labels: tuple[str | None, ...]
    values: tuple[float, ...]

    @property
    def major(self) -> bool:
        return self.size == "major"


@dataclass(frozen=True)
class Scale:
    """A placed scale: its definition, band, rows, ticks (rest end first) and end marks."""

    definition: ScaleDef
    band: Band
    rows: tuple[Row, ...]
    ticks: tuple[Tick, ...]
    end_marks: tuple[Tick, ...] = ()
    notes: tuple[str, ...] = field(default=())

    @property
    def name(self) -> str:
        return self.definition.name

    @property
    def kind(self) -> str:
        return self.definition.kind

    def angle_deg(self, fraction: float) -> float:
        """Angle from the rest end [deg]: fraction x arc."""
        return fraction * self.band.arc_deg


# --- rows -----------------------------------------------------------------------------------


def rows_of(positions: tuple[ScalePosition, ...]) -> list[Row]:
    """Positions grouped by the mantissa of their full scale, in switch order; one row each.

    A row is labelled in the display number of one of its ranges: ranges with at
    least a two-digit number preferred (whole-number labels), then the number
    shared by most ranges, then the largest.
    """
    groups: dict[Decimal, list[ScalePosition]] = {}
    for p in positions:
        groups.setdefault(mantissa(dec(p.full_scale)), []).append(p)
    rows = []
    for members in groups.values():
        nums = [display_number(p.full_scale)[0].normalize() for p in members]
        pool = [n for n in nums if n >= 10] or nums
        label_fs = max(pool, key=lambda n: (nums.count(n), n))
        rps = []
        for p, n in zip(members, nums):
            e3 = display_number(p.full_scale)[1]
            rps.append(RowPosition(p.name, p.unit, p.full_scale, div(n, label_fs).normalize(), unit_text(p.unit, e3)))
        rows.append(Row(label_fs, tuple(rps)))
    return rows


# --- geometry helpers -------------------------------------------------------------------------


def collides(t: Text, others, gap: float) -> bool:
    box = t.corners(gap / 2.0)
    return any(overlap(box, o.corners(gap / 2.0)) for o in others)


def prune(cands, band: Band):
    """Keep candidates in priority order while each lies ``min_spacing_mm`` from every kept one.

    ``cands``: (priority key, fraction, payload); returns the kept ones sorted by fraction.
    """
    kept: list[tuple[float, object]] = []
    step = band.min_spacing_mm / band.length_mm
    for _, f, payload in sorted(cands, key=lambda c: c[0]):
        if all(abs(f - g) >= step * (1.0 - 1e-9) for g, _ in kept):
            kept.append((f, payload))
    return sorted(kept, key=lambda k: k[0])


class Curve:
    """D(value) of a sampled response: PCHIP in the kind's coordinate, exact values from ``evaluate``."""

    def __init__(self, kind: str, response: Response, ref: float):
        from scipy.interpolate import PchipInterpolator

        v = np.asarray(response.values, dtype=float).ravel()
        d = np.asarray(response.fractions, dtype=float).ravel()
        if v.shape != d.shape or v.size < 2 or not (np.all(np.isfinite(v)) and np.all(np.isfinite(d))):
            raise ValueError("the response needs at least two finite (value, fraction) samples")
        if np.any(np.diff(v) <= 0) or v[0] != 0.0:
            raise ValueError("response values must start at 0 and rise strictly")
        slope = np.diff(d)
        if kind == "ohms" and np.any(slope > 0) or kind != "ohms" and np.any(slope < 0):
            raise ValueError("the response must be monotonic: rising with the value (falling on an ohms scale)")
        self.kind, self.ref, self.evaluate = kind, ref, response.evaluate
        if kind == "ohms":
            t = v / (v + ref)
            if t[-1] < 1.0:
                t, d = np.append(t, 1.0), np.append(d, 0.0)
        else:
            if v[-1] < ref * (1.0 - 1e-12):
                raise ValueError("the response must be sampled up to the full scale")
            t = v
        self.t_max = t[-1]
        self._p = PchipInterpolator(t, d, extrapolate=False)

    def _t(self, values):
        v = np.asarray(values, dtype=float)
        if self.kind == "ohms":
            with np.errstate(invalid="ignore"):
                return np.where(np.isinf(v), 1.0, v / (v + self.ref))
        return v

    def interp(self, values) -> np.ndarray:
        return np.asarray(self._p(np.minimum(self._t(values), self.t_max)), dtype=float)

    def exact(self, values) -> np.ndarray:
        if self.evaluate is None:
            return self.interp(values)
        return np.asarray(self.evaluate(np.asarray(values, dtype=float)), dtype=float).reshape(np.shape(values))


# --- uniform scales: linear and ac -----------------------------------------------------------------


def _values(positions, i: int, n: int) -> tuple[float, ...]:
    return tuple(float(div(dec(p.full_scale) * i, n)) for p in positions)


def _choose_divisions(labels_fs, spacing: Callable[[int], float], band: Band) -> int:
    """The number of divisions: every row must read in round steps and the spacing must hold.

    The most divisions (at most 100) whose step on every row is 1, 2, 2.5 or 5 times a
    power of ten; steps of 1, 2 and 5 alone are preferred when they give at least
    three quarters as many divisions.
    """
    def best(allowed) -> int:
        for n in range(MAX_DIVISIONS, 0, -1):
            if all(is_nice(div(lfs, n), allowed) for lfs in labels_fs) and spacing(n) >= band.min_spacing_mm:
                return n
        return 0

    n125, n1225 = best(M125), best(M1225)
    if n125 and n125 >= 0.75 * n1225:
        return n125
    return n1225 or 1


def uniform(defn: ScaleDef, band: Band, curve: Curve | None, colour: str) -> Scale:
    """A uniform grid of values: the shared linear scale (``curve`` None) or an AC scale of its own.

    Notes
    -----
    N divisions (:func:`_choose_divisions`), labels every k-th tick with k the
    smallest of 1, 2, 4, 5, 10, 20, 25, 50 that gives at most 10 labelled
    divisions, round label steps on every row and no colliding labels; a
    medium tick halfway between labels when k is even and at least 4. On an
    AC scale the choice is made from 20 % of the arc up, and below that ticks
    closer than the minimum spacing and labels that would collide are left out,
    the rest mark and full scale first, then from the top down.
    """
    rows = rows_of(defn.positions)
    if len(rows) > len(band.row_radii_mm):
        raise ValueError(f"scale {defn.name!r} needs {len(rows)} label rows, the band has {len(band.row_radii_mm)}")
    lfs = [r.label_full_scale for r in rows]
    ref = defn.positions[0].full_scale
    length = band.length_mm

    cache: dict[int, np.ndarray] = {}

    def fracs(n: int) -> np.ndarray:
        if n not in cache:
            i = np.arange(n + 1)
            cache[n] = i / n if curve is None else curve.interp(ref * i / n)
        return cache[n]

    def frac(i: int, n: int) -> float:
        return float(fracs(n)[i])

    def readable(n: int) -> np.ndarray:
        """Ticks in the part of the arc where a scale must keep its full division: from 20 % up."""
        f = fracs(n)
        return np.ones(n + 1, bool) if curve is None else f >= READABLE_FROM

    def spacing(n: int) -> float:
        f = fracs(n)
        gaps = np.diff(f)[readable(n)[:-1]] * length
        return float(gaps.min()) if gaps.size else 0.0

    n = _choose_divisions(lfs, spacing, band)
    if curve is not None:  # from here on, the exact response at the values the ticks carry
        cache[n] = curve.exact(np.array([_values(defn.positions[:1], i, n)[0] for i in range(n + 1)]))

    def row_labels(i: int, n: int) -> list[str]:
        return [number_text(div(lf * i, n)) for lf in lfs]

    def fits(k: int) -> bool:
        ok = readable(n)
        for j in range(len(rows)):
            placed = []
            for i in range(0, n + 1, k):
                if not ok[i]:
                    continue
                t = band.label(frac(i, n), j, runs_for(row_labels(i, n)[j], ROW_FONTS[j % 2]))
                if collides(t, placed, band.label_gap_mm):
                    return False
                placed.append(t)
        return True

    k = n
    for allowed in (M125, M1225):  # label steps of 1, 2 or 5 on every row first, then 2.5 too
        found = [c for c in (1, 2, 4, 5, 10, 20, 25, 50, 100)
                 if c <= n and n % c == 0 and n // c <= MAX_LABELLED
                 and all(is_nice(div(lf * c, n), allowed) for lf in lfs) and fits(c)]
        if found:
            k = found[0]
            break
    half = k // 2 if k % 2 == 0 and k >= 4 else None

    cands = []
    for i in range(n + 1):
        size = "major" if i % k == 0 or i == n else ("medium" if half and i % half == 0 else "minor")
        rank = {"major": 1, "medium": 2, "minor": 3}[size]
        prio = (0 if i in (0, n) else rank, -i)
        cands.append((prio, frac(i, n), (i, size)))
    kept = prune(cands, band)

    # labels: full scale, then rest, then downward; one that would collide is left out
    placed: list[list[Text]] = [[] for _ in rows]
    labelled: dict[int, list[str | None]] = {}
    majors = sorted((i for _, (i, size) in kept if size == "major"), key=lambda i: (i not in (n, 0), i != n, -i))
    notes = []
    for i in majors:
        texts = row_labels(i, n)
        out: list[str | None] = []
        for j, txt in enumerate(texts):
            t = band.label(frac(i, n), j, runs_for(txt, ROW_FONTS[j % 2]), colour)
            if collides(t, placed[j], band.label_gap_mm):
                out.append(None)
                notes.append(f"label {txt} left out on row {j + 1}: no room")
            else:
                placed[j].append(t)
                out.append(txt)
        labelled[i] = out

    ticks = []
    for f, (i, size) in kept:
        labels = tuple(labelled.get(i, [None] * len(rows)))
        if size == "major" and all(x is None for x in labels):
            size = "medium"
        ticks.append(Tick(f, size, labels, _values(defn.positions, i, n)))
    return Scale(defn, band, tuple(rows), tuple(ticks), (), tuple(notes))

