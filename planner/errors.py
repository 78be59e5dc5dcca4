"""Error types that reach a person.

Every error the planner raises on purpose derives from :class:`PlannerError` and
carries a one-line message that says what is wrong and what to do. The command
line prints that line and exits with code 2 (bad input) without a traceback.
"""

from __future__ import annotations


class PlannerError(Exception):
    """Base of every error the planner raises on purpose."""

    exit_code = 2

    def one_line(self) -> str:
        """The message as a single line, fit for a terminal."""
        return " ".join(str(self).split())


class ProjectError(PlannerError):
    """A problem in a project file: names the file, the line and the remedy.

    Parameters
    ----------
    message : str
        What is wrong and what to do about it.
    path : str, optional
        The project file.
    line : int, optional
        1-based line number in that file.
    """

    def __init__(self, message: str, path: str | None = None, line: int | None = None):
        self.message = message
        self.path = path
        self.line = line
        super().__init__(self._format())

    def _format(self) -> str:
        where = self.path or "<project>"
        if self.line is not None:
            where = f"{where}:{self.line}"
        return f"{where}: {self.message}"


class SolveError(PlannerError):
    """The solver could not find the operating point of a named case.

    Raised for a singular network (floating node, loop of ideal sources) or for a
    Newton iteration that did not converge after every fallback.
    """


class UsageError(PlannerError):
    """A command-line request that cannot be served (unknown position, bad option)."""
