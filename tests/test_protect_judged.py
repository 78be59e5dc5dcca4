"""planner protect judged on the misrange matrix (planner/protect/judged.py).

The decisive checks run ``planner faults`` (``faults_project``) on the file the search
wrote, loaded again: the written plan must reproduce the matrix the search claimed, never
be worse than the project as given, and on a copy of the flagship stripped of its
protection parts find a plan at least as good as the hand design (no more failing cases).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from planner.faults import faults_project
from planner.project import load, loads
from planner.protect import protect_project, write_protected
from planner.design import build
from planner.protect.judged import (from_dict, matrix_score, matrix_tally, not_worse, plan_key, protection_candidates,
                                    same_request)

from conftest import VOLTMETER
from test_sizing_protection import FLAGSHIP


def _case(verdict, ratio, accepted=False):
    return {"verdict": verdict, "deciding": {"ratio": ratio}, "accepted": accepted}


def test_matrix_score_counts_failing_cases_and_the_worst_ratio():
    faults = {"cases": [_case("ok", 0.5), _case("pegs", 0.9), _case("overstress", 3.0),
                        _case("hazard", 7.0, accepted=True)],
              "transitions": [_case("hazard", 2.0), _case("opens", 0.4)], "requirements_met": False}
    s = matrix_score(faults)
    assert (s["failing"], s["failing_cases"], s["failing_transitions"]) == (2, 1, 1)  # the accepted one is not
    assert s["worst_ratio"] == 7.0 and s["verdicts"] == {"ok": 1, "pegs": 1, "overstress": 1, "hazard": 1}


def test_plan_key_orders_failing_then_ratio_then_price_then_parts():
    def row(failing, worst, price=0.0, parts=0):
        return {"matrix": {"failing": failing, "worst_ratio": worst}, "price_share": price, "parts_added": parts}

    rows = [row(3, 1.0), row(1, 9.0), row(1, 2.0, parts=5), row(1, 2.0, parts=2), row(1, 2.0, price=1.5)]
    ordered = sorted(rows, key=plan_key)
    assert ordered == [rows[3], rows[2], rows[4], rows[1], rows[0]]  # over-share price after within-share
    assert not_worse(rows[1]["matrix"], rows[0]["matrix"]) and not not_worse(rows[0]["matrix"], rows[1]["matrix"])


def test_protection_candidates_of_the_flagship():
    spec = load(FLAGSHIP)
    cands = protection_candidates(spec)
    assert cands[0] == spec.protection  # the file's own first
    assert None in cands
    # a crowbar is junction diodes rated for the main fuse's 1.6 A: only the 6 A rectifier
    assert {c.ring_crowbar for c in cands if c is not None} == {None, "si_6a"}
    assert {c.ma_fuse for c in cands if c is not None} == {None, "ma_315"}
    assert {c.input_ptc for c in cands if c is not None} == {None, "ptc_meter"}
    # each combination once: 2 PTC choices x 2 crowbar choices x 2 mA fuse choices, the file's own among
    # them (read from the file it carries its line; the same parts built from the catalogue do not)
    assert len(cands) == 2 * 2 * 2
    assert not any(same_request(a, b) for i, a in enumerate(cands) for b in cands[i + 1:])
    assert same_request(spec.protection, replace(spec.protection, line=None))
    assert not same_request(spec.protection, replace(spec.protection, ma_fuse=None)) and not same_request(None, cands[0])


def test_pocket_voltmeter_plan_is_never_worse_and_reproduces_its_matrix(tmp_path):
    spec = load(VOLTMETER)
    result = protect_project(spec)
    j = result["matrix"]
    assert not_worse(j["planned"], j["as_given"])
    assert result["requirements_met"] == (j["planned"]["failing"] == 0)
    out = tmp_path / "pocket_plan.yaml"
    written = write_protected(spec, result, out)
    if written is None:  # nothing better: nothing written, the plan is the project as given
        assert not out.exists() and not result["writes"] and j["planned"] == j["as_given"]
    else:
        back = matrix_score(faults_project(load(out)))
        assert back["failing"] == j["planned"]["failing"]
        np.testing.assert_allclose(back["worst_ratio"], j["planned"]["worst_ratio"], rtol=1e-9)


@pytest.fixture(scope="module")
def stripped(tmp_path_factory):
    """The flagship without its ``protection:`` section, and its search result."""
    text = FLAGSHIP.read_text(encoding="utf-8")
    a = text.index("\nprotection:")
    b = text.index("\nclamps:")
    path = tmp_path_factory.mktemp("stripped") / "bench_stripped.yaml"
    path.write_text(text[:a] + text[b:], encoding="utf-8")
    spec = load(path)
    assert spec.protection is None
    return spec, protect_project(spec, max_candidates=10), path  # the clamp search kept short: the parts decide


def test_stripped_multimeter_gets_a_plan_as_good_as_the_hand_design(stripped, tmp_path):
    spec, result, _ = stripped
    hand = matrix_score(faults_project(load(FLAGSHIP)))
    j = result["matrix"]
    assert j["planned"]["failing"] <= hand["failing"]
    assert j["planned"]["failing"] < j["as_given"]["failing"] and result["writes"]
    out = tmp_path / "bench_plan.yaml"
    assert write_protected(spec, result, out) is not None
    back_spec = load(out)
    assert back_spec.protection is not None
    back = matrix_score(faults_project(back_spec))
    # the written plan, loaded and sized again, reproduces the matrix the search claimed
    assert back["failing"] == j["planned"]["failing"] and back["verdicts"] == j["planned"]["verdicts"]
    np.testing.assert_allclose(back["worst_ratio"], j["planned"]["worst_ratio"], rtol=1e-9)
    text = out.read_text(encoding="utf-8")
    assert "# Protection parts chosen by the search" in text and text.count("\nprotection:") == 1


def test_judged_beside_the_search_decides_as_in_one_process():
    """The project as given judged in a child process beside the clamp search (``parallel=True``) and
    in the calling process after it (``parallel=False``): the same plan, the same failing counts."""
    spec = load(VOLTMETER)
    two = protect_project(spec, parallel=True)
    one = protect_project(spec, parallel=False)
    assert (two["chosen"] or {}).get("key") == (one["chosen"] or {}).get("key")
    assert (two["writes"], two["requirements_met"]) == (one["writes"], one["requirements_met"])
    for key in ("as_given", "planned"):
        a, b = two["matrix"][key], one["matrix"][key]
        assert (a["failing"], a["verdicts"]) == (b["failing"], b["verdicts"])
        # the matrix's figures may differ in their last digits with the solver's history in the process
        np.testing.assert_allclose(a["worst_ratio"], b["worst_ratio"], rtol=1e-6)
    assert [r["label"] for r in two["matrix"]["parts"]] == [r["label"] for r in one["matrix"]["parts"]]
    # the search's next candidate and final placement evaluated ahead on a worker: the same search
    for key in ("candidates_evaluated", "rows_reevaluated", "pruned", "pruned_sites", "truncated"):
        assert two[key] == one[key], key
    assert [r["key"] for r in two["pareto"]] == [r["key"] for r in one["pareto"]]
    for a, b in zip(two["sites"], one["sites"]):
        assert a["site"] == b["site"]
        np.testing.assert_allclose(list(a["bound_multiples"].values()), list(b["bound_multiples"].values()),
                                   rtol=1e-9)  # the same solves in another process: round-off at most


def test_matrix_tally_is_the_whole_matrix_score():
    """Tallied state by state without a bound, the matrix scores as ``planner faults`` does (the reference:
    :func:`planner.faults.faults_project` with its protection curves and readings, summed up by
    :func:`matrix_score`); with a bound it stops at a count above the bound and below the whole count."""
    for path in (VOLTMETER, FLAGSHIP):
        design = build(load(path))
        whole = matrix_score(faults_project(design))
        tally, stopped = matrix_tally(design)
        assert stopped is None
        assert {k: v for k, v in tally.items() if k != "worst_ratio"} == \
            {k: v for k, v in whole.items() if k != "worst_ratio"}
        np.testing.assert_allclose(tally["worst_ratio"], whole["worst_ratio"], rtol=1e-12)  # the same solves
    # the flagship as given fails two transitions: a bound of one stops it at the second
    part, stopped = matrix_tally(design, bound=1)
    assert whole["failing"] == 2 and stopped is not None
    assert stopped["failing_at_least"] == part["failing"] == 2 and stopped["bound"] == 1
    assert stopped["states_judged"] <= stopped["states"] and not part["requirements_met"]
    # the states that failed are judged first next time: found at once
    again, st2 = matrix_tally(design, bound=0, first=stopped["failing_states"])
    assert st2["states_judged"] == 1 and again["failing"] >= 1


def test_stopped_combinations_could_never_be_the_plan(stripped):
    """A combination whose matrix was stopped counted more failing cases than a whole matrix judged before
    it; judged whole, it keeps at least that many (the count is a sum over the states)."""
    spec, result, _ = stripped
    rows = result["matrix"]["parts"]
    whole = [r for r in rows if "stopped" not in r]
    stopped = [r for r in rows if "stopped" in r]
    assert whole and stopped  # both occur on the stripped flagship
    best = min(r["matrix"]["failing"] for r in whole)
    assert rows[0] in whole and rows[0]["matrix"]["failing"] == best
    for r in stopped:
        assert r["matrix"]["failing"] == r["stopped"]["failing_at_least"] > r["stopped"]["bound"] >= best
        assert r["stopped"]["states_judged"] < r["stopped"]["states"]
    r = stopped[0]
    full = matrix_score(faults_project(build(replace(spec, protection=from_dict(r["protection"])))))
    assert full["failing"] >= r["stopped"]["failing_at_least"]
