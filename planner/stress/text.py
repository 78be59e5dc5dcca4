"""Words for stresses, cases and cautions: the terminal report of ``planner apply``.

Nothing here computes a result: :func:`describe_stress` and :func:`ratio_text` put
one stress entry in words, :func:`fuse_detail` the fuses of a case,
:func:`stimulus_cautions` the cautions for hazardous stimuli and
:func:`format_apply` the whole result of :func:`planner.stress.apply_stimulus`.
"""

from __future__ import annotations

import math
import textwrap

from ..stimulus import HAZARD_DC_V, HAZARD_PEAK_V, HAZARD_RMS_V, SHAPES
from ..tools import fmt
from .verdict import FUSE_TRIGGER, LIMITS

#: The cautions every output with a hazardous voltage ends with.
STANDARD_CAUTIONS = (
    "Verify by test before use: these results are a planning aid, not a certification.",
    "Follow IEC 61010-1 (IEC 61010-031 for probe assemblies), local codes and licensed practice; "
    "hazardous work belongs to people trained and authorised for it.",
)


def wrap(prefix: str, text: str, width: int = 100) -> list[str]:
    """Lines of ``prefix + text`` wrapped to ``width`` columns, continuation indented."""
    return textwrap.wrap(text, width=width, initial_indent=prefix, subsequent_indent=" " * min(len(prefix), 4),
                         break_long_words=False, break_on_hyphens=False) or [prefix.rstrip()]


def ratio_text(r: float) -> str:
    """A stress ratio for tables: ``'31.2x'``, ``'250x'``, ``'2e+06x'``, ``'inf x'``."""
    if not math.isfinite(r):
        return "inf x"
    if r >= 1e5:
        return f"{r:.2g}x"
    if r >= 100:
        return f"{r:.0f}x"
    return f"{r:.3g}x"


def describe_stress(x: dict | None) -> str:
    """One line: ``'R1 power 7.81 W of 250.0 mW rating (31.2x)'``."""
    if x is None:
        return "no rated part carries current"
    unit = x["unit"]
    if unit == "x I_fs":
        val, rat = f"{x['value']:.3g}x I_fs", f"{x['rating']:.3g}x"
    elif unit == "A^2 s":
        val, rat = f"{x['value']:.4g} A^2 s", f"{x['rating']:.4g} A^2 s"
    else:
        val, rat = fmt(x["value"], unit, 4), fmt(x["rating"], unit, 4)
    rule = f", rule: {x['rule']}" if x.get("rule") else ""
    return f"{x['part']} {x['quantity']} {val} of {rat} {LIMITS[x['limit']].word} ({ratio_text(x['ratio'])}{rule})"


def fuse_detail(opening: list, event, verdict: str) -> str:
    """A few words on the fuses of a case: ``'fuse opens: F1 in 301 ns, let-through 2.5 A^2 s; ...'``.

    Parameters
    ----------
    opening : list of dict
        The ``fuses[]`` records of the fuses that open.
    event : FuseEvent or None
        The pulse while they open (:class:`planner.stress.fuses.FuseEvent`).
    verdict : str
    """
    if not opening:
        return ""
    names = " and ".join(f["name"] for f in opening)
    if event is None:
        if any(not f["time_known"] for f in opening):
            return f"fuse opens: {names} in an unknown time (give its i2t or curve)"
        return f"{names} above its rating but below its curve: it may not open for a long time"
    text = (f"fuse opens: {names} in {fmt(event.event_time_s, 's', 3)}, let-through "
            f"{event.let_through_i2t_a2s:.3g} A^2 s")
    if verdict in ("ok", "pegs", "opens"):
        text += "; every part survives the pulse: replace the fuse"
    return text


def stimulus_cautions(stimuli) -> list[str]:
    """Cautions for stimuli at hazardous voltages (empty when none is).

    References
    ----------
    IEC 61010-1:2010, clause 6.3.1, hazardous-live limits.
    """
    out = []
    for s in stimuli:
        if s.hazardous():
            out.append(f"Hazardous voltage: stimulus '{s.name}' ({s.describe()}) exceeds the hazardous-live limits "
                       f"of IEC 61010-1 ({HAZARD_RMS_V:g} V rms, {HAZARD_PEAK_V:g} V peak, {HAZARD_DC_V:g} V DC).")
    if out:
        out += list(STANDARD_CAUTIONS)
    return out


# --- planner apply -------------------------------------------------------------------------


