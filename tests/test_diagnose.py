"""Checks of planner.diagnose: drifted parts found from readings, groups, replacements, input errors.

Readings are made here, outside the planner, by the textbook formulas of the
example meter (projects/worn_multimeter.yaml: a chain multiplier and an Ayrton
ring, no diodes): on a voltage position the movement current is
I_m = V / (R_m + sum of the chain up to the tap), on a current position
I_m = I R_below / (R_ring + R_m), with R_below the ring below the input tap
(T. R. Kuphaldt, *Lessons in Electric Circuits*, Vol. I, ch. 8, "Voltmeter
design" and "Ammeter design"); the reading is I_m / I_fs x full scale. Known
drifts go in, measurement noise of a stated size (seeded) is added, and the
diagnosis must find what went in.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

import eseries  # the PyPI package, an outside oracle for IEC 60063 values
from planner.cli import main
from planner.diagnose import diagnose, diagnosis_json, read_readings
from planner.diagnose.estimate import soft
from planner.diagnose.identify import identify, separating_readings
from planner.diagnose.meter import Meter
from planner.errors import ProjectError
from planner.project import load

ROOT = Path(__file__).resolve().parent.parent
WORN = ROOT / "projects" / "worn_multimeter.yaml"
WORN_READINGS = ROOT / "projects" / "worn_multimeter_readings.csv"

# The example meter, copied from projects/worn_multimeter.yaml (its marked values).
I_FS, R_M = 200e-6, 500.0
NOMINAL = {"R1": 12e3, "R2": 33e3, "R3": 4.7e3, "R4": 180e3, "R5": 22e3, "R6": 1e6,
           "R7": 112.5, "R8": 11.25, "R9": 1.25}
CHAIN = {"2.5 V": ["R1"], "10 V": ["R1", "R2", "R3"], "50 V": ["R1", "R2", "R3", "R4", "R5"],
         "250 V": ["R1", "R2", "R3", "R4", "R5", "R6"]}
BELOW = {"1 mA": ["R7", "R8", "R9"], "10 mA": ["R8", "R9"], "100 mA": ["R9"]}
FULL = {"2.5 V": 2.5, "10 V": 10.0, "50 V": 50.0, "250 V": 250.0, "1 mA": 1e-3, "10 mA": 10e-3, "100 mA": 0.1}
UNIT = {"2.5 V": "V", "10 V": "V", "50 V": "V", "250 V": "V", "1 mA": "A", "10 mA": "A", "100 mA": "A"}

#: Resolution declared to the diagnosis, % of full scale; the noise added is uniform
#: within +-NOISE_PCT of full scale, inside the declared resolution's +-0.2 %.
RESOLUTION = "0.4 %"
NOISE_PCT = 0.1


def is_series_value(series: str, value: float) -> bool:
    """Whether value is a value of an IEC 60063 series, by the eseries package."""
    return math.isclose(eseries.find_nearest(getattr(eseries, series), value), value, rel_tol=1e-9)


def hand_reading(position: str, applied: float, values: dict, i_fs: float = I_FS, r_m: float = R_M) -> float:
    """Reading of the example meter by the series-multiplier and Ayrton-shunt formulas."""
    if position in CHAIN:
        i_m = applied / (r_m + sum(values[k] for k in CHAIN[position]))
    else:
        ring = values["R7"] + values["R8"] + values["R9"]
        i_m = applied * sum(values[k] for k in BELOW[position]) / (ring + r_m)
    return i_m / i_fs * FULL[position]


def write_readings(path: Path, drifts: dict, positions=tuple(FULL), fractions=(1.0, 0.8, 0.5), seed=7,
                   override=None) -> Path:
    """A readings file from drifted values, with seeded uniform noise of +-NOISE_PCT of full scale.

    ``drifts`` maps designators (and ``"i_fs"``, the movement's full-scale current) to
    factors of their marked values.
    """
    values = {k: v * drifts.get(k, 1.0) for k, v in NOMINAL.items()}
    i_fs = I_FS * drifts.get("i_fs", 1.0)
    rng = np.random.default_rng(seed)
    lines = ["# synthetic readings (tests/test_diagnose.py)", "position,applied,reading"]
    for p in positions:
        for f in fractions:
            a = f * FULL[p]
            r = hand_reading(p, a, values, i_fs) + rng.uniform(-1, 1) * NOISE_PCT / 100 * FULL[p]
            cell = (override or {}).get((p, f), f"{r!r}")
            lines.append(f"{p},{a!r},{cell}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def worn():
    return load(WORN)


def _run(spec, path, **kw):
    return diagnose(spec, path, resolution=0.004, **kw)


# --- drifted parts ------------------------------------------------------------------------


@pytest.mark.parametrize("drifts", [{"R1": 1.15, "R6": 1.20}, {"R2": 1.18, "R4": 1.25}],
                         ids=["R1+15,R6+20", "R2+18,R4+25"])
def test_two_drifted_parts_are_found_within_their_intervals_and_ranked_first(worn, tmp_path, drifts):
    d = _run(worn, write_readings(tmp_path / "r.csv", drifts))
    j = diagnosis_json(d)
    top = j["suspects"][:2]
    assert {s["part"] for s in top} == set(drifts)
    for s in top:
        true_pct = (drifts[s["part"]] - 1.0) * 100.0
        lo, hi = s["interval_pct"]
        assert lo <= true_pct <= hi, (s["part"], true_pct, lo, hi)
        assert s["drifted"] is True
        np.testing.assert_allclose(s["estimated_ohm"], NOMINAL[s["part"]] * (1 + s["change_pct"] / 100), rtol=1e-12)
    # no other part is called drifted
    assert not any(s["drifted"] for s in j["suspects"][2:])
    assert j["consistent"] is True
    # the readings are explained to within the added noise (uniform +-0.1 % of full scale)
    assert j["residual_pct"] <= NOISE_PCT
    assert j["requirements_met"] is True
    assert set(drifts) <= {r["part"] for r in j["replacements"]}


def test_a_weakened_magnet_is_found_among_the_unknowns(worn, tmp_path):
    # the file gives full_scale_tolerance: 3 %, so I_fs is an unknown; current ranges beside
    # voltage ranges tell it from the multiplier
    drifts = {"i_fs": 0.94, "R6": 1.20}
    d = _run(worn, write_readings(tmp_path / "r.csv", drifts))
    j = diagnosis_json(d)
    top = {s["part"]: s for s in j["suspects"][:2]}
    assert set(top) == {"M1 full-scale current", "R6"}
    s = top["M1 full-scale current"]
    assert s["nominal_ohm"] is None and s["nominal_a"] == I_FS
    assert s["interval_pct"][0] <= -6.0 <= s["interval_pct"][1] and s["drifted"]
    # no part replaced for the magnet but R6; the ranges are brought back by new values
    assert j["requirements_met"] is True


def test_movement_values_without_tolerance_join_only_where_the_readings_pin_them(worn, tmp_path):
    import dataclasses

    from planner.diagnose.diagnosis import choose_unknowns
    from planner.diagnose.estimate import observations

    # the example with 0.1 % resistors and a calibrated full-scale current (no tolerance)
    els = tuple(dataclasses.replace(e, tolerance=0.001) if e.kind == "resistor" else e for e in worn.network.elements)
    spec = dataclasses.replace(worn, movement=dataclasses.replace(worn.movement, i_fs_tolerance=0.0),
                               network=dataclasses.replace(worn.network, elements=els))
    meter = Meter(spec)

    def unknowns(positions):
        r = read_readings(write_readings(tmp_path / "r.csv", {}, positions=positions), meter.positions)
        return {u.key for u in choose_unknowns(meter, observations(meter, r, 0.004))} - set(NOMINAL)

    # voltage ranges read I_fs (R_m + R_chain): one product per range, R_m a small share of it;
    # current ranges read I_fs (R_ring + R_m) / R_below: the same two in another product.
    # Either alone pins I_fs (given the 0.1 % resistors) but not R_m besides; both together
    # pin both (two products with different weights of R_m).
    assert unknowns(tuple(CHAIN)) == {"i_fs"}
    assert unknowns(tuple(BELOW)) == {"i_fs"}
    assert unknowns(tuple(FULL)) == {"i_fs", "M1"}
    # with the example's own 10 % carbon multiplier the coil is never pinned
    m = Meter(worn)
    r = read_readings(write_readings(tmp_path / "w.csv", {}), m.positions)
    assert "M1" not in {u.key for u in choose_unknowns(m, observations(m, r, 0.004))}


def test_replacements_restore_every_position_by_the_hand_formulas(worn, tmp_path):
    drifts = {"R1": 1.15, "R6": 1.20}
    d = _run(worn, write_readings(tmp_path / "r.csv", drifts))
    # the meter as the diagnosis estimated it, with the replacements fitted
    est = {s.unknown.key: s.unknown.nominal * math.exp(s.theta) for s in d.suspects}
    i_fs, r_m = est.pop("i_fs", I_FS), est.pop("M1", R_M)  # the movement, where it was estimated
    for r in d.plan.replacements:
        est[r.part] = r.value_ohm
        # each fixed part is an E-series value (IEC 60063) of the series it is said to be
        for p in r.parts:
            if not p["trimmer"]:
                assert is_series_value(p["series"], p["value_ohm"]), p
        # the combination makes the value reported: series R = sum, parallel 1/R = sum 1/R_i
        vals = [p["value_ohm"] for p in r.parts]
        if r.arrangement in ("single", "series pair"):
            np.testing.assert_allclose(r.value_ohm, sum(vals), rtol=1e-12)
        elif r.arrangement == "parallel pair":
            np.testing.assert_allclose(r.value_ohm, 1 / sum(1 / v for v in vals), rtol=1e-12)
    for p in FULL:
        err = (hand_reading(p, FULL[p], {**NOMINAL, **est}, i_fs, r_m) - FULL[p]) / FULL[p] * 100
        assert abs(err) <= 2.5, (p, err)  # class 2.5 (IEC 60051 class index, % of full scale)
        np.testing.assert_allclose(err, d.plan.errors_after_pct[list(FULL).index(p)], atol=1e-6)


def test_readings_on_one_position_report_the_parts_it_cannot_separate(worn, tmp_path):
    path = write_readings(tmp_path / "r.csv", {"R4": 1.25}, positions=("50 V",))
    d = _run(worn, path)
    j = diagnosis_json(d)
    # 50 V reads R_m + R1 + ... + R5 as one sum: R1..R5 cannot be told apart (I_fs with them)
    group = next(g for g in j["unresolved"] if "R4" in g)
    assert {"R1", "R2", "R3", "R4", "R5"} <= set(group)
    assert not any(s["drifted"] for s in j["suspects"])  # no guess
    g = next(g for g in j["groups"] if "R4" in g["parts"])
    assert g["matters"] is True
    # the readings that separate them are taken on other positions of the chain
    assert g["next_readings"] and g["next_readings"][0]["position"] in ("2.5 V", "10 V")
    assert {r["part"] for r in j["replacements"]}.isdisjoint(group)
    assert "R6" in j["unmeasured"] and "R9" in j["unmeasured"]
    assert j["requirements_met"] is False
    assert main(["diagnose", str(WORN), str(path), "--resolution", RESOLUTION, "--json"]) == 1


def test_series_pair_is_one_group_that_no_reading_separates(worn, tmp_path):
    d = _run(worn, write_readings(tmp_path / "r.csv", {}))
    groups = {tuple(g.parts): g for g in d.groups}
    # R2, R3 are in series in every position (and R4, R5): no terminal reading separates them
    assert ("R2", "R3") in groups and ("R4", "R5") in groups
    assert groups[("R2", "R3")].next_readings == ()
    assert d.requirements_met


def test_a_pegged_reading_is_one_sided(worn, tmp_path):
    drifts = {"R1": 1.15, "R6": 1.20}
    path = write_readings(tmp_path / "r.csv", drifts, fractions=(1.0, 0.8, 0.5, 1.5),
                          override={(p, 1.5): "pegged" for p in FULL})
    d = _run(worn, path)
    j = diagnosis_json(d)
    assert {s["part"] for s in j["suspects"][:2]} == set(drifts)
    pegged = [r for r in j["readings"] if r["reading"] is None]
    assert len(pegged) == len(FULL) and all(r["status"] == "pegged" for r in pegged)
    # each pegged reading's prediction is at or past the stop (1.1 x full scale, the file's peg)
    for r in pegged:
        assert r["predicted"] >= 1.1 * FULL[r["position"]] - 0.004 * FULL[r["position"]]
    assert j["consistent"] is True


def test_a_dead_range_is_set_aside_and_named(worn, tmp_path):
    drifts = {"R1": 1.15}
    path = write_readings(tmp_path / "r.csv", drifts, override={("250 V", f): "0 V" for f in (1.0, 0.8, 0.5)})
    d = _run(worn, path)
    j = diagnosis_json(d)
    assert [u["position"] for u in j["unexplained"]] == ["250 V"] * 3
    assert j["unexplained"][0]["open_suspects"] == ["R6"]  # the only part in the 250 V path alone
    assert j["suspects"][0]["part"] == "R1" and j["suspects"][0]["drifted"]
    lo, hi = j["suspects"][0]["interval_pct"]
    assert lo <= 15.0 <= hi
    assert j["consistent"] is False and j["requirements_met"] is False
    assert main(["diagnose", str(WORN), str(path), "--resolution", RESOLUTION, "--json"]) == 1


def test_the_example_readings_give_the_documented_drifts(worn, capsys):
    # the drifts documented in projects/worn_multimeter.yaml (its header comment)
    documented = {"R1": 1.14, "R2": 1.04, "R4": 1.08, "R5": 0.97, "R6": 1.21, "R8": 1.006}
    values = {k: v * documented.get(k, 1.0) for k, v in NOMINAL.items()}
    readings = read_readings(WORN_READINGS, Meter(worn).positions)
    for p, a, r in zip(readings.position, readings.applied, readings.reading):
        # rounded to a fifth of a division of a 50-division scale: within +-0.2 % of full scale
        assert abs(r - hand_reading(p, a, values)) <= 0.002 * FULL[p] * (1 + 1e-9), (p, a, r)
    assert main(["diagnose", str(WORN), str(WORN_READINGS), "--resolution", RESOLUTION, "--json"]) == 0
    j = json.loads(capsys.readouterr().out)
    assert [s["part"] for s in j["suspects"][:2]] == ["R6", "R1"]
    for s in j["suspects"][:2]:
        lo, hi = s["interval_pct"]
        assert lo <= (documented[s["part"]] - 1) * 100 <= hi


def test_json_contract_fields(worn, tmp_path, capsys):
    path = write_readings(tmp_path / "r.csv", {"R1": 1.15, "R6": 1.20})
    assert main(["diagnose", str(WORN), str(path), "--json", "--resolution", RESOLUTION]) == 0
    j = json.loads(capsys.readouterr().out)
    # design contract, "Restoration: diagnosis, netlists"
    for s in j["suspects"]:
        assert {"part", "nominal_ohm", "estimated_ohm", "change_pct", "interval_pct"} <= set(s)
        assert len(s["interval_pct"]) == 2 and s["interval_pct"][0] <= s["change_pct"] <= s["interval_pct"][1]
    assert isinstance(j["residual_pct"], float)
    assert all(isinstance(g, list) and all(isinstance(p, str) for p in g) for g in j["unresolved"])
    for r in j["replacements"]:
        assert {"part", "value_ohm", "series"} <= set(r)
    assert j["confidence"] == 0.95


def test_the_table_names_the_drifted_parts(worn, tmp_path, capsys):
    path = write_readings(tmp_path / "r.csv", {"R1": 1.15, "R6": 1.20})
    assert main(["diagnose", str(WORN), str(path), "--resolution", RESOLUTION]) == 0
    out = capsys.readouterr().out
    assert "DRIFTED" in out and "replace:" in out and "IEC 61010-1" in out


# --- the pieces ----------------------------------------------------------------------------


def test_soft_residual_squares_to_the_soft_l1_cost():
    # scipy.optimize.least_squares documents soft_l1 as rho(z) = 2 ((1 + z)^0.5 - 1) of z = f^2,
    # scaled by C^2 with f / C inside
    z = np.linspace(-50, 50, 201)
    for c in (1.0, 3.0):
        r, dr = soft(z, c)
        np.testing.assert_allclose(r ** 2, c ** 2 * 2 * (np.sqrt(1 + (z / c) ** 2) - 1), rtol=1e-12, atol=1e-15)
        h = 1e-6  # central difference; rtol for its O(h^2) error
        num = (soft(z + h, c)[0] - soft(z - h, c)[0]) / (2 * h)
        np.testing.assert_allclose(dr, num, rtol=1e-6, atol=1e-9)


def test_identify_groups_equal_columns_and_resolves_independent_ones():
    # Golub & Van Loan, Matrix Computations, 4th ed., sec. 2.4: two equal columns leave one
    # direction of zero singular value (their difference); an independent column is resolved.
    a = np.zeros((4, 3))
    a[:2, 0] = a[:2, 1] = [40.0, 20.0]
    a[2:, 2] = [30.0, 10.0]
    ident = identify(a)
    assert ident.groups == [[0, 1]]
    assert ident.resolved.tolist() == [False, False, True]
    np.testing.assert_allclose(ident.singular_values[-1], 0.0, atol=1e-9)
    # a reading that sees only the first column tells them apart
    steps = separating_readings(a, {"other": np.array([0.0, 0.0, 5.0]), "first": np.array([25.0, 0.0, 0.0])},
                                [0, 1])
    assert steps[0][0] == "first" and steps[0][2] is True
    # none does when no candidate breaks the tie
    assert separating_readings(a, {"same": np.array([10.0, 10.0, 0.0])}, [0, 1]) == []


# --- bad input -----------------------------------------------------------------------------


@pytest.mark.parametrize("text, line, words", [
    ("position,reading\n10 V,9 V\n", 1, "lacks the column 'applied'"),
    ("# bench, 2026\nposition,applied,reading\n10 V,10 V,9.4 V\n10v,10 V,9 V\n", 4, "did you mean '10 V'?"),
    ("position,applied,reading\n10 V,10 mA,9.4 V\n", 2, "is a current"),
    ("position,applied,reading\n10 V,10 V,9.4 volt-ish\n", 2, "not a unit"),
    ("position,applied,reading\n10 V,-10 V,9.4 V\n", 2, "not positive"),
    ("position,applied,reading\n10 V;10 V;9.4 V\n", 2, "cell"),
    ("position,aplied,reading\n", 1, "did you mean 'applied'?"),
    ("position,applied,reading\n", 1, "no readings"),
])
def test_bad_readings_files_exit_2_with_file_and_line(tmp_path, capsys, text, line, words):
    path = tmp_path / "bad.csv"
    path.write_text(text, encoding="utf-8")
    assert main(["diagnose", str(WORN), str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith(f"planner: {path}:{line}: "), err
    assert words in err and "\n" not in err


def test_bad_options_exit_2(tmp_path, capsys):
    path = write_readings(tmp_path / "r.csv", {})
    assert main(["diagnose", str(WORN), str(path), "--resolution", "50 %"]) == 2
    assert "--resolution" in capsys.readouterr().err
    assert main(["diagnose", str(WORN), str(path), "--series", "E7"]) == 2
    assert "E-series" in capsys.readouterr().err
    assert main(["diagnose", str(WORN), str(tmp_path / "missing.csv")]) == 2
    assert "no such file" in capsys.readouterr().err


def test_read_readings_keeps_lines_and_pegged(tmp_path, worn):
    path = tmp_path / "r.csv"
    path.write_text("# c\n\nreading,position,applied,note\n9.4 V,10 V,10,first\nover,10 V,15 V,\n", encoding="utf-8")
    r = read_readings(path, Meter(worn).positions)
    assert r.lines.tolist() == [4, 5] and r.pegged.tolist() == [False, True]
    np.testing.assert_allclose(r.applied, [10.0, 15.0], rtol=0)  # a bare number is SI (volts here)
    with pytest.raises(ProjectError, match="no such file"):
        read_readings(tmp_path / "none.csv", Meter(worn).positions)
