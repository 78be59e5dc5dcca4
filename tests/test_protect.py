"""Tests of planner.protect end to end: the clamp placement search, checked on the written project.

The decisive checks run the planner's own misrange matrix (``faults_project``)
and accuracy proof (``check_project``) on the project file the search wrote,
never the search's bookkeeping. The building blocks are tested in
``test_protect_candidates.py``, ``test_protect_context.py``,
``test_protect_ordering.py``; the written file in ``test_protect_write.py``.
"""

from __future__ import annotations

import json
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.optimize import brentq

from planner import model as m
from planner.accuracy import check_project
from planner.design import build
from planner.errors import UsageError
from planner.faults import faults_project
from planner.project import load, loads
from planner.protect import clamp_diodes, format_protect, protect_project, protected_text

from conftest import SCHOOL, VOLTMETER

SHARE = 0.25  # the default requirement: a quarter of the class at the hottest ambient


@pytest.fixture(scope="module")
def searched():
    """The pocket voltmeter and its search result as returned."""
    spec = load(VOLTMETER)
    return spec, protect_project(spec, share=SHARE)


@pytest.fixture(scope="module")
def pocket(searched):
    """The same with the clamp search's best placement as the chosen one (the clamp search's own checks;
    whether it is written is judged on the misrange matrix, tests/test_protect_judged.py)."""
    spec, result = searched
    return spec, dict(result, chosen=result["pareto"][0])


@pytest.fixture(scope="module")
def written(pocket, tmp_path_factory):
    spec, result = pocket
    out = tmp_path_factory.mktemp("protect") / "pocket_protected.yaml"
    out.write_text(protected_text(spec, result), encoding="utf-8")
    return load(out)


def _max_input_multiple(faults: dict) -> float:
    """Largest movement multiple of the 'max input' cases, both polarities, every position."""
    return max(c["movement_multiple"] for c in faults["cases"]
               if c["stimulus"] in ("max input", "max input reversed"))


def _bare(spec: m.Spec) -> m.Spec:
    """The same instrument with its clamp diodes taken out (an explicit network)."""
    net = build(spec).net
    keep = tuple(e for e in net.elements if e.name not in clamp_diodes(net))
    return replace(spec, network=replace(net, elements=keep), voltage=None, current=None, clamps=())


def _clamp_error_by_check(spec: m.Spec) -> dict:
    """Per position: largest change of reading the clamps cause at the hottest ambient, % of full scale.

    From two runs of ``check_project`` (the ``linearity_hot`` tables with and
    without the clamp diodes).
    """
    net = build(spec).net
    with_clamps = check_project(replace(spec, network=net, voltage=None, current=None, clamps=()), samples=20)
    without = check_project(_bare(spec), samples=20)
    out = {}
    for a, b in zip(with_clamps["positions"], without["positions"]):
        assert a["name"] == b["name"]
        out[a["name"]] = max(abs(x["reading"] - y["reading"]) for x, y in zip(a["linearity_hot"], b["linearity_hot"])) \
            / a["full_scale"] * 100.0
    return out


# --- the decisive checks, on the written project -------------------------------------------------


def test_written_project_protects_better_than_clamps_across_movement(pocket, written):
    spec, result = pocket
    # the example's own clamps are the one-diode pair straight across the movement
    net = spec.network
    mov = net.element("M1")
    assert sorted((net.element(n).anode, net.element(n).cathode) for n in clamp_diodes(net)) == \
        sorted([(mov.a, mov.b), (mov.b, mov.a)])
    before = _max_input_multiple(faults_project(spec))
    after = _max_input_multiple(faults_project(written))
    # common practice: a silicon junction needs a few hundred mV while the movement's
    # full-scale voltage is 100 mV here, so clamps across the movement let several
    # times full scale through; the searched tap must let strictly less through
    assert before > 3.0
    assert after < before
    assert result["improves_on_across_movement"] is True


def test_written_project_keeps_every_position_within_its_linearity_share(pocket, written):
    spec, result = pocket
    errors = _clamp_error_by_check(written)
    class_index = written.movement.class_index
    for name, e in errors.items():
        # IEC 60051-1: the class index is the limit of error in % of the fiducial value
        # (full scale); the requirement is a quarter of it at the hottest ambient
        assert e <= SHARE * class_index * (1 + 1e-9), name
    # and the written design still passes the planner's own accuracy proof
    assert check_project(written, samples=200)["requirements_met"] is True


def test_search_figures_agree_with_faults_and_check_on_the_written_file(pocket, written):
    spec, result = pocket
    chosen = result["chosen"]
    f = faults_project(written)
    by_pos = {}
    for c in f["cases"]:
        by_pos[c["position"]] = max(by_pos.get(c["position"], 0.0), c["movement_multiple"])
    reversed_sources = {s.name + " reversed" for s in spec.faults.sources if s.waveform == "dc"}
    for p in chosen["positions"]:
        # the search adds each DC source reversed to the matrix; take the matrix's own cases
        assert p["name"] in by_pos
        assert p["movement_multiple"] >= by_pos[p["name"]] * (1 - 1e-9)
    np.testing.assert_allclose(_max_input_multiple(f),
                               max(chosen["max_input_multiple_forward"], chosen["max_input_multiple_reverse"]),
                               rtol=1e-9)  # the same solver on the same network: round-off only
    errors = _clamp_error_by_check(written)
    for p in chosen["positions"]:
        np.testing.assert_allclose(errors[p["name"]], p["hot_linearity_error_pct"], rtol=1e-6, atol=1e-9)
    assert reversed_sources <= set(result["stimuli"])


