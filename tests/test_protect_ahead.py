"""Tests of planner.protect.ahead: an item evaluated ahead in a forked worker.

The reference is the task run in the calling process: the worker's answer must be the
same, a worker that fails must leave the caller to evaluate the item itself (an answer of
None), and without a worker nothing is sent.
"""

from __future__ import annotations

import math

from planner.protect.ahead import Ahead


def _task(payload):
    if payload == "boom":
        raise ValueError("no answer")
    return {"square": payload * payload, "root": math.sqrt(payload)}


def test_the_worker_answers_as_the_task_does_here():
    with Ahead(_task, parallel=True) as ahead:
        assert ahead.idle
        assert ahead.send("k", 7.0)
        assert not ahead.send("other", 2.0)  # one item in flight at a time
        assert ahead.holds("k") and not ahead.holds("other")
        assert ahead.take() == _task(7.0)
        assert ahead.idle and not ahead.holds("k")


def test_the_worker_sees_this_process_as_at_the_fork():
    table = [3.0, 4.0]
    with Ahead(lambda i: table[i] * 2, parallel=True) as ahead:
        assert ahead.send(1, 1)
        assert ahead.take() == 8.0


def test_a_failing_task_leaves_the_item_to_the_caller():
    with Ahead(_task, parallel=True) as ahead:
        assert ahead.send("b", "boom")
        assert ahead.take() is None
        assert ahead.idle  # the worker goes on
        assert ahead.send("c", 4.0) and ahead.take() == _task(4.0)


def test_a_result_not_followed_is_dropped_when_done():
    with Ahead(_task, parallel=True) as ahead:
        ahead.send("guess", 2.0)
        while not ahead.idle:
            ahead.drop_done()  # never waits: called again until the worker is done with it
        assert ahead.send("next", 3.0) and ahead.take() == _task(3.0)


def test_without_a_worker_nothing_is_sent():
    with Ahead(_task, parallel=False) as ahead:
        assert not ahead.idle and not ahead.send("k", 1.0) and not ahead.holds("k")
        assert ahead.take() is None


def test_a_worker_whose_caller_died_ends():
    """The caller killed while its worker waits for the next item: the worker ends with it."""
    from processes import orphan_ends

    assert orphan_ends("import os; from planner.protect.ahead import Ahead; "
                       "a = Ahead(abs, parallel=True); print(a._proc.pid, flush=True); os._exit(0)")
