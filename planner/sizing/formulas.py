"""Handbook formulas of the sizer: ideal multipliers, Ayrton rings and shunts.

Pure functions of the movement and the ranges (SI floats in, resistances out),
each with its published source; :func:`voltage_meter` gives the meter the
voltage multipliers see, with an Ayrton ring across the movement or without.
The tables of ``docs/sizing.md`` (section 1) list the same formulas.
"""

from __future__ import annotations

from ..model import Spec

__all__ = [
    "chain_segments",
    "separate_multipliers",
    "ayrton_total",
    "ayrton_taps",
    "ayrton_segments",
    "separate_shunts",
    "current_branch_ohm",
    "ring_across",
    "voltage_meter",
]


def chain_segments(full_scales_v, i_a: float, r_ohm: float) -> list[float]:
    """Segments of a chain (series-string) multiplier, from the movement upward.

    Parameters
    ----------
    full_scales_v : sequence of float
        Full-scale voltages [V], ascending.
    i_a : float
        Current into the meter at full deflection [A] (I_fs of the movement, or the
        lowest current range when an Ayrton ring stays across it).
    r_ohm : float
        Terminal resistance of the meter at its input [ohm] (R_m, or R_m || R_t).

    Returns
    -------
    list of float
        Segment k between the taps of ranges k-1 and k [ohm].

    Notes
    -----
    .. math:: R_1 = V_1 / I - R_m, \\qquad R_k = (V_k - V_{k-1}) / I

    References
    ----------
    T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I (DC), ch. 8 "Voltmeter
    design": 1 mA, 500 ohm movement, ranges 1/10/100/1000 V give 500 / 9 k / 90 k / 900 k.
    """
    v = [float(x) for x in full_scales_v]
    out = [v[0] / i_a - r_ohm]
    out += [(v[k] - v[k - 1]) / i_a for k in range(1, len(v))]
    return out


def separate_multipliers(full_scales_v, i_a: float, r_ohm: float) -> list[float]:
    """One multiplier per voltage range [ohm].

    Notes
    -----
    .. math:: R_k = V_k / I - R_m

    References
    ----------
    T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I (DC), ch. 8 "Voltmeter
    design" (1 mA, 500 ohm; 1/10/100/1000 V -> 500 / 9.5 k / 99.5 k / 999.5 k ohm);
    US Army correspondence course SS0602, basic electricity, meters (1 mA, 75 ohm on
    10 V -> 9925 ohm).
    """
    return [float(v) / i_a - r_ohm for v in full_scales_v]


