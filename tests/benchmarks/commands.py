"""Whole commands against ``planner check`` of the same project (part of ``run.py``).

Each command runs as a whole process (start-up, loading, sizing, the analysis and its
output, as a user meets it), the commands taking turns inside each repetition so that
other load on the machine falls on all of them; the figures are medians over the
repetitions and the targets are ratios to ``planner check`` of the same file:

* ``planner dossier`` no more than 1.5 x ``planner check``;
* ``planner faults`` and ``planner protect`` each no more than 2 x ``planner check``;
* the dossier's peak resident memory under 300 MiB (``ru_maxrss`` of a child process that
  runs nothing else).

Outputs go to a temporary folder that is removed afterwards.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

#: Targets: command -> largest allowed ratio to ``planner check`` (whole processes).
RATIO_TARGETS = {"dossier": 1.5, "faults": 2.0, "protect": 2.0}
#: Peak resident memory of the dossier of the largest example [bytes].
MEMORY_TARGET_BYTES = 300 * 1024**2


def command_lines(planner: list[str], project: Path, out: Path) -> dict[str, list[str]]:
    """The command lines timed, each writing (where it writes) into ``out``."""
    p = str(project)
    return {
        "check": planner + ["check", p, "--json"],
        "dossier": planner + ["dossier", p, "-o", str(out / "dossier.pdf")],
        "faults": planner + ["faults", p, "--json"],
        "protect": planner + ["protect", p, "--json", "-o", str(out / "plan.yaml")],
    }


def run_seconds(cmd, cwd) -> float:
    """Wall time of ``cmd`` as a whole process [s]; exit codes 0 and 1 are answers, others fail."""
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, cwd=cwd, capture_output=True, text=True)
    elapsed = time.perf_counter() - t0
    if proc.returncode not in (0, 1):
        raise RuntimeError(f"{' '.join(cmd)} failed ({proc.returncode}): {proc.stderr[-2000:]}")
    return elapsed


def peak_memory_bytes(cmd, cwd) -> int:
    """Peak resident memory of ``cmd`` run in a fresh child that runs nothing else [bytes]."""
    probe = ("import resource, subprocess, sys; "
             "r = subprocess.run(sys.argv[1:], capture_output=True); "
             "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss); sys.exit(r.returncode)")
    proc = subprocess.run([sys.executable, "-c", probe] + list(cmd), cwd=cwd, capture_output=True, text=True)
    if proc.returncode not in (0, 1):
        raise RuntimeError(f"{' '.join(cmd)} failed ({proc.returncode})")
    kb = int(proc.stdout.strip().splitlines()[-1])
    return kb * (1 if sys.platform == "darwin" else 1024)


def measure(planner: list[str], project: Path, cwd: Path, repeat: int = 3) -> dict:
    """Medians of each command, their ratios to ``check`` and the dossier's peak memory."""
    seconds: dict[str, list[float]] = {}
    with tempfile.TemporaryDirectory(prefix="planner-bench-commands-") as tmp:
        cmds = command_lines(planner, project, Path(tmp))
        for _ in range(repeat):
            for name, cmd in cmds.items():
                seconds.setdefault(name, []).append(run_seconds(cmd, cwd))
        peak = peak_memory_bytes(cmds["dossier"], cwd)
    medians = {name: float(statistics.median(ts)) for name, ts in seconds.items()}
    ratios = {name: medians[name] / medians["check"] for name in RATIO_TARGETS}
    return {
        "project": project.name,
        "seconds": seconds,
        "median_s": medians,
        "ratio_to_check": ratios,
        "targets": RATIO_TARGETS,
        "met": {name: ratios[name] <= target for name, target in RATIO_TARGETS.items()},
        "dossier_peak_bytes": peak,
        "dossier_memory_target_bytes": MEMORY_TARGET_BYTES,
        "dossier_memory_met": peak < MEMORY_TARGET_BYTES,
    }


def table_lines(r: dict) -> list[str]:
    """Rows for ``run.py``'s summary table."""
    m = r["median_s"]
    lines = [f"commands on {r['project']} (whole processes, medians): check {m['check']:.2f} s"]
    for name, target in r["targets"].items():
        lines.append(f"  {name:<8}{m[name]:7.2f} s = {r['ratio_to_check'][name]:.2f} x check "
                     f"(target <= {target:g} x: {'met' if r['met'][name] else 'NOT met'})")
    lines.append(f"  dossier peak memory {r['dossier_peak_bytes'] / 1024**2:,.0f} MiB "
                 f"(target < {r['dossier_memory_target_bytes'] / 1024**2:.0f} MiB: "
                 f"{'met' if r['dossier_memory_met'] else 'NOT met'})")
    return lines


if __name__ == "__main__":
    root = Path(__file__).resolve().parents[2]
    planner = [sys.executable, "-m", "planner"]
    result = measure(planner, root / "projects" / "bench_multimeter.yaml", root,
                     repeat=int(sys.argv[1]) if len(sys.argv) > 1 else 3)
    print("\n".join(table_lines(result)))
