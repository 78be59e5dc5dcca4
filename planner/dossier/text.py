"""Words of the dossier: number formatting, safety cautions, methods, sources.

The cautions are written once here and placed by the section builders: all of
them in the safety section before any number, and the short hazardous-voltage
reminder again wherever a hazardous range, source or test voltage appears.
"""

from __future__ import annotations

import math

from ..units import format_si

__all__ = [
    "value_text", "pct", "pct_abs", "quantity", "celsius", "HAZARD_DC_V", "HAZARD_RMS_V", "HAZARD_PEAK_V",
    "is_hazardous", "GENERAL_CAUTIONS", "CATEGORY_TEXT", "hazard_reminder", "METHODS", "REFERENCES",
    "SECTION_TITLES",
]

#: Hazardous-live limits of IEC 61010-1:2010 (normal condition): 70 V DC, 33 V rms, 46.7 V peak.
HAZARD_DC_V = 70.0
HAZARD_RMS_V = 33.0
HAZARD_PEAK_V = 46.7

#: Section headings, in order (the tests look for each of them in the text).
SECTION_TITLES = (
    "Safety cautions",
    "Summary",
    "Schematic",
    "Bill of materials",
    "Positions",
    "Misrange matrix",
    "Build and acceptance",
    "Scale plate",
    "Methods and assumptions",
    "Appendix: project file",
)


def value_text(x, unit: str, digits: int = 4) -> str:
    """A value with an SI prefix, trailing zeros dropped: ``8 kohm``, ``111.1 mohm``."""
    if x is None:
        return "\u2013"
    x = float(x)
    if not math.isfinite(x):
        return "none" if math.isinf(x) and x > 0 else "\u2013"
    text = format_si(x, unit, digits)
    num, sep, rest = text.partition(" ")
    if "." in num and "e" not in num:
        num = num.rstrip("0").rstrip(".")
    return f"{num}{sep}{rest}" if sep else num


def quantity(x, unit: str, digits: int = 4) -> str:
    """Like :func:`value_text` but keeps the significant zeros (a measured value)."""
    if x is None or not math.isfinite(float(x)):
        return "\u2013"
    return format_si(float(x), unit, digits)


def pct(x, decimals: int = 3, signed: bool = True) -> str:
    """A percentage, signed by default: ``+0.125 %``."""
    if x is None:
        return "\u2013"
    x = float(x)
    if not math.isfinite(x):
        return "\u2013"
    return f"{x:+.{decimals}f} %" if signed else f"{x:.{decimals}f} %"


def pct_abs(x, decimals: int = 3) -> str:
    return pct(x, decimals, signed=False)


def celsius(t_k: float) -> str:
    return f"{t_k - 273.15:.4g} \u00b0C"


def is_hazardous(value_v: float, waveform: str = "dc") -> bool:
    """Whether a voltage is above the IEC 61010-1 hazardous-live limit.

    ``value_v`` is the DC value, or the rms value of a sine (whose peak is
    sqrt(2) times larger).
    """
    v = abs(float(value_v))
    if waveform == "sine":
        return v > HAZARD_RMS_V or v * math.sqrt(2.0) > HAZARD_PEAK_V
    return v > HAZARD_DC_V


CATEGORY_TEXT = (
    "A measurement category says which part of an electrical installation an instrument may be "
    "connected to, and so which transient overvoltages its insulation and protection must survive "
    "(IEC 61010-1 and IEC 61010-2-030). <b>CAT II</b>: circuits connected directly to the low-voltage "
    "installation through a plug (outlets, appliances, portable tools). <b>CAT III</b>: the building "
    "installation itself (distribution boards, fixed wiring, busbars, permanently connected motors). "
    "<b>CAT IV</b>: the source of the installation (service entrance, supply meters, overhead lines). "
    "The rated impulse voltage, the clearances and the fuse breaking capacity all rise with the "
    "category. Circuits not derived from the mains carry no category. Nothing in this dossier shows "
    "that an instrument meets any category: insulation, clearance and creepage distances, terminals, "
    "probes, enclosure and fusing are outside what it computes."
)

