"""Fuses: the catalogue model (cold resistance, ratings, time-current behaviour) and the element.

In the solver a fuse is its cold resistance (design contract). How long it takes
to open (:func:`pre_arcing_time_s`), what it lets through while it does
(:func:`fuse_let_through`), whether it opens under a stimulus and can break the
prospective current (:meth:`Fuse.trip`) and whether it stands the voltage across
it once open (:meth:`Fuse.open_checks`) follow the definitions of IEC 60127-1 and
IEC 60269-1; :mod:`planner.stress` asks these of every part.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..cycle.prearc import onsets_on_grid
from ..units import format_si
from .base import Part, Trip
from .resistor import Resistor


@dataclass(frozen=True)
class FuseModel:
    """A fuse: cold resistance, ratings and its time-current behaviour.

    Attributes
    ----------
    name : str
    r_cold_ohm : float
        Cold resistance [ohm].
    rated_current_a : float
        Rated current [A].
    breaking_capacity_a : float
        Largest prospective current it can interrupt safely [A].
    i2t_a2s : float or None
        Pre-arcing (melting) I^2 t [A^2 s].
    curve : tuple of (current [A], time [s])
        Time-current points, ascending current.
    max_voltage_v : float
        Rated voltage [V].
    clearing_i2t_a2s : float or None
        Total operating (clearing, let-through) I^2 t at high fault current:
        pre-arcing plus arcing [A^2 s]; None when unknown (the pulse is then
        counted over the pre-arcing time only).
    """

    name: str
    r_cold_ohm: float
    rated_current_a: float
    breaking_capacity_a: float
    i2t_a2s: float | None = None
    curve: tuple[tuple[float, float], ...] = ()
    max_voltage_v: float = math.inf
    clearing_i2t_a2s: float | None = None

    #: Keys of one model of ``parts.fuses`` (``docs/project-file.md``).
    file_keys: ClassVar[tuple[str, ...]] = (
        "cold_resistance", "rated_current", "breaking_capacity", "i2t", "clearing_i2t", "curve", "max_voltage"
    )
    file_example: ClassVar[str] = "{cold_resistance: 2 ohm, rated_current: 100 mA, breaking_capacity: 1.5 kA}"

    @classmethod
    def read(cls, m, name: str) -> "FuseModel":
        """The model ``name`` from its mapping of ``parts.fuses`` (a
        :class:`planner.project.reader.Section`): the breaking capacity at least the
        rating, the clearing I2t at least the pre-arcing I2t, the curve's time falling
        as its current rises."""
        r_cold = m.qty("cold_resistance", "resistance", check="nonneg", example="1.8 ohm")
        i_rated = m.qty("rated_current", "current", check="pos", example="100 mA")
        i_break = m.qty("breaking_capacity", "current", check="pos", example="1.5 kA")
        if i_break < i_rated:
            m.fail(f"{m.at('breaking_capacity')} ({format_si(i_break, 'A')}) is below the rated current "
                   f"({format_si(i_rated, 'A')}); the breaking capacity is the largest current the fuse can "
                   "interrupt, far above its rating: check the value", m.line_of("breaking_capacity"))
        i2t = m.qty("i2t", "i2t", None, check="pos")
        clearing = m.qty("clearing_i2t", "i2t", None, check="pos")
        if clearing is not None and i2t is not None and clearing < i2t:
            m.fail(f"{m.at('clearing_i2t')} ({clearing:.4g} A^2 s) is below the pre-arcing i2t "
                   f"({i2t:.4g} A^2 s); the clearing I2t is pre-arcing plus arcing, so it is the larger: "
                   "check the values", m.line_of("clearing_i2t"))
        vmax = m.qty("max_voltage", "voltage", math.inf, check="pos")
        curve: list[tuple[float, float]] = []
        for i, pt in enumerate(m.items("curve", "[[200 mA, 10 s], [1 A, 10 ms]]"), 1):
            pw = f"{m.at('curve')}[{i}]"
            pair = m.ctx.seq(pt, pw, "[1 A, 10 ms]")
            if len(pair) != 2:
                m.fail(f"{pw} has {len(pair)} values; each point is [current, time], e.g. [1 A, 10 ms]", pt.line)
            i_a = m.ctx.qty(pair[0], "current", f"{pw} current", "pos")
            t_s = m.ctx.qty(pair[1], "time", f"{pw} time", "pos")
            if curve and i_a <= curve[-1][0]:
                m.fail(f"{pw}: the currents must rise from point to point; sort the curve by current", pt.line)
            if curve and t_s > curve[-1][1]:
                m.fail(f"{pw}: the time must fall as the current rises (a larger current melts the fuse sooner)",
                       pt.line)
            curve.append((i_a, t_s))
        return cls(name=name, r_cold_ohm=r_cold, rated_current_a=i_rated, breaking_capacity_a=i_break, i2t_a2s=i2t,
                   curve=tuple(curve), max_voltage_v=vmax, clearing_i2t_a2s=clearing)


@dataclass(frozen=True)
class Fuse(Part):
    """A fuse element; ``model`` names a :class:`FuseModel` in ``parts.fuses``."""

    name: str
    a: str
    b: str
    model: str
    line: int | None = None

    kind: ClassVar[str] = "fuse"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "fuse"
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between", "model")

    @classmethod
    def read(cls, e, name: str, parts) -> "Fuse":
        """Its two nodes and a model of ``parts.fuses``."""
        a, b = e.pair("between", "[vin, f1]")
        return cls(name=name, a=a, b=b, model=e.model("model", parts.fuses, "fuse", "f_100ma"), line=e.line)

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Its cold resistance, held constant [ohm]."""
        return spec.parts.fuses[self.model].r_cold_ohm + 0.0 * dt_k

    def part_row(self, spec) -> dict:
        r = float(spec.parts.fuses[self.model].r_cold_ohm)
        return {"name": self.name, "kind": "fuse", "value_ohm": r, "target_ohm": r, "target_given": False,
                "tolerance_pct": 0.0, "tempco_ppm_per_k": 0.0}

    def spice(self, deck) -> list[str]:
        """Its cold resistance, held constant (design contract)."""
        r = deck.spec.parts.fuses[self.model].r_cold_ohm
        return [f"{deck.instance('R', self.name)} {deck.node(self.a)} {deck.node(self.b)} {deck.num(r)}"]

    def yaml(self) -> str:
        return f"{{name: {self.name}, kind: fuse, between: [{self.a}, {self.b}], model: {self.model}}}"

    # --- misrange (planner.stress) -------------------------------------------------------
    def trip(self, ctx) -> Trip | None:
        """Whether it opens (rms current above its rating), how fast, and what opening asks of it.

        Notes
        -----
        Its rms current is a ``fuse trigger`` stress against ``rated_current_a``
        (the trigger, not an overstress). When it opens, the prospective current
        (the largest |source current| of the cycle) is a ``safety`` stress against
        ``breaking_capacity_a`` (hazard rule ``breaking capacity``), and
        :func:`pre_arcing_time_s` and :func:`fuse_let_through` give the time and
        the pulse. On a periodic wave the time depends on where in the cycle the
        fault starts (:func:`onset_times`): from the crest and from a zero
        crossing, the slower deciding (``onset`` in its record). An impulse is
        judged on peak quantities only: no fuse opens.

        References
        ----------
        IEC 60127-1 and IEC 60269-1: rated current, breaking capacity, pre-arcing
        time and I^2 t.
        """
        if ctx.peak_only:
            return None
        fm = ctx.spec.parts.fuses[self.model]
        ph = ctx.phase
        i_rms = ctx.current["rms"]
        opens = ctx.exceeds(i_rms, fm.rated_current_a)
        t_pa = pre_arcing_time_s(fm, i_rms) if opens else None
        stresses = [ctx.entry(self.name, self.kind, f"rms current{ph}", i_rms, fm.rated_current_a, "A", "fuse trigger",
                              limit_name="fuse rated current")]
        lt = fuse_let_through(fm, i_rms) if opens else None
        onset = None
        if lt is not None and ctx.stimulus.waveform.cyclic and ctx.samples_i is not None:
            onset = onset_times(lt, ctx.samples_i, 1.0 / ctx.stimulus.frequency_hz)
            if onset is not None:
                t_pa = onset["pre_arcing_time_s"]
                lt = dict(lt, pre_arcing_time_s=t_pa, event_time_s=onset["event_time_s"])
        record = {"name": self.name, "model": fm.name, "current_rms_a": i_rms, "rated_current_a": fm.rated_current_a,
                  "opens": bool(opens), "pre_arcing_time_s": t_pa if (t_pa is None or math.isfinite(t_pa)) else None,
                  "time_known": t_pa is not None, "prospective_current_a": ctx.prospective_a,
                  "breaking_capacity_a": fm.breaking_capacity_a,
                  "let_through_i2t_a2s": lt["let_through_i2t_a2s"] if lt else None,
                  "arcing_i2t_a2s": lt["arcing_i2t_a2s"] if lt else None,
                  "event_time_s": lt["event_time_s"] if lt else None,
                  "arcing_known": bool(lt and lt["arcing_known"]),
                  "onset": onset["onset"] if onset else None}
        if onset:
            record.update({k: onset[k] for k in ("onset_rad", "period_s", "pre_arcing_times_s", "event_times_s",
                                                 "rms_time_s")})
        notes = []
        if opens:
            stresses.append(ctx.entry(self.name, self.kind, f"prospective current{ph}", ctx.prospective_a,
                                      fm.breaking_capacity_a, "A", "safety", limit_name="fuse breaking capacity",
                                      rule="breaking capacity"))
            notes.append(self._opening_note(fm, i_rms, t_pa, lt, onset))
        return Trip(record, bool(opens), stresses, notes)

    def _opening_note(self, fm: FuseModel, i_rms: float, t_pa: float | None, lt: dict | None,
                      onset: dict | None = None) -> str:
        """How it opens, in words for the case's notes."""
        if t_pa is None:
            return (f"{self.name} opens at {i_rms:.4g} A rms; its model gives no I2t or curve, "
                    "so the pre-arcing time is unknown: give i2t or curve")
        if math.isinf(t_pa):
            return (f"{self.name} carries {i_rms:.4g} A rms, above its {fm.rated_current_a:g} A rating "
                    "but below its time-current curve: it may not open for a long time")
        arc = (f", arcing {lt['arcing_i2t_a2s']:.3g} A^2 s" if lt["arcing_known"] else
               "; no clearing_i2t given, so the pulse is counted over the pre-arcing time only")
        when = ""
        if onset:
            ts = onset["pre_arcing_times_s"]
            when = (f" from a {onset['onset']} (the slower onset: {ts['crest']:.3g} s from the crest, "
                    f"{ts['zero crossing']:.3g} s from a zero crossing; {onset['rms_time_s']:.3g} s at the rms)")
        return (f"{self.name} opens: {i_rms:.4g} A rms, pre-arcing time {t_pa:.3g} s{when}, let-through "
                f"{lt['let_through_i2t_a2s']:.3g} A^2 s{arc}")

    def opened(self, r_open_ohm: float) -> Resistor:
        """A resistor of ``r_open_ohm`` between its nodes, rated for anything (judged by :meth:`open_checks`)."""
        return Resistor(self.name, self.a, self.b, r_open_ohm, tolerance=0.0, tempco_per_k=0.0,
                        power_w=math.inf, max_voltage_v=math.inf, line=self.line)

    def open_checks(self, ctx) -> list[dict]:
        """The voltage across it once open (rms of a periodic wave, else peak) against its rated voltage.

        References
        ----------
        IEC 60127-1 and IEC 60269-1, rated voltage (the recovery voltage a fuse
        withstands after breaking).
        """
        fm = ctx.spec.parts.fuses.get(self.model)
        if fm is None or not math.isfinite(fm.max_voltage_v):
            return []
        v_rec = ctx.voltage["rms"] if ctx.stimulus.waveform.cyclic else ctx.voltage["peak"]
        return [ctx.entry(self.name, self.kind, f"voltage across the open fuse{ctx.phase}", v_rec, fm.max_voltage_v,
                          "V", "safety", limit_name="fuse voltage rating", rule="voltage rating")]


