"""Which parts the readings can tell apart: the singular values of the sensitivity matrix.

The sensitivity matrix A has one row per reading and one column per unknown:
the change of the reading, in units of its noise, for a change of the unknown by
one prior standard deviation (its tolerance). Its singular value decomposition
:math:`A = U S V^T` splits the unknowns' space into the directions the readings
measure (singular value at least :data:`RESOLVED_SV`: a one-tolerance change
there moves the readings by several noise widths) and the directions they do not.
A part whose own direction lies (mostly) in the measured subspace is resolved;
parts whose unmeasured components are correlated form a group the readings
cannot tell apart: one of them may be off, or several, and the readings come out
the same. A part whose column is (nearly) zero is not measured at all.

For each group, the candidate reading (a position at its full scale) whose
sensitivity row adds most to the measured subspace on the group's parts is the
reading to take next.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["RESOLVED_SV", "SEEN_NORM", "UNRESOLVED_SHARE", "LINK", "Identifiability", "identify",
           "resolved_share", "separating_readings"]

#: Smallest singular value of a measured direction (noise widths per tolerance).
RESOLVED_SV = 3.0
#: Smallest column norm of a part the readings see at all (noise widths per tolerance).
SEEN_NORM = 1.0
#: Share of a part's direction outside the measured subspace above which it is unresolved.
UNRESOLVED_SHARE = 0.1
#: Correlation of two parts' unmeasured components above which they form one group.
LINK = 0.5
#: Smallest off-diagonal entry of the unmeasured projector that links two unknowns.
MIN_LINK = 0.01
#: Smallest gain (sum of resolved shares over a group) that makes a reading worth taking.
MIN_GAIN = 0.05


@dataclass(frozen=True)
class Identifiability:
    """What the readings can tell apart.

    Attributes
    ----------
    singular_values : ndarray
        Of the scaled sensitivity matrix, descending.
    share : ndarray (k,)
        Share of each unknown's direction inside the measured subspace, 0 to 1.
    seen : ndarray of bool (k,)
        The readings depend on the unknown at all.
    weak : ndarray of bool (k,)
        Seen, but a change of one prior width moves the readings by less than
        :data:`SEEN_NORM` noise widths: finer than the readings' resolution.
    groups : list of list of int
        Unknowns (indices) the readings cannot tell apart, each group sorted.
    rank : int
        Number of measured directions.
    """

    singular_values: np.ndarray
    share: np.ndarray
    seen: np.ndarray
    weak: np.ndarray
    groups: list
    rank: int

    @property
    def resolved(self) -> np.ndarray:
        """Unknowns the readings determine (seen, own direction in the measured subspace)."""
        return self.seen & ~self.weak & (self.share >= 1.0 - UNRESOLVED_SHARE)


def _measured_basis(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Singular values and the right singular vectors of the measured directions."""
    if a.size == 0:
        return np.zeros(0), np.zeros((a.shape[1], 0))
    _, s, vt = np.linalg.svd(a, full_matrices=False)
    keep = s >= max(RESOLVED_SV, s[0] * 1e-9 if s.size else 0.0)
    return s, vt[keep].T


def resolved_share(a: np.ndarray) -> np.ndarray:
    """Diagonal of the projector onto the measured subspace of ``a`` (k,)."""
    _, v = _measured_basis(a)
    return np.sum(v * v, axis=1)


