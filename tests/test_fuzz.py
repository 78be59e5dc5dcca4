"""Fuzzing: hostile project text and random networks never end in anything but a PlannerError.

Two properties, checked with hypothesis:

1. Project text. Random mutations of the example projects (delete a key, change a unit,
   swap a value for text, a list, a mapping, a negative number, NaN or infinity, rename a
   node, duplicate an element, and line-level damage: delete, duplicate, truncate, insert
   odd characters) go to :func:`planner.project.loads`. It returns a Spec or raises
   :class:`planner.errors.ProjectError` with the file name and a line inside the file,
   as one line of text; never any other exception. A Spec with a network then goes
   through :func:`planner.network.validate` under the same rule.
2. Random networks of the contract's element kinds (resistors, diodes with random models
   including zero series resistance, breakdown and leakage, contacts open or closed, zero
   or finite resistance, one movement), connected or not: ``Engine(spec).operate`` either
   returns operating points that satisfy Kirchhoff's current law at every node and each
   diode's own law (both computed here from the element currents and voltages the engine
   reports), or raises a PlannerError that names the case (the position, or an element or
   node of the network).

Budget: 2000 examples in all (800 + 300 + 900), about 15 to 20 s on the CI machine (the
loader's line-tracking YAML composer takes about 13 ms per file), derandomized: the same
examples every run. ``PLANNER_FUZZ_EXAMPLES=N`` runs N examples per property, drawn
afresh each run (long runs of 2500 to 5000 per property passed while this was written).
"""

from __future__ import annotations

import copy
import math
import os
import re
from pathlib import Path

import numpy as np
import yaml
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from planner import network as nw
from planner.design import build
from planner.engine import Engine
from planner.errors import PlannerError, ProjectError
from planner.model import (DEFAULT_T_REF_K, Ambient, Contact, Diode, DiodeModel, Movement, MovementElement,
                           NetworkSpec, Parts, Position, Resistor, Spec)
from planner.project import loads
from planner.solve import STEP_TOL, thermal_voltage

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = {p.name: p.read_text(encoding="utf-8") for p in sorted((ROOT / "projects").glob("*.yaml"))}
_FAST_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
_FAST_DUMPER = getattr(yaml, "CSafeDumper", yaml.SafeDumper)
PARSED = {name: yaml.load(text, Loader=_FAST_LOADER) for name, text in EXAMPLES.items()}


def _examples(default: int) -> int:
    env = os.environ.get("PLANNER_FUZZ_EXAMPLES", "")
    return int(env) if env.strip() else default


FUZZ = dict(deadline=None, derandomize=not os.environ.get("PLANNER_FUZZ_EXAMPLES"),
            suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much, HealthCheck.data_too_large])


# --- 1. project text ----------------------------------------------------------------------------

UNITS = ["V", "mV", "kV", "A", "uA", "mA", "ohm", "kohm", "Mohm", "mohm", "W", "mW", "%", "ppm/K", "degC", "K",
         "s", "ms", "A^2*s", "eV", "J", "", "m", "M", "furlong", "V/V", "ohm*m", "Hz", "dB"]
ODD_VALUES = ["", "~", "null", "[]", "{}", "[1, 2]", "{a: 1}", "-1", "-2 kohm", ".nan", "nan V", ".inf", "-.inf",
              "1e300", "1e-400 ohm", "0", "0 ohm", "true", "no", "2024-02-30", "999999999999999999999999999",
              "'   '", "!!binary aGVsbG8=", "&a x", "*undefined", "'\u00b5A'", "50 \u00b5A", "\u2126", "1 2 3 V",
              "0x10 V", "1_000 ohm", "+-5 V", "50uA", "5e-5", "'10 V'", "\"\\x00\"", "'\\t'"]


def _paths(obj, prefix=()):
    """Every (path, value) in a nested structure of dicts and lists."""
    yield prefix, obj
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _paths(v, prefix + (i,))


def _get(obj, path):
    for k in path:
        obj = obj[k]
    return obj


