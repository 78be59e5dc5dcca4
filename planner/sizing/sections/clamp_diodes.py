"""Clamps (``clamps:``): diode stacks across the movement or at taps up the multiplier.

A clamp ``at: movement`` goes from ``m_plus`` to common; ``at: {above_movement: R}``
declares a tap R above the movement (the voltage section splits its multiplier
there) and puts the stack from the tap to common. Forward diodes have the anode
toward the tap, reverse ones the cathode; ``count: n`` puts n in series in each
direction (``docs/sizing.md``, section 3). ``bidirectional: true`` makes one string
of n back-to-back pairs instead (zeners or TVS diodes: the forward model's cathode
toward the tap, its anode to the reverse model's anode), clamping both polarities
at breakdown plus one junction; a tap may split any segment of a multiplier chain.
``across: ring`` is a crowbar across the Ayrton ring on its own switch pole
(:func:`planner.sizing.sections.protection.ring_crowbar`).
"""

from __future__ import annotations

import math

from ...model import Diode, Spec
from ..layout import COM, M_PLUS, Device, Layout, SizingSection, Tap
from ..request import request_error
from .protection import ring_crowbar


class ClampDiodesSizing(SizingSection):
    """The ``clamps`` list: taps (``prepare``), then the diode stacks in file order."""

    key = "clamps"

    def asked(self, spec: Spec) -> bool:
        return bool(spec.clamps)

    def validate(self, spec: Spec) -> None:
        for cl in spec.clamps:
            self._validate_one(spec, cl)

    @staticmethod
    def _validate_one(spec: Spec, cl) -> None:
        if cl.forward is None and cl.reverse is None:
            raise request_error(spec, "a clamp needs a forward or a reverse diode model (or both)", cl.line)
        for model in (cl.forward, cl.reverse):
            if model is not None and model not in spec.parts.diodes:
                known = ", ".join(sorted(spec.parts.diodes)) or "none defined"
                raise request_error(
                    spec, f"clamp diode model '{model}' is not in parts.diodes (known: {known}); define it there", cl.line
                )
        if int(cl.count) < 1:
            raise request_error(spec, f"clamp count {cl.count} must be at least 1", cl.line)
        if isinstance(cl.at, str):
            if cl.at == "ring" and (spec.current is None or not spec.current.fuse):
                raise request_error(spec, "a clamp across the ring sits behind the current ranges' fuse; give "
                                    "current.fuse (a crowbar without a fuse would short the source for good)", cl.line)
            if cl.at not in ("movement", "ring"):
                raise request_error(
                    spec, f"clamp at '{cl.at}': use 'movement' or a resistance above the movement, e.g. '1 kohm'",
                    cl.line)
            return
        if spec.voltage is None:
            raise request_error(
                spec,
                "a clamp at a resistance above the movement splits the voltage multiplier, but the project "
                "has no voltage section; use at: movement",
                cl.line,
            )
        if not (float(cl.at) > 0 and math.isfinite(float(cl.at))):
            raise request_error(spec, f"clamp at {cl.at!r}: give a positive resistance above the movement", cl.line)

    def prepare(self, spec: Spec, layout: Layout) -> None:
        ohms = sorted({float(cl.at) for cl in spec.clamps if not isinstance(cl.at, str)})
        for j, r in enumerate(ohms, 1):
            line = next(x.line for x in spec.clamps if not isinstance(x.at, str) and float(x.at) == r)
            layout.taps.append(Tap(r, f"tap{j}", line))

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        tap_node = {t.ohm: t.node for t in layout.taps}
        for j, cl in enumerate(spec.clamps, 1):
            if cl.at == "ring":  # a crowbar across the ring, on its own switch pole
                for model in dict.fromkeys(x for x in (cl.forward, cl.reverse) if x is not None):
                    ring_crowbar(spec, layout, model, int(cl.count), cl.line)
                continue
            node = M_PLUS if isinstance(cl.at, str) else tap_node[float(cl.at)]
            if node not in layout.clamp_nodes:
                layout.clamp_nodes.append(node)
            if cl.bidirectional:  # back-to-back pairs: tap -|<- mid ->|- ... to common
                here = node
                for i in range(1, int(cl.count) + 1):
                    mid, nxt = f"clamp{j}_mid{i}", (COM if i == int(cl.count) else f"clamp{j}_pair{i}")
                    layout.devices.append(Device("D", Diode, (mid, here, cl.forward, cl.line)))
                    layout.devices.append(Device("D", Diode, (mid, nxt, cl.reverse, cl.line)))
                    here = nxt
                continue
            for direction, model in (("fwd", cl.forward), ("rev", cl.reverse)):
                if model is None:
                    continue
                stack = [node] + [f"clamp{j}_{direction}{i}" for i in range(1, int(cl.count))] + [COM]
                for a, b in zip(stack[:-1], stack[1:]):
                    # forward: anode toward the tap; reverse: cathode toward the tap
                    anode, cathode = (a, b) if direction == "fwd" else (b, a)
                    layout.devices.append(Device("D", Diode, (anode, cathode, model, cl.line)))
