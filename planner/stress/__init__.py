"""Stress of every part under one stimulus, judged against its ratings.

A stimulus (:class:`planner.stimulus.Stimulus`) is a voltage or current source on
the input terminals of a switch state: DC (one operating point), a periodic wave
(the instantaneous operating points over one cycle, solved as one batch) or a
short impulse (both polarities of its peak, judged on peak quantities only). The
network is resistive with diodes and has no reactive parts, so the quasi-static
treatment of a periodic wave is exact: every instant of the cycle is a DC
operating point.

For each element the cycle gives the peak, mean and rms of its current, the peak
of its voltage and its mean power (the average of v i over the cycle, i.e. the
heating power). Each part kind judges these against its own ratings
(:meth:`planner.parts.Part.checks`, in the part's file of :mod:`planner.parts`):

========== ================================= =====================================
part       quantity                          rating
========== ================================= =====================================
resistor   mean power                        ``Resistor.power_w``
resistor   peak voltage                      ``Resistor.max_voltage_v`` (limiting
                                             element voltage)
resistor   pulse energy while a fuse opens   :func:`resistor_pulse_limit_j`
resistor   peak voltage while a fuse opens   2 x ``max_voltage_v`` (short time)
diode      average current (mean of |i|)     ``DiodeModel.max_current_a``
diode      peak current                      ``DiodeModel.surge_current_a``
diode      mean power                        ``DiodeModel.max_power_w``
diode      I^2 t while a fuse opens          :func:`diode_i2t_allowed_a2s`
movement   peak multiple of I_fs             ``Overload.short_time``
movement   rms multiple (covers |mean|)      ``Overload.continuous`` (or
                                             ``short_time`` while a fuse opens)
movement   pointer (mean multiple)           ``Overload.peg`` (end stop)
fuse       rms current                       ``FuseModel.rated_current_a`` (opens)
fuse       prospective current               ``FuseModel.breaking_capacity_a``
fuse       voltage across it once open       ``FuseModel.max_voltage_v``
========== ================================= =====================================

While a fuse opens (the pulse from the fault to the end of arcing, see
:func:`fuse_let_through`) resistors and diodes are judged on their short-time
(pulse) ratings instead of their continuous ones, and the movement on its
short-time overload; a case whose parts all survive the pulse, whose fuse breaks
the prospective current and stands the recovery voltage, is ``ok`` (or ``pegs``):
the instrument survives, the fuse needs replacing.

The verdict follows the design contract: ``ok``, ``pegs``, ``overstress`` or
``hazard``; see :func:`verdict_of` and ``docs/safety.md``.

Where things live:

``waveforms``
    :class:`Waveform`, :func:`solve_waveforms` (batched by source kind; the
    crossover of a current-limited source), :func:`cycle_stats`;
``fuses``
    the fuses first (:func:`planner.stress.fuses.trip_parts`), the movement's
    exposure, the event (:class:`FuseEvent`), ``SHORT_TIME_S``;
``judge``
    :func:`judge` in named steps, the :class:`JudgingContext` a part is asked with;
``verdict``
    stress entries, the limit classes (:data:`LIMITS`), :func:`verdict_of`;
``assess``
    :func:`assess` (following a case through the fuses it opens),
    :func:`open_fuse_design`;
``apply``
    :func:`apply_stimulus` (the ``planner apply`` command);
``text``
    :func:`describe_stress`, :func:`format_apply`, :func:`wrap`, the cautions.

The pulse ratings are the parts' own and are re-exported here:
:mod:`planner.parts.fuse` (pre-arcing time, let-through),
:mod:`planner.parts.resistor` (short-time overload, pulse energy) and
:mod:`planner.parts.diode` (I^2 t).

The public entry point for one stimulus is :func:`apply_stimulus` (the ``planner
apply`` command); :func:`assess` judges many stimuli on one switch state and is
what :mod:`planner.faults` builds on.
"""

from ..parts.diode import DIODE_I2T_MIN_S, SURGE_HALF_CYCLE_S, diode_i2t_a2s, diode_i2t_allowed_a2s
from ..parts.fuse import fuse_let_through, melting_i2t_a2s, pre_arcing_time_s
from ..parts.resistor import (SHORT_OVERLOAD_POWER_FACTOR, SHORT_OVERLOAD_S, SHORT_OVERLOAD_VOLTAGE_FACTOR,
                              resistor_pulse_energy_j, resistor_pulse_limit_j, short_time_power_w)
from ..stimulus import HAZARD_DC_V, HAZARD_PEAK_V, HAZARD_RMS_V, PHASE_POINTS, WAVEFORMS, Stimulus, hazardous_live
from .apply import apply_stimulus
from .assess import OPEN_FUSE_OHM, assess, open_fuse_design
from .fuses import SHORT_TIME_S, FuseEvent
from .judge import Judgement, JudgingContext, judge
from .text import STANDARD_CAUTIONS, describe_stress, format_apply, fuse_detail, ratio_text, stimulus_cautions, wrap
from .verdict import EXCEED, FAILING, LIMITS, VERDICTS, Limit, exceeds, stress_entry, verdict_of, worst_ratio
from .waveforms import Waveform, cycle_stats, solve_waveforms, stress_elements

__all__ = [
    "PHASE_POINTS", "HAZARD_RMS_V", "HAZARD_PEAK_V", "HAZARD_DC_V", "WAVEFORMS", "SHORT_TIME_S", "SHORT_OVERLOAD_S",
    "SHORT_OVERLOAD_POWER_FACTOR", "SHORT_OVERLOAD_VOLTAGE_FACTOR", "SURGE_HALF_CYCLE_S", "DIODE_I2T_MIN_S",
    "OPEN_FUSE_OHM", "EXCEED", "VERDICTS", "FAILING", "LIMITS", "Limit",
    "Stimulus", "Waveform", "hazardous_live", "solve_waveforms", "cycle_stats", "stress_elements",
    "pre_arcing_time_s", "melting_i2t_a2s", "fuse_let_through", "short_time_power_w", "resistor_pulse_energy_j",
    "resistor_pulse_limit_j", "diode_i2t_a2s", "diode_i2t_allowed_a2s",
    "FuseEvent", "JudgingContext", "Judgement", "judge", "stress_entry", "exceeds", "verdict_of", "worst_ratio",
    "assess", "open_fuse_design", "apply_stimulus",
    "format_apply", "stimulus_cautions", "describe_stress", "ratio_text", "fuse_detail", "STANDARD_CAUTIONS", "wrap",
]
