"""The rectifier of the AC sections: its diodes in the layout, and the nonlinear solve of a range's resistance.

Topologies (``docs/ac.md``; common practice for rectifier instruments):

* **bridge**: four diodes; the DC corners are the movement's terminals
  (``m_plus`` through a contact closed on the section's positions, and ``com``),
  one AC corner is the multiplier's (or shunt's) lower end ``<p>_a``, the other
  is the position's minus input ``<p>_lo``: the common jack is switched to the
  bridge on these positions, so the coil stays between ``m_plus`` and ``com`` and
  the clamps across it stay across it.
* **half_wave**: one diode from ``<p>_a`` to the movement (through the contact)
  and a second from ``com`` back to ``<p>_a`` that carries the other half cycle
  and holds the first diode's reverse voltage to one forward drop.

A range's resistance (total multiplier, shunt) is found **through the nonlinear
solver** so that the cycle mean of the movement current at the full-scale rms of
a sine is I_fs at nominal parts and the reference temperature
(:func:`solve_for_mean`): the position's own small network is compiled and
solved as instantaneous DC states (:mod:`planner.solve`; no Engine: the sizer
never builds one) on a 1024-node Gauss-Chebyshev rule, and Newton's method on ln R (safeguarded
by bisection) finds the resistance. The E-series realisation then follows as for the DC values.
"""

from __future__ import annotations

import math

import numpy as np

from ... import network as nw
from ...model import Contact, Diode, MovementElement, NetworkSpec, Position, Resistor, Spec
from ...solve import Junctions, solve
from ...tools import fmt
from ..layout import COM, M_PLUS, Device, Layout
from ..request import request_error

__all__ = ["RECTIFIERS", "SIZING_NODES", "ideal_factor", "lay_out_rectifier", "input_minus", "nominal_error",
           "solve_for_mean", "solve_for_means"]

#: The rectifier kinds the sizer lays out.
RECTIFIERS = ("bridge", "half_wave")
#: Gauss-Chebyshev nodes of the sizing solve over a half cycle (the midpoint rule in phase:
#: within about 1e-7 of the mean on the sharpest knee of a high range).
SIZING_NODES = 1024


def ideal_factor(rectifier: str) -> float:
    """Mean over rms of the rectified sine: 2 sqrt 2 / pi = 0.9003 (bridge), sqrt 2 / pi = 0.4502 (half wave).

    References
    ----------
    Form factor of a sine, :math:`\\pi / (2 \\sqrt 2)`: standard AC circuit theory
    (e.g. Hughes, *Electrical and Electronic Technology*, chapter on alternating
    quantities); the half-wave mean is half the full-wave one.
    """
    full = 2.0 * math.sqrt(2.0) / math.pi
    return full if rectifier == "bridge" else full / 2.0


def input_minus(prefix: str, rectifier: str) -> str:
    """The minus input terminal of the section's positions: the bridge's second AC corner, or ``com``."""
    return f"{prefix}_lo" if rectifier == "bridge" else COM


def _diodes(prefix: str, rectifier: str, model: str, line):
    """(anode, cathode, model, line) of the rectifier's diodes; the positive DC corner is ``<p>_dc``."""
    a, dc, lo = f"{prefix}_a", f"{prefix}_dc", f"{prefix}_lo"
    if rectifier == "bridge":
        return [(a, dc, model, line), (lo, dc, model, line), (COM, a, model, line), (COM, lo, model, line)]
    return [(a, dc, model, line), (COM, a, model, line)]


def lay_out_rectifier(layout: Layout, prefix: str, rectifier: str, model: str, names, line) -> None:
    """Add the rectifier's diodes and the contact that joins its DC corner to the movement on ``names``."""
    for args in _diodes(prefix, rectifier, model, line):
        layout.devices.append(Device("D", Diode, args + ("rectifier",)))
    layout.contacts.append((f"{prefix}_dc", M_PLUS, tuple(names)))


