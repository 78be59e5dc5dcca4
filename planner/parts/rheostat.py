"""Rheostats: the zero-ohms adjuster of an ohmmeter, a variable resistance the analysis sets.

A rheostat (a potentiometer wired as a two-terminal variable resistor) is a
linear branch whose resistance is its *setting*, anywhere from zero to ``max``;
the analyses choose the setting (:mod:`planner.ohms`: the setting that gives full
deflection at R_x = 0 for the battery voltage in question), and every other
analysis uses ``setting`` (default: half of ``max``). Its ratings are a power at
full travel (judged on the power it dissipates at the setting in use).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..tools import quantity
from ..units import format_si
from .base import Part

#: Smallest resistance of a rheostat as a fraction of ``max``: a wiper at its end stop
#: still leaves a little track and contact (common practice; makers give an end
#: resistance of a fraction of a percent). It also keeps the branch finite.
END_FRACTION = 1e-6


@dataclass(frozen=True)
class Rheostat(Part):
    """A variable resistor between ``a`` and ``b``, set anywhere from 0 to ``max_ohm``.

    Attributes
    ----------
    max_ohm : float
        Resistance at full travel [ohm].
    setting_ohm : float or None
        The setting every analysis uses unless it chooses one [ohm]; None for
        half of ``max_ohm``.
    tempco_per_k : float
        Temperature coefficient of the track [1/K].
    power_w : float
        Power rating over the whole track [W].
    series : str or None
        The preferred-value series ``max_ohm`` comes from.
    """

    name: str
    a: str
    b: str
    max_ohm: float
    setting_ohm: float | None = None
    tempco_per_k: float = 100e-6
    power_w: float = 0.25
    series: str | None = None
    line: int | None = None

    kind: ClassVar[str] = "rheostat"
    stamp: ClassVar[str] = "branch"
    symbol: ClassVar[str] = "rheostat"
    file_keys: ClassVar[tuple[str, ...]] = ("name", "kind", "between", "max", "setting", "tempco", "power", "series")

    @classmethod
    def read(cls, e, name: str, parts) -> "Rheostat":
        """Its nodes, travel, optional fixed setting, tempco, power and series."""
        a, b = e.pair("between", "[m_plus, adj]")
        rmax = e.qty("max", "resistance", check="pos", example="5 kohm")
        setting = e.qty("setting", "resistance", None, check="nonneg")
        if setting is not None and setting > rmax:
            e.fail(f"{e.where}: setting {format_si(setting, 'ohm')} is beyond its max {format_si(rmax, 'ohm')}; "
                   "give a setting from 0 to max", e.line)
        return cls(name=name, a=a, b=b, max_ohm=rmax, setting_ohm=setting, tempco_per_k=e.tempco("tempco", 100e-6),
                   power_w=e.qty("power", "power", 0.25, check="pos"), series=e.text("series", None, "E3"),
                   line=e.line)

    @property
    def default_setting(self) -> float:
        """The setting used when no analysis chooses one [ohm]."""
        return 0.5 * self.max_ohm if self.setting_ohm is None else float(self.setting_ohm)

    def resistance(self, spec, dt_k, setting_ohm=None) -> np.ndarray:
        """:math:`\\max(s, \\epsilon R_{max}) (1 + \\alpha \\Delta T)` for the setting s [ohm].

        Parameters
        ----------
        setting_ohm : float or ndarray (P, 1), optional
            The setting [ohm]; :attr:`default_setting` when None.
        """
        s = self.default_setting if setting_ohm is None else setting_ohm
        s = np.maximum(np.clip(s, 0.0, self.max_ohm), END_FRACTION * self.max_ohm)
        return s * (1.0 + self.tempco_per_k * dt_k)

    def spice(self, deck) -> list[str]:
        """A resistor of its setting with the track's temperature coefficient (``tc1``, as a fixed resistor)."""
        r = float(np.maximum(min(max(self.default_setting, 0.0), self.max_ohm), END_FRACTION * self.max_ohm))
        tc = f" tc1={deck.num(self.tempco_per_k)}" if self.tempco_per_k else ""
        return [f"{deck.instance('R', self.name)} {deck.node(self.a)} {deck.node(self.b)} {deck.num(r)}{tc}"]

    def part_row(self, spec) -> dict:
        return {"name": self.name, "kind": "rheostat", "value_ohm": float(self.max_ohm),
                "target_ohm": float(self.max_ohm), "target_given": False,
                "setting_ohm": float(self.default_setting), "tempco_ppm_per_k": float(self.tempco_per_k * 1e6)}

    def yaml(self) -> str:
        extra = [f"max: {quantity(self.max_ohm, 'ohm')}", f"tempco: {self.tempco_per_k * 1e6:.10g} ppm/K",
                 f"power: {quantity(self.power_w, 'W')}"]
        if self.setting_ohm is not None:
            extra.append(f"setting: {quantity(self.setting_ohm, 'ohm')}")
        if self.series is not None:
            extra.append(f"series: {self.series}")
        return f"{{name: {self.name}, kind: rheostat, between: [{self.a}, {self.b}], {', '.join(extra)}}}"

    def checks(self, ctx) -> list[dict]:
        """Mean power at the setting in use against ``power_w``.

        Notes
        -----
        A rheostat's rating holds for the whole track; at a partial setting the
        same power heats a shorter length, so makers derate it in proportion to
        the track in use (common practice). The rating judged here is
        :math:`P_{rated} \\times s / R_{max}` for the default setting s.
        """
        if ctx.peak_only:
            return []
        share = max(self.default_setting / self.max_ohm, END_FRACTION)
        return [ctx.entry(self.name, self.kind, f"power{ctx.phase}", ctx.power_w, self.power_w * share, "W",
                          "rating")]