#: The general cautions: (title, markup) pairs, shown in full before any number.
GENERAL_CAUTIONS = (
    ("A planning aid, not a certification",
     "This dossier computes what the project file describes with the models named in the methods "
     "section. It is not a type test, a certification or a safety approval, and it does not replace "
     "the judgement of a qualified person."),
    ("Hazardous voltages",
     f"Under IEC 61010-1 a voltage above {HAZARD_RMS_V:g} V rms, {HAZARD_PEAK_V:g} V peak or "
     f"{HAZARD_DC_V:g} V DC is hazardous live. A meter connected to such a voltage carries it on its "
     "terminals, its range switch and its multiplier string: enclose them, use shrouded terminals "
     "and probes rated for the voltage, and never change range or open the case while connected."),
    ("Measurement category",
     CATEGORY_TEXT),
    ("Fuse breaking capacity",
     "A fuse must interrupt the largest prospective current of any circuit the meter can be connected "
     "to, at that circuit's voltage. A fuse asked to break more than its breaking capacity can rupture "
     "or hold an arc: choose it for the worst source, not for the range it protects."),
    ("Resistor voltage ratings",
     "A multiplier resistor has two limits, its power rating and its limiting element voltage; at "
     "high voltage the second one governs and a resistor well within its power can still flash over. "
     "Split high-voltage segments into several resistors in series, each within its voltage rating, "
     "and keep their spacing. The bill of materials lists required against rated power and voltage."),
    ("Verify by test before use",
     "Every number here comes from models and part data. Build, then measure the instrument against "
     "the acceptance tables of the build section before first use and after every repair; do the "
     "high-voltage tests last, with a current-limited source."),
    ("Standards, codes and licensed practice come first",
     "Where this dossier and IEC 61010-1, local electrical codes or licensed practice disagree, they "
     "govern. Work on live installations only within your training and your local rules."),
)


def hazard_reminder(where: str) -> tuple[str, list[str]]:
    """The short caution repeated beside hazardous ranges, sources and test voltages."""
    return ("hazardous voltage", [
        f"{where} Above {HAZARD_DC_V:g} V DC or {HAZARD_RMS_V:g} V rms the terminals, the range switch and the "
        "multiplier string are hazardous live: probes and terminals rated for the voltage, enclosure closed, "
        "one hand, current-limited source for tests.",
        "A planning aid, not a certification: verify by test before use; IEC 61010-1, local codes and "
        "licensed practice govern.",
    ])


