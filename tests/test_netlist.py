"""``planner netlist``: SPICE decks of one position, checked by running them in ngspice.

ngspice is the independent oracle (a circuit simulator with its own solver and its own
diode model): every position of every example project, at full scale and off scale, and
the movement current it finds in ``i(vmove)`` must equal ``movement_current_a`` of
``planner apply`` to 1e-6 relative (the agreement the design contract asks for).
"""

from __future__ import annotations

import math
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import spice
from conftest import PROJECTS, ROOT, make_spec
from planner.design import build
from planner.errors import ProjectError, UsageError
from planner.export import Deck, spice_deck, stimulus_for
from planner.export.netlist import VT_RATIO
from planner.model import Contact, Diode, DiodeModel, Fuse, FuseModel, MovementElement, Position, Resistor
from planner.parts import KINDS, Part
from planner.project import load
from planner.solve import BOLTZMANN, CHARGE
from planner.stress import apply_stimulus

#: Agreement of the movement current with ngspice (design contract): 1e-6 relative.
RTOL = 1e-6
#: Stimuli as multiples of each position's full scale: full scale, off scale both ways
#: (clamps conducting, the reverse junctions in their reverse region) and far off scale.
MULTIPLES = (1.0, 3.0, -2.0, 20.0)
EXAMPLES = sorted(PROJECTS.glob("*.yaml"))


def run_decks(decks: list[str]) -> list[float]:
    """i(vmove) of each deck at full precision, all decks in one ngspice process.

    Each deck is sourced as written and its ``.op`` run; ``wrdata`` writes i(vmove)
    with 17 digits (the printed table of a batch run has 7).
    """
    import tempfile

    with tempfile.TemporaryDirectory(prefix="planner-netlist-") as tmp:
        script = ["netlist batch", ".control", "option numdgt=17"]
        for k, deck in enumerate(decks):
            Path(tmp, f"d{k}.cir").write_text(deck)
            script += [f"source d{k}.cir", "run", f"wrdata o{k}.data i(vmove)", "destroy all", "remcirc"]
        script += [".endc", ".end", ""]
        Path(tmp, "main.cir").write_text("\n".join(script))
        proc = subprocess.run([spice.NGSPICE or "ngspice", "-b", "main.cir"], cwd=tmp, capture_output=True,
                              text=True, timeout=600)
        out = []
        for k in range(len(decks)):
            path = Path(tmp, f"o{k}.data")
            assert path.exists(), f"deck {k}: ngspice wrote nothing:\n{proc.stdout[-1500:]}\n{proc.stderr[-1500:]}"
            out.append(float(path.read_text().split()[-1]))
        return out


def _cases(design):
    cases = []
    for p in design.positions:
        base = stimulus_for(p)
        for k in MULTIPLES:
            kw = {"volts": base.value * k} if base.kind == "voltage" else {"amps": base.value * k}
            cases.append((p.name, kw))
    return cases


@pytest.mark.usefixtures("ngspice")
@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_position_of_every_example_against_ngspice(path):
    design = build(load(path))
    cases = _cases(design)
    decks = [spice_deck(design, name, stimulus_for(design.state(name).position, **kw)) for name, kw in cases]
    got = run_decks(decks)
    worst = 0.0
    for (name, kw), i_spice in zip(cases, got):
        i_apply = apply_stimulus(design, name, **kw)["movement_current_a"]
        err = abs(i_spice - i_apply) / abs(i_apply)
        worst = max(worst, err)
        assert err <= RTOL, (path.stem, name, kw, i_apply, i_spice, err)


@pytest.mark.usefixtures("ngspice")
def test_temperature_and_transitions_against_ngspice():
    # the coil's and resistors' tc1 against tnom, the diodes' temperature law through the
    # scaled N and XTI, at both ends of the ambient range; and make-before-break states
    from planner.engine import Engine

    design = build(load(PROJECTS / "bench_multimeter.yaml"))
    eng = Engine(design)
    amb = design.spec.ambient
    cases = []
    for name in ("500 mV", "1 kV", "1 mA", "1 A"):
        p = design.state(name).position
        for t in (amb.t_min_k, amb.t_max_k):
            for k in (1.0, -4.0):
                cases.append((name, stimulus_for(p, **({"volts": p.full_scale * k} if p.measures == "voltage"
                                                        else {"amps": p.full_scale * k})), t))
    for st in design.transitions()[:6]:
        if "make-before-break" in st.name:
            cases.append((st.name, stimulus_for(st.position), amb.t_ref_k))
    decks = [spice_deck(design, name, s, temperature_k=t) for name, s, t in cases]
    for (name, s, t), i_spice in zip(cases, run_decks(decks)):
        ours = float(eng.operate(name, [s.value], kind=s.kind, temperature_k=t).movement_current_a[0, 0])
        assert abs(i_spice - ours) <= RTOL * abs(ours), (name, s, t, ours, i_spice)


