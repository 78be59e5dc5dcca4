"""Where the ticks of one scale go: the linear and AC kinds by uniform divisions, ohms by its own rules."""

from __future__ import annotations

from .ohms import place_ohms
from .ticks import Band, Curve, Scale, ScaleDef, uniform


def place(defn: ScaleDef, band: Band, colour: str = "#000000") -> Scale:
    """Choose and place the ticks and labels of one scale.

    Parameters
    ----------
    defn : ScaleDef
        What the scale serves and, for ``ac`` and ``ohms``, its nominal response.
    band : Band
        Base-line radius, label-row radii [mm], arc [deg] and type size [pt].
    colour : str
        Colour of its labels (``#rrggbb``), carried into the label boxes.

    Returns
    -------
    Scale
        Ticks sorted by fraction (rest end first). On a ``linear`` scale the
        fraction of tick i of N divisions is i / N exactly and its value on
        each position is full scale x i / N (decimal arithmetic, rounded once).
    """
    if defn.kind == "linear":
        return uniform(defn, band, None, colour)
    curve = Curve(defn.kind, defn.response, defn.positions[0].full_scale)
    if defn.kind == "ac":
        return uniform(defn, band, curve, colour)
    return place_ohms(defn, band, curve, colour)
