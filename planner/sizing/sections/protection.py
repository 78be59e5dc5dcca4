"""Protection parts the sizer places (``protection:``): input PTC, fusible input resistor, ring crowbar, mA fuse.

Topology (node names of ``docs/sizing.md``, section 5):

- ``input_ptc: <model>``: a PTC thermistor ``RT1`` from ``plus`` to ``p_ptc`` ahead of
  every voltage position's contact;
- ``fusible_input: true``: a fusible resistor ``RF1`` of ``fusible_resistance`` after it
  (``p_ptc`` or ``plus`` to ``p_in``), with the maker's ``fusing`` points and
  ``breaking_voltage``;
- the voltage contacts are fed from the far side; the series resistance of both
  (the PTC's cold resistance plus the fusible resistor) comes off the first chain
  segment, or off every separate multiplier, so every range keeps its full scale;
- ``ring_crowbar: <diode model>``: ``ring_crowbar_count`` diodes in series in each
  direction from ``crowbar`` to common, and a switch pole joining ``crowbar`` to the
  current positions' feed (behind the input fuse, behind the mA fuse when there is
  one) in the current positions it serves: across the Ayrton ring on those ranges
  only (the same as ``clamps: - {across: ring, ...}``);
- ``ma_fuse: <fuse model>``: a second fuse from the current feed to ``a_ma`` that
  feeds the current ranges whose full scale is below its rated current;
- ``ohms_fuse: <fuse model>``: a fuse from ``plus`` to ``p_ohm``, the node the ohms
  ranges' batteries hang from, so that every current an outside voltage drives
  through an ohms range passes it; its cold resistance comes off every range's
  series resistor (``docs/ohms.md``, "Protection");
- ``ohms_crowbar: <diode model>``: ``ohms_crowbar_count`` diodes in series each
  way from ``ohms_crowbar`` to common, and a switch pole joining it to ``p_ohm``
  on the ohms positions of the first battery (``resistance.battery``): a voltage
  on those ranges fires it and opens the ohms fuse; the ranges on
  ``high_battery`` (an open-circuit voltage the stack would leak at) are left to
  the fuse and their parts' ratings. Needs ``ohms_fuse``.

Every other part is rated by the sizer for full scale and the declared maximum
input (:mod:`planner.sizing.ratings`); what it must carry until the protective part
acts is judged by ``planner faults``.
"""

from __future__ import annotations

import math
from ...model import Diode, Fuse, ProtectionRequest, Ptc, Resistor, Spec
from ..layout import COM, PLUS, Device, Layout, SizingSection
from ..request import request_error

#: Nodes the section adds.
P_PTC, P_IN, A_MA, CROWBAR, P_OHM, OHMS_CROWBAR = \
    "p_ptc", "p_in", "a_ma", "crowbar", "p_ohm", "ohms_crowbar"


def feed_ohm(spec: Spec) -> float:
    """Series resistance the protection puts ahead of the voltage multipliers [ohm] (cold PTC + fusible)."""
    pr = spec.protection
    if pr is None:
        return 0.0
    r = spec.parts.ptcs[pr.input_ptc].r_cold_ohm if pr.input_ptc else 0.0
    return r + (pr.fusible_ohm if pr.fusible_input else 0.0)


def crowbar_stack(layout: Layout, node: str, model: str, count: int, tag: str, line) -> None:
    """Diode stacks of ``count`` in series each way from ``node`` to common (forward: anode at the node)."""
    for direction in ("fwd", "rev"):
        stack = [node] + [f"{tag}_{direction}{i}" for i in range(1, count)] + [COM]
        for a, b in zip(stack[:-1], stack[1:]):
            anode, cathode = (a, b) if direction == "fwd" else (b, a)
            layout.devices.append(Device("D", Diode, (anode, cathode, model, line)))


