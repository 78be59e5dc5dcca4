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
           "solve_for_mean"]

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


def _mean_of(c, r, jn, fs: float, movement: str):
    """Cycle mean of the movement current [A] at full-scale rms of a sine (SIZING_NODES-node rule).

    One value for one row of branch resistances ``r`` (1, L); an array (P,) for P rows.
    """
    from ...cycle import SHAPES, fixed_rule  # on first use: it brings scipy's interpolation

    rule = fixed_rule(SHAPES["sine"], SIZING_NODES, crests=False)
    m_j = next(j for j, br in enumerate(c.branches) if br.element == movement)
    rows = r.shape[0]
    if rows > 1:
        jn = jn.map(lambda a: np.repeat(a, rows, axis=0))
    means = rule.mean(solve(c, r, jn, rule.points(SHAPES["sine"].peak_of(fs))).branch_current(m_j))
    return float(means[0]) if rows == 1 else np.asarray(means, dtype=float)


def nominal_error(spec: Spec, net: NetworkSpec, pos: Position) -> float:
    """Relative reading error at full scale of an AC position of a sized network (nominal parts, reference).

    The same solve as :func:`solve_for_mean`, on the whole network with the chosen
    values (clamps and every other part included): :math:`\bar I_m / I_{fs} - 1`.
    """
    movement = nw.movement_element(net).name
    c, r, jn = _compiled(spec, net, pos.name, pos.kind.source)
    return _mean_of(c, r, jn, pos.full_scale, movement) / spec.movement.i_fs_a - 1.0


def solve_for_mean(spec: Spec, prefix: str, rectifier: str, model: str, measures: str, fs: float,
                   line, swamp_ohm: float = 0.0) -> float:
    """The resistance [ohm] that makes the mean movement current I_fs at full-scale rms of a sine.

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
    fs : float
        Full-scale rms [V] or [A].
    line : int or None
        The section's line (for messages).
    swamp_ohm : float
        ``ac_current``: a resistor in series with the rectifier branch [ohm].

    Returns
    -------
    float

    Raises
    ------
    ProjectError
        When no resistance reaches I_fs (a voltage range too low for the
        rectifier's drops, a current range too close to I_fs).

    Notes
    -----
    Solve :math:`\\bar I_m(R) = I_{fs}` with :math:`\\bar I_m` the cycle mean over
    the instantaneous DC states of the position's network (nominal parts,
    reference temperature). The mean
    rises monotonically as a multiplier falls and as a shunt rises. The root is
    found by Newton's method on :math:`\\ln R` from the ideal rectifier's value,
    safeguarded by bisection (:func:`_root`): three to five solver calls, each a
    batch of two rows, where a bracketing method takes a dozen.

    References
    ----------
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007,
    section 9.4 (safeguarded Newton-Raphson).
    """
    net = _network(spec, prefix, rectifier, model, measures, fs, swamp_ohm)
    c, r, jn = _compiled(spec, net, "x", "voltage" if measures == "ac_voltage" else "current")
    jx = next(j for j, br in enumerate(c.branches) if br.element == "RX")
    i_fs = spec.movement.i_fs_a

    def excess(log_rs):
        rr = np.repeat(r, len(log_rs), axis=0)
        rr[:, jx] = np.exp(log_rs)
        return _mean_of(c, rr, jn, fs, "M1") / i_fs - 1.0

    ideal = ideal_factor(rectifier)
    r_m = spec.movement.r_coil_ohm
    if measures == "ac_voltage":
        lo, hi = math.log(1e-3), math.log(max(ideal * fs / i_fs, 2.0) * 1.05)
        start = math.log(max(ideal * fs / i_fs - r_m, 1.0))  # the ideal rectifier's multiplier
    else:
        lo, hi = math.log(1e-6), math.log(1e9)
        # a shunt that leaves the ideal rectifier's branch (coil and swamp) I_fs on average
        start = math.log(max((r_m + swamp_ohm) * i_fs / (ideal * fs), 1e-6))
    start = min(max(start, lo), hi)
    f_lo, f_hi, f0, f1 = excess([lo, hi, start, start + NEWTON_STEP])
    if measures == "ac_voltage" and f_lo < 0:
        raise request_error(
            spec, f"AC voltage range {fmt(fs, 'V')} is too low for the {rectifier.replace('_', ' ')} rectifier: "
            f"with no multiplier the mean movement current is below I_fs (the diodes' drops and the coil "
            f"{fmt(r_m, 'ohm')} take it all); raise the lowest AC range or use a more sensitive movement", line)
    if measures != "ac_voltage" and f_hi < 0:
        raise request_error(
            spec, f"AC current range {fmt(fs, 'A')} cannot reach full scale through the "
            f"{rectifier.replace('_', ' ')} rectifier (the mean of its rectified sine is below I_fs even "
            "unshunted); raise the range", line)
    return math.exp(_root(excess, lo, hi, f_lo, start, f0, f1))


#: Step in ln R of the derivative's difference quotient.
NEWTON_STEP = 1e-7
#: Relative error of the mean at which the root is taken (round-off of the cycle mean is near 1e-15).
RESIDUAL = 1e-13


def _root(excess, lo: float, hi: float, f_lo: float, x: float, f: float, f_step: float) -> float:
    """The root of ``excess`` in [lo, hi] (ln R): Newton's method safeguarded by bisection.

    Each step solves the value and its neighbour ``x + NEWTON_STEP`` in one batch (two
    parameter rows), so the derivative costs no extra solver call; a step that leaves
    the bracket bisects it instead. Converged when the mean is within :data:`RESIDUAL` of I_fs
    or a step is below 1e-12 (relative R).

    References
    ----------
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007,
    section 9.4 (Newton-Raphson with bracketing, ``rtsafe``).
    """
    for _ in range(60):
        if abs(f) <= RESIDUAL:
            return x
        if (f < 0) == (f_lo < 0):
            lo, f_lo = x, f
        else:
            hi = x
        d = (f_step - f) / NEWTON_STEP
        xn = x - f / d if d != 0.0 else math.nan
        if not lo < xn < hi:
            xn = 0.5 * (lo + hi)
        if abs(xn - x) <= 1e-12 or hi - lo <= 1e-12:
            return xn
        x = xn
        f, f_step = excess([x, x + NEWTON_STEP])
    return x
