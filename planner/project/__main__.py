"""``python -m planner.project FILE ...``: check project files.

Prints a short summary of each good file and exits 0, or prints each error on one
line (``file:line: what is wrong; what to do``) and exits 2.
"""

from __future__ import annotations

import sys
from typing import Sequence

from ..errors import ProjectError
from ..units import format_si
from . import load


def main(argv: Sequence[str] | None = None) -> int:
    """Check project files: print a summary of each good one and the error of each bad one (then exit 2)."""
    args = list(sys.argv[1:] if argv is None else argv)
    if not args or any(a in ("-h", "--help") for a in args):
        print("usage: python -m planner.project FILE [FILE ...]  (checks project files)", file=sys.stderr)
        return 2 if not args else 0
    status = 0
    for a in args:
        try:
            spec = load(a)
        except ProjectError as e:
            print(e.one_line(), file=sys.stderr)
            status = 2
            continue
        mv = spec.movement
        n_pos = len(spec.network.positions) if spec.network else 0
        print(
            f"{a}: ok: '{spec.title}', movement {format_si(mv.i_fs_a, 'A')} / {format_si(mv.r_coil_ohm, 'ohm')} "
            f"class {mv.class_index:g}; voltage ranges {len(spec.voltage.full_scales) if spec.voltage else 0}, "
            f"current ranges {len(spec.current.full_scales) if spec.current else 0}, network positions {n_pos}"
        )
    return status


if __name__ == "__main__":
    sys.exit(main())
