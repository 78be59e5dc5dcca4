"""Helpers the section builders share: verdict cells, stimuli, accepted cases, number text."""

from __future__ import annotations

import math
import re

import numpy as np

from ...stress import describe_stress
from .. import charts
from ..layout import INK, STYLES, VERDICT_FILL, VERDICT_TEXT, Para, esc, note_box
from ..text import is_hazardous, value_text
from .context import CHART_H, CHART_W, VERDICT_ORDER, Context


# --- helpers -----------------------------------------------------------------------------------------
def error_note(ctx: Context, what: str, key: str) -> list:
    text = ctx.errors.get(key, "the analysis did not run")
    return [note_box(f"{what} not available", [esc(f"The {what.lower()} raised an error: {text}"),
                                               "The other sections are unaffected; fix the cause and build "
                                               "the dossier again."])]


def verdict_cell(verdict: str, extra: str = "") -> Para:
    v = (verdict or "error").lower()
    word = v.upper()
    style = STYLES["cell_c"]
    colour = VERDICT_TEXT.get(v, INK).hexval()[2:]
    text = f"<font color='#{colour}'><b>{esc(word)}</b>{('<br/>' + esc(extra)) if extra else ''}</font>"
    return Para(text, style)


def verdict_fill(cells: list[tuple[int, int, str]]):
    return [("BACKGROUND", (c, r), (c, r), VERDICT_FILL.get(v, VERDICT_FILL["error"])) for c, r, v in cells]


def unit_of(measures: str) -> str:
    """The unit of a position's full scale, from the range kind (``V``, ``A``, ``ohm`` ...)."""
    from ... import ranges

    try:
        return ranges.of(measures).unit
    except ValueError:
        return "V" if measures == "voltage" else "A"


def hazardous_position(pos) -> bool:
    return pos.measures in ("voltage", "ac_voltage") and is_hazardous(pos.full_scale)


def sources(spec) -> list:
    return list(spec.faults.sources)


def hazardous_sources(spec) -> list:
    return [s for s in spec.faults.sources if s.kind == "voltage" and is_hazardous(s.value, s.waveform)]


def worst_case(cases: list[dict]) -> dict | None:
    """The case of the worst verdict, then of the largest movement multiple; of cases equal to 12
    significant digits (both polarities on a symmetric network: equal but for rounding), the first."""
    if not cases:
        return None
    return max(cases, key=lambda c: (VERDICT_ORDER.get(c.get("verdict"), -1),
                                     float(f"{c.get('movement_multiple') or 0:.12g}")))


def stim_name(case: dict) -> str:
    s = case.get("stimulus")
    if isinstance(s, dict):
        return str(s.get("name", "?"))
    return str(s)


def stimuli(ctx: Context) -> list[dict]:
    """The stimuli of the fault analysis in its column order (name, kind, waveform, value ...)."""
    out = [dict(s) for s in (ctx.faults or {}).get("stimuli", []) or [] if isinstance(s, dict)]
    names = {s.get("name") for s in out}
    for c in ctx.fault_cases():
        n = stim_name(c)
        if n not in names:
            names.add(n)
            out.append(dict(c.get("stimulus_detail") or {"name": n}))
    return out


def stim_desc(s: dict) -> str:
    unit = s.get("unit") or ("V" if s.get("kind") == "voltage" else "A")
    wave = {"sine": "rms sine", "dc": "DC", "impulse": "peak impulse"}.get(s.get("waveform"), s.get("waveform") or "")
    text = f"{value_text(s.get('value'), unit)} {wave}".strip()
    if s.get("kind") == "voltage" and s.get("r_source_ohm"):
        text += f" through {value_text(s.get('r_source_ohm'), 'ohm')}"
    if s.get("current_limit_a"):
        text += f", limited to {value_text(s.get('current_limit_a'), 'A')}"
    if s.get("detail"):
        text += f" ({s['detail']})"
    return text


def stim_hazardous(s: dict) -> bool:
    if s.get("kind") != "voltage" or not isinstance(s.get("value"), (int, float)):
        return False
    wave = s.get("waveform") or "dc"
    if wave == "impulse":
        return abs(float(s.get("peak", s["value"]))) > 46.7
    return is_hazardous(s["value"], "sine" if wave == "sine" else "dc")


def accepted_keys(ctx: Context) -> dict:
    out = {}
    for a in ctx.spec.faults.accept:
        out[(a.position, a.stimulus)] = a.reason
    for a in (ctx.faults or {}).get("accepted", []) or []:
        if isinstance(a, dict) and "position" in a and "stimulus" in a:
            out.setdefault((str(a["position"]), str(a["stimulus"])), str(a.get("reason", "")))
    return out


def is_accepted(ctx: Context, case: dict) -> str | None:
    """The reason a case is accepted in the project file, or None."""
    if case.get("accepted"):
        return str(case.get("accept_reason") or "accepted in the project file")
    return accepted_keys(ctx).get((str(case.get("position")), stim_name(case)))


def stress_text(x: dict) -> str:
    try:
        return describe_stress(x)
    except Exception:  # noqa: BLE001 - a text helper must not break a section
        return f"{x.get('part')} {x.get('quantity')} {x.get('value')} of {x.get('rating')} ({x.get('ratio')} x)"


def ratio(x) -> float:
    try:
        r = float(x.get("ratio"))
    except (TypeError, ValueError):
        return 0.0
    return r if math.isfinite(r) else 1e9


def natural(name: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", name)]


def number_text(v, unit) -> str:
    if not isinstance(v, (int, float)):
        return str(v)
    if unit in (None, "", "x I_fs"):
        return f"{v:.4g}" + (" x I_fs" if unit == "x I_fs" else "")
    return value_text(v, unit)


def why(ctx: Context, key: str, default: str = "not available") -> str:
    if key in ctx.errors:
        return f"The {key} analysis raised an error: {ctx.errors[key]}"
    return default


def axis_scale(fs: float):
    for factor, prefix in ((1e-6, "u"), (1e-3, "m"), (1.0, ""), (1e3, "k")):
        if abs(fs) < 1000 * factor:
            return factor, prefix
    return 1.0, ""


def mc_histogram(ctx: Context, name: str, q: dict | None, title: str, x_label: str):
    """Histogram of a position's Monte Carlo errors (``arrays(name).mc_error_pct``) against the class."""
    arr = ctx.arrays(name)
    if not q or arr is None or arr.mc_error_pct.size == 0:
        return charts.message_drawing(CHART_W, CHART_H, "Monte Carlo", why(ctx, "check"))
    cls = ctx.spec.movement.class_index
    err = arr.mc_error_pct
    lo, hi = float(np.min(err)), float(np.max(err))
    if hi - lo < 1e-9:
        lo, hi = lo - 0.01, hi + 0.01
    edges = np.linspace(lo, hi, 25)
    counts, _ = np.histogram(err, bins=edges)
    mc = (q.get("monte_carlo") or {}).get("full_scale_error_pct") or {}
    note = (f"yield {100 * q.get('yield_fraction', float('nan')):.1f} % of {ctx.samples} builds; "
            f"mean {mc.get('mean', float('nan')):+.3f} %, sd {mc.get('std', float('nan')):.3f} %")
    limits = [(-cls, f"class -{cls:g} %"), (cls, f"class +{cls:g} %")]
    return charts.histogram(CHART_W, CHART_H, title, x_label, list(edges), list(counts), limits=limits, note=note)
