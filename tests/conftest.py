"""Shared fixtures: the example projects, their engines, and a small-network builder.

``build_spec`` makes a :class:`planner.model.Spec` around an explicit network from
plain tuples, for the solver, network and engine checks that need a circuit drawn
for the purpose (a multiplier, a shunt, an Ayrton ring, a diode behind a resistor).
"""

from __future__ import annotations

import re

import os
import shutil
from pathlib import Path

import pytest

from planner import model
from planner.design import build
from planner.engine import Engine
from planner.project import load

ROOT = Path(__file__).resolve().parent.parent
PROJECTS = ROOT / "projects"
VOLTMETER = PROJECTS / "pocket_voltmeter.yaml"
AMMETER = PROJECTS / "bench_ammeter.yaml"

# An invented scenario: a three-range school-lab voltmeter the sizer builds (no explicit network); the protect
# tests search it.
SCHOOL = """\
# An invented scenario: a three-range DC voltmeter for a school physics lab bench.
title: Hollis Road lab voltmeter
movement: {full_scale_current: 100 uA, coil_resistance: 1 kohm, class: 2.5}
ambient: {reference: 23 degC, min: 15 degC, max: 35 degC}
parts:
  resistors: {series: E96, tolerance: 1 %, tempco: 100 ppm/K, power: 0.25 W, max_voltage: 250 V}
  diodes:
    si_small: {saturation_current: 5 nA, emission: 1.9, series_resistance: 0.5 ohm,
               leakage_resistance: 1 Gohm, max_current: 200 mA, surge_current: 1 A, max_power: 500 mW}
voltage: {arrangement: chain, full_scales: [1 V, 5 V, 25 V]}
clamps:
  - {across: movement, forward: si_small, reverse: si_small}
faults:
  max_input: 30 V
  sources:
    - {name: lab supply, voltage: 30 V, impedance: 0.1 ohm, current_limit: 2 A}
"""


@pytest.fixture(scope="session")
def voltmeter_spec() -> model.Spec:
    """The pocket voltmeter example (five chain ranges, silicon clamp pair across the movement)."""
    return load(VOLTMETER)


@pytest.fixture(scope="session")
def ammeter_spec() -> model.Spec:
    """The bench ammeter example (four-tap Ayrton ring, fuse, Schottky clamp pair)."""
    return load(AMMETER)


@pytest.fixture(scope="session")
def voltmeter(voltmeter_spec) -> Engine:
    return Engine(build(voltmeter_spec))


@pytest.fixture(scope="session")
def ammeter(ammeter_spec) -> Engine:
    return Engine(build(ammeter_spec))


def make_spec(elements, positions, *, i_fs_a=1e-3, r_coil_ohm=500.0, coil_tempco=0.0,
              diodes=(), fuses=(), t_ref_k=model.DEFAULT_T_REF_K, path=None, contact_style=None):
    """A Spec around an explicit network.

    Parameters
    ----------
    elements : iterable of planner.model elements
    positions : iterable of planner.model.Position
    i_fs_a, r_coil_ohm, coil_tempco : float
        The movement: full-scale current [A], coil resistance [ohm], tempco [1/K].
    diodes, fuses : iterable of DiodeModel / FuseModel
    t_ref_k : float
        Reference temperature [K].
    """
    movement = model.Movement(i_fs_a=i_fs_a, r_coil_ohm=r_coil_ohm, class_index=1.0, tempco_per_k=coil_tempco)
    parts = model.Parts(diodes={d.name: d for d in diodes}, fuses={f.name: f for f in fuses})
    ambient = model.Ambient(t_ref_k=t_ref_k, t_min_k=t_ref_k - 20.0, t_max_k=t_ref_k + 20.0)
    net = model.NetworkSpec(tuple(elements), tuple(positions), contact_style)
    return model.Spec(title="test network", movement=movement, parts=parts, ambient=ambient, network=net, path=path)


@pytest.fixture
def build_spec():
    """The :func:`make_spec` builder."""
    return make_spec


def _require_tools() -> bool:
    return os.environ.get("PLANNER_REQUIRE_TOOLS", "") not in ("", "0")


@pytest.fixture(scope="session")
def ngspice():
    """The ngspice executable; skips (or fails under PLANNER_REQUIRE_TOOLS=1) without it."""
    exe = shutil.which("ngspice")
    if exe is None:
        if _require_tools():
            pytest.fail("ngspice is not installed and PLANNER_REQUIRE_TOOLS=1 forbids skipping")
        pytest.skip("ngspice is not installed (Debian package 'ngspice'); the independent check cannot run")
    return exe



def bad_file_header(path) -> tuple[str, int]:
    """The ``# expect: ...`` message and ``# line: N`` of a malformed project file in tests/bad/."""
    first, second = path.read_bytes().split(b"\n")[:2]
    m1 = re.fullmatch(rb"# expect: (.+)", first)
    m2 = re.fullmatch(rb"# line: (\d+)", second)
    assert m1 and m2, f"{path.name} must start with '# expect: ...' and '# line: N'"
    return m1.group(1).decode("utf-8"), int(m2.group(1))


def supernodes(spec, closed) -> dict:
    """Nodes joined by closed zero-resistance contacts, as a node -> representative map."""
    from planner.network import UnionFind

    uf = UnionFind()
    for e in spec.network.elements:
        for node in e.nodes:
            uf.find(node)
        if isinstance(e, model.Contact) and e.name in closed and e.r_ohm == 0.0:
            uf.union(e.a, e.b)
    return {x: uf.find(x) for x in uf.parent}
