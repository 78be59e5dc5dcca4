"""One analysis run beside another on a second core: :func:`beside`.

A command that needs two independent analyses of one design (the dossier: the
accuracy check and the misrange matrix) can run one of them in a forked child
process while it computes the other itself. The child inherits the design as it
is in memory (nothing is pickled on the way in), computes, and sends its result
back through a pipe; the parent takes it when it needs it.

Where there is no second core, no ``fork`` start method (Windows, macOS's default)
or the child fails to start or dies, the analysis is computed in the calling
process when its result is asked for, so the answer is the same either way, only
the time differs. An exception the analysis raises in the child comes back as its
one-line text through ``on_error`` (the caller's own rendering of an exception),
as it would have in the parent.
"""

from __future__ import annotations

import contextlib
import os
import warnings
from typing import Any, Callable

__all__ = ["beside", "Deal", "Pending", "cores"]


def cores() -> int:
    """The processor cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


class Pending:
    """The result of :func:`beside`: :meth:`result` gives ``(value, None)`` or ``(None, error text)``."""

    def __init__(self, fn: Callable[[], Any], on_error: Callable[[BaseException], str]):
        self._fn = fn
        self._on_error = on_error
        self._proc = None
        self._conn = None
        self._done: tuple | None = None

    def _start(self) -> None:
        import multiprocessing

        ctx = multiprocessing.get_context("fork")
        recv, send = ctx.Pipe(duplex=False)
        # not a daemon: a child may start a child of its own (the dossier's matrix shares out its transitions);
        # the caller ends it with cancel() in every case
        proc = ctx.Process(target=_child, args=(self._fn, self._on_error, send, recv), daemon=False)
        try:
            with warnings.catch_warnings():
                # newer Pythons warn that forking a process with threads (numpy's BLAS pool) may deadlock
                # in the child; the child here runs numpy only, whose BLAS library re-initialises after a fork
                warnings.simplefilter("ignore", DeprecationWarning)
                proc.start()
        except BaseException:
            recv.close()
            raise
        finally:
            send.close()
        self._proc, self._conn = proc, recv

    def _here(self) -> tuple:
        try:
            return self._fn(), None
        except Exception as exc:  # noqa: BLE001 - handed to the caller as text, as the child does
            return None, self._on_error(exc)

    def result(self) -> tuple:
        """``(value, None)`` when the analysis returned, ``(None, text)`` when it raised."""
        if self._done is None:
            got = None
            if self._conn is not None:
                try:
                    got = self._conn.recv()
                except (EOFError, OSError):
                    got = None  # the child died: compute here
                finally:
                    self._close()
            self._done = got if got is not None else self._here()
        return self._done

    def _close(self) -> None:
        if self._conn is not None:
            self._conn.close()
            self._conn = None
        if self._proc is not None:
            self._proc.join(timeout=5.0)
            if self._proc.is_alive():
                self._proc.terminate()
                self._proc.join()
            self._proc = None

    def cancel(self) -> None:
        """Stop the child (if any) without waiting for its answer."""
        if self._proc is not None and self._proc.is_alive():
            self._proc.terminate()
        self._close()

    def __enter__(self) -> "Pending":
        return self

    def __exit__(self, *exc) -> None:
        self.cancel()  # the child never outlives the block, whatever ends it


class Deal:
    """Pieces of work both sides of :func:`beside` may do, each done once.

    Made before :func:`beside` forks: two counters in memory shared with the
    child, moved under a lock (without ``fork`` there is no child, and plain
    integers serve). The ``n`` pieces are numbered 0 to n - 1; one process takes
    them from the front (:meth:`front`), the other from the back (:meth:`back`),
    until they meet. The dossier deals its scale plate this way (one piece, made
    by whichever process is free first) and the check's positions (the parent
    checks from the first, the child from the last once its matrix is done).

    Parameters
    ----------
    n : int
        The number of pieces.
    """

    def __init__(self, n: int):
        self._shared = None
        self._ends = [0, int(n)]  # the next piece from the front, one past the next from the back
        try:
            import multiprocessing

            if "fork" in multiprocessing.get_all_start_methods():
                self._shared = multiprocessing.get_context("fork").Array("l", self._ends)
        except Exception:  # noqa: BLE001 - no shared memory: there will be no child either
            self._shared = None

    def _take(self, end: int) -> int | None:
        ends = self._ends if self._shared is None else self._shared
        lock = self._shared.get_lock() if self._shared is not None else contextlib.nullcontext()
        with lock:
            if ends[0] >= ends[1]:
                return None
            if end == 0:
                ends[0] += 1
                return ends[0] - 1
            ends[1] -= 1
            return ends[1]

    def front(self) -> int | None:
        """The lowest piece nobody has taken, now taken by the caller; None when none is left."""
        return self._take(0)

    def back(self) -> int | None:
        """The highest piece nobody has taken, now taken by the caller; None when none is left."""
        return self._take(1)

    def close(self) -> None:
        """Take every piece left, so that neither side starts another."""
        while self._take(1) is not None:
            pass


def _child(fn, on_error, send, recv=None) -> None:
    """The child's work: compute, send ``(value, None)`` or ``(None, text)``, exit.

    The child first closes its copy of the pipe's reading end: were the parent to
    die, the pipe then has no reader and the child's send fails at once, instead
    of blocking for ever on a full pipe that only the child itself holds open.
    """
    if recv is not None:
        recv.close()
    try:
        out = (fn(), None)
    except Exception as exc:  # noqa: BLE001 - sent as text
        out = (None, on_error(exc))
    try:
        send.send(out)
    except Exception as exc:  # noqa: BLE001 - an unpicklable result: the parent computes it itself
        del exc
    finally:
        send.close()


def beside(fn: Callable[[], Any], on_error: Callable[[BaseException], str], *, parallel: bool | None = None) -> Pending:
    """Start ``fn()`` in a forked child where a second core allows it.

    Parameters
    ----------
    fn : callable
        The analysis, with everything it needs bound (the child sees the parent's
        memory as it is at this call).
    on_error : callable(BaseException) -> str
        The text an exception of ``fn`` is reported as.
    parallel : bool, optional
        Force (True) or forbid (False) the child; by default a child is started
        when this process may run on two cores or more and ``fork`` exists.

    Returns
    -------
    Pending
        Ask :meth:`Pending.result` when the value is needed; use it as a context
        manager (``with beside(...) as pending:``) so that the child is stopped
        however the block ends.
    """
    pending = Pending(fn, on_error)
    if parallel is None:
        parallel = cores() >= 2
    if parallel:
        try:
            import multiprocessing

            if "fork" in multiprocessing.get_all_start_methods():
                pending._start()
        except Exception:  # noqa: BLE001 - no child could be started: computed here when asked
            pending._proc = pending._conn = None
    return pending
