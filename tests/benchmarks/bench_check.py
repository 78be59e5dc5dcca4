"""Times the accuracy check on the largest example project (a script, not a test).

Usage: ``python tests/benchmarks/bench_check.py [PROJECT.yaml] [--samples N] [--repeat R]``

Without a project it takes the example under ``projects/`` with the most switch
positions. It prints the wall time of :func:`planner.accuracy.check_project`, the
operating points solved and the solves per second.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def largest_example():
    """The example project with the most positions (ties: the larger file)."""
    from planner.design import build
    from planner.project import load

    best = None
    for path in sorted((ROOT / "projects").glob("*.yaml")):
        spec = load(str(path))
        key = (len(build(spec).net.positions), path.stat().st_size)
        if best is None or key > best[0]:
            best = (key, spec, path)
    return best[1], best[2]


def main() -> None:
    from planner.accuracy import check_project
    from planner.project import load

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("project", nargs="?")
    ap.add_argument("--samples", type=int, default=2000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    if args.project:
        spec, path = load(args.project), Path(args.project)
    else:
        spec, path = largest_example()
    times = []
    for _ in range(max(1, args.repeat)):
        t0 = time.perf_counter()
        res = check_project(spec, samples=args.samples, seed=1, source_impedance_ohm=1e3)
        times.append(time.perf_counter() - t0)
    best = min(times)
    pts = res["operating_points"]
    print(f"project: {path.name} ({len(res['positions'])} positions, {args.samples} Monte Carlo builds)")
    print(f"check_project: best {best:.3f} s of {len(times)} (all: {', '.join(f'{t:.3f}' for t in times)})")
    print(f"operating points: {pts} in {res['solver_calls']} batched solves; {pts / best:,.0f} solves per second")


if __name__ == "__main__":
    main()
