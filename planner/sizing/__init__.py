"""Sizing from real parts: multipliers, shunts and clamp taps from the E-series.

From a project's high-level request (:class:`planner.model.VoltageRanges`,
:class:`planner.model.CurrentRanges`, :class:`planner.model.ClampRequest`) the
sizer computes the ideal resistances with the handbook formulas, picks standard
values (single parts, or a pair in series or in parallel when one value misses by
more than the project allows), rates every part for the worst power and voltage
it sees, and lays out the explicit network (:class:`planner.model.NetworkSpec`)
that every analysis then solves. It never builds an Engine. The topology, the
designator order and the rating rules are documented in ``docs/sizing.md``.

What lives where
----------------
``formulas.py``
    The handbook formulas with their references: :func:`chain_segments`,
    :func:`separate_multipliers`, :func:`ayrton_total`, :func:`ayrton_taps`,
    :func:`ayrton_segments`, :func:`separate_shunts`, :func:`voltage_meter`.
``values.py``
    Part choice from a series: :class:`Choice`, :func:`choose_value` (single or
    best pair), :func:`split_choice` (k equal parts and a trim); the catalogue limits.
``request.py``
    Validation of the request (:func:`validate`), errors with file and line
    (:func:`request_error`, :func:`check_ranges` for a section's own checks).
``layout.py``
    The topology before values: :class:`Layout`, :class:`SegmentPlan`,
    :class:`SizingSection` (the hook a section of the request implements),
    :func:`lay_out`, node names, :func:`position_label`.
``sections/``
    One file per section of the request (DC voltage ranges, DC current ranges,
    clamps, the input fuse), registered in :data:`SECTIONS`.
``assemble.py``
    Designators and elements from a layout and its choices (:func:`assemble`).
``ratings.py``
    The linear estimate of stresses, the rating ladder and the splits.
``sizer.py``
    :func:`size` (Spec -> :class:`Sizing`) step by step, and :func:`sized_spec`.
``result.py``
    :class:`Sizing`, :class:`Segment`, :class:`PartPlan`, :class:`PositionIdeal`.
``report.py``
    :func:`sizing_json`, :func:`format_sizing_table`, :func:`network_yaml`.
"""

from .assemble import assemble
from .formulas import (
    ayrton_segments,
    ayrton_taps,
    ayrton_total,
    chain_segments,
    current_branch_ohm,
    ring_across,
    separate_multipliers,
    separate_shunts,
    voltage_meter,
)
from .layout import Device, Layout, SegmentPlan, SizingSection, Tap, lay_out, position_label
from .report import format_sizing_table, network_yaml, sizing_json
from .request import check_ranges, request_error, validate
from .result import PartPlan, PositionIdeal, Segment, Sizing
from .sections import SECTIONS
from .sizer import size, sized_spec
from .values import CATALOG_MAX_OHM, CATALOG_MIN_OHM, Choice, choose_value, split_choice

__all__ = [
    "CATALOG_MIN_OHM",
    "CATALOG_MAX_OHM",
    "chain_segments",
    "separate_multipliers",
    "ayrton_total",
    "ayrton_taps",
    "ayrton_segments",
    "separate_shunts",
    "current_branch_ohm",
    "ring_across",
    "voltage_meter",
    "choose_value",
    "split_choice",
    "Choice",
    "PartPlan",
    "Segment",
    "PositionIdeal",
    "Sizing",
    "size",
    "sized_spec",
    "sizing_json",
    "network_yaml",
    "format_sizing_table",
    "position_label",
    "validate",
    "request_error",
    "check_ranges",
    "Layout",
    "SegmentPlan",
    "Tap",
    "Device",
    "SizingSection",
    "SECTIONS",
    "lay_out",
    "assemble",
]