# --- time-current behaviour ---------------------------------------------------------------


def pre_arcing_time_s(fuse: FuseModel, i_rms_a: float) -> float | None:
    """Pre-arcing (melting) time of a fuse at an rms current [s].

    Parameters
    ----------
    fuse : FuseModel
    i_rms_a : float
        RMS current through the fuse [A].

    Returns
    -------
    float or None
        ``inf`` below the lowest current of its time-current curve; None when the
        model has neither curve nor I^2 t.

    Notes
    -----
    With time-current points, log-log interpolation between the points,
    :math:`\\log t = \\log t_1 + (\\log t_2 - \\log t_1)
    \\frac{\\log I - \\log I_1}{\\log I_2 - \\log I_1}`, and beyond the highest point the
    adiabatic law :math:`t = t_n (I_n / I)^2` (constant I^2 t). With only the
    pre-arcing integral, :math:`t = I^2t / I_{rms}^2`.

    References
    ----------
    IEC 60127-1, *Miniature fuses*, definitions of pre-arcing time and I^2 t;
    the log-log plot of time-current characteristics is common practice.
    """
    i = abs(float(i_rms_a))
    if i <= 0.0:
        return math.inf
    if fuse.curve:
        pts = sorted(fuse.curve)
        cur = np.array([p[0] for p in pts], dtype=float)
        t = np.array([p[1] for p in pts], dtype=float)
        if i < cur[0]:
            return math.inf
        if i >= cur[-1]:
            return float(t[-1] * (cur[-1] / i) ** 2)
        return float(np.exp(np.interp(np.log(i), np.log(cur), np.log(t))))
    if fuse.i2t_a2s is not None:
        return float(fuse.i2t_a2s / (i * i))
    return None