def test_clamp_error_across_movement_matches_shockley_hand_computation(pocket):
    spec, result = pocket
    # 250 V range: chain R_c in series with the coil R_m, a silicon pair across the coil.
    # Junction law I = I_s(T) (exp(V/(n V_t)) - 1) + V/R_p for each diode (Shockley, Bell
    # System Technical Journal 28, 1949); I_s(T) by the SPICE temperature law (Antognetti
    # and Massobrio, Semiconductor Device Modeling with SPICE); copper coil 3930 ppm/K
    # (IEC 60028); resistors at their tempco. The clamps' error is the reading lost to them.
    k, q = 1.380649e-23, 1.602176634e-19  # exact SI values
    d = spec.parts.diodes["si_small"]
    t0, t = spec.ambient.t_ref_k, spec.ambient.t_max_k
    vt = k * t / q
    i_s = d.i_s_a * (t / t0) ** (d.xti / d.n) * math.exp((t / t0 - 1) * d.eg_ev / (d.n * vt))
    r_m = spec.movement.r_coil_ohm * (1 + spec.movement.tempco_per_k * (t - t0))
    r_c = sum(e.value_ohm * (1 + e.tempco_per_k * (t - t0)) for e in spec.network.elements
              if isinstance(e, m.Resistor))
    v_in = 250.0

    def pair(v):
        return i_s * (math.exp(v / (d.n * vt)) - 1) - i_s * (math.exp(-v / (d.n * vt)) - 1) \
            + 2 * v / d.r_p_ohm

    v = brentq(lambda v: (v_in - v) / r_c - v / r_m - pair(v), 0.0, 1.0, xtol=1e-15)
    lost_pct = (v_in / (r_c + r_m) - v / r_m) / spec.movement.i_fs_a * 100.0
    row = {p["name"]: p for p in result["baseline"]["across_movement"]["positions"]}
    # series resistance 0.5 ohm carries nA here: its drop is negligible (below 1e-8 relative)
    np.testing.assert_allclose(row["250 V"]["hot_linearity_error_pct"], lost_pct, rtol=1e-5)


# --- determinism, output ----------------------------------------------------------------------


def test_deterministic_for_a_project_and_seed(searched):
    spec, first = searched
    again = protect_project(spec, share=SHARE)
    assert json.dumps(again, sort_keys=True) == json.dumps(first, sort_keys=True)
    assert again["seed"] == spec.analysis.seed


def test_result_is_json_with_the_fields_the_cli_reports(searched):
    spec, result = searched
    result = dict(result, chosen=result["pareto"][0])
    text = json.dumps(result, allow_nan=False)
    back = json.loads(text)
    assert back["candidates_evaluated"] > 0
    assert back["candidates_evaluated"] <= back["max_candidates"]
    for row in back["pareto"] + [back["chosen"], back["baseline"]["across_movement"]]:
        for key in ("site", "split_ohm", "forward_part", "forward_count", "reverse_part", "reverse_count",
                    "worst_movement_multiple", "worst_movement_multiple_forward",
                    "worst_movement_multiple_reverse", "hot_linearity_error_pct", "share_of_class",
                    "parts_count", "power_w"):
            assert key in row, key
        assert row["worst_movement_multiple"] == max(row["worst_movement_multiple_forward"],
                                                     row["worst_movement_multiple_reverse"])
    assert back["baseline"]["as_given"]["worst_movement_multiple"] > 0
    assert sum(1 for r in back["pareto"] if r["chosen"]) <= 1
    table = format_protect(searched[1])
    assert f"{result['candidates_evaluated']} candidates evaluated" in table
    assert "Judged on the misrange matrix" in table and "RESULT: requirement" in table


def test_pareto_rows_do_not_dominate_each_other(pocket):
    spec, result = pocket
    rows = result["pareto"]

    def vec(r):
        return [p["movement_multiple"] for p in r["positions"]] + [r["share_of_class"], r["parts_count"]]

    for a in rows:
        for b in rows:
            if a is not b:
                va, vb = vec(a), vec(b)
                assert not (all(x <= y for x, y in zip(va, vb)) and any(x < y for x, y in zip(va, vb)))


# --- a sized project -------------------------------------------------------------------------------


def test_sized_project_gets_a_new_clamps_section(tmp_path):
    spec = loads(SCHOOL, str(tmp_path / "school.yaml"))
    result = protect_project(spec)
    result = dict(result, chosen=result["pareto"][0])  # the clamp search's best (the matrix judges it apart)
    chosen = result["chosen"]
    assert chosen is not None and chosen["clamps"]
    out = tmp_path / "school_protected.yaml"
    out.write_text(protected_text(spec, result), encoding="utf-8")
    back = load(out)
    assert back.network is None and back.voltage == spec.voltage
    assert [(c.at, c.forward, c.reverse, c.count) for c in back.clamps] == \
        [(c["at"], c["forward"], c["reverse"], c["count"]) for c in chosen["clamps"]]
    before = _max_input_multiple(faults_project(spec))
    after = _max_input_multiple(faults_project(back))
    assert after < before  # checked by the misrange matrix on the written (re-sized) project
    errors = _clamp_error_by_check(back)
    for name, e in errors.items():
        # IEC 60051-1 class index in % of full scale; a quarter of it at the hottest ambient
        assert e <= SHARE * back.movement.class_index * (1 + 1e-9), name


# --- inputs and limits -------------------------------------------------------------------------------


@pytest.mark.parametrize("share", [0.0, -0.1, 1.5, float("nan"), "a quarter", True])
def test_bad_share_is_a_usage_error(voltmeter_spec, share):
    spec = voltmeter_spec
    with pytest.raises(UsageError):
        protect_project(spec, share=share)


def test_candidate_cap_stops_the_search(voltmeter_spec):
    spec = voltmeter_spec
    result = protect_project(spec, max_candidates=30)
    assert result["truncated"] is True
    assert result["candidates_evaluated"] <= 30
