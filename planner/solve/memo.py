"""A memo for the life of the process that cannot grow without bound.

Compiled states, solver structures, rating cases and value choices depend on their
key alone, and one command asks for the same ones again and again (a search's
candidates, a sizing's rounds, a matrix's states). :class:`Kept` holds them and
empties itself when full: a command that meets more keys than it holds computes
some of them again, never holds more than the limit.

It lives with the solver, which may import nothing of the project but its errors;
the network, the sizer and the stress analyses use it from here (they import the
solver anyway).
"""

from __future__ import annotations

__all__ = ["Kept"]


class Kept(dict):
    """A dict of values by key, emptied before it would hold more than ``limit`` of them."""

    def __init__(self, limit: int):
        super().__init__()
        self.limit = int(limit)

    def keep(self, key, value):
        """Keep ``value`` under ``key`` (emptying the memo first when it is full); returns ``value``."""
        if len(self) >= self.limit:
            self.clear()
        self[key] = value
        return value