@st.composite
def tree_mutation(draw, data):
    """One structural mutation of a parsed project; returns (new data, what was done)."""
    paths = [p for p, _ in _paths(data) if p]
    path = draw(st.sampled_from(paths))
    parent, key = _get(data, path[:-1]), path[-1]
    op = draw(st.sampled_from(["delete", "unit", "odd", "odd", "negative", "nan", "rename_node", "duplicate",
                               "string", "list", "mapping"]))
    value = parent[key]
    if op == "delete":
        del parent[key]
    elif op == "unit" and isinstance(value, str) and re.match(r"^\s*[-+0-9.]", value):
        number = re.match(r"^\s*[-+0-9.eE]+", value).group(0)
        parent[key] = f"{number} {draw(st.sampled_from(UNITS))}".strip()
    elif op == "negative" and isinstance(value, (str, int, float)) and not isinstance(value, bool):
        parent[key] = "-" + str(value).lstrip("-")
    elif op == "nan":
        parent[key] = draw(st.sampled_from([math.nan, math.inf, -math.inf, "nan", "inf A", "-inf ohm", 1e300]))
    elif op == "rename_node":
        nodes = sorted({n for p, v in _paths(data) if p and p[-1] in ("between", "input")
                        for n in (v if isinstance(v, list) else []) if isinstance(n, str)})
        if nodes:
            old = draw(st.sampled_from(nodes))
            new = draw(st.sampled_from(["x_new", old.upper(), old + " ", "com", "plus", old[:-1] or "q", "1"]))
            hits = [p for p, v in _paths(data) if v == old and len(p) >= 2]
            if hits:
                target = draw(st.sampled_from(hits))
                _get(data, target[:-1])[target[-1]] = new
    elif op == "duplicate":
        lists = [p for p, v in _paths(data) if isinstance(v, list) and v]
        if lists:
            lp = draw(st.sampled_from(lists))
            items = _get(data, lp)
            items.insert(draw(st.integers(0, len(items))), draw(st.sampled_from(items)))
    elif op == "string":
        parent[key] = draw(st.text(max_size=12))
    elif op == "list":
        parent[key] = [value, value] if draw(st.booleans()) else []
    elif op == "mapping":
        parent[key] = {"value": value}
    else:  # "odd", or an op that did not apply to this value
        parent[key] = yaml.safe_load(draw(st.sampled_from(ODD_VALUES[:6]))) if draw(st.booleans()) else \
            draw(st.sampled_from(ODD_VALUES))
    return data, f"{op} at {'.'.join(map(str, path))}"


@st.composite
def mutated_project(draw):
    """A mutated example project as YAML text: structure-level and then text-level damage."""
    name = draw(st.sampled_from(sorted(EXAMPLES)))
    text = EXAMPLES[name]
    if draw(st.integers(0, 4)) > 0:  # mostly structural mutations, re-dumped as YAML
        data = copy.deepcopy(PARSED[name])
        for _ in range(draw(st.integers(1, 3))):
            data, _ = draw(tree_mutation(data))
        try:
            text = yaml.dump(data, Dumper=_FAST_DUMPER, sort_keys=False, allow_unicode=True, default_flow_style=None)
        except yaml.YAMLError:
            pass
        # odd scalars were put in as text: let some of them become YAML again
        if draw(st.booleans()):
            text = re.sub(r"'(\.nan|\.inf|-\.inf|~|null|\[\]|\{\}|!!binary aGVsbG8=|&a x|\*undefined)'", r"\1", text)
    lines = text.split("\n")
    for _ in range(draw(st.integers(0, 2))):  # line-level damage
        op = draw(st.sampled_from(["delete", "duplicate", "truncate", "insert", "indent"]))
        i = draw(st.integers(0, max(0, len(lines) - 1)))
        if op == "delete" and lines:
            del lines[i]
        elif op == "duplicate" and lines:
            lines.insert(i, lines[i])
        elif op == "truncate" and lines:
            lines[i] = lines[i][:draw(st.integers(0, len(lines[i])))]
        elif op == "insert" and lines:
            j = draw(st.integers(0, len(lines[i])))
            odd = draw(st.sampled_from([":", "- ", "\t", "&x ", "*x", "{", "]", "'", '"', "#", "\x07", "\ufeff",
                                        "%", "!", "|", ">", "? ", "\u00e9", "\ud7ff", "\x85"]))
            lines[i] = lines[i][:j] + odd + lines[i][j:]
        elif op == "indent" and lines:
            lines[i] = draw(st.sampled_from(["", " ", "   ", "      "])) + lines[i].lstrip()
    return name, "\n".join(lines)