def identify(a: np.ndarray, seen: np.ndarray | None = None) -> Identifiability:
    """Groups of unknowns that a scaled sensitivity matrix cannot tell apart.

    Parameters
    ----------
    a : ndarray (n, k)
        Sensitivity of each reading (in noise units) to each unknown (per prior
        standard deviation).
    seen : ndarray of bool (k,), optional
        Which unknowns any reading depends on at all (default: a column of ``a``
        that is not zero).

    Returns
    -------
    Identifiability

    Notes
    -----
    With :math:`V_r` the right singular vectors of singular values at least
    :data:`RESOLVED_SV`, :math:`P = V_r V_r^T` projects onto the measured
    subspace and :math:`Q = I - P` onto its complement. Unknown i is resolved when
    :math:`P_{ii} \\ge 1 -` :data:`UNRESOLVED_SHARE`. An unresolved unknown i (one
    the readings see above their resolution) is linked to an unknown j the readings
    see when j alone mimics i (what is left of column :math:`a_i` once its part
    along :math:`a_j` is taken out is below :data:`RESOLVED_SV` and below half of
    :math:`a_i`), or when j is unresolved too and their unmeasured components are
    correlated, :math:`|Q_{ij}| / \\sqrt{Q_{ii} Q_{jj}} >` :data:`LINK` (with
    :math:`|Q_{ij}| \\ge` :data:`MIN_LINK`). Groups are the connected components
    that hold an unresolved unknown. A resolved part can be in a group: a large
    part in series with a small one is pinned down within the small one's
    tolerance, yet no reading tells the two apart.

    References
    ----------
    G. H. Golub, C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins
    University Press, 2013, sec. 2.4 (the SVD; numerical rank, sec. 5.4.1).
    """
    a = np.atleast_2d(np.asarray(a, dtype=float))
    k = a.shape[1]
    s, v = _measured_basis(a)
    p = v @ v.T if v.size else np.zeros((k, k))
    share = np.clip(np.diag(p).copy(), 0.0, 1.0)
    norms = np.linalg.norm(a, axis=0)
    seen = norms > 0 if seen is None else np.asarray(seen, bool)
    weak = seen & (norms < SEEN_NORM)
    strong = seen & ~weak
    q = np.eye(k) - p
    loose = [i for i in range(k) if strong[i] and share[i] < 1.0 - UNRESOLVED_SHARE]
    parent = {i: i for i in range(k)}

    def find(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for i in loose:
        for j in range(k):
            if j == i or not seen[j]:
                continue
            if _mimics(a[:, i], a[:, j], norms[j]) or (
                    strong[j] and j in loose and abs(q[i, j]) >= MIN_LINK
                    and abs(q[i, j]) / np.sqrt(max(q[i, i] * q[j, j], 1e-300)) > LINK):
                parent[find(i)] = find(j)
    members = set(loose)
    for i in loose:
        members |= {j for j in range(k) if find(j) == find(i)}
    comps: dict[int, list[int]] = {}
    for i in sorted(members):
        comps.setdefault(find(i), []).append(i)
    groups = sorted((sorted(g) for g in comps.values()), key=lambda g: g[0])
    return Identifiability(s, share, seen, weak, groups, int(v.shape[1]))


def _mimics(ai: np.ndarray, aj: np.ndarray, nj: float) -> bool:
    """Whether a change of j reproduces the readings' response to i.

    True when what is left of column i once its part along column j is taken
    out is below :data:`RESOLVED_SV` and below half of column i: the readings
    cannot tell a change of i from one of j.
    """
    along = float(ai @ aj) / nj
    ni2 = float(ai @ ai)
    rest = float(np.sqrt(max(ni2 - along * along, 0.0)))
    return rest < min(RESOLVED_SV, 0.5 * np.sqrt(ni2))


def separating_readings(a: np.ndarray, candidates: dict, group: list[int], most: int | None = None) -> list:
    """Readings to take next so that a group's parts can be told apart.

    Parameters
    ----------
    a : ndarray (n, k)
        The scaled sensitivity of the readings taken.
    candidates : dict
        Candidate name -> its scaled sensitivity row (k,).
    group : list of int
        The unknowns to separate.
    most : int, optional
        Most readings to propose (default: one fewer than the group's size, at least one).

    Returns
    -------
    list of (str, float, bool)
        Candidate name, gain (increase of the group's summed resolved share) and
        whether the group is resolved once it is taken; in the order to take them.
        Empty when no candidate helps (no reading at the terminals separates them).
    """
    most = max(1, len(group) - 1) if most is None else most
    g = np.asarray(group)
    base = resolved_share(a)[g].sum()
    out = []
    for _ in range(most):
        best, best_gain = None, MIN_GAIN
        for name, row in candidates.items():
            gain = resolved_share(np.vstack([a, row]))[g].sum() - base
            if gain > best_gain + 1e-12:
                best, best_gain = name, gain
        if best is None:
            break
        a = np.vstack([a, candidates[best]])
        share = resolved_share(a)[g]
        base = share.sum()
        done = bool(np.all(share >= 1.0 - UNRESOLVED_SHARE))
        out.append((best, float(best_gain), done))
        if done:
            break
    return out
