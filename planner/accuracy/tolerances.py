"""The toleranced parameters of a network, Monte Carlo draws and the worst case over tolerances.

A position's tolerance analyses see only the parameters of the parts that can
carry current in it (:func:`current_carrying`); :func:`draw_factors` draws the
Monte Carlo builds once for the whole instrument; :func:`worst_case` finds the
largest full-scale error over the tolerance extremes.
"""

from __future__ import annotations

import numpy as np

from ..engine import Engine
from ..parts import Parameter

#: Largest number of varied parameters whose corners are all evaluated (2**12 = 4096).
MAX_CORNER_PARAMETERS = 12
#: Random corners that check the sensitivity bound (besides its two aligned corners).
VERIFY_CORNERS = 254


def error_pct(reading, full_scale):
    """Error of readings in % of full scale: ``(reading - full_scale) / full_scale * 100``."""
    return (np.asarray(reading) - full_scale) / full_scale * 100.0


def parameters(engine: Engine) -> list[Parameter]:
    """Every toleranced parameter of the engine's network, in network order.

    Resistors with a tolerance above zero, the coil resistance
    (``Movement.tolerance``), the full-scale current (``Movement.i_fs_tolerance``)
    and the saturation current of each diode whose model has ``i_s_spread``.

    Parameters
    ----------
    engine : Engine

    Returns
    -------
    list of Parameter
    """
    spec = engine.spec
    mov = spec.movement
    out = [q for e in engine.net.elements for q in e.parameters(spec)]
    if mov.i_fs_tolerance > 0:
        out.append(Parameter("i_fs", "I_fs", "i_fs", None, float(mov.i_fs_tolerance)))
    return out


def current_carrying(engine: Engine, state) -> set:
    """Designators that can carry current in a switch state.

    Notes
    -----
    The compiled state holds only the biconnected block of the graph that contains
    the source (see :func:`planner.network.compile_state`): any other block hangs on
    it by a single node and, being passive, carries no current. Such parts (the
    unused end of a multiplier chain, a shunt ring switched out on the voltage
    ranges) cannot change the reading, so the tolerance analyses leave them out.

    References
    ----------
    J. Hopcroft and R. Tarjan, "Algorithm 447: efficient algorithms for graph
    manipulation", Communications of the ACM 16(6), 372-378, 1973 (biconnected
    components, as :func:`planner.network._block_with` implements them).
    """
    st = engine.state(state)
    circuit = engine.circuit(st, st.position.kind.source, False)
    return {br.element for br in circuit.branches} | set(circuit.diodes)



def draw_factors(params: list[Parameter], samples: int, rng: np.random.Generator) -> dict:
    """Tolerance draws for Monte Carlo builds: one factor array of shape (samples,) per parameter.

    Parameters
    ----------
    params : list of Parameter
    samples : int
        Number of builds.
    rng : numpy.random.Generator
        Seeded generator (``numpy.random.default_rng(seed)``).

    Returns
    -------
    dict
        ``{key: factors}``; factors multiply the nominal values.

    Notes
    -----
    Uniform: :math:`f = 1 + t\\,U(-1, 1)`. Normal: :math:`f = 1 + (t/3)\\,N(0, 1)`
    (the tolerance is three standard deviations; the tails are not cut). Draws
    are taken parameter by parameter in network order, so a given seed always
    gives the same builds.
    """
    out = {}
    for p in params:
        if p.distribution == "normal":
            f = 1.0 + (p.tolerance / 3.0) * rng.standard_normal(samples)
        else:
            f = 1.0 + p.tolerance * rng.uniform(-1.0, 1.0, samples)
        out[p.key] = np.maximum(f, 1e-6)
    return out


def _corner_signs(k: int) -> np.ndarray:
    """All 2**k sign vectors (+1/-1), shape (2**k, k)."""
    idx = np.arange(2 ** k)[:, None]
    return ((idx >> np.arange(k)[None, :]) & 1) * 2.0 - 1.0


def _factors_from_signs(params: list[Parameter], signs: np.ndarray) -> dict:
    out = {}
    for j, p in enumerate(params):
        lo, hi = p.extremes()
        out[p.key] = np.where(signs[:, j] > 0, hi, lo)
    return out


class CountingEngine:
    """An :class:`Engine` wrapper that counts the operating points solved.

    Parameters
    ----------
    engine : Engine

    Attributes
    ----------
    points : int
        Operating points solved so far (parameter sets x stimuli).
    calls : int
        Batched solves so far.
    """

    def __init__(self, engine: Engine):
        self.engine = engine
        self.points = 0
        self.calls = 0

    def operate(self, *args, **kwargs):
        op = self.engine.operate(*args, **kwargs)
        p, s = op.shape
        self.points += getattr(op, "solved_points", p * s)  # an AC cycle: its rule's nodes, not its targets
        self.calls += 1
        return op


