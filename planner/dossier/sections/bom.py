"""The bill of materials (section 4), as rows shared by the PDF and the CSV."""

from __future__ import annotations

import math

from reportlab.platypus import PageBreak

from ... import eseries
from ...model import Contact, Diode, Fuse, MovementElement, Resistor
from ..layout import p, table
from ..text import value_text
from .context import Context
from .common import error_note, natural, ratio, stim_name, verdict_fill


# --- 4: bill of materials ----------------------------------------------------------------------------------
def _sized_parts(ctx: Context) -> dict:
    out = {}
    for seg in (ctx.sizing or {}).get("segments", []) or []:
        for part in seg.get("parts", []) or []:
            out[part.get("name")] = dict(part, segment=seg.get("name"), worst_case=seg.get("worst_case", ""))
    return out


def _fullscale_stress(ctx: Context) -> dict:
    """Largest |current|, |voltage| and power of each element over the positions at full scale.

    From the accuracy check's sweep (nominal parts, reference temperature); empty when the check failed.
    """
    out = {}
    for q in (ctx.net.positions if ctx.net is not None else ()):
        arr = ctx.arrays(q.name)
        for name, (i, v, w) in (arr.stresses.items() if arr is not None else ()):
            old = out.get(name, (0.0, 0.0, 0.0))
            out[name] = (max(old[0], i), max(old[1], v), max(old[2], w))
    return out


def _misrange_worst(ctx: Context) -> dict:
    """Per part: the largest stress ratio over the misrange cases and the case it occurs in."""
    out = {}
    for c in ctx.fault_cases():
        for x in c.get("stresses") or []:
            r = ratio(x)
            part = x.get("part")
            if part and r > out.get(part, (0.0, ""))[0]:
                out[part] = (r, f"{x.get('quantity')} {r:.3g} x rating: {stim_name(c)} on {c.get('position')}")
    return out


def _protection_row(spec, e, row: dict) -> None:
    """The bill-of-materials row of a PTC or a varistor: its model and ratings."""
    if e.kind == "ptc":
        p = spec.parts.ptcs[e.model]
        row.update(value=f"{value_text(p.r_cold_ohm, 'ohm')} cold ({e.model})", value_si=p.r_cold_ohm, series="PTC",
                   voltage_rated_v=p.max_voltage_v, tolerance_pct=100 * p.tolerance)
        held = (f"tripped {value_text(p.tripped_power_w, 'W')}" if p.tripped_power_w is not None
                else f"tripped {value_text(p.tripped_resistance_ohm, 'ohm')}")
        row["notes"].append(f"hold {value_text(p.hold_current_a, 'A')}, trip {value_text(p.trip_current_a, 'A')}, "
                            f"{held}, cuts up to {value_text(p.max_current_a, 'A')}")
    else:
        v = spec.parts.varistors[e.model]
        row.update(value=f"{value_text(v.v1_v, 'V')} at 1 mA ({e.model})", value_si=v.v1_v, series="varistor",
                   voltage_rated_v=v.max_continuous_v)
        row["notes"].append(f"alpha {v.alpha:g}, {value_text(v.energy_j, 'J')} single pulse")