@settings(max_examples=_examples(800), **FUZZ)
@given(mutated_project())
def test_loader_only_ever_returns_a_spec_or_raises_a_project_error(case):
    name, text = case
    path = f"fuzz/{name}"
    try:
        spec = loads(text, path)
    except ProjectError as e:
        msg = e.one_line()
        assert e.path == path and msg.startswith(path)
        assert e.line is None or 1 <= e.line <= text.count("\n") + 2, (e.line, msg)
        assert "\n" not in msg and "Traceback" not in msg
        return
    assert isinstance(spec, Spec)
    if spec.network is not None:
        try:
            nw.validate(spec)
        except PlannerError as e:
            assert "\n" not in e.one_line()


@settings(max_examples=_examples(300), **FUZZ)
@given(st.binary(max_size=400) | st.text(max_size=400))
def test_loader_survives_noise(data):
    try:
        assert isinstance(loads(data, "noise.yaml"), Spec)
    except ProjectError as e:
        assert e.path == "noise.yaml" and "\n" not in e.one_line()


# --- 2. random networks -----------------------------------------------------------------------------

POSITION = "RANGE_Q7"  # a distinctive name, so that a message naming it can be told apart


def _log(lo, hi):
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda x: 10.0 ** x)


@st.composite
def diode_models(draw, name):
    return DiodeModel(
        name, draw(_log(1e-16, 1e-4)), n=draw(st.floats(0.8, 3.0)),
        r_s_ohm=draw(st.sampled_from([0.0, 0.0, 1e-3, 0.5, 30.0])),
        r_p_ohm=draw(st.sampled_from([math.inf, math.inf, 1e3, 1e9, 1e13])),
        eg_ev=draw(st.sampled_from([0.69, 1.11])), xti=draw(st.sampled_from([2.0, 3.0])),
        bv_v=draw(st.sampled_from([None, None, None, 0.7, 5.6, 200.0])),
        ibv_a=draw(st.sampled_from([1e-6, 1e-3, 0.1])))