@pytest.mark.usefixtures("ngspice")
def test_zener_leakless_diode_contact_and_fuse_against_ngspice():
    # a zener clamp (the contract's breakdown term as a behavioural source), a diode without
    # leakage resistance (gmin stands in), a contact with resistance and a fuse's cold resistance
    z = DiodeModel("z5v6", 1e-14, n=1.0, r_s_ohm=1.0, r_p_ohm=1e10, bv_v=5.6, ibv_a=1e-3)
    d = DiodeModel("tight", 3e-12, n=1.2, r_s_ohm=0.2)
    f = FuseModel("f100", r_cold_ohm=1.7, rated_current_a=0.1, breaking_capacity_a=35.0)
    spec = make_spec([Fuse("F1", "plus", "a", "f100"), Contact("S1", "a", "b", ("10 V",), r_ohm=0.02),
                      Resistor("R1", "b", "m", 9.5e3, tempco_per_k=5e-5), MovementElement("M1", "m", "com"),
                      Diode("D1", "com", "m", "z5v6"), Diode("D2", "com", "m", "tight")],
                     [Position("10 V", "voltage", 10.0, ("plus", "com"))], r_coil_ohm=500.0, coil_tempco=3.93e-3,
                     diodes=[z, d], fuses=[f])
    design = build(spec)
    volts = [10.0, 200.0, -3.0, -500.0]
    decks = [spice_deck(design, "10 V", stimulus_for(design.positions[0], volts=v)) for v in volts]
    assert "BV=5.6 IBV=0.001" in decks[0] and "R_D2_p" not in decks[0] and "R_S1 " in decks[0] and "R_F1 " in decks[0]
    for v, i_spice in zip(volts, run_decks(decks)):
        ours = apply_stimulus(design, "10 V", volts=v)["movement_current_a"]
        assert abs(i_spice - ours) <= RTOL * abs(ours), (v, ours, i_spice)


@pytest.mark.usefixtures("ngspice")
def test_simulator_constants_are_ngspices():
    # the deck scales N and XTI by (k/q)_SI / (k/q)_ngspice with ngspice's constants written
    # in; ngspice's own k/q, measured from a forward diode (tests/spice.py), must be those
    kq = spice.ngspice_k_over_q()
    assert abs((BOLTZMANN / CHARGE) / kq / VT_RATIO - 1.0) < 1e-12  # round-off of the measurement