def onset_times(let_through: dict, current_a, period_s: float) -> dict | None:
    r"""Pre-arcing time and pulse duration of a fuse on a periodic current, from the crest and from a zero crossing.

    Parameters
    ----------
    let_through : dict
        :func:`fuse_let_through` at the current's rms value (its pre-arcing time
        at the rms gives the melting Joule integral at this current).
    current_a : array_like (N,)
        The fuse current at the phases of one cycle [A].
    period_s : float
        Period [s].

    Returns
    -------
    dict or None
        ``onset`` (``'crest'`` or ``'zero crossing'``: the slower one, which
        decides), ``onset_rad``, ``period_s``, ``pre_arcing_time_s`` and
        ``event_time_s`` from that onset, ``pre_arcing_times_s`` and
        ``event_times_s`` (by onset), ``rms_time_s`` (the shortcut
        :math:`I^2t / I_{rms}^2`); None for a current of fewer than 4 samples.

    Notes
    -----
    The fuse melts when the Joule integral of its current from the onset,
    :math:`\int_0^t i^2 d\tau`, reaches its melting :math:`I^2t` (here
    :math:`I_{rms}^2 t_{rms}`, the pre-arcing time at the rms from its ``i2t``
    or curve); the pulse lasts until the integral reaches the let-through
    (melting plus arcing). For a sine of peak :math:`I_p` the integral is
    :math:`\frac{I_p^2}{2}[t - (\sin 2(\omega t + \varphi) - \sin 2\varphi) / (2\omega)]`
    (:func:`planner.cycle.joule_integral_sine`): from the crest a short time is
    about :math:`I^2t / I_p^2`, half the rms shortcut; from a zero crossing the
    current must first rise, which takes longer. The slower onset decides,
    because a part behind a clamp (the movement) takes more the longer the
    window lasts.

    References
    ----------
    IEC 60269-1 and IEC 60127-1, pre-arcing time and the Joule integral;
    :func:`planner.cycle.onsets_on_grid`.
    """
    i = np.asarray(current_a, dtype=float).ravel()
    if i.size < 4:
        return None
    i_rms2 = float(np.mean(i * i))
    melt = i_rms2 * let_through["pre_arcing_time_s"]
    total = melt + let_through["arcing_i2t_a2s"]
    o = onsets_on_grid((melt, total), i, period_s)
    slower = o.slower(0)
    return {"onset": slower, "onset_rad": o.onsets_rad[slower], "period_s": float(period_s),
            "pre_arcing_time_s": o.times_s[slower][0], "event_time_s": o.times_s[slower][1],
            "pre_arcing_times_s": {k: v[0] for k, v in o.times_s.items()},
            "event_times_s": {k: v[1] for k, v in o.times_s.items()},
            "rms_time_s": let_through["pre_arcing_time_s"]}


