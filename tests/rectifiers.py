"""Small rectifier-instrument networks for the cycle tests and the cycle benchmark.

Invented designs of the usual kinds (common practice for rectifier instruments):

* **bridge**: a multiplier R1 feeding a bridge of four silicon diodes with the
  movement across its DC corners;
* **half-wave**: R1 feeding one diode in series with the movement, and a second
  diode from the common terminal back to R1 that carries the other half cycle
  (it keeps the reverse voltage on the first diode at one forward drop).

The movement is 50 uA / 2 kohm with a copper coil. The multiplier is chosen so
that the mean movement current at the full-scale rms of a sine is the
full-scale current (nominal parts, reference temperature), the mean taken over
4096 equally spaced phases, so that the sizing does not depend on the rules
under test.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy.optimize import brentq

from planner import model as m
from planner.accuracy import draw_factors, parameters
from planner.design import build
from planner.engine import Engine

I_FS = 50e-6
R_COIL = 2e3
#: An invented small-signal silicon diode (the design's sketch values).
SI_SIGNAL = m.DiodeModel("si_signal", i_s_a=5e-9, n=1.9, r_s_ohm=0.5, r_p_ohm=1e9, i_s_spread=0.5)
T_REF = m.DEFAULT_T_REF_K
T_COLD = m.ZERO_CELSIUS_K + 0.0
T_HOT = m.ZERO_CELSIUS_K + 40.0
POSITION = "AC"


def _spec(elements, full_scale):
    movement = m.Movement(i_fs_a=I_FS, r_coil_ohm=R_COIL, class_index=1.5, tolerance=0.01)
    parts = m.Parts(diodes={SI_SIGNAL.name: SI_SIGNAL})
    net = m.NetworkSpec(tuple(elements), (m.Position(POSITION, "voltage", full_scale, ("in", "com")),))
    return m.Spec(title="rectifier test network", movement=movement, parts=parts, network=net)


def _r1(r_ohm):
    return m.Resistor("R1", "in", "a", r_ohm, tolerance=0.005, tempco_per_k=50e-6)


def bridge_spec(r1_ohm: float, full_scale: float = 2.5) -> m.Spec:
    d = SI_SIGNAL.name
    els = [_r1(r1_ohm), m.Diode("D1", "a", "p", d), m.Diode("D2", "com", "p", d),
           m.Diode("D3", "n", "a", d), m.Diode("D4", "n", "com", d), m.MovementElement("M1", "p", "n")]
    return _spec(els, full_scale)


def half_wave_spec(r1_ohm: float, full_scale: float = 2.5) -> m.Spec:
    d = SI_SIGNAL.name
    els = [_r1(r1_ohm), m.Diode("D1", "a", "p", d), m.MovementElement("M1", "p", "com"),
           m.Diode("D2", "com", "a", d)]
    return _spec(els, full_scale)


SPECS = {"bridge": bridge_spec, "half-wave": half_wave_spec}


def sine_mean_4096(engine: Engine, rms: float, **kwargs) -> np.ndarray:
    """Mean movement current over 4096 equally spaced phases of a sine [A], one per row."""
    x = math.sqrt(2.0) * rms * np.sin(2.0 * np.pi * np.arange(4096) / 4096)
    return np.mean(engine.operate(POSITION, x, kind="voltage", **kwargs).movement_current_a, axis=-1)


@lru_cache(maxsize=None)
def sized(kind: str, full_scale: float = 2.5) -> Engine:
    """The network of ``kind`` with R1 sized for I_fs mean at full-scale rms."""
    make = SPECS[kind]

    def excess(r):
        return float(sine_mean_4096(Engine(build(make(r, full_scale))), full_scale)[0]) - I_FS

    guess = (0.9003 if kind == "bridge" else 0.4502) * full_scale / I_FS
    r = brentq(excess, 0.05 * guess, 1.2 * guess, xtol=1e-3)
    return Engine(build(make(r, full_scale)))


def monte_carlo(engine: Engine, builds: int, seed: int = 1) -> tuple[dict, np.ndarray]:
    """Tolerance factors of ``builds`` builds, each at 0 degC and at 40 degC (2 x builds rows).

    Returns the factors (arrays of 2 x builds) and the temperatures [K] of the rows.
    """
    fac = draw_factors(parameters(engine), builds, np.random.default_rng(seed))
    fac = {k: np.concatenate([v, v]) for k, v in fac.items()}
    temps = np.concatenate([np.full(builds, T_COLD), np.full(builds, T_HOT)])
    return fac, temps


def evaluator(engine: Engine, factors=None, temperatures=None, rows=None):
    """``evaluate(x)`` for the cycle rules: source volts -> movement current [A], (rows, S)."""
    t = np.array([T_REF]) if temperatures is None else np.asarray(temperatures, dtype=float)
    f = factors
    if rows is not None:
        t = t[rows]
        f = {k: v[rows] for k, v in factors.items()} if factors else None

    def evaluate(x):
        return engine.operate(POSITION, x, kind="voltage", temperature_k=t, factors=f).movement_current_a

    return evaluate
