"""Tests of planner.protect.context: the search context prepared from a project."""

from __future__ import annotations

from dataclasses import replace

import pytest

from planner import model as m
from planner.design import build
from planner.errors import ProjectError, UsageError
from planner.protect import SearchContext, protect_project


def test_share_per_position(voltmeter_spec):
    spec = voltmeter_spec
    with pytest.raises(UsageError, match="no position"):
        protect_project(spec, share={"0.7 V": 0.2})
    ctx = SearchContext(build(spec), {"0.5 V": 0.5}, None, 100, None)
    assert ctx.limits["0.5 V"] == 0.5 * spec.movement.class_index
    assert ctx.limits["10 V"] == 0.25 * spec.movement.class_index


def test_project_without_diode_models_is_a_project_error(voltmeter_spec):
    spec = voltmeter_spec
    net = spec.network
    bare = replace(spec, network=replace(net, elements=tuple(e for e in net.elements if not isinstance(e, m.Diode))),
                   parts=replace(spec.parts, diodes={}))
    with pytest.raises(ProjectError, match="no diode models"):
        protect_project(bare)
