"""The plain junctions of a Newton step evaluated together, as one (parts, cases) array.

A step of :func:`planner.solve.newton.newton` evaluates every part at its voltage; on a
few hundred cases numpy's cost per operation, not per case, is most of that. The
junctions whose rows need no scaling (no breakdown law, no node that only parts reach)
share one set of operations here; the others stay part by part in
:mod:`planner.solve.newton`.
"""

from __future__ import annotations

import numpy as np

from . import junction as jl


def nonzero(a) -> bool:
    """Whether a per-case parameter (an array, or a float standing for every case) is not 0."""
    return isinstance(a, np.ndarray) or a != 0.0


class Together:
    """The junctions of a circuit that one step evaluates as a single (parts, cases) array.

    Those without a breakdown law and without a node that only parts reach (their rows
    need no scaling): :func:`_evaluate`'s operations once for all of them instead of once
    per part (numpy's cost per operation, not per case, is most of a step on a few
    hundred cases). Empty with fewer than two such junctions.
    """

    def __init__(self, st, parts, n):
        self.idx = [d for d, p in enumerate(parts) if p.kind == "junction" and not p.has_bv
                    and not st.scaled_ends[d] and (bool(st.plain_ends[d]) or nonzero(p.r_s))]
        if len(self.idx) < 2:
            self.idx = []
            return
        chosen = [parts[d] for d in self.idx]

        def col(name):
            vals = [getattr(p, name) for p in chosen]
            if any(isinstance(v, np.ndarray) for v in vals):
                return np.array([np.broadcast_to(v, (n,)) for v in vals])
            return np.array(vals, dtype=float)[:, None]

        self.inv_nvt, self.i_s, self.is_nvt = col("inv_nvt"), col("i_s"), col("is_nvt")
        self.g_p = [p.g_p for p in chosen]
        self.leak = col("g_p") if all(nonzero(g) for g in self.g_p) else None

    def evaluate(self, W) -> dict:
        """:func:`_evaluate` of each of these junctions at its row of ``W``, by part."""
        if not self.idx:
            return {}
        ws = np.array([W[d] for d in self.idx])
        x = ws * self.inv_nvt
        xe = np.minimum(x, jl.EXP_MAX) if x.max() > jl.EXP_MAX else x
        em = np.expm1(xe)
        ex = em + 1.0
        i = em + ex * (x - xe) if xe is not x else em
        i *= self.i_s
        ex *= self.is_nvt
        if self.leak is not None:  # every junction here has a leak conductance
            i += self.leak * ws
            ex += self.leak
        out = {}
        for k, d in enumerate(self.idx):
            ik, yk, g_p = i[k], ex[k], self.g_p[k]
            if self.leak is None and nonzero(g_p):
                ik = ik + g_p * W[d]
                yk = yk + g_p
            out[d] = (ik, yk, None, None, (x[k], xe[k], None, None))
        return out
