"""Build and acceptance: calibration order, test points, acceptance tests, instruments (section 7)."""

from __future__ import annotations

import numpy as np
from reportlab.platypus import CondPageBreak, PageBreak, Spacer

from ...model import Diode, Resistor
from ...testpoints import pin_names
from ..layout import RULE, STYLES, Para, caution_box, esc, p, table
from ..text import celsius, hazard_reminder, is_hazardous, quantity, value_text
from . import ohms
from .context import Context
from .common import error_note, hazardous_position, natural, verdict_fill


#: Points of the acceptance tests, fractions of full scale (points of the accuracy check's sweep).
ACCEPTANCE_FRACTIONS = np.array([0.2, 0.5, 1.0])


# --- 7: build and acceptance ---------------------------------------------------------------------------------
def _test_points(ctx: Context):
    """Nodes in order of their largest voltage, and the voltage of each (node, position) at full scale.

    From the accuracy check's sweep (nominal parts, reference temperature); a node
    outside a position's circuit has no entry.
    """
    net = ctx.net
    volts = {}
    nodes = sorted({n for e in net.elements for n in e.nodes})
    for q in net.positions:
        arr = ctx.arrays(q.name)
        for n in nodes:
            if n in arr.node_voltages_v:
                volts[(n, q.name)] = arr.node_voltages_v[n]
    key = {n: max([abs(volts.get((n, q.name), 0.0)) for q in net.positions]) for n in nodes}
    nodes.sort(key=lambda n: (key[n], natural(n)))
    return nodes, volts


