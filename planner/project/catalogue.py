"""The ``parts:`` section: resistor defaults and the diode, fuse, PTC and varistor models elements name.

Each catalogue entry is read by its part kind (``ResistorParts.read``,
``DiodeModel.read``, ``FuseModel.read`` of ``planner.parts``); this module reads
the section's shape and the model names.
"""

from __future__ import annotations

from .. import model
from .reader import Reader
from .tree import Node

__all__ = ["PARTS_KEYS", "read_parts"]

PARTS_KEYS = ("resistors", "diodes", "fuses", "ptcs", "varistors")


def read_parts(ctx: Reader, node: Node | None) -> model.Parts:
    """The catalogue (defaults when the file has no ``parts:``)."""
    if node is None:
        return model.Parts()
    m = ctx.mapping(node, "parts", PARTS_KEYS, "{resistors: {...}, diodes: {...}, fuses: {...}}")
    resistors = model.ResistorParts()
    rn = m.get("resistors")
    if rn is not None:
        cls = model.ResistorParts
        resistors = cls.read(ctx.mapping(rn, "parts.resistors", cls.file_keys, cls.file_example))
    diodes = _models(ctx, m.get("diodes"), "parts.diodes", model.DiodeModel,
                     "{si_generic: {saturation_current: 5 nA}}")
    fuses = _models(ctx, m.get("fuses"), "parts.fuses", model.FuseModel, "{f_100ma: {cold_resistance: 2 ohm, ...}}")
    ptcs = _models(ctx, m.get("ptcs"), "parts.ptcs", model.PtcModel, model.PtcModel.file_example)
    varistors = _models(ctx, m.get("varistors"), "parts.varistors", model.VaristorModel,
                        model.VaristorModel.file_example)
    return model.Parts(resistors=resistors, diodes=diodes, fuses=fuses, ptcs=ptcs, varistors=varistors)


def _models(ctx: Reader, node: Node | None, where: str, cls, example: str) -> dict:
    """The named models of one catalogue mapping, each read by ``cls.read``."""
    out: dict = {}
    if node is None:
        return out
    ctx.mapping(node, where, tuple(node.value) if node.kind == "map" else (), example)
    for name, sub in node.value.items():
        if not name.strip():
            ctx.fail(f"{where}: a model needs a name, e.g. si_generic", node.key_lines[name])
        out[name] = cls.read(ctx.mapping(sub, f"{where}.{name}", cls.file_keys, cls.file_example), name)
    return out
