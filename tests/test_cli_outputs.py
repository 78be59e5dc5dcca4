"""Outputs and diode fits through the real command line: nothing the user did not name is touched.

Each case runs ``python -m planner.cli`` in a subprocess in its own empty working
folder (as ``tests/test_cli_errors.py`` does) and asserts the exit code, one line on
stderr with a remedy, no traceback, no warning lines, and that nothing was written or
replaced: the working folder stays empty and every input (and every device, FIFO,
link) is as it was. Each answer must come within 5 s; a slower run is repeated once on
its own (the machine is shared) and the repeat must meet the limit.

What is checked, and against what:
- output kinds: a character device (``/dev/null``, ``/dev/full``), a FIFO made with
  ``mkfifo``, a folder, a dangling symbolic link are refused; file kinds as POSIX
  defines them (IEEE Std 1003.1, ``<sys/stat.h>``), checked with ``os.stat`` after the run.
- the dossier's bill of materials is written only when named (``--bom``); both outputs
  are checked before either is written.
- ``-`` sends ``size --write-network`` and ``protect -o`` to stdout, and the YAML
  read back from stdout loads as a project.
- a project whose network is invalid is refused by ``dossier`` as by ``check``.
- ``fit-diode``: a held XTI that is not a number from 0 to 20, values no bench
  measurement gives, and points that do not follow the diode law. The Shockley law
  (W. Shockley, Bell System Technical Journal 28, 1949) makes the current rise
  monotonically with the voltage, so currents shuffled against their voltages cannot
  follow it; a straight line through the origin is Ohm's law, a resistor.
"""

from __future__ import annotations

import json
import os
import shutil
import stat
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pytest

from test_cli_errors import REMEDY, Run, run_cli

ROOT = Path(__file__).resolve().parent.parent
VOLTMETER = ROOT / "projects" / "pocket_voltmeter.yaml"
DRAWER = ROOT / "projects" / "drawer_diode.csv"
FLOATING = ROOT / "tests" / "bad" / "network" / "floating_node.yaml"

#: The requirement of this round: every answer within 5 s (wall time of the whole process).
LIMIT_S = 5.0

pytestmark = pytest.mark.skipif(os.name != "posix", reason="devices, FIFOs and links are POSIX")

SIZED = """\
title: Sizing bench   # an invented workshop
movement: {full_scale_current: 50 uA, coil_resistance: 2 kohm, class: 1.5}
voltage: {arrangement: chain, full_scales: [2.5 V, 10 V, 50 V]}
"""


def _points_at_23c() -> tuple[list[str], list[str]]:
    """Voltages and currents of the demo file's 23 degC rows, as written."""
    vs, cs = [], []
    for line in DRAWER.read_text(encoding="utf-8").splitlines():
        cells = line.split(",")
        if len(cells) == 3 and cells[2].strip() == "23":
            vs.append(cells[0].strip())
            cs.append(cells[1].strip())
    assert len(vs) >= 15
    return vs, cs


def _make_inputs(src: Path) -> dict:
    """Every input of the cases in ``src``; returns the names used in the argument templates."""
    src.mkdir()
    (src / "p.yaml").write_bytes(VOLTMETER.read_bytes())
    (src / "p.csv").write_bytes(VOLTMETER.read_bytes())  # a project whose name ends in .csv
    (src / "s.yaml").write_text(SIZED, encoding="utf-8")
    shutil.copy(DRAWER, src / "drawer_diode.csv")
    os.mkfifo(src / "pipe")
    (src / "dangling.pdf").symlink_to(src / "missing" / "x.pdf")
    vs, cs = _points_at_23c()
    order = np.random.default_rng(3).permutation(len(cs))  # seeded: the same shuffle every run
    rows = "\n".join(f"{v},{cs[k]}" for v, k in zip(vs, order))
    (src / "scrambled.csv").write_text("voltage_v,current_a\n" + rows + "\n", encoding="utf-8")
    ohmic = "\n".join(f"{0.1 * k:.1f},{1e-3 * k:.0e}" for k in range(1, 7))  # Ohm's law: 100 ohm
    (src / "resistor.csv").write_text("voltage_v,current_a\n" + ohmic + "\n", encoding="utf-8")
    good = "\n".join(f"{v},{c}" for v, c in zip(vs, cs))
    (src / "one_t.csv").write_text("voltage_v,current_a\n" + good + "\n", encoding="utf-8")
    (src / "big_v.csv").write_text("voltage_v,current_a\n" + good + "\n1e6,1e-3\n", encoding="utf-8")
    (src / "big_i.csv").write_text("voltage_v,current_a\n" + good + "\n0.7,1e300\n", encoding="utf-8")
    return {"p": src / "p.yaml", "pcsv": src / "p.csv", "s": src / "s.yaml", "drawer": src / "drawer_diode.csv",
             "pipe": src / "pipe", "dangling": src / "dangling.pdf", "scrambled": src / "scrambled.csv",
             "resistor": src / "resistor.csv", "one_t": src / "one_t.csv", "big_v": src / "big_v.csv",
             "big_i": src / "big_i.csv", "floating": FLOATING}


