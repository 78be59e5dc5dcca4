"""Ohms ranges solved: zeroing, the nominal scale, deflections and readings of a series ohmmeter.

A resistance position is driven by its battery through the unknown R_x (a 0 V
voltage stimulus whose source resistance is R_x, :mod:`planner.ranges.resistance`).
Before every reading the zero-ohms adjuster (a rheostat) is set so that R_x = 0
gives full deflection at the battery voltage in question (:func:`zero`); the
reading is the value the *nominal scale* marks at the deflection, the scale being
drawn at the nominal battery voltage with nominal parts at the reference
temperature, zeroed (:class:`Scale`). The check figures of a resistance position
are in :mod:`planner.ohms_check`.

Every function takes an :class:`planner.engine.Engine` and batches: one row per
parameter set (a build, a battery voltage, a temperature), because R_x, like the
source resistance it is, is one number per row.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from . import network as nw
from .engine import Engine
from .errors import ProjectError
from .stimulus import Stimulus

#: Points of the nominal scale per decade of R_x / R_c (the scale is exact between
#: its points for a linear network: 1/D - 1 is then proportional to R_x).
SCALE_POINTS_PER_DECADE = 40
#: The nominal scale spans R_c x 10^-SCALE_DECADES ... R_c x 10^SCALE_DECADES.
SCALE_DECADES = 4
#: Polishing steps of the zeroing after the first bilinear solve (clamps make the
#: network slightly nonlinear; a linear network is exact after the first).
ZERO_POLISH = 3


@dataclass(frozen=True)
class OhmsParts:
    """What drives a resistance position: its battery and its zero adjuster (None without one)."""

    position: object
    battery: object
    rheostat: object | None


def parts_of(engine: Engine, position) -> OhmsParts:
    """The battery and the rheostat in circuit on a resistance position.

    Raises
    ------
    ProjectError
        No battery in the position's circuit (nothing would drive the movement).
    """
    st = engine.state(position)
    pos = st.position
    c = engine.circuit(st, "voltage", True)
    names = [br.element for br in c.branches]
    bats = [engine.elements[n] for n in names if getattr(engine.elements.get(n), "kind", "") == "battery"]
    rhs = [engine.elements[n] for n in names if getattr(engine.elements.get(n), "kind", "") == "rheostat"]
    main, _ = nw._current_carrying(nw.active_graph(engine.net, st), *pos.input)
    bats = [b for b in bats if b.a in main and b.b in main] or bats  # the one in the loop through the input
    rhs = [r for r in rhs if r.a in main and r.b in main] or rhs
    if not bats:
        raise ProjectError(f"position '{pos.name}' measures resistance but no battery is in its circuit; add a "
                           "battery element and close the contacts that put it in series with the input",
                           engine.spec.path, pos.line)
    return OhmsParts(pos, bats[0], rhs[0] if rhs else None)


def _rows(x, n):
    a = np.asarray(x, dtype=float).reshape(-1)
    return np.broadcast_to(a, (n,)) if a.size == 1 else a


def deflection(engine: Engine, op: OhmsParts, r_x, v_bat, setting=None, *, factors=None, temperature_k=None):
    """Deflection D = I_m / I_fs with R_x across the input, one row per entry [fraction].

    Parameters
    ----------
    engine : Engine
    op : OhmsParts
    r_x, v_bat, setting : array_like (P,) or float
        External resistance [ohm] (0: shorted, ``inf``: open), battery EMF [V],
        rheostat setting [ohm] (its default when None).
    factors : mapping, optional
        Tolerance factors per key, arrays (P,).
    temperature_k : float or array_like (P,), optional

    Returns
    -------
    ndarray (P,)
    """
    r_x = np.asarray(r_x, dtype=float).reshape(-1)
    n = max(r_x.size, np.size(v_bat), 1 if setting is None else np.size(setting),
            max((np.size(v) for v in (factors or {}).values()), default=1),
            np.size(temperature_k) if temperature_k is not None else 1)
    r_x = _rows(r_x, n)
    out = np.empty(n)
    groups = (("open", np.isinf(r_x)), ("short", r_x == 0.0), ("r", np.isfinite(r_x) & (r_x > 0.0)))
    for how, mask in groups:
        if not mask.any():
            continue
        sub = lambda x: None if x is None else _rows(x, n)[mask]  # noqa: E731
        kw = {"emf": {op.battery.name: sub(v_bat)}, "factors": {k: sub(v) for k, v in (factors or {}).items()}}
        if op.rheostat is not None:
            kw["settings"] = {op.rheostat.name: sub(setting if setting is not None else op.rheostat.default_setting)}
        if temperature_k is not None:
            kw["temperature_k"] = sub(temperature_k)
        if how == "open":
            res = engine.operate(op.position.name, [0.0], kind="current", **kw)
        elif how == "short":
            res = engine.operate(op.position.name, [0.0], kind="voltage", **kw)
        else:
            res = engine.operate(op.position.name, [0.0], kind="voltage", r_source_ohm=r_x[mask], **kw)
        d = res.movement_multiple[:, 0]
        out[mask] = np.broadcast_to(d, (int(mask.sum()),))
    return out


@dataclass
class Zeroing:
    """Rheostat settings that zero the meter, per row.

    Attributes
    ----------
    setting : ndarray (P,)
        The setting [ohm], within [0, max].
    zeroed : ndarray of bool (P,)
        True where full deflection at R_x = 0 is reached within the travel.
    deflection : ndarray (P,)
        D at R_x = 0 with that setting (1 where zeroed).
    """

    setting: np.ndarray
    zeroed: np.ndarray
    deflection: np.ndarray


def zero(engine: Engine, op: OhmsParts, v_bat, *, factors=None, temperature_k=None) -> Zeroing:
    """Set the zero adjuster so that R_x = 0 gives full deflection, per row.

    Notes
    -----
    With one variable resistance s in a linear network every branch current is a
    bilinear (Moebius) function of s (Thevenin's theorem seen from the rheostat's
    terminals), so :math:`D(s) = (a + b s) / (1 + c s)`; three solves fix a, b, c
    and :math:`D(s) = 1` gives :math:`s = (1 - a) / (b - c)`. The network's diodes
    make it slightly nonlinear: the fit is repeated through the newest points
    (:data:`ZERO_POLISH` times). A setting beyond the travel is held at the end
    stop and the row is marked not zeroed.

    References
    ----------
    The bilinear dependence of a network response on one element value: the
    bilinear theorem of network analysis (e.g. C. A. Desoer, E. S. Kuh, *Basic
    Circuit Theory*, McGraw-Hill, 1969, ch. 16, from memory).
    """
    v = np.asarray(v_bat, dtype=float).reshape(-1)
    n = max(v.size, max((np.size(x) for x in (factors or {}).values()), default=1),
            np.size(temperature_k) if temperature_k is not None else 1)
    v = _rows(v, n)
    kw = dict(factors=factors, temperature_k=temperature_k)
    if op.rheostat is None:
        d = deflection(engine, op, np.zeros(n), v, **kw)
        return Zeroing(np.zeros(n), np.abs(d - 1.0) < 1e-9, d)
    top = op.rheostat.max_ohm
    s = [np.zeros(n), np.full(n, 0.5 * top), np.full(n, top)]
    d = [deflection(engine, op, np.zeros(n), v, x, **kw) for x in s]
    lo_d, hi_d = np.minimum(d[0], d[2]), np.maximum(d[0], d[2])
    best = s[1]
    for _ in range(ZERO_POLISH + 1):
        best = _moebius_root(s, d)
        best = np.clip(np.where(np.isfinite(best), best, s[1]), 0.0, top)
        db = deflection(engine, op, np.zeros(n), v, best, **kw)
        s, d = s[1:] + [best], d[1:] + [db]
        if np.all(np.abs(db - 1.0) < 1e-13):
            break
    zeroed = (lo_d <= 1.0 + 1e-12) & (hi_d >= 1.0 - 1e-12)
    return Zeroing(best, zeroed, d[-1])


def _moebius_root(s, d):
    """The s where (a + b s) / (1 + c s) = 1, through three points (s_i, D_i), per row."""
    a = np.stack([np.ones_like(s[0]), s[0], -s[0] * d[0], np.ones_like(s[1]), s[1], -s[1] * d[1],
                  np.ones_like(s[2]), s[2], -s[2] * d[2]], axis=-1).reshape(-1, 3, 3)
    rhs = np.stack(d, axis=-1)
    with np.errstate(all="ignore"):
        ok = np.abs(np.linalg.det(a)) > 0
        coef = np.full((a.shape[0], 3), np.nan)
        if ok.any():
            coef[ok] = np.linalg.solve(a[ok], rhs[ok][..., None])[..., 0]
        return (1.0 - coef[:, 0]) / (coef[:, 1] - coef[:, 2])


def zero_span(engine: Engine, op: OhmsParts, *, temperature_k=None) -> tuple[float, float]:
    """Lowest and highest battery EMF that can still be zeroed (nominal parts) [V].

    Notes
    -----
    The battery is the only source at R_x = 0, so in a linear network the
    deflection is proportional to its EMF: at each end of the adjuster's travel
    the EMF that gives full deflection is :math:`E_{nom} / D(0; E_{nom})`; the
    diodes' slight nonlinearity is taken out by fixed-point steps
    :math:`E \\leftarrow E / D(0; E)`.
    """
    nominal = op.battery.emf("nominal")
    ends = [None] if op.rheostat is None else [np.array([0.0]), np.array([op.rheostat.max_ohm])]
    out = []
    for s in ends:
        e = np.array([nominal])
        for _ in range(ZERO_POLISH + 1):
            d = deflection(engine, op, [0.0], e, s, temperature_k=temperature_k)
            e = e / np.where(d > 0, d, np.nan)
        out.append(float(e[0]))
    return float(np.nanmin(out)), float(np.nanmax(out))


class Scale:
    """The nominal ohms scale of a position: D_nom(R_x) and its inverse.

    Drawn at the nominal battery EMF with nominal parts at the reference
    temperature, zeroed (design contract).

    Attributes
    ----------
    center_ohm : float
        R_x at half deflection [ohm].
    setting_ohm : float
        The nominal zero setting of the adjuster [ohm] (0 without one).
    r_grid, d_grid : ndarray
        R_x [ohm] and D of the drawn scale, R_x ascending.
    """

    def __init__(self, engine: Engine, op: OhmsParts):
        self.op = op
        v = op.battery.emf("nominal")
        z = zero(engine, op, [v])
        self.setting_ohm = float(z.setting[0])
        self.zeroed = bool(z.zeroed[0])
        guess = float(op.position.center or op.position.full_scale)
        for _ in range(3):  # R_c = R_x / (1/D - 1): exact for a linear network
            d = deflection(engine, op, [guess], [v], z.setting)
            guess = guess / (1.0 / d[0] - 1.0)
        self.center_ohm = float(guess)
        k = SCALE_DECADES * SCALE_POINTS_PER_DECADE
        r = self.center_ohm * np.logspace(-SCALE_DECADES, SCALE_DECADES, 2 * k + 1)
        self.r_grid = np.concatenate([[0.0], r])
        self.d_grid = deflection(engine, op, self.r_grid, v, self.setting_ohm)
        self._y = 1.0 / self.d_grid - 1.0  # ascending with R_x

    def deflection(self, r_x) -> np.ndarray:
        """D_nom at R_x [fraction] (interpolated in 1/D - 1, linear in R_x)."""
        r = np.asarray(r_x, dtype=float)
        y = np.interp(r, self.r_grid, self._y, right=np.nan)
        y = np.where(np.isnan(y), r / self.center_ohm, y)
        return 1.0 / (1.0 + y)

    def reading(self, d) -> np.ndarray:
        """The R_x the nominal scale marks at deflection D [ohm] (inf at or below zero deflection)."""
        d = np.asarray(d, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            y = np.where(d > 0, 1.0 / np.where(d > 0, d, 1.0) - 1.0, np.inf)
        r = np.interp(y, self._y, self.r_grid, right=np.nan)
        r = np.where(np.isnan(r) & np.isfinite(y), y * self.center_ohm, r)
        return np.where(np.isinf(y), np.inf, np.maximum(r, 0.0))


def zeroed_design(design, position: str | None = None):
    """The design with each rheostat set to its nominal zero (the setting every other analysis uses).

    Each rheostat is zeroed at the nominal battery on ``position`` when that is a
    resistance position using it, else on the first resistance position that
    puts it in circuit; a rheostat that no resistance position uses, or whose
    setting the file gives, keeps its setting.
    """
    net = design.net
    if not any(getattr(e, "kind", "") == "rheostat" for e in net.elements):
        return design
    engine = Engine(design)
    chosen = {}
    first = [p for p in net.positions if p.name == position]
    for pos in first + [p for p in net.positions if p.name != position]:
        if pos.measures != "resistance":
            continue
        op = parts_of(engine, pos.name)
        if op.rheostat is not None and op.rheostat.name not in chosen and op.rheostat.setting_ohm is None:
            z = zero(engine, op, [op.battery.emf("nominal")])
            chosen[op.rheostat.name] = float(z.setting[0])
    if not chosen:
        return design
    elements = tuple(dataclasses.replace(e, setting_ohm=chosen[e.name]) if e.name in chosen else e
                     for e in net.elements)
    out = design.variant(dataclasses.replace(net, elements=elements))
    out.sizing = design.sizing
    return out


def apply_reading(engine: Engine, position: str, r_x: float, temperature_k=None) -> dict:
    """What an ohms position reads for one resistor at the nominal battery, zeroed (``planner apply --ohms``).

    Returns
    -------
    dict
        ``applied_ohm``, ``deflection``, ``reading_ohm``, ``center_ohm``,
        ``battery_v``, ``zero_setting_ohm``, ``reading_error_pct`` (% of reading)
        and ``scale_error_pct`` (% of scale length).
    """
    op = parts_of(engine, position)
    own = Scale(engine, op)
    scale = MarkedScale(engine, op.position, own)
    v = op.battery.emf("nominal")
    z = zero(engine, op, [v], temperature_k=temperature_k)
    d = float(deflection(engine, op, [r_x], [v], z.setting, temperature_k=temperature_k)[0])
    rd = float(scale.reading(d))
    out = {"applied_ohm": float(r_x), "deflection": d, "reading_ohm": rd, "center_ohm": own.center_ohm,
           "scale": scale.reference, "scale_factor": scale.factor,
           "battery_v": float(v), "zero_setting_ohm": float(z.setting[0]),
           "scale_error_pct": 100.0 * (d - float(scale.deflection(r_x)))}
    if r_x > 0 and np.isfinite(rd):
        out["reading_error_pct"] = 100.0 * (rd - r_x) / r_x
    return out


#: The misrange of a resistance position on a changed network: its battery put in backwards,
#: the input shorted (R_x = 0, where the reverse current is largest).
REVERSED_BATTERY = Stimulus("battery reversed", "voltage", 0.0,
                            detail="the ohms battery inserted backwards, probes shorted (R_x = 0)")


def reversed_battery(engine: Engine, position) -> list:
    """(stimulus, engine) pairs of the reversed-battery case of a resistance position (none for others).

    The engine is on a variant of the design whose battery in this position's
    loop has its terminals swapped; the stimulus shorts the input. The rheostat
    keeps the setting of the design (the nominal zero).
    """
    if position.measures != "resistance":
        return []
    bat = parts_of(engine, position.name).battery
    net = engine.net
    swapped = dataclasses.replace(bat, a=bat.b, b=bat.a)
    elements = tuple(swapped if e.name == bat.name else e for e in net.elements)
    return [(REVERSED_BATTERY, Engine(engine.design.variant(dataclasses.replace(net, elements=elements))))]


def scale_groups(positions) -> list[list]:
    """Resistance positions grouped by the arc they are read on: centres a power of ten apart share one."""
    groups: list[list] = []
    for pos in positions:
        if pos.measures != "resistance":
            continue
        c = float(pos.center or pos.full_scale)
        for g in groups:
            ratio = np.log10(c / float(g[0].center or g[0].full_scale))
            if abs(ratio - round(ratio)) < 1e-9:
                g.append(pos)
                break
        else:
            groups.append([pos])
    return groups


class MarkedScale:
    """The arc a resistance position is read on: its group's first position's nominal scale, its numbers
    times the ratio of the centres (a position alone on its arc reads its own nominal scale).

    Attributes
    ----------
    reference : str
        The position whose nominal scale is drawn.
    factor : float
        Ratio of this position's asked centre to the reference's.
    """

    def __init__(self, engine: Engine, position, own: "Scale | None" = None):
        group = next(g for g in scale_groups(engine.positions) if any(p.name == position.name for p in g))
        ref = group[0]
        self.reference = ref.name
        self.factor = float(position.center or position.full_scale) / float(ref.center or ref.full_scale)
        self.scale = own if (own is not None and ref.name == position.name) else Scale(engine, parts_of(engine, ref.name))

    def deflection(self, r_x) -> np.ndarray:
        """D the arc marks for R_x [fraction]."""
        return self.scale.deflection(np.asarray(r_x, dtype=float) / self.factor)

    def reading(self, d) -> np.ndarray:
        """The R_x the arc marks at deflection D for this position [ohm]."""
        return self.factor * self.scale.reading(d)


#: Largest deflection still read as 0 ohm (numerical slack at the 0 ohm mark) [fraction].
ZERO_MARK_SLACK = 1e-9


def pointer_reading(scale: MarkedScale, d: float) -> float | None:
    """The ohms value a practitioner reads at deflection D on a position's arc [ohm].

    Returns
    -------
    float or None
        The R_x the arc marks at D for 0 < D <= 1 (0 at the 0 ohm mark, D = 1); None
        when the pointer is past either end of the ohms scale: beyond the 0 ohm
        mark (D > 1, toward or against the full-scale stop) or at or below the
        infinity mark (D <= 0, against the zero stop; a reversed current).
    """
    d = float(d)
    if not np.isfinite(d) or d <= 0.0 or d > 1.0 + ZERO_MARK_SLACK:
        return None
    r = float(scale.reading(min(d, 1.0)))
    return r if np.isfinite(r) else None


def fault_readings(engine: Engine, cases) -> None:
    """Set ``reading`` of each misrange case on a resistance position to :func:`pointer_reading` (in place).

    ``movement_mean_multiple`` is the pointer's deflection D; the arc is the one the
    position is read on (:class:`MarkedScale`, nominal battery, zeroed). A
    transition's reading is on the arc of the position being left.
    """
    scales: dict[str, MarkedScale] = {}
    by_name = {p.name: p for p in engine.positions}
    for c in cases:
        pos = by_name.get(c["position"])
        if pos is None or pos.measures != "resistance":
            continue
        if pos.name not in scales:
            scales[pos.name] = MarkedScale(engine, pos)
        c["reading"] = pointer_reading(scales[pos.name], c["movement_mean_multiple"])


def scale_definitions(engine: Engine) -> list:
    """The ohms scales of a project's resistance positions for :func:`planner.scale.scale_project`.

    Positions whose asked centres differ by a power of ten share one scale (the
    others read its numbers times the ratio of the centres); the response drawn is
    the nominal scale of each group's first position (:class:`Scale`).

    Returns
    -------
    list of planner.scale.ticks.ScaleDef
        Kind ``ohms``, named ``ohms``, ``ohms 2`` ...
    """
    from .scale.solved import sampled_response
    from .scale.ticks import ScaleDef, ScalePosition

    groups = scale_groups(engine.positions)
    out = []
    for i, g in enumerate(groups):
        scale = Scale(engine, parts_of(engine, g[0].name))
        ref = float(g[0].center or g[0].full_scale)
        sps = tuple(ScalePosition(p.name, "ohm", float(p.center or p.full_scale)) for p in g)
        out.append(ScaleDef("ohms" if i == 0 else f"ohms {i + 1}", "ohms", sps,
                            sampled_response(scale.deflection, ref, "ohms")))
    return out
