"""Tests of planner.protect.write: the project file the search writes, loaded back.

The file is checked as a user would: loaded and built by the planner (graph
checks), its values against the IEC 60063 tables of an independent package.
"""

from __future__ import annotations

import math
import shutil

import pytest

from planner import model as m
from planner.design import build
from planner.engine import Engine
from planner.errors import UsageError
from planner.project import load
from planner.protect import clamp_diodes, protect_project, protected_text, write_protected

from conftest import VOLTMETER

SHARE = 0.25  # the default requirement: a quarter of the class at the hottest ambient


@pytest.fixture(scope="module")
def pocket():
    """The pocket voltmeter and the clamp search's best placement as the chosen one.

    The search chooses a placement only when the misrange matrix says it protects at
    least as well as the project as given (tests/test_protect_judged.py); the writing
    itself is checked here on the best placement the clamp search found.
    """
    spec = load(VOLTMETER)
    result = protect_project(spec, share=SHARE)
    return spec, dict(result, chosen=result["pareto"][0])


@pytest.fixture(scope="module")
def written(pocket, tmp_path_factory):
    spec, result = pocket
    out = tmp_path_factory.mktemp("protect") / "pocket_protected.yaml"
    out.write_text(protected_text(spec, result), encoding="utf-8")
    return load(out)


# --- the written file ------------------------------------------------------------------------------


def test_written_file_loads_validates_and_uses_fresh_designators(pocket, written):
    ref = pytest.importorskip("eseries")  # independent IEC 60063 tables (PyPI package 'eseries')
    spec, result = pocket
    Engine(build(written))  # graph checks pass
    chosen = result["chosen"]
    names = {e.name for e in written.network.elements}
    old = {e.name for e in spec.network.elements}
    for n in clamp_diodes(spec.network):
        assert n not in names  # the old clamps are gone...
    new_diodes = set(clamp_diodes(written.network))
    assert new_diodes and not (new_diodes & old)  # ...and the new ones have fresh designators
    assert len(new_diodes) == chosen["parts_count"] - (1 if chosen["site_kind"] == "split" else 0)
    if chosen["site_kind"] == "split":
        assert chosen["split_element"] not in names
        split = [e for e in written.network.elements if isinstance(e, m.Resistor) and e.name not in old]
        assert len(split) == 2  # the split resistor replaced by two parts
        values = [e.value_ohm for e in split]
        for v in values:
            # IEC 60063 E96 value, per the PyPI package 'eseries' (find_nearest returns the value itself)
            assert math.isclose(ref.find_nearest(ref.E96, v), v, rel_tol=1e-9), v
        target = spec.network.element(chosen["split_element"]).value_ohm
        allowed = spec.analysis.allowed_share * spec.movement.class_index / 100.0
        assert abs(sum(values) - target) <= allowed * target
        assert min(values) == chosen["split_ohm"]


def test_write_never_overwrites_the_input(pocket, tmp_path):
    spec, result = pocket
    copy = tmp_path / "pocket.yaml"
    shutil.copy(VOLTMETER, copy)
    original = copy.read_bytes()
    local = load(copy)
    with pytest.raises(UsageError):
        write_protected(local, result, copy)
    assert copy.read_bytes() == original


def test_text_keeps_the_old_network_as_comments(pocket):
    spec, result = pocket
    text = protected_text(spec, result)
    assert "Fenwick Street teaching workshop" in text  # the file's own comments survive
    assert "# The network before the protection search" in text
    assert text.count("\nnetwork:") == 1
