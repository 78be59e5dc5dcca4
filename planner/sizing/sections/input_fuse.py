"""The input fuse of the current ranges (``current.fuse``): ``plus`` to ``a_fused``.

The current positions' contacts are fed from the fuse's far side (the layout's
``current_feed``); the voltage positions stay on ``plus`` (``docs/sizing.md``, section 5).
"""

from __future__ import annotations

from ...model import Fuse, Spec
from ..layout import FUSED, PLUS, Device, Layout, SizingSection


class InputFuseSizing(SizingSection):
    """``current.fuse``: one fuse between the input and the current positions' contacts."""

    key = "current"

    def asked(self, spec: Spec) -> bool:
        return spec.current is not None and bool(spec.current.fuse)

    def prepare(self, spec: Spec, layout: Layout) -> None:
        layout.current_feed = FUSED

    def lay_out(self, spec: Spec, layout: Layout) -> None:
        layout.devices.append(Device("F", Fuse, (PLUS, FUSED, spec.current.fuse, spec.current.line)))