def _snapshot(folder: Path) -> dict:
    """Every entry of a folder: its kind and, for a regular file, its bytes and mtime."""
    out = {}
    for p in sorted(folder.iterdir()):
        st = os.lstat(p)
        if stat.S_ISREG(st.st_mode):
            out[p.name] = ("file", p.read_bytes(), st.st_mtime_ns)
        elif stat.S_ISLNK(st.st_mode):
            out[p.name] = ("link", os.readlink(p))
        else:
            out[p.name] = (stat.S_IFMT(st.st_mode),)
    return out


def _args(template, names) -> list[str]:
    return [a.format(**{k: str(v) for k, v in names.items()}) for a in template]


def assert_clean(run: Run, code: int, must_say: str, *, stdout_empty: bool = True):
    """Exit code, one stderr line with a remedy, no traceback, no warning lines, nothing written here."""
    where = f"planner {' '.join(run.args)}"
    assert run.returncode == code, (where, run.returncode, run.stderr[-2000:])
    if stdout_empty:
        assert run.stdout == "", (where, run.stdout[:500])
    assert "Traceback" not in run.stderr and "Warning" not in run.stderr, (where, run.stderr[-2000:])
    assert run.stderr.startswith("planner: ") and run.stderr.count("\n") == 1, (where, run.stderr)
    assert REMEDY.search(run.stderr), f"{where}: the message says no remedy: {run.stderr}"
    assert "internal error" not in run.stderr, (where, run.stderr)
    assert must_say in run.stderr, (where, run.stderr)
    assert run.leftovers == [], f"{where} wrote {run.leftovers} in the working folder"


def assert_quick(run: Run, cwd: Path):
    if run.elapsed_s < LIMIT_S:
        return
    again = run_cli(run.args, cwd)
    assert again.returncode == run.returncode
    assert again.elapsed_s < LIMIT_S, (
        f"planner {' '.join(run.args)} took {run.elapsed_s:.2f} s, and {again.elapsed_s:.2f} s when repeated alone")


# --- refused outputs and bad input: exit 2, nothing written or replaced ------------------------------------

