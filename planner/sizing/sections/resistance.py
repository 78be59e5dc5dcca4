"""Ohms ranges (``resistance:``): battery, series resistors, range shunts and the zero adjuster.

Topology (``docs/ohms.md``): battery j between ``[bp<j>, plus]`` (its minus on the
plus terminal, or on ``p_ohm`` behind an ohms fuse, so the plus terminal is the negative one on ohms, as in most analog
multimeters); for range k a series resistor R_s,k from ``bp<j>`` to ``o<k>`` and a
contact ``o<k>``-``ox``; a range shunt R_h,k from ``h<k>`` to ``com`` and a contact
``h<k>``-``ox``; the meter branch from ``ox`` to ``com``. With ``zero_adjust: shunt``
a swamping resistor joins ``ox`` to the meter's top node and the adjuster (a fixed part and a rheostat in
series, behind a contact closed on the ohms positions) lies across the meter; with
``series`` the rheostat lies between ``ox`` and the meter.

Every target follows from the centre value R_c,k = R_int,k and the share
sigma_k = R_h,k / (R_h,k + R_b) of the current the meter branch (resistance R_b)
takes at full deflection (closed forms in :func:`ohms_targets`).
"""

from __future__ import annotations

from dataclasses import dataclass

from ... import eseries
from ...model import Battery, Position, Rheostat, Spec
from ...tools import fmt
from ..layout import COM, PLUS, Device, Layout, SegmentPlan, SizingSection, position_label
from ..request import check_ranges, request_error

#: Node of the meter branch's top on the ohms positions (series zero adjust).
OX = "ox"
#: Margin of the zero adjuster's travel beyond the battery span, each end (fraction).
ZERO_MARGIN = 0.02
#: Lowest sensitivity factor g = 1 + R_m / R_a of a shunt adjuster at the end of its
#: travel (R_a = 10 R_m at most: a shunt adjuster much larger than the coil hardly acts).
G_MIN = 1.1
#: Series resistor of a shunt-adjusted meter branch, in coil resistances: it makes the
#: branch take a current rather than a voltage from the range shunt, so the adjuster
#: acts on every range alike (common practice; see docs/ohms.md).
SWAMP = 4.0
#: Preferred values the rheostat's maximum is taken from (trimming potentiometers:
#: 1, 2.2, 4.7 steps; common practice).
POT_SERIES = "E3"


@dataclass(frozen=True)
class OhmsTargets:
    """Ideal values of the ohms network [ohm].

    ``branch_ohm`` is the meter branch R_b at the nominal setting; ``fixed_ohm`` and
    ``rheostat_ohm`` the adjuster's fixed part and travel; per range ``battery``
    (0 or 1), ``series_ohm`` and ``shunt_ohm`` (None: no shunt).
    """

    branch_ohm: float
    fixed_ohm: float
    rheostat_ohm: float
    setting_ohm: float
    battery: tuple[int, ...]
    series_ohm: tuple[float, ...]
    shunt_ohm: tuple[float | None, ...]
    swamp_ohm: float = 0.0


def _batteries(res):
    return [res.battery] + ([res.high_battery] if res.high_battery is not None else [])


def assign_batteries(spec: Spec, i_b: float) -> list[int]:
    """The battery of each range: the first whose nominal EMF drives the centre's full-deflection current.

    Notes
    -----
    At full deflection the battery delivers :math:`E / R_c` and the meter branch
    takes :math:`I_b` of it at the nominal setting, so a range needs
    :math:`R_c \\le E_{nom} / I_b` (the share sigma at most 1).
    """
    res = spec.resistance
    bats = _batteries(res)
    out = []
    for c in res.centers:
        for j, b in enumerate(bats):
            if c <= b.voltage_v / i_b * (1 + 1e-12):
                out.append(j)
                break
        else:
            b = bats[-1]
            raise request_error(
                spec, f"resistance centre {fmt(c, 'ohm')} needs more than the "
                f"{'high_battery' if len(bats) > 1 else 'battery'} can give ({fmt(b.voltage_v, 'V')} drives at "
                f"most {fmt(b.voltage_v / i_b, 'ohm')} at centre scale through the meter branch); add or raise "
                "high_battery, or lower the centre", res.line)
    return out


