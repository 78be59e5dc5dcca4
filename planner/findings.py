"""Ratings at full scale: what the design asks of its parts in normal use, and the findings that follow.

A misrange is the ``faults`` command's business; this module looks at the reading
itself. At the full scale of each range every part must stay within its rating,
and, by the derating policy (``parts.resistors.derating``), within a share of it;
a fuse rated below the current it carries at a range's full scale opens (or ages
and opens later) in normal use. :func:`design_findings` solves every position at
its full scale (nominal parts, reference temperature) and is used by ``check``
and the dossier; :func:`sizing_findings` reads the sizer's own full-scale figures
(its linear estimate, no solver) for ``size``. Both return data (a list of
finding dicts); :func:`finding_lines` puts them in words for the terminal.

A finding has ``code``, ``severity`` (``error``: the design fails in normal use;
``advice``: beyond the derating share), ``part``, ``position``, ``quantity``,
``value``, ``rating``, ``share`` (value / rating), ``allowed_share``, ``unit`` and
``message``.

References
----------
Derating of resistors to 50 % of rated power and 80 % of the limiting element
voltage at the operating point: common practice (in line with the derating
guidance of reliability handbooks such as MIL-HDBK-338B, section 7.3, which
derates film resistors to 50-60 % of power; from memory). Fuses: IEC 60127-1,
rated current (the current a fuse carries continuously without opening).
"""

from __future__ import annotations

import math

import numpy as np

from .design import Design
from .engine import Engine
from .stimulus import Stimulus
from .tools import fmt

#: Severity of a finding: the design fails in normal use, or breaks the derating policy only.
ERROR, ADVICE = "error", "advice"


def _finding(code: str, severity: str, part: str, position: str | None, quantity: str, value: float, rating: float,
             unit: str, allowed: float, message: str) -> dict:
    share = value / rating if rating > 0 else math.inf
    return {"code": code, "severity": severity, "part": part, "position": position, "quantity": quantity,
            "value": float(value), "rating": float(rating), "share": float(share), "allowed_share": float(allowed),
            "unit": unit, "message": message}


def _resistor_findings(name: str, position: str | None, p_w: float, v_v: float, p_rated: float, v_rated: float,
                       derating) -> list[dict]:
    """A resistor's power and voltage at full scale against its rating and the derating shares."""
    out = []
    share_p, share_v = derating
    where = f" at the full scale of '{position}'" if position else " at full scale"
    for quantity, value, rated, share, unit in (("power", p_w, p_rated, share_p, "W"),
                                                 ("voltage", v_v, v_rated, share_v, "V")):
        if not (math.isfinite(rated) and rated > 0):
            continue
        if value > rated * (1 + 1e-9):
            out.append(_finding("above rating at full scale", ERROR, name, position, quantity, value, rated, unit, share,
                                f"{name} carries {fmt(value, unit, 4)}{where}, beyond its {fmt(rated, unit, 4)} "
                                f"rating: choose a higher rating"))
        elif value > share * rated * (1 + 1e-9):
            out.append(_finding("above derating", ADVICE, name, position, quantity, value, rated, unit, share,
                                f"{name} carries {fmt(value, unit, 4)}{where}, {100 * value / rated:.0f} % of its "
                                f"{fmt(rated, unit, 4)} rating (derating policy: {100 * share:.0f} %): choose a "
                                "higher rating or accept it"))
    return out


def _fuse_finding(name: str, position: str, i_a: float, rated_a: float) -> list[dict]:
    """A fuse carrying more than its rated current at a range's full scale."""
    if not i_a > rated_a * (1 + 1e-9):
        return []
    return [_finding("fuse below full scale", ERROR, name, position, "rms current", i_a, rated_a, "A", 1.0,
                     f"{name} is rated {fmt(rated_a, 'A', 4)} but carries {fmt(i_a, 'A', 4)} at the full scale of "
                     f"'{position}': it opens in normal use; choose a fuse rated above the range's full scale")]


def derating_of(spec) -> tuple[float, float]:
    """The derating shares of power and voltage (``parts.resistors.derating``)."""
    rp = spec.parts.resistors
    return float(rp.derating_power), float(rp.derating_voltage)


