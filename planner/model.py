"""Domain model: frozen dataclasses holding plain SI floats.

Everything the numeric core needs is here, already converted from the project
file's text with units: currents in [A], voltages in [V], resistances in [ohm],
powers in [W], temperatures in [K], tolerances and tempcos as plain fractions
(``0.5 %`` is ``0.005``, ``50 ppm/K`` is ``5e-5`` [1/K]).

The project loader (:mod:`planner.project`) builds a :class:`Spec`; the sizer
(:mod:`planner.sizing`) turns the high-level ``voltage``/``current`` sections into a
:class:`NetworkSpec`; the graph model (:mod:`planner.network`) and the solver
take it from there. Nothing here parses text or formats output.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

from . import ranges
from .parts import (  # noqa: F401  (the element kinds, re-exported for callers of planner.model)
    KINDS,
    Battery,
    Contact,
    Diode,
    DiodeModel,
    Fuse,
    FuseModel,
    MovementElement,
    Part,
    Ptc,
    PtcModel,
    Resistor,
    ResistorParts,
    Rheostat,
    Varistor,
    VaristorModel,
)

#: Any network element (see :mod:`planner.parts`).
Element = Part

#: Temperature coefficient of resistance of annealed copper at 20 degC [1/K].
#: IEC 60028 (International Annealed Copper Standard): alpha_20 = 0.00393 per K.
COPPER_TEMPCO_PER_K = 3.93e-3

#: 0 degC in kelvin (exact, SI).
ZERO_CELSIUS_K = 273.15

#: Default reference temperature [K] (23 degC, common practice for calibration labs).
DEFAULT_T_REF_K = ZERO_CELSIUS_K + 23.0


@dataclass(frozen=True)
class Overload:
    """What damages a movement, as multiples of its full-scale current (``movement.overload``).

    Attributes
    ----------
    peg : float
        Pointer reaches its end stop above this mean multiple (not damage: the
        verdict ``pegs``; common practice: about 1.1).
    short_time : float
        Peak multiple the coil, hairsprings and pointer survive briefly (a
        current kick, a fuse's pre-arcing time). Default 20 (from memory, range
        10-50; the 10 x short-duration test of IEC 60051-2 is a survived test
        level, so damage lies above it).
    continuous : float
        Thermal limit: the rms multiple the coil and hairsprings survive
        indefinitely. Default 10, i.e. 100 x the full-scale coil power (from
        memory, range 5-20; a sensitive movement dissipates microwatts at full
        scale, so its true thermal margin is larger still).
    mechanical : float
        Mechanical limit: the mean (pointer-driving) multiple held against the end
        stop without bending the pointer or shifting its zero. Default 10 (from
        memory, range 5-20; common practice: silicon diodes across a 0.1 V
        movement hold it at 5 to 7 x full scale indefinitely, the classic
        multimeter protection).
    thermal_time_s : float
        Thermal time constant of coil and hairsprings [s]: shorter exposures are
        allowed more rms current (:meth:`thermal_limit`). Default 1 s (from
        memory, range 1-10 s; the shortest is the conservative choice).
    """

    peg: float = 1.1
    short_time: float = 20.0
    continuous: float = 10.0
    mechanical: float = 10.0
    thermal_time_s: float = 1.0

    def thermal_limit(self, duration_s: float) -> float:
        r"""Rms multiple of I_fs the coil survives for ``duration_s`` [s] (``inf``: indefinitely).

        Notes
        -----
        A first-order thermal model (one heat capacity, one thermal resistance:
        :math:`\theta(t) = \theta_\infty (1 - e^{-t/\tau})` at constant power)
        reaches the temperature rise of ``continuous`` held indefinitely when

        .. math:: m(t) = \frac{m_{cont}}{\sqrt{1 - e^{-t/\tau}}}

        times full scale flows for t; for :math:`t \ll \tau` this is the adiabatic
        :math:`m^2 t = m_{cont}^2 \tau` (an I^2 t limit). It is capped at
        ``short_time``.

        References
        ----------
        Lumped heat balance :math:`C \, d\theta/dt = P - \theta / R_{th}`, with
        :math:`\tau = R_{th} C` (any heat-transfer textbook, e.g. Incropera and
        DeWitt, *Fundamentals of Heat and Mass Transfer*, lumped capacitance method).
        """
        t = float(duration_s)
        if not t < math.inf:
            return float(self.continuous)
        if t <= 0.0:
            return float(self.short_time)
        m = self.continuous / math.sqrt(-math.expm1(-t / self.thermal_time_s))
        return float(min(m, max(self.short_time, self.continuous)))


@dataclass(frozen=True)
class ScaleGeometry:
    """Where the scale plate's arcs lie: the movement's pointer swing and length.

    Attributes
    ----------
    arc_deg : float
        Angle the pointer swings through from rest to full deflection [deg].
    radius_m : float
        Radius of the outermost scale's base line, measured from the pivot [m];
        the other scales nest inside it.
    mirror : bool
        Draw an anti-parallax mirror band (a cut-out for a mirror strip).
    line : int or None
        Line of ``movement.scale`` in the project file (for messages).
    """

    arc_deg: float = 90.0
    radius_m: float = 0.060
    mirror: bool = False
    line: int | None = None


@dataclass(frozen=True)
class Movement:
    """A moving-coil movement.

    Attributes
    ----------
    i_fs_a : float
        Full-scale current [A].
    r_coil_ohm : float
        Coil resistance at the reference temperature [ohm].
    class_index : float
        IEC 60051 class index [% of fiducial value].
    tempco_per_k : float
        Temperature coefficient of the coil resistance [1/K]; copper by default.
    tolerance : float
        Tolerance of the coil resistance (fraction), 0 when it is measured.
    i_fs_tolerance : float
        Tolerance of the full-scale current (fraction), 0 when it is calibrated.
    overload : Overload
        Overload limits.
    scale : ScaleGeometry
        Arc and radius of the scale plate (``movement.scale``).
    """

    i_fs_a: float
    r_coil_ohm: float
    class_index: float
    tempco_per_k: float = COPPER_TEMPCO_PER_K
    tolerance: float = 0.0
    i_fs_tolerance: float = 0.0
    overload: Overload = field(default_factory=Overload)
    scale: ScaleGeometry = field(default_factory=ScaleGeometry)

    @property
    def v_fs_v(self) -> float:
        """Voltage across the coil at full scale [V]."""
        return self.i_fs_a * self.r_coil_ohm

    @property
    def ohms_per_volt(self) -> float:
        """Sensitivity of a voltmeter built on it [ohm/V]."""
        return 1.0 / self.i_fs_a


@dataclass(frozen=True)
class Ambient:
    """Ambient temperatures [K]: the reference and the range of use."""

    t_ref_k: float = DEFAULT_T_REF_K
    t_min_k: float = ZERO_CELSIUS_K + 0.0
    t_max_k: float = ZERO_CELSIUS_K + 40.0


@dataclass(frozen=True)
class Parts:
    """The parts available to the project."""

    resistors: ResistorParts = field(default_factory=ResistorParts)
    diodes: Mapping[str, DiodeModel] = field(default_factory=dict)
    fuses: Mapping[str, FuseModel] = field(default_factory=dict)
    ptcs: Mapping[str, PtcModel] = field(default_factory=dict)
    varistors: Mapping[str, VaristorModel] = field(default_factory=dict)


@dataclass(frozen=True)
class Position:
    """A switch position.

    Attributes
    ----------
    name : str
        As printed on the dial, e.g. ``"2.5 V"``.
    measures : str
        The range kind: ``voltage`` or ``current`` (:mod:`planner.ranges`).
    full_scale : float
        Full-scale value [V] or [A].
    input : tuple of str
        The two input terminals (+, -).
    scale : {'shared', 'own'}
        AC (rectifier) positions: read on the shared linear DC scale or on an
        AC scale of their own (design contract); ``shared`` for every other kind.
    center : float or None
        Centre-scale value of a resistance position [ohm] (its ``full_scale``
        holds the same number); None for other kinds.
    """

    name: str
    measures: str
    full_scale: float
    input: tuple[str, str]
    line: int | None = None
    scale: str = "shared"
    center: float | None = None

    @property
    def kind(self) -> "ranges.RangeKind":
        """What kind of range it is (:mod:`planner.ranges`)."""
        return ranges.of(self.measures)

    @property
    def unit(self) -> str:
        return self.kind.unit


@dataclass(frozen=True)
class NetworkSpec:
    """An explicit network: elements and positions in switch order."""

    elements: tuple[Element, ...]
    positions: tuple[Position, ...]
    #: ``make_before_break`` or ``break_before_make`` or None (unknown: check both).
    contact_style: str | None = None

    def element(self, name: str) -> Element:
        for e in self.elements:
            if e.name == name:
                return e
        raise KeyError(name)

    def position(self, name: str) -> Position:
        for p in self.positions:
            if p.name == name:
                return p
        raise KeyError(name)


# --- high-level requests for the sizer ----------------------------------------------


@dataclass(frozen=True)
class VoltageRanges:
    """Wanted voltage ranges: ``chain`` or ``separate`` multipliers."""

    arrangement: str
    full_scales: tuple[float, ...]
    line: int | None = None


@dataclass(frozen=True)
class CurrentRanges:
    """Wanted current ranges: Ayrton ``ring`` or ``separate`` shunts.

    ``ring_on_voltage`` says whether the ring stays across the movement on the
    voltage positions (``across``) or is switched out (``switched_out``).
    ``swamp_ohm`` is a series (swamping) resistor with the coil on current ranges
    (0 for none). ``fuse`` names a fuse model placed in the input lead of the
    current positions (None for none).
    """

    arrangement: str
    full_scales: tuple[float, ...]
    ring_on_voltage: str = "switched_out"
    swamp_ohm: float = 0.0
    fuse: str | None = None
    line: int | None = None


@dataclass(frozen=True)
class ACRanges:
    """Wanted AC (rectifier) ranges: ``ac_voltage`` or ``ac_current`` of the project file.

    ``arrangement`` is ``chain`` or ``separate`` (volts), ``ring`` or ``separate``
    (amps); ``full_scales`` are rms values of a sine [V] or [A]; ``rectifier`` is
    ``bridge`` or ``half_wave``; ``diode`` names a model in ``parts.diodes``;
    ``scale`` is ``shared`` (the DC linear scale) or ``own`` (an AC scale);
    ``swamp_ohm`` (AC current only) a resistor in series with the rectifier [ohm].
    """

    arrangement: str
    full_scales: tuple[float, ...]
    rectifier: str = "bridge"
    diode: str = ""
    scale: str = "shared"
    line: int | None = None
    swamp_ohm: float = 0.0  # ac_current: a resistor in series with the rectifier branch (0 for none)


@dataclass(frozen=True)
class BatteryRequest:
    """A battery the sizer places for ohms ranges [V], [ohm]."""

    voltage_v: float
    v_min_v: float
    v_max_v: float
    r_int_ohm: float
    line: int | None = None


@dataclass(frozen=True)
class ResistanceRanges:
    """Wanted ohms ranges: centre-scale values, the battery (and a higher one), the zero adjuster.

    ``high_battery`` (None for none) serves the ranges whose centre the first
    battery cannot reach; ``zero_adjust`` is ``shunt`` (a rheostat across the
    meter) or ``series`` (a rheostat in series with it).
    """

    centers: tuple[float, ...]
    battery: BatteryRequest
    high_battery: BatteryRequest | None = None
    zero_adjust: str = "shunt"
    line: int | None = None


@dataclass(frozen=True)
class ClampRequest:
    """A diode clamp the sizer must place.

    ``at`` is ``movement`` (across the coil) or a resistance above the movement
    [ohm] at which the multiplier chain is split to make a tap for the clamp.
    ``forward`` and ``reverse`` name diode models (None for no diode in that
    direction); ``count`` diodes in series per direction.
    """

    at: str | float
    forward: str | None
    reverse: str | None
    count: int = 1
    line: int | None = None
    #: A string of ``count`` back-to-back pairs (zener or TVS: the forward model's cathode toward
    #: the tap, then the reverse model's): clamps both polarities at breakdown plus one junction.
    bidirectional: bool = False


@dataclass(frozen=True)
class ProtectionRequest:
    """What the ``protection`` section asks the sizer to place (:mod:`planner.sizing.sections.protection`).

    An input PTC model, a fusible input resistor (its value, fusing points and breaking
    voltage), a ring crowbar's diode model and count, a second fuse for the mA ranges.
    """

    input_ptc: str | None = None
    fusible_input: bool = False
    fusible_ohm: float | None = None
    fusing: tuple = ()
    breaking_voltage_v: float = math.inf
    ring_crowbar: str | None = None
    ring_crowbar_count: int = 2
    ma_fuse: str | None = None
    line: int | None = field(default=None, compare=False)  # where it was read: not part of what it asks
    ohms_fuse: str | None = None
    ohms_crowbar: str | None = None
    ohms_crowbar_count: int = 4


@dataclass(frozen=True)
class FaultSource:
    """A foreseeable stimulus from the file's ``faults.sources``.

    ``value`` is the DC value or the rms of a sine [V] or [A].
    """

    name: str
    kind: str  # "voltage" or "current"
    value: float
    waveform: str = "dc"  # "dc" or "sine"
    r_source_ohm: float = 0.0
    current_limit_a: float | None = None
    line: int | None = None
    compliance_v: float | None = None  # a current source's compliance [V]; None: the default
    frequency_hz: float | None = None  # a sine's frequency [Hz]; None: 50 Hz


@dataclass(frozen=True)
class Acceptance:
    """A fault case the designer accepts, with the reason.

    ``expanded`` is True when the case came from an entry that lists several
    positions or stimuli: such an entry accepts only the failing cases among
    them, and a combination that does not exist (a stimulus that does not apply
    to that position) is not reported as naming no case.
    """

    position: str
    stimulus: str
    reason: str
    line: int | None = None
    expanded: bool = False


@dataclass(frozen=True)
class Faults:
    """Foreseeable faults."""

    sources: tuple[FaultSource, ...] = ()
    max_input_v: float | None = None
    category: str | None = None
    accept: tuple[Acceptance, ...] = ()


@dataclass(frozen=True)
class Analysis:
    """Settings of the analyses that a file may fix."""

    samples: int = 2000
    seed: int = 1
    allowed_share: float = 0.1  # sizing: share of class a single value may miss by
    trim: bool = False  # sizing: plan trimmers and their calibration (planner.trim)


@dataclass(frozen=True)
class Spec:
    """A whole project, in SI floats."""

    title: str
    movement: Movement
    parts: Parts = field(default_factory=Parts)
    ambient: Ambient = field(default_factory=Ambient)
    voltage: VoltageRanges | None = None
    current: CurrentRanges | None = None
    resistance: ResistanceRanges | None = None
    clamps: tuple[ClampRequest, ...] = ()
    ac_voltage: ACRanges | None = None
    ac_current: ACRanges | None = None
    faults: Faults = field(default_factory=Faults)
    network: NetworkSpec | None = None
    analysis: Analysis = field(default_factory=Analysis)
    protection: ProtectionRequest | None = None
    path: str | None = None
    revision: str | None = None
    date: str | None = None
    text: str | None = None  # the file's text, for the dossier appendix and hash
