"""One analysis beside another: the same answer from a forked child as from the calling process."""

from __future__ import annotations

import os
import sys

import pytest

from planner.background import Deal, beside, cores

fork_only = pytest.mark.skipif(sys.platform == "win32", reason="no fork start method")


def _text(exc: BaseException) -> str:
    return f"{type(exc).__name__}: {exc}"


@fork_only
def test_a_value_computed_in_the_child_comes_back_whole():
    parent = os.getpid()
    pending = beside(lambda: {"pid_differs": os.getpid() != parent, "values": list(range(100_000))}, _text,
                     parallel=True)
    value, error = pending.result()
    assert error is None
    assert value["pid_differs"]  # computed in another process
    assert value["values"] == list(range(100_000))


def test_without_a_child_the_value_is_computed_here_when_asked():
    calls = []
    pending = beside(lambda: calls.append(os.getpid()) or 42, _text, parallel=False)
    assert calls == []  # nothing computed before it is asked for
    assert pending.result() == (42, None)
    assert calls == [os.getpid()]
    assert pending.result() == (42, None) and len(calls) == 1  # computed once


@pytest.mark.parametrize("parallel", [False, True])
def test_an_exception_comes_back_as_its_text(parallel):
    def fails():
        raise ValueError("no matrix today")

    assert beside(fails, _text, parallel=parallel).result() == (None, "ValueError: no matrix today")


@fork_only
def test_a_child_that_dies_leaves_the_work_to_the_parent():
    parent = os.getpid()

    def dies_in_the_child():
        if os.getpid() != parent:
            os._exit(9)  # killed before it could answer
        return "computed by the parent"

    assert beside(dies_in_the_child, _text, parallel=True).result() == ("computed by the parent", None)


@fork_only
def test_a_child_may_share_its_work_with_a_child_of_its_own():
    def inner():
        return beside(lambda: os.getpid(), _text, parallel=True).result()

    (grandchild, error), outer_error = beside(lambda: (inner()[0], None), _text, parallel=True).result()
    assert outer_error is None and error is None
    assert grandchild != os.getpid()


@fork_only
def test_a_child_whose_parent_died_does_not_wait_for_ever():
    """A parent killed before it reads (a closed pipe downstream, an out-of-memory kill): its child's
    large answer finds no reader and the child ends, instead of blocking on the full pipe."""
    from processes import orphan_ends

    assert orphan_ends("import os; from planner.background import beside; "
                       "p = beside(lambda: b'x' * 4_000_000, str, parallel=True); "
                       "print(p._proc.pid, flush=True); os._exit(0)")


def test_cores_counts_at_least_one():
    assert cores() >= 1


@pytest.mark.parametrize("parallel", [True, False])
def test_a_single_piece_goes_to_one_process_only(parallel):
    """Of the parent and its child, exactly one takes a one-piece deal, whichever asks first."""
    deal = Deal(1)
    with beside(deal.back, str, parallel=parallel) as pending:
        mine = deal.front()
        theirs, error = pending.result()
    assert error is None
    assert sorted([mine, theirs], key=lambda x: x is None) == [0, None]
    assert deal.front() is None and deal.back() is None  # and nobody after them


@pytest.mark.parametrize("parallel", [True, False])
def test_every_piece_is_dealt_once_from_both_ends(parallel):
    """The parent takes from the front, the child from the back, until they meet: each piece once."""
    deal = Deal(40)

    def theirs():
        return [i for i in iter(deal.back, None)]

    with beside(theirs, str, parallel=parallel) as pending:
        mine = [i for i in iter(deal.front, None)]
        got, error = pending.result()
    assert error is None
    assert sorted(mine + got) == list(range(40))
    assert mine == sorted(mine) and got == sorted(got, reverse=True)
    assert not mine or not got or max(mine) < min(got)


def test_a_closed_deal_gives_nothing_more():
    deal = Deal(5)
    assert deal.front() == 0 and deal.back() == 4
    deal.close()
    assert deal.front() is None and deal.back() is None
