"""Benchmark decks of the solver's newer parts, and the ideal-junction stack (used by run.py).

* **Deck V, a varistor**: a varistor (V_1 = 120 V, alpha = 30) at the input of a
  voltmeter (470 ohm in front of it, 98 kohm and a 2 kohm / 50 uA movement behind
  it, a silicon clamp pair across the movement); three resistances drawn within
  +/-0.25 % in each build, 201 points from -1000 V to +1000 V.
* **Deck O, an ohms range**: a shunt-zeroed series ohmmeter (a 1.5 V battery of
  0.8 ohm, series and zero-adjust resistors, a range shunt, a clamp pair across the
  movement) with R_x = 1.5 kohm, a voltage from -30 V to +30 V applied through R_x
  (201 points, 0 V among them); five resistances drawn within +/-0.25 %.
* **Deck P, a tripped PTC**: a voltmeter with a PTC at its input (cold 100 ohm,
  tripped at a constant 0.5 W), 10 kohm and a 2 kohm / 50 uA movement behind it, in
  its tripped state: the network with the PTC's stand-in
  (:func:`planner.stress.assess.open_fuse_design`) settled at constant power by
  :func:`planner.stress.tripped.settle_all` for every point of a DC sweep of 201
  points from 200 V to 1000 V (where the source can deliver the power,
  V_s^2 >= 4 P R_rest); R1 drawn within +/-0.25 % in each build. The planner builds
  each build's engine before its timer starts and times the settling alone.
* **The stack**: ``planner faults tests/reliability/ideal_stack_50.yaml`` (a clamp of 50
  junctions of I_s = 1e-30 A in each direction at a tap, 1000 V maximum input) as a
  whole process, beside the same project with a single junction per direction.

ngspice reads each deck once and re-runs it per build with ``alter``
(``tests/spice_flat.py``: the varistor as a behavioural source with the same law, the
battery as a voltage source in its branch; deck P's tripped PTC as a behavioural
current source of constant power, written here by :meth:`PtcDeck.netlist`).
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


#: Deck P's PTC: cold 100 ohm, tripped at a constant 0.5 W (as tests/test_parts_ptc.py's).
PTC_P_W = 0.5
#: Deck P's resistances behind the PTC: R1 and the movement's coil [ohm].
PTC_R1_OHM, PTC_RM_OHM = 10e3, 2e3
#: Regularisation of deck P's constant-power source in ngspice [V^2]: I = P V / (V^2 + eps)
#: instead of P / V, finite through 0 V (where ngspice starts its iterations). Its relative
#: error is eps / V^2; the tripped PTC holds V >= 163 V on this sweep (the larger root at
#: 200 V with R1 at its lowest, R1 + R_m = 11.97 kohm), so the error is below 4e-11 there,
#: far below the 1e-9 the settling stops at.
PTC_EPS_V2 = 1e-6


class PtcDeck:
    """Deck P: a voltmeter whose input PTC has tripped and holds a constant power.

    plus -> P1 (PTC, tripped) -> a -> R1 -> m -> movement -> com. The planner side is
    :func:`planner.stress.tripped.settle_all` on the network with P1's stand-in
    (:func:`planner.stress.assess.open_fuse_design`), one engine per build; ngspice's is
    :meth:`netlist` with ``alter`` of R1 per build.
    """

    def __init__(self, builds: int, sweep=None):
        from planner.design import build as build_design
        from planner.engine import Engine
        from planner.stimulus import Stimulus
        from planner.stress.assess import open_fuse_design

        rng = np.random.default_rng(1)
        self.sweep = np.linspace(200.0, 1000.0, 201) if sweep is None else np.asarray(sweep, dtype=float)
        self.r1 = PTC_R1_OHM * (1.0 + 0.0025 * rng.uniform(-1.0, 1.0, builds))
        self.i_fs = 50e-6
        self.circuits = builds * len(self.sweep)
        self.stimuli = [Stimulus(f"{v:g} V", "voltage", float(v)) for v in self.sweep]
        self.engines = []
        for r1 in self.r1:
            design = build_design(ptc_voltmeter_spec(float(r1)))
            eng = Engine(open_fuse_design(design, frozenset({"P1"})))
            self.engines.append((eng, eng.state("0.6 V")))

    def solve(self):
        """The movement currents of every build and point, shape (builds, points) [A]."""
        from planner.stress.tripped import settle_all

        out = np.empty((len(self.engines), len(self.sweep)))
        for b, (eng, st) in enumerate(self.engines):
            for k, (_, wf) in enumerate(settle_all(eng, st, self.stimuli)):
                out[b, k] = wf.movement_current_a[0]
        return [out]

    def netlist(self, options: str) -> str:
        """The ngspice deck: the tripped PTC a constant-power current source, a DC sweep.

        ``.nodeset`` puts the first point of the sweep on the high-voltage root of
        V^2 - V_s V + P R = 0 (the stable tripped state; the low root and the spurious
        one the regularisation adds near 0 V are the others), and every later point
        starts from the one before it, on the same root.
        """
        s = self.sweep
        step = (s[-1] - s[0]) / (len(s) - 1)
        r_rest = PTC_R1_OHM + PTC_RM_OHM
        v0 = float(s[0])
        v_ptc = (v0 + math.sqrt(v0 * v0 - 4.0 * PTC_P_W * r_rest)) / 2.0
        num = spice_flat.spice._num
        v = "v(plus,a)"
        return "\n".join([
            "* deck P: a tripped PTC holding a constant power at a voltmeter's input",
            "* columns: applied movement", f"* points: {len(s)}",
            f"* value: R1 R1 {num(PTC_R1_OHM)}",
            f".options temp=27 tnom=27 gmin=0 {options}",
            "Vstim plus 0 DC 0",
            f"Bptc plus a I={num(PTC_P_W)}*{v}/({v}*{v}+{num(PTC_EPS_V2)})",
            f"R1 a m {num(PTC_R1_OHM)}",
            f"RM m x {num(PTC_RM_OHM)}",
            "Vm x 0 DC 0",
            f".nodeset v(a)={num(v0 - v_ptc)} v(m)={num((v0 - v_ptc) * PTC_RM_OHM / r_rest)}",
            f".dc Vstim {num(s[0])} {num(s[-1])} {num(step)}",
            ".control", "set wr_singlescale", "set wr_vecnames", "option numdgt=17", "run",
            f"wrdata {spice_flat.spice.OUT_FILE} v(plus) i(Vm)", ".endc", ".end", ""])

    def spice(self):
        """Deck makers (by options) and variants, as run.SpiceSide takes them."""
        return [self.netlist], [[{"R1": float(r / PTC_R1_OHM)} for r in self.r1]]


def ptc_voltmeter_spec(r1_ohm: float = PTC_R1_OHM):
    """plus -> PTC P1 -> R1 -> movement (50 uA, 2 kohm) -> com: one voltage range (deck P)."""
    from planner import model as m

    ptc = m.PtcModel("ptc_p", hold_current_a=0.010, trip_current_a=0.020, r_cold_ohm=100.0, max_voltage_v=1500.0,
                     max_current_a=1.0, tripped_power_w=PTC_P_W, time_to_trip=((0.2, 1.0),))
    mov = m.Movement(i_fs_a=50e-6, r_coil_ohm=PTC_RM_OHM, class_index=1.5, tempco_per_k=0.0)
    els = (m.Ptc("P1", "plus", "a", ptc.name),
           m.Resistor("R1", "a", "m", r1_ohm, tolerance=0.0, tempco_per_k=0.0, power_w=0.25, max_voltage_v=1e4),
           m.MovementElement("M1", "m", "com"))
    pos = (m.Position("0.6 V", "voltage", 50e-6 * (PTC_R1_OHM + PTC_RM_OHM + ptc.r_cold_ohm), ("plus", "com")),)
    return m.Spec("ptc deck", mov, m.Parts(ptcs={ptc.name: ptc}), network=m.NetworkSpec(els, pos))


def deck_p(builds: int) -> PtcDeck:
    return PtcDeck(builds)


def stack_commands(planner_exe):
    """``planner faults`` of the 50-stack project and of its one-junction copy (in a temp dir)."""
    tmp = Path(tempfile.mkdtemp(prefix="planner-stack-"))
    one = tmp / "ideal_stack_1.yaml"
    one.write_text(re.sub(r"count: 50", "count: 1", STACK.read_text(encoding="utf-8")), encoding="utf-8")
    return planner_exe + ["faults", str(STACK), "--json"], planner_exe + ["faults", str(one), "--json"]