def crowbar_holding_v(spec: Spec, model: str, count: int, i_a: float) -> float:
    r"""Voltage across a crowbar stack of ``count`` diodes carrying ``i_a`` forward [V] (reference temperature).

    Notes
    -----
    Each diode :math:`V = n V_t \ln(1 + I / I_s) + I R_s` (Shockley with series
    resistance; its leakage resistance is left out, a bound from above), with
    :math:`V_t = k T / q` at the reference ambient.

    References
    ----------
    W. Shockley, "The theory of p-n junctions in semiconductors", *Bell Syst.
    Tech. J.* 28 (1949) 435; the series resistance as in the SPICE diode model.
    """
    from ...solve.junction import thermal_voltage
    d = spec.parts.diodes[model]
    vt = float(thermal_voltage(spec.ambient.t_ref_k))
    return count * (d.n * vt * math.log1p(i_a / d.i_s_a) + i_a * d.r_s_ohm)


def ring_crowbar(spec: Spec, layout: Layout, model: str, count: int, line) -> None:
    """A crowbar across the ring: diode stacks from ``crowbar`` to common, and a switch pole joining it to the
    current feed (behind the mA fuse, if any) in the current positions that feed serves.

    The pole keeps the crowbar off the voltage positions, whose input shares the fused lead.
    """
    names = [p.name for p in layout.positions if p.measures == "current"]
    feed = layout.current_feed
    if layout.low_current_feed is not None:
        lim, feed = layout.low_current_feed
        names = [p.name for p in layout.positions if p.measures == "current" and p.full_scale < lim]
    layout.contacts.append((feed, CROWBAR, tuple(names)))
    crowbar_stack(layout, CROWBAR, model, count, "crowbar", line)


class ProtectionSizing(SizingSection):
    """The ``protection`` section: parts placed as they are, ahead of the voltage and current positions."""

    key = "protection"

    def validate(self, spec: Spec) -> None:
        pr = spec.protection
        if (pr.input_ptc or pr.fusible_input) and spec.voltage is None:
            raise request_error(spec, "protection.input_ptc and fusible_input guard the voltage ranges, but the "
                                "project has no voltage section", pr.line)
        if (pr.ring_crowbar or pr.ma_fuse) and (spec.current is None or not spec.current.fuse):
            raise request_error(spec, "protection.ring_crowbar and ma_fuse sit behind the current ranges' fuse; "
                                "give current.fuse (a crowbar without a fuse would short the source for good)",
                                pr.line)
        if pr.ohms_fuse:
            _validate_ohms_fuse(spec, pr)
        if pr.ohms_crowbar and not pr.ohms_fuse:
            raise request_error(spec, "protection.ohms_crowbar sits behind the ohms fuse; give protection.ohms_fuse "
                                "(a crowbar without a fuse would short the source for good)", pr.line)
        if pr.ma_fuse and not any(i < spec.parts.fuses[pr.ma_fuse].rated_current_a for i in spec.current.full_scales):
            raise request_error(spec, f"protection.ma_fuse '{pr.ma_fuse}' is rated below every current range's full "
                                "scale, so it would feed none; choose a fuse rated above the mA ranges", pr.line)

    def prepare(self, spec: Spec, layout: Layout) -> None:
        pr = spec.protection
        node = PLUS
        if pr.input_ptc:
            node = P_PTC
        if pr.fusible_input:
            node = P_IN
        layout.voltage_feed = node
        layout.feed_ohm = feed_ohm(spec)
        if pr.ma_fuse:
            layout.low_current_feed = (spec.parts.fuses[pr.ma_fuse].rated_current_a, A_MA)
        if pr.ohms_fuse:
            layout.ohms_feed = P_OHM
            layout.ohms_feed_ohm = spec.parts.fuses[pr.ohms_fuse].r_cold_ohm

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        pr = spec.protection
        rp = spec.parts.resistors
        here = PLUS
        if pr.input_ptc:
            layout.devices.append(Device("RT", Ptc, (here, P_PTC, pr.input_ptc, pr.line)))
            here = P_PTC
        if pr.fusible_input:
            layout.devices.append(Device("RF", _fusible, (here, P_IN, pr, rp)))
        if pr.ma_fuse:
            layout.devices.append(Device("F", Fuse, (layout.current_feed, A_MA, pr.ma_fuse, pr.line)))
        if pr.ring_crowbar:
            ring_crowbar(spec, layout, pr.ring_crowbar, pr.ring_crowbar_count, pr.line)
        if pr.ohms_fuse:
            layout.devices.append(Device("F", Fuse, (PLUS, P_OHM, pr.ohms_fuse, pr.line)))
        if pr.ohms_crowbar:
            names = tuple(n for n, j in layout.ohms_battery.items() if j == 0)
            layout.contacts.append((P_OHM, OHMS_CROWBAR, names))
            f = spec.parts.fuses[pr.ohms_fuse]
            hold = crowbar_holding_v(spec, pr.ohms_crowbar, pr.ohms_crowbar_count, f.rated_current_a)
            layout.crowbars.append((OHMS_CROWBAR, names, hold + f.rated_current_a * f.r_cold_ohm))
            crowbar_stack(layout, OHMS_CROWBAR, pr.ohms_crowbar, pr.ohms_crowbar_count, "ohms_crowbar", pr.line)


