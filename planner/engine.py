"""Operating points of a design: parts, tolerances and temperatures through the solver.

:class:`Engine` is what every analysis solves with. It takes a
:class:`planner.design.Design` (the network already sized, checked and its states
compiled once), turns the parts' values, tolerance draws and temperatures into
the solver's branch resistances and junction parameters (each part says its own:
:mod:`planner.parts`), and hands back per-element currents, voltages and powers.

Examples
--------
>>> from planner.design import build                             # doctest: +SKIP
>>> from planner.project import load                             # doctest: +SKIP
>>> eng = Engine(build(load("projects/pocket_voltmeter.yaml")))  # doctest: +SKIP
>>> eng.reading("10 V", [10.0])                                  # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Mapping

import numpy as np

from . import network as nw
from .design import Design
from .errors import UsageError
from .ranges.ac import operate_cycle
from .solve import Junctions, Solution, Varistors, solve


@dataclass
class ElementStress:
    """Current [A], voltage [V] and power [W] of one element, arrays of shape (P, S)."""

    name: str
    kind: str
    current_a: np.ndarray
    voltage_v: np.ndarray
    power_w: np.ndarray


class Operating:
    """Operating points of one switch state for a batch; see :meth:`Engine.operate`."""

    def __init__(self, engine: "Engine", state: nw.SwitchState, circuit, solution: Solution, i_fs_a):
        self.engine = engine
        self.state = state
        self.circuit = circuit
        self.solution = solution
        self.i_fs_a = i_fs_a  # shape (P, 1)
        self._branch_of = {}
        self._elements: dict = {}  # element() by name: its arrays are formed once
        for j, br in enumerate(circuit.branches):
            self._branch_of.setdefault((br.element, br.role), j)

    @property
    def shape(self):
        return self.solution.shape

    def node_voltage(self, node: str) -> np.ndarray:
        """Voltage of a node against the input's minus terminal [V], shape (P, S)."""
        i = self.circuit.node_index.get(node)
        if i is None:
            return np.zeros(self.shape)
        return self.solution.node_voltage(i)

    def _branch_current(self, name, role):
        j = self._branch_of.get((name, role))
        return None if j is None else self.solution.branch_current(j)

    @property
    def movement_current_a(self) -> np.ndarray:
        """Current through the movement from its first to its second node [A], (P, S)."""
        m = self.engine.movement
        i = self._branch_current(m.name, "movement")
        return np.zeros(self.shape) if i is None else i

    @property
    def movement_multiple(self) -> np.ndarray:
        """Movement current as a multiple of the (possibly drawn) full-scale current."""
        return self.movement_current_a / self.i_fs_a

    def reading(self) -> np.ndarray:
        """What the pointer reads on this state's position, in its unit [V] or [A]."""
        p = self.state.position
        return p.kind.reading(self.movement_multiple, p.full_scale)

    @property
    def source_current_a(self) -> np.ndarray:
        """Current the stimulus delivers into the input's plus terminal [A], (P, S)."""
        sol = self.solution
        c = self.circuit
        if c.source_kind == "current":
            return np.broadcast_to(self._stimulus, self.shape)
        j = self._branch_of.get(("__source__", "source"))
        if j is not None:
            return sol.branch_current(j)
        held = c.held
        out = np.zeros(self.shape)
        for j, (a, b) in enumerate(zip(c.lin_a, c.lin_b)):
            if a == held:
                out = out + sol.branch_current(j)
            elif b == held:
                out = out - sol.branch_current(j)
        for j, name in enumerate(c.diodes):
            e = self.engine.elements[name]
            if c.node_index.get(e.anode) == held:
                out = out + sol.i_diode[:, :, j]
            elif c.node_index.get(e.cathode) == held:
                out = out - sol.i_diode[:, :, j]
        for j, name in enumerate(c.varistors):
            a, b = self.engine.elements[name].nodes
            if c.node_index.get(a) == held:
                out = out + sol.i_varistor[:, :, j]
            elif c.node_index.get(b) == held:
                out = out - sol.i_varistor[:, :, j]
        return out

    def element(self, name: str) -> ElementStress:
        """Current, voltage and power of one element (zero where it is out of circuit); formed once per name."""
        hit = self._elements.get(name)
        if hit is None:
            hit = self._elements[name] = self._element(name)
        return hit

    def _element(self, name: str) -> ElementStress:
        e = self.engine.elements[name]
        a, b = e.nodes
        v = self.node_voltage(a) - self.node_voltage(b)
        if e.stamp == "junction":
            if name in self.circuit.diodes:
                i = self.solution.i_diode[:, :, self.circuit.diodes.index(name)]
            else:
                i = np.zeros(self.shape)
        elif e.stamp == "varistor":
            c = self.circuit
            if name in c.varistors:
                i = self.solution.i_varistor[:, :, c.varistors.index(name)]  # first terminal to second
            else:
                i = np.zeros(self.shape)
        else:
            i = self._branch_current(name, e.kind)
            if i is None:
                i = np.zeros(self.shape)
                if e.merges(self.state.closed):
                    i = np.full(self.shape, np.nan)  # an ideal closed contact: current not tracked
                # (a closed contact with resistance that is no branch hangs in a dead part: no current)
        return ElementStress(name, e.kind, i, v, v * i)

    def stresses(self) -> list[ElementStress]:
        """Every rated element's stress (contacts are not rated), in network order."""
        return [self.element(e.name) for e in self.engine.net.elements if e.rated]