#: (id, argument template, words the one-line message must hold)
REFUSED = [
    ("size_to_fifo", ["size", "{s}", "--write-network", "{pipe}"], "pipe: is a FIFO (named pipe), not a regular file"),
    ("size_to_dev_full", ["size", "{s}", "--write-network", "/dev/full"], "/dev/full: is a character device"),
    ("size_to_dangling_link", ["size", "{s}", "--write-network", "{dangling}"], "which does not exist"),
    ("size_json_and_stdout", ["size", "{s}", "--write-network", "-", "--json"], "cannot share stdout"),
    ("protect_to_dev_null", ["protect", "{p}", "-o", "/dev/null"], "/dev/null: is a character device"),
    ("protect_to_fifo", ["protect", "{p}", "-o", "{pipe}"], "is a FIFO"),
    ("protect_json_and_stdout", ["protect", "{p}", "-o", "-", "--json"], "cannot share stdout"),
    ("dossier_to_dev_null", ["dossier", "{p}", "-o", "/dev/null"], "/dev/null: is a character device"),
    ("dossier_to_dev_full", ["dossier", "{p}", "-o", "/dev/full"], "/dev/full: is a character device"),
    ("dossier_to_fifo", ["dossier", "{p}", "-o", "{pipe}"], "is a FIFO"),
    ("dossier_bom_to_fifo", ["dossier", "{p}", "-o", "out.pdf", "--bom", "{pipe}"], "is a FIFO"),
    ("dossier_bom_over_input", ["dossier", "{pcsv}", "-o", "p.pdf", "--bom", "{pcsv}"],
     "refusing to overwrite the input file"),
    ("dossier_bom_same_as_pdf", ["dossier", "{p}", "-o", "x.pdf", "--bom", "x.pdf"], "x.pdf is named for two outputs"),
    ("dossier_pdf_named_csv", ["dossier", "{p}", "-o", "bom.csv"], "give --bom bom.csv for the bill of materials"),
    ("dossier_to_stdout", ["dossier", "{p}", "-o", "-"], "cannot go to standard output"),
    ("dossier_to_folder", ["dossier", "{p}", "-o", "."], ".: is a folder"),
    ("dossier_invalid_network", ["dossier", "{floating}", "-o", "f.pdf", "--bom", "f.csv"],
     "node 't_2' is floating: only R3 touches it"),
    ("fit_xti_nan", ["fit-diode", "{drawer}", "--xti", "nan"], "--xti: nan cannot be held; give a number from 0 to 20"),
    ("fit_xti_inf", ["fit-diode", "{drawer}", "--xti=inf"], "--xti: inf cannot be held"),
    ("fit_xti_negative", ["fit-diode", "{drawer}", "--xti=-1"], "--xti: -1 cannot be held"),
    ("fit_megavolt", ["fit-diode", "{big_v}"], "big_v.csv:22: voltage_v: 1e6 V is beyond the 10000 V"),
    ("fit_1e300_amperes", ["fit-diode", "{big_i}"], "big_i.csv:22: current_a: 1e300 A is beyond the 1000 A"),
]