def bom_rows(ctx: Context) -> list[dict]:
    """The bill of materials as dicts (one per element), SI floats and text; shared by the PDF and the CSV."""
    if "bom" in ctx._cache:
        return ctx._cache["bom"]
    spec, net = ctx.spec, ctx.net
    sized = _sized_parts(ctx)
    fs = _fullscale_stress(ctx)
    mis = _misrange_worst(ctx)
    rows = []
    order = {"resistor": 0, "movement": 1, "diode": 2, "varistor": 2, "fuse": 3, "ptc": 3, "contact": 4, "rheostat": 5,
             "battery": 6}
    for e in sorted(net.elements, key=lambda e: (order.get(e.kind, 7), natural(e.name))):
        i_fs, v_fs, p_fs = fs.get(e.name, (None, None, None))
        row = {"designator": e.name, "kind": e.kind, "value": "", "value_si": None, "series": "", "tolerance_pct": None,
               "tempco_ppm_per_k": None, "power_rated_w": None, "power_required_w": p_fs, "voltage_rated_v": None,
               "voltage_required_v": v_fs, "notes": []}
        if isinstance(e, Resistor):
            row.update(value=value_text(e.value_ohm, "ohm"), value_si=e.value_ohm, tolerance_pct=100 * e.tolerance,
                       tempco_ppm_per_k=1e6 * e.tempco_per_k, power_rated_w=e.power_w, voltage_rated_v=e.max_voltage_v)
            row["series"] = e.series or _series_of(spec, e.value_ohm)
            sp = sized.get(e.name)
            if sp and sp.get("trimmer"):  # planner.trim: the part is the trimmer, set in calibration
                row.update(value=f"{value_text(sp['value_ohm'], 'ohm')} trimmer", value_si=sp["value_ohm"],
                           series="trimmer", tolerance_pct=None)
                row["notes"].append(f"set to about {value_text(e.value_ohm, 'ohm')} in calibration "
                                    f"(section {ctx.number('Build and acceptance')})")
            elif e.trimmer:
                row["notes"].append("trimmer / select on test")
            if e.target_ohm is not None and abs(e.target_ohm - e.value_ohm) > 1e-9 * e.target_ohm:
                row["notes"].append(f"target {value_text(e.target_ohm, 'ohm', 5)}")
            if sp:
                row["notes"].append(f"{sp.get('segment')}")
                pr = sp.get("power_required_w")
                if pr is not None and p_fs is not None and pr > 1.5 * p_fs:
                    row["notes"].append(f"rated for {value_text(pr, 'W', 3)} / "
                                        f"{value_text(sp.get('voltage_required_v'), 'V', 3)} under max input")
        elif isinstance(e, MovementElement):
            m = spec.movement
            row.update(value=f"{value_text(m.i_fs_a, 'A')} fs, {value_text(m.r_coil_ohm, 'ohm')}",
                       value_si=m.r_coil_ohm, tolerance_pct=100 * m.tolerance, tempco_ppm_per_k=1e6 * m.tempco_per_k,
                       series="meter")
            row["notes"].append(f"class {m.class_index:g}; peg {m.overload.peg:g}x, short time "
                                f"{m.overload.short_time:g}x, continuous {m.overload.continuous:g}x I_fs")
            row["power_required_w"] = None
        elif isinstance(e, Diode):
            d = spec.parts.diodes.get(e.model)
            row.update(value=e.model, series="diode")
            if d:
                row["power_rated_w"] = d.max_power_w if math.isfinite(d.max_power_w) else None
                row["voltage_rated_v"] = d.bv_v
                row["notes"].append(f"I_s {value_text(d.i_s_a, 'A', 3)}, n {d.n:g}; I_F max "
                                    f"{value_text(d.max_current_a, 'A', 3)}, "
                                    f"surge {value_text(d.surge_current_a, 'A', 3)}")
                row["notes"].append(f"anode {e.anode}, cathode {e.cathode}")
        elif isinstance(e, Fuse):
            f = spec.parts.fuses.get(e.model)
            row.update(value=e.model, series="fuse")
            if f:
                row["value"] = f"{value_text(f.rated_current_a, 'A')} ({e.model})"
                row["value_si"] = f.rated_current_a
                row["voltage_rated_v"] = f.max_voltage_v if math.isfinite(f.max_voltage_v) else None
                row["notes"].append(f"breaking capacity {value_text(f.breaking_capacity_a, 'A')}, cold "
                                    f"{value_text(f.r_cold_ohm, 'ohm')}"
                                    + (f", I2t {f.i2t_a2s:g} A2s" if f.i2t_a2s else ""))
                if i_fs is not None:
                    row["notes"].append(f"full-scale current {value_text(i_fs, 'A', 3)}")
        elif e.kind == "battery":
            row.update(value=f"{value_text(e.voltage_v, 'V')} ({value_text(e.v_min_v, 'V')} to "
                             f"{value_text(e.v_max_v, 'V')})", value_si=e.voltage_v, series="battery")
            row["notes"].append(f"internal {value_text(e.r_int_ohm, 'ohm')}; at most {value_text(e.max_current_a, 'A')} "
                                f"either way; plus on {e.a}")
        elif e.kind == "rheostat":
            row.update(value=value_text(e.max_ohm, "ohm"), value_si=e.max_ohm, series=e.series or "",
                       power_rated_w=e.power_w, tempco_ppm_per_k=1e6 * e.tempco_per_k)
            row["notes"].append(f"zero-ohms adjuster (set at {value_text(e.default_setting, 'ohm', 4)} for the nominal "
                                "battery)")
        elif e.kind in ("ptc", "varistor"):
            _protection_row(spec, e, row)
        elif isinstance(e, Contact):
            row.update(value=value_text(e.r_ohm, "ohm") if e.r_ohm else "ideal", value_si=e.r_ohm, series="switch")
            row["notes"].append("closed in " + (", ".join(e.closed_in) or "no position"))
            row["power_required_w"] = None
            row["voltage_required_v"] = None
        if e.name in mis and mis[e.name][0] > 1.0:
            row["notes"].append("misrange: " + mis[e.name][1])
        rows.append(row)
    ctx._cache["bom"] = rows
    return rows


