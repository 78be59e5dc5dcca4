"""The diode fit as text, JSON and a ``parts.diodes`` YAML block."""

from __future__ import annotations

import math

import numpy as np

from ..errors import UsageError
from ..units import format_si
from .params import _KEYS, _LABELS, _LOG, _NAME_RE, _YAML_KEYS, _celsius, _fmt
from .result import Fit

def fit_json(f: Fit) -> dict:
    """The fit as a JSON-ready dict (SI units, unit in each key).

    Keys (contract): ``saturation_current_a``, ``emission``,
    ``series_resistance_ohm``, ``leakage_resistance_ohm``, ``uncertainty`` (the
    same keys, plus ``band_gap_ev`` and ``xti`` when fitted; null for a value the
    data do not determine), ``residual_rms``, ``n_points``. Also ``band_gap_ev``,
    ``xti``, ``temperature_k``, ``temperatures_k``, ``residual_max``, ``fitted``,
    ``unresolved``, ``notes``, ``yaml``, ``usable`` and ``problems``. A leakage
    resistance the points do not show is null (no leakage); an unresolved series
    resistance is 0. A fit that failed the quality gate has ``usable`` false,
    its reasons in ``problems`` and ``yaml`` null.
    """
    keys = _KEYS[:4] + tuple(k for k in _KEYS[4:] if k in f.fitted)
    out = {"name": f.name}
    for key in _KEYS:
        value = f.params[key]
        out[key] = value if math.isfinite(value) else None
    out["uncertainty"] = {key: f.uncertainty[key] for key in keys}
    out.update({
        "residual_rms": f.residual_rms,
        "residual_max": f.residual_max,
        "n_points": f.n_points,
        "temperature_k": f.temperature_k,
        "temperatures_k": list(f.temperatures),
        "current_floor_a": f.current_floor_a,
        "fitted": list(f.fitted),
        "unresolved": list(f.unresolved),
        "notes": list(f.notes),
        "usable": f.usable,
        "problems": list(f.problems),
        "yaml": yaml_block(f) if f.usable else None,
    })
    return out


def _rel(f: Fit, key: str) -> str:
    s = f.uncertainty.get(key)
    if s is None:
        return ""
    if _LOG[_KEYS.index(key)]:
        return f"{100 * s / f.params[key]:.2g} %"
    return _fmt(key, s, 2)


def yaml_block(f: Fit, name: str | None = None) -> str:
    """A ``parts.diodes`` entry for the project file, quantities with units.

    Parameters
    ----------
    f : Fit
    name : str, optional
        Entry name (default: the fit's name).

    Returns
    -------
    str
        YAML text: comment lines, then ``name:`` and its keys
        (``saturation_current``, ``emission``, ``series_resistance``,
        ``leakage_resistance``, ``band_gap``, ``xti``, ``temperature``), each value
        written with 5 significant digits and its 1-sigma uncertainty as a comment.
        A series resistance the data do not resolve is written as ``0 ohm``; an
        unresolved leakage resistance and a band gap / XTI that were not fitted are
        left out (the model's defaults apply), with a comment saying so.

    Raises
    ------
    UsageError
        For a fit that is not usable (``f.problems``): there is no model to
        paste; or for a name that is not a plain name.
    """
    name = name or f.name
    if not f.usable:
        raise UsageError(f"the fit is not usable: {f.problems[0]}")
    if not _NAME_RE.match(name):
        raise UsageError(f"model name {name!r} is not a plain name; use letters, digits and '_'")
    src = f.path.rsplit("/", 1)[-1] if f.path else "measured points"
    t_text = ", ".join(_celsius(x) for x in f.temperatures)
    lines = [
        f"# fitted from {src}: {f.n_points} points at {t_text}; paste under parts: diodes:",
        "# add max_current, surge_current and max_power from the part's ratings",
        f"{name}:",
    ]
    entries = []
    for key in _KEYS:
        yk = _YAML_KEYS[key]
        if key == "series_resistance_ohm" and key in f.unresolved:
            entries.append((f"{yk}: 0 ohm", "not resolved by the points"))
        elif key == "leakage_resistance_ohm" and key in f.unresolved:
            entries.append((None, f"{yk}: not resolved by the points (no leakage)"))
        elif key in ("band_gap_ev", "xti") and key not in f.fitted:
            if "band_gap_ev" in f.fitted:  # xti held, band gap fitted: say what was held
                entries.append((f"{yk}: {_fmt(key, f.params[key])}", "held, not fitted"))
            else:
                entries.append((None, f"{yk}: not fitted (one temperature), the default applies"))
        else:
            rel = _rel(f, key)
            entries.append((f"{yk}: {_fmt(key, f.params[key])}", f"1-sigma {rel}" if rel else ""))
    entries.append((f"temperature: {_celsius(f.temperature_k)}", "the parameters hold here"))
    width = max(len(e) for e, _ in entries if e) + 2
    for entry, comment in entries:
        if entry is None:
            lines.append(f"  # {comment}")
        elif comment:
            lines.append(f"  {entry.ljust(width)}# {comment}")
        else:
            lines.append(f"  {entry}")
    return "\n".join(lines) + "\n"


def format_fit(f: Fit) -> str:
    """A readable report of the fit followed by the YAML block (or, for a fit that is not usable, its problems)."""
    src = f.path or "measured points"
    t_text = ", ".join(_celsius(x) for x in f.temperatures)
    out = [
        f"Diode fit '{f.name}' from {src}",
        f"  {f.n_points} points at {t_text}; parameters hold at {_celsius(f.temperature_k)}",
        "",
        f"  {'parameter':<22}{'value':>14}  {'1-sigma':>12}",
    ]
    for key in _KEYS:
        label = _LABELS[key]
        if key not in f.fitted:
            out.append(f"  {label:<22}{_fmt(key, f.params[key]):>14}  {'held':>12}")
            continue
        s = f.uncertainty[key]
        if key in f.unresolved:
            sig = "not resolved"
            shown = {"series_resistance_ohm": "0 ohm", "leakage_resistance_ohm": "none"}.get(
                key, _fmt(key, f.params[key]))
            out.append(f"  {label:<22}{shown:>14}  {sig:>12}")
            continue
        elif s is None:
            sig = "-"
        else:
            sig = _fmt(key, s, 2)
            rel = _rel(f, key)
            if _LOG[_KEYS.index(key)]:
                sig = f"{sig} ({rel})"
        out.append(f"  {label:<22}{_fmt(key, f.params[key]):>14}  {sig:>12}")
    k = int(np.argmax(np.abs(f.residuals))) if f.residuals.size else 0
    out += [
        "",
        f"  residuals (ln of current): rms {f.residual_rms:.3g} "
        f"(about {100 * math.expm1(f.residual_rms):.2g} % "
        f"of current), max {f.residual_max:.3g} at line {int(f.lines[k]) if f.lines.size else '-'}",
    ]
    if (~f.forward).any():
        floor = format_si(f.current_floor_a, "A", 3)
        out.append(f"  reverse and near-zero points on the asinh scale, floor {floor}")
    for note in f.notes:
        out.append(f"  note: {note}")
    if not f.usable:
        out += ["", "NOT USABLE: the points do not follow the diode law; no model to paste."]
        out += [f"  - {p}" for p in f.problems]
        return "\n".join(out) + "\n"
    out += ["", yaml_block(f).rstrip("\n")]
    return "\n".join(out) + "\n"