#: (id, argument template, words of the one-line verdict): the fit is not usable, exit 1
UNUSABLE = [
    ("fit_scrambled", ["fit-diode", "{scrambled}"], "the fit is not usable: "),
    ("fit_scrambled_json", ["fit-diode", "{scrambled}", "--json"], "the fit is not usable: "),
    ("fit_resistor", ["fit-diode", "{resistor}"], "the points are those of a resistor of about 100 ohm"),
]


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Every refused and unusable case, two at a time, against one folder of inputs."""
    base = tmp_path_factory.mktemp("cli_outputs")
    names = _make_inputs(base / "inputs")
    before = _snapshot(base / "inputs")
    cases = [(c[0], c[1]) for c in REFUSED + UNUSABLE]

    def one(case):
        name, template = case
        return name, run_cli(_args(template, names), base / name)

    with ThreadPoolExecutor(max_workers=2) as pool:
        done = dict(pool.map(one, cases))
    return done, before, _snapshot(base / "inputs"), names


def test_no_input_device_fifo_or_link_was_touched(runs):
    _, before, after, _ = runs
    assert after == before
    for dev in ("/dev/null", "/dev/full"):
        assert stat.S_ISCHR(os.stat(dev).st_mode), f"{dev} is no longer a character device"


@pytest.mark.parametrize("case", REFUSED, ids=[c[0] for c in REFUSED])
def test_refused(case, runs, tmp_path):
    name, _, words = case
    run = runs[0][name]
    assert_clean(run, 2, words)
    assert_quick(run, tmp_path)


@pytest.mark.parametrize("case", UNUSABLE, ids=[c[0] for c in UNUSABLE])
def test_points_that_do_not_follow_the_diode_law(case, runs, tmp_path):
    name, _, words = case
    run = runs[0][name]
    assert_clean(run, 1, words, stdout_empty=False)
    assert "paste under parts" not in run.stdout and "saturation_current:" not in run.stdout  # nothing to paste
    if name.endswith("json"):
        out = json.loads(run.stdout)
        assert out["usable"] is False and out["yaml"] is None and out["problems"]
    else:
        assert "NOT USABLE" in run.stdout
    assert_quick(run, tmp_path)


# --- outputs that are written: only what was named ------------------------------------------------------


def test_dossier_writes_no_csv_it_was_not_asked_for(tmp_path):
    src = tmp_path / "src"
    src.mkdir()
    project = src / "p.yaml"
    project.write_bytes(VOLTMETER.read_bytes())
    shutil.copy(DRAWER, src / "drawer_diode.csv")  # measured points that share the PDF's stem
    before = (src / "drawer_diode.csv").read_bytes()
    run = run_cli(["dossier", project, "-o", src / "drawer_diode.pdf", "--samples", "20", "--quiet"], tmp_path / "cwd")
    assert run.returncode == 0, run.stderr
    assert run.stderr == f"wrote {src / 'drawer_diode.pdf'}\n" and run.leftovers == []
    assert (src / "drawer_diode.csv").read_bytes() == before
    assert sorted(p.name for p in src.iterdir()) == ["drawer_diode.csv", "drawer_diode.pdf", "p.yaml"]
    assert_quick(run, tmp_path / "again")


def test_dossier_writes_the_csv_it_is_named(tmp_path):
    src = tmp_path / "src"
    src.mkdir()
    project = src / "p.csv"  # a project named .csv: its own name is refused, another name is fine
    project.write_bytes(VOLTMETER.read_bytes())
    run = run_cli(["dossier", project, "-o", src / "p.pdf", "--bom", src / "parts.csv", "--samples", "20"],
                  tmp_path / "cwd")
    assert run.returncode == 0, run.stderr
    assert project.read_bytes() == VOLTMETER.read_bytes()
    assert (src / "parts.csv").read_text(encoding="utf-8").startswith("designator,kind,value")
    assert (src / "p.pdf").read_bytes().startswith(b"%PDF")


def test_size_network_to_stdout_loads_back(tmp_path):
    from planner.project import loads

    src = tmp_path / "s.yaml"
    src.write_text(SIZED, encoding="utf-8")
    run = run_cli(["size", src, "--write-network", "-"], tmp_path / "cwd")
    assert run.returncode == 0 and run.stderr == "" and run.leftovers == [], run.stderr
    spec = loads(run.stdout, "stdout.yaml")  # stdout is the project alone, no table mixed in
    assert spec.network is not None and len(spec.network.positions) == 3
    assert_quick(run, tmp_path / "again")


def test_protect_to_stdout_loads_back(tmp_path):
    from planner.project import loads

    src = tmp_path / "p.yaml"
    src.write_bytes(VOLTMETER.read_bytes())
    run = run_cli(["protect", src, "-o", "-", "--max-candidates", "20", "--quiet"], tmp_path / "cwd")
    assert run.returncode in (0, 1) and run.leftovers == [], run.stderr
    assert "wrote" not in run.stderr and "Traceback" not in run.stderr
    assert loads(run.stdout, "stdout.yaml").network is not None
    assert src.read_bytes() == VOLTMETER.read_bytes()
    assert_quick(run, tmp_path / "again")


def test_a_symlink_to_another_file_is_written_through(tmp_path):
    src = tmp_path / "src"
    (src / "keep").mkdir(parents=True)
    (src / "s.yaml").write_text(SIZED, encoding="utf-8")
    real = src / "keep" / "network.yaml"
    real.write_text("old\n", encoding="utf-8")
    (src / "latest.yaml").symlink_to(real)
    run = run_cli(["size", src / "s.yaml", "--write-network", src / "latest.yaml"], tmp_path / "cwd")
    assert run.returncode == 0, run.stderr
    assert (src / "latest.yaml").is_symlink() and os.readlink(src / "latest.yaml") == str(real)
    assert real.read_text(encoding="utf-8").startswith("title: Sizing bench")
    assert sorted(p.name for p in real.parent.iterdir()) == ["network.yaml"]


def test_fit_temperature_as_a_bare_number_is_in_degrees_celsius(tmp_path):
    vs, cs = _points_at_23c()
    src = tmp_path / "points.csv"
    src.write_text("voltage_v,current_a\n" + "\n".join(f"{v},{c}" for v, c in zip(vs, cs)) + "\n", encoding="utf-8")
    run = run_cli(["fit-diode", src, "--temperature", "23"], tmp_path / "cwd")
    assert run.returncode == 0 and run.stderr == "", run.stderr
    assert "parameters hold at 23 degC" in run.stdout and "paste under parts" in run.stdout


def test_warnings_of_a_command_go_to_the_log_not_the_terminal(tmp_path, monkeypatch, capsys):
    """The CLI's safety net: a numpy RuntimeWarning that escapes a command prints nothing without -v."""
    from planner import cli

    def noisy(args):
        np.exp(np.array([1e4]))  # overflow: numpy warns (IEEE 754 overflow to inf)
        return 0

    monkeypatch.chdir(tmp_path)
    parser = cli.build_parser()
    args = parser.parse_args(["fit-diode", "x.csv"])
    args.func = noisy
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("default")  # shown if it reached the terminal
        assert cli._run(args) == 0
    assert capsys.readouterr().err == ""
    with warnings.catch_warnings(record=True) as seen:  # and outside a command numpy still warns
        warnings.simplefilter("always")
        np.exp(np.array([1e4]))
    assert any(issubclass(w.category, RuntimeWarning) for w in seen)