def format_apply(result: dict) -> str:
    """A readable report of :func:`planner.stress.apply_stimulus` for the terminal (about 100 columns)."""
    lines = _apply_head(result)
    lines.append("")
    lines += _parts_table(result)
    lines += _fuse_lines(result)
    if result.get("detail"):
        lines += wrap("", result["detail"][:1].upper() + result["detail"][1:] + ".")
    bad = [x for x in result["stresses"] if x["exceeded"] and x["limit"] != FUSE_TRIGGER.name]
    if bad:
        lines.append("")
        lines.append("Beyond a limit:")
        for x in sorted(bad, key=lambda x: -x["ratio"]):
            lines += wrap("  ", describe_stress(x))
    for h in result.get("hazards", []):
        lines += wrap("HAZARD: ", f"rule '{h['rule']}': {h['detail']} ({h['source']})")
    for a in result.get("asks", []):
        lines += wrap("Give: ", a["message"])
    for n in result.get("notes", []):
        lines += wrap("Note: ", n)
    for c in result.get("cautions", []):
        lines += wrap("CAUTION: ", c)
    return "\n".join(lines)


def _apply_head(result: dict) -> list[str]:
    """The stimulus, the movement and the verdict."""
    s = result["stimulus"]
    head = f"{result['position']}: {fmt(s['value'], s['unit'], 4)} {SHAPES[s['waveform']].word}"
    if s["kind"] == "voltage":
        r = s["r_source_ohm"] or 0.0
        head += f" through {fmt(r, 'ohm', 3)}" if r > 0 else " from an ideal source"
        if s.get("current_limit_a"):
            head += f", limited to {fmt(s['current_limit_a'], 'A', 3)}"
    tiny = 1e-9 * max(result["movement_multiple"], 1.0)  # solver round-off around a zero mean
    mean = result["movement_mean_multiple"]
    mean = 0.0 if abs(mean) < tiny else mean
    i_cur = result["movement_current_a"]
    if abs(i_cur) < 1e-9 * result.get("movement_peak_current_a", 0.0):
        i_cur = 0.0
    lines = [head, f"Movement: {fmt(i_cur, 'A', 4)} (pointer {mean:.3g} x full scale, "
                   f"peak {result['movement_multiple']:.3g} x, rms {result['movement_rms_multiple']:.3g} x)"]
    lines += wrap("Verdict: ", f"{result['verdict'].upper()} - {describe_stress(result['deciding'])}")
    return lines


def _parts_table(result: dict) -> list[str]:
    """Every part's current, voltage and power, and its worst check."""
    cyclic = SHAPES[result["stimulus"]["waveform"]].cyclic
    hdr = ("part", "kind", "current rms" if cyclic else "current", "peak current",
           "voltage rms" if cyclic else "voltage", "power", "worst check")
    worst = {}
    for x in result["stresses"]:
        if LIMITS[x["limit"]].scored and (x["part"] not in worst or x["ratio"] > worst[x["part"]]["ratio"]):
            worst[x["part"]] = x
    rows = []
    for p in result["parts"]:
        w = worst.get(p["name"])
        rows.append((p["name"], p["kind"], fmt(p["current_a"], "A", 4), fmt(p["current_peak_a"], "A", 4),
                     fmt(p["voltage_v"], "V", 4), fmt(p["power_w"], "W", 4),
                     f"{ratio_text(w['ratio'])}{' !' if w['exceeded'] else ''} {w['quantity']}"[:30] if w else ""))
    widths = [max(len(str(r[k])) for r in rows + [hdr]) for k in range(len(hdr))]
    lines = ["  ".join(h.ljust(widths[k]) for k, h in enumerate(hdr)).rstrip()]
    for r in rows:
        lines.append("  ".join(str(c).ljust(widths[k]) for k, c in enumerate(r)).rstrip())
    return lines


def _fuse_lines(result: dict) -> list[str]:
    """Each fuse: its current, whether it opens, how fast, and the current it must break."""
    lines = []
    for f in result["fuses"]:
        t = f["pre_arcing_time_s"]
        when = " (after " + ", ".join(f["after"]) + " opened)" if f.get("after") else ""
        ptc = f.get("kind") == "ptc"
        state = ("trips" if ptc else "opens") if f["opens"] else "holds"
        extra = f", {'time to trip' if ptc else 'pre-arcing time'} {t:.3g} s" if (f["opens"] and t is not None) else ""
        if f["opens"] and f.get("let_through_i2t_a2s") is not None:
            extra += f", let-through {f['let_through_i2t_a2s']:.3g} A^2 s"
        what = {"ptc": "PTC", "fusible resistor": "Fusible resistor"}.get(f.get("kind"), "Fuse")
        lines += wrap("", f"{what} {f['name']}{when}: {fmt(f['current_rms_a'], 'A', 4)} rms, {state}{extra}; "
                          f"prospective {fmt(f['prospective_current_a'], 'A', 4)} vs breaking capacity "
                          f"{fmt(f['breaking_capacity_a'], 'A', 4)}")
    return lines
