"""Tests of planner.protect.ordering: leximax comparison of placements."""

from __future__ import annotations

from planner.protect import lex_best, lex_compare


def test_lex_compare_and_lex_best():
    assert lex_compare([5.0, 1.0], [6.0, 0.5]) == -1  # the worst position decides
    assert lex_compare([6.0, 1.0], [5.0, 0.5]) == 1
    assert lex_compare([10.0, 3.0], [10.1, 6.0]) == -1  # worst within 2 %: the next decides
    assert lex_compare([10.0, 3.0], [10.1, 3.05]) == 0
    assert lex_compare([1.0, 9.0], [9.0, 1.0]) == 0  # order of the positions does not matter
    items = [("a", [10.0, 6.0]), ("b", [10.1, 3.0]), ("c", [12.0, 1.0])]
    assert [x[0] for x in lex_best(items, lambda x: x[1])] == ["b"]
