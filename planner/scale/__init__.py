"""Scale plates: dial artwork at 1:1 with ticks placed by the solved nominal response.

``planner scale FILE -o PLATE.pdf [--svg PLATE.svg] [--json]`` draws one arc
per distinct scale (the shared linear DC scale with a label row per group of
ranges, each AC scale of its own, each ohms scale), with the pivot, cutting
marks, an optional mirror band and a title block.

Modules: :mod:`.ticks` (which values to mark, where: pure), :mod:`.text`
(type metrics and label boxes), :mod:`.plate` (layout), :mod:`.render` (PDF via
reportlab, SVG written directly), :mod:`.solved` (the solver seam, the shared
DC scale, the command's result and JSON).

Examples
--------
>>> from planner.project import load                                    # doctest: +SKIP
>>> result = scale_project(load("projects/bench_multimeter.yaml"))       # doctest: +SKIP
>>> open("plate.pdf", "wb").write(plate_pdf(result.plate))               # doctest: +SKIP
"""

from .plate import Plate, PlateError, PlateInfo, build_plate
from .render import fit_scale, plate_drawing, plate_pdf, plate_svg
from .solved import (PositionCheck, ScaleResult, format_scale, has_junction, linear_definitions, nominal_response,
                     sampled_response, scale_json, scale_project)
from .place import place
from .ticks import Band, Response, Scale, ScaleDef, ScalePosition, Tick

__all__ = [
    "Band", "Plate", "PlateError", "PlateInfo", "PositionCheck", "Response", "Scale", "ScaleDef", "ScalePosition",
    "ScaleResult", "Tick", "build_plate", "fit_scale", "format_scale", "has_junction", "linear_definitions",
    "nominal_response", "place", "plate_drawing", "plate_pdf", "plate_svg", "sampled_response", "scale_json",
    "scale_project",
]
