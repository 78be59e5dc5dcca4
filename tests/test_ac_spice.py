"""AC ranges against ngspice's transient analysis: a sine through the same network, the same diode equations.

The deck is the one of ``tests/spice.py`` (the contract's element equations written
for ngspice: see that module's notes) with the swept DC source replaced by a
``SIN`` source and the ``.dc`` line by a ``.tran`` over one cycle of 50 Hz with a
fixed largest step. The network has no capacitance (ngspice's diode has none with
``CJO`` and ``TT`` at their defaults of zero), so every time point is a DC operating
point and the transient's cycle mean (trapezoid over its time points) is the same
integral the planner's cycle rule computes. Agreement asked for: 1e-5 relative of
the mean movement current (the time step is the limit: 20 000 steps per cycle leave
the trapezoid about (2 pi / 20 000)^2 / 12, 1e-8, from the integral on a smooth
stretch and a little more at the diodes' knees).
"""

from __future__ import annotations

import math
import os
import subprocess
import tempfile

import numpy as np
import pytest

import spice
from planner.design import build
from planner.engine import Engine
from planner.project import loads

pytestmark = pytest.mark.usefixtures("ngspice")

#: Time steps per cycle of the transient.
STEPS = 20_000
#: Agreement of the mean movement current (brief): 1e-5 relative.
RTOL = 1e-5
#: Simulator options of the transient: the DC decks' reltol of 1e-12 stalls ngspice's time step
#: ("timestep too small"); 1e-9 does not, and leaves the agreement near 1e-7.
TRAN_OPTIONS = "reltol=1e-9 abstol=1e-15 vntol=1e-12 itl1=500 itl2=200"

PROJECT = """title: rectifier oracle meter (invented)
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
parts:
  resistors: {series: E96, tolerance: 0.1 %, tempco: 25 ppm/K}
  diodes:
    d1: {saturation_current: 5 nA, emission: 1.9, series_resistance: 0.5 ohm, leakage_resistance: 1 Gohm}
"""


def transient_mean(eng: Engine, position: str, rms: float, t_k: float, kind: str, freq: float = 50.0) -> float:
    """Mean movement current over one cycle of a sine of ``rms`` by ngspice's ``.tran`` [A]."""
    deck = spice.netlist(eng, position, kind, [-1.0, 1.0], t_k, options=TRAN_OPTIONS)
    src = "Vstim" if kind == "voltage" else "Istim"
    period = 1.0 / freq
    step = period / STEPS
    lines = []
    for line in deck.splitlines():
        if line.startswith(f"{src} "):
            head = line.split(" DC ")[0]
            line = f"{head} SIN(0 {math.sqrt(2.0) * rms!r} {freq!r})"
        elif line.startswith(".dc "):
            line = f".tran {step!r} {period!r} 0 {step!r}"
        lines.append(line)
    with tempfile.TemporaryDirectory(prefix="planner-tran-") as tmp:
        path = os.path.join(tmp, "deck.cir")
        with open(path, "w") as f:
            f.write("\n".join(lines))
        subprocess.run([spice.NGSPICE or "ngspice", "-b", path], cwd=tmp, capture_output=True, text=True,
                       timeout=300)
        data = np.loadtxt(os.path.join(tmp, spice.OUT_FILE), skiprows=1)
    cols = spice.columns(deck)
    time = data[:, 0]
    assert abs(time[-1] - period) < 1e-9 * period, "ngspice stopped before the end of the cycle"
    i_m = data[:, 1 + next(j for j, c in enumerate(cols) if "movement" in c.split("="))]
    return float(np.trapezoid(i_m, time) / (time[-1] - time[0]))


@pytest.mark.parametrize("body,position,rms", [
    ("ac_voltage: {arrangement: chain, full_scales: [2.5 V, 10 V], rectifier: bridge, diode: d1}\n", "2.5 V~", 2.5),
    ("ac_voltage: {arrangement: chain, full_scales: [2.5 V, 10 V], rectifier: bridge, diode: d1}\n", "10 V~", 4.0),
    ("ac_voltage: {arrangement: separate, full_scales: [2.5 V], rectifier: half_wave, diode: d1}\n", "2.5 V~", 2.0),
    ("ac_current: {arrangement: separate, full_scales: [10 mA], rectifier: bridge, diode: d1}\n", "10 mA~", 0.01),
])
@pytest.mark.parametrize("t_c", [23.0, 40.0])
def test_ac_network_against_ngspice_transient(body, position, rms, t_c):
    """The sized AC network: mean movement current over a cycle, planner against ngspice ``.tran``, to 1e-5."""
    eng = Engine(build(loads(PROJECT + body, "oracle.yaml")))
    t_k = 273.15 + t_c
    pos = eng.design.net.position(position)
    ours = float(eng.operate(position, [rms], temperature_k=t_k).movement_current_a[0, 0])
    theirs = transient_mean(eng, position, rms, t_k, pos.kind.source)
    np.testing.assert_allclose(ours, theirs, rtol=RTOL)  # ngspice .tran, 20 000 steps per cycle
