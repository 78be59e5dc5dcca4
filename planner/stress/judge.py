"""One solved waveform judged against the parts' ratings, in named steps.

:func:`judge` takes the operating points of one stimulus (:class:`planner.stress.
waveforms.Waveform`) and asks every part what they mean for it:

1. the hazard test: is the stimulus at a hazardous voltage (IEC 61010-1);
2. the fuses first (:func:`planner.stress.fuses.trip_parts`): each protective part
   says whether it opens, since that decides how everything else is judged;
3. the exposure and the event (:func:`planner.stress.fuses.exposure`,
   :func:`planner.stress.fuses.fuse_event`): the movement's short-time overload,
   the pulse on whose short-time ratings resistors and diodes are judged;
4. each part's checks (:meth:`planner.parts.Part.checks`), with a
   :class:`JudgingContext` holding its cycle statistics, the event and the phase
   words; the movement's come last;
5. the movement's reading (the pointer's mean, peak and rms multiples).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import math

import numpy as np

from ..cycle.prearc import window_integral
from ..engine import Engine
from ..model import Spec
from ..stimulus import Stimulus, hazardous_live
from .fuses import FuseEvent, exposure, fuse_event, trip_parts
from .verdict import exceeds, stress_entry
from .waveforms import Waveform, cycle_stats, cycle_stats_rows, stress_elements


@dataclass(frozen=True)
class JudgingContext:
    """What a part is told when it is asked for its stresses (:meth:`planner.parts.Part.checks`).

    Attributes
    ----------
    spec : Spec
        The project (catalogue models, the movement and its overload limits).
    stimulus : Stimulus
        What is applied.
    current, voltage : dict
        Cycle statistics (:func:`planner.stress.waveforms.cycle_stats`: ``peak``,
        ``mean``, ``rms``, ``mean_abs``) of the element's current [A] and voltage [V].
    power_w : float
        The element's mean power over the cycle, :math:`\\frac1N \\sum v_k i_k` [W].
    movement_multiple : dict
        Cycle statistics of the movement current as a multiple of I_fs.
    prospective_a : float
        Largest |source current| of the cycle [A] (what a fuse must break).
    phase : str
        Words appended to every quantity (``' after F1 opens'``, or ``''``).
    event : FuseEvent or None
        The pulse while fuses open, when they open in a known, finite time.
    short_exposure : bool
        The movement is judged over the pulse (a fuse opens fast).
    samples_i, samples_v : ndarray or None
        The element's current [A] and voltage [V] at each sample of the
        stimulus (one for DC, the phases of one cycle for a periodic wave).
    pulse : dict or None
        While fuses open in a known time: the element's own share of the pulse,
        integrated over the event's window from its onset
        (:func:`pulses_of`): ``energy_j`` [J], ``i2t_a2s`` [A^2 s],
        ``duration_s`` [s], ``rms_a`` [A] over the window.
    duration_s : float
        How long the stimulus lasts in this network [s]: until the last fuse
        that opens has opened (when every such time is known), else ``inf``.
    """

    spec: Spec
    stimulus: Stimulus
    current: dict
    voltage: dict
    power_w: float
    movement_multiple: dict
    prospective_a: float
    phase: str = ""
    event: FuseEvent | None = None
    short_exposure: bool = False
    samples_i: np.ndarray | None = None
    samples_v: np.ndarray | None = None
    pulse: dict | None = None
    duration_s: float = math.inf

    #: A stress entry (:func:`planner.stress.verdict.stress_entry`).
    entry = staticmethod(stress_entry)
    #: Whether a value is beyond a limit (:func:`planner.stress.verdict.exceeds`).
    exceeds = staticmethod(exceeds)

    @property
    def peak_only(self) -> bool:
        """An impulse: judged on peak quantities only."""
        return self.stimulus.peak_only


@dataclass
class Judgement:
    """Stresses and verdict of one solved waveform."""

    stresses: list
    fuses: list
    notes: list
    opened: frozenset
    short_exposure: bool
    hazardous: bool
    movement: dict
    parts: list = field(default_factory=list)
    event: FuseEvent | None = None


def judge(engine: Engine, wf: Waveform, *, phase: str = "", opened=frozenset(),
          short_exposure: bool | None = None, original=None, with_parts: bool = True) -> Judgement:
    """Compare the stresses of one solved waveform with the parts' ratings.

    Parameters
    ----------
    engine : Engine
    wf : Waveform
    phase : str
        Words appended to each quantity (``'after F1 opens'``).
    opened : frozenset of str
        Fuses already open in this network (their stand-ins are judged on the
        fuse's rated voltage only).
    short_exposure : bool, optional
        Force the movement's exposure to short-time (True) or continuous (False);
        by default short-time exactly when a fuse opens within ``SHORT_TIME_S``.
    original : NetworkSpec, optional
        The network before the fuses in ``opened`` opened (``engine.net`` by default).
    with_parts : bool
        Give every part's row (:func:`part_row`) in ``parts``; empty otherwise.

    Returns
    -------
    Judgement

    Notes
    -----
    Mean power is :math:`\\bar P = \\frac1N \\sum v_k i_k`, the heating power of a
    quasi-static cycle. The prospective current of a fuse is the largest
    |source current| of the cycle, which is the source's peak value over its
    impedance plus the cold network's resistance.

    When fuses open in a known time (the *event*, :func:`planner.parts.fuse.
    fuse_let_through`; the longest let-through of the fuses that open sets its
    duration :math:`t_{ev}`), a resistor is judged on the energy
    :math:`E = \\bar P t_{ev}` against :func:`planner.parts.resistor.
    resistor_pulse_limit_j` and its peak voltage against twice its limiting
    element voltage (for :math:`t_{ev}` up to 5 s), and a diode on
    :math:`I_{rms}^2 t_{ev}` against :func:`planner.parts.diode.
    diode_i2t_allowed_a2s` (for :math:`t_{ev}` up to 8.3 ms) instead of their
    continuous ratings. Longer events, and fuses whose time is unknown, leave
    every part judged on its continuous ratings.
    """
    spec = engine.spec
    elements = stress_elements(engine)
    hazardous = hazard_test(wf)
    notes = source_notes(wf)
    ms = cycle_stats(wf.movement_current_a / spec.movement.i_fs_a)
    contexts = element_contexts(spec, wf, elements, ms, f" {phase}" if phase else "")
    parts = [part_row(e, contexts[e.name]) for e in elements] if with_parts else []

    stresses, fuses, more, newly = trip_parts(elements, contexts, opened,
                                             engine.net if original is None else original)
    notes += more
    short_exposure, more = exposure(fuses, short_exposure, spec.movement.overload)
    notes += more
    event, more = fuse_event(fuses, short_exposure)
    notes += more

    # each part's checks; the movement closes the list (the pointer sums the case up)
    rated = sorted((e for e in elements if e.name not in opened), key=lambda e: e.name == engine.movement.name)
    lasting = lasting_s(fuses)
    pulses = pulses_of(contexts, event)
    for e in rated:
        ctx = contexts[e.name]
        stresses += e.checks(_with(ctx, event=event, short_exposure=short_exposure, pulse=pulses.get(e.name),
                                   duration_s=lasting))
    return Judgement(stresses, fuses, notes, frozenset(newly), short_exposure, hazardous,
                     movement_reading(wf, ms, spec.movement.i_fs_a), parts, event)


#: A context whose fields :func:`element_contexts` all sets (:func:`_with` copies it).
_BLANK = JudgingContext(None, None, {}, {}, 0.0, {}, 0.0)


def _with(ctx: JudgingContext, **changes) -> JudgingContext:
    """:func:`dataclasses.replace` of a context, without its cost per call (once per part and case).

    The same context: every field copied as it is, ``changes`` (field names) set; a
    context has no ``__post_init__`` to run.
    """
    new = object.__new__(JudgingContext)
    new.__dict__.update(ctx.__dict__)
    new.__dict__.update(changes)
    return new


def hazard_test(wf: Waveform) -> bool:
    """Whether the stimulus is at a hazardous voltage (the source's, or the terminals' for a current source).

    Notes
    -----
    A voltage source with a current limit counts at its open-circuit voltage
    too: the limit does not make the terminals safe to touch.

    References
    ----------
    IEC 61010-1:2010, clause 6.3.1 (see :func:`planner.stimulus.hazardous_live`).
    """
    s = wf.stimulus
    hazardous = hazardous_live(s.waveform, wf.source_v if s.kind == "voltage" else wf.terminal_v)
    if s.kind == "voltage" and s.current_limit_a is not None:
        hazardous = hazardous or hazardous_live(s.waveform, s.samples())
    return hazardous


def source_notes(wf: Waveform) -> list[str]:
    """Notes on the source: no path between the terminals, a current limit taking over."""
    s = wf.stimulus
    notes = []
    if wf.open_input:
        notes.append(f"{wf.state.name}: no path joins the input terminals, so no current flows")
    if wf.limited.any():
        what = (f"current limit of {s.current_limit_a:g} A" if s.kind == "voltage" else
                f"compliance of {s.compliance_v:g} V")
        notes.append(f"the source's {what} takes over on {int(wf.limited.sum())} of {wf.limited.size} samples")
    return notes


def element_contexts(spec: Spec, wf: Waveform, elements, movement_multiple: dict, phase: str) -> dict:
    """Each element's :class:`JudgingContext` (no event yet), by designator."""
    prospective = float(np.max(np.abs(wf.source_current_a))) if wf.source_current_a.size else 0.0
    if not elements:
        return {}
    cur = np.array([wf.current_a[e.name] for e in elements])  # (parts, samples): every part's statistics at once
    vol = np.array([wf.voltage_v[e.name] for e in elements])
    i_st, v_st = cycle_stats_rows(cur), cycle_stats_rows(vol)
    power = (cur * vol).sum(axis=1).tolist()
    n = cur.shape[1]
    # the fields no part changes set once; the others keep their defaults from _BLANK (as JudgingContext(...) does)
    same = {"spec": spec, "stimulus": wf.stimulus, "movement_multiple": movement_multiple, "prospective_a": prospective,
            "phase": phase}
    out = {}
    for k, e in enumerate(elements):
        out[e.name] = _with(_BLANK, **same, current=i_st[k], voltage=v_st[k], power_w=power[k] / n,
                            samples_i=wf.current_a[e.name], samples_v=wf.voltage_v[e.name])
    return out


def lasting_s(fuses: list) -> float:
    """How long the stimulus lasts in a network [s]: the longest time of the fuses that open, else ``inf``."""
    opening = [f for f in fuses if f["opens"]]
    if not opening or any(f["event_time_s"] is None for f in opening):
        return math.inf
    return float(max(f["event_time_s"] for f in opening))


def pulses_of(contexts: dict, event: FuseEvent | None) -> dict:
    r"""Each element's share of the pulse while fuses open: energy and Joule integral over the event's window.

    Parameters
    ----------
    contexts : dict of str -> JudgingContext
        The elements' contexts (their samples over the stimulus).
    event : FuseEvent or None

    Returns
    -------
    dict of str -> dict
        By designator (empty without an event): ``energy_j`` =
        :math:`\int v i \, dt`, ``i2t_a2s`` = :math:`\int i^2 dt` and ``rms_a`` = :math:`\sqrt{I^2t / t_{ev}}` over the window
        :math:`[t_0, t_0 + t_{ev}]` from the event's onset (for DC, :math:`P t_{ev}`
        and :math:`I^2 t_{ev}`); ``duration_s`` = :math:`t_{ev}`.

    Notes
    -----
    The window is the one of the fuse that sets the event, from the onset phase
    that decides its pre-arcing time (:meth:`planner.parts.fuse.Fuse.trip`). A
    part in series with that fuse takes exactly :math:`R \, I^2t`; a part behind
    a clamp takes what the clamp lets through during the window, which a longer
    window makes larger: that is why the slower onset decides.

    References
    ----------
    IEC 60269-1 (Joule integral over a stated interval); :func:`planner.cycle.window_integral`.
    """
    if event is None or not contexts:
        return {}
    t = event.event_time_s
    names = [n for n, c in contexts.items() if c.samples_i is not None]
    if not names:
        return {}
    first = contexts[names[0]]
    if first.samples_i.size == 1 or event.period_s is None:
        i2t = np.array([contexts[n].current["rms"] ** 2 * t for n in names])
        energy = np.array([abs(contexts[n].power_w) * t for n in names])
    else:
        cur = np.column_stack([contexts[n].samples_i for n in names])
        pw = np.column_stack([contexts[n].samples_i * contexts[n].samples_v for n in names])
        i2t = window_integral(cur, event.period_s, event.onset_rad, t, square=True)
        energy = np.abs(window_integral(pw, event.period_s, event.onset_rad, t))
    return {n: {"energy_j": float(energy[k]), "i2t_a2s": float(i2t[k]), "duration_s": t,
                "rms_a": math.sqrt(max(float(i2t[k]), 0.0) / t) if t > 0 else 0.0} for k, n in enumerate(names)}


def part_row(e, ctx: JudgingContext) -> dict:
    """An element's row of ``parts[]``: peak, mean and rms of its current and voltage, its mean power."""
    i_st, v_st = ctx.current, ctx.voltage
    return {"name": e.name, "kind": e.kind, "current_peak_a": i_st["peak"], "current_mean_a": i_st["mean"],
            "current_rms_a": i_st["rms"], "voltage_peak_v": v_st["peak"], "voltage_rms_v": v_st["rms"],
            "voltage_mean_v": v_st["mean"], "power_w": ctx.power_w}


def movement_reading(wf: Waveform, ms: dict, i_fs_a: float) -> dict:
    """What the movement does: its current (the DC value or the cycle mean) and its peak, rms and mean multiples."""
    return {"current_a": float(ms["mean"] * i_fs_a) if wf.stimulus.waveform.cyclic else float(wf.movement_current_a[0]),
            "multiple": ms["peak"], "rms_multiple": ms["rms"], "mean_multiple": ms["mean"],
            "peak_current_a": ms["peak"] * i_fs_a, "rms_current_a": ms["rms"] * i_fs_a}
