"""Switch contacts: closed in a named set of positions, with a contact resistance.

A contact is a resistor of its contact resistance in the positions that close it
and absent otherwise (design contract); a closed contact of zero resistance joins
its two nodes into one, so it adds no stiff conductance to the solver.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..tools import quantity, yaml_string
from .base import Part


@dataclass(frozen=True)
class Contact(Part):
    """A switch contact, closed in the positions named in ``closed_in``."""

    name: str
    a: str
    b: str
    closed_in: tuple[str, ...]
    r_ohm: float = 0.0
    line: int | None = None

    kind: ClassVar[str] = "contact"
    stamp: ClassVar[str] = "switch"
    symbol: ClassVar[str] = "contact"
    rated: ClassVar[bool] = False
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between", "closed_in", "resistance")

    @classmethod
    def read(cls, e, name: str, parts) -> "Contact":
        """Its two nodes, the positions that close it (at least one; the loader checks
        that they exist) and its contact resistance (default 0, ideal)."""
        a, b = e.pair("between", "[vin, t1]")
        cl = e.ctx.seq(e.req("closed_in", "['2.5 V']"), e.at("closed_in"), "['2.5 V', '10 V']")
        if not cl:
            e.fail(f"{e.where} is closed in no position; name the positions that close it, or remove it",
                   e.get("closed_in").line)
        refs = tuple(e.ctx.text(pn, f"{e.at('closed_in')}[{j}]", "'2.5 V'") for j, pn in enumerate(cl, 1))
        r = e.qty("resistance", "resistance", 0.0, check="nonneg")
        return cls(name=name, a=a, b=b, closed_in=refs, r_ohm=r, line=e.line)

    def present(self, closed: frozenset) -> bool:
        return self.name in closed

    def merges(self, closed: frozenset) -> bool:
        return self.name in closed and self.r_ohm == 0.0

    def resistance(self, spec, dt_k) -> np.ndarray:
        """Its contact resistance, independent of temperature [ohm]."""
        return self.r_ohm + 0.0 * dt_k

    def spice(self, deck) -> list[str]:
        """A closed contact with resistance: a resistor of its contact resistance.

        (A closed contact of zero resistance joins its nodes in the deck and an
        open one is left out; neither reaches this method.)
        """
        return [f"{deck.instance('R', self.name)} {deck.node(self.a)} {deck.node(self.b)} {deck.num(self.r_ohm)}"]

    def yaml(self) -> str:
        closed = ", ".join(yaml_string(c) for c in self.closed_in)
        extra = f", resistance: {quantity(self.r_ohm, 'ohm')}" if self.r_ohm else ""
        return f"{{name: {self.name}, kind: contact, between: [{self.a}, {self.b}], closed_in: [{closed}]{extra}}}"
