"""The ohms scale: reversed and non-linear, 0 ohm at full deflection, infinity at rest.

Labels are chosen from round values by priority (powers of ten, then 5, 2, 3, 4,
1.5, then 6 to 9 together), decades nearest the centre first, wherever their
boxes keep clear of the labels already placed; so the crowding toward infinity
is handled by leaving values out, never by shrinking type. The divisions between
two labels are walked from the open (low-resistance) end toward the crowded
end, stepping to the next coarser 1-2-5 step wherever the next tick would come
closer than the minimum spacing; beyond the last label the walk goes on until
the ticks would crowd the infinity mark.
"""

from __future__ import annotations

import math
from decimal import Decimal

import numpy as np

from .numbers import M125, display_number, div, dec, is_nice, number_text, steps_125, unit_text
from .text import Text, runs_for
from .ticks import INFINITY, Band, Row, RowPosition, Scale, ScaleDef, Tick, collides, Curve, prune

__all__ = ["place_ohms"]


#: Label candidates by priority: mantissas of one decade; a tuple of several is all or none.
_OHM_LEVELS = ((1,), (5,), (2,), (3,), (4,), (Decimal("1.5"),), (6, 7, 8, 9))


def place_ohms(defn: ScaleDef, band: Band, curve: Curve, colour: str) -> Scale:
    """Place an ohms scale: labels by priority where they fit, divisions walked between them.

    Parameters
    ----------
    defn : ScaleDef
        Kind ``ohms``; its first position's centre [ohm] sets the label unit
        (the numbers are that position's ohms; the others read them times the
        ratio of their centres).
    band : Band
    curve : Curve
        The nominal response D(R), falling from D(0) (full deflection) to 0.
    colour : str

    Returns
    -------
    Scale
        Ticks with their exact fractions (``Response.evaluate`` where given) and
        one end mark, infinity at fraction 0.

    Notes
    -----
    For a series ohmmeter with an ideal battery D = R_c / (R_c + R), so the
    centre R_c reads at half deflection [1]_.

    References
    ----------
    .. [1] T. R. Kuphaldt, Lessons in Electric Circuits, Vol. I (DC), ch. 8, "Ohmmeter design".
    """
    ref = defn.positions[0]
    centre, e3 = display_number(ref.full_scale)
    unit_si = Decimal(1).scaleb(e3)
    length = band.length_mm
    rows = [Row(None, tuple(
        RowPosition(p.name, p.unit, p.full_scale, div(dec(p.full_scale), dec(ref.full_scale)).normalize(),
                    unit_text("ohm", e3)) for p in defn.positions))]
    factors = [rp.factor for rp in rows[0].positions]

    def si(d: Decimal) -> float:
        return float(d * unit_si)

    def f_of(d: Decimal) -> float:
        return float(curve.interp(si(d)))

    def exact(values) -> dict[Decimal, float]:
        values = list(values)
        return dict(zip(values, (float(x) for x in curve.exact(np.array([si(d) for d in values])))))

    e_c = centre.adjusted()
    decades = sorted(range(e_c - 1, e_c + 5), key=lambda e: (abs(e - e_c), e))
    groups = [[Decimal(m).scaleb(e) for m in level] for level in _OHM_LEVELS for e in decades]
    frac = exact([Decimal(0)] + [d for g in groups for d in g])
    f_zero = frac[Decimal(0)]
    labels: dict[Decimal, Text] = {}
    placed: list[Text] = []

    def try_label(group) -> bool:
        texts = []
        for d in group:
            f = frac[d]
            if not 0.0 < f < f_zero:
                return False
            t = band.label(f, 0, runs_for(number_text(d, suffix=True)), colour)
            if collides(t, placed + texts, band.label_gap_mm):
                return False
            texts.append(t)
        for d, t in zip(group, texts):
            labels[d] = t
            placed.append(t)
        return True

    for d, f in ((Decimal(0), f_zero), (None, 0.0)):
        t = band.label(f, 0, runs_for("0" if d is not None else INFINITY), colour)
        if not collides(t, placed, band.label_gap_mm):
            placed.append(t)
    for group in groups:
        try_label(group)

    # divisions: walk each gap between labels from its open (low-value) end, coarsening the step
    stops = sorted(labels) + [None]
    step_mm = band.min_spacing_mm
    minors: list[tuple[Decimal, str]] = []
    a = Decimal(0)
    for b in stops:
        fb = 0.0 if b is None else frac[b]
        width = (b - a) if b is not None else max(a, Decimal(1).scaleb(e_c))
        s = steps_125(width / 100, width)[0] if width > 0 else None
        x, fx = a, f_of(a)
        while s is not None:
            nxt = (x // s + 1) * s
            if b is not None and nxt >= b:
                break
            fn = f_of(nxt)
            if (fx - fn) * length < step_mm:
                bigger = steps_125(s * Decimal("1.01"), s * 10)
                s = bigger[0] if bigger else None
                if b is None and s is not None and s > a * 1000 + 1:
                    break
                continue
            if (fn - fb) * length < step_mm:
                break
            med = 5 * s if is_nice(5 * s, M125) else 10 * s
            minors.append((nxt, "medium" if nxt % med == 0 else "minor"))
            x, fx = nxt, fn
        if b is not None:
            a = b

    frac.update(exact(d for d, _ in minors))
    cands = [((0, 0), f_zero, (Decimal(0), "major"))]
    for d in labels:
        cands.append(((1, float(d)), frac[d], (d, "major")))
    for d, size in minors:
        cands.append(((2 if size == "medium" else 3, float(d)), frac[d], (d, size)))
    cands.append(((0, -1), 0.0, (None, "major")))
    kept = prune(cands, band)

    ticks, ends = [], []
    for f, (d, size) in kept:
        if d is None:
            label = INFINITY if any(t.text == INFINITY for t in placed) else None
            ends.append(Tick(0.0, "major", (label,), tuple(math.inf for _ in factors)))
            continue
        text = None
        if size == "major":
            text = number_text(d, suffix=True) if (d in labels or d == 0) else None
            if d == 0 and not any(t.text == "0" for t in placed):
                text = None
        values = tuple(float(d * unit_si * fac) for fac in factors)
        ticks.append(Tick(f, size if text is not None or size != "major" else "medium", (text,), values))
    ticks.sort(key=lambda t: t.fraction)
    return Scale(defn, band, tuple(rows), tuple(ticks), tuple(ends))