def ohms_targets(spec: Spec, i_m: float, r_m: float, feed_ohm: float = 0.0) -> OhmsTargets:
    """Ideal series resistors, range shunts and zero adjuster of the ohms ranges.

    Parameters
    ----------
    spec : Spec
    i_m, r_m : float
        Full-deflection current [A] and resistance [ohm] of the meter the ohms
        network drives.
    feed_ohm : float
        Series resistance ahead of the batteries (an ohms fuse) [ohm]; it adds
        to the battery's internal resistance r_bat.

    Notes
    -----
    At R_x = 0 and full deflection the battery delivers :math:`I_t = E / R_c`
    (:math:`R_c = R_{int}`, the half-deflection value) and the meter branch takes
    :math:`\\sigma I_t`, with :math:`\\sigma = R_h / (R_h + R_b)`. So

    .. math:: \\sigma_k = R_{c,k} I_b / E, \\quad R_{h,k} = \\frac{\\sigma_k R_b}{1 - \\sigma_k},
              \\quad R_{s,k} = R_{c,k} - r_{bat} - \\sigma_k R_b

    (no shunt where :math:`\\sigma_k = 1`). **Shunt adjust**: the branch is the
    meter across :math:`R_a`; it needs :math:`I_b = g I_m`, :math:`g = 1 + R_m / R_a`,
    and zeroes an EMF in proportion to g, so g spans
    :math:`[g_n \\rho_{lo} / (1+m), g_n \\rho_{hi} (1+m)]` with
    :math:`\\rho = E / E_{nom}` over the batteries; :math:`g_n` puts the low end at
    :data:`G_MIN`. **Series adjust**: the branch is the rheostat and the meter,
    :math:`I_b = I_m`; the unshunted range moves its zero fastest,
    :math:`dR_b / dE = 1 / I_m`, so the travel below the nominal setting is
    :math:`(E_{nom} - E_{min}/(1+m)) / I_m` and above it
    :math:`(E_{max}(1+m) - E_{nom}) / I_m`.

    References
    ----------
    Series ohmmeter with shunt and series zero adjustment: T. R. Kuphaldt,
    *Lessons in Electric Circuits*, Vol. I, ch. 8, "Ohmmeter design"; US Army
    correspondence course SS0602 (the multi-range series ohmmeter). The algebra
    is derived in ``docs/ohms.md``.
    """
    res = spec.resistance
    bats = _batteries(res)
    rho_lo = min(b.v_min_v / b.voltage_v for b in bats) / (1 + ZERO_MARGIN)
    rho_hi = max(b.v_max_v / b.voltage_v for b in bats) * (1 + ZERO_MARGIN)
    swamp = SWAMP * r_m
    if res.zero_adjust == "shunt":
        g_n = ((G_MIN * swamp + r_m) / rho_lo - r_m) / swamp
        g_hi = (rho_hi * (g_n * swamp + r_m) - r_m) / swamp
        ra = [r_m / (g - 1.0) for g in (g_hi, g_n, G_MIN)]  # smallest, nominal, largest R_a
        fixed = 0.9 * ra[0]
        pot = eseries.at_or_above(POT_SERIES, ra[2] - fixed)
        setting = ra[1] - fixed
        branch = swamp + r_m * ra[1] / (r_m + ra[1])
        i_b = g_n * i_m
    else:
        swamp = 0.0
        used = [bats[j] for j in sorted(set(assign_batteries(spec, i_m)))]  # I_b = I_m whatever the setting
        top_lo = max(b.voltage_v - b.v_min_v / (1 + ZERO_MARGIN) for b in used) / i_m
        top_hi = max(b.v_max_v * (1 + ZERO_MARGIN) - b.voltage_v for b in used) / i_m
        fixed = 0.0
        setting = max(top_lo, r_m * (1.0 / rho_lo - 1.0))
        pot = eseries.at_or_above(POT_SERIES, max(setting + top_hi, (setting + r_m) * rho_hi - r_m))
        branch = r_m + setting
        i_b = i_m
    which = assign_batteries(spec, i_b)
    series, shunts = [], []
    for c, j in zip(res.centers, which):
        b = bats[j]
        sigma = c * i_b / b.voltage_v
        if sigma > 1.0 + 1e-12:
            raise request_error(
                spec, f"resistance centre {fmt(c, 'ohm')} is beyond what {fmt(b.voltage_v, 'V')} drives through the "
                f"meter branch ({fmt(b.voltage_v / i_b, 'ohm')} at most); add or raise high_battery, or lower the centre",
                res.line)
        shunt = None if sigma >= 1.0 - 1e-9 else sigma * branch / (1.0 - sigma)
        rs = c - b.r_int_ohm - feed_ohm - sigma * branch
        if rs < 0.0:
            raise request_error(
                spec, f"resistance centre {fmt(c, 'ohm')} is below the battery's internal resistance"
                f"{', the ohms fuse' if feed_ohm else ''} and the meter branch it sees "
                f"({fmt(b.r_int_ohm + feed_ohm + sigma * branch, 'ohm')}); raise the centre"
                f"{', choose a fuse of lower cold resistance' if feed_ohm else ''} or use zero_adjust: shunt", res.line)
        series.append(rs)
        shunts.append(shunt)
    return OhmsTargets(branch, fixed, pot, setting, tuple(which), tuple(series), tuple(shunts), swamp)


