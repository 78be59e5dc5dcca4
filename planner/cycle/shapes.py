"""Stimulus shapes: the waveform of a source over one cycle, as small classes.

A shape knows its name, its crest factor (peak / rms), its form factor
(rms / rectified mean), what the stated value of a stimulus means (rms of a
periodic wave, the level of a DC source, the peak of an impulse) and its
**amplitude distribution**: the instantaneous values it takes over one cycle,
as fractions of its peak, with the share of the cycle spent at each.

Why the distribution is all a resistive network needs
------------------------------------------------------
The planner's networks are resistive with diodes and have no reactive parts, so
every branch quantity is a function of the instantaneous source value alone,
:math:`q(t) = g(x(t))`. The cycle mean of any function of q (its mean, its mean
square, the mean power :math:`v i` of a part) is then an integral over the values
of x, weighted by the time the source spends at each value; the order in which
the values come does not matter. Each shape gives that weighting in one of two
forms:

* **atoms**: a few values with weights (DC: one; square wave: +1 and -1, half
  the cycle each; an impulse: its peak in both polarities);
* a **phase interval** :math:`[t_0, t_1]` with uniform weight and a smooth map
  :math:`t \\mapsto x(t)`, chosen by the wave's symmetry so that the mean over the
  interval is the mean over the whole cycle. For a sine, :math:`\\sin(\\pi - t) =
  \\sin t` maps the phases :math:`[\\pi/2, 3\\pi/2]` onto the values of
  :math:`[-\\pi/2, \\pi/2]`, so the cycle mean of :math:`g(\\sin \\theta)` over
  :math:`[0, 2\\pi)` equals its mean over :math:`[-\\pi/2, \\pi/2]`: half the
  points, and in this phase variable the integrand has no endpoint singularity
  (in the value variable the sine's density :math:`1 / (\\pi \\sqrt{1 - x^2})` has
  one at the crests). The same holds for any wave with half-wave symmetry
  :math:`x(\\theta + \\pi) = -x(\\theta)` and quarter-wave symmetry
  :math:`x(\\pi - \\theta) = x(\\theta)` (odd sine harmonics in phase), and for the
  triangle, which spends equal time at every value: its distribution is uniform.

:mod:`planner.cycle.rules` turns either form into quadrature nodes and weights;
:mod:`planner.cycle.adaptive` places them where the network's response needs
them.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from ..errors import UsageError

__all__ = ["Shape", "DC", "Sine", "Square", "Triangle", "Impulse", "OddHarmonics", "FlatTopMains",
           "SHAPES", "shape_named"]

_HALF_PI = 0.5 * math.pi


class Shape:
    """Base of every stimulus shape.

    Subclasses set the class attributes and either :attr:`atoms` or
    (:attr:`domain`, :meth:`x_of`).

    Attributes
    ----------
    name : str
        Word used in tables and in the project file (``'sine'``).
    crest_factor : float
        Peak / rms; ``nan`` where there is no cycle (an impulse).
    form_factor : float
        rms / mean of :math:`|x|` over the cycle (the rectified mean); ``nan``
        where there is no cycle.
    peak_only : bool
        True when the stimulus is judged on peak quantities only (an impulse).
    value_is : {'rms', 'level', 'peak'}
        What the stated value of a stimulus of this shape means.
    atoms : tuple of (value, weight) or None
        Discrete amplitude distribution (fractions of the peak), or None for a
        continuous one given by :attr:`domain` and :meth:`x_of`.
    domain : tuple of float or None
        Phase interval :math:`[t_0, t_1]` [rad] with uniform weight whose values
        :meth:`x_of` cover one cycle's distribution.
    """

    name = "shape"
    crest_factor = math.nan
    form_factor = math.nan
    peak_only = False
    value_is = "rms"
    atoms: tuple | None = None
    domain: tuple | None = None

    # --- what a stated value means ---------------------------------------------------
    def peak_of(self, value: float) -> float:
        """Signed peak of a stimulus whose stated value is ``value`` [V] or [A].

        Notes
        -----
        For a periodic wave the stated value is its rms (a meter calibrated in rms
        of a sine is read against it), so :math:`X_{pk} = k_c X_{rms}` with the
        crest factor :math:`k_c`; a DC value is its own peak (signed: its
        polarity); an impulse is given by its peak.
        """
        if self.value_is == "rms":
            return float(value) * self.crest_factor
        return float(value)

    # --- the wave over phase ----------------------------------------------------------
    def at(self, phase) -> np.ndarray:
        """Instantaneous value at ``phase`` [rad] as a fraction of the peak (2 pi periodic)."""
        raise NotImplementedError

    def samples(self, n: int) -> np.ndarray:
        """``n`` equally spaced instants of one cycle, fractions of the peak.

        The phases are :math:`2 \\pi k / n`, k = 0 .. n - 1, so the cycle mean of
        any function of them is the rectangle rule of the periodic integrand
        (the reference the adaptive rules are measured against).
        """
        k = np.arange(int(n))
        return self.at(2.0 * np.pi * k / n)

    def x_of(self, t) -> np.ndarray:
        """Value at phase ``t`` of :attr:`domain`, fraction of the peak."""
        return self.at(t)

    def monotone_pieces(self) -> list[tuple[float, float]]:
        """Sub-intervals of :attr:`domain` on which :meth:`x_of` is monotone."""
        return [tuple(self.domain)] if self.domain is not None else []

    # --- moments of the distribution ----------------------------------------------------
    def mean_abs(self) -> float:
        """Rectified mean :math:`\\overline{|x|}` as a fraction of the peak."""
        return 1.0 / (self.crest_factor * self.form_factor)

    def rms(self) -> float:
        """rms as a fraction of the peak."""
        return 1.0 / self.crest_factor

    def average_reading_error(self, reference: "Shape | None" = None) -> float:
        """Relative error of an average-responding meter calibrated in rms of ``reference``.

        Parameters
        ----------
        reference : Shape, optional
            The calibration waveform; a sine by default.

        Returns
        -------
        float
            (reading - true rms) / true rms for a wave of this shape.

        Notes
        -----
        The meter responds to the rectified mean :math:`\\overline{|x|}` and is
        scaled by the reference's form factor :math:`F_{ref}`, so it reads
        :math:`F_{ref} \\overline{|x|} = X_{rms} F_{ref} / F`: the error is
        :math:`F_{ref} / F - 1` (+11.07 % for a square wave, -3.81 % for a
        triangle against a sine).

        References
        ----------
        Form factors of the sine, square and triangle waves: any text on
        rectifier instruments, e.g. the form factor :math:`\\pi / (2 \\sqrt 2)`
        of the sine.
        """
        ref = reference or Sine()
        return ref.form_factor / self.form_factor - 1.0

    def __repr__(self) -> str:
        return f"{type(self).__name__}()"

    def __eq__(self, other) -> bool:
        return type(self) is type(other) and self._key() == other._key()

    def __hash__(self) -> int:
        return hash((type(self).__name__, self._key()))

    def _key(self):
        return ()


class DC(Shape):
    """A steady level; the stated value is the level (signed)."""

    name = "dc"
    crest_factor = 1.0
    form_factor = 1.0
    value_is = "level"
    atoms = ((1.0, 1.0),)

    def at(self, phase) -> np.ndarray:
        return np.ones_like(np.asarray(phase, dtype=float))

    def samples(self, n: int) -> np.ndarray:
        return np.array([1.0])


class Sine(Shape):
    """A sine wave; the stated value is its rms.

    Notes
    -----
    :math:`x = \\sin \\theta`; crest factor :math:`\\sqrt 2`; rectified mean
    :math:`2 / \\pi`; form factor :math:`\\pi / (2 \\sqrt 2) = 1.1107`. Its
    amplitude distribution is the arcsine law, density
    :math:`1 / (\\pi \\sqrt{1 - x^2})` on (-1, 1); over the phase interval
    :math:`[-\\pi/2, \\pi/2]` it is uniform (see the module notes).

    References
    ----------
    Form factor and rectified mean of a sine: standard results of AC circuit
    theory (e.g. Hughes, *Electrical and Electronic Technology*, chapter on
    alternating quantities).
    """

    name = "sine"
    crest_factor = math.sqrt(2.0)
    form_factor = math.pi / (2.0 * math.sqrt(2.0))
    domain = (-_HALF_PI, _HALF_PI)

    def at(self, phase) -> np.ndarray:
        return np.sin(np.asarray(phase, dtype=float))


class Square(Shape):
    """A symmetric square wave; the stated value is its rms (equal to its peak)."""

    name = "square"
    crest_factor = 1.0
    form_factor = 1.0
    atoms = ((1.0, 0.5), (-1.0, 0.5))

    def at(self, phase) -> np.ndarray:
        s = np.sin(np.asarray(phase, dtype=float))
        return np.where(s >= 0.0, 1.0, -1.0)

    def samples(self, n: int) -> np.ndarray:
        # half the instants at +1, half at -1 (the zero-crossing instant counted once each way)
        k = np.arange(int(n))
        return np.where(k < n / 2.0, 1.0, -1.0)


class Triangle(Shape):
    """A symmetric triangle wave; the stated value is its rms.

    Notes
    -----
    :math:`x = (2 / \\pi) \\arcsin(\\sin \\theta)`: crest factor :math:`\\sqrt 3`,
    rectified mean 1/2, form factor :math:`2 / \\sqrt 3 = 1.1547`. It spends
    equal time at every value: the distribution is uniform on [-1, 1], the phase
    interval :math:`[-\\pi/2, \\pi/2]` maps onto it linearly.
    """

    name = "triangle"
    crest_factor = math.sqrt(3.0)
    form_factor = 2.0 / math.sqrt(3.0)
    domain = (-_HALF_PI, _HALF_PI)

    def at(self, phase) -> np.ndarray:
        return (2.0 / math.pi) * np.arcsin(np.clip(np.sin(np.asarray(phase, dtype=float)), -1.0, 1.0))

    def x_of(self, t) -> np.ndarray:
        return np.asarray(t, dtype=float) / _HALF_PI


class Impulse(Shape):
    """A short impulse, judged on its peak in both polarities only.

    The stated value is the peak. There is no cycle: the crest and form factors
    are not defined (``nan``) and the two atoms carry equal weights only so that
    a mean over them is the same number as before shapes were objects; a mean or
    rms of an impulse has no physical meaning (:attr:`peak_only` is True).
    """

    name = "impulse"
    peak_only = True
    value_is = "peak"
    atoms = ((1.0, 0.5), (-1.0, 0.5))

    def peak_of(self, value: float) -> float:
        return abs(float(value))

    def at(self, phase) -> np.ndarray:
        raise ValueError("an impulse has no cycle; use its atoms (peak in both polarities)")

    def samples(self, n: int) -> np.ndarray:
        return np.array([1.0, -1.0])

    def mean_abs(self) -> float:
        return math.nan

    def rms(self) -> float:
        return math.nan


class OddHarmonics(Shape):
    """A distorted periodic wave: the fundamental plus odd sine harmonics in phase.

    Parameters
    ----------
    harmonics : mapping of int -> float
        Odd harmonic order -> amplitude as a fraction of the fundamental (signed:
        a negative amplitude is the harmonic in opposite phase).
    name : str

    Notes
    -----
    :math:`f(\\theta) = \\sin \\theta + \\sum_k b_k \\sin k\\theta` (k odd) has half-wave
    and quarter-wave symmetry, so its distribution is that of
    :math:`f(t)/f_{pk}` for t uniform on :math:`[-\\pi/2, \\pi/2]`, like the sine.

    * rms: :math:`\\sqrt{(1 + \\sum b_k^2)/2}` (Parseval);
    * rectified mean, when f keeps one sign on :math:`(0, \\pi)`:
      :math:`\\frac1\\pi \\int_0^\\pi f = \\frac2\\pi (1 + \\sum b_k / k)`;
    * peak: the largest value of f on :math:`[0, \\pi/2]`, found numerically.
    """

    value_is = "rms"
    domain = (-_HALF_PI, _HALF_PI)

    def __init__(self, harmonics: dict, name: str = "distorted"):
        orders = sorted(int(k) for k in harmonics)
        if any(k < 3 or k % 2 == 0 for k in orders):
            raise ValueError("harmonic orders must be odd and at least 3")
        self.harmonics = {k: float(harmonics[k]) for k in orders}
        self.name = name
        self._k = np.array([1] + orders, dtype=float)
        self._b = np.array([1.0] + [self.harmonics[k] for k in orders])
        # peak and the monotone pieces on [0, pi/2]
        grid = np.linspace(0.0, _HALF_PI, 2049)
        f = self._f(grid)
        if np.any(f[1:] <= 0.0):
            raise ValueError("the distorted wave must keep one sign over each half cycle")
        stationary = []
        df = self._df(grid)
        for i in np.nonzero(np.sign(df[:-1]) != np.sign(df[1:]))[0]:
            stationary.append(brentq(self._df, grid[i], grid[i + 1], xtol=1e-15))
        ends = [0.0] + [s for s in stationary if 1e-9 < s < _HALF_PI - 1e-9] + [_HALF_PI]
        cand = [_HALF_PI] + stationary
        if stationary:
            best = max(stationary, key=lambda s: self._f(s))
            res = minimize_scalar(lambda s: -self._f(s), bounds=(max(0.0, best - 1e-3), min(_HALF_PI, best + 1e-3)),
                                  method="bounded", options={"xatol": 1e-14})
            cand.append(float(res.x))
        self._peak = float(max(self._f(c) for c in cand))
        self._ends = ends
        rms = math.sqrt(0.5 * float(np.sum(self._b ** 2)))
        mean_abs = (2.0 / math.pi) * float(np.sum(self._b / self._k))
        self.crest_factor = self._peak / rms
        self.form_factor = rms / mean_abs

    def _f(self, t):
        t = np.asarray(t, dtype=float)
        return np.sum(self._b[:, None] * np.sin(self._k[:, None] * t.reshape(1, -1)), axis=0).reshape(t.shape)

    def _df(self, t):
        t = np.asarray(t, dtype=float)
        return np.sum((self._b * self._k)[:, None] * np.cos(self._k[:, None] * t.reshape(1, -1)),
                      axis=0).reshape(t.shape)

    def at(self, phase) -> np.ndarray:
        return self._f(phase) / self._peak

    def monotone_pieces(self) -> list[tuple[float, float]]:
        e = self._ends
        right = [(e[i], e[i + 1]) for i in range(len(e) - 1)]
        left = [(-b, -a) for a, b in reversed(right)]
        # join the two pieces that meet at t = 0 (f is odd and increasing there)
        return left[:-1] + [(left[-1][0], right[0][1])] + right[1:]

    def _key(self):
        return (tuple(self.harmonics.items()), self.name)

    def __repr__(self) -> str:
        return f"OddHarmonics({self.harmonics!r}, name={self.name!r})"


class FlatTopMains(OddHarmonics):
    """A flat-topped mains voltage: 5 % third and 6 % fifth harmonic, both flattening the crest.

    Notes
    -----
    :math:`f = \\sin \\theta + 0.05 \\sin 3\\theta - 0.06 \\sin 5\\theta`: at the
    crest (:math:`\\theta = \\pi/2`) both harmonics subtract, the shape that
    rectifier-capacitor loads give a public supply. The levels are the
    compatibility levels of IEC 61000-2-2 for low-voltage public networks (5 %
    for the 3rd, 6 % for the 5th harmonic; from memory: verify against the
    edition in use); their phases here are a choice that flattens the crest.
    Total harmonic distortion :math:`\\sqrt{0.05^2 + 0.06^2} = 7.8 \\%`.

    References
    ----------
    IEC 61000-2-2, *Electromagnetic compatibility - Environment - Compatibility
    levels for low-frequency conducted disturbances and signalling in public
    low-voltage power supply systems*, table of harmonic voltages (from memory).
    """

    def __init__(self):
        super().__init__({3: 0.05, 5: -0.06}, name="flat-top mains")

    def __repr__(self) -> str:
        return "FlatTopMains()"


#: The shapes by name (one instance each).
SHAPES = {s.name: s for s in (DC(), Sine(), Square(), Triangle(), Impulse(), FlatTopMains())}


def shape_named(name: str) -> Shape:
    """The shape called ``name`` (``'sine'``, ``'square'``, ...)."""
    try:
        return SHAPES[name]
    except KeyError:
        raise UsageError(f"unknown waveform {name!r}: choose one of {', '.join(SHAPES)}") from None