class Engine:
    """Operating points of every switch state of a design.

    Parameters
    ----------
    design : Design
        The project with its network (:func:`planner.design.build`), checked and
        with its states compiled once for every engine on it.
    warm : bool
        Start each solve of a compiled state from this engine's previous solution of
        it, case by case where the stimulus rows are the same (an iteration that
        changes a part's value a little per step, :mod:`planner.stress.tripped`):
        fewer Newton steps, the same operating points to the solver's tolerance.
    """

    def __init__(self, design: Design, *, warm: bool = False):
        if not isinstance(design, Design):
            raise TypeError("Engine takes a Design: Engine(planner.design.build(spec))")
        self.design = design
        self.spec = design.spec
        self.net = design.net
        self.elements = design.elements
        self.movement = design.movement
        self.warm = warm
        self._last: dict = {}  # with warm: id(circuit) -> its last Solution (which holds the circuit)
        self._as_model: dict = {}  # (designator, model) -> the diode element with that model (``models=``)

    # --- states -------------------------------------------------------------------
    @property
    def positions(self):
        return self.net.positions

    def state(self, name) -> nw.SwitchState:
        return self.design.state(name)

    def transitions(self) -> list[nw.SwitchState]:
        return self.design.transitions()

    def circuit(self, st: nw.SwitchState, kind: str, with_source_r: bool):
        return self.design.circuit(st, kind, with_source_r)

    # --- parameters -------------------------------------------------------------------
    def branch_resistances(self, circuit, temperature_k, factors: Mapping[str, np.ndarray] | None,
                           r_source_ohm=0.0, settings: Mapping[str, np.ndarray] | None = None) -> np.ndarray:
        """Resistance of each linear branch at temperature, shape (P, L) [ohm].

        Notes
        -----
        Each part gives its own value at temperature (:meth:`planner.parts.Part.resistance`):
        resistors and the coil follow :math:`R(T) = R (1 + \\alpha (T - T_{ref}))`
        (design contract), fuses and contacts are held constant; ``factors``
        multiplies the nominal value of a resistor or the coil (a tolerance draw);
        ``settings`` gives a rheostat's setting [ohm], arrays of shape (P,).
        """
        spec = self.spec
        t = np.atleast_1d(np.asarray(temperature_k, dtype=float))[:, None]
        dt = t - spec.ambient.t_ref_k
        factors = factors or {}
        settings = settings or {}
        cols = []
        for br in circuit.branches:
            if br.role == "source":
                val = np.asarray(r_source_ohm, dtype=float).reshape(-1, 1) + 0.0 * dt
            elif br.element in settings:
                s = np.asarray(settings[br.element], dtype=float).reshape(-1, 1)
                val = self.elements[br.element].resistance(spec, dt, s)
            else:
                val = self.elements[br.element].resistance(spec, dt)
            if br.role != "source" and br.element in factors:
                val = val * np.asarray(factors[br.element], dtype=float).reshape(-1, 1)
            cols.append(val)
        if not cols:
            return np.zeros((t.shape[0], 0))
        return np.concatenate(np.broadcast_arrays(*cols), axis=1)

    def emfs(self, circuit, emf=None) -> np.ndarray | None:
        """EMF of each linear branch, shape (P, L) [V], or None when the state holds no battery.

        Parameters
        ----------
        emf : str or mapping, optional
            A level for every battery (``min``, ``nominal``, ``max``), or EMFs per
            designator (arrays of shape (P,) [V]); the nominal EMF otherwise.
        """
        named = emf if isinstance(emf, Mapping) else {}
        level = emf if isinstance(emf, str) else "nominal"
        cols, any_emf = [], False
        for br in circuit.branches:
            e = self.elements.get(br.element)
            if e is None:
                cols.append(np.zeros((1, 1)))
                continue
            val = named[br.element] if br.element in named else e.emf(level)
            val = np.asarray(val, dtype=float).reshape(-1, 1)
            any_emf = any_emf or bool(np.any(val != 0.0))
            cols.append(val)
        if not any_emf:
            return None
        return np.concatenate(np.broadcast_arrays(*cols), axis=1)

    def junctions(self, circuit, temperature_k, factors=None, models=None, stacks=None) -> Junctions:
        """Junction parameters at temperature for each diode of a compiled state.

        ``models``: diode models per designator, sequences of model names (P,) that
        replace the element's own model row by row; ``stacks``: junctions in series per
        designator, sequences of counts (P,) (:meth:`operate`).

        Notes
        -----
        A stack of N identical junctions in series carries one current and shares its
        voltage equally, so it obeys exactly the law of one junction with
        :math:`nV_t' = N nV_t`, :math:`BV' = N BV`, :math:`R_s' = N R_s`,
        :math:`G_p' = G_p / N` and the same :math:`I_s` and :math:`I_{BV}`
        (:mod:`planner.solve.chains`).
        """
        spec = self.spec
        t = np.atleast_1d(np.asarray(temperature_k, dtype=float))[:, None]
        factors = factors or {}
        models = models or {}
        stacks = stacks or {}
        cols = []
        for name in circuit.diodes:
            if name in models:
                isat, nvt, bv, ibv, r_s, g_p = self._junction_of_models(name, models[name], t)
            else:
                isat, nvt, bv, ibv, r_s, g_p = self.elements[name].junction(spec, t)
            if name in factors:
                isat = isat * np.asarray(factors[name], dtype=float).reshape(-1, 1)
            if name in stacks:
                k = np.asarray(stacks[name], dtype=float).reshape(-1, 1)
                nvt, bv, r_s, g_p = nvt * k, bv * k, r_s * k, g_p / k
            cols.append((isat, nvt, bv, ibv, r_s, g_p))
        if not cols:
            z = np.zeros((t.shape[0], 0))
            return Junctions(z, z, z, z, z, z)
        return Junctions(*(np.concatenate(np.broadcast_arrays(*xs), axis=1) for xs in zip(*cols)))

    def _junction_of_models(self, name: str, models, t) -> list[np.ndarray]:
        """:meth:`planner.parts.diode.DiodePart.junction` of diode ``name`` with the model of each row
        (``models``, shape (P,)) at the temperatures ``t`` ((P, 1) or (1, 1)); each of shape (P, 1)."""
        names = np.asarray(models, dtype=object).reshape(-1)
        t = np.broadcast_to(t, (names.size, 1))
        out = None
        for m in dict.fromkeys(names.tolist()):
            rows = names == m
            el = self._as_model.get((name, m))
            if el is None:
                el = self._as_model[(name, m)] = replace(self.elements[name], model=m)
            got = el.junction(self.spec, t[rows])
            if out is None:
                out = [np.empty((names.size, 1)) for _ in got]
            for o, g in zip(out, got):
                o[rows] = g
        return out

    def varistors(self, circuit) -> Varistors | None:
        """Varistor parameters of a compiled state (None when it has none), shapes (M,)."""
        if not circuit.varistors:
            return None
        law = np.array([self.elements[name].law(self.spec) for name in circuit.varistors], dtype=float)
        return Varistors(law[:, 0], law[:, 1], law[:, 2])

    # --- solving ---------------------------------------------------------------------
    def operate(self, state, stimulus, *, kind: str | None = None, temperature_k=None,
                r_source_ohm=0.0, factors: Mapping[str, np.ndarray] | None = None,
                settings: Mapping[str, np.ndarray] | None = None, emf=None,
                waveform: str | None = None, start=None,
                models: Mapping[str, np.ndarray] | None = None,
                stacks: Mapping[str, np.ndarray] | None = None) -> Operating:
        """Solve one switch state for a batch of stimuli and parameter sets.

        Parameters
        ----------
        state : str or SwitchState
            A position name, a transition name, or a state.
        stimulus : array_like, shape (S,) or (P, S)
            Applied volts (voltage stimulus) or amperes (current stimulus).
        kind : {'voltage', 'current'}, optional
            What is applied; the position's own quantity by default.
        temperature_k : float or array_like (P,), optional
            Ambient temperature [K]; the reference temperature by default.
        r_source_ohm : float or array_like (P,)
            Source resistance of a voltage stimulus [ohm].
        factors : mapping, optional
            Multipliers of nominal values per designator, arrays of shape (P,):
            resistors and the movement (coil resistance), diodes (saturation
            current); the key ``"i_fs"`` multiplies the full-scale current.
        settings : mapping, optional
            Rheostat settings per designator [ohm], arrays of shape (P,).
        emf : str or mapping, optional
            Battery EMFs: a level (``min``, ``nominal``, ``max``) or arrays (P,) per
            designator [V] (:meth:`emfs`); nominal by default.
        waveform : str, optional
            Solve the stimulus as cycle quantities of this wave, ``stimulus`` being
            rms values, shape (T,) (:func:`planner.ranges.ac.operate_cycle`). By
            default a position's own stimulus (``kind`` not given) is the waveform
            its range kind reads (``sine`` on AC ranges: a
            :class:`planner.ranges.ac.CycleOperating` comes back), and a stimulus
            of a given ``kind`` is instantaneous values.
        start : tuple of ndarray, optional
            Where Newton starts every case of an instantaneous solve (``start`` of
            :func:`planner.solve.solve`); the results do not depend on it.
        models : mapping, optional
            Diode models per designator, sequences of model names of shape (P,): each
            parameter set's diode obeys that model's law (of ``parts.diodes``) instead
            of its own, so that networks alike but for their diodes' models are solved
            as the parameter sets of one call (instantaneous solves only).
        stacks : mapping, optional
            Junctions in series per designator, sequences of counts of shape (P,): the
            diode stands, row by row, for a stack of that many identical junctions
            (the composite law of :meth:`junctions`); its voltage is the stack's.

        Returns
        -------
        Operating
        """
        st = self.state(state)
        if waveform is None and kind is None:
            waveform = st.position.kind.waveform
        if waveform is not None and (waveform != "dc" or st.position.kind.waveform != "dc"):
            if models or stacks:
                raise UsageError("diode models and stacks per row apply to instantaneous solves: give the stimulus "
                                 "kind")
            return operate_cycle(self, st, stimulus, waveform, kind=kind or st.position.kind.source,
                                 temperature_k=temperature_k, r_source_ohm=r_source_ohm, factors=factors)
        kind = kind or st.position.kind.source
        if kind not in ("voltage", "current"):
            raise UsageError(f"stimulus kind must be 'voltage' or 'current', not {kind!r}")
        t = self.spec.ambient.t_ref_k if temperature_k is None else temperature_k
        with_r = kind == "voltage" and np.any(np.asarray(r_source_ohm) > 0)
        circuit = self.circuit(st, kind, bool(with_r))
        r = self.branch_resistances(circuit, t, factors, r_source_ohm, settings)
        jn = self.junctions(circuit, t, factors, models, stacks)
        stim = np.atleast_1d(np.asarray(stimulus, dtype=float))
        emfs = self.emfs(circuit, emf)
        if start is None and self.warm:
            start = self._start(circuit, stim, r, jn, emfs)
        sol = solve(circuit, r, jn, stim, emf=emfs, varistors=self.varistors(circuit), start=start)
        if self.warm and sol.start_rows is not None:
            self._last[id(circuit)] = sol
        i_fs = self.spec.movement.i_fs_a * np.ones((sol.shape[0], 1))
        if factors and "i_fs" in factors:
            i_fs = i_fs * np.asarray(factors["i_fs"], dtype=float).reshape(-1, 1)
        op = Operating(self, st, circuit, sol, i_fs)
        op._stimulus = stim if stim.ndim == 2 else stim[None, :]
        return op

    def _start(self, circuit, stim, r, jn, emfs):
        """The previous solution's rows of this circuit, one per case, where every new stimulus
        row is one of its rows (the first such), else None."""
        prev = self._last.get(id(circuit))
        if prev is None:
            return None
        prev_stim = prev.stimulus
        stim2 = np.atleast_2d(stim)
        p = max(stim2.shape[0], r.shape[0], jn.i_s.shape[0], 1 if emfs is None else emfs.shape[0])
        if stim2.shape[1] != prev_stim.shape[1] or stim2.shape[0] not in (1, p):
            return None
        rows = []
        for row in np.broadcast_to(stim2, (p, stim2.shape[1])):
            same = np.nonzero(np.all(prev_stim == row, axis=1))[0]
            if not same.size:
                return None
            rows.append(int(same[0]))
        u, w = prev.start_rows
        s = prev_stim.shape[1]
        u = u.reshape(prev_stim.shape[0], s, -1)[rows].reshape(p * s, -1)
        w = w.reshape(prev_stim.shape[0], s, -1)[rows].reshape(p * s, -1)
        return u, w

    def reading(self, position, applied, **kwargs) -> np.ndarray:
        """Pointer reading [V or A] of a position for applied values of its own quantity.

        Returns shape (S,) for a single parameter set, else (P, S).
        """
        out = self.operate(position, applied, **kwargs).reading()
        return out[0] if out.shape[0] == 1 else out