def test_hostile_diode_files_raise_no_numpy_warning(tmp_path):
    """With RuntimeWarning turned into an error (which the CLI would report as exit 3), none is raised."""
    src = tmp_path / "src"
    names = _make_inputs(src)
    env = dict(os.environ, PYTHONWARNINGS="error::RuntimeWarning")
    env.pop("PLANNER_DEBUG", None)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    for key in ("scrambled", "resistor", "big_v", "big_i"):
        t0 = time.perf_counter()
        r = subprocess.run([sys.executable, "-m", "planner.cli", "fit-diode", str(names[key])], cwd=tmp_path,
                           env=env, capture_output=True, text=True, timeout=60)
        assert r.returncode == (1 if key in ("scrambled", "resistor") else 2), r.stderr
        assert "internal error" not in r.stderr, r.stderr
        assert time.perf_counter() - t0 < 2 * LIMIT_S


#: The commands that write files and the options naming them: the written file is always
#: -o/--output (the same name for the same thing in every command); a second file has its
#: own name (--bom, --svg).
WRITERS = {"size": (), "protect": (), "dossier": ("--bom",), "scale": ("--svg",), "netlist": ()}


def _subparsers():
    import argparse

    from planner.cli import build_parser

    action = next(a for a in build_parser()._actions if isinstance(a, argparse._SubParsersAction))
    return action.choices


def test_every_command_that_writes_names_its_file_with_o_output():
    for name, sub in _subparsers().items():
        opts = {s: a for a in sub._actions for s in a.option_strings}
        if name in WRITERS:
            assert "-o" in opts and opts["-o"] is opts.get("--output"), name  # one option, both names
            assert opts["-o"].dest == "output", name
            for extra in WRITERS[name]:
                assert extra in opts, (name, extra)
        else:  # a command that writes no file has no -o to confuse
            assert "-o" not in opts and "--output" not in opts, name


def test_every_file_written_is_named_on_stderr(tmp_path):
    src = tmp_path / "s.yaml"
    src.write_text(SIZED, encoding="utf-8")
    for argv, files in (
        (["size", src, "-o", tmp_path / "net.yaml"], ["net.yaml"]),
        (["size", src, "--output", tmp_path / "net2.yaml"], ["net2.yaml"]),
        (["netlist", VOLTMETER, "--position", "10 V", "--output", tmp_path / "ten.cir"], ["ten.cir"]),
        (["scale", VOLTMETER, "-o", tmp_path / "plate.pdf", "--svg", tmp_path / "plate.svg"],
         ["plate.pdf", "plate.svg"]),
    ):
        run = run_cli(argv, tmp_path / "cwd")
        assert run.returncode in (0, 1), run.stderr
        wrote = [line for line in run.stderr.splitlines() if line.startswith("wrote ")]
        assert wrote == [f"wrote {tmp_path / f}" for f in files], run.stderr
        assert all((tmp_path / f).stat().st_size > 0 for f in files)