def _network(spec: Spec, prefix: str, rectifier: str, model: str, measures: str, fs: float, swamp_ohm: float = 0.0):
    """The position's own network: a resistance (multiplier or shunt), the rectifier, the movement, its clamps."""
    a, lo = f"{prefix}_a", input_minus(prefix, rectifier)
    els = [Diode(f"D{j}", an, ca, mdl) for j, (an, ca, mdl, _) in enumerate(_diodes(prefix, rectifier, model, None), 1)]
    els += [MovementElement("M1", M_PLUS, COM), Contact("S1", f"{prefix}_dc", M_PLUS, ("x",))]
    for j, cl in enumerate(spec.clamps, 1):  # clamps across the movement shunt it on the AC positions too
        if cl.at != "movement":
            continue
        for direction, mdl in (("fwd", cl.forward), ("rev", cl.reverse)):
            if mdl is None:
                continue
            stack = [M_PLUS] + [f"k{j}{direction}{i}" for i in range(1, int(cl.count))] + [COM]
            for i, (p, q) in enumerate(zip(stack[:-1], stack[1:])):
                an, ca = (p, q) if direction == "fwd" else (q, p)
                els.append(Diode(f"DK{j}{direction}{i}", an, ca, mdl))
    if measures == "ac_voltage":
        els.append(Resistor("RX", "in", a, 1.0))
    else:  # a shunt across the input, the rectifier fed from its top (through the swamp, if any)
        els.append(Resistor("RX", "in", lo, 1.0))
        if swamp_ohm > 0:
            els += [Contact("S2", "in", f"{prefix}_s", ("x",)), Resistor("RSW", f"{prefix}_s", a, swamp_ohm)]
        else:
            els.append(Contact("S2", "in", a, ("x",)))
    return NetworkSpec(tuple(els), (Position("x", measures, fs, ("in", lo)),))


def _compiled(spec: Spec, net: NetworkSpec, pos_name: str, kind: str):
    """A position's compiled state with its nominal branch resistances and junctions at the reference."""
    st = next(s for s in nw.position_states(net) if s.position.name == pos_name)
    c = nw.compile_state(spec, st, stimulus=kind, net=net)
    dt = np.zeros((1, 1))
    t = np.full((1, 1), spec.ambient.t_ref_k)
    elements = {e.name: e for e in net.elements}
    r = np.concatenate([np.broadcast_to(elements[br.element].resistance(spec, dt), (1, 1)) for br in c.branches],
                       axis=1)
    cols = [elements[name].junction(spec, t) for name in c.diodes]
    jn = Junctions(*(np.concatenate(xs, axis=1) for xs in zip(*cols)))
    return c, r, jn


def _rule(nodes: int):
    """The midpoint rule in phase of a sine over a half cycle (Gauss-Chebyshev in x), without crests."""
    from ...cycle import SHAPES, fixed_rule  # on first use: it brings scipy's interpolation

    return SHAPES["sine"], fixed_rule(SHAPES["sine"], nodes, crests=False)


def _mean_of(c, r, jn, fs, movement: str, nodes: int = SIZING_NODES):
    """Cycle mean of the movement current [A] at full-scale rms of a sine (a ``nodes``-node rule).

    One value for one row of branch resistances ``r`` (1, L) and one full scale; an array (P,)
    for P rows, ``fs`` a number or one full scale per row (P,).
    """
    means, _ = _solved_means(c, r, jn, fs, movement, nodes)
    return float(means[0]) if r.shape[0] == 1 else np.asarray(means, dtype=float)


def _solved_means(c, r, jn, fs, movement: str, nodes: int, start=None):
    """:func:`_mean_of` as an array (P,), with the solution (Newton started from ``start``, the
    solver's form of :func:`planner.solve.solve`, where given)."""
    sine, rule = _rule(nodes)
    m_j = next(j for j, br in enumerate(c.branches) if br.element == movement)
    rows = r.shape[0]
    if rows > 1:
        jn = jn.map(lambda a: np.repeat(a, rows, axis=0))
    peaks = np.asarray([sine.peak_of(float(f)) for f in np.atleast_1d(fs)], dtype=float)
    stim = peaks[:, None] * rule.nodes[None, :] if peaks.size > 1 else rule.points(peaks[0])
    sol = solve(c, r, jn, stim, start=start)
    return np.atleast_1d(rule.mean(sol.branch_current(m_j))), sol


