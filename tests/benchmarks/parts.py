"""Benchmark decks of the solver's newer parts, and the ideal-junction stack (used by run.py).

* **Deck V, a varistor**: a varistor (V_1 = 120 V, alpha = 30) at the input of a
  voltmeter (470 ohm in front of it, 98 kohm and a 2 kohm / 50 uA movement behind
  it, a silicon clamp pair across the movement); three resistances drawn within
  +/-0.25 % in each build, 201 points from -1000 V to +1000 V.
* **Deck O, an ohms range**: a shunt-zeroed series ohmmeter (a 1.5 V battery of
  0.8 ohm, series and zero-adjust resistors, a range shunt, a clamp pair across the
  movement) with R_x = 1.5 kohm, a voltage from -30 V to +30 V applied through R_x
  (201 points, 0 V among them); five resistances drawn within +/-0.25 %.
* **The stack**: ``planner faults tests/reliability/ideal_stack_50.yaml`` (a clamp of 50
  junctions of I_s = 1e-30 A in each direction at a tap, 1000 V maximum input) as a
  whole process, beside the same project with a single junction per direction.

ngspice reads each deck once and re-runs it per build with ``alter``
(``tests/spice_flat.py``: the varistor as a behavioural source with the same law, the
battery as a voltage source in its branch).
"""

from __future__ import annotations

import math
import re
import tempfile
from pathlib import Path

import numpy as np

import spice_flat
from flat_circuits import build
from planner.solve import Junctions, Varistors, solve, thermal_voltage

ROOT = Path(__file__).resolve().parents[2]
STACK = ROOT / "tests" / "reliability" / "ideal_stack_50.yaml"


class FlatDeck:
    """A solver-level deck: circuit, parameters, builds and sweep."""

    def __init__(self, circuit, r, drawn, builds, sweep, i_fs, movement, **kwargs):
        rng = np.random.default_rng(1)
        self.circuit, self.sweep, self.i_fs, self.movement, self.kwargs = circuit, sweep, i_fs, movement, kwargs
        self.r = np.tile(np.asarray(r, dtype=float), (builds, 1))
        for j in drawn:
            self.r[:, j] *= 1.0 + 0.0025 * rng.uniform(-1.0, 1.0, builds)
        self.r0 = np.asarray(r, dtype=float)
        self.circuits = builds * len(sweep)

    def solve(self):
        sol = solve(self.circuit, self.r, self.kwargs.get("junctions"), self.sweep,
                    varistors=self.kwargs.get("varistors"), emf=self.kwargs.get("emf"))
        return [np.asarray(sol.branch_current(self.movement))]

    def spice(self):
        """Deck makers (by options) and variants, as run.SpiceSide takes them."""
        def maker(opts):
            return spice_flat.netlist(self.circuit, self.r0, self.sweep, options=opts, movement=self.movement,
                                      **self.kwargs)
        names = [b.element for b in self.circuit.branches]
        variants = [{names[j]: float(self.r[b, j] / self.r0[j]) for j in range(len(names))}
                    for b in range(self.r.shape[0])]
        return [maker], [variants]


def _clamp_pair():
    nvt = 1.9 * float(thermal_voltage(300.0))
    return Junctions(*(np.array([v, v]) for v in (5e-9, nvt, math.inf, 1e-3, 0.5, 1e-9)))


def deck_v(builds: int) -> FlatDeck:
    c = build([("R1", "plus", "x"), ("R2", "x", "m"), ("M1", "m", "com")],
              diodes=[("D1", "m", "com"), ("D2", "com", "m")], varistors=[("RV1", "x", "com")])
    return FlatDeck(c, [470.0, 98e3, 2e3], [0, 1, 2], builds, np.linspace(-1000.0, 1000.0, 201), 50e-6, 2,
                    junctions=_clamp_pair(), varistors=Varistors(np.array([120.0]), np.array([30.0])))


def deck_o(builds: int) -> FlatDeck:
    c = build([("RX", "plus", "t"), ("RSH", "t", "com"), ("R1", "t", "a"), ("RZ", "a", "m"), ("M1", "a", "m"),
               ("R2", "m", "bp"), ("B1", "bp", "com")], diodes=[("D1", "a", "m"), ("D2", "m", "a")])
    emf = np.array([0.0, 0.0, 0.0, 0.0, 0.0, 0.0, -1.5])
    return FlatDeck(c, [1.5e3, 13.6, 10.0, 4.7e3, 2e3, 9.1e3, 0.8], [1, 2, 3, 4, 5], builds,
                    np.linspace(-30.0, 30.0, 201), 100e-6, 4, junctions=_clamp_pair(), emf=emf)


def stack_commands(planner_exe):
    """``planner faults`` of the 50-stack project and of its one-junction copy (in a temp dir)."""
    tmp = Path(tempfile.mkdtemp(prefix="planner-stack-"))
    one = tmp / "ideal_stack_1.yaml"
    one.write_text(re.sub(r"count: 50", "count: 1", STACK.read_text(encoding="utf-8")), encoding="utf-8")
    return planner_exe + ["faults", str(STACK), "--json"], planner_exe + ["faults", str(one), "--json"]