@st.composite
def random_networks(draw):
    """A random network around one movement: connected (a ring through every node plus chords)
    or, now and then, a free random topology that may leave nodes floating or islands apart."""
    n = draw(st.integers(2, 8))
    nodes = ["plus", "com"] + [f"n{i}" for i in range(n - 2)]
    connected = draw(st.integers(0, 5)) > 0
    pairs = []
    if connected:  # a ring through every node (no node hangs on one element), then chords
        order = draw(st.permutations(nodes))
        pairs += list(zip(order, order[1:] + order[:1])) if n > 2 else [("plus", "com"), ("com", "plus")]
    for _ in range(draw(st.integers(0 if connected else 1, 8))):
        a, b = draw(st.sampled_from([(p, q) for p in nodes for q in nodes if p != q]))
        pairs.append((a, b))
    m_at = draw(st.integers(0, len(pairs) - 1))
    elements, diodes, contacts = [], [], []
    for k, (a, b) in enumerate(pairs):
        if k == m_at:
            elements.append(MovementElement("M1", a, b))
            continue
        what = draw(st.sampled_from(["resistor", "resistor", "resistor", "diode", "contact"]))
        if what == "resistor":
            elements.append(Resistor(f"R{k}", a, b, draw(_log(1e-3, 1e9))))
        elif what == "diode":
            model = draw(diode_models(f"d{k}"))
            diodes.append(model)
            elements.append(Diode(f"D{k}", a, b, model.name))
        else:
            c = Contact(f"S{k}", a, b, (POSITION,) if draw(st.booleans()) else (),
                        r_ohm=draw(st.sampled_from([0.0, 0.0, 1e-3, 0.05])))
            contacts.append(c)
            elements.append(c)
    if contacts and not any(c.closed_in for c in contacts) and draw(st.integers(0, 4)) > 0:
        first = contacts[0]  # mostly a position that some contact serves
        elements[elements.index(first)] = Contact(first.name, first.a, first.b, (POSITION,), first.r_ohm)
    kind = draw(st.sampled_from(["voltage", "current"]))
    fs = 10.0 if kind == "voltage" else 1e-2
    positions = (Position(POSITION, kind, fs, ("plus", "com")),)
    movement = Movement(i_fs_a=draw(_log(1e-6, 1e-2)), r_coil_ohm=draw(_log(1.0, 1e4)), class_index=1.5)
    spec = Spec(title="fuzz", movement=movement, parts=Parts(diodes={d.name: d for d in diodes}),
                ambient=Ambient(), network=NetworkSpec(tuple(elements), positions), path="fuzz.yaml")
    lo, hi = (-6.0, 3.0) if kind == "voltage" else (-12.0, 1.0)
    magnitude = st.one_of(st.just(0.0), st.floats(lo, hi).map(lambda x: 10.0 ** x))
    stimuli = [m * s for m, s in draw(st.lists(st.tuples(magnitude, st.sampled_from([-1.0, 1.0])),
                                                min_size=1, max_size=5))]
    r_source = draw(st.sampled_from([0.0, 0.0, 0.5, 1e3])) if kind == "voltage" else 0.0
    return spec, np.array(stimuli), r_source


def _kind_of(msg: str) -> str:
    """The kind of a message, names blanked out (for hypothesis' statistics)."""
    text = msg.split(": ", 1)[-1]
    return re.sub(r"'[^']*'|\b[A-Z]+\d+\b|\b[a-z]+\d\b", "_", text)[:50]


def _names(spec):
    net = spec.network
    return {e.name for e in net.elements} | {n for e in net.elements for n in e.nodes} | {POSITION}


def _junction_current(model: DiodeModel, vj, t_k):
    """The contract's diode law at the reference temperature (saturation current as given)."""
    nvt = model.n * thermal_voltage(t_k)
    i = model.i_s_a * np.expm1(np.minimum(vj / nvt, 700.0)) + vj / model.r_p_ohm
    if model.bv_v is not None:
        i = i - model.ibv_a * np.exp(np.minimum(-(vj + model.bv_v) / nvt, 700.0))
    return i