class _RoundStarts:
    """Where each round of a section's search starts its solver call: every range's rows from its rows of
    the round before (the nearest ln R; on another rule, along the source value through them).

    A Newton step moves ln R by 1e-4 and less, so a row's operating points move by as little:
    two or three Newton iterations from there where a cold start takes twenty (the results do
    not depend on where the solver starts).
    """

    def __init__(self):
        self.rows: dict = {}  # range -> (ln R (n,), source values (S,), unknowns (n, S, C))
        self.split = None

    def start(self, ks, asks, full_scales, nodes):
        from ...cycle.starts import Curve, parted

        sine, rule = _rule(nodes)
        out = []
        for k in ks:
            if k not in self.rows:
                return None
            logs, x0, y = self.rows[k]
            x = sine.peak_of(full_scales[k]) * rule.nodes
            for q in np.asarray(asks[k][1], dtype=float):
                row = y[int(np.argmin(np.abs(logs - q)))]
                if x0.shape == x.shape and np.array_equal(x0, x):
                    out.append(row)
                else:
                    curve = Curve()
                    curve.add(x0, row)
                    out.append(curve.at(x))
        return parted(np.concatenate(out), self.split)

    def keep(self, ks, asks, full_scales, nodes, sol):
        if sol.start_rows is None:
            return
        u, w = sol.start_rows
        if self.split not in (None, u.shape[1]):
            return
        self.split = u.shape[1]
        sine, rule = _rule(nodes)
        y = np.concatenate([u, w], axis=1).reshape(-1, rule.nodes.size, u.shape[1] + w.shape[1])
        pos = 0
        for k in ks:
            n = len(asks[k][1])
            self.rows[k] = (np.asarray(asks[k][1], dtype=float), sine.peak_of(full_scales[k]) * rule.nodes,
                            y[pos:pos + n])
            pos += n


def nominal_error(spec: Spec, net: NetworkSpec, pos: Position) -> float:
    """Relative reading error at full scale of an AC position of a sized network (nominal parts, reference).

    The same solve as :func:`solve_for_mean`, on the whole network with the chosen
    values (clamps and every other part included): :math:`\\bar I_m / I_{fs} - 1`.
    """
    movement = nw.movement_element(net).name
    c, r, jn = _compiled(spec, net, pos.name, pos.kind.source)
    return _mean_of(c, r, jn, pos.full_scale, movement) / spec.movement.i_fs_a - 1.0


def solve_for_mean(spec: Spec, prefix: str, rectifier: str, model: str, measures: str, fs: float,
                   line, swamp_ohm: float = 0.0) -> float:
    """The resistance [ohm] that makes the mean movement current I_fs at full-scale rms of a sine.

    One range of :func:`solve_for_means` (see there).
    """
    return solve_for_means(spec, prefix, rectifier, model, measures, [fs], line, swamp_ohm)[0]