def design_findings(design: Design, engine: Engine | None = None) -> list[dict]:
    """Findings of every position at its full scale, solved (nominal parts, reference temperature).

    Parameters
    ----------
    design : Design
    engine : Engine, optional
        A ready engine on ``design``.

    Returns
    -------
    list of dict
        The findings (module docstring), each part's worst position per quantity.

    Notes
    -----
    Each position gets its own full-scale stimulus (a voltage or current source
    of its full scale; the rms of a sine for an AC position; the terminals
    shorted on an ohms position, which its battery drives to full deflection) and every rated
    part's cycle statistics are read off the solved operating points
    (:func:`planner.stress.solve_waveforms`): resistors' mean power and peak
    voltage against their rating and the derating shares, fuses' rms current
    against their rated current, diodes' mean power against theirs.
    """
    from .stress.waveforms import cycle_stats, solve_waveforms, stress_elements

    engine = engine or Engine(design)
    spec = design.spec
    derating = derating_of(spec)
    worst: dict[tuple, dict] = {}
    for pos in engine.positions:
        source = getattr(pos.kind, "source", None)
        if source not in ("voltage", "current") or not pos.full_scale:
            continue
        shape = "sine" if str(pos.measures).startswith("ac") else "dc"
        drive = float(pos.kind.full_scale_drive(pos))  # an ohms range: 0 V, the terminals shorted
        wf = solve_waveforms(engine, pos.name, [Stimulus("full scale", source, drive, shape)])[0]
        for e in stress_elements(engine):
            i, v = wf.current_a[e.name], wf.voltage_v[e.name]
            if not np.any(i):
                continue
            p_w = abs(float(np.mean(i * v)))
            for f in _element_findings(spec, e, pos.name, p_w, cycle_stats(i), cycle_stats(v), derating):
                key = (f["part"], f["quantity"])
                if key not in worst or f["share"] > worst[key]["share"]:
                    worst[key] = f
    return sorted(worst.values(), key=lambda f: (f["severity"] != ERROR, -f["share"]))


def _element_findings(spec, e, position: str, p_w: float, i_st: dict, v_st: dict, derating) -> list[dict]:
    if e.kind == "resistor":
        return _resistor_findings(e.name, position, p_w, v_st["peak"], e.power_w, e.max_voltage_v, derating)
    if e.kind == "fuse":
        fm = spec.parts.fuses.get(e.model)
        return _fuse_finding(e.name, position, i_st["rms"], fm.rated_current_a) if fm else []
    if e.kind == "diode":
        d = spec.parts.diodes.get(e.model)
        if d is None or not math.isfinite(d.max_power_w):
            return []
        return [f for f in _resistor_findings(e.name, position, p_w, 0.0, d.max_power_w, math.inf, derating)
                if f["quantity"] == "power"]
    return []


def sizing_findings(spec, sizing) -> list[dict]:
    """Findings of a sizing from the sizer's own full-scale figures (no solver).

    Parameters
    ----------
    spec : Spec
    sizing : planner.sizing.Sizing

    Returns
    -------
    list of dict

    Notes
    -----
    Each chosen part's full-scale power and voltage (the sizer's linear
    estimate, the worst over the positions) against its rating and the derating
    shares; the current section's fuse against the highest current range's full
    scale (the fuse is in the input lead of every current range and carries the
    whole input current).
    """
    derating = derating_of(spec)
    out = []
    for seg in sizing.segments:
        for part in seg.parts:
            out += _resistor_findings(part.name, None, part.power_fullscale_w, part.voltage_fullscale_v,
                                      part.power_rated_w, part.voltage_rated_v, derating)
    cur = spec.current
    if cur is not None and cur.fuse and cur.full_scales:
        fm = spec.parts.fuses.get(cur.fuse)
        fuses = [e.name for e in sizing.network.elements if e.kind == "fuse"]
        top = max(cur.full_scales)
        label = next((p.name for p in sizing.positions if p.measures == "current" and p.full_scale == top), None)
        if fm is not None:
            out += _fuse_finding(fuses[0] if fuses else cur.fuse, label or fmt(top, "A", 4), top, fm.rated_current_a)
    return sorted(out, key=lambda f: (f["severity"] != ERROR, -f["share"]))


def finding_lines(findings) -> list[str]:
    """The findings for the terminal: one line each, errors first (empty when there are none)."""
    if not findings:
        return []
    lines = ["", "Findings at full scale (ratings and derating policy):"]
    for f in findings:
        lines.append(f"  {'ERROR' if f['severity'] == ERROR else 'advice'}: {f['message']}")
    return lines