def check_operating_points(eng: Engine, op, spec, stimuli, r_source):
    """Kirchhoff's current law per node and each diode's law, from the reported element values."""
    kind = spec.network.positions[0].measures
    closed = eng.state(POSITION).closed
    parent = {}

    def find(x):
        parent.setdefault(x, x)
        while parent[x] != x:
            x = parent[x]
        return x

    for e in spec.network.elements:  # closed ideal contacts merge their nodes (their current is not tracked)
        if isinstance(e, Contact) and e.name in closed and e.r_ohm == 0.0:
            ra, rb = find(e.a), find(e.b)
            if ra != rb:
                parent[rb] = ra
    eps = np.finfo(float).eps
    v_all = [np.abs(op.node_voltage(x)[0]) for e in spec.network.elements for x in e.nodes]
    v_scale = np.max(v_all, axis=0) + (np.abs(stimuli) if kind == "voltage" else 0.0)
    # Node voltages are the touched nodes' own values or the linear part's gains (between 0 and 1)
    # times them: their rounding is a few ulp of the largest node voltage; the floor allows 1e3.
    v_floor = 1e3 * eps * v_scale
    net_out, mags, g_sum = {}, [], np.zeros_like(stimuli)
    for e in spec.network.elements:
        if isinstance(e, Contact) and (e.name not in closed or e.r_ohm == 0.0):
            continue
        s = op.element(e.name)
        i = s.current_a[0]
        assert np.all(np.isfinite(i)) and np.all(np.isfinite(s.voltage_v[0])), e.name
        mags.append(np.abs(i))
        if isinstance(e, Diode):
            model = spec.parts.diodes[e.model]
            nvt = model.n * thermal_voltage(DEFAULT_T_REF_K)
            if e.name in op.circuit.diodes:
                vj = op.solution.v_junction[0, :, op.circuit.diodes.index(e.name)]
                # the diode's own law: terminal voltage = junction + R_s drop, current from the junction
                # (tolerance: Newton's last step is below 1e-10 V relative, then one polishing step)
                v_term = s.voltage_v[0]
                assert np.all(np.abs(v_term - (vj + model.r_s_ohm * i)) <= 1e-9 * (1.0 + np.abs(v_term)) + v_floor), e.name
                law = _junction_current(model, vj, DEFAULT_T_REF_K)
                slope = np.abs(law) / nvt + 1.0 / model.r_p_ohm + 1e-12
                # |i - law(vj)| within the current a 1e-9 V error of vj would make
                assert np.all(np.abs(i - law) <= 1e-9 * np.abs(law) + slope * 1e-9 * (1.0 + np.abs(vj))), e.name
            g_sum = g_sum + np.abs(i) / nvt
        else:
            r = e.r_ohm if isinstance(e, Contact) else (spec.movement.r_coil_ohm if isinstance(e, MovementElement)
                                                        else e.value_ohm)
            g_sum = g_sum + 1.0 / r
        for node, sign in ((find(e.nodes[0]), 1.0), (find(e.nodes[1]), -1.0)):
            net_out[node] = net_out.get(node, 0.0) + sign * i
    if r_source > 0:
        g_sum = g_sum + 1.0 / r_source
    scale = np.max(np.vstack(mags + [np.abs(stimuli) if kind == "current" else np.zeros_like(stimuli)]), axis=0)
    plus, com = find("plus"), find("com")
    for node, total in net_out.items():
        if kind == "voltage" and node in (plus, com):
            continue  # the source's own current closes these two; checked below
        expected = 0.0
        if kind == "current" and plus != com:
            expected = stimuli if node == plus else (-stimuli if node == com else 0.0)
        # KCL to 1e-9 of the largest current, plus what the solver's own convergence test
        # allows (a step below STEP_TOL (1 + |V|) volts) and the rounding floor of the node
        # voltages, each times the conductances meeting there
        floor = (STEP_TOL * (1.0 + v_scale) + v_floor) * g_sum + 1e-18
        assert np.all(np.abs(total - expected) <= 1e-9 * scale + floor), (node, total, expected)
    if kind == "voltage":
        v_in = op.node_voltage("plus")[0] - op.node_voltage("com")[0]
        i_in = op.source_current_a[0]
        assert np.all(np.abs(v_in - (stimuli - r_source * i_in)) <= 1e-9 * (np.abs(stimuli) + 1e-12)
                      + 1e3 * eps * v_scale)


@settings(max_examples=_examples(900), **FUZZ)
@given(random_networks())
def test_random_networks_converge_or_fail_by_name(case):
    spec, stimuli, r_source = case
    try:
        eng = Engine(build(spec))
    except PlannerError as e:
        msg = e.one_line()
        assert isinstance(e, ProjectError) and e.path == "fuzz.yaml", msg
        assert any(re.search(rf"(?<![\w]){re.escape(n)}(?![\w])", msg) for n in _names(spec)), msg
        event("refused by validation: " + _kind_of(msg))
        return
    try:
        op = eng.operate(POSITION, stimuli, r_source_ohm=r_source)
    except PlannerError as e:
        msg = e.one_line()
        assert POSITION in msg, msg
        assert "\n" not in msg
        event(f"solver error: {msg.split(':')[1].split('(')[0].strip()[:40]}")
        return
    check_operating_points(eng, op, spec, stimuli, r_source)
    event("converged, laws checked")