#: Methods: (heading, markup paragraphs) in reading order.
METHODS = (
    ("Multipliers (Ohm's law)",
     ["A voltage range of full scale V needs a total resistance V / I<sub>fs</sub> in the path, so a "
      "separate multiplier is R = V / I<sub>fs</sub> \u2013 R<sub>m</sub>; in a chain the segment for range k is "
      "(V<sub>k</sub> \u2013 V<sub>k\u20131</sub>) / I<sub>fs</sub>, the first less R<sub>m</sub> [1]. The "
      "sensitivity is 1 / I<sub>fs</sub> ohms per volt."]),
    ("Shunts and the Ayrton ring",
     ["A separate shunt for range I is R = R<sub>m</sub> I<sub>fs</sub> / (I \u2013 I<sub>fs</sub>). An Ayrton "
      "(universal) shunt of total R<sub>t</sub> = R<sub>m</sub> I<sub>fs</sub> / (I<sub>1</sub> \u2013 "
      "I<sub>fs</sub>) stays across the movement on every current range; the part between the common end and "
      "the tap of range k is R<sub>k</sub> = I<sub>fs</sub> (R<sub>m</sub> + R<sub>t</sub>) / I<sub>k</sub> "
      "[1, 2]. The switch contact is outside the ring, so its resistance does not enter the ratio."]),
    ("Preferred values",
     ["Resistor values are taken from the IEC 60063 series named in the project (E6 ... E192) [3]; a value "
      "that misses its target by more than the allowed share of the class is made from a series or "
      "parallel pair."]),
    ("Accuracy class",
     ["Errors are given in percent of the position's full scale, the fiducial value of IEC 60051 for a "
      "scale with zero at one end; the class index is the limit of intrinsic error in those units [4]. "
      "The budget of a position is its worst-case error over the tolerance corners (the nominal offset "
      "included) plus its largest change of the full-scale reading over the ambient range."]),
    ("Temperature",
     ["Resistors and the coil follow R(T) = R (1 + alpha (T \u2013 T<sub>ref</sub>)). "
      "A copper coil has alpha = 0.00393 per K at 20 \u00b0C, the annealed copper "
      "standard of IEC 60028 [5]; the resistors' tempcos are the project's."]),
    ("Diodes",
     ["Each diode is a Shockley junction, I = I<sub>s</sub> (exp(V / (n V<sub>t</sub>)) \u2013 1), "
      "V<sub>t</sub> = kT/q with the exact SI constants, with a leakage resistance across the junction and "
      "a series resistance [6]. The saturation current follows the temperature law used by SPICE "
      "simulators, I<sub>s</sub>(T) = I<sub>s</sub> (T/T<sub>0</sub>)<super>XTI/n</super> "
      "exp((T/T<sub>0</sub> \u2013 1) E<sub>g</sub> / (n V<sub>t</sub>(T))) [6]. The closed form of a "
      "junction with series resistance (Lambert W / Wright omega) [7] serves as a check of the solver."]),
    ("Network solution",
     ["Each switch state (every position, and the make-before-break and break-before-make states between "
      "neighbours) is solved by modified nodal analysis [8] with Newton iteration on the junctions, "
      "junction-voltage limiting, and gmin and source stepping as fallbacks. A sine source is solved as a "
      "set of instantaneous DC states over one cycle (no reactive parts): mean for the pointer, rms for "
      "heating, peak for surge."]),
    ("Tolerances and Monte Carlo",
     ["Worst case: every corner of the tolerance box when few parameters matter, else a first-order "
      "bound checked against sampled corners and never smaller than them. Monte Carlo: every part drawn "
      "once per build, uniformly within its tolerance (or normally, tolerance = 3 sigma, where the file "
      "says so), from a seeded generator, so the same file gives the same builds; the yield is the share "
      "of builds whose full-scale error is within the class."]),
    ("Misrange and safety",
     ["Each foreseeable source of the project is applied to each position and each switch transition. "
      "Verdicts: <b>ok</b> (parts within ratings, pointer at or below its stop), <b>pegs</b> (pointer past "
      "its stop, parts within ratings), <b>overstress</b> (a part, the movement included, beyond a rating), "
      "<b>hazard</b> (a danger to the person, e.g. a fuse asked to break more than its breaking capacity or "
      "a rating exceeded at a hazardous voltage). Hazardous-live limits and measurement categories are those "
      "of IEC 61010-1 [9]."]),
)

#: Published sources cited by number in :data:`METHODS`.
REFERENCES = (
    "T. R. Kuphaldt, <i>Lessons in Electric Circuits</i>, Vol. I (DC), ch. 8, \u201cVoltmeter design\u201d "
    "and \u201cAmmeter design\u201d (open textbook).",
    "Ayrton (universal) shunt: worked examples in the textbook literature; Wikipedia, \u201cAyrton shunt\u201d.",
    "IEC 60063:2015, <i>Preferred number series for resistors and capacitors</i>.",
    "IEC 60051-1, <i>Direct acting indicating analogue electrical measuring instruments and their "
    "accessories \u2013 Part 1: Definitions and general requirements common to all parts</i>.",
    "IEC 60028, <i>International standard of resistance for copper</i> (annealed copper, "
    "alpha<sub>20</sub> = 0.00393 / K).",
    "P. Antognetti and G. Massobrio, <i>Semiconductor Device Modeling with SPICE</i>, 2nd ed., "
    "McGraw-Hill, 1993 (diode model and its temperature law).",
    "T. C. Banwell and A. Jayakumar, \u201cExact analytical solution for current flow through diode with "
    "series resistance\u201d, <i>Electronics Letters</i> 36(4), 291\u2013292, 2000.",
    "C.-W. Ho, A. E. Ruehli and P. A. Brennan, \u201cThe modified nodal approach to network analysis\u201d, "
    "<i>IEEE Transactions on Circuits and Systems</i> 22(6), 504\u2013509, 1975.",
    "IEC 61010-1:2010, <i>Safety requirements for electrical equipment for measurement, control, and "
    "laboratory use \u2013 Part 1: General requirements</i>; IEC 61010-2-030 (measurement circuits).",
)
