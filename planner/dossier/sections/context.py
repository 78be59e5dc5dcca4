"""What every section builder reads: the project, the analyses' results and the dossier's facts."""

from __future__ import annotations

from dataclasses import dataclass, field

from ..layout import FRAME_WIDTH, Heading
from ..text import SECTION_TITLES

#: Severity order of the misrange verdicts (the worst case of a position is the highest).
VERDICT_ORDER = {"ok": 0, "pegs": 1, "opens": 2, "overstress": 3, "hazard": 4}
#: Size of one chart of the position pages [pt]: two side by side across the frame.
CHART_W = (FRAME_WIDTH - 12) / 2
CHART_H = 158.0


@dataclass
class Context:
    """Everything the section builders read.

    Attributes
    ----------
    spec : Spec
    date : str
        The dossier's date (from the project or the caller; never the clock).
    version : str
        ``planner.__version__``.
    sha256 : str or None
        SHA-256 of the project file's text.
    net : NetworkSpec or None
        The network analysed (None when it could not be built).
    sizing, check, faults : dict or None
        The JSON results of the analyses (None when not run or failed).
    accuracy : planner.accuracy.CheckResult or None
        The accuracy check with the arrays it keeps (Monte Carlo errors, the
        sweep, node voltages and part stresses at full scale); None when it
        failed.
    wiring : planner.wiring.Wiring or None
        The range switch's wiring (every contact on a pole of a deck).
    errors : dict of str -> str
        Analysis name -> error text, for every analysis that raised.
    cautions : list of str
        Project-specific cautions (from the fault analysis and the sizer).
    samples, seed : int
        Monte Carlo settings used.
    plate : planner.scale.ScaleResult or str or None
        The scale plate the command had made beside the matrix (``plate`` of
        :func:`planner.dossier.gather`), or its error text; None when not asked for.
    """

    spec: object
    date: str
    version: str
    sha256: str | None
    date_source: str = "project file"
    net: object = None
    accuracy: object = None
    sizing: dict | None = None
    check: dict | None = None
    faults: dict | None = None
    wiring: object = None  # planner.wiring.Wiring (computed in gather), rendered by planner.dossier.wafer
    errors: dict = field(default_factory=dict)
    cautions: list = field(default_factory=list)
    samples: int = 0
    seed: int = 0
    plate: object = None
    _cache: dict = field(default_factory=dict)

    def number(self, title: str) -> str:
        """The printed number of a section (``'3'``; the appendix is ``'A'``)."""
        if title.startswith("Appendix"):
            return "A"
        return str(SECTION_TITLES.index(title) + 1)

    def heading(self, title: str) -> Heading:
        n = self.number(title)
        text = title if n == "A" else f"{n}  {title}"
        return Heading(text, 0, f"s{n}")

    def check_position(self, name: str) -> dict | None:
        if not self.check:
            return None
        for q in self.check.get("positions", []):
            if q.get("name") == name:
                return q
        return None

    def arrays(self, name: str):
        """The accuracy check's arrays of a position (None when the check failed)."""
        return self.accuracy.position(name) if self.accuracy is not None else None

    def fault_cases(self) -> list[dict]:
        return list((self.faults or {}).get("cases", []))

    def position_names(self) -> list[str]:
        if self.net is not None:
            return [q.name for q in self.net.positions]
        if self.check:
            return [q["name"] for q in self.check.get("positions", [])]
        return []