def solve_for_means(spec: Spec, prefix: str, rectifier: str, model: str, measures: str, full_scales,
                    line, swamp_ohm: float = 0.0) -> list[float]:
    """The resistance [ohm] of each range that makes the mean movement current I_fs at full-scale rms of a sine.

    Parameters
    ----------
    spec : Spec
    prefix : str
        The section's node prefix.
    rectifier : {'bridge', 'half_wave'}
    model : str
        Diode model (``parts.diodes``).
    measures : {'ac_voltage', 'ac_current'}
        ``ac_voltage``: the total multiplier in series with the rectifier;
        ``ac_current``: the shunt across the input with the rectifier and
        movement across it.
    full_scales : sequence of float
        Full-scale rms of each range [V] or [A].
    line : int or None
        The section's line (for messages).
    swamp_ohm : float
        ``ac_current``: a resistor in series with the rectifier branch [ohm].

    Returns
    -------
    list of float
        One resistance per range, in the order of ``full_scales``.

    Raises
    ------
    ProjectError
        When no resistance reaches I_fs (a voltage range too low for the
        rectifier's drops, a current range too close to I_fs).

    Notes
    -----
    Solve :math:`\\bar I_m(R) = I_{fs}` with :math:`\\bar I_m` the cycle mean over
    the instantaneous DC states of the position's network (nominal parts,
    reference temperature) on the :data:`SIZING_NODES`-node rule. The mean
    rises monotonically as a multiplier falls and as a shunt rises. The root is
    found from the ideal rectifier's value (:func:`_root_steps`): a scan of
    resistances around it on the :data:`SCAN_NODES`-node rule places the first
    estimate, then Newton's method on :math:`\\ln R`, safeguarded by bisection, on the
    fine rule, each step solving the value and its neighbour ``ln R + NEWTON_STEP`` as
    two parameter rows. The ranges of a section are one network with another
    resistance and source value per row, so each round of every range's requests is
    one solver call: three rounds for the section where one search per range took
    four or five.

    References
    ----------
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007,
    section 9.4 (safeguarded Newton-Raphson).
    """
    full_scales = [float(f) for f in full_scales]
    net = _network(spec, prefix, rectifier, model, measures, full_scales[0], swamp_ohm)
    c, r, jn = _compiled(spec, net, "x", "voltage" if measures == "ac_voltage" else "current")
    jx = next(j for j, br in enumerate(c.branches) if br.element == "RX")
    i_fs = spec.movement.i_fs_a
    ideal = ideal_factor(rectifier)
    r_m = spec.movement.r_coil_ohm

    def refusal(fs: float):
        def refuse(f_lo: float, f_hi: float) -> None:
            if measures == "ac_voltage" and f_lo < 0:
                raise request_error(
                    spec, f"AC voltage range {fmt(fs, 'V')} is too low for the {rectifier.replace('_', ' ')} "
                    f"rectifier: with no multiplier the mean movement current is below I_fs (the diodes' drops and "
                    f"the coil {fmt(r_m, 'ohm')} take it all); raise the lowest AC range or use a more sensitive "
                    "movement", line)
            if measures != "ac_voltage" and f_hi < 0:
                raise request_error(
                    spec, f"AC current range {fmt(fs, 'A')} cannot reach full scale through the "
                    f"{rectifier.replace('_', ' ')} rectifier (the mean of its rectified sine is below I_fs even "
                    "unshunted); raise the range", line)
        return refuse

    steps = []
    for fs in full_scales:
        if measures == "ac_voltage":
            lo, hi = math.log(1e-3), math.log(max(ideal * fs / i_fs, 2.0) * 1.05)
            start = math.log(max(ideal * fs / i_fs - r_m, 1.0))  # the ideal rectifier's multiplier
        else:
            lo, hi = math.log(1e-6), math.log(1e9)
            # a shunt that leaves the ideal rectifier's branch (coil and swamp) I_fs on average
            start = math.log(max((r_m + swamp_ohm) * i_fs / (ideal * fs), 1e-6))
        steps.append(_root_steps(lo, hi, min(max(start, lo), hi), refusal(fs)))
    out: list = [None] * len(full_scales)
    asks = {k: next(g) for k, g in enumerate(steps)}
    starts = _RoundStarts()
    while asks:  # one round: every range's request, one solve per rule
        answers = {}
        for nodes in sorted({a[0] for a in asks.values()}):
            ks = [k for k, a in asks.items() if a[0] == nodes]
            logs = np.concatenate([np.asarray(asks[k][1], dtype=float) for k in ks])
            fss = np.concatenate([np.full(len(asks[k][1]), full_scales[k]) for k in ks])
            rr = np.repeat(r, logs.size, axis=0)
            rr[:, jx] = np.exp(logs)
            means, sol = _solved_means(c, rr, jn, fss, "M1", nodes,
                                       start=starts.start(ks, asks, full_scales, nodes))
            starts.keep(ks, asks, full_scales, nodes, sol)
            f = means / i_fs - 1.0
            pos = 0
            for k in ks:
                n = len(asks[k][1])
                answers[k] = f[pos:pos + n]
                pos += n
        for k in sorted(answers):
            try:
                asks[k] = steps[k].send(answers[k])
            except StopIteration as done:
                del asks[k]
                out[k] = math.exp(done.value)
    return out


#: Step in ln R of the derivative's difference quotient.
NEWTON_STEP = 1e-7
#: Relative error of the mean at which the root is taken (round-off of the cycle mean is near 1e-15).
RESIDUAL = 1e-13
#: A Newton step (in ln R) below this is the last: the next would be about its square.
LAST_STEP = 1e-7
#: Nodes of the first round's rule (the midpoint rule in phase; within 2e-5 of the mean on the sharpest
#: knee of a 250 V range: it places the first fine solve, never the root).
SCAN_NODES = 171
#: Offsets in ln R of the first round's resistances from the ideal rectifier's value.
SCAN = (-0.8, -0.4, -0.2, -0.1, 0.0, 0.1, 0.2, 0.4, 0.8)
#: |excess| at a bracket's end below which the fine rule decides whether the range can be reached.
EDGE = 1e-3


