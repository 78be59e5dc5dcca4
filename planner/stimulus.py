"""What is applied to the input terminals: a stimulus, and the shape of its waveform.

A :class:`Stimulus` is a voltage or current source on a switch state's input
terminals with a waveform :class:`Shape`: a DC level (one operating point), a
periodic wave (sine, square, triangle: instantaneous operating points over one
cycle) or a short impulse (its peak in both polarities, judged on peak quantities
only). The network is resistive with diodes and has no reactive parts, so the
quasi-static treatment of a periodic wave is exact: every instant of the cycle is
a DC operating point.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .errors import UsageError

#: Phase points per cycle of a periodic wave. A multiple of 4, so the samples hit
#: both crests of a sine exactly; the cycle mean of a half-wave-rectified branch
#: is then within pi^2 / (3 N^2) (1.3e-5 of its value) of the integral.
PHASE_POINTS = 512

#: Frequency of a periodic stimulus when none is given [Hz]: the mains frequency of
#: most of the world; at 60 Hz a fault from a zero crossing melts a fuse sooner, so
#: 50 Hz is the slower (longer) exposure (common practice).
DEFAULT_FREQUENCY_HZ = 50.0

#: Hazardous-live limits of IEC 61010-1:2010, clause 6.3.1 (normal condition):
#: 33 V rms, 46.7 V peak, 70 V DC [V].
HAZARD_RMS_V = 33.0
HAZARD_PEAK_V = 46.7
HAZARD_DC_V = 70.0


class Shape:
    """The shape of a waveform: how its instantaneous values follow from its stated value.

    Attributes
    ----------
    name : str
        As written in project files and JSON (``dc``, ``sine`` ...).
    word : str
        What tables print after the value (``DC``, ``rms sine`` ...).
    crest : float
        Peak over the stated value (:math:`\\sqrt 2` for a sine given as rms).
    single : bool
        One operating point (DC): no cycle statistics.
    peak_only : bool
        Judged on peak quantities only (a short impulse).
    """

    name: ClassVar[str] = ""
    word: ClassVar[str] = ""
    crest: ClassVar[float] = 1.0
    single: ClassVar[bool] = False
    peak_only: ClassVar[bool] = False

    @property
    def cyclic(self) -> bool:
        """A periodic wave: its samples are one cycle, judged by cycle mean and rms."""
        return not (self.single or self.peak_only)

    def samples(self, value: float, n_phase: int | None = None) -> np.ndarray:
        """Instantaneous values over the stimulus [V] or [A]."""
        raise TypeError(f"waveform {self.name!r} gives no samples")

    def hazardous(self, samples_v) -> bool:
        """Whether instantaneous voltages of this shape exceed the hazardous-live limits.

        Notes
        -----
        AC (every periodic wave): rms above 33 V or peak above 46.7 V.

        References
        ----------
        IEC 61010-1:2010, clause 6.3.1 (levels of accessible parts in normal condition).
        """
        v = np.abs(np.asarray(samples_v, dtype=float))
        if v.size == 0:
            return False
        return bool(v.max() > HAZARD_PEAK_V or math.sqrt(float(np.mean(v ** 2))) > HAZARD_RMS_V)

    def __repr__(self) -> str:
        return f"{type(self).__name__}()"

    def __eq__(self, other) -> bool:
        """A shape equals another of its kind, and its own name as written in files (``'sine'``)."""
        if isinstance(other, str):
            return other == self.name
        return type(other) is type(self)

    def __hash__(self) -> int:
        return hash(self.name)


class DC(Shape):
    """A steady level; its sign is its polarity."""

    name, word, single = "dc", "DC", True

    def samples(self, value, n_phase=None):
        return np.array([float(value)])

    def hazardous(self, samples_v) -> bool:
        """DC: :math:`\\max |v| > 70` V (IEC 61010-1:2010, clause 6.3.1)."""
        v = np.abs(np.asarray(samples_v, dtype=float))
        return bool(v.size and v.max() > HAZARD_DC_V)


class Sine(Shape):
    """A sine given by its rms value, sampled at equally spaced phases of one cycle."""

    name, word, crest = "sine", "rms sine", math.sqrt(2.0)

    def samples(self, value, n_phase=None):
        """:math:`\\sqrt 2 X_{rms} \\sin(2 \\pi k / N)`, k = 0 ... N-1."""
        n = n_phase or PHASE_POINTS
        k = np.arange(n)
        return math.sqrt(2.0) * value * np.sin(2.0 * np.pi * k / n)


class Square(Shape):
    """A symmetric square wave given by its rms value (equal to its peak)."""

    name, word = "square", "rms square"

    def samples(self, value, n_phase=None):
        n = n_phase or PHASE_POINTS
        k = np.arange(n)
        return float(value) * np.where(k < n // 2, 1.0, -1.0)


class Triangle(Shape):
    """A symmetric triangle wave given by its rms value (peak = :math:`\\sqrt 3` rms)."""

    name, word, crest = "triangle", "rms triangle", math.sqrt(3.0)

    def samples(self, value, n_phase=None):
        """Equally spaced phases; the wave rises from zero to its peak in a quarter cycle."""
        n = n_phase or PHASE_POINTS
        u = (np.arange(n) / n) % 1.0
        tri = np.where(u < 0.25, 4 * u, np.where(u < 0.75, 2 - 4 * u, 4 * u - 4))
        return math.sqrt(3.0) * float(value) * tri


class Impulse(Shape):
    """A short impulse given by its peak, applied in both polarities."""

    name, word, peak_only = "impulse", "peak impulse", True

    def samples(self, value, n_phase=None):
        return np.array([abs(value), -abs(value)])

    def hazardous(self, samples_v) -> bool:
        """Impulse: peak above 46.7 V (IEC 61010-1:2010, clause 6.3.1)."""
        v = np.abs(np.asarray(samples_v, dtype=float))
        return bool(v.size and v.max() > HAZARD_PEAK_V)


#: Waveform shapes by name.
SHAPES = {s.name: s for s in (DC(), Sine(), Square(), Triangle(), Impulse())}
#: Names of the shapes (``dc``, ``sine``, ``square``, ``triangle``, ``impulse``).
WAVEFORMS = tuple(SHAPES)


def shape(name) -> Shape:
    """The shape called ``name`` (a :class:`Shape` is returned as it is)."""
    if isinstance(name, Shape):
        return name
    try:
        return SHAPES[name]
    except (KeyError, TypeError):
        raise UsageError(f"waveform must be one of {', '.join(WAVEFORMS)}, not {name!r}") from None


def hazardous_live(waveform, samples_v) -> bool:
    """Whether a voltage waveform exceeds the hazardous-live limits.

    Parameters
    ----------
    waveform : str or Shape
    samples_v : array_like
        Instantaneous voltages over the stimulus [V].

    Returns
    -------
    bool

    Notes
    -----
    DC: :math:`\\max |v| > 70` V. AC (periodic waves): rms above 33 V or peak
    above 46.7 V. Impulse: peak above 46.7 V.

    References
    ----------
    IEC 61010-1:2010, *Safety requirements for electrical equipment for
    measurement, control and laboratory use*, clause 6.3.1 (levels of accessible
    parts in normal condition).
    """
    return shape(waveform).hazardous(samples_v)


@dataclass(frozen=True)
class Stimulus:
    """A source applied to the input terminals.

    Attributes
    ----------
    name : str
        Name shown in tables (``'wall outlet'``, ``'range up'``).
    kind : {'voltage', 'current'}
        What the source holds.
    value : float
        DC value, rms of a periodic wave, or peak of an impulse [V] or [A]; the
        sign of a DC value is its polarity.
    waveform : Shape
        Given as a :class:`Shape` or its name.
    r_source_ohm : float
        Source impedance of a voltage source [ohm].
    current_limit_a : float or None
        Current limit of a voltage source [A] (a bench supply), None for none.
    detail : str
        Extra words for tables (``'10 V, the 10 V range's full scale'``).
    compliance_v : float or None
        Compliance of a current source [V]: the largest |voltage| it can drive
        across the terminals; beyond it the source holds that voltage (None: ideal).
    frequency_hz : float
        Frequency of a periodic wave [Hz] (what a fuse's pre-arcing time over the
        cycle depends on); 50 Hz by default.
    """

    name: str
    kind: str
    value: float
    waveform: Shape = SHAPES["dc"]
    r_source_ohm: float = 0.0
    current_limit_a: float | None = None
    detail: str = ""
    compliance_v: float | None = None
    frequency_hz: float = DEFAULT_FREQUENCY_HZ

    def __post_init__(self):
        if self.kind not in ("voltage", "current"):
            raise UsageError(f"stimulus '{self.name}': kind must be 'voltage' or 'current', not {self.kind!r}")
        try:
            object.__setattr__(self, "waveform", shape(self.waveform))
        except UsageError as e:
            raise UsageError(f"stimulus '{self.name}': {e.message}") from None
        if not math.isfinite(self.value):
            raise UsageError(f"stimulus '{self.name}': the applied value must be a finite number")
        if not (self.r_source_ohm >= 0.0 and math.isfinite(self.r_source_ohm)):
            raise UsageError(f"stimulus '{self.name}': the source impedance must be zero or positive")
        if self.current_limit_a is not None and not self.current_limit_a > 0.0:
            raise UsageError(f"stimulus '{self.name}': a current limit must be above zero")
        if self.compliance_v is not None and not self.compliance_v > 0.0:
            raise UsageError(f"stimulus '{self.name}': a compliance voltage must be above zero")
        if not (self.frequency_hz > 0.0 and math.isfinite(self.frequency_hz)):
            raise UsageError(f"stimulus '{self.name}': the frequency must be above zero")

    @property
    def unit(self) -> str:
        return "V" if self.kind == "voltage" else "A"

    @property
    def peak(self) -> float:
        """Largest instantaneous |value| of the source [V] or [A]."""
        return abs(self.value) * self.waveform.crest

    @property
    def peak_only(self) -> bool:
        """True for an impulse: judged on peak quantities only."""
        return self.waveform.peak_only

    def samples(self, n_phase: int | None = None) -> np.ndarray:
        """Instantaneous source values over the stimulus [V] or [A] (see :class:`Shape`)."""
        return self.waveform.samples(self.value, n_phase)

    def hazardous(self) -> bool:
        """Whether a voltage stimulus exceeds the hazardous-live limits (IEC 61010-1, 6.3.1)."""
        return self.kind == "voltage" and self.waveform.hazardous(self.samples())

    def describe(self) -> str:
        """A short human description: ``'230 V rms sine, 0.5 ohm source'``."""
        from .units import format_si

        text = f"{format_si(self.value, self.unit, 4)} {self.waveform.word}"
        if self.kind == "voltage":
            text += f", {format_si(self.r_source_ohm, 'ohm', 3)} source" if self.r_source_ohm > 0 else ", ideal source"
            if self.current_limit_a is not None:
                text += f", limited to {format_si(self.current_limit_a, 'A', 3)}"
        elif self.compliance_v is not None:
            text += f", {format_si(self.compliance_v, 'V', 3)} compliance"
        return text

    def as_dict(self) -> dict:
        d = {
            "name": self.name,
            "kind": self.kind,
            "waveform": self.waveform.name,
            "unit": self.unit,
            "value": self.value,
            "peak": self.peak,
            "r_source_ohm": self.r_source_ohm if self.kind == "voltage" else None,
            "current_limit_a": self.current_limit_a,
            "compliance_v": self.compliance_v if self.kind == "current" else None,
        }
        if self.waveform.cyclic:
            d["frequency_hz"] = self.frequency_hz
        if self.detail:
            d["detail"] = self.detail
        return d