def melting_i2t_a2s(fuse: FuseModel) -> float | None:
    """Pre-arcing I^2 t of a fuse at high current [A^2 s]: ``i2t``, else the top of its curve."""
    if fuse.i2t_a2s is not None:
        return float(fuse.i2t_a2s)
    if fuse.curve:
        i_n, t_n = max(fuse.curve)
        return float(i_n * i_n * t_n)
    return None


def fuse_let_through(fuse: FuseModel, i_rms_a: float) -> dict | None:
    """The pulse a fuse lets through while it opens at an rms current.

    Parameters
    ----------
    fuse : FuseModel
    i_rms_a : float
        RMS current through the fuse before it opens [A].

    Returns
    -------
    dict or None
        ``pre_arcing_time_s``, ``arcing_i2t_a2s``, ``let_through_i2t_a2s``,
        ``event_time_s`` (the equivalent duration of the whole pulse at
        ``i_rms_a``) and ``arcing_known``; None when the fuse does not open in a
        known, finite time (no I^2 t or curve, or below its curve).

    Notes
    -----
    Pre-arcing :math:`I^2t_{pa} = I_{rms}^2 t_{pa}` with :math:`t_{pa}` from
    :func:`pre_arcing_time_s`. Arcing adds :math:`I^2t_{arc} = I^2t_{clear} -
    I^2t_{melt}` (the clearing, i.e. total operating, I^2 t less the melting I^2 t
    at high current; 0 when ``clearing_i2t_a2s`` is not given). The let-through
    is :math:`I^2t = I^2t_{pa} + I^2t_{arc}` and the equivalent duration
    :math:`t_{ev} = I^2t / I_{rms}^2`. A part carrying a fixed share of the fuse
    current (a linear network) takes the energy :math:`E = \\bar P \\, t_{ev}`,
    i.e. :math:`E = R \\, I^2t` for a resistor R in series with the fuse, whatever
    the waveform; the arcing current is at most the current before the arc, so
    this bounds the energy from above.

    References
    ----------
    IEC 60127-1, *Miniature fuses*, and IEC 60269-1, *Low-voltage fuses*:
    definitions of pre-arcing time, arcing time, operating time and I^2 t (Joule
    integral). The additive split pre-arcing + arcing is the definition of the
    operating I^2 t.
    """
    i = abs(float(i_rms_a))
    t_pa = pre_arcing_time_s(fuse, i)
    if t_pa is None or not math.isfinite(t_pa) or i <= 0.0:
        return None
    i2t_pa = i * i * t_pa
    melt = melting_i2t_a2s(fuse)
    clear = fuse.clearing_i2t_a2s
    arc = max(0.0, clear - melt) if (clear is not None and melt is not None) else 0.0
    total = i2t_pa + arc
    return {"pre_arcing_time_s": float(t_pa), "arcing_i2t_a2s": float(arc), "let_through_i2t_a2s": float(total),
            "event_time_s": float(total / (i * i)), "arcing_known": clear is not None}