def _root_steps(lo: float, hi: float, start: float, refuse):
    """The root of a range's excess in [lo, hi] (ln R), as a generator of solve requests.

    Yields ``(nodes, [ln R, ...])``: the rule (:data:`SCAN_NODES` or
    :data:`SIZING_NODES` nodes) and the resistances whose relative excess of the mean
    over I_fs is wanted; receives those excesses as an array; returns the root (ln R).
    ``refuse(f_lo, f_hi)`` raises where the excesses at the bracket's ends show no root.

    Notes
    -----
    A solver call costs its Newton iterations more than its rows, so the rounds are few
    and wide:

    1. the excess at :data:`SCAN` around the start on the :data:`SCAN_NODES`-node rule;
       where it changes sign there the range can be reached (the excess is monotone in
       ln R), else at lo and hi too, ``refuse`` judging those (on the fine rule where either
       is within :data:`EDGE` of zero, so that a refusal never rests on the coarse rule);
       the inverse cubic through the four values around the sign change gives the first
       estimate (:func:`_first_guess`), within about 1e-4 in ln R;
    2. Newton's method on the :data:`SIZING_NODES`-node rule from there, safeguarded by
       bisection in the bracket of the scan widened by one point on each side
       (:func:`_newton`): usually two more rounds.
    """
    xs = sorted({min(max(start + o, lo), hi) for o in SCAN})
    f = np.asarray((yield SCAN_NODES, xs), dtype=float)
    if not np.any(np.sign(f[:-1]) != np.sign(f[1:])):  # the scan does not hold the root: the bracket's ends
        f_lo, f_hi = (yield SCAN_NODES, [lo, hi])
        if min(abs(f_lo), abs(f_hi)) < EDGE:
            f_lo, f_hi = (yield SIZING_NODES, [lo, hi])
        refuse(float(f_lo), float(f_hi))
        xs, f = [lo] + xs + [hi], np.concatenate([[f_lo], f, [f_hi]])
    x, a, b, below = _first_guess(np.asarray(xs), f, lo, hi)
    f0, f1 = yield SIZING_NODES, [x, x + NEWTON_STEP]
    x = yield from _newton(SIZING_NODES, a, b, below, x, f0, f1)
    return x


def _first_guess(x: np.ndarray, f: np.ndarray, lo: float, hi: float) -> tuple[float, float, float, float]:
    """A first estimate of the root of a monotone excess sampled at ascending x, a bracket, and the
    excess's sign at the bracket's lower end.

    The inverse cubic (x as a polynomial in f) through the four samples around the sign
    change, or the secant of the two beside it where that falls outside them; the bracket
    is those two widened by one sample on each side, or to ``lo`` and ``hi`` at the ends of
    the samples (the coarse rule's error cannot move the root past a neighbouring sample).
    """
    change = np.nonzero(np.sign(f[:-1]) != np.sign(f[1:]))[0]
    i = int(change[0]) if change.size else int(np.argmin(np.abs(f)))
    i = min(i, x.size - 2)
    a = x[i - 1] if i >= 1 else lo
    b = x[i + 2] if i + 2 < x.size else hi
    sel = np.arange(max(i - 1, 0), min(i + 3, x.size))
    fs, xs = f[sel], x[sel]
    guess = float(sum(xs[j] * np.prod([-fs[m] / (fs[j] - fs[m]) for m in range(sel.size) if m != j])
                      for j in range(sel.size))) if np.all(np.diff(fs) != 0) else math.nan
    if not x[i] <= guess <= x[i + 1]:
        df = f[i + 1] - f[i]
        guess = float(x[i] - f[i] * (x[i + 1] - x[i]) / df) if df != 0 else 0.5 * (x[i] + x[i + 1])
    return guess, float(a), float(b), float(f[i])


def _newton(nodes: int, lo: float, hi: float, f_lo: float, x: float, f: float, f_step: float):
    """Newton's method safeguarded by bisection on one rule (a generator of solve requests, as
    :func:`_root_steps`); returns the root (ln R).

    Each step solves the value and its neighbour ``x + NEWTON_STEP`` in one batch (two
    parameter rows), so the derivative costs no extra solver call; a step that leaves
    the bracket bisects it instead. Converged when the excess is within :data:`RESIDUAL`,
    or after a step below :data:`LAST_STEP` (the next one would be about its square), or
    when the bracket has shrunk below 1e-12. Only the sign of ``f_lo`` is used.

    References
    ----------
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007,
    section 9.4 (Newton-Raphson with bracketing, ``rtsafe``).
    """
    for _ in range(60):
        if abs(f) <= RESIDUAL:
            return x
        if (f < 0) == (f_lo < 0):
            lo = x
        else:
            hi = x
        d = (f_step - f) / NEWTON_STEP
        xn = x - f / d if d != 0.0 else math.nan
        if not lo < xn < hi:
            xn = 0.5 * (lo + hi)
        elif abs(xn - x) <= LAST_STEP:
            return xn
        if hi - lo <= 1e-12:
            return xn
        x = xn
        f, f_step = yield nodes, [x, x + NEWTON_STEP]
    return x