def check_ohms_fuse(spec: Spec, t: OhmsTargets) -> None:
    """Refuse an ohms fuse (``protection.ohms_fuse``) rated below a range's short-circuit current.

    Notes
    -----
    With the terminals shorted, range k's battery at its freshest drives at most
    :math:`E_{max} / R_{c,k}` (a series ohmmeter's internal resistance is its centre
    value), so a fuse rated at or below that would open in use.
    """
    pr = spec.protection
    if pr is None or not pr.ohms_fuse:
        return
    f = spec.parts.fuses[pr.ohms_fuse]
    bats = _batteries(spec.resistance)
    i_sc, c = max((bats[j].v_max_v / c, c) for c, j in zip(spec.resistance.centers, t.battery))
    if i_sc >= f.rated_current_a:
        raise request_error(spec, f"protection.ohms_fuse '{pr.ohms_fuse}' is rated {fmt(f.rated_current_a, 'A')}, but "
                            f"shorted terminals on the {fmt(c, 'ohm')} range draw up to {fmt(i_sc, 'A')} from a fresh "
                            "battery; choose a fuse rated above that", pr.line)


class ResistanceSizing(SizingSection):
    """The ``resistance`` section: one ohms position per centre value, on one or two batteries."""

    key = "resistance"
    ranges = True

    def labels(self, spec: Spec) -> list[str]:
        return [f"R {position_label(c, 'ohm')}" for c in spec.resistance.centers]

    def validate(self, spec: Spec) -> None:
        res = spec.resistance
        check_ranges(spec, tuple(res.centers), "resistance", res.line, "ohm")
        if res.zero_adjust not in ("shunt", "series"):
            raise request_error(spec, f"resistance.zero_adjust '{res.zero_adjust}' is not known; use 'shunt' or "
                                "'series'", res.line)

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        res = spec.resistance
        base = layout.multiplier_base
        t = ohms_targets(spec, layout.meter_i_a, layout.meter_r_ohm, layout.ohms_feed_ohm)
        check_ohms_fuse(spec, t)
        names = self.labels(spec)
        bats = _batteries(res)
        top = OX
        for j, b in enumerate(bats):
            if j in t.battery:
                layout.devices.append(Device("B", Battery, (f"bp{j + 1}", layout.ohms_feed, b.voltage_v, b.v_min_v,
                                                            b.v_max_v, b.r_int_ohm, 0.1, b.line)))
        on_ohms = tuple(names)
        if res.zero_adjust == "shunt":
            if t.fixed_ohm > 0:
                layout.segments.append(SegmentPlan("zero adjust fixed", "zero adjust", t.fixed_ohm, "za2", "za1",
                                                   res.line))
            layout.contacts.append((base, "za1", on_ohms))
            layout.segments.append(SegmentPlan("ohms swamp", "ohms swamp", t.swamp_ohm, base, OX, res.line))
            layout.devices.append(Device("RV", Rheostat, ("za2", COM, t.rheostat_ohm, None, 100e-6, 0.25, POT_SERIES,
                                                          res.line)))
        else:
            layout.devices.append(Device("RV", Rheostat, (OX, base, t.rheostat_ohm, None, 100e-6, 0.25, POT_SERIES,
                                                          res.line)))
        for k, c in enumerate(res.centers):
            j = t.battery[k]
            if t.series_ohm[k] > 0.0:
                layout.segments.append(SegmentPlan(f"ohms series {names[k]}", "ohms series", t.series_ohm[k],
                                                   f"o{k + 1}", f"bp{j + 1}", res.line))
                layout.contacts.append((f"o{k + 1}", top, (names[k],)))
            else:
                layout.contacts.append((f"bp{j + 1}", top, (names[k],)))
            if t.shunt_ohm[k] is not None:
                layout.segments.append(SegmentPlan(f"ohms shunt {names[k]}", "ohms shunt", t.shunt_ohm[k], COM,
                                                   f"h{k + 1}", res.line))
                layout.contacts.append((f"h{k + 1}", top, (names[k],)))
            layout.positions.append(Position(names[k], "resistance", float(c), (PLUS, COM), res.line, center=float(c)))
            layout.ohms_battery[names[k]] = j
            layout.ideal[names[k]] = (float(c), None)