def _series_of(spec, value: float) -> str:
    try:
        s = spec.parts.resistors.series
        return s if eseries.is_member(s, value, rel=1e-6) else "custom"
    except Exception:  # noqa: BLE001
        return ""


def _rated_required(rated, required, unit):
    if rated is None and required is None:
        return None, False
    over = rated is not None and required is not None and required > rated * (1 + 1e-9)
    text = f"{value_text(rated, unit, 3) if rated is not None else 'n/a'} / " \
           f"{value_text(required, unit, 3) if required is not None else 'n/a'}"
    return text, over


def bom(ctx: Context) -> list:
    """The bill of materials (the CSV beside the PDF holds the same rows)."""
    out = [ctx.heading("Bill of materials")]
    if ctx.net is None:
        return out + error_note(ctx, "Network", "network") + [PageBreak()]
    out.append(p("Every element of the network, designators as in the schematic. <i>Rated / required</i>: the part's "
                 "rating, then the largest value it sees at full scale on any position (nominal parts, reference "
                 "temperature). Misrange stresses beyond a rating are noted (section 6). The same rows are in the "
                 "CSV file beside this PDF."))
    rows, fills = [], []
    for i, r in enumerate(bom_rows(ctx), start=1):
        pw, pover = _rated_required(r["power_rated_w"], r["power_required_w"], "W")
        vv, vover = _rated_required(r["voltage_rated_v"], r["voltage_required_v"], "V")
        if pover:
            fills.append((5, i, "overstress"))
            pw += " !"
        if vover:
            fills.append((6, i, "overstress"))
            vv += " !"
        rows.append([r["designator"], r["value"], r["series"] or None,
                     f"{r['tolerance_pct']:g} %" if r["tolerance_pct"] else None,
                     f"{r['tempco_ppm_per_k']:g} ppm/K" if r["tempco_ppm_per_k"] else None, pw, vv,
                     "; ".join(r["notes"]) or None])
    out.append(p("'!' marks a requirement above the rating at full scale (normal use), which needs a different part. "
                 "n/a: no such rating or no such stress.", "caption"))
    out.append(table(["Ref", "Value", "Series", "Tol.", "Tempco", "Power rated / req.", "Voltage rated / req.",
                      "Notes"], rows, [0.06, 0.13, 0.08, 0.065, 0.095, 0.13, 0.13, 0.31], align="lllrrrrl",
                     extra=verdict_fill(fills)))
    out.append(PageBreak())
    return out