def _validate_ohms_fuse(spec: Spec, pr: ProtectionRequest) -> None:
    """Refuse an ohms fuse without ohms ranges (its rating is checked against the ranges where they are laid
    out: :func:`planner.sizing.sections.resistance.check_ohms_fuse`)."""
    if spec.resistance is None:
        raise request_error(spec, "protection.ohms_fuse guards the ohms ranges, but the project has no resistance "
                            "section; drop ohms_fuse or add the ranges", pr.line)


def _fusible(name, a, b, pr: ProtectionRequest, rp) -> Resistor:
    """The fusible input resistor: the project's resistor tolerance and tempco, its own fusing data."""
    return Resistor(name, a, b, pr.fusible_ohm, tolerance=rp.tolerance, tempco_per_k=rp.tempco_per_k,
                    power_w=rp.power_w, max_voltage_v=max(rp.max_voltage_v, pr.breaking_voltage_v),
                    distribution=rp.distribution, line=pr.line, fusible=True, fusing=pr.fusing,
                    breaking_voltage_v=pr.breaking_voltage_v)


def protection_lines(req: ProtectionRequest | None) -> list[str]:
    """The ``protection:`` section of a project file (``['protection: {}']`` for none)."""
    from ...tools import quantity
    if req is None:
        return ["protection: {}"]
    lines = ["protection:"]
    if req.input_ptc:
        lines.append(f"  input_ptc: {req.input_ptc}")
    if req.fusible_input:
        pts = ", ".join(f"[{quantity(p, 'W')}, {quantity(t, 's')}]" for p, t in req.fusing)
        lines += ["  fusible_input: true", f"  fusible_resistance: {quantity(req.fusible_ohm, 'ohm')}",
                  f"  fusing: [{pts}]"]
        if math.isfinite(req.breaking_voltage_v):
            lines.append(f"  breaking_voltage: {quantity(req.breaking_voltage_v, 'V')}")
    if req.ring_crowbar:
        lines += [f"  ring_crowbar: {req.ring_crowbar}", f"  ring_crowbar_count: {req.ring_crowbar_count}"]
    if req.ma_fuse:
        lines.append(f"  ma_fuse: {req.ma_fuse}")
    if req.ohms_fuse:
        lines.append(f"  ohms_fuse: {req.ohms_fuse}")
    if req.ohms_crowbar:
        lines += [f"  ohms_crowbar: {req.ohms_crowbar}", f"  ohms_crowbar_count: {req.ohms_crowbar_count}"]
    return lines