def ayrton_total(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> float:
    """Total resistance of an Ayrton (universal) shunt ring [ohm].

    Parameters
    ----------
    i_ranges_a : sequence of float
        Current ranges [A], ascending; the lowest one sets the ring.
    i_fs_a : float
        Full-scale current of the movement [A].
    r_m_ohm : float
        Resistance of the movement branch [ohm] (coil plus any swamping resistor).

    Notes
    -----
    .. math:: R_t = R_m I_{fs} / (I_1 - I_{fs})

    References
    ----------
    "Ayrton shunt", worked example (science-ebooks.com): 1 mA, 50 ohm movement,
    ranges 2 / 10 / 100 mA, ring 40 + 9 + 1 ohm; Wikipedia, "Ayrton shunt".
    """
    i1 = float(i_ranges_a[0])
    return r_m_ohm * i_fs_a / (i1 - i_fs_a)


def ayrton_taps(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> list[float]:
    """Resistance from the common end of the ring to the tap of each range [ohm].

    Notes
    -----
    .. math:: R_k = I_{fs} (R_t + R_m) / I_k

    so R_1 = R_t for the lowest range.

    References
    ----------
    "Ayrton shunt", worked example (science-ebooks.com); Wikipedia, "Ayrton shunt".
    """
    r_t = ayrton_total(i_ranges_a, i_fs_a, r_m_ohm)
    taps = [i_fs_a * (r_t + r_m_ohm) / float(i) for i in i_ranges_a]
    taps[0] = r_t  # the same number; exact by definition
    return taps


def ayrton_segments(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> list[float]:
    """The ring's resistors from the common end upward [ohm].

    Segment j (j = 1 at the common end) lies between the taps of the ranges
    n-j+2 and n-j+1: the first is R_n, the next R_(n-1) - R_n, and so on.

    Notes
    -----
    .. math:: S_1 = R_n, \\qquad S_j = R_{n-j+1} - R_{n-j+2}

    References
    ----------
    "Ayrton shunt", worked example (science-ebooks.com): 2 / 10 / 100 mA on a 1 mA,
    50 ohm movement give 1, 9 and 40 ohm from the common end.
    """
    taps = ayrton_taps(i_ranges_a, i_fs_a, r_m_ohm)
    n = len(taps)
    out = [taps[-1]]
    for j in range(n - 2, -1, -1):
        out.append(taps[j] - taps[j + 1])
    return out


def separate_shunts(i_ranges_a, i_fs_a: float, r_m_ohm: float) -> list[float]:
    """One shunt per current range, across the movement branch [ohm].

    Notes
    -----
    .. math:: R_{sh} = R_m I_{fs} / (I - I_{fs})

    References
    ----------
    Textbook worked examples of the shunt formula: 1 mA, 43 ohm to 1 A gives 43.04 mohm;
    50 uA, 1 kohm to 500 uA gives 111.1 ohm.
    """
    return [r_m_ohm * i_fs_a / (float(i) - i_fs_a) for i in i_ranges_a]


def current_branch_ohm(spec: Spec) -> float:
    """Resistance of the movement branch on current ranges: coil plus swamping [ohm].

    Notes
    -----
    .. math:: R_b = R_m + R_{sw}

    References
    ----------
    Series resistance (Ohm's law); the swamping resistor as in the Ayrton-shunt
    worked example cited at :func:`ayrton_total`.
    """
    sw = spec.current.swamp_ohm if spec.current is not None else 0.0
    return spec.movement.r_coil_ohm + sw


def ring_across(spec: Spec) -> bool:
    """True when an Ayrton ring stays across the movement on the voltage positions."""
    return (
        spec.current is not None
        and spec.current.arrangement == "ring"
        and spec.current.ring_on_voltage == "across"
    )


def voltage_meter(spec: Spec) -> tuple[float, float]:
    """The meter the voltage multipliers see: full-deflection current and resistance.

    Returns
    -------
    i_a : float
        Input current at full deflection [A].
    r_ohm : float
        Terminal resistance [ohm].

    Notes
    -----
    With the Ayrton ring left across the movement on the voltage positions
    (``ring_on_voltage: across``), the movement branch R_b = R_m + R_sw is shunted
    by the whole ring R_t. At full deflection the branch carries I_fs at
    I_fs R_b volts, the ring I_fs R_b / R_t, so

    .. math:: I = I_{fs} (1 + R_b / R_t) = I_1, \\qquad
              R = R_b R_t / (R_b + R_t)

    where I_1 is the lowest current range the ring makes (the ring's defining
    equation; a range of exactly I_fs is the bare movement and makes none).
    Otherwise (``switched_out``, separate shunts, no current ranges) the
    multipliers see the bare movement: I = I_fs, R = R_m.

    References
    ----------
    Series and parallel resistance and the Ayrton relation as in ``ayrton_total``.
    """
    m = spec.movement
    # a range of exactly I_fs is the bare movement, not part of the ring
    shunted = [x for x in spec.current.full_scales if abs(x / m.i_fs_a - 1.0) > 1e-9] if spec.current else []
    if ring_across(spec) and shunted:
        r_b = current_branch_ohm(spec)
        r_t = ayrton_total(shunted, m.i_fs_a, r_b)
        return m.i_fs_a * (1.0 + r_b / r_t), r_b * r_t / (r_b + r_t)
    return m.i_fs_a, m.r_coil_ohm
