"""The ``protection:`` section: the protection parts the sizer places (``docs/project-file.md``)."""

from __future__ import annotations

import math

from .. import model
from ..parts.fusible import read_points
from .reader import Reader
from .tree import Node

__all__ = ["PROTECTION_KEYS", "read_protection"]

#: Keys of the ``protection`` section.
PROTECTION_KEYS = ("input_ptc", "fusible_input", "fusible_resistance", "fusing", "breaking_voltage",
                   "ring_crowbar", "ring_crowbar_count", "ma_fuse", "ohms_fuse", "ohms_crowbar",
                   "ohms_crowbar_count")


def read_protection(ctx: Reader, node: Node | None, parts: model.Parts) -> model.ProtectionRequest | None:
    """The ``protection`` section (``ctx`` is the loader's reader; models checked against ``parts``)."""
    if node is None:
        return None
    m = ctx.mapping(node, "protection", PROTECTION_KEYS, "{input_ptc: ptc_1k, ring_crowbar: si_3a}")

    def ref(key, models, kind):
        n = m.get(key)
        return None if n is None or n.is_null else m.model(key, models, kind, "name")

    ptc = ref("input_ptc", parts.ptcs, "ptc")
    crowbar = ref("ring_crowbar", parts.diodes, "diode")
    ma_fuse = ref("ma_fuse", parts.fuses, "fuse")
    ohms_fuse = ref("ohms_fuse", parts.fuses, "fuse")
    ohms_crowbar = ref("ohms_crowbar", parts.diodes, "diode")
    fusible = m.boolean("fusible_input", False)
    r_f = m.qty("fusible_resistance", "resistance", None, check="pos")
    bv = m.qty("breaking_voltage", "voltage", math.inf, check="pos")
    pts = read_points(m, "fusing")
    if fusible and (r_f is None or not pts):
        m.fail("protection.fusible_input needs 'fusible_resistance: 1 kohm' and 'fusing: [[power, time], ...]' "
               "(the maker's points of the fusible resistor)", m.line)
    count = m.integer("ring_crowbar_count", 2, 1, 50, "2")
    ohms_count = m.integer("ohms_crowbar_count", 4, 1, 50, "4")
    return model.ProtectionRequest(ptc, fusible, r_f, pts, bv, crowbar, count, ma_fuse, m.line,
                                   ohms_fuse=ohms_fuse, ohms_crowbar=ohms_crowbar, ohms_crowbar_count=ohms_count)