def build(ctx: Context) -> list:
    """Calibration order and trims, test points, acceptance tables, instruments."""
    spec = ctx.spec
    out = [ctx.heading("Build and acceptance")]
    if ctx.net is None:
        return out + error_note(ctx, "Network", "network") + [PageBreak()]
    if ctx.accuracy is None:
        return out + error_note(ctx, "Accuracy check", "check") + [PageBreak()]
    net = ctx.net
    cls = spec.movement.class_index
    # calibration order
    out.append(p("Calibration order and trims", "h2"))
    steps = ["Measure the movement alone: coil resistance with a low-current ohmmeter (at most the full-scale "
             f"current, {value_text(spec.movement.i_fs_a, 'A')}), then the current for full-scale deflection from a "
             "current source; both should match the project file before any resistor is fitted. Set the mechanical "
             "zero with no input."]
    vpos = [q for q in net.positions if q.measures == "voltage"]
    ipos = [q for q in net.positions if q.measures == "current"]
    trims = [e.name for e in net.elements if isinstance(e, Resistor) and e.trimmer]
    if ipos:
        steps.append("Current ranges first, lowest range first: " + ", ".join(q.name for q in ipos) + ". On an "
                     "Ayrton ring the lowest range uses the whole ring, so its reading checks the ring's total against "
                     "the coil; the higher ranges then check each tap. Measure shunts below 10 ohm with four "
                     "wires (Kelvin).")
    if vpos:
        steps.append("Voltage ranges next, lowest range first: " + ", ".join(q.name for q in vpos) + ". In a "
                     "multiplier chain every higher range includes the lower segments, so a segment is only trimmed "
                     "after the ranges below it read correctly.")
    calibration = (ctx.check or {}).get("calibration") or []
    if calibration:  # planner.trim: the trimmers in order, each at its own position (DC ranges)
        steps += [c.split(". ", 1)[1] for c in calibration]
    acpos = [q for q in net.positions if q.kind.waveform == "sine"]  # the AC (rectifier) positions
    if acpos:
        steps.append("AC ranges after the DC ones: " + ", ".join(q.name for q in acpos) + ". Apply a sine of known "
                     "rms (a calibrator, or a low-distortion source checked with a true-rms meter) at 10 %, 50 % and "
                     "100 % of full scale; the readings should match the check's linearity table for that scale. "
                     "A distorted source reads off by its form factor (see the waveform errors of each range).")
    rpos = [q for q in net.positions if ohms.is_ohms(q)]
    if rpos:
        steps.append(ohms.zeroing_step(ctx, rpos))
    if not calibration and trims:
        steps.append("Trim positions: " + ", ".join(trims) + " (marked in the bill of materials); adjust each "
                     "at full scale of the lowest range that uses it.")
    elif not calibration:
        steps.append("No trimmer is planned. If a range misses the acceptance limits, select the value of its own "
                     "segment on test (the resistor between its tap and the tap below) rather than touching a lower "
                     "segment.")
    steps.append("Finally repeat the acceptance table below at the reference temperature "
                 f"({celsius(spec.ambient.t_ref_k)}), after the instrument has settled for at least an hour.")
    for i, s in enumerate(steps, start=1):
        out.append(Para(esc(s), STYLES["bullet"], bulletText=f"{i}."))
    # test points
    out.append(p("Test points: node voltages at full scale", "h2"))
    nodes, volts = _test_points(ctx)
    vmax = max([abs(v) for v in volts.values()] + [0.0])
    if is_hazardous(vmax):
        title, lines = hazard_reminder(f"Test voltages, here and in the acceptance tests below, reach "
                                       f"{value_text(vmax, 'V')}.")
        out.append(caution_box(title, lines))
        out.append(Spacer(1, 4))
    out.append(p("Voltage of each node against the input's minus terminal with the full-scale value applied to each "
                 "position (nominal parts, reference temperature). Node names are those of the schematic, each with "
                 "the part pin to probe. A dash: the node is not connected in that position.", "small"))
    names = [q.name for q in net.positions if any((n, q.name) in volts for n in nodes)]  # none: no column
    pins = pin_names(net)  # planner.testpoints: each node named by the parts' pins on it
    per = 6
    for start in range(0, len(names), per):
        chunk = names[start:start + per]
        rows = []
        for n in nodes:
            where = f"{n}: {pins[n]['name']}" if n in pins else n
            rows.append([where] + [quantity(volts[(n, q)], "V", 4) if (n, q) in volts else None for q in chunk])
        out.append(table(["Node: probe at"] + chunk, rows, [0.28] + [0.72 / per] * len(chunk),
                         align="l" + "r" * len(chunk)))
        out.append(Spacer(1, 6))
    # acceptance
    out.append(CondPageBreak(220))
    out.append(p("Acceptance tests", "h2"))
    if any(hazardous_position(q) for q in net.positions) and not is_hazardous(vmax):
        title, lines = hazard_reminder("The acceptance tests of the hazardous ranges apply hazardous voltages.")
        out.append(caution_box(title, lines))
        out.append(Spacer(1, 4))
    out.append(p(f"Apply each value from a source whose uncertainty is at most a quarter of the class "
                 f"({cls / 4:g} % of full scale); the reading must lie within the limits, which are the applied "
                 f"value \u00b1 the class ({cls:g} % of full scale, IEC 60051). <i>Expect</i> is the reading computed "
                 "with nominal parts at the reference temperature, clamp leakage included."
                 + (" On the AC positions (<i>rms~</i>) apply a sine of that rms value, 50 Hz, from a low-distortion "
                    "source: the pointer follows the mean and the scale is marked in rms of a sine, so a distorted "
                    "source reads off by its form factor." if acpos
                    else "")
                 + (" Ohms ranges: zero first (probes shorted), then connect each reference resistor; the class "
                    "is a share of the scale length, so the limits are the values the arc marks that far either "
                    "side of the resistor's own mark." if rpos else ""), "small"))
    rows, fills, outside, groups = [], [], [], []
    for q in net.positions:
        if ohms.is_ohms(q):
            groups.append(len(rows) + 1)
            more, out_of = ohms.acceptance_rows(ctx, q)
            fills += [(2, len(rows) + 1 + k, "overstress") for k, r in enumerate(more) if r[2].endswith(" !")]
            rows += more
            outside += out_of
            continue
        arr = ctx.arrays(q.name)
        applied = ACCEPTANCE_FRACTIONS * q.full_scale
        reading = [arr.reading_at(f) for f in ACCEPTANCE_FRACTIONS]
        tol = cls / 100.0 * q.full_scale
        groups.append(len(rows) + 1)
        for k, (a, r) in enumerate(zip(applied, reading)):
            inside = abs(r - a) <= tol
            if not inside:
                outside.append(f"{q.name} at {quantity(a, q.unit)}")
            limits = f"{quantity(a - tol, q.unit)} to {quantity(a + tol, q.unit)}"
            wave = " rms~" if q.kind.waveform == "sine" else ""  # an AC position: a sine of that rms
            rows.append([q.name, quantity(a, q.unit) + wave, quantity(r, q.unit) + ("" if inside else " !"),
                         "\u00b1 " + value_text(tol, q.unit), limits, "", ""])
            if not inside:
                fills.append((2, len(rows), "overstress"))
    rules = [("LINEABOVE", (0, g), (-1, g), 0.6, RULE) for g in groups[1:]]
    out.append(table(["Position", "Apply", "Expect", "Tolerance", "Limits", "Measured", "Pass"], rows,
                     [0.11, 0.13, 0.13, 0.12, 0.25, 0.15, 0.11], align="lrrrrll", zebra=False,
                     extra=[("GRID", (5, 1), (6, -1), 0.3, RULE)] + rules + verdict_fill(fills)))
    if outside:
        out.append(p(esc("'!': the computed reading is already outside the limits (" + ", ".join(outside) + "); "
                         "the built instrument will fail there unless the design is changed or trimmed."),
                     "caption"))
    # instruments
    out.append(p("Instruments needed", "h2"))
    inst = []
    if vpos:
        inst.append(f"DC voltage calibrator or stable supply with a reference voltmeter, 0 to "
                    f"{value_text(max(q.full_scale for q in vpos), 'V')}, uncertainty at most {cls / 4:g} % of the "
                    "lowest range's full scale, current-limited.")
    if ipos:
        inst.append(f"DC current source (or supply with series resistor and reference ammeter), "
                    f"{value_text(min(q.full_scale for q in ipos) * 0.2, 'A')} to "
                    f"{value_text(max(q.full_scale for q in ipos), 'A')}, uncertainty at most {cls / 4:g} %.")
    if acpos:
        inst.append(f"AC calibrator, or a low-distortion 50 Hz sine source checked with a true-rms reference meter, "
                    f"up to {value_text(max(q.full_scale for q in acpos if q.kind.source == 'voltage'), 'V')} rms"
                    if any(q.kind.source == "voltage" for q in acpos) else "AC current source (50 Hz sine)")
        inst[-1] += f", distortion under 0.1 % and uncertainty at most {cls / 4:g} % of full scale."
    references = ohms.reference_resistors(ctx, rpos) if rpos else None
    if references:
        inst.append(references)
    inst.append(f"Current source for the bare movement, up to {value_text(spec.movement.i_fs_a * 1.1, 'A')}.")
    inst.append("Digital multimeter (4\u00bd digits or better) for the test-point voltages and the resistor values; "
                "four-wire resistance for values below 10 ohm.")
    if any(isinstance(e, Diode) for e in net.elements):
        inst.append("Diode test (forward voltage) to check the clamp diodes' orientation before the movement is "
                    "fitted.")
    inst.append("Thermometer for the ambient temperature of the acceptance test.")
    for s in inst:
        out.append(Para(esc(s), STYLES["bullet"], bulletText="\u2022"))
    out.append(PageBreak())
    return out