def worst_case(run: CountingEngine, state, full_scale: float, params: list[Parameter], rng,
               max_corner_parameters: int = MAX_CORNER_PARAMETERS) -> dict:
    """Largest |error| at full scale over the parts' tolerance extremes [% of full scale].

    Parameters
    ----------
    run : CountingEngine
        The engine, wrapped to count its solves.
    state : str
        Position name.
    full_scale : float
        Full scale [V] or [A].
    params : list of Parameter
        The parameters that matter in this position.
    rng : numpy.random.Generator
        Draws the verification corners of the sensitivity bound.
    max_corner_parameters : int
        Every corner up to this many parameters, the sensitivity bound above
        (:data:`MAX_CORNER_PARAMETERS`; a range kind whose solves cost more may
        ask for fewer, :attr:`planner.ranges.RangeKind.corner_parameters`).

    Returns
    -------
    dict
        ``worst_case_error_pct``, ``worst_case_method`` (``corners`` or
        ``sensitivity``), ``worst_case_parameters``, ``worst_case_corners``
        (corners evaluated), ``worst_case_corner`` (the sign of each parameter at
        the worst corner evaluated) and, for the bound, ``worst_case_bound_pct``.

    Notes
    -----
    With k parameters, k <= 12 (``max_corner_parameters``): every corner of the tolerance box, 2**k cases in
    one batched solve; the result is :math:`\\max |e|`. Above 12: central
    extremes :math:`\\Delta_j^\\pm = e(x_j^\\pm) - e_0` (2k + 1 cases, one solve)
    give the first-order bound

    .. math:: e_{hi} = e_0 + \\sum_j \\max(\\Delta_j^+, \\Delta_j^-, 0), \\quad
              e_{lo} = e_0 + \\sum_j \\min(\\Delta_j^+, \\Delta_j^-, 0)

    and :math:`\\max(|e_{hi}|, |e_{lo}|)`. It is checked against the two corners
    that align every parameter with its sensitivity and
    :data:`VERIFY_CORNERS` random corners (a second solve); the result is the
    larger of the bound and every corner evaluated, so it is never smaller than
    a corner that was computed.

    References
    ----------
    Worst-case circuit analysis by extreme-value (corner) enumeration and by
    linearised sensitivities: common practice (e.g. the tolerance analyses of
    SPICE simulators).
    """
    steps = worst_case_steps(params, rng, max_corner_parameters)
    factors, _ = next(steps)
    while True:
        e = error_pct(run.operate(state, [full_scale], factors=factors).reading()[:, 0], full_scale)
        try:
            factors, _ = steps.send(e)
        except StopIteration as done:
            return done.value


def worst_case_steps(params: list[Parameter], rng, max_corner_parameters: int = MAX_CORNER_PARAMETERS):
    """:func:`worst_case` as a generator of batches, for a caller that solves them with others.

    Yields ``(factors, last)``: the parameter rows of a batch at full scale (``None``: the
    nominal row alone) and whether it is the last batch; receives the errors of its rows
    [% of full scale], shape (P,); returns the dict of :func:`worst_case`.
    """
    k = len(params)
    labels = [p.label for p in params]
    if k == 0:
        e = yield None, True
        return {"worst_case_error_pct": float(abs(e[0])), "worst_case_method": "corners",
                "worst_case_parameters": [], "worst_case_corners": 1, "worst_case_corner": {}}
    if k <= max_corner_parameters:
        signs = _corner_signs(k)
        e = yield _factors_from_signs(params, signs), True
        i = int(np.argmax(np.abs(e)))
        return {"worst_case_error_pct": float(abs(e[i])), "worst_case_method": "corners",
                "worst_case_parameters": labels, "worst_case_corners": int(len(e)),
                "worst_case_corner": {lab: int(s) for lab, s in zip(labels, signs[i])}}
    # sensitivity bound: nominal, then each parameter at its low and its high extreme
    rows = 2 * k + 1
    factors = {p.key: np.ones(rows) for p in params}
    for j, p in enumerate(params):
        lo, hi = p.extremes()
        factors[p.key][1 + 2 * j] = lo
        factors[p.key][2 + 2 * j] = hi
    e = yield factors, False
    e0 = e[0]
    d_lo, d_hi = e[1::2] - e0, e[2::2] - e0
    hi_sum = e0 + np.sum(np.maximum(np.maximum(d_lo, d_hi), 0.0))
    lo_sum = e0 + np.sum(np.minimum(np.minimum(d_lo, d_hi), 0.0))
    bound = float(max(abs(hi_sum), abs(lo_sum)))
    up = np.where(d_hi >= d_lo, 1.0, -1.0)
    signs = np.vstack([up, -up, rng.choice([-1.0, 1.0], size=(VERIFY_CORNERS, k))])
    ec = yield _factors_from_signs(params, signs), True
    i = int(np.argmax(np.abs(ec)))
    corner_max = float(abs(ec[i]))
    return {"worst_case_error_pct": max(bound, corner_max), "worst_case_method": "sensitivity",
            "worst_case_parameters": labels, "worst_case_corners": int(len(ec)),
            "worst_case_corner": {lab: int(s) for lab, s in zip(labels, signs[i])},
            "worst_case_bound_pct": bound, "worst_case_corner_max_pct": corner_max}