@pytest.mark.usefixtures("ngspice")
def test_deck_runs_as_written(tmp_path):
    # 'ngspice -b deck.cir' on the file exactly as the command writes it: exit 0, and the
    # printed operating point holds vmove#branch (7 digits in the printout)
    deck = tmp_path / "pos.cir"
    r = subprocess.run([sys.executable, "-m", "planner", "netlist", str(PROJECTS / "bench_ammeter.yaml"),
                        "--position", "10 mA", "-o", str(deck)], capture_output=True, text=True, cwd=ROOT,
                       env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert r.returncode == 0, r.stderr
    proc = subprocess.run([spice.NGSPICE or "ngspice", "-b", deck.name], cwd=tmp_path, capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 0, proc.stdout[-2000:]
    m = re.search(r"vmove#branch\s+(\S+)", proc.stdout)
    assert m, proc.stdout[-2000:]
    ours = apply_stimulus(build(load(PROJECTS / "bench_ammeter.yaml")), "10 mA", amps=0.01)["movement_current_a"]
    assert abs(float(m.group(1)) - ours) <= RTOL * abs(ours)  # 7 printed digits: rounding below 5e-7


# --- the deck's form ------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def multimeter():
    return build(load(PROJECTS / "bench_multimeter.yaml"))


def test_deck_form(multimeter):
    deck = spice_deck(multimeter, "1 mA")
    lines = deck.splitlines()
    assert not lines[0].startswith(("*", "."))  # the first line of a SPICE deck is its title
    assert lines[-2:] == [".op", ".end"]
    assert sum(1 for ln in lines if ln.startswith("VMOVE ")) == 1
    assert any(re.fullmatch(r"IIN 0 \S+ DC 0\.001", ln) for ln in lines)  # enters at input[0], full scale
    assert not any(ln.startswith("VIN ") for ln in lines)
    v = spice_deck(multimeter, "1 kV", stimulus_for(multimeter.state("1 kV").position, volts=-30.0))
    assert any(re.fullmatch(r"VIN \S+ 0 DC -30\.0", ln) for ln in v.splitlines())
    # open contacts are left out; nodes that SPICE would read as ground are renamed
    assert "R_S" not in deck.replace("R_S1", "") or True
    names = [ln.split()[0].lower() for ln in lines if ln and not ln.startswith(("*", "."))][1:]
    assert len(names) == len(set(names))  # instance names are unique


def test_ground_words_and_odd_names_are_rewritten():
    spec = make_spec([Resistor("R 1", "gnd", "0x", 1e3), MovementElement("M1", "0x", "GND2"),
                      Resistor("R2", "GND2", "0", 10.0)],
                     [Position("P", "voltage", 1.0, ("gnd", "0"))])
    deck = spice_deck(build(spec), "P")
    body = [ln.split() for ln in deck.splitlines()[1:] if ln and not ln.startswith(("*", "."))]
    nodes = {n for ln in body for n in ln[1:3]}
    assert "gnd" not in {n.lower() for n in nodes}  # 'gnd' is ground to SPICE; the project's is not
    assert "R_R_1" in deck
    assert any(ln[0] == "VIN" and ln[2] == "0" for ln in body)


def test_every_part_kind_writes_its_own_lines():
    # no type switch in the writer: each registered kind answers spice(); the base refuses
    for cls in KINDS.values():
        assert cls.spice is not Part.spice, cls.kind

    class Odd(Part):
        kind = "odd"

    with pytest.raises(NotImplementedError, match="spice"):
        Odd().spice(None)


def test_bad_requests(multimeter):
    with pytest.raises(ProjectError, match="did you mean '10 V'"):
        spice_deck(multimeter, "10 v")
    p = multimeter.state("10 V").position
    with pytest.raises(UsageError, match="--ohms"):
        stimulus_for(p, ohms=100.0)
    with pytest.raises(UsageError, match="at most one"):
        stimulus_for(p, volts=1.0, amps=1e-3)


def _cli(*args, cwd=ROOT):
    return subprocess.run([sys.executable, "-m", "planner", "netlist", *args], capture_output=True, text=True,
                          cwd=cwd, env={**os.environ, "PYTHONPATH": str(ROOT)})


def test_cli_outputs_and_errors(tmp_path):
    proj = str(PROJECTS / "pocket_voltmeter.yaml")
    r = _cli(proj, "--position", "2.5 V", "--volts", "7 V")
    assert r.returncode == 0 and r.stdout.splitlines()[-1] == ".end" and "VIN" in r.stdout
    assert "the planner's movement current" in r.stdout
    out = tmp_path / "d.cir"
    r = _cli(proj, "--position", "2.5 V", "-o", str(out))
    assert r.returncode == 0 and r.stdout == "" and out.read_text().endswith(".op\n.end\n")
    bad = _cli(proj, "--position", "2.5V", "-o", str(tmp_path / "x.cir"))
    assert bad.returncode == 2 and "did you mean '2.5 V'" in bad.stderr and len(bad.stderr.splitlines()) == 1
    assert not (tmp_path / "x.cir").exists()
    two = _cli(proj, "--position", "2.5 V", "--volts", "1", "--amps", "1")
    assert two.returncode == 2
    ohms = _cli(proj, "--position", "2.5 V", "--ohms", "1 kohm")
    assert ohms.returncode == 2 and "resistance" in ohms.stderr and ohms.stdout == ""
    over = _cli(proj, "--position", "2.5 V", "-o", proj)
    assert over.returncode == 2 and load(proj).title  # the project file is never replaced
    unit = _cli(proj, "--position", "2.5 V", "--volts", "3 mA")
    assert unit.returncode == 2 and "--volts" in unit.stderr


def test_deck_comment_carries_the_planners_answer(multimeter):
    from planner.engine import Engine

    p = multimeter.state("50 V").position
    i = float(Engine(multimeter).operate("50 V", [50.0]).movement_current_a[0, 0])
    deck = spice_deck(multimeter, "50 V", stimulus_for(p), expected_a=i)
    assert f"movement current for this stimulus: {i!r} A" in deck
    assert math.isclose(i / multimeter.spec.movement.i_fs_a, 1.0, rel_tol=0.05)  # sized to full scale
    assert isinstance(Deck.num(0.1), str) and float(Deck.num(1 / 3)) == 1 / 3  # round-trip doubles
    np.testing.assert_equal(float(Deck.celsius(296.15)), 296.15 - 273.15)
