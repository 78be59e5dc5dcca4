"""Work ahead on a second core: the next item of a list evaluated in a forked worker.

The search visits its candidates one after the other, and whether it visits one
at all may depend on what the ones before it gave (a bound that prunes it). The
evaluation of a candidate, though, depends on the candidate alone. :class:`Ahead`
keeps a forked worker process that evaluates the *predicted* next candidate while
this process evaluates the current one; when the search reaches the predicted
candidate and still wants it, with the same inputs, it takes the worker's answer,
else the answer is dropped and the candidate evaluated here. So the search makes
the same decisions in the same order as without the worker; only the time differs.

Where there is no second core, no ``fork`` start method, or the worker dies, every
item is evaluated in this process.
"""

from __future__ import annotations

import warnings
from typing import Any, Callable

from ..background import cores

__all__ = ["Ahead"]


class Ahead:
    """A forked worker that runs ``task(payload)`` for one item at a time.

    Parameters
    ----------
    task : callable(payload) -> result
        Runs in the worker, on the memory of this process as it is at the fork
        (nothing is pickled on the way in but the payload); its result is
        pickled back.
    parallel : bool, optional
        Force (True) or forbid (False) the worker; by default one is started
        where this process may run on two cores or more and ``fork`` exists.

    Notes
    -----
    Use it as a context manager: the worker is stopped however the block ends.
    One item is in flight at a time: :meth:`send` refuses a second.
    """

    def __init__(self, task: Callable[[Any], Any], parallel: bool | None = None):
        self._task = task
        self._proc = None
        self._conn = None
        self._flight = None  # the key of the item in flight
        if parallel is None:
            parallel = cores() >= 2
        if parallel:
            try:
                self._start()
            except Exception:  # noqa: BLE001 - no worker: everything is evaluated here
                self._proc = self._conn = None

    def _start(self) -> None:
        import multiprocessing

        if "fork" not in multiprocessing.get_all_start_methods():
            return
        ctx = multiprocessing.get_context("fork")
        mine, theirs = ctx.Pipe(duplex=True)
        proc = ctx.Process(target=_serve, args=(self._task, theirs, mine), daemon=False)
        with warnings.catch_warnings():
            # numpy's BLAS pool re-initialises after a fork (see planner.background)
            warnings.simplefilter("ignore", DeprecationWarning)
            proc.start()
        theirs.close()
        self._proc, self._conn = proc, mine

    @property
    def idle(self) -> bool:
        """Whether an item can be sent now (a worker runs and nothing is in flight)."""
        return self._conn is not None and self._flight is None

    def holds(self, key) -> bool:
        """Whether the item in flight is ``key``."""
        return self._conn is not None and self._flight is not None and self._flight == key

    def send(self, key, payload) -> bool:
        """Start ``task(payload)`` in the worker, remembered as ``key``; False when it cannot."""
        if not self.idle:
            return False
        try:
            self._conn.send(payload)
        except Exception:  # noqa: BLE001 - a payload that does not pickle, or a dead worker
            self.close()
            return False
        self._flight = key
        return True

    def take(self):
        """The result of the item in flight (waiting for it), or None when the worker failed."""
        if self._flight is None or self._conn is None:
            return None
        self._flight = None
        try:
            status, value = self._conn.recv()
        except (EOFError, OSError):
            self.close()
            return None
        return value if status == "ok" else None

    def drop_done(self) -> None:
        """Throw away the result of the item in flight when it is there (never waits for it)."""
        if self._flight is not None and self._conn is not None:
            try:
                ready = self._conn.poll(0)
            except (EOFError, OSError):
                self.close()
                return
            if ready:
                self.take()

    def close(self) -> None:
        """Stop the worker."""
        conn, proc = self._conn, self._proc
        self._conn = self._proc = None
        self._flight = None
        if conn is not None:
            try:
                conn.send(None)
            except Exception:  # noqa: BLE001 - already gone
                pass
            conn.close()
        if proc is not None:
            proc.join(timeout=1.0)
            if proc.is_alive():
                proc.terminate()
                proc.join()

    def __enter__(self) -> "Ahead":
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _serve(task, conn, other=None) -> None:
    """The worker: answer each payload with ``("ok", task(payload))`` or ``("error", text)`` until None.

    It first closes its copy of the caller's end (``other``), so that the caller's death
    ends the pipe and the worker with it (:func:`planner.background._child` does the same).
    """
    if other is not None:
        other.close()
    while True:
        try:
            payload = conn.recv()
        except (EOFError, OSError):
            break
        if payload is None:
            break
        try:
            out = ("ok", task(payload))
        except Exception as exc:  # noqa: BLE001 - the caller evaluates the item itself
            out = ("error", repr(exc))
        try:
            conn.send(out)
        except Exception:  # noqa: BLE001 - an unpicklable result: the caller evaluates it itself
            try:
                conn.send(("error", "unpicklable result"))
            except Exception:  # noqa: BLE001
                break
    conn.close()
